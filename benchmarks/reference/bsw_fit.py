"""Reference: the BSW-form fit as it was before the variable-projection Jacobian (tauspec 8a23568, models/bsw.py).

Kept for the benchmark (``bench_modes.py``: the new fit against this one, same process) and for the test that
the new fit reaches the same optimum (``tests/test_fit_reference.py``).  Not part of the package.  The
amplitudes (A_e, A_g, η_s) are solved by scipy's NNLS inside each evaluation; θ = (ln τ_max, n_e, n_g) is
fitted by ``scipy.optimize.least_squares`` (trust region reflective, forward-difference Jacobian,
diff_step 1e-6) from the two best of a grid of starts.  The record, the starting values, the statistics and the
Wald intervals are imported from the package (they did not change).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import optimize

from tauspec.models.bsw import N_E_BOUNDS, N_G_BOUNDS, BSWFit, _make_fit, _starts, cutoff_power_moduli

__all__ = ["fit_bsw"]


class _Problem:
    """Relative-residual least squares of the BSW form with the amplitudes solved inside (NNLS)."""

    def __init__(self, omega, storage, loss, solvent: bool, glassy: bool):
        self.w = np.asarray(omega, dtype=float)
        self.gp = np.asarray(storage, dtype=float)
        self.gpp = np.asarray(loss, dtype=float)
        self.solvent = solvent
        self.glassy = glassy
        self.lo = [math.log(0.01 / self.w[-1]), N_E_BOUNDS[0], N_G_BOUNDS[0]]
        self.hi = [math.log(1e4 / self.w[0]), N_E_BOUNDS[1], N_G_BOUNDS[1]]

    def columns(self, theta: np.ndarray) -> np.ndarray:
        """Relative-residual design matrix of the linear amplitudes (A_e, A_g, η_s) at θ."""
        tmax, ne, ng = math.exp(theta[0]), theta[1], theta[2]
        cols = [np.concatenate(cutoff_power_moduli(self.w, tmax, ne))]
        if self.glassy:
            cols.append(np.concatenate(cutoff_power_moduli(self.w, tmax, -ng)))
        if self.solvent:
            cols.append(np.concatenate([np.zeros_like(self.w), self.w]))
        A = np.column_stack(cols)
        return A / np.concatenate([self.gp, self.gpp])[:, None]

    def solve(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        A = self.columns(theta)
        scale = np.max(np.abs(A), axis=0)
        scale[scale == 0] = 1.0
        x, _ = optimize.nnls(A / scale, np.ones(A.shape[0]))
        x = x / scale
        return A @ x - 1.0, x

    def residuals(self, theta: np.ndarray) -> np.ndarray:
        return self.solve(theta)[0]


def fit_bsw(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, *, solvent: bool = True,
            glassy: bool = True, tau_starts: Sequence[float] = (), level: float = 0.95) -> BSWFit:
    """Fit the BSW form to a sweep (relative least squares, variable projection, trust region).

    Starts: τ_max from the terminal ratio, the first crossover and ``tau_starts``, each × 0.5, 1, 2, with
    n_e ∈ {0.15, 0.3} and n_g = 0.67; the best two by one evaluation are refined (trust region).
    """
    w = np.asarray(omega, dtype=float)
    prob = _Problem(w, storage, loss, solvent, glassy)
    cands = []
    for t in _starts(w, np.asarray(storage), np.asarray(loss), tau_starts):
        for fac in (0.5, 1.0, 2.0):
            for ne in (0.15, 0.3):
                th = np.array([min(max(math.log(t * fac), prob.lo[0] + 1e-6), prob.hi[0] - 1e-6), ne, 0.67])
                r = prob.residuals(th)
                cands.append((float(r @ r), th))
    cands.sort(key=lambda c: c[0])
    best = None
    for _, th in cands[:2]:
        res = optimize.least_squares(prob.residuals, th, bounds=(prob.lo, prob.hi), method="trf",
                                     diff_step=1e-6, xtol=1e-10, ftol=1e-12, max_nfev=300)
        if best is None or res.cost < best.cost:
            best = res
    return _make_fit(prob, best.x, level)
