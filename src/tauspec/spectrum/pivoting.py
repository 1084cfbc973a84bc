r"""Active-set solvers for one strength of the Tikhonov problem with x ≥ 0.

The problem min ½xᵀMx − qᵀx, x ≥ 0, with M = AᵀA + λ²LᵀL and q = Aᵀb, is the
normal-equations form of min ‖A x − b‖² + λ²‖L x‖², x ≥ 0.  Two solvers, each
solving an unconstrained subproblem on the free set F at every step:

* :func:`block_pivoting` (Kim & Park 2011, Algorithm 2 for one column) exchanges
  whole blocks of indices between F and the bound set, with M_FF x_F = q_F solved
  by Cholesky and the factor bordered when an exchange only adds indices (fast;
  trusted while M_FF is well conditioned);
* :func:`active_set` (Lawson & Hanson 1974, ch. 23), for tiny λ where M_FF is too
  ill-conditioned: min ‖[A_F; λ L_F] x_F − [b; 0]‖ by Householder QR
  (:class:`AugmentedSubproblem`, LAPACK dgels).  The triangular factor of the QR
  is a Cholesky factor of M_FF up to the signs of its rows (R_qrᵀR_qr = M_FF), so
  the influence-matrix trace uses it the same way.

References
----------
Kim, J. & Park, H. (2011). Fast nonnegative matrix factorization: an
active-set-like method and comparisons. SIAM J. Sci. Comput. 33:3261–3281.
Golub, G. H. & Van Loan, C. F. (2013). *Matrix Computations*, 4th ed., §4.2
(bordering a Cholesky factor) and §5.3 (least squares by QR), from memory.
"""

from __future__ import annotations

import numpy as np
from scipy.linalg import lapack

__all__ = ["block_pivoting", "active_set", "AugmentedSubproblem", "cholesky_on", "bordered"]


#: Reciprocal condition number of M_FF (estimated from the diagonal of its factor) below which the normal
#: equations are not trusted and the augmented system is solved by QR instead.
RCOND_MIN = 1e-11
#: Smallest |R_ii| / max |R_jj| of the QR factor still taken as full rank (about √ε · 0.1; common practice,
#: no source): below it the subproblem is rank-deficient and the caller falls back to Lawson–Hanson NNLS.
QR_RANK_MIN = 1e-9

_dpotrf = lapack.dpotrf
_dpotrs = lapack.dpotrs
_dtrtrs = lapack.dtrtrs
_dgels = lapack.dgels


