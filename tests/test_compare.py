"""Comparing spectra: the shift fit, the shape test, series scaling, the stored-result loader and the CLI."""

import dataclasses
import json
import math
from types import SimpleNamespace

import numpy as np
import pytest

from synthetic import bsw_H, lognormal_H, lognormal_moduli, noisy_sweep, rouse_times
from tauspec.analysis.comparison.compare import compare
from tauspec.analysis.comparison.series import (
    characteristic_modulus,
    characteristic_time,
    fit_power_law,
    series_scaling,
    window_cut,
)
from tauspec.analysis.comparison.shape import rouse_ratios
from tauspec.analysis.comparison.shift import fit_shift
from tauspec.analysis.diagnosis.diagnose import diagnose
from tauspec.cli.main import main
from tauspec.data.sweep import Sweep
from tauspec.errors import SettingsError, TauspecError
from tauspec.output.results import spectrum_from_result
from tauspec.spectrum.invert import invert
from tauspec.spectrum.kernels import log_grid, modes_moduli, spectrum_moduli

W30 = np.geomspace(1e-2, 1e2, 30)
W60 = np.geomspace(1e-3, 1e3, 60)


def shifted_pair(seed, a=3.0, b=2.5, w=W30):
    # Time–modulus shift of a spectrum: H_B(τ) = b H_A(τ/a) gives G*_B(ω) = b G*_A(aω), i.e. the same moduli at
    # ω/a, multiplied by b (Ferry 1980, Viscoelastic Properties of Polymers, ch. 11, reduced variables).
    gp, gpp = lognormal_moduli(w, 1e4, 1.0, 1.2)
    A = noisy_sweep(w, gp, gpp, 0.01, seed, name="A")
    B = noisy_sweep(w / a, gp * b, gpp * b, 0.01, 1000 + seed, name="B")
    return A, B


def rouse_moduli(w, G0, tau1, N):
    # Finite-N Rouse chain: N modes of equal modulus G0 = cRT/M at τ_p (Rouse 1953; Ferry 1980, ch. 9).
    return modes_moduli(w, np.full(N, G0), rouse_times(tau1, N))


# ------------------------------------------------------------------------------------------------ shift fit
def test_fit_shift_recovers_an_exact_shift_of_an_analytic_spectrum():
    # ln H of a log-normal spectrum (docs/references.md) shifted by ln a in ln τ and ln b in ln H, without noise, on
    # grids that are not aligned: the weighted least-squares fit returns a and b to 0.5 %.
    uA = np.log(np.geomspace(1e-2, 1e2, 61))
    uB = np.log(np.geomspace(2e-2, 3e2, 57))
    a, b = 2.7, 0.4
    lA = np.log(lognormal_H(np.exp(uA), 1e4))
    lB = np.log(b * lognormal_H(np.exp(uB) / a, 1e4))
    fit = fit_shift(uA, lA, np.full(len(uA), 0.01), uB, lB, np.full(len(uB), 0.01))
    assert math.exp(fit.log_a) == pytest.approx(a, rel=5e-3)
    assert math.exp(fit.log_b) == pytest.approx(b, rel=5e-3)
    assert fit.distance2 < 1.0  # interpolation error only, below the 1 % weight


def test_shifted_copy_same_shape_with_shifts_within_3_percent():
    A, B = shifted_pair(0)
    c = compare([A, B])
    p = c.pairs[0]
    assert p.time_shift == pytest.approx(3.0, rel=0.03)
    assert p.modulus_shift == pytest.approx(2.5, rel=0.03)
    assert p.time_shift_ci[0] < 3.0 < p.time_shift_ci[1] or abs(p.time_shift / 3 - 1) < 0.01
    assert p.same_shape is True
    d = c.to_dict()
    assert d["schema"] == "tauspec.comparison/1.1"
    assert set(d["pairs"][0]) >= {"a", "b", "time_shift", "time_shift_ci", "modulus_shift", "modulus_shift_ci",
                                  "shape_distance", "same_shape"}
    assert (d["pairs"][0]["a"], d["pairs"][0]["b"]) == ("A", "B")


@pytest.mark.slow
def test_shifted_copy_same_shape_in_90_percent_of_noise_seeds():
    # The shape test at level 0.05 should accept a true shift in ≥ 90 % of trials (20 seeds, fresh noise).
    results = []
    for seed in range(20):
        p = compare(list(shifted_pair(seed)), replicates=8).pairs[0]
        assert p.time_shift == pytest.approx(3.0, rel=0.03)
        assert p.modulus_shift == pytest.approx(2.5, rel=0.03)
        results.append(p.same_shape)
    assert sum(results) >= 18, results


def test_a_shift_beyond_the_admissible_overlap_is_flagged():
    # ℓ_B is ℓ_A shifted by 4 in u on windows 6 wide: a shift of 4 would leave 2 < 3 (half the window) overlapping,
    # so the best admissible shift is the edge, α = 3, and the fit says it is at the edge (a parabola in ln H, the
    # log of a log-normal spectrum, docs/references.md).
    u = np.linspace(0.0, 6.0, 61)
    fit = fit_shift(u, -((u - 3.0) ** 2), np.full(61, 0.05), u, -((u - 7.0) ** 2), np.full(61, 0.05))
    assert fit.log_a == pytest.approx(3.0, abs=0.03)
    assert fit.at_edge
    inside = fit_shift(u, -((u - 3.0) ** 2), np.full(61, 0.05), u, -((u - 4.0) ** 2), np.full(61, 0.05))
    assert inside.log_a == pytest.approx(1.0, abs=1e-4) and not inside.at_edge


