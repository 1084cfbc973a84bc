"""Data-level and spectrum-level signatures used by the bead-spring diagnosis.

Pure functions over numpy arrays; each returns numbers, the decision is made in :mod:`tauspec.diagnosis`.

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 9 (Rouse and Zimm regions, terminal
zone, plateau) and ch. 13 (entanglement plateau).
Winter, H. H. & Chambon, F. (1986). J. Rheol. 30, 367 (critical gel: G' ∝ G'' ∝ ω^n, tan δ = tan(nπ/2)).
Jakeš, J. (1995). Collect. Czech. Chem. Commun. 60, 1815 (unregularized NNLS gives a sparse discrete spectrum).
Davies, A. R. & Anderssen, R. S. (1997). J. Non-Newtonian Fluid Mech. 73, 163 (the supported τ window).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy import optimize

from ..spectrum.kernels import log_grid, modes_moduli, quadrature_weights, spectrum_matrix

__all__ = [
    "ROUSE_G_COEFF",
    "local_slopes",
    "end_slopes",
    "plateau_decades",
    "power_law_fit",
    "loglog_slope",
    "median_in",
    "SparseModes",
    "sparse_modes",
]


#: Rouse intermediate-region coefficient: G'' − η_s ω → (π/(2√2)) G0 (ωτ_1)^(1/2) (Ferry 1980, ch. 9).
ROUSE_G_COEFF = math.pi / (2 * math.sqrt(2))


def loglog_slope(x: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    """Least-squares slope of ln y against ln x and the rms of the log residuals."""
    lx = np.log(np.asarray(x, dtype=float))
    ly = np.log(np.asarray(y, dtype=float))
    if len(lx) < 2 or np.ptp(lx) == 0:
        return math.nan, math.nan
    A = np.vstack([lx, np.ones_like(lx)]).T
    coef, *_ = np.linalg.lstsq(A, ly, rcond=None)
    res = ly - A @ coef
    return float(coef[0]), float(np.sqrt(np.mean(res**2)))


def local_slopes(omega: np.ndarray, y: np.ndarray, half_width: float = 0.25) -> np.ndarray:
    """Local d ln y / d ln ω by a straight-line fit over ±``half_width`` decades around each point (≥ 3 points).

    All windows at once: slope_i = Σ_j w_ij (x_j − x̄_i)(y_j − ȳ_i) / Σ_j w_ij (x_j − x̄_i)², the least-squares
    slope over the points j of window i (x = ln ω, y = ln y); NaN where a window spans no frequency range.
    """
    omega = np.asarray(omega, dtype=float)
    lw = np.log10(omega)
    dist = np.abs(lw[:, None] - lw[None, :])
    sel = dist <= half_width + 1e-12
    for i in np.flatnonzero(np.count_nonzero(sel, axis=1) < 3):
        sel[i] = False
        sel[i, np.argsort(dist[i])[:3]] = True
    w = sel.astype(float)
    lx, ly = np.log(omega), np.log(np.asarray(y, dtype=float))
    count = w.sum(axis=1)
    dx = lx[None, :] - ((w @ lx) / count)[:, None]
    dy = ly[None, :] - ((w @ ly) / count)[:, None]
    sxx = np.einsum("ij,ij->i", w, dx * dx)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(sxx > 0, np.einsum("ij,ij->i", w, dx * dy) / sxx, math.nan)


def end_slopes(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, decades: float = 0.5) -> tuple[float, float]:
    """Slopes of ln G' and ln G'' over the lowest ``decades`` of the window (at least 3 points)."""
    sel = omega <= omega[0] * 10**decades * (1 + 1e-12)
    if np.count_nonzero(sel) < 3:
        sel = np.arange(len(omega)) < 3
    return loglog_slope(omega[sel], storage[sel])[0], loglog_slope(omega[sel], loss[sel])[0]


def plateau_decades(
    omega: np.ndarray,
    storage: np.ndarray,
    loss: np.ndarray,
    *,
    max_storage_slope: float = 0.3,
    min_loss_slope: float = -0.5,
    half_width: float = 0.5,
) -> float:
    """Width in decades of the longest run of points that look like a rubbery plateau.

    A plateau point has G' > G'', a small G' slope (−0.1 ≤ d ln G'/d ln ω ≤ ``max_storage_slope``), and a
    G'' that does not fall like the high-frequency side of a single relaxation (d ln G''/d ln ω ≥
    ``min_loss_slope``; a lone Maxwell mode gives −1).  Slopes are local straight-line fits over
    ±``half_width`` decades, wide enough that 3 % noise does not break a plateau into pieces.  Thresholds are
    common practice, no single source; 0.3 admits the slowly rising G' of a BSW plateau with n_e = 0.23
    (slope 0.33 at ωτ_max = 10, 0.12 at 100).
    """
    sp = local_slopes(omega, storage, half_width)
    spp = local_slopes(omega, loss, half_width)
    ok = (storage > loss) & (sp <= max_storage_slope) & (sp >= -0.1) & (spp >= min_loss_slope)
    best = 0.0
    start = None
    lw = np.log10(omega)
    for i, flag in enumerate(list(ok) + [False]):
        if flag and start is None:
            start = i
        elif not flag and start is not None:
            best = max(best, lw[i - 1] - lw[start])
            start = None
    return float(best)


