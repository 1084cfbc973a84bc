"""How the automatic inversion scales with the grid size and the number of frequencies.

    python benchmarks/bench_scaling.py [--quick]

Times ``invert`` (median over repeats) and its peak traced memory
(tracemalloc, which numpy reports its allocations to) for 50–400 τ points at
60 frequencies and for 20–200 frequencies at 150 τ points, and fits the
exponent k of time ∝ n^k by least squares in log–log.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
import tracemalloc
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from synthetic import lognormal_sweep  # noqa: E402
from tauspec.spectrum.invert import invert  # noqa: E402


def _measure(sweep, grid, repeats):
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        sp = invert(sweep, grid=grid)
        times.append(time.perf_counter() - t)
    tracemalloc.start()
    invert(sweep, grid=grid)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return statistics.median(times), min(times), max(times), peak, len(sp.lcurve.strength)


def _exponent(n, t):
    return float(np.polyfit(np.log(n), np.log(t), 1)[0])


def run(quick: bool = False) -> dict:
    """Run the scaling measurements; return them as a dict."""
    warnings.simplefilter("ignore")
    repeats = 2 if quick else 5
    grids = [50, 100, 200] if quick else [50, 100, 200, 400]
    freqs = [20, 50, 100] if quick else [20, 50, 100, 200]
    out: dict = {"grid": [], "frequencies": []}
    sweep = lognormal_sweep(3, n=60)
    for g in grids:
        med, lo, hi, peak, k = _measure(sweep, g, repeats)
        out["grid"].append({"n": g, "median_s": med, "min_s": lo, "max_s": hi, "peak_bytes": peak, "strengths": k})
    for m in freqs:
        med, lo, hi, peak, k = _measure(lognormal_sweep(3, n=m), 150, repeats)
        out["frequencies"].append({"n": m, "median_s": med, "min_s": lo, "max_s": hi, "peak_bytes": peak,
                                   "strengths": k})
    out["exponent_grid"] = _exponent([r["n"] for r in out["grid"]], [r["median_s"] for r in out["grid"]])
    out["exponent_frequencies"] = _exponent([r["n"] for r in out["frequencies"]],
                                            [r["median_s"] for r in out["frequencies"]])
    out["memory_exponent_grid"] = _exponent([r["n"] for r in out["grid"]], [r["peak_bytes"] for r in out["grid"]])
    return out


def main() -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    res = run(p.parse_args().quick)
    for key in ("grid", "frequencies"):
        for r in res[key]:
            print(f"{key:12s} n={r['n']:4d}  {1e3 * r['median_s']:8.1f} ms  (min {1e3 * r['min_s']:.1f}, "
                  f"max {1e3 * r['max_s']:.1f})  peak {r['peak_bytes'] / 2**20:6.2f} MiB  {r['strengths']} strengths")
    print(f"time ∝ n_τ^{res['exponent_grid']:.2f}, time ∝ n_ω^{res['exponent_frequencies']:.2f}, "
          f"memory ∝ n_τ^{res['memory_exponent_grid']:.2f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
