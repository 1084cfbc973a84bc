"""``tauspec demo``: write the invented example archive and reprocess it with the batch."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``demo``."""
    p.add_argument("--out", type=Path, default=Path("tauspec-demo"), metavar="DIR",
                   help="folder for the demo archive and its results (default: ./tauspec-demo)")
    p.add_argument("--seed", type=int, default=20261201, help="seed of the invented noise")
    p.add_argument("--jobs", type=int, default=min(2, os.cpu_count() or 1), metavar="N",
                   help="worker processes for the batch (default: 2, or 1 on a single core)")
    p.add_argument("--plots", action="store_true",
                   help="also draw every result's figures as PNG (the report otherwise draws its own, as SVG)")


def run(args: argparse.Namespace) -> int:
    """Write the archive, run the batch on it, print the summary table and where the results are.

    Exit status 0 when the only failure is the archive's deliberately corrupted export.
    """
    from ..batch.run import run_batch
    from ..batch.settings import BatchSettings
    from ..batch.summary import read_summary, summary_table
    from ..output.report import write_report
    from .demo_archive import CORRUPTED, write_demo_archive

    archive, results = args.out / "archive", args.out / "results"
    files = write_demo_archive(archive, seed=args.seed)
    print(f"demo archive: {len(files)} sweep files in {archive} (an invented coatings lab; see tauspec/demo.py)")
    print(f"running: tauspec batch {archive} --out {results} --jobs {args.jobs}" + (" --plots" if args.plots else ""))
    sys.stdout.flush()
    report = run_batch([archive], results, settings=BatchSettings(plots=args.plots), jobs=args.jobs,
                       progress=sys.stderr.isatty())
    rows = read_summary(results)
    print()
    print(summary_table(rows))
    print()
    print(f"{report.inputs} files: {report.ok} ok, {report.failed} failed "
          f"({report.computed} computed, {report.skipped} already current) in {report.seconds:.1f} s")
    print(f"results: {results}/<file>/result.json (+ spectrum.csv, fit.csv"
          + (", figures" if args.plots else "") + ")")
    print(f"summary: {results / 'summary.csv'}   run record: {results / 'run.json'}")
    print(f"browsable HTML report: {write_report(results, title='tauspec demo — an invented coatings lab')}")
    expected = {Path(f).as_posix() for f in CORRUPTED}
    unexpected = [r for r in rows if r["status"] != "ok" and r["file"] not in expected]
    return 1 if unexpected else 0
