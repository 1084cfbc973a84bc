"""Tests of time–temperature superposition (tauspec.superpose, tauspec.shift_models, ``tauspec master``).

Synthetic data are built from a known relaxation spectrum H(τ) at T_ref through the exact forward model
(tauspec.kernels.spectrum_moduli, the generalized Maxwell model of Ferry 1980, ch. 3) and the reduced
variables of Ferry (1980), ch. 11: G(ω; T) = b_T G(a_T ω; T_ref), b_T = T ρ(T)/(T_ref ρ(T_ref)).
"""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest

from synthetic import bsw_H, lognormal_H
from tauspec.analysis.superposition.master import MasterCurve, superpose
from tauspec.analysis.superposition.pairs import noise_level
from tauspec.data.read import read_sweep
from tauspec.data.sweep import Sweep
from tauspec.errors import SettingsError, TauspecError, WeakResultWarning
from tauspec.models.shift_laws import (
    GAS_CONSTANT,
    arrhenius_log_aT,
    compare_fits,
    fit_arrhenius,
    fit_wlf,
    wlf_log_aT,
)
from tauspec.spectrum.kernels import log_grid, spectrum_moduli

# "Universal" WLF constants referred to the glass transition: C1 = 17.44, C2 = 51.6 K
# (Williams, Landel & Ferry 1955, J. Am. Chem. Soc. 77, 3701; Ferry 1980, ch. 11).
C1_G, C2_G = 17.44, 51.6
T_G = 373.15  # an invented glass temperature (demo value)

TAU = log_grid(1e-10, 1e5, 600)
NPTS = 31  # about ten points per decade over three decades, as rheometers are usually run


def bsw_spectrum(tau, G_N=2e5, tau_max=100.0, tau_c=1e-4):
    """BSW spectrum with its glass-transition branch (Baumgaertel, Schausberger & Winter 1990), n_e = 0.23,
    n_g = 0.67: the generator of tests/synthetic.py with this file's defaults."""
    return bsw_H(tau, G_N=G_N, tau_max=tau_max, n_e=0.23, n_g=0.67, tau_c=tau_c)


def wlf_constants_at(T_ref, C1=C1_G, C2=C2_G, T0=T_G):
    """Move WLF constants from T0 to T_ref: C2' = C2 + T_ref − T0, C1' = C1 C2 / C2' (Ferry 1980, ch. 11)."""
    C2r = C2 + T_ref - T0
    return C1 * C2 / C2r, C2r


def make_sweeps(temps, log_aT, *, H=None, seed=0, noise=0.02, T_ref, bT=None, omega=None, components=None):
    """Sweeps at ``temps`` (K): G(ω; T) = b_T Σ_c G_c(a_c(T) ω; T_ref) with multiplicative Gaussian noise.

    ``components`` is a list of (H, log_aT function) pairs; by default one, (H, log_aT)."""
    rng = np.random.default_rng(seed)
    omega = np.geomspace(0.1, 100.0, NPTS) if omega is None else omega
    components = components or [(bsw_spectrum(TAU) if H is None else H, log_aT)]
    out = []
    for T in temps:
        b = T / T_ref if bT is None else bT(T)
        gp = np.zeros_like(omega)
        gpp = np.zeros_like(omega)
        for Hc, la in components:
            p, pp = spectrum_moduli(omega * 10.0 ** la(T), TAU, Hc)
            gp += p
            gpp += pp
        gp = b * gp * (1 + noise * rng.standard_normal(len(omega)))
        gpp = b * gpp * (1 + noise * rng.standard_normal(len(omega)))
        out.append(Sweep(omega=omega, storage=gp, loss=gpp, name="demo-ps",
                         meta={"temperature": f"{T - 273.15:.2f} C"}, source=f"sweep_{T - 273.15:.0f}C.csv"))
    return out