def test_rouse_against_bsw_entangled_is_a_different_shape():
    # Rouse chain (Rouse 1953) against a BSW-form entangled spectrum (Baumgaertel, Schausberger & Winter 1990).
    gp, gpp = rouse_moduli(W60, 1e3, 1.0, 30)
    tg = log_grid(1e-6, 1e2, 3001)
    bp, bpp = spectrum_moduli(W60, tg, bsw_H(tg, G_N=1e4, tau_max=3.0, tau_c=1e-4))
    c = compare([noisy_sweep(W60, gp, gpp, 0.01, 1, name="rouse"), noisy_sweep(W60, bp, bpp, 0.01, 2, name="bsw")])
    assert c.pairs[0].same_shape is False
    assert c.pairs[0].p_value < 0.01


@pytest.mark.parametrize("k", [0, 2])
def test_single_population_against_two_population_blend_is_a_different_shape(k):
    # Equal-mass blend of two Rouse chains with τ_R ratio 10, so M ratio √10 (τ_R ∝ M²), mode modulus
    # G0 = w c R T / M and N ∝ M (Ferry 1980, ch. 9), against the faster chain alone at the same concentration.
    g1, g1p = rouse_moduli(W60, 1e3, 0.3, 30)
    g2, g2p = rouse_moduli(W60, 1e3 / math.sqrt(10), 3.0, 95)
    single = noisy_sweep(W60, g1, g1p, 0.01, 3 + 10 * k, name="single")
    blend = noisy_sweep(W60, 0.5 * (g1 + g2), 0.5 * (g1p + g2p), 0.01, 4 + 10 * k, name="blend")
    assert compare([single, blend]).pairs[0].same_shape is False


# ------------------------------------------------------------------------------------------------ several
def test_reference_mode_ranking_and_determinism():
    A, B = shifted_pair(1)
    gp, gpp = rouse_moduli(W30, 1e3, 1.0, 30)
    C = noisy_sweep(W30, gp, gpp, 0.01, 5, name="C")
    c1 = compare([A, B, C], reference="A", replicates=6)
    assert [(p.a, p.b) for p in c1.pairs] == [("A", "B"), ("A", "C")]
    ranked = [c1.pairs[i].b for i in c1.ranking]
    assert ranked == ["B", "C"]  # the shifted copy is nearer in shape than a Rouse chain
    c2 = compare([C, B, A], reference="A", replicates=6)  # the order of samples does not change the numbers
    p1 = {p.b: p for p in c1.pairs}
    p2 = {p.b: p for p in c2.pairs}
    assert p1["B"].shape_distance == p2["B"].shape_distance
    assert p1["C"].time_shift == p2["C"].time_shift


def test_overlay_figure_draws_each_spectrum_in_its_window():
    A, B = shifted_pair(2)
    c = compare([A, B], replicates=0)
    # no replicates: no spectral test (p is NaN), but the shifted moduli are still tested against their noise
    assert math.isnan(c.pairs[0].p_value) and c.pairs[0].same_shape is True
    # and the text names the test that decided, with its p-value, not only the missing spectral one
    line = c.report().splitlines()[1]
    p_moduli = c.pairs[0].moduli["p_value"]
    assert line.endswith(f"p = n/a (spectra), p = {p_moduli:.4g} (moduli, deciding): same shape"), line
    assert "too few replicates for the test of the spectra" in c.report()
    from tauspec.output.figures.overlay import overlay_figure, plot_overlay

    fig = overlay_figure(c)
    raw, shifted = fig.axes[:2]
    for line, sp in zip(raw.get_lines(), c.spectra):
        x = line.get_xdata()
        assert x.min() >= sp.window[0] * (1 - 1e-12) and x.max() <= sp.window[1] * (1 + 1e-12)
    assert len(shifted.get_lines()) == 2
    assert plot_overlay(c, ax=raw) is raw


def test_sweeps_of_one_point_per_decade_cannot_be_called_the_same_shape():
    # One Maxwell mode against two (Ferry 1980, ch. 3), both exact, one point per decade: the moduli's scatter
    # from their roughness is the curves' own bends (34 % and 46 %), and the moduli test passed them as the same
    # shape (p = 0.45).  Below 3 points per decade the answer is "cannot tell".
    w = np.geomspace(1e-3, 1e3, 7)
    one = Sweep(omega=w, storage=modes_moduli(w, [1e3], [1.0])[0], loss=modes_moduli(w, [1e3], [1.0])[1], name="one")
    gp, gpp = modes_moduli(w, [1e3, 5e2], [3.0, 0.1])
    two = Sweep(omega=w, storage=gp, loss=gpp, name="two")
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        pair = compare([one, two], replicates=0).pairs[0]
    assert pair.same_shape is None
    assert any(n.startswith("cannot tell: 1 point per decade, fewer than 3") for n in pair.notes), pair.notes


