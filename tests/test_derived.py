"""Derived quantities: Rouse and log-normal sums, exact interconversion, flags outside the supported window."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.integrate import quad

from synthetic import lognormal_H, lognormal_sweep, rouse_sweep, rouse_times
from tauspec.data.write import dumps_json
from tauspec.errors import SettingsError
from tauspec.modes.curves import complex_viscosity, creep_compliance, relaxation_modulus, shear_viscosity
from tauspec.modes.derived import derive, side_by_side
from tauspec.modes.fit import fit_modes
from tauspec.modes.retardation import retardation_spectrum
from tauspec.output.tables import curve_csv_text
from tauspec.spectrum.kernels import modes_moduli

W6 = np.geomspace(1e-3, 1e3, 61)


class _Spec:
    """A duck-typed continuous spectrum (attributes as tauspec.spectrum.Spectrum)."""

    def __init__(self, tau, H, omega, eta_s=0.0, G_e=0.0):
        self.tau, self.H, self.omega, self.eta_s, self.G_e = tau, H, omega, eta_s, G_e


def lognormal_spec(omega, G_t=1e4, tau_m=1.0, sigma=1.2):
    tau = np.geomspace(tau_m * np.exp(-9 * sigma), tau_m * np.exp(9 * sigma), 801)
    return _Spec(tau, lognormal_H(tau, G_t, tau_m, sigma), omega)


# --------------------------------------------------------------------------- the published check values


def test_reference_values_themselves():
    # Log-normal moments by quadrature (scipy.integrate): η0 = G_t τ_m e^(σ²/2) = 2.054433, J_e⁰ G_t = e^(σ²)
    # = 4.220696 at σ = 1.2 (docs/references.md).  Rouse sums for N = 2000: Σ τ_p/τ_1 → π²/6, Σ τ_p²/(Σ τ_p)² → 2/5
    # (Ferry 1980, ch. 9).
    s = 1.2
    H = lambda u: math.exp(-u * u / (2 * s * s)) / (s * math.sqrt(2 * math.pi))  # noqa: E731
    m1 = quad(lambda u: H(u) * math.exp(u), -40, 40, epsabs=0, epsrel=1e-12)[0]
    m2 = quad(lambda u: H(u) * math.exp(2 * u), -40, 40, epsabs=0, epsrel=1e-12)[0]
    assert m1 == pytest.approx(2.054433, abs=1e-6)
    assert m2 / m1**2 == pytest.approx(4.220696, abs=1e-6)
    tp = rouse_times(1.0, 2000)
    assert tp.sum() == pytest.approx(math.pi**2 / 6, rel=1e-5)
    assert (tp**2).sum() / tp.sum() ** 2 == pytest.approx(0.4, rel=1e-5)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_rouse_viscosity_and_compliance_from_noisy_sweeps(seed):
    # Rouse finite chain (Rouse 1953; Ferry 1980 ch. 9): η0 − η_s → (π²/6) G0 τ_1 and, for the polymer part,
    # J_e⁰ → 2/(5 G0); with a solvent J_e⁰ = (2/5G0)((η0 − η_s)/η0)² (Ferry 1980 ch. 9, dilute solutions,
    # form from memory; the same follows from J_e⁰ = ∫ t G dt / η0², checked below against J(t)).
    G0, tau1, N, eta_s = 1e3, 10.0, 200, 3000.0
    m = fit_modes(rouse_sweep(seed, G0=G0, tau_1=tau1, N=N, eta_s=eta_s))
    d = derive(m)
    assert d.eta0 - m.eta_s == pytest.approx(math.pi**2 / 6 * G0 * tau1, rel=0.05)
    assert d.Je0_polymer == pytest.approx(2 / (5 * G0), rel=0.05)
    eta_p = math.pi**2 / 6 * G0 * tau1
    assert d.Je0 == pytest.approx(2 / (5 * G0) * (eta_p / (eta_p + eta_s)) ** 2, rel=0.05)
    # the creep compliance of the same modes approaches J_e⁰ + t/η0 (Ferry 1980, ch. 3)
    t = 1e4 * tau1
    J = creep_compliance(m, [t]).y[0]
    assert J - t / d.eta0 == pytest.approx(d.Je0, rel=1e-6)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_lognormal_viscosity_and_compliance_from_noisy_sweeps(seed):
    # Log-normal spectrum, σ = 1.2 (docs/references.md, checked above): η0 = 2.054433 G_t τ_m, J_e⁰ G_t = 4.220696.
    G_t, tau_m = 1e4, 1.0
    m = fit_modes(lognormal_sweep(seed, G_t=G_t, tau_m=tau_m, sigma=1.2))
    d = derive(m)
    assert d.eta0 == pytest.approx(2.054433 * G_t * tau_m, rel=0.05)
    assert d.Je0 == pytest.approx(4.220696 / G_t, rel=0.05)
    assert not d.flags["eta0"] and not d.flags["Je0"]


def test_lognormal_from_the_continuous_spectrum_and_side_by_side():
    # The grid spectrum itself (trapezoid in ln τ) reproduces the exact moments; side by side with the modes.
    spec = lognormal_spec(W6)
    ds = derive(spec)
    assert ds.basis == "spectrum"
    assert ds.eta0 == pytest.approx(2.054433e4, rel=1e-5)
    assert ds.Je0 == pytest.approx(4.220696e-4, rel=1e-5)
    # τ_n = τ_m e^(σ²/2), τ_w = τ_m e^(3σ²/2) (log-normal moments)
    assert ds.tau_n == pytest.approx(math.exp(1.2**2 / 2), rel=1e-5)
    assert ds.tau_w == pytest.approx(math.exp(1.5 * 1.2**2), rel=1e-5)
    dm = derive(fit_modes(lognormal_sweep(4)))
    text = side_by_side(dm, ds)
    assert "from modes" in text and "from spectrum" in text
    assert dm.tau_w == pytest.approx(ds.tau_w, rel=0.1)


@pytest.mark.parametrize("seed", [0, 2, 3])
def test_lognormal_from_the_tikhonov_spectrum(seed):
    # Exact log-normal values as above.  The modes started from the inverted spectrum must hit both within 5 %;
    # the spectrum itself must hit η0, and its J_e⁰ must either be within 5 % or be flagged as coming from
    # outside the window (measured: seeds 2 and 3 put a small spike at the last grid point, τ = 1e4 s, that
    # moves J_e⁰ by 48 % and 324 %, which the flag reports).
    from tauspec.spectrum.invert import invert

    sw = lognormal_sweep(seed)
    spec = invert(sw)
    dm, ds = derive(fit_modes(sw, spec)), derive(spec)
    assert dm.eta0 == pytest.approx(2.054433e4, rel=0.05) and dm.Je0 == pytest.approx(4.220696e-4, rel=0.05)
    assert ds.eta0 == pytest.approx(2.054433e4, rel=0.05)
    assert abs(ds.Je0 / 4.220696e-4 - 1) < 0.05 or ds.flags["Je0"]


def test_flags_without_a_terminal_zone():
    # ω ∈ [0.01, 100] rad/s supports τ ≤ 20.79 s (Davies & Anderssen 1997).  For the σ = 1.2 log-normal about 9 %
    # of Σ Hτ (a log-normal in ln τ centred at σ², s.d. σ: P(z > (ln 20.79 − 1.44)/1.2) = 0.092) lies above that,
    # and most of the J_e⁰ moment does.
    spec = lognormal_spec(np.geomspace(1e-2, 1e2, 41))
    d = derive(spec)
    assert d.outside_share["eta0"] == pytest.approx(0.092, abs=0.01)
    assert d.flags["eta0"] and d.flags["Je0"] and d.flags["tau_longest"]
    text = d.report()
    assert "zero-shear viscosity eta0: 9 % of it comes from relaxation times longer than the supported window" in text
    assert "no terminal zone" in text
    assert d.outside_side["eta0"] == "long"
    # the wide sweep supports both
    wide = derive(lognormal_spec(W6))
    assert not wide.flags["eta0"] and not wide.flags["Je0"]
    assert "the data do not determine it" not in wide.report()


# --------------------------------------------------------------------------- interconversion


def _convolution_error(g, tau, eta_s, G_e, times):
    """max |(η_s J(t) + ∫₀ᵗ G(s) J(t − s) ds)/t − 1| by scipy.integrate.quad (Ferry 1980, ch. 3)."""
    g, tau = np.asarray(g, float), np.asarray(tau, float)
    r = retardation_spectrum(g, tau, eta_s=eta_s, G_e=G_e)

    def G(s):
        return G_e + float(np.sum(g * np.exp(-s / tau)))

    def J(t):
        return float(r.compliance(np.array([t]))[0])

    worst = 0.0
    for t in times:
        scales = list(tau) + list(r.lam)
        pts = sorted({p for p in scales if p < t} | {t - c * p for p in r.lam for c in (1, 5, 25, 125) if c * p < t})
        val = quad(lambda s, t=t: G(s) * J(t - s), 0, t, epsabs=0, epsrel=1e-12, limit=1000, points=pts or None)[0]
        worst = max(worst, abs((val + eta_s * J(t)) / t - 1))
    return worst


@pytest.mark.parametrize(
    ("g", "tau", "eta_s", "G_e"),
    [
        ([1e5, 1e4, 1e3], [0.01, 1.0, 100.0], 0.0, 0.0),  # fluid
        ([1e5, 1e4, 1e3], [0.01, 1.0, 100.0], 5.0, 0.0),  # fluid with solvent
        ([2e3, 1e3], [1.0, 10.0], 0.3, 50.0),  # solid with solvent
        ([3e3, 1e3, 300.0, 100.0], [0.05, 0.5, 5.0, 50.0], 0.0, 10.0),  # solid
    ],
)
def test_convolution_identity(g, tau, eta_s, G_e):
    # ∫₀ᵗ G(s) J(t − s) ds = t (Ferry 1980, ch. 3), G with η_s δ(s) for the solvent.
    assert _convolution_error(g, tau, eta_s, G_e, [1e-3, 0.03, 1.0, 10.0, 300.0]) < 1e-6


def test_convolution_identity_for_fitted_modes():
    m = fit_modes(lognormal_sweep(9))
    assert _convolution_error(m.g, m.tau, m.eta_s, m.G_e, [0.01, 1.0, 30.0]) < 1e-6


def test_single_maxwell_mode_exact_forms():
    # Maxwell: G(t) = g e^(−t/τ), J(t) = 1/g + t/(gτ), |η*| = gτ/√(1 + ω²τ²) (docs/references.md; Ferry 1980 ch. 3).
    class M:
        g = np.array([2.5e3])
        tau = np.array([0.7])
        eta_s = 0.0
        G_e = 0.0
        window = (0.01, 100.0)

    t = np.geomspace(1e-3, 100, 30)
    np.testing.assert_allclose(relaxation_modulus(M, t).y, 2.5e3 * np.exp(-t / 0.7), rtol=1e-13)
    np.testing.assert_allclose(creep_compliance(M, t).y, 1 / 2.5e3 + t / (2.5e3 * 0.7), rtol=1e-13)
    w = np.geomspace(1e-2, 1e2, 9)
    eta = 2.5e3 * 0.7 / np.sqrt(1 + (w * 0.7) ** 2)
    np.testing.assert_allclose(complex_viscosity(M, w).y, eta, rtol=1e-13)
    cm = shear_viscosity(M, w)
    np.testing.assert_allclose(cm.y, eta, rtol=1e-13)
    assert "Cox-Merz" in cm.method and "common practice" in cm.method
    d = derive(M)
    assert d.eta0 == pytest.approx(1750.0) and d.Je0 == pytest.approx(1 / 2.5e3)
    assert d.tau_n == d.tau_w == d.tau_longest == pytest.approx(0.7)


def test_retardation_limits():
    # Glassy compliance 1/Σg without solvent, 0 with one; J_e⁰ = J_g + ΣJ_k = Σgτ²/η0² (fluid), 1/G_e (solid).
    g, tau = np.array([1e4, 1e3]), np.array([0.1, 10.0])
    r = retardation_spectrum(g, tau)
    assert r.J_g == pytest.approx(1 / 1.1e4)
    assert r.Je0 == pytest.approx(np.sum(g * tau**2) / np.sum(g * tau) ** 2, rel=1e-12)
    r = retardation_spectrum(g, tau, eta_s=2.0)
    assert r.J_g == 0.0 and r.lam.size == 2
    assert r.Je0 == pytest.approx(np.sum(g * tau**2) / (2.0 + np.sum(g * tau)) ** 2, rel=1e-12)
    r = retardation_spectrum(g, tau, G_e=100.0)
    assert not r.fluid and r.Je0 == pytest.approx(1 / 100.0, rel=1e-12)
    # Newtonian liquid and Kelvin–Voigt solid
    np.testing.assert_allclose(retardation_spectrum([], [], eta_s=2.0).compliance([1.0, 3.0]), [0.5, 1.5])
    kv = retardation_spectrum([], [], eta_s=2.0, G_e=4.0).compliance([1.0])
    assert kv[0] == pytest.approx(0.25 * (1 - math.exp(-2.0)))


def test_creep_from_the_continuous_spectrum():
    # J(t) from the grid spectrum: long-time slope 1/η0 and intercept J_e⁰ of the log-normal (exact values above).
    spec = lognormal_spec(W6)
    t = np.array([1e7, 2e7])  # far beyond the longest grid time (5e4 s)
    J = creep_compliance(spec, t).y
    assert (J[1] - J[0]) / (t[1] - t[0]) == pytest.approx(1 / 2.054433e4, rel=1e-5)
    eta0 = derive(spec).eta0  # equals the exact value to 1e-5 (test above); the intercept needs all its digits
    assert J[0] - t[0] / eta0 == pytest.approx(4.220696e-4, rel=1e-4)


def test_frequency_curves_inside_the_measured_range_are_not_extrapolations():
    # A Rouse melt (50 modes of 500 Pa, τ_1 = 1 s; Rouse 1953, Ferry 1980 ch. 9) measured over 0.01–100 rad/s:
    # its fast modes lie below the supported window, so some of the fitted Maxwell modes do too.  The Cox–Merz
    # viscosity η(γ̇) = |η*|(ω = γ̇) (Cox & Merz 1958) at measured rates re-expresses |G*|/ω of the data (Ferry
    # 1980, ch. 1) whichever modes carry it: it equals the chain's exact |G*|/ω to the fit's residual and is no
    # extrapolation, though more than 5 % of it comes from those modes at the high rates.  G(t) at 0.01 s leans
    # on them in time, where the data do not fix it: flagged.
    sw = rouse_sweep(3, G0=500.0, tau_1=1.0, N=50, wmin=0.01, wmax=100.0, n=41)
    modes = fit_modes(sw)
    assert modes.outside_window.any()
    rates = np.array([0.05, 1.0, 10.0, 80.0])
    v = shear_viscosity(modes, rates)
    gp, gpp = modes_moduli(rates, np.full(50, 500.0), rouse_times(1.0, 50))
    np.testing.assert_allclose(v.y, np.hypot(gp, gpp) / rates, rtol=0.02)
    assert (v.outside_share > 0.05).any() and not v.flags.any() and v.caveats() == []
    assert "fixed by the measured moduli" in v.report()
    assert complex_viscosity(modes, [1e-3, 1.0]).flags.tolist() == [True, False]  # 1e-3 lies beyond the sweep
    g = relaxation_modulus(modes, [0.01])
    assert g.outside_share[0] > 0.05 and g.flags[0]


def test_curve_flags_and_output():
    spec = lognormal_spec(np.geomspace(1e-2, 1e2, 41))
    c = relaxation_modulus(spec, np.geomspace(0.01, 1e3, 20))
    # at long times G(t) is carried by τ > 20.8 s: flagged; at 0.01 s mostly by the window
    assert c.flags[-1] and not c.flags[0]
    assert "extrapolation" in c.report()
    lines = curve_csv_text(c).splitlines()
    assert lines[0] == "t [s],G(t) [Pa],outside share,beyond measured,extrapolation"
    assert len(lines) == 21 and lines[-1].endswith(",yes")
    assert float(lines[1].split(",")[1]) == pytest.approx(c.y[0], rel=1e-15)


def test_points_beyond_the_measured_range_are_extrapolations():
    # One Maxwell mode, G(t) = g e^(−t/τ) (Ferry 1980, ch. 3), measured from 0.01 to 100 rad/s: the mode lies
    # inside the supported window, so the out-of-window share is 0 everywhere, yet G at t = 10⁴ s or 10⁻⁵ s, or
    # η at a shear rate of 10⁶ 1/s, says nothing the data support (a slower or faster mode the sweep cannot see
    # would change it).  Before, those points were printed unflagged.
    from types import SimpleNamespace

    from tauspec.modes.curves import Curve

    m = SimpleNamespace(g=np.array([2.5e3]), tau=np.array([0.7]), omega=np.geomspace(1e-2, 1e2, 21))
    t = np.array([1e-5, 0.01, 1.0, 100.0, 1e4])
    c = relaxation_modulus(m, t)
    np.testing.assert_allclose(c.y, 2.5e3 * np.exp(-t / 0.7), rtol=1e-13)
    assert c.measured == pytest.approx((0.01, 100.0), rel=1e-12)
    assert c.outside_share.tolist() == [0.0] * 5
    assert c.beyond.tolist() == [True, False, False, False, True] and c.flags.tolist() == c.beyond.tolist()
    (line,) = c.caveats()
    assert line.startswith("2 of 5 points (t 1e-05–1e+04 s) lie beyond the measured range 0.01–100 s")
    lines = curve_csv_text(c).splitlines()
    assert lines[1].endswith(",yes,yes") and lines[3].endswith(",no,no")
    again = Curve.from_dict(json.loads(dumps_json(c.to_dict())))
    assert again == c and again.beyond.tolist() == c.beyond.tolist()
    v = shear_viscosity(m, [1e-3, 1.0, 1e6])
    assert v.measured == pytest.approx((0.01, 100.0), rel=1e-12) and v.flags.tolist() == [True, False, True]


def test_to_dict_is_json_ready():
    d = derive(lognormal_spec(W6))
    out = json.loads(dumps_json({"derived": d.to_dict()}))["derived"]
    assert list(out)[:5] == ["eta0", "Je0", "tau_n", "tau_w", "tau_longest"]
    assert set(out["flags"]) >= {"eta0", "Je0", "tau_n", "tau_w", "tau_longest"}
    solid = derive(_Spec(np.array([1.0]), np.array([1.0]), W6, G_e=5.0)).to_dict()
    assert json.loads(dumps_json(solid))["eta0"] is None  # infinite → null


@pytest.mark.parametrize(
    ("obj", "match"),
    [
        (object(), "expected Maxwell modes"),
        (_Spec(np.array([1.0, 2.0]), np.array([1.0]), W6), "differ in shape"),
        (_Spec(np.array([1.0, -2.0]), np.array([1.0, 1.0]), W6), "must be positive"),
        (_Spec(np.array([1.0, 2.0]), np.array([1.0, -1.0]), W6), "must be nonnegative"),
        (_Spec(np.array([2.0, 1.0]), np.array([1.0, 1.0]), W6), "strictly increasing"),
    ],
)
def test_bad_input(obj, match):
    with pytest.raises(SettingsError, match=match):
        derive(obj)


def test_bad_times():
    with pytest.raises(SettingsError, match="times must be positive"):
        relaxation_modulus(lognormal_spec(W6), [1.0, -1.0])
    with pytest.raises(SettingsError, match="share one relaxation time"):
        retardation_spectrum([1.0, 1.0], [2.0, 2.0])