TEMPS_WLF = T_G + np.array([30.0, 45.0, 60.0, 80.0, 100.0])
T_REF_WLF = T_G + 60.0


def wlf_truth(T, T_ref=T_REF_WLF):
    return float(wlf_log_aT(T, T_G, C1_G, C2_G) - wlf_log_aT(T_ref, T_G, C1_G, C2_G))


# --------------------------------------------------------------------------- the shift-factor models alone


def test_wlf_fit_exact_pairwise_shifts():
    # Exact WLF pairwise shifts must give back C1, C2 (Williams, Landel & Ferry 1955), here at T_ref = T_g + 40.
    T = T_G + np.array([10.0, 25.0, 40.0, 60.0, 90.0])
    T_ref = T_G + 40.0
    la = wlf_log_aT(T, T_G, C1_G, C2_G)
    fit = fit_wlf(T, np.diff(la), np.full(4, 0.01), T_ref=T_ref)
    C1r, C2r = wlf_constants_at(T_ref)
    assert fit.C1 == pytest.approx(C1r, rel=1e-5)
    assert fit.C2 == pytest.approx(C2r, rel=1e-5)
    assert fit.chi2 < 1e-8
    assert fit.C1_ci[0] < fit.C1 < fit.C1_ci[1]
    assert float(fit.log_aT(T_ref)) == 0.0


def test_arrhenius_fit_exact_and_model_choice():
    # ln a_T = (E_a/R)(1/T − 1/T_ref) (Ferry 1980, ch. 11); R = 8.314462618 J/(mol K) (CODATA 2018).
    assert GAS_CONSTANT == pytest.approx(8.314462618)
    T = 273.15 + np.array([150.0, 170.0, 190.0, 210.0])
    la = arrhenius_log_aT(T, 463.15, 45e3)
    assert la[0] == pytest.approx(45e3 / GAS_CONSTANT * (1 / T[0] - 1 / 463.15) / math.log(10))
    arr = fit_arrhenius(T, np.diff(la), np.full(3, 0.01), T_ref=463.15)
    assert arr.Ea == pytest.approx(45e3, rel=1e-9)
    # On Arrhenius data WLF can only match in its Arrhenius limit (C2 → ∞), so with one constant more its
    # AIC is higher by about 2 (Akaike 1974: AIC = χ² + 2k).
    wlf = fit_wlf(T, np.diff(la), np.full(3, 0.01), T_ref=463.15)
    best, sentence = compare_fits(wlf, arr)
    assert best == "arrhenius" and sentence.startswith("Arrhenius fits better")
    assert wlf.aic - arr.aic == pytest.approx(2.0, abs=0.01)
    assert sentence.startswith("Arrhenius fits better: AIC lower by 2")  # 3 significant figures
    # a large gap in three significant figures, not as 429561382.00
    assert compare_fits(dataclasses.replace(wlf, aic=arr.aic - 4.29561382e8), arr)[1] == (
        "WLF fits better: AIC lower by 4.3e8")


def test_noise_level_of_a_smooth_curve():
    # The scatter of ln G about a smooth fit estimates the relative noise (2 % here, seeded).
    rng = np.random.default_rng(7)
    w = np.geomspace(0.01, 100, 60)
    gp, _ = spectrum_moduli(w, TAU, bsw_spectrum(TAU))
    estimates = [noise_level(w, gp * (1 + 0.02 * rng.standard_normal(len(w)))) for _ in range(5)]
    assert np.mean(estimates) == pytest.approx(0.02, rel=0.2)