def test_errors_are_one_line_settings_errors():
    A, B = shifted_pair(3)
    with pytest.raises(SettingsError, match="at least two"):
        compare([A])
    with pytest.raises(SettingsError, match="reference 'Z' is not one of"):
        compare([A, B], reference="Z", replicates=0)
    with pytest.raises(SettingsError, match="significance must be a test size"):
        compare([A, B], significance=1.5)
    narrow = noisy_sweep(np.geomspace(1.0, 10.0, 10), *lognormal_moduli(np.geomspace(1.0, 10.0, 10), 1e4), 0.01, 1)
    with pytest.warns(Warning):
        sp = invert(narrow)
    with pytest.raises(TauspecError, match="window is empty"):
        compare([A, sp], replicates=0)


def test_a_band_sets_the_weights():
    # A band (lo, hi) = H·e^(∓1.96 s) read as a 95 % interval gives σ of ln H equal to s where H ≫ ε (normal
    # quantile 1.96 for 95 %), plus the data noise in quadrature.
    from tauspec.analysis.comparison.replicates import sample_uncertainty

    sp = invert(shifted_pair(9)[0])
    s = 0.05
    band = SimpleNamespace(H_lo=sp.H * math.exp(-1.959963984540054 * s), H_hi=sp.H * math.exp(1.959963984540054 * s),
                           level=0.95)
    u = sample_uncertainty(sp, replicates=3, band=band)
    assert u.source == "band"
    big = np.exp(u.ell) > 50 * u.floor
    expected = np.sqrt(s**2 + u.noise**2)
    assert np.allclose(u.sigma[big], expected, rtol=0.03)


# ------------------------------------------------------------------------------------------------ Rouse ratios
def test_rouse_ratios_from_two_rouse_diagnoses():
    # Ratio of two log-normal estimates: the standard errors of the logs add in quadrature (delta method;
    # e.g. Bevington & Robinson 2003, Data Reduction and Error Analysis, ch. 3).
    z = 1.959963984540054
    da = SimpleNamespace(verdict="rouse", tau_R=1.0, tau_R_ci=(math.exp(-0.1 * z), math.exp(0.1 * z)),
                         G0=100.0, G0_ci=(100 * math.exp(-0.2 * z), 100 * math.exp(0.2 * z)))
    db = SimpleNamespace(verdict="rouse", tau_R=4.0, tau_R_ci=(4 * math.exp(-0.1 * z), 4 * math.exp(0.1 * z)),
                         G0=50.0, G0_ci=(50 * math.exp(-0.2 * z), 50 * math.exp(0.2 * z)))
    r = rouse_ratios(da, db)
    assert r["tau_R_ratio"] == pytest.approx(4.0)
    assert r["tau_R_ratio_ci"][1] == pytest.approx(4.0 * math.exp(z * math.sqrt(0.02)))
    assert r["G0_ratio"] == pytest.approx(0.5)
    assert r["G0_ratio_ci"][0] == pytest.approx(0.5 * math.exp(-z * math.sqrt(0.08)))
    assert rouse_ratios(da, SimpleNamespace(verdict="entangled")) is None


def test_rouse_ratios_from_the_real_diagnosis():
    # Two finite-N Rouse chains (N = 40), τ_R = 1 s and 4 s, G0 = 1000 and 500 Pa (Rouse 1953; Ferry 1980, ch. 9):
    # both diagnosed rouse, the ratios are 4 and 0.5 within their intervals (widened by 1 % for the finite-N
    # fitting), and the spectrum's time shift agrees with the τ_R ratio within 10 %.
    w = np.geomspace(1e-2, 1e3, 40)
    A = noisy_sweep(w, *rouse_moduli(w, 1e3, 1.0, 40), 0.01, 1, name="A")
    B = noisy_sweep(w, *rouse_moduli(w, 500.0, 4.0, 40), 0.01, 2, name="B")
    p = compare([A, B], diagnose=True, replicates=4).pairs[0]
    assert p.rouse is not None
    lo, hi = p.rouse["tau_R_ratio_ci"]
    assert 0.99 * lo <= 4.0 <= 1.01 * hi and p.rouse["tau_R_ratio"] == pytest.approx(4.0, rel=0.03)
    lo, hi = p.rouse["G0_ratio_ci"]
    assert 0.99 * lo <= 0.5 <= 1.01 * hi and p.rouse["G0_ratio"] == pytest.approx(0.5, rel=0.03)
    assert p.time_shift == pytest.approx(p.rouse["tau_R_ratio"], rel=0.10)


# ------------------------------------------------------------------------------------------------ series
def rouse_series(noise=0.01):
    Ms = np.geomspace(10, 100, 6)
    spectra, truth = [], []
    for i, M in enumerate(Ms):
        # τ_R ∝ M², G0 = cRT/M ∝ 1/M at fixed c, N ∝ M (Rouse 1953; Ferry 1980, ch. 9): τ_R = 1e-3 M² s.
        N = round(M)
        t = rouse_times(1e-3 * M**2, N)
        g = np.full(N, 1e5 / M)
        gp, gpp = modes_moduli(W60, g, t)
        spectra.append(invert(noisy_sweep(W60, gp, gpp, noise, i, name=f"M{M:.0f}")))
        truth.append((g, t))
    return Ms, spectra, truth


