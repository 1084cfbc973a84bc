"""Inversion speed, side by side in one run, as ratios against baselines.

    python benchmarks/bench_invert.py [--quick] [--json FILE]

Times tauspec's automatic inversion (path of strengths, L-curve and GCV, 60
frequencies, 150 τ points) against, on the same problem and the same
strengths:

(a) a plain loop of ``scipy.optimize.nnls`` on the augmented system [A; λL],
(b) a cvxpy problem rebuilt for every strength,
(c) cvxpy compiled once with λ as a DPP parameter,
(d) the unconstrained Cholesky solve per strength (no nonnegativity): the floor.

It checks the optimum against (a) at every strength (relative objective) and
reports the relative L2 error of H inside the window, so a faster path that is
less accurate shows it.

Threads: the same comparisons of ``invert`` with (a) and (d) at the default grid
(12 points per decade) are made twice, with BLAS at one thread and at the
machine's default (one per core, what a caller who sets nothing gets; emulated
with threadpoolctl whatever OPENBLAS_NUM_THREADS says), and ``invert`` at the
default threading is compared with ``invert`` at one thread.  ``invert`` limits
its own linear algebra (``tauspec.spectrum.threads``); the baselines do not.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
import warnings
from pathlib import Path

import numpy as np
from scipy import linalg
from scipy.optimize import nnls

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from synthetic import lognormal_H, lognormal_sweep  # noqa: E402
from tauspec.spectrum.invert import invert  # noqa: E402
from tauspec.spectrum.options import InvertOptions
from tauspec.spectrum.problem import build_problem
from tauspec.spectrum.regularize import TikhonovPath, objective, solve_cvxpy  # noqa: E402
from tauspec.spectrum.window import default_grid
from timing import timed  # noqa: E402 - benchmarks/ is on the path (run directly or by run.py)


def nnls_loop(A, b, L, lams):
    zeros = np.zeros(L.shape[0])
    return np.array([nnls(np.vstack([A, lam * L]), np.concatenate([b, zeros]), maxiter=50 * A.shape[1])[0]
                     for lam in lams])


def cholesky_scan(A, b, L, lams):
    AtA, LtL, Atb = A.T @ A, L.T @ L, A.T @ b
    return np.array([linalg.cho_solve(linalg.cho_factor(AtA + lam * lam * LtL), Atb) for lam in lams])


def cvxpy_rebuilt(A, b, L, lams):
    return np.vstack([solve_cvxpy(A, b, L, [lam]) for lam in lams])


def _threads(sweep, repeats: int) -> tuple[dict, dict]:
    """invert, the nnls loop and the Cholesky floor at the default grid, at one thread and at the default."""
    import os

    from threadpoolctl import threadpool_limits

    sp = invert(sweep)
    pb = build_problem(sweep, sp.tau, InvertOptions())
    A, b, L, lams = pb.A, pb.b, pb.L, sp.lcurve.strength
    rows, med = {}, {}
    for label, threads in (("one thread", 1), ("default threads", os.cpu_count() or 1)):
        with threadpool_limits(limits=threads, user_api="blas"):
            for what, fn in (("invert", lambda: invert(sweep)), ("nnls loop", lambda: nnls_loop(A, b, L, lams)),
                             ("Cholesky floor", lambda: cholesky_scan(A, b, L, lams))):
                r, _ = timed(fn, repeats)
                rows[f"default grid ({len(sp.tau)} τ), {label}: {what}"] = r
                med[(label, what)] = r["median_s"]
    ratios = {}
    for label in ("one thread", "default threads"):
        ratios[f"default grid, {label}: invert / nnls loop"] = med[(label, "invert")] / med[(label, "nnls loop")]
        ratios[f"default grid, {label}: invert / Cholesky floor"] = (med[(label, "invert")]
                                                                     / med[(label, "Cholesky floor")])
    # the threading ratio from calls alternated one by one (the blocks above run minutes apart on a shared machine)
    alt: dict[int, list[float]] = {1: [], os.cpu_count() or 1: []}
    for _ in range(max(repeats, 5) * 2):
        for threads, times in alt.items():
            with threadpool_limits(limits=threads, user_api="blas"):
                t = time.perf_counter()
                invert(sweep)
                times.append(time.perf_counter() - t)
    ratios["default grid: invert at default threads / at one thread"] = (
        statistics.median(alt[os.cpu_count() or 1]) / statistics.median(alt[1]))
    return rows, ratios


def run(quick: bool = False) -> dict:
    """Run the benchmark; return the figures as a dict."""
    warnings.simplefilter("ignore")
    repeats = 3 if quick else 7
    sweep = lognormal_sweep(3, n=60)
    n_grid = 150
    rows: dict[str, dict[str, float]] = {}
    rows["tauspec invert (auto: path + L-curve + GCV)"], sp = timed(lambda: invert(sweep, grid=n_grid), repeats)
    lams = sp.lcurve.strength
    tau = default_grid(sweep.omega, n_grid)
    pb = build_problem(sweep, tau, InvertOptions())
    A, b, L = pb.A, pb.b, pb.L
    rows["fast exact path alone"], path_sol = timed(lambda: TikhonovPath(A, b, L).path(lams), repeats)
    rows["(a) scipy nnls loop"], X_nnls = timed(lambda: nnls_loop(A, b, L, lams), repeats)
    rows["(d) unconstrained Cholesky scan"], _ = timed(lambda: cholesky_scan(A, b, L, lams), repeats)
    cv_lams = lams if not quick else lams[::10]
    scale = len(lams) / len(cv_lams)  # cvxpy is timed once, on every 10th strength with --quick, and scaled
    for label, fn in (("(c) cvxpy, λ as parameter", lambda: solve_cvxpy(A, b, L, cv_lams)),
                      ("(b) cvxpy rebuilt per λ", lambda: cvxpy_rebuilt(A, b, L, cv_lams))):
        r, _ = timed(fn, 1)
        rows[label] = {k: v * scale for k, v in r.items()}
    med, med_fast, med_a, med_d = (rows[k]["median_s"] for k in (
        "tauspec invert (auto: path + L-curve + GCV)", "fast exact path alone", "(a) scipy nnls loop",
        "(d) unconstrained Cholesky scan"))

    rel_obj = max(abs(objective(A, b, L, x, lam) - objective(A, b, L, xr, lam)) / objective(A, b, L, xr, lam)
                  for lam, x, xr in zip(lams, path_sol.x, X_nnls))
    worse = max((objective(A, b, L, x, lam) - objective(A, b, L, xr, lam)) / objective(A, b, L, xr, lam)
                for lam, x, xr in zip(lams, path_sol.x, X_nnls))
    thread_rows, thread_ratios = _threads(sweep, repeats)
    rows.update(thread_rows)
    m = sp.in_window
    Ht = lognormal_H(sp.tau, 1e4)
    err = float(np.linalg.norm(sp.H[m] - Ht[m]) / np.linalg.norm(Ht[m]))
    return {
        "problem": {"frequencies": len(sweep), "grid": n_grid, "strengths": len(lams)},
        "rows": rows,
        "ratios": {
            "invert / nnls loop": med / med_a,
            "nnls loop / fast path": med_a / med_fast,
            "cvxpy rebuilt / invert": rows["(b) cvxpy rebuilt per λ"]["median_s"] / med,
            "cvxpy parameter / invert": rows["(c) cvxpy, λ as parameter"]["median_s"] / med,
            "invert / Cholesky floor": med / med_d,
            "fast path / Cholesky floor": med_fast / med_d,
            **thread_ratios,
        },
        "max_rel_objective_vs_nnls": rel_obj,
        "max_rel_objective_excess_vs_nnls": worse,
        "spectrum_rel_L2_error_in_window": err,
    }


def main() -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    p.add_argument("--json", type=Path)
    args = p.parse_args()
    res = run(args.quick)
    pr = res["problem"]
    print(f"problem: {pr['frequencies']} frequencies, {pr['grid']} τ points, {pr['strengths']} strengths")
    for k, v in res["rows"].items():
        print(f"  {k:45s} {1e3 * v['median_s']:9.1f} ms  (min {1e3 * v['min_s']:.1f}, max {1e3 * v['max_s']:.1f})")
    for k, v in res["ratios"].items():
        print(f"  {k:45s} {v:9.3f}")
    print(f"  max relative objective difference vs nnls: {res['max_rel_objective_vs_nnls']:.2e}")
    print(f"  relative L2 error of H in the window: {res['spectrum_rel_L2_error_in_window']:.4f}")
    if args.json:
        args.json.write_text(json.dumps(res, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
