"""Discrete Maxwell modes: recovery of known mode sets, the mode count, standard errors, window flags, CSV."""

from __future__ import annotations

import math

import numpy as np
import pytest

from synthetic import lognormal_H, lognormal_sweep, noisy_sweep
from tauspec.data.sweep import Sweep
from tauspec.errors import SettingsError, WeakResultWarning
from tauspec.modes.curves import creep_compliance, relaxation_modulus
from tauspec.modes.derived import derive
from tauspec.modes.fit import fit_modes
from tauspec.output.results import modes_entries
from tauspec.output.tables import write_modes_csv
from tauspec.spectrum.invert import invert
from tauspec.spectrum.kernels import modes_moduli

W6 = np.geomspace(1e-3, 1e3, 61)  # six decades, 10 points per decade
THREE_G = np.array([1e5, 1e4, 1e3])
THREE_TAU = np.array([0.01, 1.0, 100.0])


def three_mode_sweep(seed, omega=W6):
    gp, gpp = modes_moduli(omega, THREE_G, THREE_TAU)
    return noisy_sweep(omega, gp, gpp, 0.01, seed)


# Generalized Maxwell model with one mode and a Newtonian solvent (Ferry 1980, ch. 3): a single dominant mode.
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_single_maxwell_mode_plus_solvent_recovered(seed):
    g, tau, eta_s = 1e3, 1.0, 0.5
    w = np.geomspace(1e-2, 1e2, 41)
    gp, gpp = modes_moduli(w, [g], [tau], eta_s=eta_s)
    m = fit_modes(noisy_sweep(w, gp, gpp, 0.01, seed))
    k = int(np.argmax(m.g))
    assert abs(m.tau[k] / tau - 1) < 0.03
    assert m.g[k] >= 0.9 * m.g.sum()
    assert abs(m.eta_s / eta_s - 1) < 0.2
    t = np.geomspace(0.01, 3.0, 25)
    # Maxwell relaxation modulus G(t) = g exp(−t/τ) (Ferry 1980, ch. 3)
    G = relaxation_modulus(m, t).y
    np.testing.assert_allclose(G, g * np.exp(-t / tau), rtol=0.03)
    # Maxwell element with a solvent in parallel (Jeffreys model): J(t) = t/η0 + (gτ²/η0²)(1 − e^(−t/λ)),
    # λ = η_s τ/η0 (Bird, Armstrong & Hassager 1987, Dynamics of Polymeric Liquids vol. 1, ch. 5; from memory,
    # the same form follows from the convolution identity checked in test_derived.py)
    eta0 = eta_s + g * tau
    lam = eta_s * tau / eta0
    J_exact = t / eta0 + g * tau**2 / eta0**2 * (1 - np.exp(-t / lam))
    np.testing.assert_allclose(creep_compliance(m, t).y, J_exact, rtol=0.03)


@pytest.mark.parametrize("seed", [0, 1, 2, 3, 4])
def test_three_mode_fluid_gives_three_modes(seed):
    # Invented three-mode fluid, 1 % multiplicative noise: the F-test must stop at three modes.
    m = fit_modes(three_mode_sweep(seed))
    assert m.n_modes == 3
    np.testing.assert_allclose(m.tau, THREE_TAU, rtol=0.03)
    np.testing.assert_allclose(m.g, THREE_G, rtol=0.03)
    # the four-mode candidate was tried and judged not significant
    assert m.candidates[-1].n_modes == 4 and m.candidates[-1].p_value >= m.options.significance
    assert not m.outside_window.any()
    assert m.residual_rms == pytest.approx(0.01, rel=0.3)


def test_standard_errors_are_of_the_size_of_the_scatter():
    # Over repeated noisy sweeps the Jacobian standard error should match the spread of the estimates
    # (Seber & Wild 1989, Nonlinear Regression, ch. 5: asymptotic covariance s²(JᵀJ)⁻¹).
    fits = [fit_modes(three_mode_sweep(seed), n_modes=3) for seed in range(12)]
    ln_tau = np.log([f.tau for f in fits])
    spread = ln_tau.std(axis=0, ddof=1)
    se = np.mean([f.tau_se / f.tau for f in fits], axis=0)
    # 12 samples: the sample std scatters by about ±20 %; allow a factor 2 either way
    assert np.all(se > 0.5 * spread) and np.all(se < 2.0 * spread)
    assert np.all(np.isfinite([f.g_se for f in fits]))