@pytest.fixture(scope="module")
def series():
    return rouse_series()


def test_rouse_series_time_exponent_is_two(series):
    Ms, spectra, _ = series
    out = series_scaling(spectra, list(Ms), [1.0] * len(Ms))
    x = out["time"].exponents["M"]
    assert x == pytest.approx(2.0, abs=0.1)
    assert "weight-average" in out["time"].measure
    # fixed c: only M varies, the modulus falls as about 1/M (finite-N sums move it a little, see below)
    assert set(out["modulus"].exponents) == {"M"}
    assert out["modulus"].exponents["M"] == pytest.approx(-1.0, abs=0.15)


def test_characteristic_time_and_modulus_match_the_discrete_sums(series):
    # For discrete modes η0 = Σ g τ and J_e⁰ η0² = Σ g τ² (Ferry 1980, ch. 3), so τ_w = Σgτ²/Σgτ and
    # G_w = (Σgτ)²/Σgτ².  Both are taken over the supported window only, so the sums run over the modes inside
    # it; the recovered spectrum gives them within 3 % (measured: ≤ 1.2 % and ≤ 2.2 %).
    _, spectra, truth = series
    for sp, (g, t) in zip(spectra, truth):
        m = t >= sp.window[0]
        g, t = g[m], t[m]
        assert characteristic_time(sp) == pytest.approx(np.sum(g * t**2) / np.sum(g * t), rel=0.03)
        assert characteristic_modulus(sp) == pytest.approx(np.sum(g * t) ** 2 / np.sum(g * t**2), rel=0.03)


def test_series_of_window_moments_says_when_the_window_cuts_the_spectra(series):
    # The fast modes of the short chains lie beyond ω_max (τ_N ω_max ≈ 1 for M = 10), so τ_w and G_w over the
    # window miss part of Σ g τ: the exponent of the complete spectra's τ_w (discrete sums over every mode,
    # Ferry 1980, ch. 3) lies outside the window fit's interval, and the fit must say that its interval does not
    # test the expected values.
    Ms, spectra, truth = series
    out = series_scaling(spectra, list(Ms), [1.0] * len(Ms))
    complete = [float(np.sum(g * t**2) / np.sum(g * t)) for g, t in truth]
    x_complete = np.polyfit(np.log(Ms), np.log(complete), 1)[0]
    lo, hi = out["time"].intervals["M"]
    assert not lo <= x_complete <= hi
    caveat = out["time"].caveat
    assert caveat.startswith("the spectra of M10 (short end, ") and "does not test the expected values" in caveat
    assert "M100" not in caveat  # the longest chains' fast modes lie inside the window
    assert "caveat: the spectra of M10" in out["time"].report()
    assert out["modulus"].caveat == caveat


def test_window_cut_measures_what_a_rouse_tail_loses():
    # H = τ^(−1/2) (the Rouse law, Ferry 1980, ch. 9) for τ ≤ 1 s, on a window starting at τ0 = 0.01 s: in closed
    # form ∫ H τ d ln τ is 2(1 − τ0^(1/2)) = 1.8 inside the window, 2 τ0^(1/2) = 0.2 below it (what τ_w and G_w
    # miss), and 2(10^(−0.75) − τ0^(1/2)) = 0.156 in the window's shortest half decade: a share of 0.0865.
    tau = log_grid(1e-4, 1e2, 241)
    H = np.where(tau <= 1.0, tau**-0.5, 0.0)
    sp = SimpleNamespace(tau=tau, H=H, in_window=tau >= 1e-2 * (1 - 1e-12))
    short, long = window_cut(sp)
    assert short == pytest.approx(2 * (10**-0.75 - 0.1) / 1.8, rel=0.03)
    assert long == 0.0  # H ends (falls to 0) before the window's long end


def test_series_of_complete_spectra_has_no_window_caveat():
    # Log-normal spectra (σ = 0.6) well inside a window of six decades: τ_w and G_w are the whole spectrum's
    # (τ_w = τ_m e^(3σ²/2) for a log-normal H), and the fit carries no caveat.
    w = np.geomspace(1e-3, 1e3, 50)
    Ms = [10.0, 20.0, 40.0]
    spectra = [invert(noisy_sweep(w, *lognormal_moduli(w, 1e4, (M / 20) ** 3.4, 0.6), 0.01, i,
                                  name=f"L{M:.0f}")) for i, M in enumerate(Ms)]
    assert all(max(window_cut(s)) <= 0.05 for s in spectra)
    out = series_scaling(spectra, Ms, [1.0] * 3)
    assert out["time"].caveat == "" and out["modulus"].caveat == ""
    assert "caveat" not in out["time"].report()
    assert out["time"].exponents["M"] == pytest.approx(3.4, abs=0.1)


