"""Options and helpers shared by the subcommands."""

from __future__ import annotations

import argparse
from collections.abc import Iterator, Sequence
from pathlib import Path

__all__ = ["add_output_arguments", "each_file", "output_dir_for"]


def add_output_arguments(p: argparse.ArgumentParser) -> None:
    """Add ``--json``, ``--out DIR`` and ``--plot``."""
    p.add_argument("--json", action="store_true", help="print one JSON object per file on stdout, nothing else")
    p.add_argument("--out", type=Path, default=None, metavar="DIR", help="write result files into DIR")
    p.add_argument("--plot", action="store_true", help="write figures (PNG) into DIR (or the current folder)")


def each_file(files: Sequence[str]) -> Iterator[str]:
    """Yield the files in the order given, each once."""
    seen: set[str] = set()
    for f in files:
        if f not in seen:
            seen.add(f)
            yield f


def output_dir_for(args: argparse.Namespace, path: str) -> Path | None:
    """Folder for one file's outputs: ``--out`` itself for one file, ``--out/<stem>`` for several."""
    if args.out is None:
        return None
    if len(set(args.files)) == 1:
        return Path(args.out)
    return Path(args.out) / Path(path).stem
