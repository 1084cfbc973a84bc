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

BSW form (``--bsw`` runs this part alone): on BSW melts and on the demo archive's sweeps, the two fits the
diagnosis makes per sweep (with and without the transition term, ``fit_bsw``) against the trust-region fit they
replaced (``reference/bsw_fit.py``), interleaved in the same process: reference/new and the worst relative misfit
difference of the two.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import warnings
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))
sys.path.insert(0, str(HERE / "reference"))
import bsw_fit as bsw_reference  # noqa: E402
import chain_fits as chain_reference  # noqa: E402
import modes_fit as modes_reference  # noqa: E402

from synthetic import lognormal_sweep, noisy_sweep, rouse_sweep  # noqa: E402
from synthetic_sweeps import bsw_melt_sweep  # noqa: E402
from tauspec.cli.demo_archive import demo_samples  # noqa: E402
from tauspec.data.sweep import Sweep  # noqa: E402
from tauspec.models.beadspring import fit_all  # noqa: E402
from tauspec.models.bsw import fit_bsw  # noqa: E402
from tauspec.modes.fit import fit_modes  # noqa: E402
from tauspec.spectrum.invert import invert  # noqa: E402
from tauspec.spectrum.kernels import modes_moduli  # noqa: E402
from timing import timed  # noqa: E402 - benchmarks/ is on the path (run directly or by run.py)


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
            inv, spectrum = timed(lambda s=sweep: invert(s), repeats)
            spec = spectrum if from_spectrum else None
            new, m = timed(lambda s=sweep, sp=spec: fit_modes(s, sp), repeats)
            ref, mr = timed(lambda s=sweep, sp=spec: modes_reference.fit_modes(s, sp), repeats)
            cn, fits = timed(lambda s=sweep: fit_all(s.omega, s.storage, s.loss), repeats)
            cr, fits_r = timed(lambda s=sweep: chain_reference.fit_all(s.omega, s.storage, s.loss), repeats)
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
    bsw = run_bsw(quick)
    rows.update(bsw["rows"])
    ratios.update(bsw["ratios"])
    return {"rows": rows, "ratios": ratios, "cases": details, "bsw_cases": bsw["bsw_cases"]}


def bsw_cases(quick: bool = False) -> dict[str, Sweep]:
    """BSW melts (plateau limited by the window or by the transition zone, 1–3 % noise) and the demo sweeps."""
    out = {"BSW melt, window 2.3 dec.": bsw_melt_sweep(1, tc_ratio=1e7, wmax=10**3.5)[0],
           "BSW melt, transition 2.0 dec.": bsw_melt_sweep(2, tc_ratio=10**3.9, wmax=10**5.9)[0],
           "BSW melt, window 3.0 dec., 3 %": bsw_melt_sweep(3, tc_ratio=1e7, wmax=10**4.2, noise=0.03)[0]}
    demo = [s for s in demo_samples() if s.kind != "corrupted"]
    for s in demo[-3:-1] if quick else demo:
        out[f"demo {s.name}"] = Sweep(omega=s.omega, storage=s.storage, loss=s.loss, name=s.name)
    return out


def _both(fit, sw: Sweep) -> list:
    """The two BSW-form fits of the diagnosis (with and without the transition term)."""
    return [fit(sw.omega, sw.storage, sw.loss, glassy=g) for g in (True, False)]


def run_bsw(quick: bool = False) -> dict:
    """Time ``fit_bsw`` against the reference fit (both glassy settings, interleaved, median of repeats)."""
    repeats = 1 if quick else 5
    rows, ratios, details = {}, {}, []
    cases_ = bsw_cases(quick)
    _both(fit_bsw, next(iter(cases_.values())))  # imports and caches outside the timings
    for name, sw in cases_.items():
        tn, tr = [], []
        for _ in range(repeats):
            t, new = timed(lambda s=sw: _both(fit_bsw, s), 1)
            tn.append(t["median_s"])
            t, ref = timed(lambda s=sw: _both(bsw_reference.fit_bsw, s), 1)
            tr.append(t["median_s"])
        new_t = {"median_s": statistics.median(tn), "min_s": min(tn), "max_s": max(tn)}
        ref_t = {"median_s": statistics.median(tr), "min_s": min(tr), "max_s": max(tr)}
        rows.update({f"{name}: fit_bsw ×2": new_t, f"{name}: fit_bsw ×2, reference": ref_t})
        ratios[f"{name}: bsw reference / new"] = ref_t["median_s"] / new_t["median_s"]
        details.append({"case": name, "points": 2 * len(sw),
                        "bsw_misfit_rel_diff": max((a.chi2 - b.chi2) / b.chi2 for a, b in zip(new, ref)),
                        "bsw_misfit_rel_diff_min": min((a.chi2 - b.chi2) / b.chi2 for a, b in zip(new, ref))})
    total_new = sum(v["median_s"] for k, v in rows.items() if not k.endswith("reference"))
    total_ref = sum(v["median_s"] for k, v in rows.items() if k.endswith("reference"))
    ratios["median bsw reference / new"] = statistics.median(v for k, v in ratios.items() if k.endswith("/ new"))
    ratios["all cases bsw reference / new"] = total_ref / total_new
    return {"rows": rows, "ratios": ratios, "bsw_cases": details}


def _print_bsw(res: dict) -> None:
    print(f"{'case':34s} {'ref ms':>8s} {'new ms':>8s} {'ref/new':>8s} {'misfit diff (worst, best)':>26s}")
    for r in res["bsw_cases"]:
        name = r["case"]
        print(f"{name:34s} {1e3 * res['rows'][f'{name}: fit_bsw ×2, reference']['median_s']:8.2f} "
              f"{1e3 * res['rows'][f'{name}: fit_bsw ×2']['median_s']:8.2f} "
              f"{res['ratios'][f'{name}: bsw reference / new']:8.2f} "
              f"{r['bsw_misfit_rel_diff']:+12.1e} {r['bsw_misfit_rel_diff_min']:+12.1e}")
    for k in ("median bsw reference / new", "all cases bsw reference / new"):
        print(f"{k}: {res['ratios'][k]:.2f}")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="one repeat, two demo sweeps")
    parser.add_argument("--json", metavar="FILE", help="also write the figures as JSON")
    parser.add_argument("--bsw", action="store_true", help="only the BSW-form fit against its reference")
    args = parser.parse_args(argv)
    if args.bsw:
        res = run_bsw(args.quick)
        _print_bsw(res)
        if args.json:
            Path(args.json).write_text(json.dumps(res, indent=1) + "\n")
        return 0
    res = run(args.quick)
    print(f"{'case':22s} {'modes':>7s} {'misfit':>9s} {'ref/new':>8s} {'new/inv':>8s} {'chains':>9s} {'ref/new':>8s}")
    for r in res["cases"]:
        name = r["case"]
        print(f"{name:22s} {r['n_modes']:3d}/{r['n_modes_reference']:<3d} {r['modes_misfit_rel_diff']:+9.1e} "
              f"{res['ratios'][f'{name}: modes reference / new']:8.1f} "
              f"{res['ratios'][f'{name}: modes / invert']:8.2f} {r['chains_worst_misfit_rel_diff']:+9.1e} "
              f"{res['ratios'][f'{name}: chains reference / new']:8.1f}")
    for k, v in res["ratios"].items():
        if k.startswith("median") and "bsw" not in k:
            print(f"{k}: {v:.2f}")
    _print_bsw(res)
    if args.json:
        Path(args.json).write_text(json.dumps(res, indent=1) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