# --------------------------------------------------------------------------- superposition of synthetic data


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_wlf_data_recovered(seed):
    # Known spectrum (BSW form), universal WLF constants (Williams, Landel & Ferry 1955), b_T = T/T_ref
    # (constant density, Ferry 1980 ch. 11), 2 % noise, five temperatures of three decades each.
    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, seed=seed, T_ref=T_REF_WLF)
    mc = superpose(sweeps, T_ref=T_REF_WLF)
    assert isinstance(mc, MasterCurve)
    truth = np.array([wlf_truth(T) for T in TEMPS_WLF])
    assert np.max(np.abs(mc.log_aT - truth)) < 0.05
    C1r, C2r = wlf_constants_at(T_REF_WLF)
    assert mc.wlf.C1 == pytest.approx(C1r, rel=0.10)
    assert mc.wlf.C2 == pytest.approx(C2r, rel=0.15)
    assert mc.wlf.C1_ci[0] < mc.wlf.C1 < mc.wlf.C1_ci[1]
    assert mc.better_fit == "wlf"
    np.testing.assert_allclose(mc.bT, TEMPS_WLF / T_REF_WLF, rtol=1e-12)
    assert mc.check.simple
    # The 95 % intervals are not absurdly narrow: the truth lies within 4 standard errors.
    ok = mc.log_aT_se > 0
    assert np.all(np.abs(mc.log_aT - truth)[ok] < 4 * mc.log_aT_se[ok] + 0.005)
    # The master curve is a Sweep at T_ref spanning the widened window (3 decades + the shifts).
    m = mc.sweep
    assert isinstance(m, Sweep)
    assert m.meta_number("temperature", kind="temperature") == pytest.approx(T_REF_WLF)
    assert m.decades == pytest.approx(3.0 + truth.max() - truth.min(), abs=0.1)
    assert len(m) == len(sweeps) * NPTS
    assert "shift_aT" in m.meta
    assert m.meta["sources"].split("; ")[0] == sweeps[0].source


def test_master_curve_matches_the_reference_moduli():
    # Without noise the master curve must lie on G(ω; T_ref) of the known spectrum (Ferry 1980, ch. 11).
    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, seed=0, noise=0.0, T_ref=T_REF_WLF)
    mc = superpose(sweeps, T_ref=T_REF_WLF)
    gp, gpp = spectrum_moduli(mc.omega, TAU, bsw_spectrum(TAU))
    np.testing.assert_allclose(mc.storage, gp, rtol=2e-3)
    np.testing.assert_allclose(mc.loss, gpp, rtol=2e-3)


@pytest.mark.parametrize("seed", [0, 1])
def test_arrhenius_data_recovered(seed):
    # ln a_T = (E_a/R)(1/T − 1/T_ref) with E_a = 60 kJ/mol (a value of our choice), 2 % noise → E_a within 5 %.
    T_ref = 463.15
    temps = 273.15 + np.array([150.0, 170.0, 190.0, 210.0, 230.0])
    sweeps = make_sweeps(temps, lambda T: float(arrhenius_log_aT(T, T_ref, 60e3)), seed=seed, T_ref=T_ref)
    mc = superpose(sweeps, T_ref=T_ref)
    assert mc.arrhenius.Ea == pytest.approx(60e3, rel=0.05)
    assert mc.arrhenius.Ea_ci[0] < 60e3 < mc.arrhenius.Ea_ci[1]
    assert mc.check.simple


def test_reference_between_sweep_temperatures():
    # T_ref = T_g + 70 lies between the sweeps at T_g + 60 and T_g + 80: log a_T is referred to it through the
    # fitted WLF equation (Williams, Landel & Ferry 1955) and the result says so.
    T_ref = T_G + 70.0
    sweeps = make_sweeps(TEMPS_WLF, lambda T: wlf_truth(T, T_ref), seed=3, T_ref=T_ref)
    mc = superpose(sweeps, T_ref=T_ref)
    truth = np.array([wlf_truth(T, T_ref) for T in TEMPS_WLF])
    assert np.max(np.abs(mc.log_aT - truth)) < 0.05
    assert any("not a sweep temperature" in n and "WLF" in n for n in mc.notes)
    C1r, C2r = wlf_constants_at(T_ref)
    assert mc.wlf.C1 == pytest.approx(C1r, rel=0.10)
    assert mc.wlf.C2 == pytest.approx(C2r, rel=0.15)


