"""The nonlinear fits against the implementations they replaced, as ratios in one run.

    python benchmarks/bench_modes.py [--quick] [--json FILE]

Maxwell modes: on each synthetic sweep (three-mode fluid, σ = 1.2 log-normal, Rouse N = 200; 1 % noise) and on
the demo archive's sweeps (each started from its inverted spectrum) it times

(a) ``fit_modes`` (variable projection, one path of counts),
(b) the reference: the fit before variable projection (``reference/modes_fit.py``: every count from several
    starting sets, least squares in all parameters),
(c) ``invert`` on the same sweep,

and the bead-spring chain fits (``fit_all``, all five models) against theirs (``reference/chain_fits.py``).
Ratios (b)/(a), (a)/(c) and reference/new for the chains, with the mode counts and the relative misfit
difference so that a faster fit that fits worse shows it.
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

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))
sys.path.insert(0, str(HERE / "reference"))
import chain_fits as chain_reference  # noqa: E402
import modes_fit as modes_reference  # noqa: E402

from synthetic import lognormal_sweep, noisy_sweep, rouse_sweep  # noqa: E402
from tauspec.cli.demo_archive import demo_samples  # noqa: E402
from tauspec.data.sweep import Sweep  # noqa: E402
from tauspec.models.beadspring import fit_all  # noqa: E402
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


def cases(quick: bool = False) -> dict[str, tuple[Sweep, bool]]:
    """name -> (sweep, start from the inverted spectrum)."""
    w = np.geomspace(1e-3, 1e3, 61)
    gp, gpp = modes_moduli(w, [1e5, 1e4, 1e3], [0.01, 1.0, 100.0])
    out = {"three-mode": (noisy_sweep(w, gp, gpp, 0.01, 0), False), "log-normal": (lognormal_sweep(0), False),
           "rouse": (rouse_sweep(0, eta_s=3000.0), False)}
    demo = [s for s in demo_samples() if s.kind != "corrupted"]
    for s in demo[:2] if quick else demo:
        out[s.name] = (Sweep(omega=s.omega, storage=s.storage, loss=s.loss, name=s.name), True)
    return out


def run(quick: bool = False) -> dict:
    """Time new and reference fits on each case; return ``rows``, ``ratios`` and the per-case details."""
    repeats = 1 if quick else 3
    rows, ratios, details = {}, {}, []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        first = cases()["three-mode"][0]
        fit_modes(first, n_modes=3)  # imports and caches outside the timings
        fit_all(first.omega, first.storage, first.loss)
        for name, (sweep, from_spectrum) in cases(quick).items():
            inv, spectrum = _timed(lambda s=sweep: invert(s), repeats)
            spec = spectrum if from_spectrum else None
            new, m = _timed(lambda s=sweep, sp=spec: fit_modes(s, sp), repeats)
            ref, mr = _timed(lambda s=sweep, sp=spec: modes_reference.fit_modes(s, sp), repeats)
            cn, fits = _timed(lambda s=sweep: fit_all(s.omega, s.storage, s.loss), repeats)
            cr, fits_r = _timed(lambda s=sweep: chain_reference.fit_all(s.omega, s.storage, s.loss), repeats)
            rows.update({f"{name}: fit_modes": new, f"{name}: fit_modes, reference": ref, f"{name}: invert": inv,
                         f"{name}: fit_all (chains)": cn, f"{name}: fit_all, reference": cr})
            ratios[f"{name}: modes reference / new"] = ref["median_s"] / new["median_s"]
            ratios[f"{name}: modes / invert"] = new["median_s"] / inv["median_s"]
            ratios[f"{name}: chains reference / new"] = cr["median_s"] / cn["median_s"]
            n = 2 * len(sweep)
            details.append({
                "case": name, "n_modes": m.n_modes, "n_modes_reference": mr.n_modes,
                "modes_misfit_rel_diff": (m.residual_rms**2 - mr.residual_rms**2) / mr.residual_rms**2,
                "chains_worst_misfit_rel_diff": max((fits[k].chi2 - fits_r[k].chi2) / fits_r[k].chi2 for k in fits),
                "points": n,
            })
    for what in ("modes reference / new", "modes / invert", "chains reference / new"):
        ratios[f"median {what}"] = statistics.median(v for k, v in ratios.items() if k.endswith(": " + what))
    return {"rows": rows, "ratios": ratios, "cases": details}


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="one repeat, two demo sweeps")
    parser.add_argument("--json", metavar="FILE", help="also write the figures as JSON")
    args = parser.parse_args(argv)
    res = run(args.quick)
    print(f"{'case':22s} {'modes':>7s} {'misfit':>9s} {'ref/new':>8s} {'new/inv':>8s} {'chains':>9s} {'ref/new':>8s}")
    for r in res["cases"]:
        name = r["case"]
        print(f"{name:22s} {r['n_modes']:3d}/{r['n_modes_reference']:<3d} {r['modes_misfit_rel_diff']:+9.1e} "
              f"{res['ratios'][f'{name}: modes reference / new']:8.1f} "
              f"{res['ratios'][f'{name}: modes / invert']:8.2f} {r['chains_worst_misfit_rel_diff']:+9.1e} "
              f"{res['ratios'][f'{name}: chains reference / new']:8.1f}")
    for k, v in res["ratios"].items():
        if k.startswith("median"):
            print(f"{k}: {v:.2f}")
    if args.json:
        Path(args.json).write_text(json.dumps(res, indent=1) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
