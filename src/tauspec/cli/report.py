"""``tauspec report DIR``: write the browsable HTML report of a batch output folder."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from .common import add_output_arguments, check_output_arguments


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``report``."""
    p.add_argument("folder", type=Path, metavar="DIR", help="the --out folder of 'tauspec batch'")
    p.add_argument("--title", default=None, help="heading of the page")
    add_output_arguments(p, out_help="write report.html into this folder (default: DIR itself)",
                         plot_help="draw the figures of results the batch stored none for (slow: about a second "
                                   "per sample; 'tauspec batch --plot' draws them once, in the workers)",
                         json_help="print {\"report\": path, \"pages\": [...]} as JSON on stdout",
                         format_help="accepted as by every command; the report embeds its figures as PNG")


def run(args: argparse.Namespace) -> int:
    """Write report.html and print its path."""
    from ..data.write import dumps_json
    from ..output.report import PAGES_FOLDER, write_report

    check_output_arguments(args, plot_needs_out=False)
    progress = not args.quiet and not args.json and sys.stderr.isatty()
    path = write_report(args.folder, title=args.title, out=args.out, draw=args.plot, progress=progress)
    pages = sorted(str(p) for p in (path.parent / PAGES_FOLDER).glob("page-*.html"))
    if args.json:
        print(dumps_json({"report": str(path), "pages": pages}))
    elif not args.quiet:
        print(path)
    return 0
