"""The shifted moduli of two samples against each other's noise, and the overlap a comparison needs.

A time–modulus shift H_B(τ) = b H_A(τ/a) gives G*_B(ω) = b G*_A(aω) (reduced variables; Ferry 1980, ch. 11).
:func:`fit_moduli_shift` fits ln a and ln b directly on the moduli: at B's frequencies inside A's shifted
range, r = ln G_B(ω) − ln b − ln G_A(aω) for G' and G'', with A interpolated by a cubic spline in
(ln ω, ln G), each residual divided by √(σ_A² + σ_B²) — the relative noise of each sample from its own
roughness (:func:`tauspec.analysis.uncertainty.noise.roughness_noise`).  Under the hypothesis of the same shape
the minimum χ² follows χ² with n − 2 degrees of freedom (Bates & Watts 1988, ch. 2); since σ_A and σ_B are estimated,
χ²/(n − 2) is referred to the F distribution with the noise estimate's degrees of freedom, which gives the
p-value.

The overlap rule: a shape can only be called the same over a range both samples measure.  After the shift
the two frequency ranges must overlap by at least :data:`MIN_DECADES` decades (of both G' and G'' data), and
at least :data:`MIN_WEIGHT` of each spectrum's weight ∫ H d ln τ in its supported window must lie inside the
overlap (mapped to times, τ = 1/ω; Davies & Anderssen 1997 for the window).  Both numbers are our choice.

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 11.
Bates, D. M. & Watts, D. G. (1988). *Nonlinear Regression Analysis and Its Applications*, Wiley, ch. 2.
Rousseeuw, P. J. & Croux, C. (1993). J. Am. Stat. Assoc. 88, 1273 (efficiency of the MAD; from memory).
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np
from scipy import interpolate, optimize, stats

from ...spectrum.kernels import quadrature_weights
from ..uncertainty.noise import MAD_EFFICIENCY, NOISE_FLOOR, roughness_noise

__all__ = ["ModuliShift", "fit_moduli_shift", "weight_fraction", "MIN_DECADES", "MIN_WEIGHT"]

#: Smallest overlap of the two frequency ranges after the shift, in decades (our choice: more than the 1.14
#: decades a single Maxwell mode's loss peak spans at half height, ωτ from 2 − √3 to 2 + √3, so that a shape is
#: compared over more than one relaxation feature).
MIN_DECADES = 1.5
#: Smallest share of each spectrum's weight (∫ H d ln τ over its window) inside the overlap (our choice).
MIN_WEIGHT = 0.5


@dataclasses.dataclass(frozen=True, kw_only=True)
class ModuliShift:
    """Moduli of B against A shifted by (a, b): G*_B(ω) ≈ b G*_A(aω)."""

    log_a: float
    log_b: float
    log_a_se: float
    log_b_se: float
    chi2: float
    n: int
    p_value: float
    decades: float
    noise: tuple[float, float]
    #: share of χ² in the lowest, middle and highest third of the overlap (in ln ω), and B's frequencies at the
    #: two cuts between them: where the shifted moduli differ
    misfit_thirds: tuple[float, float, float] = (math.nan, math.nan, math.nan)
    cuts: tuple[float, float] = (math.nan, math.nan)

    @staticmethod
    def interval(log_value: float, se: float, level: float = 0.95) -> tuple[float, float]:
        """exp(ln x ± z se); (NaN, NaN) when se is not a positive finite number (no zero-width interval)."""
        if not (se > 0 and math.isfinite(se)):
            return math.nan, math.nan
        z = float(stats.norm.ppf(0.5 + level / 2))
        return math.exp(log_value - z * se), math.exp(log_value + z * se)

    def to_dict(self) -> dict[str, Any]:
        """The JSON form."""
        a, b = math.exp(self.log_a), math.exp(self.log_b)
        return {"time_shift": a, "time_shift_ci": list(self.interval(self.log_a, self.log_a_se)),
                "modulus_shift": b, "modulus_shift_ci": list(self.interval(self.log_b, self.log_b_se)),
                "chi2": self.chi2, "n_points": self.n, "dof": self.n - 2, "p_value": self.p_value,
                "overlap_decades": self.decades, "noise": list(self.noise),
                "misfit_thirds": list(self.misfit_thirds)}


def _splines(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray):
    x = np.log(omega)
    return interpolate.CubicSpline(x, np.log(storage)), interpolate.CubicSpline(x, np.log(loss))


Data = tuple[np.ndarray, np.ndarray, np.ndarray]


def fit_moduli_shift(a_data: Data, b_data: Data,
                     log_a0: float, *, min_decades: float = MIN_DECADES) -> ModuliShift | None:
    """Fit ln a, ln b of G*_B(ω) = b G*_A(aω) on the moduli, starting near ``log_a0``; None without overlap.

    ``a_data`` and ``b_data`` are (ω, G', G'').  The shift is searched over every ln a that leaves at least
    ``min_decades`` of overlap (a grid a tenth of B's point spacing apart, the start ``log_a0`` included),
    minimizing χ²/n (ln b solved in closed form for each trial: the weighted mean residual), then refined.
    """
    wa, pa, qa = (np.asarray(v, dtype=float) for v in a_data)
    wb, pb, qb = (np.asarray(v, dtype=float) for v in b_data)
    sa = max(roughness_noise(wa, pa), roughness_noise(wa, qa), NOISE_FLOOR)
    sb = max(roughness_noise(wb, pb), roughness_noise(wb, qb), NOISE_FLOOR)
    var = sa * sa + sb * sb
    sp_a, sq_a = _splines(wa, pa, qa)
    xa_lo, xa_hi = math.log(wa[0]), math.log(wa[-1])
    xb = np.log(wb)
    need = min_decades * math.log(10)
    lo_shift, hi_shift = xa_lo - xb[-1] + need, xa_hi - xb[0] - need  # admissible ln a
    if hi_shift < lo_shift:
        return None

    def resid(log_a: float) -> tuple[np.ndarray, float, np.ndarray]:
        x = xb + log_a
        m = (x >= xa_lo - 1e-12) & (x <= xa_hi + 1e-12)
        r = np.concatenate([np.log(pb[m]) - sp_a(x[m]), np.log(qb[m]) - sq_a(x[m])])
        beta = float(np.mean(r)) if len(r) else 0.0
        return r - beta, beta, x[m]

    def score(log_a: float) -> float:
        r, _, xm = resid(log_a)
        return float(r @ r) / max(len(r), 1) if xm.size >= 3 else math.inf

    step = float(np.min(np.diff(xb))) / 10
    grid = np.append(np.arange(lo_shift, hi_shift + step / 2, step), min(max(log_a0, lo_shift), hi_shift))
    best = float(grid[int(np.argmin([score(g) for g in grid]))])
    res = optimize.minimize_scalar(score, bounds=(max(best - step, lo_shift), min(best + step, hi_shift)),
                                   method="bounded", options={"xatol": 1e-7})
    if res.success and res.fun <= score(best):
        best = float(res.x)
    r, beta, x_in = resid(best)
    chi2 = float(r @ r) / var
    n = len(r)
    # standard errors from the curvature of χ²(ln a) (ln b solved inside) and of the mean for ln b
    h = 1e-4
    c2 = (score(best + h) + score(best - h) - 2 * score(best)) * n / var / h**2
    se_a = math.sqrt(2.0 / c2) if c2 > 0 else math.inf
    se_b = math.sqrt(var / n) if n else math.inf
    x = xb + best
    m = (x >= xa_lo) & (x <= xa_hi)
    decades = float((x[m].max() - x[m].min()) / math.log(10)) if np.count_nonzero(m) >= 2 else 0.0
    thirds, cuts = _misfit_thirds(x_in, r, best)
    # σ_A, σ_B are themselves estimated (a MAD of the pseudo-residuals, worth about 37 % of as many Gaussian
    # degrees of freedom: Rousseeuw & Croux 1993, from memory), so the statistic is read as an F ratio
    nu = max(MAD_EFFICIENCY * (len(wa) - 4 + len(wb) - 4), 1.0)
    p = float(stats.f.sf(chi2 / max(n - 2, 1), max(n - 2, 1), nu))
    return ModuliShift(log_a=best, log_b=beta, log_a_se=se_a, log_b_se=se_b, chi2=chi2, n=n, p_value=p,
                       decades=decades, noise=(sa, sb), misfit_thirds=thirds, cuts=cuts)


def _misfit_thirds(x: np.ndarray, r: np.ndarray, log_a: float) -> tuple[tuple[float, float, float],
                                                                       tuple[float, float]]:
    """Shares of Σr² in the three equal thirds (in ln ω) of the overlap, and B's ω at the two cuts.

    ``x`` are B's shifted ln ω inside the overlap and ``r`` the residuals of G' then G'' at them.
    """
    lo, hi = (float(x.min()), float(x.max())) if x.size else (math.nan, math.nan)
    total = float(r @ r)
    if not (hi > lo and total > 0):
        return (math.nan, math.nan, math.nan), (math.nan, math.nan)
    third = np.minimum(((np.concatenate([x, x]) - lo) / (hi - lo) * 3).astype(int), 2)
    low, mid, high = (float(np.sum(r[third == j] ** 2) / total) for j in range(3))
    return (low, mid, high), (math.exp(lo + (hi - lo) / 3 - log_a), math.exp(lo + 2 * (hi - lo) / 3 - log_a))


def weight_fraction(spectrum: Any, tau_lo: float, tau_hi: float) -> float:
    """Share of the spectrum's weight ∫ H d ln τ over its supported window that lies in [tau_lo, tau_hi]."""
    tau = np.asarray(spectrum.tau, dtype=float)
    H = np.clip(np.asarray(spectrum.H, dtype=float), 0.0, None) * quadrature_weights(tau)
    m = np.asarray(spectrum.in_window)
    total = float(np.sum(H[m]))
    if not total > 0:
        return math.nan
    inside = m & (tau >= tau_lo) & (tau <= tau_hi)
    return float(np.sum(H[inside])) / total
