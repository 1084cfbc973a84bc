"""Intervals of bead-spring fit parameters: Jacobian (Wald) intervals and profile-likelihood intervals.

The Wald intervals use the analytic Jacobian of the full model in (ln G0, ln τ_1, ln N[, η_s][, a]); the
profile-likelihood intervals follow each profile by a 1-D scan that refits the other parameters with the
variable-projection solver of :mod:`tauspec.models.beadspring`, starting at the Wald end point
(:func:`_profile_side`).

References
----------
Bates, D. M. & Watts, D. G. (1988). *Nonlinear Regression Analysis and Its Applications*, Wiley, ch. 2
(Wald intervals) and ch. 6 (profile-likelihood intervals, the signed-root profile t).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Sequence

import numpy as np
from scipy import stats

from ..spectrum.lsq import levenberg_marquardt
from ..spectrum.threads import limited
from .beadspring import MODELS, _Problem
from .chainfit import BeadSpringFit
from .chains import N_MAX

__all__ = ["jacobian_intervals", "add_intervals"]


def _threshold(chi2: float, n: int, k: int, level: float = 0.95) -> float:
    """Profile threshold χ²_min (1 + F(1, n−k; level)/(n−k)) (Bates & Watts 1988, ch. 6)."""
    dof = max(n - k, 1)
    return chi2 * (1.0 + stats.f.ppf(level, 1, dof) / dof)


def _problem_of(fit: BeadSpringFit, omega, storage, loss, solvent: bool) -> _Problem:
    form, a_fixed = MODELS[fit.model]
    return _Problem(omega, storage, loss, form, a_fixed, solvent)


def _theta_of(prob: _Problem, fit: BeadSpringFit) -> np.ndarray:
    return np.array([math.log(fit.tau1), math.log(max(fit.N, 1.0))] + ([fit.a] if prob.a_fixed is None else []))


def _full_jacobian(prob: _Problem, fit: BeadSpringFit) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Residual and analytic Jacobian of the full model in (ln G0, ln τ1, ln N[, η_s][, a]) at the fit."""
    theta = _theta_of(prob, fit)
    u, du = prob.columns(theta, True)
    r = fit.G0 * u + fit.eta_s * prob.s - 1.0
    names = ["lnG0", "lntau", "lnN"] + (["eta"] if prob.solvent else []) + (["a"] if prob.a_fixed is None else [])
    dn = du[:, 1] if fit.N < N_MAX else np.zeros(prob.n)  # N held at its upper bound has no spread
    cols = [fit.G0 * u, fit.G0 * du[:, 0], fit.G0 * dn]
    if prob.solvent:
        cols.append(prob.s)
    if prob.a_fixed is None:
        cols.append(fit.G0 * du[:, 2])
    return names, r, np.column_stack(cols)


def _wald(prob: _Problem, fit: BeadSpringFit) -> tuple[dict[str, float], dict[str, int], np.ndarray]:
    """Wald standard errors, parameter indices and covariance s²(JᵀJ)⁺ (Bates & Watts 1988, ch. 2)."""
    names, r, J = _full_jacobian(prob, fit)
    s2 = float(r @ r) / max(len(r) - len(names), 1)
    cov = s2 * np.linalg.pinv(J.T @ J)
    se = np.sqrt(np.clip(np.diag(cov), 0, None))
    return dict(zip(names, se)), {k: i for i, k in enumerate(names)}, cov


@limited
def jacobian_intervals(fit: BeadSpringFit, omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, *,
                       solvent: bool = True, level: float = 0.95) -> BeadSpringFit:
    """Return ``fit`` with Wald intervals from the analytic Jacobian (ln τ_1, ln G0 symmetric; a linear).

    cov = s² (JᵀJ)⁻¹ with s² = χ²/(n − k) (Bates & Watts 1988, ch. 2).  Cheaper and less faithful than
    :func:`add_intervals`; the fit's ``ci_method`` says "jacobian".
    """
    prob = _problem_of(fit, omega, storage, loss, solvent)
    se, _, _ = _wald(prob, fit)
    z = float(stats.norm.ppf(0.5 + level / 2))
    a_ci = (fit.a - z * se["a"], fit.a + z * se["a"]) if prob.a_fixed is None else (fit.a, fit.a)
    return dataclasses.replace(fit, tau1_ci=_log_interval(fit.tau1, z * se["lntau"]),
                               G0_ci=_log_interval(fit.G0, z * se["lnG0"]), a_ci=a_ci, ci_method="jacobian")


