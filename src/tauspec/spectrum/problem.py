"""The dimensionless Tikhonov problem of one sweep and its initial path of strengths."""

from __future__ import annotations

import dataclasses

import numpy as np

from ..data.sweep import Sweep
from ..errors import SettingsError
from .kernels import spectrum_matrix
from .options import InvertOptions
from .regularize import second_difference

__all__ = ["N_STRENGTHS", "Problem", "build_problem", "strength_path", "known_solvent_caution"]


#: Default number of strengths on the path.
N_STRENGTHS = 50

#: The path spans this many decades of λ² around its problem-derived centre.
_PATH_DECADES = (-9.0, 3.0)


@dataclasses.dataclass(frozen=True)
class Problem:
    """The dimensionless least-squares problem for one sweep (see :func:`build_problem`).

    Unknowns x = [h_1..h_n, (η_s/s_η), (G_e/s_G)], with h = H/s_H.
    """

    A: np.ndarray
    b: np.ndarray
    L: np.ndarray
    tau: np.ndarray
    scale: np.ndarray  # multiply x by this to get SI values (H in Pa, η_s in Pa·s, G_e in Pa)
    solvent: bool  # an η_s column is fitted
    equilibrium_modulus: bool  # a G_e column is fitted
    loss_offset: np.ndarray  # known η_s·ω subtracted from G''

    @property
    def n_grid(self) -> int:
        """Number of τ grid points."""
        return len(self.tau)


#: A known η_s whose η_s ω exceeds G'' by more than this share at some frequency is named in a caution.
SOLVENT_EXCESS = 0.1


def known_solvent_caution(omega: np.ndarray, loss: np.ndarray, eta_s: float | None, source: str) -> str | None:
    """Check a known solvent viscosity against the sweep: η' = G''/ω ≥ η_s at every frequency.

    The dynamic viscosity of a solution falls towards the solvent's at high frequency but not below it (Ferry
    1980, ch. 9), so η_s ω ≤ G''.  Raises :class:`SettingsError` when η_s ω exceeds G'' at every frequency (a
    wrong value or unit: subtracted, it leaves a negative G''); returns a caution when it exceeds G'' by more than
    :data:`SOLVENT_EXCESS` at some frequencies (beyond the noise there), else None.
    """
    if not eta_s:
        return None
    w, gpp = np.asarray(omega, dtype=float), np.asarray(loss, dtype=float)
    ratio = eta_s * w / gpp
    if np.all(ratio > 1.0):
        raise SettingsError(f"the known η_s = {eta_s:.4g} Pa·s exceeds G''/ω at every frequency (at most "
                            f"{float(np.max(gpp / w)):.4g} Pa·s): the solvent alone would give more than the whole "
                            "G''; check its value and unit", source)
    over = ratio > 1.0 + SOLVENT_EXCESS
    if not over.any():
        return None
    return (f"the known η_s = {eta_s:.4g} Pa·s exceeds G''/ω by more than {100 * SOLVENT_EXCESS:.0f} % at "
            f"{int(over.sum())} of {w.size} frequencies ({w[over].min():.3g}–{w[over].max():.3g} rad/s): G'' there is "
            "below the solvent's own contribution")


def build_problem(sweep: Sweep, tau: np.ndarray, options: InvertOptions) -> Problem:
    """Form the weighted, dimensionless problem ‖A x − 1‖² + λ²‖L x‖².

    Rows are G'_i and G''_i divided by their measured values (relative
    residuals); H is scaled by the geometric mean of the moduli, and the η_s
    and G_e columns to unit norm, so that the problem — and hence the chosen
    strength — is invariant to the units of the moduli.  A known ``eta_s``
    is subtracted from G'' (its column is then omitted).  ``options`` gives the switches ``solvent`` and
    ``equilibrium_modulus`` and the known ``eta_s``.
    """
    solvent, eta_s = options.solvent, options.eta_s
    omega = sweep.omega
    y = np.concatenate([sweep.storage, sweep.loss])
    Kp, Kpp = spectrum_matrix(omega, tau)
    s_H = float(np.exp(np.mean(np.log(y))))
    offset = np.zeros(len(omega)) if eta_s is None else eta_s * omega
    target = np.concatenate([sweep.storage, sweep.loss - offset])
    w = 1.0 / y
    cols = [np.vstack([Kp, Kpp]) * (w[:, None] * s_H)]
    scale = [np.full(len(tau), s_H)]
    if solvent and eta_s is None:
        c = np.concatenate([np.zeros_like(omega), omega]) * w
        s = 1.0 / float(np.linalg.norm(c))
        cols.append((c * s)[:, None])
        scale.append(np.array([s]))
    if options.equilibrium_modulus:
        c = np.concatenate([np.ones_like(omega), np.zeros_like(omega)]) * w
        s = 1.0 / float(np.linalg.norm(c))
        cols.append((c * s)[:, None])
        scale.append(np.array([s]))
    A = np.hstack(cols)
    b = target * w
    du = float(np.log(tau[1] / tau[0])) if len(tau) > 1 else 1.0
    D = second_difference(len(tau), du)
    L = np.hstack([D, np.zeros((D.shape[0], A.shape[1] - len(tau)))])
    return Problem(A=A, b=b, L=L, tau=tau, scale=np.concatenate(scale), solvent=solvent and eta_s is None,
                   equilibrium_modulus=options.equilibrium_modulus, loss_offset=offset)


def strength_path(problem: Problem, n: int = N_STRENGTHS) -> np.ndarray:
    """Return the initial path: ``n`` strengths from large to small, scaled from the problem itself.

    The centre λ₀² = tr(A_hᵀA_h)/tr(LᵀL) balances the two terms of the
    objective for a unit change of h; the path spans λ² from 10⁻⁹ λ₀² to
    10³ λ₀².  :func:`_solve_path` extends it where its ends are not yet
    over- and under-smoothed.
    """
    n_h = problem.n_grid
    Ah = problem.A[:, :n_h]
    Lh = problem.L[:, :n_h]
    lam0_sq = float(np.sum(Ah * Ah)) / max(float(np.sum(Lh * Lh)), 1e-300)
    exps = np.linspace(_PATH_DECADES[1], _PATH_DECADES[0], n)
    return np.sqrt(lam0_sq * 10.0**exps)
