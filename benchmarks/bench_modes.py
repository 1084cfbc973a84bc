"""Maxwell-mode fit speed as ratios against baselines measured in the same run.

    python benchmarks/bench_modes.py [--quick] [--json FILE]

For each synthetic sweep (three-mode fluid, σ = 1.2 log-normal, Rouse N = 200; 1 % noise) it times

(a) ``fit_modes`` with the automatic mode count (the F-test search),
(b) ``fit_modes`` with the mode count fixed at the one (a) chose: the floor of the search,
(c) ``invert`` (the continuous Tikhonov inversion) on the same sweep,

and reports (a)/(b) and (a)/(c), with the mode count and the relative rms residual so a faster variant that fits
worse shows it.  Set OPENBLAS_NUM_THREADS=1 for comparable figures.
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

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from synthetic import lognormal_sweep, noisy_sweep, rouse_sweep  # noqa: E402
from tauspec.modes.fit import fit_modes  # noqa: E402
from tauspec.spectrum.invert import invert  # noqa: E402
from tauspec.spectrum.kernels import modes_moduli  # noqa: E402


def _timed(fn, repeats):
    times, out = [], None
    for _ in range(repeats):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return {"median_s": statistics.median(times), "min_s": min(times), "max_s": max(times)}, out


def cases():
    w = np.geomspace(1e-3, 1e3, 61)
    gp, gpp = modes_moduli(w, [1e5, 1e4, 1e3], [0.01, 1.0, 100.0])
    return {
        "three-mode": noisy_sweep(w, gp, gpp, 0.01, 0),
        "log-normal": lognormal_sweep(0),
        "rouse": rouse_sweep(0, eta_s=3000.0),
    }


def run(quick: bool = False) -> dict:
    """Time the three variants on each case; return ``rows``, ``ratios`` and the per-case details."""
    repeats = 1 if quick else 3
    rows, ratios, details = {}, {}, []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit_modes(cases()["three-mode"], n_modes=3)  # imports (scipy.stats ...) outside the timings
        for name, sweep in cases().items():
            auto, m = _timed(lambda s=sweep: fit_modes(s), repeats)
            fixed, mf = _timed(lambda s=sweep, n=m.n_modes: fit_modes(s, n_modes=n), repeats)
            inv, _ = _timed(lambda s=sweep: invert(s), repeats)
            rows[f"{name}: fit_modes (automatic count)"] = auto
            rows[f"{name}: fit_modes (count fixed)"] = fixed
            rows[f"{name}: invert"] = inv
            ratios[f"{name}: automatic / fixed count"] = auto["median_s"] / fixed["median_s"]
            ratios[f"{name}: automatic / invert"] = auto["median_s"] / inv["median_s"]
            details.append({"case": name, "n_modes": m.n_modes, "rms_auto": m.residual_rms,
                            "rms_fixed": mf.residual_rms})
    return {"rows": rows, "ratios": ratios, "cases": details}


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="one repeat instead of three")
    parser.add_argument("--json", metavar="FILE", help="also write the figures as JSON")
    args = parser.parse_args(argv)
    res = run(args.quick)
    print(f"{'case':12s} {'modes':>5s} {'rms auto':>9s} {'rms fixed':>9s} {'auto/fixed':>10s} {'auto/invert':>11s}")
    for r in res["cases"]:
        name = r["case"]
        print(f"{name:12s} {r['n_modes']:5d} {r['rms_auto']:9.4f} {r['rms_fixed']:9.4f} "
              f"{res['ratios'][f'{name}: automatic / fixed count']:10.2f} "
              f"{res['ratios'][f'{name}: automatic / invert']:11.2f}")
    if args.json:
        Path(args.json).write_text(json.dumps(res, indent=1) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
