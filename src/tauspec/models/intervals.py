"""Intervals of bead-spring fit parameters: Jacobian (Wald) intervals and profile-likelihood intervals."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np
from scipy import optimize, stats

from .beadspring import MODELS, BeadSpringFit, _Problem
from .chains import chain_moduli

__all__ = ["jacobian_intervals", "add_intervals"]


# ------------------------------------------------------------------------------------------- intervals


def _threshold(chi2: float, n: int, k: int, level: float = 0.95) -> float:
    """Profile threshold χ²_min (1 + F(1, n−k; level)/(n−k)) (Bates & Watts 1988, ch. 6)."""
    dof = max(n - k, 1)
    return chi2 * (1.0 + stats.f.ppf(level, 1, dof) / dof)


def _jacobian_se(prob: _Problem, fit: BeadSpringFit) -> dict[str, float]:
    """Wald standard errors of ln G0, ln τ1 and a from the numerical Jacobian of the full model."""
    names = ["lnG0", "lntau", "lnN"] + (["eta"] if prob.solvent else []) + (["a"] if prob.a_fixed is None else [])
    x0 = {"lnG0": math.log(fit.G0), "lntau": math.log(fit.tau1), "lnN": math.log(max(fit.N, 1.0)),
          "eta": fit.eta_s, "a": fit.a}

    def resid(vec):
        d = dict(zip(names, vec))
        a = d.get("a", fit.a)
        gp, gpp = chain_moduli(prob.omega, math.exp(d["lnG0"]), math.exp(d["lntau"]), math.exp(d["lnN"]),
                               a=a, form=prob.form, eta_s=d.get("eta", 0.0))
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
    """Return ``fit`` with Wald intervals from the numerical Jacobian (ln τ_1, ln G0 symmetric; a linear).

    cov = s² (JᵀJ)⁻¹ with s² = χ²/(n − k) (Bates & Watts 1988, ch. 2).  Cheaper and less faithful than
    :func:`add_intervals`; the fit's ``ci_method`` says "jacobian".
    """
    form, a_fixed = MODELS[fit.model]
    prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
    se = _jacobian_se(prob, fit)
    z = float(stats.norm.ppf(0.5 + level / 2))
    a_ci = (fit.a - z * se["a"], fit.a + z * se["a"]) if a_fixed is None else (fit.a, fit.a)
    return dataclasses.replace(fit, tau1_ci=_log_interval(fit.tau1, z * se["lntau"]),
                               G0_ci=_log_interval(fit.G0, z * se["lnG0"]), a_ci=a_ci, ci_method="jacobian")


def _log_interval(x: float, half_width: float) -> tuple[float, float]:
    """(x e^(−h), x e^(h)); an undetermined parameter (h huge or not finite) gets (0, ∞)."""
    if not math.isfinite(half_width) or half_width > 700:
        return 0.0, math.inf
    return x * math.exp(-half_width), x * math.exp(half_width)


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
    {ψ : χ²_p(ψ) ≤ χ²_min (1 + F_{1,n−k}(0.95)/(n−k))} (Bates & Watts 1988, ch. 6).  When a profile
    cannot be followed the Wald interval from the Jacobian is used for that parameter and the fit's
    ``ci_method`` and ``notes`` say so.
    """
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
    failed = [p for p in used_jacobian if p in params]
    if failed:
        notes.append("the profile could not be followed for " + ", ".join(failed)
                     + "; the Jacobian (Wald) interval is given instead")
    if used_jacobian:
        method = "profile likelihood; jacobian for " + ", ".join(used_jacobian)
    else:
        method = "profile likelihood"
    return dataclasses.replace(fit, tau1_ci=out["tau1"], G0_ci=out["G0"], a_ci=out.get("a", (fit.a, fit.a)),
                               ci_method=method, notes=tuple(notes))
