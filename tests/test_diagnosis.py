"""The bead-spring diagnosis on synthetic sweeps of known physics (generators in synthetic_sweeps.py)."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from synthetic_sweeps import (
    bsw_sweep,
    gel_sweep,
    lognormal_sweep,
    maxwell_sweep,
    rouse_sweep,
    zimm_sweep,
)
from tauspec import diagnose
from tauspec.analysis.diagnosis.evidence import Evidence
from tauspec.analysis.diagnosis.verdict import VERDICTS, decide
from tauspec.data.sweep import Sweep
from tauspec.data.write import dumps_json
from tauspec.errors import SettingsError
from tauspec.models.chains import rouse_moduli

# The continuous-spectrum tests are exercised in test_diagnosis_spectrum.py; here the fits, the data-level
# signatures and the discrete modes decide, which keeps this file quick.


def _run(sweep):
    return diagnose(sweep, use_spectrum=False)


# Rouse 1953 / Ferry 1980 ch. 9: exact finite-N chain, N 15–200, 1–3 % noise, solvent 5–30 % of G''(ω_max).
ROUSE_SEEDS = [1, 2, 5, 8, 13, 21]


@pytest.fixture(scope="module")
def rouse_results():
    cases = [rouse_sweep(s) for s in ROUSE_SEEDS] + [rouse_sweep(99, N=15), rouse_sweep(98, N=200)]
    return [(sw, truth, _run(sw)) for sw, truth in cases]


def test_rouse_sweeps_are_called_rouse_with_accurate_parameters(rouse_results):
    for sw, truth, d in rouse_results:
        assert d.verdict == "rouse", (sw.name, d.reason)
        assert d.reported_model == "rouse"
        assert d.tau_R == pytest.approx(truth["tau1"], rel=0.10), sw.name
        assert d.G0 == pytest.approx(truth["G0"], rel=0.15), sw.name
        assert d.alpha == pytest.approx(2.0, abs=0.1), sw.name
        assert d.ci_method == "profile likelihood"


def test_rouse_intervals_cover_the_true_values(rouse_results):
    # 95 % intervals for τ_R and G0 each: both cover in about 90 % of cases; allow one miss in eight.
    covered = [d.tau_R_ci[0] < t["tau1"] < d.tau_R_ci[1] and d.G0_ci[0] < t["G0"] < d.G0_ci[1]
               for _, t, d in rouse_results]
    assert sum(covered) >= len(covered) - 1, covered
    for _, _, d in rouse_results:
        assert d.tau_R_ci[0] < d.tau_R < d.tau_R_ci[1]
        assert d.alpha_ci[0] <= d.alpha <= d.alpha_ci[1]


def test_rouse_evidence_lists_the_core_tests(rouse_results):
    _, _, d = rouse_results[0]
    ev = d.evidence_by_name()
    for name in ("terminal_slope_storage", "terminal_slope_loss", "rouse_fit", "mode_exponent", "plateau",
                 "tan_delta_intermediate", "rouse_coefficient", "spectrum_slope", "mode_ratio_12"):
        assert name in ev
    assert ev["terminal_slope_storage"].passed and ev["terminal_slope_loss"].passed
    assert ev["rouse_fit"].passed and ev["mode_exponent"].passed
    # tan δ = 1 of the Rouse region (Ferry 1980 ch. 9) measured on the data, and the π/(2√2) cross-check
    assert ev["tan_delta_intermediate"].value == pytest.approx(1.0, abs=0.12)
    assert ev["rouse_coefficient"].value == pytest.approx(1.0, abs=0.15)
    assert ev["spectrum_slope"].passed is None  # spectrum switched off in this file


@pytest.mark.parametrize("seed, nu", [(31, 0.5), (32, 0.5), (41, 0.588), (42, 0.588)])
def test_zimm_sweeps_are_called_zimm_with_the_right_exponent(seed, nu):
    # Zimm 1956: τ_p = τ_1 p^(−3ν), ν = 1/2 (θ) and 0.588 (good solvent, Rubinstein & Colby 2003 ch. 8).
    sw, truth = zimm_sweep(seed, nu)
    d = _run(sw)
    assert d.verdict == "zimm", d.reason
    assert d.alpha == pytest.approx(3 * nu, abs=0.08)
    assert d.tau_R == pytest.approx(truth["tau1"], rel=0.10)
    assert d.reported_model in ("zimm_theta", "zimm_good")


@pytest.mark.parametrize("seed", [51, 52, 53])
def test_bsw_entangled_spectra_are_called_entangled(seed):
    # Baumgaertel, Schausberger & Winter 1990 (BSW form, docs/references.md).
    sw, _ = bsw_sweep(seed)
    d = _run(sw)
    assert d.verdict == "entangled", d.reason
    assert d.evidence_by_name()["plateau"].value >= 1.0


@pytest.mark.parametrize("n", [0.35, 0.5, 0.6])
@pytest.mark.parametrize("seed", [61, 62])
def test_critical_gels_are_never_rouse(n, seed):
    # Winter & Chambon 1986: G' ∝ G'' ∝ ω^n, tan δ = tan(nπ/2); n = 1/2 mimics the Rouse region exactly.
    sw, _ = gel_sweep(seed, n)
    d = _run(sw)
    assert d.verdict != "rouse"
    assert d.verdict in ("gel", "inconclusive")
    ev = d.evidence_by_name()
    assert ev["terminal_slope_storage"].passed is False


@pytest.mark.parametrize("seed", [71, 72])
def test_single_maxwell_modes_are_not_rouse(seed):
    # Ferry 1980 ch. 3: one Maxwell mode, G' = G'' = g/2 at ωτ = 1.
    sw, _ = maxwell_sweep(seed)
    d = _run(sw)
    assert d.verdict not in ("rouse", "zimm")


@pytest.mark.parametrize("seed", [81, 82, 83])
def test_log_normal_spectra_are_not_rouse(seed):
    sw, _ = lognormal_sweep(seed)
    d = _run(sw)
    assert d.verdict not in ("rouse", "zimm")


def test_network_with_an_equilibrium_modulus_is_a_gel():
    # A post-gel solid: G' = G_e + Rouse chain (Winter & Chambon 1986: G_e > 0 beyond the gel point).
    rng = np.random.default_rng(5)
    w = np.geomspace(0.01, 300, 40)
    gp, gpp = rouse_moduli(w, 100.0, 1.0, 40, eta_s=0.1)
    sw = Sweep(omega=w, storage=(gp + 300.0) * (1 + 0.02 * rng.standard_normal(40)),
               loss=gpp * (1 + 0.02 * rng.standard_normal(40)), name="solid")
    d = _run(sw)
    assert d.verdict == "gel"
    assert d.evidence_by_name()["equilibrium_modulus"].passed is False


def test_rouse_sweep_without_its_terminal_zone_is_inconclusive():
    # Only the ω^(1/2) region: indistinguishable from a critical gel with n = 1/2 (Winter & Chambon 1986).
    rng = np.random.default_rng(7)
    w = np.geomspace(3.0, 3000.0, 30)
    gp, gpp = rouse_moduli(w, 100.0, 1.0, 3000)
    sw = Sweep(omega=w, storage=gp * (1 + 0.01 * rng.standard_normal(30)),
               loss=gpp * (1 + 0.01 * rng.standard_normal(30)), name="no-terminal")
    d = _run(sw)
    assert d.verdict in ("inconclusive", "gel")
    assert d.verdict != "rouse"


def test_narrow_window_is_inconclusive_with_the_reason():
    w = np.geomspace(0.1, 3.0, 12)  # 1.5 decades
    gp, gpp = rouse_moduli(w, 10.0, 1.0, 50)
    d = _run(Sweep(omega=w, storage=gp, loss=gpp, name="narrow"))
    assert d.verdict == "inconclusive"
    assert "decades" in d.reason and "2" in d.reason
    assert d.statement.startswith("These data cannot decide")


def test_only_the_terminal_zone_is_inconclusive():
    w = np.geomspace(0.001, 3.0, 30)  # ω_max τ_R = 3: no bead-spring region
    gp, gpp = rouse_moduli(w, 10.0, 1.0, 50)
    d = _run(Sweep(omega=w, storage=gp, loss=gpp, name="terminal-only"))
    assert d.verdict == "inconclusive"
    assert "bead-spring region" in d.reason


def test_json_has_the_documented_fields(rouse_results):
    _, _, d = rouse_results[1]
    obj = json.loads(dumps_json(d.to_dict()))
    for key in ("schema", "sample", "verdict", "statement", "tau_R", "tau_R_ci", "G0", "G0_ci", "N", "eta_s",
                "alpha", "alpha_ci", "evidence", "fits"):
        assert key in obj
    assert obj["schema"] == "tauspec.diagnosis/1"
    assert obj["verdict"] in VERDICTS
    # every model in both forms: discrete chain (sine spacing) and continuum law (Rouse 1953; Zimm 1956)
    assert set(obj["fits"]) == {"rouse", "zimm_theta", "zimm_good", "general_sine", "general_power",
                                "rouse_continuum", "zimm_theta_discrete", "zimm_good_discrete"}
    for fit in obj["fits"].values():
        assert {"reduced_chi2", "aic", "bic"} <= set(fit)
    for item in obj["evidence"]:
        assert {"test", "value", "expected", "passed"} <= set(item)
        assert item["passed"] in (True, False, None)
    assert obj["tau_R_ci"][0] < obj["tau_R"] < obj["tau_R_ci"][1]
    text = d.report()
    assert "ROUSE" in text and "tau_R" in text and "[pass] rouse_fit" in text


def test_diagnosis_is_deterministic(rouse_results):
    sw, _, d = rouse_results[-1]
    assert dumps_json(_run(sw).to_dict()) == dumps_json(d.to_dict())


def test_decide_rule_order_and_gel_before_rouse():
    # A hand-made evidence set: everything Rouse-like passes but there is no terminal zone → not rouse.
    def ev(**fails):
        names = ["window_decades", "terminal_slope_storage", "terminal_slope_loss", "plateau",
                 "critical_gel_power_law", "equilibrium_modulus", "single_mode", "intermediate_region",
                 "chain_modes", "rouse_fit", "zimm_fit", "rouse_vs_zimm_bic", "mode_exponent",
                 "mode_exponent_zimm", "spectrum_slope", "spectrum_slope_zimm", "terminal_mode", "mode_ratio_12",
                 "mode_ratio_13", "tan_delta_intermediate", "tan_delta_zimm", "rouse_coefficient"]
        return [Evidence(test=n, value=0.5 if n == "critical_gel_power_law" else 3.0, expected="",
                         passed=not fails.get(n, False)) for n in names]

    assert decide(ev())[0] == "rouse"
    assert decide(ev(terminal_slope_storage=True))[0] == "inconclusive"
    assert decide(ev(terminal_slope_storage=True, critical_gel_power_law=True))[0] == "gel"
    assert decide(ev(plateau=True))[0] == "entangled"
    assert decide(ev(window_decades=True, plateau=True))[0] == "inconclusive"
    assert decide(ev(rouse_vs_zimm_bic=True, mode_exponent=True))[0] == "zimm"
    assert decide(ev(spectrum_slope=True))[0] == "rouse"  # one supporting failure is allowed
    assert decide(ev(spectrum_slope=True, tan_delta_intermediate=True))[0] == "other"


def test_diagnose_needs_a_sweep():
    with pytest.raises(SettingsError, match="needs a Sweep"):
        diagnose({"omega": [1, 2, 3]})


def test_statement_is_one_plain_sentence(rouse_results):
    for _, _, d in rouse_results[:2]:
        assert d.statement.count(". ") == 0 and d.statement.endswith(".")
        assert not math.isnan(d.tau_R)


@pytest.mark.slow
def test_verdicts_on_many_unseen_sweeps():
    # A wider statistical check over fresh seeds (generators as above, Jacobian intervals for speed):
    # Rouse → rouse in at least 9 of 10, Zimm θ and good solvent → zimm in at least 5 of 6, and never rouse
    # for gels, Maxwell modes and log-normal spectra.
    rouse = [diagnose(rouse_sweep(s)[0], use_spectrum=False, intervals=False).verdict for s in range(300, 310)]
    assert rouse.count("rouse") >= 9, rouse
    zimm = [diagnose(zimm_sweep(s, nu)[0], use_spectrum=False, intervals=False).verdict
            for s, nu in zip(range(310, 316), [0.5, 0.588] * 3)]
    assert zimm.count("zimm") >= 5, zimm
    others = [gel_sweep(320, 0.5)[0], gel_sweep(321, 0.42)[0], maxwell_sweep(322)[0], lognormal_sweep(323)[0],
              lognormal_sweep(324)[0], bsw_sweep(325)[0]]
    verdicts = [diagnose(sw, use_spectrum=False, intervals=False).verdict for sw in others]
    assert "rouse" not in verdicts, verdicts


def test_degenerate_sweeps_get_a_verdict_not_an_exception():
    # Data no model describes: random numbers, a Newtonian liquid, an elastic solid (a sliver of a window is
    # test_narrow_window...).  Each must come back with a verdict, finite-or-null JSON and no warning.
    rng = np.random.default_rng(0)
    w = np.geomspace(1e-3, 1e3, 30)
    cases = {
        "random": Sweep(omega=w, storage=10 ** rng.uniform(0, 3, 30), loss=10 ** rng.uniform(0, 3, 30)),
        "newtonian": Sweep(omega=w, storage=1e-9 * w**2, loss=1e3 * w),
        "solid": Sweep(omega=w, storage=1e5 * np.ones(30), loss=1e2 * np.ones(30)),
    }
    verdicts = {}
    for name, sw in cases.items():
        d = _run(sw)
        json.loads(dumps_json(d.to_dict()))
        assert d.report()
        verdicts[name] = d.verdict
    assert verdicts["newtonian"] == "inconclusive"
    assert verdicts["solid"] == "gel"
    assert "rouse" not in verdicts.values()


def test_frequencies_rounded_in_another_unit_give_the_same_evidence():
    # Three Maxwell modes (Ferry 1980, ch. 3) on a regular grid of six points per decade, which puts points
    # exactly on the edges of the half-decade slope windows.  The same sweep exported as f in Hz to four
    # significant digits moves each ω by up to 3e-4 relative; with hairline window edges that changed the
    # local slopes of G'' (0.28 against 0.37), the stretch of G' > G'' with a rising G'' (0.93 against 1.10
    # decades, either side of its 1-decade threshold) and the verdict (other against entangled).
    from tauspec.models import signatures as sg

    w = np.logspace(-2, 2, 25)
    x = np.outer(w, [10.0, 1.0, 0.1])
    g = np.array([1e3, 3e3, 5e3])
    gp, gpp = (g * x**2 / (1 + x**2)).sum(1), (g * x / (1 + x**2)).sum(1)
    hz = np.array([float(f"{v:.4g}") for v in w / (2 * math.pi)]) * 2 * math.pi
    assert 1e-7 < np.max(np.abs(hz / w - 1)) < 1e-3
    a, b = Sweep(omega=w, storage=gp, loss=gpp, name="rad/s"), Sweep(omega=hz, storage=gp, loss=gpp, name="Hz")
    np.testing.assert_allclose(sg.local_slopes(b.omega, gpp, 0.5), sg.local_slopes(a.omega, gpp, 0.5), atol=1e-3)
    rise = [sg.storage_dominated_rise(s.omega, gp, gpp) for s in (a, b)]
    assert rise[1] == pytest.approx(rise[0], abs=1e-3)
    da, db = diagnose(a, intervals=False), diagnose(b, intervals=False)
    assert da.verdict == db.verdict
    va, vb = da.evidence_by_name(), db.evidence_by_name()
    for name in ("terminal_slope_storage", "terminal_slope_loss", "storage_dominated", "plateau"):
        assert vb[name].value == pytest.approx(va[name].value, abs=1e-3), name


def test_a_two_decade_sweep_exported_rounded_spans_two_decades():
    # 0.1 to 10 rad/s with the last frequency written 9.999: refused before as "the sweep spans 2.00 decades; at
    # least 2 are needed", a reason that contradicts itself
    w = np.logspace(-1, 1, 21)
    w[-1] = 9.999
    x = w * 1.0
    d = diagnose(Sweep(omega=w, storage=1e3 * x**2 / (1 + x**2), loss=1e3 * x / (1 + x**2), name="2 decades"),
                 intervals=False)
    assert d.evidence_by_name()["window_decades"].passed is True
    assert "at least 2 are needed" not in d.reason
    w[-1] = 9.8  # 1.991 decades: short of 2 by more than rounding
    d = diagnose(Sweep(omega=w, storage=1e3 * w**2 / (1 + w**2), loss=1e3 * w / (1 + w**2), name="short"),
                 intervals=False)
    assert d.verdict == "inconclusive" and "at least 2 are needed" in d.reason


@pytest.mark.parametrize("N,tau1,shown,reach", [(40, 0.6, True, 0.88), (10, 0.15, False, 3.1)])
def test_a_rouse_chain_whose_modes_run_out_near_omega_max_has_its_entanglement_like_signature_explained(N, tau1, shown,
                                                                                                        reach):
    # The exact discrete Rouse chain (Rouse 1953; Ferry 1980, ch. 9: G' = G0 Σ x²/(1 + x²), G'' = G0 Σ x/(1 + x²),
    # x = ωτ_p) with G0 = 6e5/N Pa.  At N = 40 and τ_1 = 0.6 s its shortest mode τ_N = τ_1 sin²(π/82)/
    # sin²(40π/82) = 8.8e-4 s lies at 1/ω_max: G' levels off towards N G0 and stays above a rising G'' over more
    # than a decade on the model itself, before any noise.  The test of that entanglement signature then fails on
    # a Rouse sample, and a note must say that the fitted chain shows it too.  At N = 10, τ_1 = 0.15 s the modes
    # run out inside the window (ω_max τ_N = 3.1), G'' falls beyond them, the test passes and no note is written.
    from synthetic import noisy_sweep, rouse_times
    from tauspec.models.signatures import storage_dominated_rise

    w = np.geomspace(0.01, 1000, 41)
    tau = rouse_times(tau1, N)
    x = np.outer(w, tau)
    gp, gpp = 6e5 / N * (x**2 / (1 + x**2)).sum(axis=1), 6e5 / N * (x / (1 + x**2)).sum(axis=1)
    assert w[-1] * tau[-1] == pytest.approx(reach, abs=0.05)
    assert (storage_dominated_rise(w, gp, gpp) >= 1.0) is shown
    d = diagnose(noisy_sweep(w, gp, gpp, 0.015, N, name=f"rouse-{N}"))
    assert d.verdict == "rouse"
    failed = {e.test for e in d.evidence if e.passed is False}
    assert ("storage_dominated" in failed) is shown
    assert any("is shown by the fitted chain too" in n and "speaks for the chain" in n for n in d.notes) is shown
