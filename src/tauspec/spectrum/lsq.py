r"""Small dense nonlinear least squares: a bounded Levenberg–Marquardt solver and variable projection.

The separable fits of tauspec (Maxwell modes, bead-spring chains) have a few nonlinear parameters θ (log
relaxation times, ln N, a mode exponent) and a few linear ones c ≥ 0 (mode strengths, η_s, G_e).  Variable
projection (Golub & Pereyra 1973, 2003) solves the linear ones exactly inside every evaluation,

    r(θ) = B(θ) c(θ) + b₀(θ) − y,    c(θ) = argmin_{c ≥ 0} ‖B(θ) c + b₀(θ) − y‖²,

and differentiates the projected residual: with F the free (positive) columns of c, P⊥ = I − B_F B_F⁺,

    ∂r/∂θ_k = P⊥ (∂B/∂θ_k c + ∂b₀/∂θ_k) − (B_F⁺)ᵀ (∂B_F/∂θ_k)ᵀ r                       (1)

(Golub & Pereyra 1973, eq. 4.4 with the second term kept, as recommended by Golub & Pereyra 2003, §4).
The outer problem in θ is solved by :func:`levenberg_marquardt`, a bounded Levenberg–Marquardt iteration with
Moré's column scaling and Nielsen's damping update; for problems of 2–15 parameters and ~100 residuals it costs
a few tens of microseconds per iteration, against a few hundred for ``scipy.optimize.least_squares``.

References
----------
Golub, G. H. & Pereyra, V. (1973). SIAM J. Numer. Anal. 10, 413–432.
Golub, G. H. & Pereyra, V. (2003). Inverse Problems 19, R1–R26.
Moré, J. J. (1978). The Levenberg–Marquardt algorithm: implementation and theory. In *Numerical Analysis*
(ed. G. A. Watson), Springer, vol. 630, 105–116.
Nielsen, H. B. (1999). Damping parameter in Marquardt's method. IMM-REP-1999-05, DTU.
Lawson, C. L. & Hanson, R. J. (1974). *Solving Least Squares Problems*, ch. 23 (NNLS).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable

import numpy as np
from scipy.linalg import lapack

__all__ = ["LMResult", "levenberg_marquardt", "nnls_small", "projected_jacobian"]

#: what a residual function returns: r, and ∂r/∂x or a function of no arguments that computes it
Residual = Callable[[np.ndarray], tuple[np.ndarray, "np.ndarray | Callable[[], np.ndarray]"]]

_potrf = lapack.dpotrf
_potrs = lapack.dpotrs


@dataclasses.dataclass(frozen=True)
class LMResult:
    """Outcome of :func:`levenberg_marquardt`: the solution, its residual vector and Jacobian, ½‖r‖²."""

    x: np.ndarray
    r: np.ndarray
    jac: np.ndarray
    cost: float
    nit: int
    nfev: int
    converged: bool


def levenberg_marquardt(
    fun: Residual,
    x0: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    *,
    ftol: float = 1e-12,
    xtol: float = 1e-10,
    gtol: float = 1e-10,
    max_nfev: int = 400,
) -> LMResult:
    """Minimise ½‖r(x)‖² over lower ≤ x ≤ upper; ``fun(x)`` returns (r, ∂r/∂x).

    ∂r/∂x may be given as an array or as a function of no arguments that returns it: the function is called
    only at the points the iteration accepts, so that the trial points it rejects (about three in ten in the
    fits of tauspec) cost a residual only (a lazy Jacobian).

    Each iteration solves the damped Gauss–Newton system (JᵀJ + μ D²) δ = −Jᵀr by a Cholesky factorisation,
    on the variables not held at a bound (a variable at a bound whose gradient points outward is
    held), projects x + δ onto the box and accepts the step when the cost decreases; μ follows Nielsen (1999).
    D holds the largest column norms of J seen so far (Moré 1978).  Stops when the relative decrease of the
    cost is below ``ftol`` (with the model predicting as much), the step is below ``xtol`` relative to x, or
    the scaled projected gradient is below ``gtol``.
    """
    lower = np.asarray(lower, dtype=float)
    upper = np.asarray(upper, dtype=float)
    x = np.minimum(np.maximum(np.asarray(x0, dtype=float), lower), upper)
    r, J = fun(x)
    J = _jacobian(J)
    nfev, nit = 1, 0
    cost = 0.5 * float(r @ r)
    diag = np.zeros(x.size)
    mu, nu = -1.0, 2.0
    converged = False
    while nfev < max_nfev:
        nit += 1
        g = r @ J
        system = _scaled_system(J, g, x, lower, upper, diag)
        if system is None or float(np.abs(system[2]).max()) <= gtol * max(math.sqrt(2.0 * cost), 1e-300):
            converged = True
            break
        free, d, gs, A = system
        if mu < 0:
            mu = 1e-3 * float(A.diagonal().max())
        accepted = False
        xnorm = math.sqrt(float(x @ x))
        while nfev < max_nfev:
            step, mu, nu = _damped_step(A, gs, d, free, x.size, mu, nu)
            if step is None:
                break
            x_new = np.minimum(np.maximum(x + step, lower), upper)
            step = x_new - x
            if math.sqrt(float(step @ step)) <= xtol * (xtol + xnorm):
                converged = True
                break
            x_new, r_new, J_new, cost_new, predicted, used = _trial(fun, x, step, g, J, cost, lower, upper,
                                                                    max_nfev - nfev)
            nfev += used
            if cost_new < cost and predicted > 0:
                rho = (cost - cost_new) / predicted
                mu *= max(1.0 / 3.0, 1.0 - (2.0 * rho - 1.0) ** 3)
                nu = 2.0
                converged = (cost - cost_new) <= ftol * cost and rho > 0.25
                x, r, J, cost = x_new, r_new, _jacobian(J_new), cost_new
                accepted = True
                break
            mu *= nu
            nu *= 2.0
        if converged or not accepted:
            break
    return LMResult(x=x, r=r, jac=J, cost=cost, nit=nit, nfev=nfev, converged=converged)


def _jacobian(J: np.ndarray | Callable[[], np.ndarray]) -> np.ndarray:
    """The Jacobian itself, from an array or from the function that computes it."""
    return J() if callable(J) else J


def _scaled_system(J: np.ndarray, g: np.ndarray, x: np.ndarray, lower: np.ndarray, upper: np.ndarray,
                   diag: np.ndarray) -> tuple[np.ndarray | None, np.ndarray, np.ndarray, np.ndarray] | None:
    """The scaled Gauss–Newton system on the variables not held at a bound, or None when every one is held.

    Returns (free, or None for all; D; D⁻¹g; D⁻¹JᵀJD⁻¹).  ``diag``, the largest column norms so far, is updated.
    """
    at_lo, at_hi = x <= lower, x >= upper
    if at_lo.any() or at_hi.any():  # a variable at a bound whose gradient points outward is held
        free = ~((at_lo & (g > 0)) | (at_hi & (g < 0)))
        if not free.any():
            return None
        Jf, gf = J[:, free], g[free]
        diag[free] = np.maximum(diag[free], np.sqrt((Jf * Jf).sum(axis=0)))
        d = diag[free]
    else:
        free, Jf, gf = None, J, g
        np.maximum(diag, np.sqrt((J * J).sum(axis=0)), out=diag)
        d = diag.copy()
    d[d <= 0] = 1.0
    Jd = Jf / d
    return free, d, gf / d, Jd.T @ Jd


def _damped_step(A: np.ndarray, gs: np.ndarray, d: np.ndarray, free: np.ndarray | None, n: int, mu: float,
                 nu: float) -> tuple[np.ndarray | None, float, float]:
    """The step −D⁻¹(A + μI)⁻¹D⁻¹g in all n variables (0 for held ones), with μ raised until A + μI factors."""
    eye = np.eye(A.shape[0])
    while True:
        R, info = _potrf(A + mu * eye, lower=0, clean=0, overwrite_a=1)
        if info == 0:
            break
        if not np.all(np.isfinite(A)) or mu > 1e300:  # not positive definite in floating point: more damping
            return None, mu, nu
        mu, nu = max(mu * nu, 1e-300), nu * 2.0
    sf = -_potrs(R, gs, lower=0)[0] / d
    if free is None:
        return sf, mu, nu
    step = np.zeros(n)
    step[free] = sf
    return step, mu, nu


def _trial(fun: Residual, x: np.ndarray, step: np.ndarray,
           g: np.ndarray, J: np.ndarray, cost: float, lower: np.ndarray, upper: np.ndarray,
           budget: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, float, float, int]:
    """Evaluate x + δ: (x, r, J or its function, ½‖r‖², the decrease the linear model predicts, evaluations used).

    The cost along the step is a parabola through c(0), c'(0) = gᵀδ and c(1): when its minimum lies well
    inside the step (the Gauss–Newton step overshoots, as on large-residual problems) that point is tried too.
    """
    Js = J @ step
    slope = float(g @ step)
    predicted = -(slope + 0.5 * float(Js @ Js))
    x_new = x + step
    r_new, J_new = fun(x_new)
    cost_new = 0.5 * float(r_new @ r_new)
    curv = cost_new - cost - slope
    if curv > 0 and slope < 0 and budget > 1:
        alpha = -slope / (2.0 * curv)
        if 0.1 <= alpha <= 0.8:
            x_ls = np.minimum(np.maximum(x + alpha * step, lower), upper)
            r_ls, J_ls = fun(x_ls)
            cost_ls = 0.5 * float(r_ls @ r_ls)
            if cost_ls < cost_new:
                s_ls = x_ls - x
                Js = J @ s_ls
                return x_ls, r_ls, J_ls, cost_ls, -(float(g @ s_ls) + 0.5 * float(Js @ Js)), 2
            return x_new, r_new, J_new, cost_new, predicted, 2
    return x_new, r_new, J_new, cost_new, predicted, 1


def _gram_factor(Bf: np.ndarray) -> np.ndarray | None:
    """Upper Cholesky factor of B_FᵀB_F, or None when it is too ill-conditioned to trust (rcond < 1e-12)."""
    R, info = _potrf(Bf.T @ Bf, lower=0, clean=1, overwrite_a=1)
    if info != 0:
        return None
    dg = np.abs(R.diagonal())
    if dg.size and (float(dg.min()) / float(dg.max())) ** 2 < 1e-12:
        return None
    return R


def nnls_small(B: np.ndarray, y: np.ndarray,
               free: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Nonnegative least squares min ‖B c − y‖², c ≥ 0, for a few columns.

    Returns c, its free (positive) set and the upper Cholesky factor of B_FᵀB_F (None when not formed).
    When ``free`` (a guess of the positive set, e.g. the previous evaluation's) gives a positive solution of
    the normal equations that satisfies the optimality (KKT) conditions, that solution is returned without an
    active-set iteration; otherwise scipy's Lawson–Hanson NNLS decides (Lawson & Hanson 1974, ch. 23).
    """
    n = B.shape[1]
    if free is not None and free.any():
        every = bool(free.all())
        Bf = B if every else B[:, free]
        R = _gram_factor(Bf)
        if R is not None:
            cf = _potrs(R, y @ Bf, lower=0)[0]
            if cf.min() > 0:
                if every:
                    return cf, free, R
                c = np.zeros(n)
                c[free] = cf
                grad = (B @ c - y) @ B
                tol = 1e-10 * max(float(np.max(np.abs(y @ B))), 1e-300)
                if grad[~free].min() >= -tol:
                    return c, free.copy(), R
    from scipy.optimize import nnls

    c, _ = nnls(B, y, maxiter=50 * n)
    free = c > 0
    return c, free, (_gram_factor(B[:, free]) if free.any() else None)


