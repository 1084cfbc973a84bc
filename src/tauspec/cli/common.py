"""Options and helpers shared by the subcommands."""

from __future__ import annotations

import argparse
import sys
import traceback
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any

from ..errors import TauspecError

__all__ = ["add_output_arguments", "each_file", "output_dir_for", "run_each_file"]


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


def run_each_file(args: argparse.Namespace, work: Callable[[str], tuple[dict[str, Any], str]]) -> int:
    """Run ``work(path) -> (result dict, text report)`` for every file and print the result.

    Prints one JSON line per file with ``--json``, else the text report; a file that fails gets one line
    ``tauspec: error: file: reason`` on stderr and the others still run.  Returns 0, or 1 when any file failed.
    """
    from ..data.write import dumps_json

    status = 0
    for path in each_file(args.files):
        try:
            result, text = work(path)
        except TauspecError as exc:
            if getattr(args, "debug", False):  # --debug shows the traceback, here as in cli.main
                traceback.print_exc()
            if exc.source is None:
                exc = type(exc)(exc.reason, str(path), exc.line)
            print(f"tauspec: error: {exc.one_line()}", file=sys.stderr)
            status = 1
            continue
        print(dumps_json(result) if args.json else text, flush=True)
    return status