def _log_interval(x: float, half_width: float) -> tuple[float, float]:
    """(x e^(−h), x e^(h)); an undetermined parameter (h huge or not finite) gets (0, ∞)."""
    if not math.isfinite(half_width) or half_width > 700:
        return 0.0, math.inf
    return x * math.exp(-half_width), x * math.exp(half_width)


class _Profile:
    """χ²_p(ψ): the model refitted with one parameter ψ held (ln τ_1, a, or ln G0), warm-started.

    The other parameters start from the last solution moved along the Wald regression line
    x_other ≈ x̂_other + Σ_oψ/Σ_ψψ (ψ − ψ̂) (the linear approximation of the profile trace).
    """

    def __init__(self, prob: _Problem, theta_hat: np.ndarray, ln_g0: float, held: str,
                 cov: np.ndarray, index: dict[str, int]):
        self.prob = prob
        self.held = held
        self.theta_hat = theta_hat
        lo, hi = prob.bounds()
        pos = {"tau1": 0, "a": 2}.get(held)  # index into θ of the held parameter; None for G0
        self.pos = pos
        self.free = [i for i in range(len(theta_hat)) if i != pos]
        self.lo = np.array(lo)[self.free] + 1e-9
        self.hi = np.array(hi)[self.free] - 1e-9
        # regression of the free θ on ψ from the Wald covariance (names: lntau, lnN, a)
        theta_names = ["lntau", "lnN", "a"][: len(theta_hat)]
        psi_name = {"tau1": "lntau", "a": "a", "G0": "lnG0"}[held]
        k = index[psi_name]
        var = cov[k, k]
        self.slope = np.array([cov[index[theta_names[i]], k] / var if var > 0 else 0.0 for i in self.free])
        self.psi_hat = theta_hat[pos] if pos is not None else ln_g0
        self.last = (self.psi_hat, theta_hat[self.free].copy())

    def chi2(self, psi: float) -> float:
        psi0, x0 = self.last
        start = np.clip(x0 + self.slope * (psi - psi0), self.lo, self.hi)
        theta = self.theta_hat.copy()
        G0 = None
        if self.pos is not None:
            theta[self.pos] = psi
        else:
            G0 = math.exp(psi)

        def fun(xf: np.ndarray) -> tuple[np.ndarray, Callable[[], np.ndarray]]:
            theta[self.free] = xf
            r, jacobian = self.prob.fun(theta, G0)
            return r, lambda: jacobian()[:, self.free]

        res = levenberg_marquardt(fun, start, self.lo, self.hi, ftol=1e-10, xtol=1e-9, gtol=1e-9, max_nfev=100)
        if not np.all(np.isfinite(res.x)):
            raise FloatingPointError("the profile fit diverged")
        self.last = (psi, res.x.copy())
        return 2.0 * res.cost


def _profile_side(chi2_p, x_hat: float, chi2_min: float, thr: float, first: float, direction: int,
                  limit: float, xtol: float, max_evals: int = 16) -> float | None:
    """The crossing of χ²_p with ``thr`` on one side of x̂, or None when the profile stays inside to ``limit``.

    Works on the signed root δ(x) = √(χ²_p(x) − χ²_min), which is linear in x when the profile is quadratic:
    the first point is the Wald end point ``first``; while δ is below its target √(thr − χ²_min) the line
    through (x̂, 0) and the last point is extrapolated (at most ×3 per step), and once the crossing is
    bracketed the bracket is narrowed by linear interpolation of δ to ``xtol``.  A point whose predicted
    distance to the crossing is below ``xtol`` is accepted at once, so a profile that is quadratic within
    tolerance costs one refit: the Wald end point, confirmed.
    """
    target = math.sqrt(max(thr - chi2_min, 0.0))
    x_in, d_in = x_hat, 0.0
    x_out = d_out = None
    x = first
    for _ in range(max_evals):
        if (x - limit) * direction >= 0:
            x = limit
        d = math.sqrt(max(chi2_p(x) - chi2_min, 0.0))
        if d < target:
            if x == limit:
                return None
            x_in, d_in = x, d
        else:
            x_out, d_out = x, d
        if x_out is None:
            slope = (d_in - 0.0) / (x_in - x_hat) if x_in != x_hat else 0.0
            if slope > 0 and abs((target - d_in) / slope) <= xtol:
                return x_in
            jump = (target - d_in) / slope if slope > 0 else 3.0 * abs(x_in - x_hat)
            x = x_in + direction * min(abs(jump), 2.0 * abs(x_in - x_hat))
            continue
        # bracketed: [x_in, x_out]
        slope = (d_out - d_in) / (x_out - x_in)
        x_new = x_in + (target - d_in) / slope if slope != 0 else 0.5 * (x_in + x_out)
        if abs(x_new - x) <= xtol or abs(x_out - x_in) <= xtol:
            return x_new
        x = x_new
    raise RuntimeError("the profile crossing was not found")


