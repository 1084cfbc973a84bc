r"""Tikhonov-regularized nonnegative least squares along a path of strengths.

The problem, for one strength λ, is

    minimize  ‖A x − b‖² + λ² ‖L x‖²   subject to  x ≥ 0,                    (1)

with A the (dimensionless, weighted) kernel, b the data and L a
regularization operator.  Two solvers give the same optimum:

* :class:`TikhonovPath` — the fast exact path: block principal pivoting on the
  normal equations (M = AᵀA + λ²LᵀL, q = Aᵀb), warm-started from the previous
  strength's passive set, with a KKT optimality check and a fallback to
  Lawson–Hanson NNLS on the augmented system where the normal equations are
  too ill-conditioned (tiny λ).
* :func:`solve_cvxpy` — the general convex problem with bounds, through cvxpy
  with λ as a DPP parameter (compiled once per problem).

References
----------
Kim, J. & Park, H. (2011). Fast nonnegative matrix factorization: an
active-set-like method and comparisons. SIAM J. Sci. Comput. 33:3261–3281.
Lawson, C. L. & Hanson, R. J. (1974). *Solving Least Squares Problems*, ch. 23.
Golub, G. H., Heath, M. & Wahba, G. (1979). Generalized cross-validation as a
method for choosing a good ridge parameter. Technometrics 21:215–223.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np
from scipy.linalg import lapack
from scipy.optimize import nnls

__all__ = ["TikhonovPath", "PathSolution", "second_difference", "solve_cvxpy", "objective"]


# Reciprocal condition number (of M_FF, estimated from its Cholesky factor)
# below which the normal equations are not trusted and NNLS is used instead.
_RCOND_MIN = 1e-11

_dpotrf = lapack.dpotrf
_dpotrs = lapack.dpotrs
_dtrtrs = lapack.dtrtrs
_dpotri = lapack.dpotri
BORDER = True


def second_difference(n: int, spacing: float = 1.0) -> np.ndarray:
    """Return the (n−2)×n second-difference operator scaled as ∫ (h'')² du.

    Row i is (1, −2, 1)/Δ² · √Δ, so that ‖L h‖² approximates ∫ (d²h/du²)² du on
    a uniform grid of spacing Δ in u = ln τ.
    """
    if n < 3:
        return np.zeros((0, n))
    D = np.zeros((n - 2, n))
    i = np.arange(n - 2)
    D[i, i] = 1.0
    D[i, i + 1] = -2.0
    D[i, i + 2] = 1.0
    return D * (np.sqrt(spacing) / spacing**2)


def objective(A: np.ndarray, b: np.ndarray, L: np.ndarray, x: np.ndarray, strength: float) -> float:
    """Return ‖A x − b‖² + λ² ‖L x‖², the objective of problem (1)."""
    r = A @ x - b
    s = L @ x
    return float(r @ r + strength * strength * (s @ s))


@dataclasses.dataclass(frozen=True)
class PathSolution:
    """Solutions of problem (1) along a path of strengths.

    Attributes
    ----------
    strength : ndarray, shape (k,)
        The strengths λ, in the order given.
    x : ndarray, shape (k, n)
        The minimizers.
    residual_norm, solution_norm : ndarray, shape (k,)
        ‖A x − b‖ and ‖L x‖.
    dof : ndarray, shape (k,)
        Effective number of parameters, trace of the influence matrix on the
        free (positive) set; used by GCV.
    fallback : ndarray of bool, shape (k,)
        Where the NNLS fallback was used instead of the normal equations.
    """

    strength: np.ndarray
    x: np.ndarray
    residual_norm: np.ndarray
    solution_norm: np.ndarray
    dof: np.ndarray
    fallback: np.ndarray


class TikhonovPath:
    """Problem (1) for fixed A, b, L, solved quickly for many strengths.

    The Gram matrices AᵀA, LᵀL and Aᵀb are formed once.

    Parameters
    ----------
    A : ndarray, shape (m, n)
    b : ndarray, shape (m,)
    L : ndarray, shape (p, n)
    """

    def __init__(self, A: np.ndarray, b: np.ndarray, L: np.ndarray):
        self.A = np.ascontiguousarray(A, dtype=float)
        self.b = np.ascontiguousarray(b, dtype=float)
        self.L = np.ascontiguousarray(L, dtype=float)
        self.AtA = self.A.T @ self.A
        self.LtL = self.L.T @ self.L
        self.Atb = self.A.T @ self.b
        self.n = self.A.shape[1]

    # ------------------------------------------------------------------ one strength
    def solve(self, strength: float, passive: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, bool]:
        """Solve problem (1) at strength ``strength``.

        Parameters
        ----------
        strength : float
            Regularization strength λ ≥ 0.
        passive : ndarray of bool, optional
            Initial guess of the set where x > 0 (warm start).

        Returns
        -------
        x : ndarray
            The minimizer.
        passive : ndarray of bool
            The set where x > 0.
        fallback : bool
            True when NNLS on the augmented system was used.
        """
        x, free, _, fallback = self._solve(strength, passive)
        return x, free, fallback

    def _solve(
        self, strength: float, passive: np.ndarray | None
    ) -> tuple[np.ndarray, np.ndarray, tuple[np.ndarray, np.ndarray] | None, bool]:
        """Return x, its free set, the factor (R, order) of M on the free set or None, and the fallback flag."""
        M = self.AtA + (strength * strength) * self.LtL
        q = self.Atb
        out = _bpp(M, q, passive)
        if out is not None and self._kkt_ok(q, out[0], out[1]):
            x, _, R, order = out
            free = np.zeros(self.n, dtype=bool)
            free[order] = True
            return x, free, (R, order), False
        x = self._nnls(strength)
        return x, x > 0, None, True

    @staticmethod
    def _kkt_ok(q: np.ndarray, x: np.ndarray, grad: np.ndarray) -> bool:
        """The optimality (KKT) conditions of problem (1) at x ≥ 0, with grad = M x − q: zero on x > 0, ≥ 0 else."""
        tol = 1e-8 * max(float(np.abs(q).max()), float(np.abs(grad + q).max()), 1e-300)
        return bool(np.where(x > 0, np.abs(grad) <= tol, grad >= -tol).all())

    def _nnls(self, strength: float) -> np.ndarray:
        Aaug = np.vstack([self.A, strength * self.L])
        baug = np.concatenate([self.b, np.zeros(self.L.shape[0])])
        x, _ = nnls(Aaug, baug, maxiter=50 * self.n)
        return x

    def dof(self, strength: float, passive: np.ndarray,
            factor: tuple[np.ndarray, np.ndarray] | None = None) -> float:
        """Trace of the influence matrix A_F (A_FᵀA_F + λ² L_FᵀL_F)⁻¹ A_Fᵀ on the free set F.

        With M_FF = A_FᵀA_F + λ² L_FᵀL_F the trace is tr(M_FF⁻¹ A_FᵀA_F) = |F| − λ² tr(M_FF⁻¹ L_FᵀL_F), and
        M_FF⁻¹ comes from its Cholesky factor R in one LAPACK call (dpotri, 2|F|³/3 flops) instead of the
        |F|² m of the trace ‖R⁻ᵀ A_Fᵀ‖²_F.  ``factor`` is (R, order): the factor of M on the indices ``order``
        (in that order), as the path solver leaves it.
        """
        F = np.asarray(passive, dtype=bool)
        if not F.any():
            return 0.0
        if factor is None:
            order = np.flatnonzero(F)
            M = self.AtA[np.ix_(order, order)] + (strength * strength) * self.LtL[np.ix_(order, order)]
            R, info = _dpotrf(M, lower=0, clean=1)
            if info != 0:
                return float(np.trace(np.linalg.lstsq(M, self.AtA[np.ix_(order, order)], rcond=None)[0]))
        else:
            R, order = factor
        Z, info = _dpotri(R, lower=0)  # the upper triangle of M_FF⁻¹ (the lower one stays zero)
        if info != 0:
            return math.nan
        LF = self.LtL.take(order, 0).take(order, 1)
        total = 2.0 * float(np.einsum("ij,ij->", Z, LF)) - float(Z.diagonal() @ LF.diagonal())
        return float(order.size - strength * strength * total)

    def floor(self) -> float:
        """Residual norm of the unregularized nonnegative fit, the least any strength can reach.

        The unregularized NNLS solution is sparse by itself (Jakeš 1995).
        """
        x, rnorm = nnls(self.A, self.b, maxiter=50 * self.n)
        return float(rnorm)

    # ------------------------------------------------------------------ the path
    def path(self, strengths: Sequence[float], passive: np.ndarray | None = None) -> PathSolution:
        """Solve problem (1) for every strength, warm-starting each from the previous one."""
        strengths = np.asarray(strengths, dtype=float)
        k = len(strengths)
        X = np.zeros((k, self.n))
        res = np.zeros(k)
        sol = np.zeros(k)
        dof = np.zeros(k)
        fb = np.zeros(k, dtype=bool)
        for i, strength in enumerate(strengths):
            guess = passive
            if i >= 2:  # the free set drifts smoothly along the path: extrapolate x linearly in ln λ
                guess = (2 * X[i - 1] - X[i - 2]) > 0
            x, passive, factor, fb[i] = self._solve(strength, guess)
            X[i] = x
            r = self.A @ x - self.b
            lx = self.L @ x
            res[i] = math.sqrt(float(r @ r))
            sol[i] = math.sqrt(float(lx @ lx))
            dof[i] = self.dof(strength, passive, factor)
        return PathSolution(strength=strengths, x=X, residual_norm=res, solution_norm=sol, dof=dof, fallback=fb)

    @staticmethod
    def join(*parts: PathSolution) -> PathSolution:
        """Concatenate path pieces in the order given."""
        return PathSolution(*(np.concatenate([getattr(p, f.name) for p in parts])
                              for f in dataclasses.fields(PathSolution)))


def _bpp(
    M: np.ndarray, q: np.ndarray, passive: np.ndarray | None, max_iter: int | None = None
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None:
    """Block principal pivoting for min ½xᵀMx − qᵀx, x ≥ 0 (Kim & Park 2011, Algorithm 2 for one column).

    Returns the solution, its gradient M x − q, the upper Cholesky factor of M on the free set and the order
    of the free indices in that factor (reused for the influence matrix), or ``None`` when a subproblem is too
    ill-conditioned for a Cholesky solve, so that the caller falls back to NNLS.

    When an exchange only adds indices to the free set (the common case along a path of strengths, where the
    support of x grows by a few grid points), the factor is bordered instead of recomputed: with R the factor
    on F and the new indices N, R₁₂ = R⁻ᵀ M_FN and R₂₂ = chol(M_NN − R₁₂ᵀR₁₂), |F|²|N| flops instead of
    (|F| + |N|)³/3 (Golub & Van Loan 2013, §4.2, from memory).  Any other exchange refactors.
    """
    n = len(q)
    F = np.zeros(n, dtype=bool) if passive is None else passive.copy()
    alpha, beta = 3, n + 1
    max_iter = max_iter or 5 * n + 20
    tol_y = 1e-12 * max(float(np.abs(q).max()), 1e-300)
    order = np.flatnonzero(F)
    R = _cholesky(M, order)
    if R is None:
        return None
    for _ in range(max_iter):
        x = np.zeros(n)
        if order.size:
            xf = _dpotrs(R, q.take(order), lower=0)[0]
            x[order] = xf
            tol_x = 1e-12 * max(float(np.abs(xf).max()), 1e-300)
        else:
            tol_x = 1e-300
        grad = M @ x - q
        V = np.where(F, x < -tol_x, grad < -tol_y)
        nv = int(np.count_nonzero(V))
        if nv == 0:
            x[x < 0] = 0.0
            return x, grad, R, order
        if nv < beta:
            beta, alpha = nv, 3
        elif alpha >= 1:
            alpha -= 1
        else:
            j = int(np.flatnonzero(V)[-1])
            V = np.zeros(n, dtype=bool)
            V[j] = True
        added = V & ~F
        F = F ^ V
        if (V & ~added).any() or R.size == 0 or not BORDER:
            order = np.flatnonzero(F)
            R = _cholesky(M, order)
        else:
            new = np.flatnonzero(added)
            R = _bordered(M, R, order, new)
            order = np.concatenate([order, new])
        if R is None:
            return None
    return None


def _well_conditioned(R: np.ndarray) -> bool:
    """The reciprocal condition number of RᵀR, estimated from the (positive) diagonal of R, is above _RCOND_MIN."""
    d = R.diagonal()
    return not d.size or (d.min() / d.max()) ** 2 >= _RCOND_MIN


def _cholesky(M: np.ndarray, order: np.ndarray) -> np.ndarray | None:
    """Upper Cholesky factor of M on the indices ``order``; None when it fails or is too ill-conditioned."""
    if order.size == 0:
        return np.zeros((0, 0))
    R, info = _dpotrf(M.take(order, 0).take(order, 1), lower=0, clean=1, overwrite_a=1)
    return R if info == 0 and _well_conditioned(R) else None


def _bordered(M: np.ndarray, R: np.ndarray, order: np.ndarray, new: np.ndarray) -> np.ndarray | None:
    """The factor on ``order`` + ``new`` from the factor R on ``order``: [[R, R₁₂], [0, R₂₂]]."""
    Mn = M.take(new, 1)
    R12 = _dtrtrs(R, Mn.take(order, 0), lower=0, trans=1)[0]
    R22, info = _dpotrf(Mn.take(new, 0) - R12.T @ R12, lower=0, clean=1, overwrite_a=1)
    if info != 0:
        return _cholesky(M, np.concatenate([order, new]))
    k = order.size
    out = np.zeros((k + new.size, k + new.size))
    out[:k, :k] = R
    out[:k, k:] = R12
    out[k:, k:] = R22
    return out if _well_conditioned(out) else None


def solve_cvxpy(
    A: np.ndarray,
    b: np.ndarray,
    L: np.ndarray,
    strengths: Sequence[float],
    *,
    lower: np.ndarray | None = None,
    upper: np.ndarray | None = None,
    solver: str = "CLARABEL",
) -> np.ndarray:
    """Solve problem (1) with bounds lower ≤ x ≤ upper through cvxpy, for each strength.

    The problem is compiled once with λ as a DPP parameter and re-solved for
    each strength (``warm_start=False``: warm starts were found slower and less
    accurate with the interior-point solver).  The problem should already be
    dimensionless (the conic solvers are scale-sensitive).

    Returns
    -------
    ndarray, shape (len(strengths), n)
    """
    import cvxpy as cp  # heavy: imported only here

    n = A.shape[1]
    lo = np.zeros(n) if lower is None else np.asarray(lower, dtype=float)
    x = cp.Variable(n)
    strength = cp.Parameter(nonneg=True)
    cons = []
    finite_lo = np.isfinite(lo)
    if finite_lo.any():
        cons.append(x[np.flatnonzero(finite_lo)] >= lo[finite_lo])
    if upper is not None:
        up = np.asarray(upper, dtype=float)
        finite_up = np.isfinite(up)
        if finite_up.any():
            cons.append(x[np.flatnonzero(finite_up)] <= up[finite_up])
    prob = cp.Problem(cp.Minimize(cp.sum_squares(A @ x - b) + cp.sum_squares(strength * (L @ x))), cons)
    out = np.zeros((len(strengths), n))
    for i, s in enumerate(strengths):
        strength.value = float(s)
        prob.solve(solver=solver, warm_start=False)
        if x.value is None or prob.status not in ("optimal", "optimal_inaccurate"):
            from ..errors import TauspecError

            raise TauspecError(f"the convex solver failed at strength {s:.3g} (status {prob.status})")
        out[i] = np.clip(x.value, lo, None) if upper is None else np.clip(x.value, lo, upper)
    return out
