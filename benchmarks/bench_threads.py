"""BLAS threads: where a second thread starts to pay for the inversion's linear algebra (the crossover).

    python benchmarks/bench_threads.py [--quick] [--json FILE]

For τ grids of 40 to 2000 points it times the exact path of strengths (``TikhonovPath.path``, the inversion's
dense linear algebra) with BLAS at one thread and at the machine's default (one per core), alternating the
two in one process, and reports the ratio default/one.  The crossover is the smallest grid where the default
is faster; below it ``tauspec.spectrum.threads`` runs at one thread.  The load average is recorded: on a busy
machine a second thread has no core to run on.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import sys
import time
import warnings
from pathlib import Path

from threadpoolctl import threadpool_limits

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from synthetic import lognormal_sweep  # noqa: E402
from tauspec.spectrum.invert import invert  # noqa: E402
from tauspec.spectrum.options import InvertOptions  # noqa: E402
from tauspec.spectrum.problem import build_problem  # noqa: E402
from tauspec.spectrum.regularize import TikhonovPath  # noqa: E402


def run(quick: bool = False) -> dict:
    """Time the path at one and at the default number of threads per grid size; return rows and the crossover."""
    warnings.simplefilter("ignore")
    sweep = lognormal_sweep(3, n=60)
    grids = (40, 150, 300) if quick else (40, 84, 150, 300, 600, 1000)
    repeats = 3 if quick else 5
    cores = os.cpu_count() or 1
    rows = {}
    crossover = None
    for n in grids:
        sp = invert(sweep, grid=n)
        pb = build_problem(sweep, sp.tau, InvertOptions())
        strengths = sp.lcurve.strength
        times: dict[int, list[float]] = {1: [], cores: []}
        for _ in range(repeats):
            for threads in times:
                with threadpool_limits(limits=threads, user_api="blas"):
                    t = time.perf_counter()
                    TikhonovPath(pb.A, pb.b, pb.L).path(strengths)
                    times[threads].append(time.perf_counter() - t)
        one, default = statistics.median(times[1]), statistics.median(times[cores])
        rows[n] = {"one_thread_s": one, "default_s": default, "default/one": default / one}
        if crossover is None and default < one:
            crossover = n
    return {"cores": cores, "rows": rows, "crossover_grid": crossover, "load_average_1min": os.getloadavg()[0]}


def main() -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    p.add_argument("--json", type=Path)
    args = p.parse_args()
    res = run(args.quick)
    print(f"{res['cores']} cores; load average {res['load_average_1min']:.2f}")
    print(f"{'grid':>6s} {'1 thread [ms]':>14s} {'default [ms]':>13s} {'default/one':>12s}")
    for n, r in res["rows"].items():
        print(f"{n:6d} {1e3 * r['one_thread_s']:14.1f} {1e3 * r['default_s']:13.1f} {r['default/one']:12.2f}")
    print(f"crossover: {res['crossover_grid'] or 'beyond the largest grid'}")
    if args.json:
        args.json.write_text(json.dumps(res, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