def _with_meta(spectra, key, texts):
    return [dataclasses.replace(sp, meta={**sp.meta, key: t}) for sp, t in zip(spectra, texts)]


def test_series_converts_the_units_of_the_metadata(series):
    # M written as kg/mol, g/mol and Mg/mol (1 kg/mol = 10³ g/mol, 1 Mg/mol = 10⁶ g/mol: the SI prefixes, BIPM
    # 2019) is one M: the exponents equal those of the numbers in one unit, and the samples carry M in g/mol.
    # Before, the unit was dropped, and "20000 g/mol" beside "10 kg/mol" gave tau ∝ M^-0.001 for a Rouse series.
    Ms, spectra, _ = series
    one_unit = compare(_with_meta(spectra, "molecular_weight", [f"{M:.6g} kg/mol" for M in Ms]), replicates=4)
    texts = [f"{M:.6g} kg/mol" for M in Ms]
    texts[1], texts[3] = f"{Ms[1] * 1e3:.6g} g/mol", f"{Ms[3] * 1e-3:.6g} Mg/mol"
    mixed = compare(_with_meta(spectra, "molecular_weight", texts), replicates=4)
    assert mixed.series["time"].exponents["M"] == pytest.approx(one_unit.series["time"].exponents["M"], rel=1e-9)
    assert mixed.series["time"].exponents["M"] == pytest.approx(2.0, abs=0.1)
    assert [d["M"] for d in mixed.samples] == pytest.approx([1e3 * float(f"{M:.6g}") for M in Ms], rel=1e-12)


def test_series_refuses_a_mix_of_a_unit_and_none_and_of_two_kinds_of_concentration(series):
    Ms, spectra, _ = series
    texts = ["10 kg/mol"] + ["20000"] * (len(spectra) - 1)
    with pytest.raises(SettingsError, match=r"molecular weight of .* is '10 kg/mol' \(with a unit\) but of .* "
                                            r"'20000' \(without a unit\)"):
        compare(_with_meta(spectra, "molecular_weight", texts), replicates=4)
    # a manifest's M for some samples beside the sweeps' own for the others: which unit the manifest meant is
    # not known (it says g/mol; a lab writing kg/mol there would get a wrong exponent without a word)
    texts = [f"{M:.6g} kg/mol" for M in Ms]
    metadata = [{"M": 10.0}] + [{}] * (len(spectra) - 1)
    with pytest.raises(SettingsError, match=r"'10' \(given in the manifest\) but of .* \(with a unit\)"):
        compare(_with_meta(spectra, "molecular_weight", texts), metadata=metadata, replicates=4)
    # a mass concentration and a mass fraction convert into each other only with the solution's density
    texts = ["120 mg/mL"] + ["12 wt%"] * (len(spectra) - 1)
    with pytest.raises(SettingsError, match=r"concentration of .* '120 mg/mL' \(mass concentration\) but of .* "
                                            r"'12 wt%' \(mass fraction\)"):
        compare(_with_meta(spectra, "concentration", texts), replicates=4)


def test_concentration_and_molecular_weight_units():
    from tauspec.data.units import concentration, molar_mass

    # the SI prefixes (BIPM 2019): 1 g/mL = 1 g/cm³ = 10³ kg/m³, 1 mg/mL = 1 g/L = 1 kg/m³, 1 g/dL = 10 kg/m³
    assert concentration("0.12 g/mL") == pytest.approx((120.0, "mass concentration"))
    assert concentration("0.12 g/cm³") == pytest.approx((120.0, "mass concentration"))
    assert concentration("120 mg/mL")[0] == concentration("120 g/L")[0] == concentration("12 g/dL")[0]
    assert concentration("12 wt%") == pytest.approx((0.12, "mass fraction"))
    assert concentration("12") == (12.0, "")
    assert molar_mass("20 kg/mol") == (20000.0, True) and molar_mass("0.02 MDa") == (20000.0, True)
    assert molar_mass("20000") == (20000.0, False)
    with pytest.raises(ValueError, match="ambiguous"):
        molar_mass("20 mg/mol")
    with pytest.raises(ValueError, match="unknown unit 'mol/L'"):
        concentration("0.1 mol/L")


def test_series_uses_the_rouse_diagnosis_when_present(series):
    # Stand-in diagnoses carrying the Rouse τ_R = 1e-3 M² and G0 = 1e5/M of the generator (Ferry 1980, ch. 9):
    # with all samples diagnosed rouse the fit uses them (x = 2, z = −1 exactly); with some, both fits are given.
    Ms, spectra, _ = series
    diags = [SimpleNamespace(verdict="rouse", tau_R=1e-3 * M**2, G0=1e5 / M) for M in Ms]
    out = series_scaling(spectra, list(Ms), [1.0] * len(Ms), diagnoses=diags)
    assert out["time"].measure.startswith("tau_R")
    assert out["time"].exponents["M"] == pytest.approx(2.0, abs=1e-9)
    assert out["modulus"].exponents["M"] == pytest.approx(-1.0, abs=1e-9)
    diags[0] = SimpleNamespace(verdict="other")
    out = series_scaling(spectra, list(Ms), [1.0] * len(Ms), diagnoses=diags)
    assert "weight-average" in out["time"].measure and out["time_rouse"].n == len(Ms) - 1
    assert out["time_rouse"].exponents["M"] == pytest.approx(2.0, abs=1e-9)


