"""Forward model against analytic results and numerical quadrature."""

import math

import numpy as np
import pytest
from scipy import integrate

from synthetic import bsw_H, lognormal_H, lognormal_moduli, rouse_times
from tauspec.spectrum.kernels import log_grid, loss_kernel, modes_moduli, spectrum_moduli, storage_kernel


def test_single_maxwell_mode_analytic():
    # Ferry 1980, ch. 3: one Maxwell mode, G' = g x²/(1+x²), G'' = g x/(1+x²), x = ωτ; G' = G'' = g/2 at x = 1.
    g, tau = 250.0, 0.3
    w = np.array([0.01, 1 / tau, 10.0, 1e4])
    gp, gpp = modes_moduli(w, [g], [tau], eta_s=0.2, G_e=5.0)
    x = w * tau
    np.testing.assert_allclose(gp, 5.0 + g * x**2 / (1 + x**2), rtol=1e-14)
    np.testing.assert_allclose(gpp, 0.2 * w + g * x / (1 + x**2), rtol=1e-14)
    np.testing.assert_allclose(gp[1] - 5.0, g / 2, rtol=1e-14)
    np.testing.assert_allclose(gpp[1] - 0.2 * w[1], g / 2, rtol=1e-14)


def test_kernels_do_not_overflow():
    x = np.array([0.0, 1e-200, 1.0, 1e200])
    np.testing.assert_allclose(storage_kernel(x), [0.0, 0.0, 0.5, 1.0])
    np.testing.assert_allclose(loss_kernel(x), [0.0, 1e-200, 0.5, 1e-200])


def _quad(H, w, kernel):
    # scipy.integrate.quad in u = ln τ over a range where H is non-negligible
    f = lambda u: H(math.exp(u)) * kernel(w * math.exp(u))  # noqa: E731
    return integrate.quad(f, -40, 40, limit=400, epsabs=1e-13, epsrel=1e-11)[0]


@pytest.mark.parametrize("omega", [0.01, 0.1, 1.0, 10.0, 100.0])
def test_lognormal_against_quad(omega):
    # Log-normal spectrum (docs/references.md) integrated by scipy.integrate.quad vs the trapezoid forward model.
    sigma = 1.2
    H = lambda t: float(lognormal_H(t, 1.0, 1.0, sigma))  # noqa: E731
    gp_q = _quad(H, omega, lambda x: x * x / (1 + x * x))
    gpp_q = _quad(H, omega, lambda x: x / (1 + x * x))
    tau = log_grid(1e-7, 1e7, 1601)
    gp, gpp = spectrum_moduli([omega], tau, lognormal_H(tau, 1.0, 1.0, sigma))
    np.testing.assert_allclose([gp[0], gpp[0]], [gp_q, gpp_q], rtol=1e-6)


def test_lognormal_published_values():
    # docs/references.md (Kramers-Kronig pairs of the log-normal spectrum, σ = 1.2, G_t = τ_m = 1):
    # G'(1/τ_m) = G_t/2 exactly (symmetry of K' about x = 1 in ln x); G'' = 0.147857, 0.341750, 0.147857 and
    # G' = 0.062049, 0.5, 0.937951 at ω = 0.1, 1, 10.
    gp, gpp = lognormal_moduli(np.array([0.1, 1.0, 10.0]), sigma=1.2)
    np.testing.assert_allclose(gp, [0.062049, 0.5, 0.937951], atol=2e-6)
    np.testing.assert_allclose(gpp, [0.147857, 0.341750, 0.147857], atol=2e-6)
    assert abs(gp[1] - 0.5) < 1e-9


def test_bsw_check_values():
    # BSW entanglement part, G_N = τ_max = 1, n_e = 0.23 (Baumgaertel, Schausberger & Winter 1990; values in
    # docs/references.md, checked here also against scipy.integrate.quad).
    H = lambda t: float(bsw_H(t, 1.0, 1.0, 0.23))  # noqa: E731
    for w, gp_ref, gpp_ref in [(1.0, 0.0700578, 0.1417297), (10.0, 0.3994421, 0.1976331)]:
        f1 = lambda u, w=w: H(math.exp(u)) * (w * math.exp(u)) ** 2 / (1 + (w * math.exp(u)) ** 2)  # noqa: E731
        f2 = lambda u, w=w: H(math.exp(u)) * (w * math.exp(u)) / (1 + (w * math.exp(u)) ** 2)  # noqa: E731
        gp_q = integrate.quad(f1, -60, 0, limit=400, epsabs=1e-13)[0]
        gpp_q = integrate.quad(f2, -60, 0, limit=400, epsabs=1e-13)[0]
        np.testing.assert_allclose([gp_q, gpp_q], [gp_ref, gpp_ref], atol=2e-7)
        tau = log_grid(1e-26, 1.0, 6001)  # grid ending exactly at τ_max, where H is cut off
        gp, gpp = spectrum_moduli([w], tau, bsw_H(tau, 1.0, 1.0, 0.23))
        np.testing.assert_allclose([gp[0], gpp[0]], [gp_ref, gpp_ref], rtol=2e-5)


def test_rouse_terminal_and_intermediate_asymptotes():
    # Ferry 1980, ch. 9 (values in docs/references.md): terminal slopes 2 (G') and 1 (G''), G'/ω² → G0 τ_1² π⁴/90;
    # intermediate region G'' − η_s ω = G' + G0/2 → (π/(2√2)) G0 √(ωτ_1) (the discrete sum carries −G0/2 in G').
    G0, tau_1, N = 1.0, 1.0, 3000
    taus = rouse_times(tau_1, N)
    w_term = np.array([1e-5, 2e-5])
    gp, gpp = modes_moduli(w_term, np.full(N, G0), taus)
    assert np.log(gp[1] / gp[0]) / np.log(2) == pytest.approx(2.0, abs=1e-4)
    assert np.log(gpp[1] / gpp[0]) / np.log(2) == pytest.approx(1.0, abs=1e-4)
    assert gp[0] / w_term[0] ** 2 == pytest.approx(G0 * tau_1**2 * math.pi**4 / 90, rel=1e-3)
    w_mid = np.array([1e3, 1e4])  # 1/τ_1 ≪ ω ≪ 1/τ_N ≈ 1e6
    gp, gpp = modes_moduli(w_mid, np.full(N, G0), taus)
    asym = math.pi / (2 * math.sqrt(2)) * G0 * np.sqrt(w_mid * tau_1)
    np.testing.assert_allclose(gp + G0 / 2, asym, rtol=2e-3)
    np.testing.assert_allclose(gpp, asym, rtol=2e-3)
