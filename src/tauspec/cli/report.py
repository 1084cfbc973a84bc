"""``tauspec report DIR``: write the browsable HTML report of a batch output folder."""

from __future__ import annotations

import argparse
from pathlib import Path


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``report``."""
    p.add_argument("folder", type=Path, metavar="DIR", help="the --out folder of 'tauspec batch'")
    p.add_argument("--title", default=None, help="heading of the page")


def run(args: argparse.Namespace) -> int:
    """Write DIR/report.html and print its path."""
    from ..output.report import write_report

    path = write_report(args.folder, title=args.title)
    print(path)
    return 0
