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
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, bool]:
        """Return x, its free set, the Cholesky factor of M on that set (or None) and the fallback flag."""
        M = self.AtA + (strength * strength) * self.LtL
        q = self.Atb
        out = _bpp(M, q, passive)
        if out is not None and self._kkt_ok(M, q, out[0]):
            return out[0], out[2], out[1], False
        x = self._nnls(strength)
        return x, x > 0, None, True

    def _kkt_ok(self, M: np.ndarray, q: np.ndarray, x: np.ndarray) -> bool:
        grad = M @ x - q
        scale = max(float(np.max(np.abs(q))), float(np.max(np.abs(M @ x))), 1e-300)
        tol = 1e-8 * scale
        free = x > 0
        return bool(np.all(x >= 0) and np.all(np.abs(grad[free]) <= tol) and np.all(grad[~free] >= -tol))

    def _nnls(self, strength: float) -> np.ndarray:
        Aaug = np.vstack([self.A, strength * self.L])
        baug = np.concatenate([self.b, np.zeros(self.L.shape[0])])
        x, _ = nnls(Aaug, baug, maxiter=50 * self.n)
        return x

    def dof(self, strength: float, passive: np.ndarray, factor: np.ndarray | None = None) -> float:
        """Trace of the influence matrix A_F (A_FᵀA_F + λ² L_FᵀL_F)⁻¹ A_Fᵀ on the free set F.

        With the upper Cholesky factor R of M_FF, the trace is ‖R⁻ᵀ A_Fᵀ‖²_F.
        """
        F = np.asarray(passive, dtype=bool)
        if not F.any():
            return 0.0
        if factor is None:
            M = self.AtA[F][:, F] + (strength * strength) * self.LtL[F][:, F]
            factor, info = _dpotrf(M, lower=0, clean=1)
            if info != 0:
                return float(np.trace(np.linalg.lstsq(M, self.AtA[F][:, F], rcond=None)[0]))
        Z = _dtrtrs(factor, self.A[:, F].T, lower=0, trans=1)[0]
        return float(np.sum(Z * Z))

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
            x, passive, R, fb[i] = self._solve(strength, guess)
            X[i] = x
            res[i] = np.linalg.norm(self.A @ x - self.b)
            sol[i] = np.linalg.norm(self.L @ x)
            dof[i] = self.dof(strength, passive, R)
        return PathSolution(strength=strengths, x=X, residual_norm=res, solution_norm=sol, dof=dof, fallback=fb)

    @staticmethod
    def join(*parts: PathSolution) -> PathSolution:
        """Concatenate path pieces in the order given."""
        return PathSolution(*(np.concatenate([getattr(p, f.name) for p in parts])
                              for f in dataclasses.fields(PathSolution)))


def _bpp(
    M: np.ndarray, q: np.ndarray, passive: np.ndarray | None, max_iter: int | None = None
) -> tuple[np.ndarray, np.ndarray | None, np.ndarray] | None:
    """Block principal pivoting for min ½xᵀMx − qᵀx, x ≥ 0 (Kim & Park 2011, Algorithm 2 for one column).

    Returns the solution, the upper Cholesky factor of M on its free set
    (reused for the influence matrix) and that free set, or ``None`` when a subproblem is too
    ill-conditioned for a Cholesky solve, so that the caller falls back to NNLS.
    """
    n = len(q)
    F = np.zeros(n, dtype=bool) if passive is None else passive.copy()
    alpha, beta = 3, n + 1
    max_iter = max_iter or 5 * n + 20
    tol_y = 1e-12 * max(float(np.max(np.abs(q))), 1e-300)
    for _ in range(max_iter):
        x = np.zeros(n)
        R = None
        if F.any():
            R, info = _dpotrf(M[F][:, F], lower=0, clean=1, overwrite_a=1)
            if info != 0:
                return None
            d = R.diagonal()
            if (d.min() / d.max()) ** 2 < _RCOND_MIN:
                return None
            x[F] = _dpotrs(R, q[F], lower=0)[0]
        G = ~F
        yG = M[G] @ x - q[G]
        tol_x = 1e-12 * max(float(np.max(np.abs(x))), 1e-300)
        V = F & (x < -tol_x)
        V[G] = yG < -tol_y
        nv = int(V.sum())
        if nv == 0:
            x[x < 0] = 0.0
            return x, R, F
        if nv < beta:
            beta, alpha = nv, 3
            F = F ^ V
        elif alpha >= 1:
            alpha -= 1
            F = F ^ V
        else:
            j = int(np.flatnonzero(V)[-1])
            F[j] = ~F[j]
    return None


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
