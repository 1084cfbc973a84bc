"""The exact path at tiny strengths, where the normal equations are ill-conditioned.

There the path solves the augmented least-squares system [A; λL] x ≈ [b; 0], x ≥ 0, by an active-set
method with QR subproblems.  The outside reference is scipy.optimize.nnls (Lawson & Hanson 1974, ch. 23) on
the same augmented system: the objective ‖A x − b‖² + λ²‖L x‖² must be as low as scipy's at every strength
(docs/references.md).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import nnls

from synthetic import lognormal_sweep, rouse_sweep
from tauspec.spectrum.options import InvertOptions
from tauspec.spectrum.pivoting import AugmentedSubproblem, active_set
from tauspec.spectrum.problem import build_problem
from tauspec.spectrum.regularize import TikhonovPath, objective
from tauspec.spectrum.window import default_grid


def _problem(sweep):
    pb = build_problem(sweep, default_grid(sweep.omega), InvertOptions())
    return pb.A, pb.b, pb.L


def _reference(A, b, L, lam):
    x, _ = nnls(np.vstack([A, lam * L]), np.concatenate([b, np.zeros(L.shape[0])]), maxiter=10000)
    return objective(A, b, L, x, lam)


@pytest.mark.parametrize("sweep", [lognormal_sweep(5), rouse_sweep(0, N=30)], ids=["lognormal", "rouse"])
def test_path_at_tiny_strengths_equals_scipy_nnls(sweep):
    A, b, L = _problem(sweep)
    lams = np.geomspace(1e-2, 1e-7, 21)
    sol = TikhonovPath(A, b, L).path(lams)
    assert sol.fallback.sum() >= 5  # the augmented solver is exercised here, not only the normal equations
    for lam, x in zip(lams, sol.x):
        assert x.min() >= 0.0
        ref = _reference(A, b, L, lam)
        assert objective(A, b, L, x, lam) <= ref * (1 + 1e-12)


def test_active_set_from_a_poor_start_equals_scipy_nnls():
    # all indices free at the start: the start is made feasible by dropping, then indices join one by one
    A, b, L = _problem(rouse_sweep(0, N=30))
    lam = 1e-6
    n = A.shape[1]
    sub = AugmentedSubproblem(np.ascontiguousarray(np.hstack([A.T, L.T])), np.concatenate([b, np.zeros(len(L))]),
                              A.shape[0], lam)
    for start in (np.ones(n, dtype=bool), np.zeros(n, dtype=bool)):
        out = active_set(A.T @ b, start, sub)
        assert out is not None
        x, grad, R, order = out
        assert objective(A, b, L, x, lam) <= _reference(A, b, L, lam) * (1 + 1e-12)
        F = x > 0
        M = A.T @ A + lam * lam * L.T @ L
        np.testing.assert_allclose(R.T @ R, M[np.ix_(order, order)], rtol=1e-9, atol=1e-9 * np.abs(M).max())
        assert np.all(grad[~F] >= -1e-8 * np.abs(A.T @ b).max())  # optimality on the bound set


def test_degrees_of_freedom_from_the_qr_factor():
    # the influence-matrix trace at a strength solved by QR equals the dense definition (Golub, Heath & Wahba 1979)
    A, b, L = _problem(rouse_sweep(0, N=30))
    path = TikhonovPath(A, b, L)
    lams = np.geomspace(1e-3, 1e-6, 7)
    sol = path.path(lams)
    assert sol.fallback.any()
    for s, x, dof, fb in zip(lams, sol.x, sol.dof, sol.fallback):
        if not fb:
            continue
        F = x > 0
        AF, LF = A[:, F], L[:, F]
        m = A.shape[0]  # (A_FᵀA_F + λ²L_FᵀL_F)⁻¹ A_Fᵀ as the least-squares solution with [I; 0], stably
        hat = AF @ np.linalg.lstsq(np.vstack([AF, s * LF]), np.vstack([np.eye(m), np.zeros((len(L), m))]),
                                   rcond=None)[0]
        assert dof == pytest.approx(np.trace(hat), rel=1e-6, abs=1e-6)