def test_vertical_factor_from_a_given_density():
    # b_T = T ρ(T)/(T_ref ρ(T_ref)) (Ferry 1980, ch. 11) with a linear thermal expansion of the density,
    # ρ = ρ0 (1 − α (T − T0)), α = 6e-4 /K (an order-of-magnitude value for polymer melts, from memory).
    def rho(T):
        return 1.05 * (1 - 6e-4 * (T - 400.0))

    def b_rule(T):
        return T * rho(T) / (T_REF_WLF * rho(T_REF_WLF))

    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, seed=4, T_ref=T_REF_WLF, bT=b_rule)
    given = superpose(sweeps, T_ref=T_REF_WLF, density=rho)
    np.testing.assert_allclose(given.bT, [b_rule(T) for T in TEMPS_WLF], rtol=1e-12)
    truth = np.array([wlf_truth(T) for T in TEMPS_WLF])
    assert np.max(np.abs(given.log_aT - truth)) < 0.05


@pytest.mark.parametrize("seed", [0, 3])
def test_vertical_factor_fitted(seed):
    # A vertical factor far from the density rule, b_T = (T/T_ref)^4 (invented to exercise the fit): the fitted
    # b_T must find it (G = b_T G_ref(a_T ω), Ferry 1980 ch. 11). Fitting b_T costs precision in a_T, so the
    # a_T tolerance here is 0.08 decade rather than 0.05.
    def b_true(T):
        return (T / T_REF_WLF) ** 4

    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, seed=seed, T_ref=T_REF_WLF, bT=b_true)
    expected = np.array([b_true(T) for T in TEMPS_WLF])
    assert np.max(np.abs(expected / (TEMPS_WLF / T_REF_WLF) - 1)) > 0.2  # the density rule would be far off
    fitted = superpose(sweeps, T_ref=T_REF_WLF, vertical="fit")
    assert fitted.vertical == "fit"
    np.testing.assert_allclose(fitted.bT, expected, rtol=0.03)
    truth = np.array([wlf_truth(T) for T in TEMPS_WLF])
    assert np.max(np.abs(fitted.log_aT - truth)) < 0.08
    assert np.all(fitted.log_bT_se[TEMPS_WLF != T_REF_WLF] > 0)
    assert fitted.check.simple


@pytest.mark.parametrize("where", [0, -1])
def test_reference_at_the_ends(where):
    # T_ref at the coldest or hottest sweep: a_T(T_ref) = 1 exactly, the chain runs one way only, and the WLF
    # constants refer to that T_ref (Ferry 1980, ch. 11).
    T_ref = float(TEMPS_WLF[where])
    sweeps = make_sweeps(TEMPS_WLF, lambda T: wlf_truth(T, T_ref), seed=1, T_ref=T_ref)
    mc = superpose(sweeps, T_ref=T_ref)
    truth = np.array([wlf_truth(T, T_ref) for T in TEMPS_WLF])
    assert mc.aT[where] == 1.0 and tuple(mc.aT_ci[where]) == (1.0, 1.0)
    assert np.max(np.abs(mc.log_aT - truth)) < 0.05
    C1r, C2r = wlf_constants_at(T_ref)
    assert mc.wlf.C1 == pytest.approx(C1r, rel=0.10)
    assert mc.wlf.C2 == pytest.approx(C2r, rel=0.15)


