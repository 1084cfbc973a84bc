"""The inversion path's linear algebra: the bordered Cholesky factor and the influence-matrix trace.

Checked against direct dense computations with numpy (the definitions, not a published value): the trace of
the influence matrix A_F (A_FᵀA_F + λ² L_FᵀL_F)⁻¹ A_Fᵀ (Golub, Heath & Wahba 1979, the GCV degrees of freedom;
docs/references.md) and the Cholesky factor of M on the free set.
"""

from __future__ import annotations

import numpy as np
import pytest

from synthetic import lognormal_sweep
from tauspec.spectrum.invert import invert
from tauspec.spectrum.options import InvertOptions
from tauspec.spectrum.pivoting import bordered, cholesky_on
from tauspec.spectrum.problem import build_problem
from tauspec.spectrum.regularize import TikhonovPath


@pytest.fixture(scope="module")
def path_and_solution():
    sweep = lognormal_sweep(4)
    sp = invert(sweep)
    pb = build_problem(sweep, sp.tau, InvertOptions())
    path = TikhonovPath(pb.A, pb.b, pb.L)
    return path, sp.lcurve.strength, path.path(sp.lcurve.strength)


def test_degrees_of_freedom_are_the_trace_of_the_influence_matrix(path_and_solution):
    path, strengths, sol = path_and_solution
    for s, x, dof in zip(strengths[::5], sol.x[::5], sol.dof[::5]):
        F = x > 0
        AF, LF = path.A[:, F], path.L[:, F]
        hat = AF @ np.linalg.solve(AF.T @ AF + s * s * LF.T @ LF, AF.T)
        assert dof == pytest.approx(np.trace(hat), rel=1e-8, abs=1e-8)
        assert path.dof(s, F) == pytest.approx(np.trace(hat), rel=1e-8, abs=1e-8)  # without a factor at hand


def test_bordered_factor_equals_the_direct_one():
    rng = np.random.default_rng(3)
    A = rng.standard_normal((30, 12))
    M = A.T @ A + 0.1 * np.eye(12)
    order = np.array([7, 1, 4, 9])
    new = np.array([0, 11, 5])
    R = bordered(M, cholesky_on(M, order), order, new)
    both = np.concatenate([order, new])
    np.testing.assert_allclose(R.T @ R, M[np.ix_(both, both)], rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(np.triu(R), R)