def projected_jacobian(B: np.ndarray, c: np.ndarray, free: np.ndarray, r: np.ndarray, dBc: np.ndarray,
                       dBt_r: np.ndarray, factor: np.ndarray | None = None) -> np.ndarray:
    """The variable-projection Jacobian (1) from its pieces.

    Parameters
    ----------
    B : (m, q) the linear columns; c : (q,) their coefficients; free : (q,) bool, c > 0.
    r : (m,) the residual at c.
    dBc : (m, k) the columns ∂B/∂θ_k c + ∂b₀/∂θ_k.
    dBt_r : (q, k) the rows (∂B/∂θ_k)ᵀ r.
    factor : the upper Cholesky factor of B_FᵀB_F when already at hand.

    J = dBc − B_F (B_FᵀB_F)⁻¹ (B_Fᵀ dBc + (∂B_F)ᵀ r), which is (1) written with the normal equations; when
    B_FᵀB_F is too ill-conditioned for them the projection is made with a QR factorisation of B_F.
    """
    Bf = B[:, free]
    if Bf.shape[1] == 0:
        return dBc
    R = factor if factor is not None else _gram_factor(Bf)
    if R is not None:
        return dBc - Bf @ _potrs(R, Bf.T @ dBc + dBt_r[free], lower=0)[0]
    Q, Rq = np.linalg.qr(Bf)
    # P⊥ dBc − (B_F⁺)ᵀ dBt_r with (B_F⁺)ᵀ = Q R⁻ᵀ, B_F = QR
    return dBc - Q @ (Q.T @ dBc) - Q @ np.linalg.solve(Rq.T, dBt_r[free])
