r"""Tikhonov-regularized nonnegative least squares along a path of strengths.

The problem, for one strength λ, is

    minimize  ‖A x − b‖² + λ² ‖L x‖²   subject to  x ≥ 0,                    (1)

with A the (dimensionless, weighted) kernel, b the data and L a
regularization operator.  Two solvers give the same optimum:

* :class:`TikhonovPath` — the fast exact path: block principal pivoting on the
  normal equations (M = AᵀA + λ²LᵀL, q = Aᵀb), warm-started from the previous
  strength's passive set, with a KKT optimality check and a fallback to a
  Lawson–Hanson active set on the augmented system [A; λL] (QR subproblems,
  :mod:`tauspec.spectrum.pivoting`) where the normal equations are too
  ill-conditioned (tiny λ).
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

from .pivoting import AugmentedSubproblem, active_set, block_pivoting

__all__ = ["TikhonovPath", "PathSolution", "second_difference", "solve_cvxpy", "objective"]


_dpotrf = lapack.dpotrf
_dpotri = lapack.dpotri


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
        self._stacked: np.ndarray | None = None  # [Aᵀ Lᵀ], for the augmented subproblems (built on first use)
        self._rhs = np.zeros(0)

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
            True when the augmented system [A; λL] was solved (by QR, or by NNLS) instead of the normal equations.
        """
        x, free, _, fallback = self._solve(strength, passive)
        return x, free, fallback

    def _solve(
        self, strength: float, passive: np.ndarray | None, augmented: bool = False
    ) -> tuple[np.ndarray, np.ndarray, tuple[np.ndarray, np.ndarray] | None, bool]:
        """Return x, its free set, the factor (R, order) of M on the free set or None, and the fallback flag.

        Block principal pivoting on the normal equations first (unless ``augmented``), then a warm-started
        Lawson–Hanson active set with its subproblems solved by QR on the augmented columns [A_F; λ L_F], then
        scipy's NNLS on the augmented system: the first that ends at a point satisfying the optimality
        conditions is taken.
        """
        q = self.Atb
        if not augmented:
            out = block_pivoting(self.AtA + (strength * strength) * self.LtL, q, passive)
            if out is not None and self._kkt_ok(q, out[0], out[1]):
                return self._found(out, False)
        if self._stacked is None:
            self._stacked = np.ascontiguousarray(np.hstack([self.A.T, self.L.T]))
            self._rhs = np.concatenate([self.b, np.zeros(self.L.shape[0])])
        out = active_set(q, passive, AugmentedSubproblem(self._stacked, self._rhs, self.A.shape[0], strength))
        if out is not None and self._kkt_ok(q, out[0], out[1]):
            return self._found(out, True)
        x = self._nnls(strength)
        return x, x > 0, None, True

    def _found(self, out: tuple[np.ndarray, ...], fallback: bool
               ) -> tuple[np.ndarray, np.ndarray, tuple[np.ndarray, np.ndarray], bool]:
        x, _, R, order = out
        free = np.zeros(self.n, dtype=bool)
        free[order] = True
        return x, free, (R, order), fallback

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
        dof = np.zeros(k)
        fb = np.zeros(k, dtype=bool)
        below = -math.inf  # the largest strength at which the normal equations failed: below it, go augmented
        for i, strength in enumerate(strengths):
            guess = passive
            if i >= 2:
                guess = _extrapolated(X[i - 1], X[i - 2], passive)
            x, passive, factor, fb[i] = self._solve(strength, guess, augmented=strength <= below)
            if fb[i]:
                below = max(below, strength)
            X[i] = x
            dof[i] = self.dof(strength, passive, factor)
        r = X @ self.A.T
        r -= self.b
        lx = X @ self.L.T
        res = np.sqrt(np.einsum("ij,ij->i", r, r))
        sol = np.sqrt(np.einsum("ij,ij->i", lx, lx))
        return PathSolution(strength=strengths, x=X, residual_norm=res, solution_norm=sol, dof=dof, fallback=fb)

    @staticmethod
    def join(*parts: PathSolution) -> PathSolution:
        """Concatenate path pieces in the order given."""
        return PathSolution(*(np.concatenate([getattr(p, f.name) for p in parts])
                              for f in dataclasses.fields(PathSolution)))


def _extrapolated(x1: np.ndarray, x2: np.ndarray, passive: np.ndarray, most: int = 2) -> np.ndarray:
    """The free set expected at the next strength, from the last one and the trend of x.

    The last free set without the (at most ``most``) indices whose x, extrapolated linearly from the last two
    strengths (equally spaced in ln λ), falls to zero first.

    The free set drifts by a few grid points per step along the path; removing every index the extrapolation
    drives to zero overshoots where x falls steeply (many indices come back in the first exchange), so only
    the ``most`` indices with the most negative extrapolation relative to their last value are removed.
    """
    e = 2.0 * x1 - x2
    drop = np.flatnonzero(passive & (e <= 0))
    guess = passive.copy()
    if drop.size > most:
        drop = drop[np.argsort(e[drop] / np.maximum(x1[drop], 1e-300))[:most]]
    guess[drop] = False
    return guess


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
