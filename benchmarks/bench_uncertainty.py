"""Bootstrap bands: cost against single inversions, and the frequentist calibration.

    python benchmarks/bench_uncertainty.py [--quick] [--skip-speed] [--skip-calibration]
                                           [--trials N] [--resamples B] [--jobs J] [--json FILE] [--figures DIR]

Speed: 200 resamples of a 60-frequency log-normal sweep (2 % noise) with
``confidence_bands`` at jobs = 1 and 2, against the baseline 200 × (one automatic
``invert`` of the same sweep) / jobs, timed in the same run.

Calibration: over N synthetic log-normal sweeps (σ = 1.2, 20 frequencies over
10⁻²–10² rad/s, 30 τ points, known 2 % noise; seeds 1000 + trial) with B
resamples each, the fraction of (trial, τ) pairs inside the supported window
where the band covers the true H, for λ re-chosen and λ fixed and for the three
band constructions (percentile, basic, widened), at nominal levels 0.5–0.95;
also the coverage of the η_s interval on sweeps with a solvent share.  Set
OPENBLAS_NUM_THREADS=1 for figures comparable with docs/benchmarks.md.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from synthetic import lognormal_H, lognormal_sweep  # noqa: E402
from tauspec.analysis.uncertainty.bands import INTERVALS, confidence_bands, pointwise_interval  # noqa: E402
from tauspec.spectrum.invert import invert  # noqa: E402
from timing import timed  # noqa: E402 - benchmarks/ is on the path (run directly or by run.py)

LEVELS = (0.5, 0.68, 0.8, 0.9, 0.95)
G_T = 1e4


def speed(quick: bool, jobs_list=(1, 2)) -> dict:
    """Time 200 resamples against 200 single automatic inversions / jobs."""
    warnings.simplefilter("ignore")
    sweep = lognormal_sweep(3, noise=0.02, n=60)
    n_res = 60 if quick else 200
    inv, _ = timed(lambda: invert(sweep), 5 if quick else 9)
    t_inv = inv["median_s"]
    sp = invert(sweep)
    out = {"frequencies": 60, "grid": int(len(sp.tau)), "resamples": n_res, "invert_s": t_inv, "invert": inv,
           "runs": []}
    for mode in ("rechosen", "fixed"):
        for jobs in jobs_list:
            tb, _ = timed(lambda j=jobs, m=mode: confidence_bands(sp, resamples=n_res, jobs=j, strength_mode=m), 1)
            base = n_res * t_inv / jobs
            out["runs"].append({"strength_mode": mode, "jobs": jobs, "bands_s": tb["median_s"], "times": tb,
                                "baseline_s": base, "ratio": tb["median_s"] / base})
    return out


def _trial(trial: int, resamples: int, mode: str, eta_share: float, sigma: float = 1.2) -> dict:
    warnings.simplefilter("ignore")
    # η_s such that the solvent carries `eta_share` of G'' at ω_max (0 for the band calibration)
    eta_s = 0.0
    if eta_share > 0:
        from synthetic import lognormal_moduli

        _, gpp = lognormal_moduli(np.array([1e2]), G_T, 1.0, sigma)
        eta_s = float(eta_share / (1 - eta_share) * gpp[0] / 1e2)
    sweep = lognormal_sweep(1000 + trial, noise=0.02, sigma=sigma, G_t=G_T, eta_s=eta_s, wmin=1e-2, wmax=1e2, n=20)
    sp = invert(sweep, grid=30)
    b = confidence_bands(sp, resamples=resamples, seed=trial, strength_mode=mode, statistics=("eta_s",))
    eta = b.intervals.get("eta_s")
    return {"tau": sp.tau, "H": sp.H, "in_window": sp.in_window, "samples": b.samples, "eta_s_true": eta_s,
            "eta_s": (eta.estimate, eta.lo, eta.hi) if eta else None,
            "noise": (b.noise.storage, b.noise.loss), "lambda": sp.strength,
            "lambda_range": b.strength_range}


def calibration(trials: int, resamples: int, jobs: int, eta_trials: int, sigma: float = 1.2) -> tuple[dict, dict]:
    """Pooled pointwise coverage for every construction, level and strength mode."""
    from joblib import Parallel, delayed

    figures: dict = {}
    out: dict = {"trials": trials, "resamples": resamples, "sigma": sigma, "modes": {}}
    for mode in ("rechosen", "fixed"):
        rows = Parallel(n_jobs=jobs)(delayed(_trial)(t, resamples, mode, 0.0, sigma) for t in range(trials))
        tau = rows[0]["tau"]
        Ht = lognormal_H(tau, G_t=G_T, sigma=sigma)
        m = rows[0]["in_window"]
        res: dict = {}
        per_tau = {}
        for kind in INTERVALS:
            res[kind] = {}
            for level in LEVELS:
                hits = []
                widths = []
                for r in rows:
                    lo, hi = pointwise_interval(r["H"], r["samples"], level, kind, True)
                    hits.append(((lo <= Ht) & (Ht <= hi))[m])
                    widths.append(((hi - lo) / Ht)[m])
                h = np.array(hits)
                res[kind][str(level)] = {"coverage": float(h.mean()),
                                         "worst_trial": float(h.mean(axis=1).min()),
                                         "median_relative_width": float(np.median(np.array(widths)))}
                if level == 0.95:
                    per_tau[kind] = h.mean(axis=0)
        err = np.array([((r["H"] - Ht) / Ht)[m] for r in rows])
        out["modes"][mode] = {"coverage": res, "rms_relative_error": float(np.sqrt(np.mean(err**2))),
                              "noise_estimate_mean": [float(np.mean([r["noise"][k] for r in rows])) for k in (0, 1)]}
        figures[mode] = {"tau": tau[m], "per_tau": per_tau, "levels": LEVELS, "res": res}
    if eta_trials:  # η_s interval: solvent carrying 30 % of G'' at ω_max
        rows = Parallel(n_jobs=jobs)(delayed(_trial)(t, resamples, "rechosen", 0.3, sigma) for t in range(eta_trials))
        cover = [r["eta_s"][1] <= r["eta_s_true"] <= r["eta_s"][2] for r in rows if r["eta_s"] is not None]
        out["eta_s_coverage_95"] = {"coverage": float(np.mean(cover)), "trials": len(cover), "share_of_G''": 0.3}
    return out, figures


def _coverage_by_tau(ax, f):
    for kind, cov in f["per_tau"].items():
        ax.semilogx(f["tau"], cov, marker="o", label=kind)
    ax.axhline(0.95, color="k", lw=0.8, ls="--")
    ax.set_xlabel("τ (s)")
    return "coverage of the true H (95 % band)"


def _coverage_by_level(ax, f):
    for kind in f["res"]:
        ax.plot(f["levels"], [f["res"][kind][str(lv)]["coverage"] for lv in f["levels"]], marker="o", label=kind)
    ax.plot([0.5, 0.95], [0.5, 0.95], color="k", lw=0.8, ls="--", label="nominal")
    ax.set_xlabel("nominal level")
    return "pooled coverage"


def save_figures(figures: dict, folder: Path) -> list[Path]:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for name, draw in (("tau", _coverage_by_tau), ("level", _coverage_by_level)):
        fig, axes = plt.subplots(1, 2, figsize=(10, 4), sharey=True)
        for ax, (mode, f) in zip(axes, figures.items()):
            label = draw(ax, f)
            ax.set_title(f"λ {mode}")
            ax.legend()
        axes[0].set_ylabel(label)
        fig.tight_layout()
        p = folder / f"uncertainty_coverage_{name}.png"
        fig.savefig(p, dpi=110)
        plt.close(fig)
        paths.append(p)
    return paths


def run(quick: bool = False) -> dict:
    """The speed part in the form of benchmarks/run.py: ``rows`` (seconds) and ``ratios``."""
    sp = speed(quick)
    rows = {"one automatic invert (60 frequencies)": sp["invert"]}
    ratios = {}
    for r in sp["runs"]:
        what = f"{sp['resamples']} resamples, λ {r['strength_mode']}, jobs {r['jobs']}"
        rows[what] = r["times"]
        ratios[f"bands / ({sp['resamples']} × invert / jobs), λ {r['strength_mode']}, jobs {r['jobs']}"] = r["ratio"]
    return {"rows": rows, "ratios": ratios, "resamples": sp["resamples"], "frequencies": sp["frequencies"]}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--skip-speed", action="store_true")
    ap.add_argument("--skip-calibration", action="store_true")
    ap.add_argument("--trials", type=int, default=None)
    ap.add_argument("--resamples", type=int, default=None)
    ap.add_argument("--eta-trials", type=int, default=None)
    ap.add_argument("--sigma", type=float, default=1.2, help="width of the log-normal test spectrum")
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--json", type=Path, default=None)
    ap.add_argument("--figures", type=Path, default=None)
    args = ap.parse_args(argv)
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    result: dict = {}
    if not args.skip_speed:
        result["speed"] = speed(args.quick)
        print(json.dumps(result["speed"], indent=1), flush=True)
    if not args.skip_calibration:
        trials = args.trials or (20 if args.quick else 100)
        resamples = args.resamples or (39 if args.quick else 199)
        eta_trials = trials if args.eta_trials is None else args.eta_trials
        cal, figs = calibration(trials, resamples, args.jobs, eta_trials, args.sigma)
        result["calibration"] = cal
        print(json.dumps(cal, indent=1), flush=True)
        if args.figures:
            for p in save_figures(figs, args.figures):
                print("wrote", p)
    if args.json:
        args.json.write_text(json.dumps(result, indent=1) + "\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