def power_law_fit(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray) -> dict[str, float]:
    """Straight lines through ln G' and ln G'' over the whole window (the critical-gel test).

    A critical gel has G' = S Γ(1−n) cos(nπ/2) ω^n and G'' = G' tan(nπ/2) at every ω (Winter & Chambon 1986),
    so both slopes equal n, the lines are straight and tan δ is constant.
    """
    s1, r1 = loglog_slope(omega, storage)
    s2, r2 = loglog_slope(omega, loss)
    tan_d = loss / storage
    return {
        "storage_slope": s1,
        "loss_slope": s2,
        "rms": max(r1, r2),
        "tan_delta_spread": float(np.std(np.log(tan_d))),
        "n": 0.5 * (s1 + s2),
    }


def median_in(values: np.ndarray, mask: np.ndarray) -> float:
    """Median of ``values[mask]`` (NaN when the mask selects nothing)."""
    return float(np.median(values[mask])) if np.any(mask) else math.nan


#: nonzero NNLS grid points closer than this factor in τ are one mode (NNLS often splits one relaxation
#: over two grid points a few steps apart; the closest Rouse modes that matter here are τ_2/τ_3 = 2.25).
MERGE_RATIO = 1.6


def _merge_modes(g: np.ndarray, tau: np.ndarray, ratio: float) -> tuple[np.ndarray, np.ndarray]:
    """Merge modes (τ ascending) whose neighbours are closer than ``ratio`` in τ; strengths add, ln τ averages."""
    groups: list[list[int]] = []
    for i in range(len(tau)):
        if groups and tau[i] / tau[groups[-1][-1]] < ratio:
            groups[-1].append(i)
        else:
            groups.append([i])
    gs = np.array([g[k].sum() for k in groups])
    ts = np.array([math.exp(float(np.dot(g[k], np.log(tau[k])) / g[k].sum())) for k in groups])
    return gs, ts


@dataclasses.dataclass(frozen=True, kw_only=True)
class SparseModes:
    """Discrete modes from unregularized nonnegative least squares on a fine grid (Jakeš 1995).

    Nonzero grid points closer than MERGE_RATIO in τ are merged into one mode (strengths summed, ln τ
    strength-weighted); specks below 0.1 % of Σg are dropped.
    ``chi2`` is the sum of squared relative residuals, ``n_active`` the number of nonzero coefficients
    (including η_s when nonzero).
    """

    g: np.ndarray
    tau: np.ndarray
    eta_s: float
    chi2: float
    n_data: int
    n_active: int

    def reduced_chi2(self) -> float:
        """χ²/(n − k) with k the number of nonzero coefficients."""
        return self.chi2 / max(self.n_data - self.n_active, 1)


def sparse_modes(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, *, per_decade: int = 20,
                 solvent: bool = True) -> SparseModes:
    """Fit nonnegative Maxwell strengths on a fine log grid without regularization (relative residuals).

    The grid spans [1/(10 ω_max), 10/ω_min] with ``per_decade`` points per decade; rows are divided by the
    data so that the residuals are relative.  The unregularized solution of inexact data is sparse
    (Jakeš 1995); its residual is a model-free reference for the noise level.
    """
    lo, hi = 0.1 / omega[-1], 10.0 / omega[0]
    n = max(int(round(per_decade * math.log10(hi / lo))) + 1, 10)
    tau = log_grid(lo, hi, n)
    Kp, Kpp = spectrum_matrix(omega, tau)
    w = quadrature_weights(tau)  # divide out: the coefficients are then mode strengths g_j
    Kp = Kp / w
    Kpp = Kpp / w
    A = np.vstack([Kp / storage[:, None], Kpp / loss[:, None]])
    if solvent:
        A = np.hstack([A, np.concatenate([np.zeros_like(omega), omega / loss])[:, None]])
    scale = np.max(A, axis=0)
    scale[scale == 0] = 1.0
    x, _ = optimize.nnls(A / scale, np.ones(A.shape[0]), maxiter=50 * A.shape[1])
    x = x / scale
    eta = float(x[-1]) if solvent else 0.0
    g_grid = x[: len(tau)]
    gp, gpp = modes_moduli(omega, g_grid, tau, eta_s=eta)
    r = np.concatenate([gp / storage - 1, gpp / loss - 1])
    active = g_grid > 1e-8 * max(float(g_grid.max()), 1e-300)
    n_active = int(np.count_nonzero(active)) + (1 if eta > 0 else 0)
    modes_g, modes_t = _merge_modes(g_grid[active], tau[active], MERGE_RATIO)
    keep = modes_g >= 1e-3 * max(float(modes_g.sum()), 1e-300)  # drop specks that carry no modulus
    modes_g, modes_t = modes_g[keep], modes_t[keep]
    order = np.argsort(modes_t)[::-1]
    return SparseModes(g=modes_g[order], tau=modes_t[order], eta_s=eta,
                       chi2=float(r @ r), n_data=len(r), n_active=n_active)