def test_power_law_fit_against_scipy_linregress_and_an_exact_law():
    # One variable: slope and its 95 % interval equal scipy.stats.linregress (slope ± t₀.₉₇₅,n−2 · stderr).
    from scipy import stats

    rng = np.random.default_rng(3)
    M = np.geomspace(10, 100, 7)
    tau = 1e-3 * M**2 * np.exp(0.05 * rng.standard_normal(7))
    fit = fit_power_law(tau, {"M": M}, response="tau", measure="test")
    ref = stats.linregress(np.log(M), np.log(tau))
    half = stats.t.ppf(0.975, 5) * ref.stderr
    assert fit.exponents["M"] == pytest.approx(ref.slope, rel=1e-10)
    assert fit.intervals["M"] == pytest.approx((ref.slope - half, ref.slope + half), rel=1e-10)
    # Two variables, G = cRT/M exactly (Ferry 1980, ch. 9) on a 3 × 3 design: y = 1, z = −1.
    c, M2 = (a.ravel() for a in np.meshgrid([1.0, 2.0, 4.0], [10.0, 30.0, 100.0]))
    fit2 = fit_power_law(8.314 * 298 * c / M2, {"c": c, "M": M2}, response="G", measure="test")
    assert fit2.exponents["c"] == pytest.approx(1.0, abs=1e-9)
    assert fit2.exponents["M"] == pytest.approx(-1.0, abs=1e-9)
    assert fit_power_law([1.0, 2.0], {"M": [5.0, 5.0]}, response="G", measure="test") is None


# ------------------------------------------------------------------------------------------------ stored results
def test_spectrum_round_trips_through_its_json_form():
    sp = invert(shifted_pair(4)[0])
    back = spectrum_from_result(json.loads(json.dumps(sp.to_dict())))
    assert back == sp and back.to_dict() == json.loads(json.dumps(sp.to_dict()))
    batch_result = {"schema": "tauspec.batch/1.1", "status": "ok", "spectrum": sp.to_dict()}
    assert spectrum_from_result(json.loads(json.dumps(batch_result))) == sp
    with pytest.raises(TauspecError, match="schema"):
        spectrum_from_result({"schema": "other"}, "x.json")
    with pytest.raises(TauspecError, match="holds no spectrum \\(status 'error': x.csv: bad\\)"):
        spectrum_from_result({"status": "error", "error": "x.csv: bad", "spectrum": None}, "r.json")
    bad = sp.to_dict()
    del bad["H"]
    with pytest.raises(TauspecError, match="no 'H'"):
        spectrum_from_result(bad, "x.json")


