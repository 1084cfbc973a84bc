"""``tauspec batch PATH... --out DIR``: parallel, resumable reprocessing of an archive of sweep files."""

from __future__ import annotations

import argparse
import dataclasses
import sys
from pathlib import Path

from ..data.write import dumps_json
from .options import add_options


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``batch``."""
    from ..batch.settings import BatchSettings

    p.add_argument("paths", nargs="+", metavar="PATH",
                   help="folders (searched recursively for .csv .tsv .txt .dat files) or sweep files")
    p.add_argument("--out", type=Path, required=True, metavar="DIR",
                   help="folder for the results and summary.csv (one run at a time)")
    p.add_argument("--jobs", type=int, default=1, metavar="N", help="worker processes (default 1)")
    p.add_argument("--backend", choices=["loky", "dask"], default="loky",
                   help="loky: processes on this machine (default); dask: a dask.distributed cluster")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="Dask scheduler, tcp://HOST:PORT (with --backend dask; default: a local cluster)")
    p.add_argument("--manifest", type=Path, default=None, metavar="CSV",
                   help="a CSV file whose 'file' column lists more inputs (relative to its folder)")
    p.add_argument("--settings", type=Path, default=None, metavar="FILE.toml",
                   help="TOML file with [invert], [modes], [diagnose] and [batch] options (see docs/batch.md)")
    add_options(p, BatchSettings, only=["time_limit"])
    p.add_argument("--plots", action="store_true", help="write PNG figures beside each result")
    p.add_argument("--force", action="store_true", help="recompute every file, even when its result is current")
    p.add_argument("--quiet", action="store_true", help="print nothing (no progress bar, no counts)")
    p.add_argument("--json", action="store_true", help="print one JSON object (the summary row) per file")
    p.add_argument("--report", action="store_true", help="also write DIR/report.html, the browsable report")


def run(args: argparse.Namespace) -> int:
    """Run the batch; print the counts (and failed files), or JSON lines; exit 1 when any file failed."""
    from ..batch.run import run_batch
    from ..batch.settings import load_settings
    from ..batch.summary import read_summary
    from ..output.text import printable

    settings = load_settings(args.settings, plots=args.plots)
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

        report_path = write_report(args.out)
    if args.json:
        for row in rows:
            print(dumps_json(row), flush=True)
        return report.status
    if not args.quiet:
        print(f"{report.inputs} files: {report.ok} ok, {report.failed} failed "
              f"({report.computed} computed, {report.skipped} already current) in {report.seconds:.1f} s")
        for row in rows:
            if row["status"] != "ok":
                print(f"  error: {printable(row['error'])}")
        for note in report.notes:
            print(f"  note: {printable(note)}")
        print(f"summary: {printable(str(args.out / 'summary.csv'))}")
        if report_path is not None:
            print(f"report: {printable(str(report_path))}")
    return report.status