def test_two_temperatures_no_wlf():
    # Two WLF constants cannot be fixed by one pairwise shift: WLF is not fitted, Arrhenius is, and a T_ref
    # between the two sweeps is placed with the Arrhenius equation (and the result says so).
    temps = TEMPS_WLF[:2]
    T_ref = float(temps[0]) + 5.0
    sweeps = make_sweeps(temps, lambda T: wlf_truth(T, T_ref), seed=1, T_ref=T_ref)
    mc = superpose(sweeps, T_ref=T_ref)
    assert mc.wlf is None and mc.better_fit == "arrhenius"
    assert mc.to_dict()["wlf"] == {"C1": None, "C2": None}
    assert any("Arrhenius" in n for n in mc.notes)
    # The measured step between the two sweeps is kept exactly (Ferry 1980, ch. 11: shifts compose).
    step = wlf_truth(temps[1], T_ref) - wlf_truth(temps[0], T_ref)
    assert mc.log_aT[1] - mc.log_aT[0] == pytest.approx(step, abs=0.03)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_blend_flagged_simple_material_not(seed):
    # A blend of two components whose relaxation times follow WLF about different glass temperatures is
    # thermorheologically complex: the overlaps cannot agree (Ferry 1980, ch. 11; van Gurp & Palmen 1998).
    T_gB = T_G - 30.0

    def la_b(T):
        return float(wlf_log_aT(T, T_gB, C1_G, C2_G) - wlf_log_aT(T_REF_WLF, T_gB, C1_G, C2_G))

    H_b = bsw_spectrum(TAU, G_N=1e5, tau_max=0.3, tau_c=1e-5)
    blend = make_sweeps(TEMPS_WLF, None, seed=seed, T_ref=T_REF_WLF,
                        components=[(bsw_spectrum(TAU), wlf_truth), (H_b, la_b)])
    with pytest.warns(WeakResultWarning, match="superposition fails"):
        mc = superpose(blend, T_ref=T_REF_WLF)
    assert not mc.check.simple
    assert mc.check.misfit > mc.check.threshold
    assert "fails" in mc.check.statement
    # The same two spectra shifting together (one WLF law) form a simple material: not flagged
    # (filterwarnings = error would turn a WeakResultWarning into a failure).
    simple = make_sweeps(TEMPS_WLF, None, seed=seed, T_ref=T_REF_WLF,
                         components=[(bsw_spectrum(TAU), wlf_truth), (H_b, wlf_truth)])
    ok = superpose(simple, T_ref=T_REF_WLF)
    assert ok.check.simple
    assert ok.check.misfit < 1.3
    assert "holds" in ok.check.statement


def test_invariances():
    # a_T is a ratio of relaxation times and b_T a ratio of moduli (Ferry 1980, ch. 11): neither may depend on the
    # order of the files, the modulus unit (all moduli × 1000) or a common frequency factor (all ω × 2π).
    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, seed=8, T_ref=T_REF_WLF)
    base = superpose(sweeps, T_ref=T_REF_WLF)
    order = [3, 0, 4, 2, 1]
    shuffled = superpose([sweeps[i] for i in order], T_ref=T_REF_WLF)
    np.testing.assert_allclose(shuffled.log_aT, base.log_aT[order], rtol=0, atol=1e-12)
    np.testing.assert_allclose(shuffled.omega, base.omega, rtol=1e-12)
    scaled = superpose([s.replace(storage=1e3 * s.storage, loss=1e3 * s.loss) for s in sweeps], T_ref=T_REF_WLF)
    np.testing.assert_allclose(scaled.log_aT, base.log_aT, rtol=0, atol=1e-6)
    np.testing.assert_allclose(scaled.storage, 1e3 * base.storage, rtol=1e-5)
    faster = superpose([s.replace(omega=2 * math.pi * s.omega) for s in sweeps], T_ref=T_REF_WLF)
    np.testing.assert_allclose(faster.log_aT, base.log_aT, rtol=0, atol=1e-6)
    assert faster.wlf.C1 == pytest.approx(base.wlf.C1, rel=1e-5)


# --------------------------------------------------------------------------- refusals