def test_fixed_mode_count_and_determinism():
    sw = three_mode_sweep(7)
    with pytest.warns(WeakResultWarning, match="fit the data poorly"):  # two modes cannot fit three
        a = fit_modes(sw, n_modes=2)
    assert a.n_modes == 2
    b, c = fit_modes(sw), fit_modes(sw)
    np.testing.assert_array_equal(b.g, c.g)
    np.testing.assert_array_equal(b.tau, c.tau)
    np.testing.assert_array_equal(b.g_se, c.g_se)


def test_modes_outside_window_are_flagged():
    # Davies & Anderssen 1997: ω ∈ [0.01, 1000] rad/s supports τ up to e^(−π/2)/0.01 = 20.79 s, so the
    # 100 s mode lies outside and must be flagged.
    w = np.geomspace(1e-2, 1e3, 51)
    m = fit_modes(three_mode_sweep(3, omega=w))
    assert m.window[1] == pytest.approx(math.exp(-math.pi / 2) / 0.01, rel=1e-12)
    assert m.window[0] == pytest.approx(math.exp(math.pi / 2) / 1e3, rel=1e-12)
    assert m.outside_window[np.argmax(m.tau)]
    assert m.tau.max() > m.window[1]
    assert not m.outside_window[np.argmin(np.abs(np.log(m.tau)))]  # the 1 s mode is inside
    assert "outside the supported window" in m.report()


def test_start_from_a_continuous_spectrum():
    # Start from the exact log-normal spectrum (stands in for the Tikhonov spectrum): exact η0 = G_t τ_m e^(σ²/2)
    # and J_e⁰ G_t = e^(σ²) (log-normal moments; values in docs/references.md, checked in test_derived.py).
    G_t, tau_m, sigma = 1e4, 1.0, 1.2

    class _Spec:  # duck-typed like tauspec.spectrum.Spectrum
        tau = np.geomspace(1e-4, 1e4, 161)
        H = lognormal_H(tau, G_t, tau_m, sigma)
        eta_s = 0.0
        G_e = 0.0

    sw = lognormal_sweep(5, G_t=G_t, tau_m=tau_m, sigma=sigma)
    m = fit_modes(sw, _Spec())
    assert m.start == "spectrum"
    d = derive(m)
    assert d.eta0 == pytest.approx(G_t * tau_m * math.exp(sigma**2 / 2), rel=0.05)
    assert d.Je0 == pytest.approx(math.exp(sigma**2) / G_t, rel=0.05)


def test_known_solvent_viscosity_is_held():
    w = np.geomspace(1e-2, 1e2, 41)
    gp, gpp = modes_moduli(w, [1e3], [1.0], eta_s=0.5)
    m = fit_modes(noisy_sweep(w, gp, gpp, 0.01, 6), eta_s=0.5)
    assert m.eta_s == 0.5 and m.eta_s_se == 0.0 and not m.fits_eta_s
    assert m.n_modes == 1 and m.tau[0] == pytest.approx(1.0, rel=0.03)
    assert "given, not fitted" in m.report()
    with pytest.raises(SettingsError, match="eta_s must be a nonnegative viscosity in Pa·s"):
        fit_modes(noisy_sweep(w, gp, gpp, 0.01, 6), eta_s=-1.0)


def test_equilibrium_modulus_fitted_when_asked():
    # A solid: one mode plus an equilibrium modulus G_e (generalized Maxwell model with a spring, Ferry 1980 ch. 3).
    w = np.geomspace(1e-2, 1e2, 41)
    gp, gpp = modes_moduli(w, [1e4], [1.0], G_e=500.0)
    m = fit_modes(noisy_sweep(w, gp, gpp, 0.01, 2), equilibrium_modulus=True, solvent=False)
    assert m.G_e == pytest.approx(500.0, rel=0.05)
    assert m.eta_s == 0.0
    assert np.isinf(derive(m).eta0)


