"""``tauspec batch PATH... --out DIR``: parallel, resumable reprocessing of an archive of sweep files."""

from __future__ import annotations

import argparse
import dataclasses
import sys
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..data.write import dumps_json
from ..output.words import counted
from .common import add_output_arguments, check_output_arguments, figure_formats
from .options import add_options

#: Columns of summary.csv that hold text; every other column holds a number (or nothing).
TEXT_COLUMNS = frozenset({"file", "status", "sample", "verdict", "error", "block", "temperature", "note", "notes"})


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``batch``."""
    from ..batch.settings import BatchSettings

    p.add_argument("paths", nargs="+", metavar="PATH",
                   help="folders (searched recursively for .csv .tsv .txt .dat files) or sweep files")
    add_output_arguments(p, out_help="folder for the results and summary.csv (required; one run at a time)",
                         plot_help="draw every result's figures in the workers, once (PNG for the report, and the "
                                   "--format ones)",
                         json_help="print one JSON object per file (its summary row, numbers as numbers)",
                         format_help="formats of the figures besides the PNG the report shows: svg, pdf (with "
                                     "--force for results already current)")
    for action in p._actions:
        if action.dest == "out":
            action.required = True
    p.add_argument("--plots", dest="plot", action="store_true", help=argparse.SUPPRESS)  # the flag's old name
    g = p.add_argument_group("batch")
    g.add_argument("--jobs", type=int, default=1, metavar="N", help="worker processes (default 1)")
    g.add_argument("--backend", choices=["loky", "dask"], default="loky",
                   help="loky: processes on this machine (default); dask: a dask.distributed cluster")
    g.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="Dask scheduler, tcp://HOST:PORT (with --backend dask; default: a local cluster)")
    g.add_argument("--manifest", type=Path, default=None, metavar="CSV",
                   help="a CSV file whose 'file' column lists more inputs (relative to its folder)")
    g.add_argument("--settings", type=Path, default=None, metavar="FILE.toml",
                   help="TOML file with [invert], [modes], [diagnose] and [batch] options (see docs/batch.md)")
    add_options(g, BatchSettings, only=["time_limit"])
    g.add_argument("--force", action="store_true", help="recompute every file, even when its result is current")
    g.add_argument("--report", action="store_true",
                   help="also write DIR/report.html, the browsable report (draws the figures, as --plot)")


def json_row(row: Mapping[str, str]) -> dict[str, Any]:
    """A summary row with its numbers as JSON numbers and empty cells as null."""
    out: dict[str, Any] = {}
    for key, text in row.items():
        if text is None or text == "":
            out[key] = None
        elif key in TEXT_COLUMNS:
            out[key] = text
        else:
            try:
                value = float(text)
            except ValueError:
                out[key] = text
            else:
                out[key] = int(value) if value.is_integer() and "." not in text and "e" not in text.lower() \
                    else value
    return out


def run(args: argparse.Namespace) -> int:
    """Run the batch; print the counts (and failed files), or JSON lines; exit 1 when any file failed."""
    from ..batch.run import run_batch
    from ..batch.settings import load_settings
    from ..batch.store import LEFT_OUT
    from ..batch.summary import read_summary
    from ..output.text import printable

    check_output_arguments(args, plot_needs_out=False)  # --out is required here
    plots = bool(args.plot or args.report)
    settings = load_settings(args.settings, plots=plots)
    if plots:
        settings = dataclasses.replace(settings, figure_formats=figure_formats(args))
    if hasattr(args, "time_limit"):
        from .options import options_from_args

        limit = options_from_args(args, type(settings), only=["time_limit"]).time_limit
        settings = dataclasses.replace(settings, time_limit=limit)
    progress = not args.quiet and not args.json and sys.stderr.isatty()
    report = run_batch(args.paths, args.out, settings=settings, jobs=args.jobs, backend=args.backend,
                       scheduler=args.scheduler, manifest=args.manifest, force=args.force, progress=progress,
                       exclude=[args.settings] if args.settings is not None else [])
    rows = read_summary(args.out)
    report_path = None
    if args.report:
        from ..output.report import write_report

        report_path = write_report(args.out, progress=progress)
    if args.json:
        for row in rows:
            print(dumps_json(json_row(row)), flush=True)
        return report.status
    if not args.quiet:
        left_out = f", {report.left_out} left out" if report.left_out else ""
        print(f"{counted(report.inputs, 'sample')}: {report.ok} ok, {report.failed} failed{left_out} "
              f"({report.computed} computed, {report.skipped} already current) in {report.seconds:.1f} s")
        for row in rows:
            if row["status"] != "ok":
                what = "left out" if row["status"] == LEFT_OUT else "error"
                print(f"  {what}: {printable(row['error'])}")
        for note in report.notes:
            print(f"  note: {printable(note)}")
        print(f"summary: {printable(str(args.out / 'summary.csv'))}")
        if report_path is not None:
            print(f"report: {printable(str(report_path))}")
    return report.status