def block_pivoting(M: np.ndarray, q: np.ndarray, passive: np.ndarray | None, max_iter: int | None = None
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None:
    """Block principal pivoting for min ½xᵀMx − qᵀx, x ≥ 0 (Kim & Park 2011, Algorithm 2 for one column).

    Returns the solution, its gradient M x − q, the upper Cholesky factor R of M_FF on the free set and the
    order of the free indices in that factor (reused for the influence matrix), or ``None`` when M_FF is too
    ill-conditioned for the normal equations (or the iteration does not end), so that the caller tries
    another way.  Exchanges follow Kim & Park: the whole block of infeasible indices while their number
    falls, at most three times otherwise, then only the last infeasible index (the backup rule).
    """
    n = q.size
    F = np.zeros(n, dtype=bool) if passive is None else passive.copy()
    alpha, beta = 3, n + 1
    max_iter = max_iter or 5 * n + 20
    tol_y = 1e-12 * max(float(np.abs(q).max()), 1e-300)
    order = np.flatnonzero(F)
    R = cholesky_on(M, order)
    for _ in range(max_iter):
        if R is None:
            return None
        x = np.zeros(n)
        tol_x = 1e-300
        if order.size:
            xf = _dpotrs(R, q.take(order), lower=0)[0]
            x[order] = xf
            tol_x = 1e-12 * max(float(np.abs(xf).max()), 1e-300)
        grad = M @ x
        grad -= q
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
        only_added = not (V & F).any()
        F ^= V
        if only_added and order.size:
            new = np.flatnonzero(V)
            R = bordered(M, R, order, new)
            order = np.concatenate([order, new])
        else:
            order = np.flatnonzero(F)
            R = cholesky_on(M, order)
    return None


def active_set(q: np.ndarray, passive: np.ndarray | None, sub: AugmentedSubproblem, max_iter: int | None = None
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None:
    """Lawson–Hanson active-set NNLS (1974, ch. 23, Algorithm NNLS), warm-started from the set ``passive``.

    Used where the normal equations are ill-conditioned: block exchanges can then wander for hundreds of
    iterations, while this method lowers the objective at every step and so ends.  The start is made feasible
    by dropping the indices whose least-squares value on the set is ≤ 0 until none is; then the index of the
    most negative gradient joins the set, and where the new least-squares solution z leaves x ≥ 0 the step
    from x towards z stops at the first bound and the indices at zero leave.  The gradient is computed from
    the residuals and the stopping tolerance is tight (1e-14 of max |Aᵀb|): with M ill-conditioned a small
    gradient can still hide a visible decrease of the objective.  Same return as :func:`block_pivoting`.
    """
    n = q.size
    F = np.zeros(n, dtype=bool) if passive is None else passive.copy()
    max_iter = max_iter or 5 * n + 20
    tol_y = 1e-14 * max(float(np.abs(q).max()), 1e-300)
    x = np.zeros(n)
    blocked = np.zeros(n, dtype=bool)  # indices that could not leave zero from the current x
    last = -1
    for _ in range(max_iter):
        order = np.flatnonzero(F)
        fac = sub.factor(order)
        if fac is None:
            return None
        R, zf = fac
        z = np.zeros(n)
        z[order] = zf
        bad = F & (z <= 0)
        if bad.any():  # back along x → z to the first bound; the indices reaching zero leave the set
            if not x[F].any():  # no feasible point on F yet (the warm start): drop the offenders
                F &= ~bad
                continue
            idx = np.flatnonzero(bad)
            step = float(np.min(x[idx] / (x[idx] - z[idx])))
            if step <= 0.0 and last >= 0:  # the index just added cannot leave zero: skip it at this x
                F[last], blocked[last], last = False, True, -1
                continue
            x += step * (z - x)
            F &= x > 1e-14 * max(float(np.abs(x).max()), 1e-300)
            x[~F] = 0.0
            continue
        x = z
        if last >= 0:
            blocked[:] = False
        grad = sub.gradient(x)
        cand = np.where(F | blocked, 0.0, grad)
        last = int(np.argmin(cand))
        if cand[last] >= -tol_y:
            return x, grad, R, order
        F[last] = True
    return None


class AugmentedSubproblem:
    """min ‖C x_F − d‖ with C = [A_F; λ L_F], d = [b; 0], by Householder QR (LAPACK dgels).

    ``stacked`` is [Aᵀ Lᵀ] (n × (m + p), C-contiguous) and ``rhs`` is [b; 0]: the rows of ``stacked`` on F,
    with the L part scaled by λ, are the columns of C in Fortran order, with no copy of the full system.
    """

    __slots__ = ("stacked", "rhs", "m", "strength", "A", "b", "L")

    def __init__(self, stacked: np.ndarray, rhs: np.ndarray, m: int, strength: float):
        self.stacked, self.rhs, self.m, self.strength = stacked, rhs, m, strength
        self.A, self.L = stacked[:, :m].T, stacked[:, m:].T
        self.b = rhs[:m]

    def gradient(self, x: np.ndarray) -> np.ndarray:
        """Aᵀ(A x − b) + λ² Lᵀ(L x), from the residuals: accurate where M x − q loses digits to cancellation."""
        r = self.A @ x
        r -= self.b
        g = self.A.T @ r
        g += (self.strength * self.strength) * (self.L.T @ (self.L @ x))
        return g

    def factor(self, order: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
        """(R, x_F): the triangular factor of the QR of C and the least-squares solution; None if rank-deficient."""
        k = order.size
        if k == 0:
            return np.zeros((0, 0)), np.zeros(0)
        if k > self.rhs.size:
            return None
        Ct = self.stacked.take(order, 0)
        Ct[:, self.m:] *= self.strength
        qr, sol, info = _dgels(Ct.T, self.rhs, overwrite_a=1)
        if info != 0:
            return None
        R = np.triu(qr[:k, :k])
        d = np.abs(R.diagonal())
        if not d.min() > QR_RANK_MIN * d.max():
            return None
        return R, sol[:k]


def _well_conditioned(R: np.ndarray) -> bool:
    """The reciprocal condition number of RᵀR, estimated from the (positive) diagonal of R, is above RCOND_MIN."""
    d = R.diagonal()
    return not d.size or (d.min() / d.max()) ** 2 >= RCOND_MIN


def cholesky_on(M: np.ndarray, order: np.ndarray) -> np.ndarray | None:
    """Upper Cholesky factor of M on the indices ``order``; None when it fails or is too ill-conditioned."""
    if order.size == 0:
        return np.zeros((0, 0))
    R, info = _dpotrf(M.take(order, 0).take(order, 1), lower=0, clean=1, overwrite_a=1)
    return R if info == 0 and _well_conditioned(R) else None


def bordered(M: np.ndarray, R: np.ndarray, order: np.ndarray, new: np.ndarray) -> np.ndarray | None:
    """The factor on ``order`` + ``new`` from the factor R on ``order``: [[R, R₁₂], [0, R₂₂]].

    With N the new indices, R₁₂ = R⁻ᵀ M_FN and R₂₂ = chol(M_NN − R₁₂ᵀR₁₂): |F|²|N| flops instead of
    (|F| + |N|)³/3 (Golub & Van Loan 2013, §4.2, from memory).
    """
    Mn = M.take(new, 1)
    R12 = _dtrtrs(R, Mn.take(order, 0), lower=0, trans=1)[0]
    R22, info = _dpotrf(Mn.take(new, 0) - R12.T @ R12, lower=0, clean=1, overwrite_a=1)
    if info != 0:
        return cholesky_on(M, np.concatenate([order, new]))
    k = order.size
    out = np.zeros((k + new.size, k + new.size))
    out[:k, :k] = R
    out[:k, k:] = R12
    out[k:, k:] = R22
    return out if _well_conditioned(out) else None