def test_kelvin_voigt_data_need_no_mode():
    # Kelvin–Voigt solid G' = G_e, G'' = η_s ω (Ferry 1980, ch. 1): no Maxwell mode improves on G_e and η_s,
    # so the F-test against the zero-mode set keeps none.
    w = np.geomspace(1e-2, 1e2, 31)
    sw = noisy_sweep(w, np.full(w.size, 500.0), 2.0 * w, 0.01, 4)
    with pytest.warns(WeakResultWarning, match="no Maxwell mode improves significantly on eta_s and G_e"):
        m = fit_modes(sw, equilibrium_modulus=True)
    assert m.n_modes == 0 and m.candidates[0].n_modes == 0
    assert m.G_e == pytest.approx(500.0, rel=0.01) and m.eta_s == pytest.approx(2.0, rel=0.01)
    assert creep_compliance(m, [0.25]).y[0] == pytest.approx((1 - math.exp(-0.25 * 500 / 2.0)) / 500, rel=0.02)


def test_garbage_is_reported_as_a_poor_fit():
    rng = np.random.default_rng(11)
    w = np.geomspace(1e-2, 1e2, 25)
    sw = Sweep(omega=w, storage=10 ** rng.uniform(0, 5, w.size), loss=10 ** rng.uniform(0, 5, w.size))
    with pytest.warns(WeakResultWarning, match="fit the data poorly"):
        fit_modes(sw)


def test_to_dict_keys_and_modes_csv(tmp_path):
    m = fit_modes(three_mode_sweep(1))
    d = modes_entries(m, invert(three_mode_sweep(1)))["modes"]  # the "modes" object of a result
    assert list(d) == ["g", "tau", "g_se", "tau_se"]
    assert d["g"] == m.g.tolist()
    path = tmp_path / "modes.csv"
    write_modes_csv(path, m)
    lines = path.read_text().splitlines()  # a plain table: η_s, G_e and the window are in the JSON beside it
    assert lines[0] == "mode,g [Pa],tau [s],g standard error [Pa],tau standard error [s],outside window"
    rows = np.array([[float(v) for v in ln.split(",")[1:5]] for ln in lines[1:]])
    assert [ln.split(",")[5] for ln in lines[1:]] == ["no"] * 3
    np.testing.assert_allclose(rows[:, 0], m.g, rtol=1e-15)
    np.testing.assert_allclose(rows[:, 1], m.tau, rtol=1e-15)
    np.testing.assert_allclose(rows[:, 3], m.tau_se, rtol=1e-15)


def test_narrow_sweep_warns_of_an_empty_window():
    # ω_max/ω_min = 10 < e^π: no relaxation time is supported (Davies & Anderssen 1997).
    w = np.geomspace(1.0, 10.0, 12)
    gp, gpp = modes_moduli(w, [1e3], [0.3])
    with pytest.warns(WeakResultWarning, match="less than e\\^π"):
        m = fit_modes(Sweep(omega=w, storage=gp, loss=gpp))
    assert m.outside_window.all()


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"significance": 0.0}, "significance must be a test size above 0 and below 1"),
        ({"significance": 1.5}, "significance must be a test size above 0 and below 1"),
        ({"per_decade": 0}, "per_decade must be a number of modes per decade above 0"),
        ({"n_modes": 0}, "n_modes must be a whole number of modes from 1 to 50"),
        ({"n_modes": 500}, "n_modes must be a whole number of modes from 1 to 50"),
    ],
)
def test_bad_settings(kwargs, match):
    with pytest.raises(SettingsError, match=match):
        fit_modes(three_mode_sweep(0), **kwargs)


def test_more_modes_than_the_data_hold_are_refused():
    # 40 points give 80 data: with η_s at most (80 − 1 − 1)/2 = 39 modes leave a residual degree of freedom
    with pytest.raises(SettingsError, match="the mode count must be between 1 and 39 for 40 points"):
        fit_modes(three_mode_sweep(0, omega=np.geomspace(1e-3, 1e3, 40)), n_modes=45)