# ------------------------------------------------------------------------------------------------ CLI
def write_sweep(path, sweep, meta=""):
    rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(sweep.omega, sweep.storage, sweep.loss))
    path.write_text(f"# sample: {sweep.name}\n{meta}omega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
    return path


def test_cli_from_sweep_files_and_from_invert_folders(tmp_path, capsys):
    A, B = shifted_pair(5)
    fa = write_sweep(tmp_path / "a.csv", A, "# molecular_weight: 20 kg/mol\n")
    fb = write_sweep(tmp_path / "b.csv", B, "# molecular_weight: 40 kg/mol\n")
    assert main(["compare", str(fa), str(fb), "--json", "--replicates", "6"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert len(lines) == 1
    d1 = json.loads(lines[0])
    assert set(d1) >= {"schema", "samples", "pairs", "series"}
    assert d1["pairs"][0]["time_shift"] == pytest.approx(3.0, rel=0.03)
    assert "time" in d1["series"] and [s["M"] for s in d1["samples"]] == [20000.0, 40000.0]  # g/mol

    # archived results: `invert --out` folders and a result.json give the same comparison without re-inverting
    assert main(["invert", str(fa), str(fb), "--out", str(tmp_path / "res")]) == 0
    capsys.readouterr()
    assert main(["compare", str(tmp_path / "res" / "a.csv"), str(tmp_path / "res" / "b.csv" / "result.json"), "--json",
                 "--replicates", "6", "--out", str(tmp_path / "cmp"), "--plot"]) == 0
    d2 = json.loads(capsys.readouterr().out)
    for key in ("time_shift", "modulus_shift", "shape_distance", "same_shape", "time_shift_ci"):
        assert d2["pairs"][0][key] == pytest.approx(d1["pairs"][0][key], rel=1e-9)
    assert (tmp_path / "cmp" / "comparison.json").is_file() and (tmp_path / "cmp" / "overlay.png").is_file()
    assert (tmp_path / "cmp" / "pairs.csv").read_text().startswith("sample a,sample b,time shift a_t,modulus shift b")


def test_cli_manifest_and_reference(tmp_path, capsys):
    A, B = shifted_pair(6)
    fa, fb = write_sweep(tmp_path / "a.csv", A), write_sweep(tmp_path / "b.csv", B)
    man = tmp_path / "m.csv"
    man.write_text("file,M,c,T,label\na.csv,10,1,25,first\nb.csv,30,1,25,second\n")
    assert main(["compare", str(fa), str(fb), "--manifest", str(man), "--reference", str(fb), "--json",
                 "--replicates", "0"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["reference"] == "second" and (d["pairs"][0]["a"], d["pairs"][0]["b"]) == ("second", "first")
    assert [s["M"] for s in d["samples"]] == [10.0, 30.0]
    assert d["samples"][0]["T"] == pytest.approx(298.15)


def test_cli_reads_batch_results_with_their_stored_diagnosis(tmp_path, capsys):
    # A batch result folder wraps the spectrum and its diagnosis ({"schema": "tauspec.batch/1", "status": ...,
    # "spectrum": {...}, "diagnosis": {...}}); the stored Rouse parameters give the ratios without re-diagnosing.
    A, B = shifted_pair(12)
    real = diagnose(A, intervals=False, use_spectrum=False)  # a whole stored diagnosis, its numbers set below
    for name, sw, tau_R, G0 in (("a", A, 1.0, 100.0), ("b", B, 3.0, 250.0)):
        (tmp_path / name).mkdir()
        stored = dataclasses.replace(real, verdict="rouse", tau_R=tau_R, tau_R_ci=(0.9 * tau_R, 1.1 * tau_R),
                                     G0=G0, G0_ci=(0.9 * G0, 1.1 * G0))
        result = {"schema": "tauspec.batch/1.1", "file": f"{name}.csv", "status": "ok", "error": None,
                  "spectrum": invert(sw).to_dict(), "diagnosis": stored.to_dict()}
        (tmp_path / name / "result.json").write_text(json.dumps(result))
    assert main(["compare", str(tmp_path / "a"), str(tmp_path / "b"), "--json", "--replicates", "0"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["pairs"][0]["rouse"]["tau_R_ratio"] == pytest.approx(3.0)
    assert d["pairs"][0]["rouse"]["G0_ratio"] == pytest.approx(2.5)
    assert [s["verdict"] for s in d["samples"]] == ["rouse", "rouse"]
    (tmp_path / "c").mkdir()
    (tmp_path / "c" / "result.json").write_text(json.dumps({"schema": "tauspec.batch/1", "status": "failed",
                                                            "error": "row 4 has 2 values"}))
    assert main(["compare", str(tmp_path / "a"), str(tmp_path / "c"), "--replicates", "0"]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "holds no spectrum (status 'failed': row 4 has 2 values)" in err[0]


@pytest.mark.parametrize("args, message", [
    (["nofolder/"], "no such file"),
    (["EMPTY"], "folder has no result.json"),
    (["BADJSON"], "not valid JSON"),
])
def test_cli_bad_inputs_give_one_line(tmp_path, capsys, args, message):
    A, _ = shifted_pair(7)
    fa = write_sweep(tmp_path / "a.csv", A)
    (tmp_path / "empty").mkdir()
    (tmp_path / "bad.json").write_text("{not json")
    sub = {"EMPTY": str(tmp_path / "empty"), "BADJSON": str(tmp_path / "bad.json"),
           "nofolder/": str(tmp_path / "missing.json")}
    assert main(["compare", str(fa)] + [sub[a] for a in args] + ["--replicates", "0"]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0]


# ------------------------------------------------------------------------------------------------ issue 16
W40 = np.geomspace(1e-2, 1e2, 40)


def test_rouse_solution_against_a_broad_entangled_melt_is_not_the_same_shape():
    # Issue 16: a Rouse solution (τ_R = 0.1 s; Rouse 1953) against a BSW melt with its terminal mode at 10 s
    # (Baumgaertel, Schausberger & Winter 1990) was called "same shape" with a = 0.096.  Not "same" any more:
    # either "different" or "cannot tell" with the overlap in the notes.
    gp, gpp = rouse_moduli(W40, 1e3, 0.1, 30)
    tg = log_grid(1e-9, 10.0, 3000)
    bp, bpp = spectrum_moduli(W40, tg, bsw_H(tg, G_N=1e5, tau_max=10.0, tau_c=1e-4))
    for seed in (1, 2):
        c = compare([noisy_sweep(W40, gp, gpp, 0.01, seed, name="rouse"),
                     noisy_sweep(W40, bp, bpp, 0.01, seed + 100, name="melt")])
        p = c.pairs[0]
        assert p.same_shape is not True
        if p.same_shape is None:
            assert any(n.startswith("cannot tell: overlap") for n in p.notes)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_a_sample_against_itself_shifted_by_seven_stays_the_same_shape(seed):
    # H_B(τ) = b H_A(τ/a) → G*_B(ω) = b G*_A(aω) (Ferry 1980 ch. 11), a = 7, b = 0.4, same frequencies.
    gp, gpp = rouse_moduli(W40, 1e3, 1.0, 30)
    gp2, gpp2 = rouse_moduli(W40 * 7.0, 1e3, 1.0, 30)
    c = compare([noisy_sweep(W40, gp, gpp, 0.01, seed, name="A"),
                 noisy_sweep(W40, 0.4 * gp2, 0.4 * gpp2, 0.01, seed + 100, name="B")])
    p = c.pairs[0]
    assert p.same_shape is True, p.notes
    assert p.time_shift == pytest.approx(7.0, rel=0.05)
    assert p.modulus_shift == pytest.approx(0.4, rel=0.05)
    assert p.moduli["overlap"]["decades"] >= 1.5


@pytest.mark.parametrize("seed", [1, 2])
def test_two_rouse_samples_of_different_molecular_weight_are_the_same_shape_with_rouse_shifts(seed):
    # Rouse scaling at fixed concentration (Ferry 1980 ch. 9): N ∝ M, τ_R ∝ M², G0 = cRT/M ∝ 1/M; M ratio 2 gives
    # a = 4, b = 1/2 (the fastest modes, where N matters, lie far beyond the window).
    gp, gpp = rouse_moduli(W40, 1e3, 0.5, 100)
    gp2, gpp2 = rouse_moduli(W40, 5e2, 2.0, 200)
    c = compare([noisy_sweep(W40, gp, gpp, 0.01, seed, name="M"), noisy_sweep(W40, gp2, gpp2, 0.01, seed + 100,
                                                                              name="2M")])
    p = c.pairs[0]
    assert p.same_shape is True, p.notes
    assert p.time_shift == pytest.approx(4.0, rel=0.05)
    assert p.modulus_shift == pytest.approx(0.5, rel=0.05)


def test_too_little_overlap_is_cannot_tell():
    # The same log-normal spectrum measured over two windows that share only a decade after the shift: the overlap
    # rule (1.5 decades of G' and G'') gives same_shape = None with the reason in the notes.
    gp, gpp = lognormal_moduli(np.geomspace(1e-2, 1e1, 24), 1e4, 1.0, 1.2)
    gp2, gpp2 = lognormal_moduli(np.geomspace(1e0, 1e3, 24), 1e4, 1.0, 1.2)
    c = compare([noisy_sweep(np.geomspace(1e-2, 1e1, 24), gp, gpp, 0.01, 1, name="low"),
                 noisy_sweep(np.geomspace(1e0, 1e3, 24), gp2, gpp2, 0.01, 2, name="high")], replicates=4)
    p = c.pairs[0]
    assert p.same_shape is None
    assert any(n.startswith("cannot tell") for n in p.notes)
    assert json.loads(json.dumps(p.to_dict(), allow_nan=True))["same_shape"] is None


def test_an_overlap_short_of_its_threshold_never_reads_as_it():
    # an overlap of 1.4996 decades and a weight share of 49.96 % were printed "1.50 decades (at least 1.5
    # needed)" and "50% ... (at least 50%)": refusals that read as passes
    from tauspec.analysis.comparison.shape import _overlap_check

    w = np.geomspace(1e-2, 1e2, 30)
    sp = SimpleNamespace(omega=w, tau=np.geomspace(1e-3, 1e3, 61), H=np.ones(61), in_window=np.ones(61, bool))
    ms = SimpleNamespace(log_a=0.0, decades=1.4996)
    enough, note, _ = _overlap_check(sp, sp, ms)
    assert not enough and "1.49 decades" in note and "1.50" not in note


def test_a_shift_and_its_interval_end_read_apart():
    # two replicates gave "a = 1 [0.9998, 1]": the value read as its interval's upper end at four digits
    from tauspec.analysis.comparison.compare import _value_ci

    assert _value_ci(1.00001, (0.99982, 1.00021)) == "1 [0.99982, 1.0002]"
    assert _value_ci(3.656, (3.623, 3.689)) == "3.656 [3.623, 3.689]"
    assert _value_ci(59.52, (math.nan, math.nan)) == "59.52 [n/a, n/a]"


def test_rouse_chains_of_different_length_differ_at_their_shortest_modes():
    # Rouse scaling at fixed concentration (Ferry 1980, ch. 9): N ∝ M, τ_1 ∝ M², G0 = cRT/M.  Shifted by a = 4,
    # b = 1/2 the chain of 2N modes is the chain of N plus its modes p > N, which relax faster than τ_1/N² (here
    # inside the window: ω_max τ_N ≈ 3): the shifted moduli differ there only, so most of the misfit lies in the
    # highest third of the overlap, and the note says so.
    w = np.geomspace(0.01, 1000, 41)
    sweeps = []
    for k, (N, tau1, G0) in enumerate([(20, 0.15, 1e4), (40, 0.6, 5e3)]):
        x = np.outer(w, rouse_times(tau1, N))
        gp, gpp = G0 * (x**2 / (1 + x**2)).sum(axis=1), G0 * (x / (1 + x**2)).sum(axis=1)
        sweeps.append(noisy_sweep(w, gp, gpp, 0.01, 40 + k, name=f"N{N}"))
    p = compare(sweeps, replicates=4).pairs[0]
    assert p.same_shape is False
    shares = p.moduli["misfit_thirds"]
    assert sum(shares) == pytest.approx(1.0) and shares[2] > 0.6
    note = next(n for n in p.notes if n.startswith("most of that misfit"))
    assert f"({100 * shares[2]:.0f} %) lies in the highest third of the overlap" in note
