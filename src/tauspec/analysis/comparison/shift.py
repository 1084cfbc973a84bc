"""The time and modulus shift between two log spectra by weighted least squares on their overlap."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy import optimize

__all__ = ["MIN_OVERLAP", "ShiftFit", "fit_shift"]


#: Smallest overlap of the two windows after the shift, as a fraction of the narrower window (our choice).
MIN_OVERLAP = 0.5


# ----------------------------------------------------------------------------------------- the shift fit
@dataclasses.dataclass(frozen=True)
class ShiftFit:
    """The result of :func:`fit_shift`: ln a, ln b, the shape distance D² and the overlap used."""

    log_a: float
    log_b: float
    distance2: float
    rms: float
    n: int
    overlap: tuple[float, float]
    at_edge: bool = False


def _residuals(alphas: np.ndarray, uA, lA, vA, uB, lB, vB, need: float, floors: tuple[float, float]):
    """For each α: D², β, the unweighted rms, the number of points and the overlap (lo, hi) in u.

    D² is NaN where the overlap is shorter than ``need`` or has fewer than 3 informative points.  Points
    where both ℓ values lie at their floor (H below ε in both spectra) carry no shape and are left out.
    """
    tol = 1e-9
    lo = np.maximum(uA[0] + alphas, uB[0])
    hi = np.minimum(uA[-1] + alphas, uB[-1])
    x = uB[None, :] - alphas[:, None]
    lA_x = np.interp(x.ravel(), uA, lA).reshape(x.shape)
    m = (uB[None, :] >= lo[:, None] - tol) & (uB[None, :] <= hi[:, None] + tol)
    m &= ~((lB[None, :] <= floors[1]) & (lA_x <= floors[0]))
    r = lB[None, :] - lA_x
    w = np.where(m, 1.0 / (vB[None, :] + np.interp(x.ravel(), uA, vA).reshape(x.shape)), 0.0)
    cnt = m.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        beta = (w * r).sum(axis=1) / w.sum(axis=1)
        e = np.where(m, r - beta[:, None], 0.0)
        d2 = (w * e * e).sum(axis=1) / cnt
        rms = np.sqrt((e * e).sum(axis=1) / cnt)
    d2 = np.where((hi - lo >= need - tol) & (cnt >= 3), d2, np.nan)
    return d2, beta, rms, cnt, lo, hi


def fit_shift(uA: np.ndarray, lA: np.ndarray, sA: np.ndarray, uB: np.ndarray, lB: np.ndarray, sB: np.ndarray,
              *, min_overlap: float = MIN_OVERLAP,
              floors: tuple[float, float] | None = None) -> ShiftFit | None:
    """Fit ℓ_B(u) ≈ ln b + ℓ_A(u − ln a) by weighted least squares on the overlap.

    With u = ln τ and ℓ = ln(H + ε) on each sample's window, for a trial α = ln a the residuals
    r_i = ℓ_B(u_i) − ℓ_A(u_i − α) are taken at B's grid points u_i inside both windows (A's shifted by α),
    ℓ_A interpolated linearly in u; the weights are w_i = 1/(σ_B²(u_i) + σ_A²(u_i − α)).  For each α,
    β = ln b is the weighted mean of r, and

        D²(α) = (1/n) Σ w_i (r_i − β)²

    is minimized over α by a grid search (a fifth of the grid spacing) refined by Brent's method.  Shifts
    that leave less than ``min_overlap`` of the narrower window overlapping are not considered.  ``floors``
    (ℓ_A, ℓ_B thresholds, ln 2ε of each) leave out the points where both spectra lie below their ε.

    Returns
    -------
    ShiftFit or None
        None when no shift gives enough overlap.
    """
    vA, vB = np.asarray(sA) ** 2, np.asarray(sB) ** 2
    floors = (-math.inf, -math.inf) if floors is None else floors
    need = min_overlap * min(uA[-1] - uA[0], uB[-1] - uB[0])
    a_lo = uB[0] - uA[-1] + need
    a_hi = uB[-1] - uA[0] - need
    if a_hi < a_lo:
        return None
    du = min(float(np.min(np.diff(uA))), float(np.min(np.diff(uB)))) / 5
    alphas = np.linspace(a_lo, a_hi, max(int(math.ceil((a_hi - a_lo) / du)) + 1, 2))
    d2 = _residuals(alphas, uA, lA, vA, uB, lB, vB, need, floors)[0]
    if not np.any(np.isfinite(d2)):
        return None
    best_alpha = float(alphas[int(np.nanargmin(d2))])
    best_d2 = float(np.nanmin(d2))

    def f(alpha: float) -> float:
        v = float(_residuals(np.array([alpha]), uA, lA, vA, uB, lB, vB, need, floors)[0][0])
        return v if math.isfinite(v) else math.inf

    step = float(alphas[1] - alphas[0]) if len(alphas) > 1 else du
    res = optimize.minimize_scalar(f, bounds=(max(best_alpha - step, a_lo), min(best_alpha + step, a_hi)),
                                   method="bounded", options={"xatol": 1e-6})
    if res.success and math.isfinite(res.fun) and res.fun < best_d2:
        best_alpha = float(res.x)
    d2, beta, rms, cnt, lo, hi = (float(v[0]) for v in
                                  _residuals(np.array([best_alpha]), uA, lA, vA, uB, lB, vB, need, floors))
    edge = min(best_alpha - a_lo, a_hi - best_alpha) <= step / 2
    return ShiftFit(log_a=best_alpha, log_b=beta, distance2=d2, rms=rms, n=int(cnt),
                    overlap=(math.exp(lo), math.exp(hi)), at_edge=bool(edge))
