"""The flags every subcommand shares, and running a command over several files.

One grammar for every command: ``--out DIR`` (where result files go; nothing is written without it, except by
``demo`` and ``report``, whose documented default folders are given in their help), ``--json`` (machine-readable
output on stdout, nothing else), ``--plot`` (draw the figures into ``--out``), ``--format`` (png, svg, pdf;
several as ``png,pdf``) and ``--quiet`` (print nothing but errors: no summary, no progress bar).
"""

from __future__ import annotations

import argparse
import functools
import os
import sys
import traceback
import warnings
from collections.abc import Callable, Iterable, Iterator, Sequence
from pathlib import Path
from typing import Any

from ..errors import SettingsError, TauspecError, TauspecWarning

__all__ = ["add_output_arguments", "check_output_arguments", "figure_formats", "each_file", "output_dir_for",
           "output_refusals", "run_each_file", "progress_bar", "print_text"]


def add_output_arguments(p: argparse.ArgumentParser, *, out_help: str = "write result files into DIR",
                         out_default: Path | None = None, plot_help: str | None = None,
                         json_help: str = "print one JSON object per file on stdout, nothing else",
                         format_help: str = "figure format: png (default), svg or pdf; several as png,pdf") -> None:
    """Add the common flags ``--out``, ``--json``, ``--plot``, ``--format`` and ``--quiet``."""
    g = p.add_argument_group("output (the same flags on every command)")
    g.add_argument("--out", type=Path, default=out_default, metavar="DIR", help=out_help)
    g.add_argument("--json", action="store_true", help=json_help)
    g.add_argument("--plot", action="store_true",
                   help=plot_help or "draw the figures into --out DIR (needs --out)")
    g.add_argument("--format", default="png", metavar="FMT", help=format_help)
    g.add_argument("--quiet", action="store_true", help="print nothing but errors (no summary, no progress bar)")


def figure_formats(args: argparse.Namespace) -> tuple[str, ...]:
    """The formats of ``--format`` (validated)."""
    from ..output.figures.style import check_formats

    try:
        return check_formats(p for p in str(args.format).split(",") if p.strip())
    except SettingsError as exc:
        raise SettingsError(f"--format: {exc.reason}") from None


def check_output_arguments(args: argparse.Namespace, *, plot_needs_out: bool = True) -> None:
    """Refuse flags that would write nowhere: ``--plot`` without ``--out``; check ``--format`` early."""
    figure_formats(args)
    if plot_needs_out and getattr(args, "plot", False) and getattr(args, "out", None) is None:
        raise SettingsError("--plot needs --out DIR: figures are written only where you ask")
    out = getattr(args, "out", None)
    if out is not None and Path(out).exists() and not Path(out).is_dir():
        raise SettingsError(f"--out {str(out)!r} is a file, not a folder")


def progress_bar(args: argparse.Namespace, total: int, unit: str, desc: str | None = None) -> Any:
    """A tqdm progress bar on stderr, or None when not a terminal, with ``--quiet`` or with ``--json``."""
    if getattr(args, "quiet", False) or getattr(args, "json", False) or not sys.stderr.isatty() or total < 2:
        return None
    from tqdm import tqdm

    return tqdm(total=total, unit=unit, desc=desc, file=sys.stderr, leave=False)


def each_file(files: Sequence[str]) -> Iterator[str]:
    """Yield the files in the order given, each once."""
    seen: set[str] = set()
    for f in files:
        if f not in seen:
            seen.add(f)
            yield f


@functools.lru_cache(maxsize=8)
def _layout(files: tuple[str, ...], out: Path) -> tuple[dict[str, str], dict[str, str]]:
    """(result folder by file, refusal by file) of several files written into one ``--out``.

    The batch's layout rule (:mod:`tauspec.batch.layout`), so that no file's results overwrite another's.
    Without ``--out`` nothing is written (``--plot`` needs ``--out``), so nothing can collide.
    """
    from ..batch.layout import plan_refusals, relative_names, result_key

    real = {f: os.path.realpath(f) for f in files}
    unique = list(dict.fromkeys(real.values()))  # one file named twice is one input
    root = os.path.commonpath([os.path.dirname(p) for p in unique])
    names = dict(zip(unique, relative_names([Path(p) for p in unique], root)))
    keys = {f: result_key(names[real[f]]) for f in files}
    by_name = {names[real[f]]: f for f in files}
    refused = plan_refusals(out, {n: keys[f] for n, f in by_name.items()})
    return keys, {f: refused[names[real[f]]] for f in files if names[real[f]] in refused}


def output_refusals(args: argparse.Namespace) -> dict[str, str]:
    """The files whose outputs would collide with another file's (each refused with its reason, before any work)."""
    files = tuple(each_file(args.files))
    if len(set(map(os.path.realpath, files))) < 2:
        return {}
    if args.out is None:
        return {}
    return _layout(files, Path(args.out))[1]


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
    return Path(args.out) / _layout(files, Path(args.out))[0][path]


def print_text(args: argparse.Namespace, text: str, caveats: Iterable[str] = ()) -> None:
    """Print a text summary and, once at its end, the caveats that apply (each once); nothing with --quiet."""
    if getattr(args, "quiet", False):
        return
    notes = list(dict.fromkeys(c.strip() for c in caveats if c and c.strip()))
    if notes:
        text = text.rstrip("\n") + "\ncaveats:\n" + "\n".join(f"  - {c}" for c in notes)
    print(text, flush=True)


def _warning_text(w: warnings.WarningMessage, path: str) -> str:
    """A warning's message without the file name it starts with (the summary names the file already)."""
    text = str(w.message)
    for prefix in (f"{path}: ", f"{Path(path).name}: "):
        if text.startswith(prefix):
            return text[len(prefix):]
    return text


def run_each_file(args: argparse.Namespace, work: Callable[[str], tuple[Any, ...]]) -> int:
    """Run ``work(path) -> (result dict, text summary[, caveats])`` for every file and print the result.

    Prints one JSON line per file with ``--json``, else the text summary followed by the caveats (those
    returned and the warnings the work raised, once each, at the end); with ``--json`` the warnings go to
    stderr instead, with ``--quiet`` nowhere.  A file that fails gets one line ``tauspec: error: file: reason``
    on stderr and the others still run.  Returns 0, or 1 when any file failed.
    """
    from ..data.write import dumps_json

    status = 0
    refused = output_refusals(args)
    for path in each_file(args.files):
        if path in refused:
            print(f"tauspec: error: {TauspecError(refused[path], str(path)).one_line()}", file=sys.stderr)
            status = 1
            continue
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", TauspecWarning)
            try:
                done = work(path)
            except TauspecError as exc:
                if getattr(args, "debug", False):  # --debug shows the traceback, here as in cli.main
                    traceback.print_exc()
                if exc.source is None:
                    exc = type(exc)(exc.reason, str(path), exc.line)
                print(f"tauspec: error: {exc.one_line()}", file=sys.stderr)
                status = 1
                continue
        result, text = done[0], done[1]
        extra = list(done[2]) if len(done) > 2 else []  # in the result's JSON already
        notes = [_warning_text(w, path) for w in caught if issubclass(w.category, TauspecWarning)]
        for w in caught:  # others (a library's own) go on as usual
            if not issubclass(w.category, TauspecWarning):
                warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        if args.json:
            print(dumps_json(result), flush=True)
            if not getattr(args, "quiet", False):
                for n in dict.fromkeys(notes):
                    print(f"tauspec: warning: {path}: {n}", file=sys.stderr)
        else:
            print_text(args, text, extra + notes)
    return status
