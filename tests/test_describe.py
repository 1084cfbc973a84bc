"""'Cannot tell' is an answer: the describability checks before any verdict, and honest intervals.

Gasser, Sroka & Jennen-Steinmetz 1986 (pseudo-residuals), Hampel 1974 (MAD scale), Booij & Thoone 1982
(local Kramers–Kronig forms, from memory: exact for power laws, checked here), Winter & Chambon 1986 (critical
gel: G'' = G' tan(nπ/2) at every ω).  Sources in docs/references.md.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.special import gamma

from synthetic import lognormal_moduli
from synthetic_sweeps import rouse_sweep
from tauspec import diagnose
from tauspec.analysis.diagnosis.describe import kramers_kronig_check, phase_resolved
from tauspec.analysis.uncertainty.noise import roughness_noise
from tauspec.data.sweep import Sweep
from tauspec.data.write import dumps_json


@pytest.mark.parametrize("noise", [0.005, 0.01, 0.03])
def test_roughness_noise_recovers_the_noise_of_a_smooth_curve(noise):
    # Log-normal spectrum moduli (REFERENCES.md), 60 points over 6 decades, multiplicative Gaussian noise.
    w = np.geomspace(1e-3, 1e3, 60)
    gp, gpp = lognormal_moduli(w, 1e4, 1.0, 1.2)
    est = []
    for seed in range(20):
        rng = np.random.default_rng(seed)
        est.append(roughness_noise(w, gp * (1 + noise * rng.standard_normal(60))))
    assert np.median(est) == pytest.approx(noise, rel=0.2)


def test_roughness_of_an_exact_curve_is_small():
    w = np.geomspace(1e-3, 1e3, 60)
    gp, _ = lognormal_moduli(w, 1e4, 1.0, 1.2)
    assert roughness_noise(w, gp) < 1e-3


def test_a_sparse_sweep_is_not_called_scatter():
    # One exact Maxwell mode (Ferry 1980, ch. 3) at one point per decade: the local quadratic through four
    # neighbours spans four decades and reads the curve's own bend as 34 % scatter, and the verdict was
    # "inconclusive: ... they carry no shape".  Below 3 points per decade the scatter test is not made.
    w = np.geomspace(1e-3, 1e3, 7)
    sweep = Sweep(omega=w, storage=1e3 * w**2 / (1 + w**2), loss=1e3 * w / (1 + w**2), name="sparse")
    assert roughness_noise(sweep.omega, sweep.storage) > 0.3
    d = diagnose(sweep, intervals=False)
    ev = {e.test: e for e in d.evidence}
    assert ev["noise_level"].passed is None and ev["noise_level"].note.startswith("not made: 1 point per decade")
    assert d.verdict == "other" and "single relaxation" in d.reason
    # three points per decade exported to three significant digits (median step 0.3335 decade, 2.9987 per
    # decade) is the density it was set to: the test is made, not refused as "3 points per decade, fewer than 3"
    w = np.array([float(f"{v:.3g}") for v in np.geomspace(1e-3, 1e3, 19)])
    rounded = Sweep(omega=w, storage=1e3 * w**2 / (1 + w**2), loss=1e3 * w / (1 + w**2), name="rounded")
    assert diagnose(rounded, intervals=False).evidence_by_name()["noise_level"].passed is not None
    # at five points per decade the same curve is smooth and the test is made
    w = np.geomspace(1e-3, 1e3, 31)
    dense = Sweep(omega=w, storage=1e3 * w**2 / (1 + w**2), loss=1e3 * w / (1 + w**2), name="dense")
    ev = {e.test: e for e in diagnose(dense, intervals=False).evidence}
    assert ev["noise_level"].passed is True and ev["noise_level"].value < 1e-3


@pytest.mark.parametrize("n", [0.2, 0.5, 0.7])
def test_local_kramers_kronig_form_is_exact_for_a_critical_gel(n):
    # Winter & Chambon 1986: G' = S Γ(1−n) cos(nπ/2) ω^n, G'' = G' tan(nπ/2) at every ω — a power law, for which
    # the local form of Booij & Thoone is exact.
    w = np.geomspace(1e-2, 1e2, 40)
    gp = 100 * gamma(1 - n) * math.cos(n * math.pi / 2) * w**n
    kk = kramers_kronig_check(w, gp, gp * math.tan(n * math.pi / 2), 0.0)
    assert kk.misfit < 1e-6 and kk.passed is True
    swapped = kramers_kronig_check(w, gp, gp * math.tan(n * math.pi / 2) * 3.0, 0.0)  # G'' three times too big
    assert swapped.passed is False


def test_kramers_kronig_pair_of_the_log_normal_spectrum_passes():
    # REFERENCES.md: a log-normal spectrum gives an exact Kramers–Kronig pair (σ = 1.2: G'(1/τ_m) = G_t/2 exactly).
    # With σ = 3 the slopes vary slowly enough for the local form: its own error is about 0.06 in ln G.
    w = np.geomspace(1e-3, 1e3, 61)
    gp, _ = lognormal_moduli(w, 1.0, 1.0, 1.2)
    assert gp[30] == pytest.approx(0.5, rel=1e-6)
    gp, gpp = lognormal_moduli(w, 1.0, 1.0, 3.0)
    kk = kramers_kronig_check(w, gp, gpp, 0.0)
    assert kk.n_points >= 8 and kk.misfit < 0.1 and kk.passed is True


def test_an_equilibrium_modulus_is_not_a_kramers_kronig_violation():
    # A power-law solid, G* = G_e + S Γ(1−n) (iω)^n: the power law is an exact Kramers–Kronig pair (Winter &
    # Chambon 1986) and the relations fix G' only up to the constant G_e (Ferry 1980, ch. 4).  With n = 0.1 and
    # G_e = 10⁴ Pa, G' is level far above the 6.3 G'' that G'' alone implies; before the check left out the
    # points where G' is level, this elastic solid was "inconclusive: violates the Kramers-Kronig relations".
    n, G_e, S = 0.1, 1e4, 50.0
    w = np.geomspace(1e-2, 1e2, 41)
    part = S * gamma(1 - n) * w**n
    gp, gpp = G_e + part * math.cos(n * math.pi / 2), part * math.sin(n * math.pi / 2)
    assert kramers_kronig_check(w, gp, gpp, 0.0).passed in (True, None)
    rng = np.random.default_rng(4)
    noisy = Sweep(omega=w, storage=gp * (1 + 0.01 * rng.standard_normal(w.size)),
                  loss=gpp * (1 + 0.01 * rng.standard_normal(w.size)), name="power-law solid")
    d = diagnose(noisy, intervals=False)
    assert d.verdict == "gel" and "equilibrium modulus" in d.reason, d.reason
    # the same G'' with a G' that is not level and three times too small is still refused
    assert kramers_kronig_check(w, part * math.cos(n * math.pi / 2) / 3.0, gpp, 0.0).passed is False


def test_phase_resolution():
    assert phase_resolved(np.full(5, 1e19), np.full(5, 1e-19))[0] is False
    assert phase_resolved(np.full(5, 1e5), np.full(5, 1e2))[0] is True


def _walk_intervals(obj, path=""):
    """Every two-number list under a key ending in '_ci' or 'ci' in a JSON object."""
    if isinstance(obj, dict):
        for k, v in obj.items():
            if k.endswith("ci") and isinstance(v, list) and len(v) == 2:
                yield path + "." + k, v
            yield from _walk_intervals(v, path + "." + k)
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _walk_intervals(v, f"{path}[{i}]")


W30 = np.geomspace(1e-3, 1e3, 30)
NONSENSE = {
    # uncorrelated random moduli (issue 16 found them called GEL with alpha = 1.500 [1.500, 1.500])
    "random": lambda rng: Sweep(omega=W30, storage=10 ** rng.uniform(0, 3, 30), loss=10 ** rng.uniform(0, 3, 30)),
    "random narrow": lambda rng: Sweep(omega=W30, storage=10 ** rng.uniform(2, 2.2, 30),
                                       loss=10 ** rng.uniform(2, 2.2, 30)),
    # G' = 1e19 Pa, G'' = 1e-19 Pa (issue 16 found G0 = 8.967e-21 Pa 95% [8.967e-21, 8.967e-21])
    "1e19": lambda rng: Sweep(omega=np.geomspace(1e-2, 1e2, 30), storage=np.full(30, 1e19), loss=np.full(30, 1e-19)),
}


@pytest.mark.parametrize("name", list(NONSENSE))
def test_nonsense_is_inconclusive_with_a_reason_and_no_zero_width_interval(name):
    d = diagnose(NONSENSE[name](np.random.default_rng(0)))
    assert d.verdict == "inconclusive"
    assert d.reason and d.reason in d.statement
    obj = json.loads(dumps_json(d.to_dict()))
    for path, (lo, hi) in _walk_intervals(obj):
        assert lo is None or hi is None or hi > lo, (path, lo, hi)


def test_no_zero_width_interval_on_a_good_sweep_and_fixed_exponents_have_none():
    d = diagnose(rouse_sweep(1)[0], use_spectrum=False)
    obj = json.loads(dumps_json(d.to_dict()))
    for path, (lo, hi) in _walk_intervals(obj):
        assert lo is None or hi is None or hi > lo, (path, lo, hi)
    assert obj["fits"]["rouse"]["a_ci"] == [None, None]
    assert obj["alpha_ci"][0] < obj["alpha"] < obj["alpha_ci"][1]


def test_a_parameter_at_a_search_bound_is_flagged():
    d = diagnose(NONSENSE["random"](np.random.default_rng(0)), use_spectrum=False)
    flagged = [f for f in d.fits.values() if f.at_bound(d.omega)]
    assert flagged  # random data drive some fit to N = 5000 or a = 1 or 3
    obj = json.loads(dumps_json(d.to_dict()))
    assert any(fit["at_bound"] for fit in obj["fits"].values())
    assert any("search bound" in n for n in d.notes)


def test_valid_sweeps_pass_the_describability_checks():
    for s in (1, 2, 5):
        d = diagnose(rouse_sweep(s)[0])
        ev = d.evidence_by_name()
        for name in ("phase_resolved", "noise_level", "spectrum_describes"):
            assert ev[name].passed is True, (s, name, ev[name].note)
        assert ev["kramers_kronig"].passed in (True, None)
        assert d.noise == pytest.approx(ev["noise_level"].value, rel=1e-9) or d.noise >= 0.002