def test_non_overlapping_sweeps_refused():
    # Sweeps 60 K apart near T_g shift by ~5 decades: three-decade sweeps cannot overlap.
    temps = T_G + np.array([20.0, 80.0])
    sweeps = make_sweeps(temps, lambda T: wlf_truth(T, temps[0]), seed=0, T_ref=temps[0])
    with pytest.raises(TauspecError, match=r"sweeps at 120 C .* and 180 C .* do not overlap"):
        superpose(sweeps, T_ref=temps[0])


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"T_ref": 300.0}, "outside the measured range"),
        ({"T_ref": T_REF_WLF, "vertical": "free"}, "vertical must be"),
        ({"T_ref": T_REF_WLF, "vertical": "fit", "density": lambda T: 1.0}, "density only with"),
        ({"T_ref": T_REF_WLF, "density": lambda T: -1.0}, "positive finite"),
        ({"T_ref": T_REF_WLF, "temperatures": [400.0, 410.0]}, "2 temperatures given for 5 sweeps"),
        ({"T_ref": T_REF_WLF, "temperatures": [400.0, 410.0, 410.0, 420.0, 430.0]}, "same temperature"),
    ],
)
def test_bad_options_refused(kwargs, match):
    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, seed=0, T_ref=T_REF_WLF)
    with pytest.raises(TauspecError, match=match):
        superpose(sweeps, **kwargs)


def test_missing_temperature_and_single_sweep_refused():
    sweeps = make_sweeps(TEMPS_WLF[:2], wlf_truth, seed=0, T_ref=TEMPS_WLF[0])
    bare = sweeps[1].replace(meta={})
    with pytest.raises(TauspecError, match=r"sweep_\d+C.csv: no temperature"):
        superpose([sweeps[0], bare], T_ref=TEMPS_WLF[0])
    with pytest.raises(SettingsError, match="two or more temperatures"):
        superpose(sweeps[:1], T_ref=TEMPS_WLF[0])


# --------------------------------------------------------------------------- the command line


def _write(sweep: Sweep, path, *, temperature=True):
    lines = [f"# sample: {sweep.name}"]
    if temperature:
        lines.append(f"# temperature: {sweep.meta['temperature']}")
    lines.append("omega [rad/s], G' [Pa], G'' [Pa]")
    rows = zip(sweep.omega.tolist(), sweep.storage.tolist(), sweep.loss.tolist())
    lines += [f"{w!r}, {a!r}, {b!r}" for w, a, b in rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return str(path)


def test_cli_round_trip(tmp_path, capsys):
    from tauspec.cli.main import main

    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, seed=5, T_ref=T_REF_WLF)
    files = [_write(s, tmp_path / f"s{i}.csv") for i, s in enumerate(sweeps)]
    order = [2, 0, 4, 1, 3]  # not sorted by temperature
    out = tmp_path / "out"
    code = main(["master", *[files[i] for i in order], "--reference-temperature", "160", "--json", "--out", str(out)])
    assert code == 0
    captured = capsys.readouterr()
    data = json.loads(captured.out)  # exactly one JSON object on stdout
    for key in ("schema", "T_ref", "temperatures", "aT", "aT_ci", "bT", "wlf", "arrhenius", "omega", "storage",
                "loss", "superposition"):
        assert key in data
    assert data["T_ref"] == pytest.approx(160.0)
    np.testing.assert_allclose(data["temperatures"], TEMPS_WLF[order] - 273.15, atol=1e-9)
    truth = np.array([wlf_truth(T) for T in TEMPS_WLF[order]])
    assert np.max(np.abs(np.log10(data["aT"]) - truth)) < 0.05
    assert set(data["wlf"]) >= {"C1", "C2"} and "Ea" in data["arrhenius"]
    assert data["superposition"]["simple"] is True
    assert all(lo <= a <= hi for a, (lo, hi) in zip(data["aT"], data["aT_ci"]))
    m = read_sweep(out / "master.csv")
    np.testing.assert_allclose(m.omega, data["omega"], rtol=1e-15)
    np.testing.assert_allclose(m.storage, data["storage"], rtol=1e-15)
    np.testing.assert_allclose(m.loss, data["loss"], rtol=1e-15)
    assert m.meta_number("temperature", kind="temperature") == pytest.approx(433.15)
    assert json.loads((out / "master.json").read_text(encoding="utf-8"))["aT"] == data["aT"]


