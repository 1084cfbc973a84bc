"""The report's cost against the batch it reports on, in one run.

    OPENBLAS_NUM_THREADS=1 python benchmarks/bench_report.py [--n 36] [--jobs 2] [--repeats 3] [--json out.json]

A batch of ``--n`` sweeps (the demo's invented samples, several noise seeds) runs with its figures drawn in the
workers (``tauspec batch --plot``), then ``write_report`` assembles the report from what the batch stored; the
ratio report / batch is the figure of merit (target ≤ 0.5).  Baseline in the same run: the report drawing every
figure itself (``draw=True`` on a batch stored without figures), which is what the report did before the
workers drew them.  Also: the size of the summary page, one file or split into pages past ``PAGE_SIZE``
samples.
"""

from __future__ import annotations

import argparse
import json
import shutil
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from timing import row, timed  # noqa: E402 - benchmarks/ is on the path (run directly or by run.py)


def run(quick: bool = False, n: int = 36, jobs: int = 2, repeats: int = 3, baseline: bool = True) -> dict:
    """Time a batch with figures and the report on it; return rows, ratios and the page sizes."""
    from bench_batch import write_archive
    from tauspec.batch.run import run_batch
    from tauspec.batch.settings import BatchSettings
    from tauspec.output.report import PAGES_FOLDER, write_report

    if quick:
        n, repeats, baseline = 6, 1, False
    root = Path(tempfile.mkdtemp(prefix="tauspec-bench-report-"))
    try:
        write_archive(root / "archive", n)
        out = root / "out"
        t = time.perf_counter()
        done = run_batch([root / "archive"], out, settings=BatchSettings(plots=True), jobs=jobs)
        batch_s = time.perf_counter() - t
        report_row, _ = timed(lambda: write_report(out), repeats)
        report = out / "report.html"
        pages = sorted((out / PAGES_FOLDER).glob("page-*.html"))
        rows = {f"batch of {n} sweeps with figures (--jobs {jobs})": row([batch_s]),
                "report from the stored figures": report_row}
        ratios = {"report / batch": report_row["median_s"] / batch_s}
        if baseline:
            bare = root / "bare"
            shutil.copytree(out, bare)
            for png in bare.rglob("*.png"):
                png.unlink()
            drawn, _ = timed(lambda: write_report(bare, draw=True), 1)
            rows["report drawing every figure itself (baseline)"] = drawn
            ratios["report drawing the figures / batch"] = drawn["median_s"] / batch_s
        return {"rows": rows, "ratios": ratios, "sweeps": n, "ok": done.ok, "jobs": jobs,
                "summary_page_bytes": report.stat().st_size, "pages": len(pages),
                "largest_page_bytes": max((p.stat().st_size for p in pages), default=0)}
    finally:
        shutil.rmtree(root, ignore_errors=True)


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--n", type=int, default=36)
    p.add_argument("--jobs", type=int, default=2)
    p.add_argument("--repeats", type=int, default=3)
    p.add_argument("--no-baseline", action="store_true", help="skip the report that draws every figure")
    p.add_argument("--quick", action="store_true")
    p.add_argument("--json", type=Path, default=None)
    args = p.parse_args(argv)
    res = run(args.quick, args.n, args.jobs, args.repeats, not args.no_baseline)
    text = json.dumps(res, indent=1)
    print(text)
    if args.json:
        args.json.write_text(text + "\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
