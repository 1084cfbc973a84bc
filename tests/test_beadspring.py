"""Bead-spring chain models and their fits, checked against analytic results and quadrature."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy import integrate
from scipy.special import zeta

from tauspec.models.beadspring import fit_chain
from tauspec.models.chains import chain_moduli, mode_times, rouse_moduli, zimm_moduli
from tauspec.models.intervals import add_intervals, jacobian_intervals
from tauspec.models.signatures import ROUSE_G_COEFF, crossovers, local_lines, loglog_slope
from tauspec.spectrum.kernels import modes_moduli

# ------------------------------------------------------------------------------------------- check values


def test_rouse_coefficient_pi_over_2_sqrt2_by_quadrature():
    # Ferry 1980, ch. 9: G'' − η_s ω → (π/(2√2)) G0 (ωτ_1)^(1/2) in the Rouse region.  Continuum sum over p
    # of ωτ_p/(1+(ωτ_p)²) with τ_p = τ_1/p²: substituting u = p/√(ωτ_1) gives √(ωτ_1) ∫ u²/(1+u⁴) du.
    val, _ = integrate.quad(lambda u: u**2 / (1 + u**4), 0, np.inf)
    assert val == pytest.approx(math.pi / (2 * math.sqrt(2)), rel=1e-10)
    assert float(mpmath.quad(lambda u: u**2 / (1 + u**4), [0, mpmath.inf])) == pytest.approx(ROUSE_G_COEFF, rel=1e-12)
    # and G' + G0/2 (Euler–Maclaurin end term, docs/references.md) has the same asymptote: ∫ 1/(1+u⁴) du
    val2, _ = integrate.quad(lambda u: 1 / (1 + u**4), 0, np.inf)
    assert val2 == pytest.approx(ROUSE_G_COEFF, rel=1e-10)


@pytest.mark.parametrize("x", [30.0, 300.0, 3000.0])
def test_finite_rouse_chain_reaches_the_intermediate_asymptote(x):
    # Ferry 1980, ch. 9: for 1 ≪ ωτ_1 ≪ N², G'' = G' + G0/2 = (π/(2√2)) G0 √(ωτ_1).
    G0, tau1, N = 2.0, 1.0, 3000
    gp, gpp = rouse_moduli(np.array([x]), G0, tau1, N)
    target = ROUSE_G_COEFF * G0 * math.sqrt(x)
    assert gpp[0] == pytest.approx(target, rel=0.02)
    assert gp[0] + G0 / 2 == pytest.approx(target, rel=0.02)


@pytest.mark.parametrize("a, tan_expected", [(2.0, 1.0), (1.5, math.sqrt(3.0)), (3 * 0.588, 1.236)])
def test_tan_delta_of_the_asymptotic_power_laws(a, tan_expected):
    # docs/references.md (from ∫ x^(c−1)/(1+x^b) dx = (π/b)/sin(πc/b), Gradshteyn & Ryzhik 3.241.2):
    # τ_p = τ_1 p^(−a) gives tan δ = tan(π/(2a)) in the scale-free region: 1 (Rouse), √3 (Zimm θ).
    s = 1 / a
    assert math.tan(math.pi * s / 2) == pytest.approx(tan_expected, rel=2e-3)
    x = 50.0  # ωτ_1; the continuum over p from 0 to ∞ is scale free
    gpp, _ = integrate.quad(lambda p: (x * p**-a) / (1 + (x * p**-a) ** 2), 0, np.inf, limit=400)
    gp, _ = integrate.quad(lambda p: (x * p**-a) ** 2 / (1 + (x * p**-a) ** 2), 0, np.inf, limit=400)
    assert gpp / gp == pytest.approx(tan_expected, rel=2e-3)
    # the discrete long chain at ωτ_1 = 100: G' + G0/2 (Euler–Maclaurin end term) and G'' plus the viscous
    # contribution ω Σ_{p>N} τ_p of the modes cut off at N (Hurwitz zeta) give the same ratio
    N = 4000
    gp_d, gpp_d = chain_moduli(np.array([x * 2]), 1.0, 1.0, N, a=a, form="power")
    tail = 2 * x * float(zeta(a, N + 1))
    assert (gpp_d[0] + tail) / (gp_d[0] + 0.5) == pytest.approx(tan_expected, rel=0.02)


def test_rouse_sums_and_terminal_limit():
    # Ferry 1980, ch. 9 (values in docs/references.md): Σ τ_p → (π²/6) τ_1, and G'/ω² → G0 τ_1² π⁴/90 for ω → 0.
    tau = mode_times(1.0, 2000, 2.0, "sine")
    assert tau.sum() == pytest.approx(math.pi**2 / 6, rel=2e-3)
    assert (tau**2).sum() == pytest.approx(math.pi**4 / 90, rel=1e-4)
    w = np.array([1e-5])
    gp, gpp = rouse_moduli(w, 3.0, 1.0, 2000)
    assert gp[0] / w[0] ** 2 == pytest.approx(3.0 * math.pi**4 / 90, rel=1e-3)
    assert gpp[0] / w[0] == pytest.approx(3.0 * math.pi**2 / 6, rel=2e-3)


def test_sine_form_tends_to_inverse_square_for_low_modes():
    # Rouse 1953: τ_p → τ_1/p² for p ≪ N.
    tau = mode_times(2.0, 500, 2.0, "sine")
    p = np.arange(1, 11)
    np.testing.assert_allclose(tau[:10], 2.0 / p**2, rtol=5e-4)
    assert tau[0] == 2.0


def test_binned_fast_modes_match_the_exact_mode_sum():
    # The binned sum over p (midpoint rule) against the plain sum of every Maxwell mode (Ferry 1980, ch. 3).
    # The last two windows end at ω = 100 and 10: modes with ω_max τ_p < 1e-3 enter by their low-frequency sums.
    for n, a, form, top in [(150, 2.0, "sine", 1e6), (4000, 2.0, "sine", 1e6), (3000, 1.5, "power", 1e6),
                            (700, 1.764, "power", 1e6), (4000, 2.0, "sine", 1e2), (3000, 1.5, "power", 10.0)]:
        w = np.geomspace(1e-3, top, 60)
        exact = modes_moduli(w, np.ones(n), mode_times(1.0, n, a, form), eta_s=0.2)
        approx = chain_moduli(w, 1.0, 1.0, n, a=a, form=form, eta_s=0.2)
        for e, f in zip(exact, approx):
            np.testing.assert_allclose(f, e, rtol=1e-4)


def test_loglog_slope_is_the_least_squares_line_of_numpy_polyfit():
    # the closed-form straight line against numpy.polyfit (a general least-squares routine) in ln–ln
    rng = np.random.default_rng(3)
    x = np.geomspace(0.1, 30.0, 9)
    y = 2.5 * x**0.7 * np.exp(0.05 * rng.standard_normal(9))
    slope, rms = loglog_slope(x, y)
    coef = np.polyfit(np.log(x), np.log(y), 1)
    assert slope == pytest.approx(coef[0], rel=1e-12)
    assert rms == pytest.approx(np.sqrt(np.mean((np.log(y) - np.polyval(coef, np.log(x))) ** 2)), rel=1e-10)
    assert all(math.isnan(v) for v in loglog_slope(np.ones(3), y[:3]))


def test_local_lines_are_the_least_squares_lines_of_numpy_polyfit_and_find_the_maxwell_crossover():
    # every window's straight line (±0.25 decade, at least the 3 nearest points) against numpy.polyfit
    rng = np.random.default_rng(5)
    w = np.sort(np.geomspace(1e-2, 1e2, 23) * np.exp(0.02 * rng.standard_normal(23)))
    y = np.exp(0.4 * np.log(w) + 0.05 * rng.standard_normal(23))
    slope, value = local_lines(w, y)
    lw = np.log10(w)
    for i in range(w.size):
        sel = np.abs(lw - lw[i]) <= 0.25 + 1e-12
        if np.count_nonzero(sel) < 3:
            sel = np.argsort(np.abs(lw - lw[i]))[:3]
        coef = np.polyfit(np.log(w[sel]), np.log(y[sel]), 1)
        assert slope[i] == pytest.approx(coef[0], rel=1e-9, abs=1e-12)
        assert value[i] == pytest.approx(np.polyval(coef, np.log(w[i])), rel=1e-9, abs=1e-12)
    # one Maxwell mode (Ferry 1980, ch. 3): G' = G'' at ωτ = 1, G' rising above G''
    om = np.geomspace(1e-2, 1e2, 41)
    gp, gpp = modes_moduli(om, [1.0], [2.0])
    ((w_cross, direction),) = crossovers(om, gp, gpp)
    assert direction == 1 and w_cross == pytest.approx(0.5, rel=0.02)


def test_continuous_N_is_the_chain_at_integers_and_between_them():
    w = np.geomspace(0.01, 100, 20)
    np.testing.assert_allclose(rouse_moduli(w, 1, 1, 17.0)[0], chain_moduli(w, 1, 1, 17, a=2.0)[0])
    mid = rouse_moduli(w, 1, 1, 17.25)[1]
    lo, hi = rouse_moduli(w, 1, 1, 17)[1], rouse_moduli(w, 1, 1, 18)[1]
    np.testing.assert_allclose(mid, 0.75 * lo + 0.25 * hi)


def test_bad_model_arguments():
    with pytest.raises(ValueError, match="at least one mode"):
        mode_times(1.0, 0)
    with pytest.raises(ValueError, match="unknown form"):
        mode_times(1.0, 5, form="cosine")
    with pytest.raises(ValueError, match="unknown model"):
        fit_chain(np.ones(6), np.ones(6), np.ones(6), "reptation")


# ------------------------------------------------------------------------------------------------- fits


def _exact_rouse(N, tau1=1.0, G0=1.0, eta=0.0, wmin=0.01, wmax=1000.0, n=40):
    w = np.geomspace(wmin, wmax, n)
    gp, gpp = rouse_moduli(w, G0, tau1, N, eta_s=eta)
    return w, gp, gpp


@pytest.mark.parametrize("N", [30, 37])
def test_free_exponent_with_fitted_N_recovers_two_on_exact_rouse_data(N):
    # Pitfall measured by colleagues: a pure power law with a large fixed N gives a ≈ 1.90 on exact Rouse data
    # of N ≈ 30–40; with N fitted and the finite-N (sine) form the exponent is 2 (Rouse 1953).
    w, gp, gpp = _exact_rouse(N, eta=0.002)
    f = fit_chain(w, gp, gpp, "general_sine")
    assert f.a == pytest.approx(2.0, abs=0.01)
    assert f.N == pytest.approx(N, rel=0.05)
    assert f.tau1 == pytest.approx(1.0, rel=0.01)
    assert f.rms < 1e-3
    # the truncated power law with a large fixed N (here N = 1000) is worse and biased low
    prob_fit = fit_chain(w, gp, gpp, "general_power")
    assert prob_fit.chi2 > f.chi2


def test_finite_N_form_is_biased_on_a_zimm_spectrum_and_the_power_form_is_not():
    # Measured pitfall (colleagues): the sine form applied to τ_p = τ_1 p^(−3ν), ν = 0.588, biases a upward
    # (≈ 1.87); the power form recovers 3ν and fits better (Zimm 1956).
    w = np.geomspace(0.01, 1000, 40)
    gp, gpp = zimm_moduli(w, 1.0, 1.0, 100, nu=0.588)
    fs = fit_chain(w, gp, gpp, "general_sine")
    fp = fit_chain(w, gp, gpp, "general_power")
    assert fp.a == pytest.approx(1.764, abs=0.01)
    assert fs.a > fp.a + 0.03
    assert fp.bic < fs.bic


@pytest.mark.parametrize("seed", [3, 17])
def test_profile_intervals_cover_the_truth_on_noisy_rouse_data(seed):
    # 95 % profile-likelihood intervals (Bates & Watts 1988, ch. 6) on data with 2 % relative noise.
    rng = np.random.default_rng(seed)
    N, tau1, G0 = int(rng.integers(20, 150)), 10 ** rng.uniform(-1, 1), 10 ** rng.uniform(1, 3)
    w, gp, gpp = _exact_rouse(N, tau1=tau1, G0=G0, eta=0.05 * G0 * tau1, wmin=0.01 / tau1, wmax=500 / tau1)
    gp = gp * (1 + 0.02 * rng.standard_normal(len(w)))
    gpp = gpp * (1 + 0.02 * rng.standard_normal(len(w)))
    f = add_intervals(fit_chain(w, gp, gpp, "rouse"), w, gp, gpp)
    assert f.ci_method == "profile likelihood"
    assert f.tau1_ci[0] < tau1 < f.tau1_ci[1]
    assert f.G0_ci[0] < G0 < f.G0_ci[1]
    assert f.tau1_ci[0] < f.tau1 < f.tau1_ci[1]
    j = jacobian_intervals(f, w, gp, gpp)
    assert j.ci_method == "jacobian"
    # the Wald and profile intervals agree roughly for this well-determined parameter
    assert math.log(j.tau1_ci[1] / j.tau1_ci[0]) == pytest.approx(math.log(f.tau1_ci[1] / f.tau1_ci[0]), rel=0.5)


def test_fit_statistics_are_consistent():
    # AIC/BIC for Gaussian errors of unknown common size: n ln(χ²/n) + 2k, + k ln n (Burnham & Anderson 2002).
    w, gp, gpp = _exact_rouse(25, eta=0.01)
    rng = np.random.default_rng(0)
    gp = gp * (1 + 0.01 * rng.standard_normal(len(w)))
    f = fit_chain(w, gp, gpp, "rouse")
    n, k = f.n_data, f.n_params
    assert n == 80 and k == 4
    assert f.aic == pytest.approx(n * math.log(f.chi2 / n) + 2 * k)
    assert f.bic == pytest.approx(n * math.log(f.chi2 / n) + k * math.log(n))
    assert f.reduced_chi2 == pytest.approx(f.chi2 / (n - k))
    d = f.to_dict()
    # a fixed exponent has no interval (a zero-width one would claim a certainty no data give; issue 16)
    assert d["model"] == "rouse" and all(math.isnan(v) for v in d["a_ci"]) and d["a_free"] is False