def test_cli_temperatures_option_plot_and_errors(tmp_path, capsys):
    from tauspec.cli.main import main

    sweeps = make_sweeps(TEMPS_WLF[1:4], wlf_truth, seed=6, T_ref=T_REF_WLF)
    files = [_write(s, tmp_path / f"t{i}.csv", temperature=False) for i, s in enumerate(sweeps)]
    assert main(["master", *files]) == 1
    assert "no temperature" in capsys.readouterr().err
    assert main(["master", *files, "--temperatures", "145,160"]) == 1
    assert "2 values for 3 files" in capsys.readouterr().err
    code = main(["master", *files, "--temperatures", "145,160,180", "--plot", "--out", str(tmp_path / "o")])
    assert code == 0
    text = capsys.readouterr().out
    assert "T_ref = 160 C" in text  # default: the middle temperature
    png = tmp_path / "o" / "master.png"
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


# --------------------------------------------------------------------------- superpose, then invert


def test_superpose_then_invert_recovers_the_spectrum_over_the_widened_window():
    # A smooth known spectrum (two log-normals; tests/synthetic.py) at T_ref, WLF shifts (Williams, Landel & Ferry
    # 1955), 2 % noise: the master curve spans ~8 decades, so the Davies–Anderssen window (Davies & Anderssen
    # 1997) is ~5 decades wider than one three-decade sweep's, and the inversion of the master curve must recover
    # H inside that window.
    from tauspec.spectrum.invert import invert
    from tauspec.spectrum.window import supported_window

    def H_true(tau):
        return lognormal_H(tau, G_t=6e5, tau_m=0.05, sigma=2.5) + lognormal_H(tau, G_t=1e5, tau_m=1e-4, sigma=1.5)

    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, H=H_true(TAU), seed=0, T_ref=T_REF_WLF)
    mc = superpose(sweeps, T_ref=T_REF_WLF)
    single = supported_window(sweeps[2].omega)
    lo, hi = supported_window(mc.omega)
    assert math.log10(hi / lo) > math.log10(single[1] / single[0]) + 4.5
    spec = invert(mc.sweep)
    m = spec.in_window
    assert spec.tau[m].min() < 10 * lo and spec.tau[m].max() > hi / 10
    H = H_true(spec.tau)
    rel = float(np.linalg.norm(spec.H[m] - H[m]) / np.linalg.norm(H[m]))
    assert rel <= 0.10


def test_cli_one_file_with_a_temperature_column(tmp_path, capsys):
    # The same sweeps as in test_cli_round_trip, written into one file with a temperature column.
    from tauspec.cli.main import main

    sweeps = make_sweeps(TEMPS_WLF, wlf_truth, seed=5, T_ref=T_REF_WLF)
    lines = ["# sample: series", "omega [rad/s],G' [Pa],G'' [Pa],T [C]"]
    for s in sweeps:
        T = s.meta_number("temperature", kind="temperature") - 273.15
        lines += [f"{w!r},{a!r},{b!r},{T!r}" for w, a, b in zip(s.omega.tolist(), s.storage.tolist(),
                                                               s.loss.tolist())]
    path = tmp_path / "all.csv"
    path.write_text("\n".join(lines) + "\n")
    assert main(["master", str(path), "--reference-temperature", "160", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    np.testing.assert_allclose(sorted(data["temperatures"]), np.sort(TEMPS_WLF) - 273.15, atol=1e-6)
    truth = np.array([wlf_truth(T) for T in np.array(data["temperatures"]) + 273.15])
    assert np.max(np.abs(np.log10(data["aT"]) - truth)) < 0.05
