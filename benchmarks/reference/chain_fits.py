"""Reference: the bead-spring chain fits as they were before variable projection (tauspec 0b94b6d).

Kept for the benchmark (``bench_pipeline.py``, ``bench_modes.py``) and for the test that the new fits reach the
same optimum (``tests/test_fit_reference.py``).  Not part of the package.  G0 and η_s by NNLS inside each
evaluation, τ_1, N (and a) by ``scipy.optimize.least_squares`` with finite-difference Jacobians from the two best
of a grid of starts; profile-likelihood intervals by ``brentq`` around nested fits.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np
from scipy import optimize, stats

from tauspec.models.beadspring import MODELS, _make_fit, _terminal_tau_estimate
from tauspec.models.beadspring import _Problem as _NewProblem
from tauspec.models.chainfit import BeadSpringFit
from tauspec.models.chains import N_MAX, TAIL_EPS, mode_positions
from tauspec.models.intervals import _finish, _log_interval, _threshold
from tauspec.spectrum.kernels import modes_moduli

__all__ = ["fit_chain", "fit_all", "add_intervals", "jacobian_intervals"]


def _times_at(tau1: float, n: int, p: np.ndarray, a: float, form: str) -> np.ndarray:
    if form == "sine":
        q = math.pi / (2 * (n + 1))
        return tau1 * (math.sin(q) / np.sin(p * q)) ** a
    return tau1 * p ** (-a)


def _unit_chain(omega: np.ndarray, tau1: float, n: int, a: float, form: str) -> tuple[np.ndarray, np.ndarray]:
    """Unit-G0 moduli of an integer chain; modes far faster than 1/ω_max enter in their low-ω limit."""
    p, mult = mode_positions(n)
    tau = _times_at(tau1, n, p, a, form)
    wmax = float(np.max(omega))
    fast = tau * wmax < TAIL_EPS
    sp, spp = modes_moduli(omega, mult[~fast], tau[~fast])
    if np.any(fast):
        tail, mt = tau[fast], mult[fast]
        sp = sp + omega**2 * float(np.dot(mt, tail**2))
        spp = spp + omega * float(np.dot(mt, tail))
    return sp, spp


def _chain_unit(omega: np.ndarray, tau1: float, N: float, a: float, form: str) -> tuple[np.ndarray, np.ndarray]:
    """Unit-G0 moduli of a chain with a real number of modes N ≥ 1 (mixture of the neighbouring integers)."""
    N = min(max(float(N), 1.0), N_MAX)
    n = math.floor(N)
    f = N - n
    sp, spp = _unit_chain(omega, tau1, n, a, form)
    if f > 1e-12:
        sp1, spp1 = _unit_chain(omega, tau1, n + 1, a, form)
        sp = (1 - f) * sp + f * sp1
        spp = (1 - f) * spp + f * spp1
    return sp, spp


class _Problem(_NewProblem):
    """The problem as before: the same bounds and parameters, the old evaluation (no derivatives)."""

    def linear(self, sp: np.ndarray, spp: np.ndarray, G0: float | None = None) -> tuple[float, float]:
        """Best nonnegative (G0, η_s) for unit moduli; with G0 given only η_s is solved."""
        u = sp / self.gp
        v = spp / self.gpp
        s = self.omega / self.gpp
        if G0 is not None:
            if not self.solvent:
                return G0, 0.0
            # minimise Σ(G0 u − 1)² + Σ(G0 v + η s − 1)² over η ≥ 0
            eta = float(np.dot(s, 1 - G0 * v) / np.dot(s, s))
            return G0, max(eta, 0.0)
        if self.solvent:
            A = np.zeros((self.n, 2))
            A[: len(u), 0] = u
            A[len(u):, 0] = v
            A[len(u):, 1] = s
        else:
            A = np.concatenate([u, v])[:, None]
        x, _ = optimize.nnls(A, np.ones(self.n))
        return float(x[0]), float(x[1]) if self.solvent else 0.0

    def evaluate(self, theta, G0: float | None = None):
        tau1, N, a = self.unpack(theta)
        sp, spp = _chain_unit(self.omega, tau1, N, a, self.form)
        g0, eta = self.linear(sp, spp, G0)
        fp = g0 * sp
        fpp = g0 * spp + eta * self.omega
        r = np.concatenate([fp / self.gp - 1.0, fpp / self.gpp - 1.0])
        return r, g0, eta, fp, fpp

    def residuals(self, theta, G0: float | None = None) -> np.ndarray:
        return self.evaluate(theta, G0)[0]


def _fit_from(prob: _Problem, starts: Sequence[np.ndarray]) -> optimize.OptimizeResult:
    lo, hi = prob.bounds()
    best = None
    for x0 in starts:
        x0 = np.clip(np.asarray(x0, dtype=float), np.array(lo) + 1e-9, np.array(hi) - 1e-9)
        res = optimize.least_squares(prob.residuals, x0, bounds=(lo, hi), method="trf", x_scale=1.0,
                                     diff_step=1e-5, xtol=1e-10, ftol=1e-12, max_nfev=400)
        if best is None or res.cost < best.cost:
            best = res
    return best


def fit_chain(
    omega: np.ndarray,
    storage: np.ndarray,
    loss: np.ndarray,
    model: str,
    *,
    tau_starts: Sequence[float] = (),
    solvent: bool = True,
) -> BeadSpringFit:
    """One model fitted from the two best of the grid of starts by trust-region least squares."""
    if model not in MODELS:
        raise ValueError(f"unknown model {model!r}")
    form, a_fixed = MODELS[model]
    omega = np.asarray(omega, dtype=float)
    storage = np.asarray(storage, dtype=float)
    loss = np.asarray(loss, dtype=float)
    prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
    taus = [t for t in list(_terminal_tau_estimate(omega, storage, loss)) + list(tau_starts)
            if t > 0 and math.isfinite(t)]
    candidates = []
    for t in taus:
        for fac in (0.5, 1.0, 2.0):
            for n_ in np.geomspace(1, N_MAX, 14):
                for a in ((1.5, 2.0) if a_fixed is None else (None,)):
                    th = [math.log(t * fac), math.log(n_)] + ([a] if a is not None else [])
                    th[0] = min(max(th[0], prob.lo_tau), prob.hi_tau)
                    r = prob.residuals(np.array(th))
                    candidates.append((float(r @ r), th))
    candidates.sort(key=lambda c: c[0])
    res = _fit_from(prob, [np.array(c[1]) for c in candidates[:2]])
    return _make_fit(prob, model, res.x)


def fit_all(omega, storage, loss, *, tau_starts: Sequence[float] = (), solvent: bool = True,
            models: Sequence[str] = tuple(MODELS)) -> dict[str, BeadSpringFit]:
    """Fit every model in ``models`` (default: all of :data:`MODELS`); return name -> fit."""
    return {m: fit_chain(omega, storage, loss, m, tau_starts=tau_starts, solvent=solvent) for m in models}


def _jacobian_se(prob: _Problem, fit: BeadSpringFit) -> dict[str, float]:
    """Wald standard errors of ln G0, ln τ1 and a from the numerical Jacobian of the full model."""
    names = ["lnG0", "lntau", "lnN"] + (["eta"] if prob.solvent else []) + (["a"] if prob.a_fixed is None else [])
    x0 = {"lnG0": math.log(fit.G0), "lntau": math.log(fit.tau1), "lnN": math.log(max(fit.N, 1.0)),
          "eta": fit.eta_s, "a": fit.a}

    def resid(vec):
        d = dict(zip(names, vec))
        a = d.get("a", fit.a)
        sp, spp = _chain_unit(prob.omega, math.exp(d["lntau"]), math.exp(d["lnN"]), a, prob.form)
        gp, gpp = math.exp(d["lnG0"]) * sp, math.exp(d["lnG0"]) * spp + d.get("eta", 0.0) * prob.omega
        return np.concatenate([gp / prob.gp - 1, gpp / prob.gpp - 1])

    v0 = np.array([x0[k] for k in names])
    r0 = resid(v0)
    J = np.empty((len(r0), len(names)))
    for j, name in enumerate(names):
        h = 1e-5 if name != "eta" else max(1e-6 * abs(fit.eta_s), 1e-9 * fit.G0 * fit.tau1)
        v = v0.copy()
        v[j] += h
        J[:, j] = (resid(v) - r0) / h
    s2 = float(r0 @ r0) / max(len(r0) - len(names), 1)
    cov = s2 * np.linalg.pinv(J.T @ J)
    se = np.sqrt(np.clip(np.diag(cov), 0, None))
    return dict(zip(names, se))


def jacobian_intervals(fit: BeadSpringFit, omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, *,
                       solvent: bool = True, level: float = 0.95) -> BeadSpringFit:
    """Wald intervals from the finite-difference Jacobian."""
    form, a_fixed = MODELS[fit.model]
    prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
    se = _jacobian_se(prob, fit)
    z = float(stats.norm.ppf(0.5 + level / 2))
    a_ci = (fit.a - z * se["a"], fit.a + z * se["a"]) if a_fixed is None else (fit.a, fit.a)
    return dataclasses.replace(fit, tau1_ci=_log_interval(fit.tau1, z * se["lntau"]),
                               G0_ci=_log_interval(fit.G0, z * se["lnG0"]), a_ci=a_ci, ci_method="jacobian")


def _profile_side(f, x_hat: float, step: float, direction: int, limit: float, max_steps: int = 14):
    """Walk from x_hat until f(x) > 0; return the crossing (brentq) or None when the profile stays inside."""
    x_in = x_hat
    x = x_hat
    s = step
    for _ in range(max_steps):
        x = x_hat + direction * s
        if (direction > 0 and x >= limit) or (direction < 0 and x <= limit):
            x = limit
            if f(x) <= 0:
                return None
            break
        if f(x) > 0:
            break
        x_in = x
        s *= 1.8
    else:
        return None
    return optimize.brentq(f, min(x_in, x), max(x_in, x), xtol=0.01 * step + 1e-12, maxiter=30)


def add_intervals(fit: BeadSpringFit, omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, *, solvent: bool = True,
                  level: float = 0.95, params: Sequence[str] = ("tau1", "G0", "a")) -> BeadSpringFit:
    """Profile-likelihood intervals by brentq around nested least-squares fits."""
    form, a_fixed = MODELS[fit.model]
    prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
    lo, hi = prob.bounds()
    thr = _threshold(fit.chi2, prob.n, fit.n_params, level)
    theta_hat = np.array([math.log(fit.tau1), math.log(max(fit.N, 1.0))] + ([fit.a] if a_fixed is None else []))
    se = _jacobian_se(prob, fit)
    z = stats.norm.ppf(0.5 + level / 2)
    notes = list(fit.notes)
    wald = jacobian_intervals(fit, omega, storage, loss, solvent=solvent, level=level)
    out: dict[str, tuple[float, float]] = {"tau1": wald.tau1_ci, "G0": wald.G0_ci, "a": wald.a_ci}
    used_jacobian = [p for p in ("tau1", "G0", "a") if p not in params and (p != "a" or a_fixed is None)]

    def profile_of(index: int | None):
        """χ²_p − threshold as a function of the fixed value (index into θ, or None for ln G0)."""
        free = [i for i in range(len(theta_hat)) if i != index]
        state = {"x": theta_hat[free].copy()}

        def f(value: float) -> float:
            def r(xf):
                th = theta_hat.copy()
                th[free] = xf
                if index is not None:
                    th[index] = value
                    return prob.residuals(th)
                return prob.residuals(th, G0=math.exp(value))

            flo = np.array(lo)[free] + 1e-9
            fhi = np.array(hi)[free] - 1e-9
            best = optimize.least_squares(r, np.clip(state["x"], flo, fhi), bounds=(flo, fhi), method="trf",
                                          diff_step=1e-5, xtol=1e-8, ftol=1e-9, max_nfev=80)
            state["x"] = best.x
            return 2 * best.cost - thr

        return f

    specs = [("tau1", 0, theta_hat[0], se["lntau"], True, (lo[0], hi[0])),
             ("G0", None, math.log(fit.G0), se["lnG0"], True, (math.log(fit.G0) - 20, math.log(fit.G0) + 20))]
    if a_fixed is None:
        specs.append(("a", 2, fit.a, se["a"], False, (lo[2], hi[2])))
    for name, index, x_hat, s, is_log, (xlo, xhi) in specs:
        if name not in params:
            continue
        step = min(max(s, 1e-3), 1.0)
        try:
            f = profile_of(index)
            left = _profile_side(f, x_hat, step, -1, xlo)
            f = profile_of(index)
            right = _profile_side(f, x_hat, step, +1, xhi)
            lo_v = -math.inf if left is None else left
            hi_v = math.inf if right is None else right
            if left is None or right is None:
                notes.append(f"the {name} profile stays inside the 95 % region up to the search limit: "
                             f"the interval is open on that side")
        except (ValueError, RuntimeError, FloatingPointError):
            lo_v, hi_v = x_hat - z * s, x_hat + z * s
            used_jacobian.append(name)
        if is_log:
            lo_v, hi_v = (math.exp(v) if math.isfinite(v) else (0.0 if v < 0 else math.inf) for v in (lo_v, hi_v))
        out[name] = (lo_v, hi_v)
    return _finish(fit, out, notes, used_jacobian, params)
