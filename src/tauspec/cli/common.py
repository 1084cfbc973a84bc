"""Options and helpers shared by the subcommands."""

from __future__ import annotations

import argparse
import functools
import os
import sys
import traceback
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any

from ..errors import TauspecError

__all__ = ["add_output_arguments", "each_file", "output_dir_for", "output_refusals", "run_each_file"]


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


@functools.lru_cache(maxsize=8)
def _layout(files: tuple[str, ...], out: Path | None, plot: bool) -> tuple[dict[str, str], dict[str, str]]:
    """(result folder by file, refusal by file) of several files written into one ``--out``.

    The batch's layout rule (:mod:`tauspec.batch.layout`), so that no file's results overwrite another's;
    without ``--out``, figures go to the current folder as ``<stem>-fit.png``: equal stems are refused.
    """
    from ..batch.layout import plan_refusals, relative_names, result_key

    real = {f: os.path.realpath(f) for f in files}
    unique = list(dict.fromkeys(real.values()))  # one file named twice is one input
    root = os.path.commonpath([os.path.dirname(p) for p in unique])
    names = dict(zip(unique, relative_names([Path(p) for p in unique], root)))
    if out is not None:
        keys = {f: result_key(names[real[f]]) for f in files}
        by_name = {names[real[f]]: f for f in files}
        refused = plan_refusals(out, {n: keys[f] for n, f in by_name.items()})
        return keys, {f: refused[names[real[f]]] for f in files if names[real[f]] in refused}
    if not plot:
        return {}, {}
    from ..batch.layout import same_folder_refusals

    prefixes = {names[p]: Path(p).stem for p in unique}  # figures go to ./<stem>-fit.png ...
    refused = same_folder_refusals(prefixes, "figure prefix", "give --out DIR")
    return {}, {f: refused[names[real[f]]] for f in files if names[real[f]] in refused}


def output_refusals(args: argparse.Namespace) -> dict[str, str]:
    """The files whose outputs would collide with another file's (each refused with its reason, before any work)."""
    files = tuple(each_file(args.files))
    if len(set(map(os.path.realpath, files))) < 2:
        return {}
    out = None if args.out is None else Path(args.out)
    return _layout(files, out, bool(getattr(args, "plot", False)))[1]


def output_dir_for(args: argparse.Namespace, path: str) -> Path | None:
    """Folder for one file's outputs: ``--out`` itself for one file, ``--out/<relative path>`` for several.

    The relative path is the file's path relative to the common folder of the files, suffix included (see
    :mod:`tauspec.batch.layout`).
    """
    if args.out is None:
        return None
    files = tuple(each_file(args.files))
    if len(set(map(os.path.realpath, files))) == 1:
        return Path(args.out)
    return Path(args.out) / _layout(files, Path(args.out), False)[0][path]


def run_each_file(args: argparse.Namespace, work: Callable[[str], tuple[dict[str, Any], str]]) -> int:
    """Run ``work(path) -> (result dict, text report)`` for every file and print the result.

    Prints one JSON line per file with ``--json``, else the text report; a file that fails gets one line
    ``tauspec: error: file: reason`` on stderr and the others still run.  Returns 0, or 1 when any file failed.
    """
    from ..data.write import dumps_json

    status = 0
    refused = output_refusals(args)
    for path in each_file(args.files):
        if path in refused:
            print(f"tauspec: error: {TauspecError(refused[path], str(path)).one_line()}", file=sys.stderr)
            status = 1
            continue
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
