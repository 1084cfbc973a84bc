"""The variable-projection fits reach the optimum of the fits they replaced, on the cases of the test suite.

The reference implementations (``benchmarks/reference/``: least squares in all parameters with
finite-difference Jacobians, several starts; for the BSW form, the amplitudes by NNLS inside a trust-region fit
with a finite-difference Jacobian) are today's fits before variable projection.  On every case below
the new fit's misfit (sum of squared relative residuals) must not exceed the reference's by more than 1e-6 of
it (plus 1e-24 per point: exact data, where both are at rounding level), and the discrete-mode fit must choose
the same number of modes.  A lower misfit is allowed: the new search over whole-number segments of N finds
better optima of the chain models where the reference stopped in a neighbouring segment.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

import synthetic as sy
import synthetic_sweeps as ss
from tauspec.cli.demo_archive import demo_samples
from tauspec.data.sweep import Sweep
from tauspec.models.beadspring import MODELS, fit_all
from tauspec.models.bsw import fit_bsw
from tauspec.models.chains import rouse_moduli, zimm_moduli
from tauspec.modes.fit import fit_modes
from tauspec.spectrum.invert import invert
from tauspec.spectrum.kernels import modes_moduli

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks" / "reference"))
import bsw_fit as bsw_reference  # noqa: E402
import chain_fits as chain_reference  # noqa: E402
import modes_fit as modes_reference  # noqa: E402


def _same_optimum(new: float, ref: float, n: int) -> bool:
    return new <= ref * (1 + 1e-6) + 1e-24 * n


def _rouse(N, eta=0.0, noise=0.0, seed=0):
    w = np.geomspace(0.01, 1000.0, 40)
    gp, gpp = rouse_moduli(w, 1.0, 1.0, N, eta_s=eta)
    rng = np.random.default_rng(seed)
    return w, gp * (1 + noise * rng.standard_normal(40)), gpp * (1 + noise * rng.standard_normal(40))


def _chain_cases():
    # the sweeps of test_beadspring.py and test_diagnosis.py (exact and noisy Rouse, Zimm, BSW, gels, one Maxwell
    # mode, log-normal spectra)
    w = np.geomspace(0.01, 1000, 40)
    cases = {"rouse-30": _rouse(30, 0.002), "rouse-37": _rouse(37, 0.002), "rouse-25-noisy": _rouse(25, 0.01, 0.01),
             "zimm-100": (w, *zimm_moduli(w, 1.0, 1.0, 100, nu=0.588))}
    sweeps = [ss.rouse_sweep(s)[0] for s in (1, 2, 5, 8, 13, 21)] + [ss.rouse_sweep(99, N=15)[0]]
    sweeps += [ss.zimm_sweep(s, nu)[0] for s, nu in ((31, 0.5), (32, 0.5), (41, 0.588), (42, 0.588))]
    sweeps += [ss.bsw_sweep(s)[0] for s in (51, 52, 53)] + [ss.gel_sweep(61, n)[0] for n in (0.35, 0.5)]
    sweeps += [ss.maxwell_sweep(71)[0], ss.lognormal_sweep(81)[0]]
    cases.update({sw.name or f"sweep-{i}": (sw.omega, sw.storage, sw.loss) for i, sw in enumerate(sweeps)})
    return cases


CHAIN_CASES = _chain_cases()


@pytest.mark.parametrize("name", sorted(CHAIN_CASES))
def test_chain_fits_reach_the_reference_optimum(name):
    w, gp, gpp = CHAIN_CASES[name]
    new = fit_all(w, gp, gpp)
    ref = chain_reference.fit_all(w, gp, gpp)
    for model in MODELS:
        assert _same_optimum(new[model].chi2, ref[model].chi2, 2 * w.size), (model, new[model].chi2, ref[model].chi2)


def _three(seed, omega=None):
    omega = np.geomspace(1e-3, 1e3, 61) if omega is None else omega
    gp, gpp = modes_moduli(omega, [1e5, 1e4, 1e3], [0.01, 1.0, 100.0])
    return sy.noisy_sweep(omega, gp, gpp, 0.01, seed)


def _modes_cases():
    # the sweeps of test_modes.py and test_derived.py, with their options and starting spectra
    w = np.geomspace(1e-2, 1e2, 41)
    one = modes_moduli(w, [1e3], [1.0], eta_s=0.5)
    solid = modes_moduli(w, [1e4], [1.0], G_e=500.0)
    w3 = np.geomspace(1e-2, 1e2, 31)
    wn = np.geomspace(1.0, 10.0, 12)
    narrow = modes_moduli(wn, [1e3], [0.3])
    cases = {f"maxwell-{s}": (sy.noisy_sweep(w, *one, 0.01, s), None, {}) for s in range(3)}
    cases.update({f"three-{s}": (_three(s), None, {}) for s in range(5)})
    cases.update({f"three-{s}-fixed": (_three(s), None, {"n_modes": 3}) for s in (0, 5, 9)})
    cases["three-7-two"] = (_three(7), None, {"n_modes": 2})
    cases["window"] = (_three(3, np.geomspace(1e-2, 1e3, 51)), None, {})
    cases["known-eta"] = (sy.noisy_sweep(w, *one, 0.01, 6), None, {"eta_s": 0.5})
    cases["solid"] = (sy.noisy_sweep(w, *solid, 0.01, 2), None, {"equilibrium_modulus": True, "solvent": False})
    cases["kelvin-voigt"] = (sy.noisy_sweep(w3, np.full(31, 500.0), 2.0 * w3, 0.01, 4), None,
                             {"equilibrium_modulus": True})
    cases["narrow"] = (Sweep(omega=wn, storage=narrow[0], loss=narrow[1]), None, {})
    for s in range(3):
        cases[f"rouse-{s}"] = (sy.rouse_sweep(s, G0=1e3, tau_1=10.0, N=200, eta_s=3000.0), None, {})
        cases[f"lognormal-{s}"] = (sy.lognormal_sweep(s), None, {})
    for s in (0, 2, 3):
        sw = sy.lognormal_sweep(s)
        cases[f"lognormal-{s}-spectrum"] = (sw, "invert", {})
    return cases


MODES_CASES = _modes_cases()


@pytest.mark.parametrize("name", sorted(MODES_CASES))
def test_modes_reach_the_reference_optimum(name):
    sweep, spectrum, kw = MODES_CASES[name]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        spec = invert(sweep) if spectrum == "invert" else None
        new = fit_modes(sweep, spec, **kw)
        ref = modes_reference.fit_modes(sweep, spec, **kw)
    assert new.n_modes == ref.n_modes
    n = 2 * len(sweep)
    assert _same_optimum(n * new.residual_rms**2, n * ref.residual_rms**2, n), (new.residual_rms, ref.residual_rms)


def _bsw_cases():
    # BSW melts (Baumgaertel, Schausberger & Winter 1990) with 1.3–3 decades of plateau limited by the window or by
    # the transition zone (the families of test_entanglement.py), 0–3 % noise; the three BSW sweeps of
    # test_diagnosis.py; and every sweep of the demo archive that is not corrupted (Rouse and Zimm solutions, the
    # entangled controls, a gel), each fitted with and without the transition term and the solvent
    melts = {"window-1.3": ({"tc_ratio": 1e7, "wmax": 10**2.5}, None),
             "window-2.3": ({"tc_ratio": 1e7, "wmax": 10**3.5}, 0.0),
             "window-3.0": ({"tc_ratio": 1e7, "wmax": 10**4.2}, 0.03),
             "transition-1.3": ({"tc_ratio": 10**3.25, "wmax": 10**5.25}, 0.01),
             "transition-2.0": ({"tc_ratio": 10**3.9, "wmax": 10**5.9}, None),
             "transition-3.0": ({"tc_ratio": 10**4.6, "wmax": 10**6.6}, 0.02)}
    sweeps = {f"melt-{k}": ss.bsw_melt_sweep(i + 1, noise=noise, **kw)[0]
              for i, (k, (kw, noise)) in enumerate(melts.items())}
    sweeps.update({f"bsw-{s}": ss.bsw_sweep(s)[0] for s in (51, 52, 53)})
    sweeps.update({f"demo-{s.name}": s for s in demo_samples() if s.kind != "corrupted"})
    return {f"{name} glassy={g} solvent={v}": (sw.omega, sw.storage, sw.loss, g, v)
            for name, sw in sweeps.items() for g in (True, False) for v in (True, False)}


BSW_CASES = _bsw_cases()


@pytest.mark.parametrize("name", sorted(BSW_CASES))
def test_bsw_fit_reaches_the_reference_optimum(name):
    w, gp, gpp, glassy, solvent = BSW_CASES[name]
    new = fit_bsw(w, gp, gpp, glassy=glassy, solvent=solvent)
    ref = bsw_reference.fit_bsw(w, gp, gpp, glassy=glassy, solvent=solvent)
    assert _same_optimum(new.chi2, ref.chi2, 2 * w.size), (new.chi2, ref.chi2)
    if new.G_N > 0 and ref.G_N > 0 and not (new.at_bound or ref.at_bound):  # an interior optimum: the same fit
        assert new.G_N == pytest.approx(ref.G_N, rel=1e-3) and new.tau_max == pytest.approx(ref.tau_max, rel=1e-3)
        assert new.G_N_ci == pytest.approx(ref.G_N_ci, rel=1e-3)


# --------------------------------------------------------------------------- the variable-projection Jacobians


def _check_jacobian(fun, residuals, theta):
    """The analytic Jacobian of ``fun`` against central differences of the projected residual.

    [r(θ + h e_k) − r(θ − h e_k)]/(2h), h = 1e-6 (1 + |θ_k|): truncation O(h²), rounding O(1e-16/h).
    """
    theta = np.asarray(theta, dtype=float)
    r, jacobian = fun(theta)
    J = jacobian() if callable(jacobian) else jacobian
    J_fd = np.empty_like(J)
    for k in range(theta.size):
        h = 1e-6 * (1.0 + abs(theta[k]))
        e = np.zeros_like(theta)
        e[k] = h
        J_fd[:, k] = (residuals(theta + e) - residuals(theta - e)) / (2 * h)
    np.testing.assert_allclose(r, residuals(theta), rtol=0, atol=1e-12)
    np.testing.assert_allclose(J, J_fd, rtol=0, atol=2e-6 * np.abs(J_fd).max())


@pytest.mark.parametrize("N", [24.4, 2400.5])
@pytest.mark.parametrize("model", ["rouse", "zimm_good", "general_sine", "general_power"])
def test_chain_jacobian_equals_finite_differences(model, N):
    """Eq. (1) of spectrum/lsq.py (Golub & Pereyra 1973, 2003) for the chain residual, at a non-integer N (the
    mixture of neighbouring chains is differentiable there) with G0 and η_s both positive; at N = 2400.5 the
    fastest modes (ω_max τ_p < TAIL_EPS) enter by their low-frequency sums."""
    from tauspec.models.beadspring import _Problem

    w, gp, gpp = _rouse(30, 0.002, 0.01, seed=4)
    form, a_fixed = MODELS[model]
    prob = _Problem(w, gp, gpp, form, a_fixed)
    theta = [np.log(1.3), np.log(N)] + ([1.8] if a_fixed is None else [])
    _check_jacobian(prob.fun, prob.residuals, theta)


def test_modes_jacobian_equals_finite_differences():
    """The same for the Maxwell-mode residual with g, η_s and G_e projected out (modes/problem.py)."""
    from tauspec.modes.fit import _setup
    from tauspec.modes.options import ModesOptions
    from tauspec.modes.problem import _Projected

    sweep = sy.lognormal_sweep(1)
    prob, _, _ = _setup(sweep, ModesOptions())
    vp = _Projected(prob)
    ln_tau = np.log([0.05, 0.5, 5.0])

    def residuals(u):
        return _Projected(prob).solve(u, False)[0]

    _check_jacobian(vp, residuals, ln_tau)


def test_bsw_jacobian_equals_finite_differences():
    """The same for the BSW form (models/bsw.py: its ∂/∂ln τ_max is exact; the check mostly tests that)."""
    from tauspec.models.bsw import _Problem as BSWProblem

    sw = ss.bsw_sweep(51)[0]
    prob = BSWProblem(sw.omega, sw.storage, sw.loss, solvent=True, glassy=True)
    theta = [np.log(30.0), 0.25, 0.6]
    _check_jacobian(prob.fun, prob.residuals, theta)