@limited
def add_intervals(
    fit: BeadSpringFit,
    omega: np.ndarray,
    storage: np.ndarray,
    loss: np.ndarray,
    *,
    solvent: bool = True,
    level: float = 0.95,
    params: Sequence[str] = ("tau1", "G0", "a"),
) -> BeadSpringFit:
    """Return ``fit`` with 95 % profile-likelihood intervals for τ_1, G0 and (when fitted) a.

    Only the parameters named in ``params`` are profiled; the others keep their Jacobian (Wald) intervals.

    The profile χ²_p(ψ) minimises over the other parameters at fixed ψ; the interval is
    {ψ : χ²_p(ψ) ≤ χ²_min (1 + F_{1,n−k}(0.95)/(n−k))} (Bates & Watts 1988, ch. 6).  Each end is found by a
    1-D scan of the profile (:func:`_profile_side`) that starts at the Wald end point and refits with the
    variable-projection solver; where the profile is quadratic within the tolerance (1 % of the standard
    error) the Wald end point is confirmed by that one refit.  When a profile cannot be followed the Wald
    interval is used for that parameter and the fit's ``ci_method`` and ``notes`` say so.
    """
    prob = _problem_of(fit, omega, storage, loss, solvent)
    a_fixed = prob.a_fixed
    lo, hi = prob.bounds()
    thr = _threshold(fit.chi2, prob.n, fit.n_params, level)
    theta_hat = _theta_of(prob, fit)
    se, index, cov = _wald(prob, fit)
    z = stats.norm.ppf(0.5 + level / 2)
    notes = list(fit.notes)
    wald = jacobian_intervals(fit, omega, storage, loss, solvent=solvent, level=level)
    out: dict[str, tuple[float, float]] = {"tau1": wald.tau1_ci, "G0": wald.G0_ci, "a": wald.a_ci}
    used_jacobian = [p for p in ("tau1", "G0", "a") if p not in params and (p != "a" or a_fixed is None)]
    ln_g0 = math.log(fit.G0)
    specs = [("tau1", theta_hat[0], se["lntau"], True, (lo[0], hi[0])),
             ("G0", ln_g0, se["lnG0"], True, (ln_g0 - 20, ln_g0 + 20))]
    if a_fixed is None:
        specs.append(("a", fit.a, se["a"], False, (lo[2], hi[2])))
    for name, x_hat, s, is_log, (xlo, xhi) in specs:
        if name not in params:
            continue
        step = min(max(s, 1e-3), 1.0)
        half = z * s if math.isfinite(s) and s > 0 else step
        try:
            sides = []
            for direction, limit in ((-1, xlo), (+1, xhi)):
                prof = _Profile(prob, theta_hat, ln_g0, name, cov, index)
                sides.append(_profile_side(prof.chi2, x_hat, fit.chi2, thr, x_hat + direction * half, direction,
                                           limit, 0.01 * step + 1e-12))
            left, right = sides
            lo_v = -math.inf if left is None else left
            hi_v = math.inf if right is None else right
            if left is None or right is None:
                notes.append(f"the {name} profile stays inside the 95 % region up to the search limit: "
                             f"the interval is open on that side")
        except (ValueError, RuntimeError, FloatingPointError, np.linalg.LinAlgError):
            lo_v, hi_v = x_hat - z * s, x_hat + z * s
            used_jacobian.append(name)
        if is_log:
            lo_v, hi_v = (math.exp(v) if math.isfinite(v) else (0.0 if v < 0 else math.inf) for v in (lo_v, hi_v))
        out[name] = (lo_v, hi_v)
    return _finish(fit, out, notes, used_jacobian, params)


def _finish(fit: BeadSpringFit, out: dict[str, tuple[float, float]], notes: list[str], used_jacobian: list[str],
            params: Sequence[str]) -> BeadSpringFit:
    """``fit`` with the intervals ``out``, saying which parameters fell back to their Wald interval."""
    failed = [p for p in used_jacobian if p in params]
    if failed:
        notes = notes + ["the profile could not be followed for " + ", ".join(failed)
                         + "; the Jacobian (Wald) interval is given instead"]
    if used_jacobian:
        method = "profile likelihood; jacobian for " + ", ".join(used_jacobian)
    else:
        method = "profile likelihood"
    return dataclasses.replace(fit, tau1_ci=out["tau1"], G0_ci=out["G0"], a_ci=out.get("a", (fit.a, fit.a)),
                               ci_method=method, notes=tuple(notes))
