"""Models of the horizontal shift factor a_T(T): WLF and Arrhenius.

Both models are fitted to the *pairwise* shifts between adjacent temperatures,

    d_k = log10 a_T(T_{k+1}) − log10 a_T(T_k),   with standard errors s_k,

rather than to the chained values log10 a_T(T_i): the pairwise shifts are
measured independently of one another, the chained ones are not (each is a
running sum of the pairwise shifts), so weighted least squares on the d_k is
the fit whose weights are right.

WLF (Williams, Landel & Ferry 1955)::

    log10 a_T = −C1 (T − T_ref) / (C2 + T − T_ref)

Arrhenius (Ferry 1980, ch. 11)::

    ln a_T = (E_a / R) (1/T − 1/T_ref)

Which fits better is decided by Akaike's information criterion with the
shift variances taken as known, AIC = χ² + 2k (k = 2 for WLF, 1 for
Arrhenius; Akaike 1974; Burnham & Anderson 2002, ch. 2); the lower AIC
wins and a difference below 2 is reported as weak.

References
----------
Williams, M. L., Landel, R. F. & Ferry, J. D. (1955). The temperature dependence of relaxation mechanisms in
amorphous polymers and other glass-forming liquids. *J. Am. Chem. Soc.* 77, 3701–3707.
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, ch. 11.
Akaike, H. (1974). A new look at the statistical model identification. *IEEE Trans. Autom. Control* 19, 716–723.
Burnham, K. P. & Anderson, D. R. (2002). *Model Selection and Multimodel Inference*, 2nd ed., Springer, ch. 2.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy import optimize

from ..data.record import field, record
from ..rounding import number

__all__ = [
    "GAS_CONSTANT",
    "WLFFit",
    "ArrheniusFit",
    "wlf_log_aT",
    "arrhenius_log_aT",
    "fit_wlf",
    "fit_arrhenius",
    "compare_fits",
]


#: Molar gas constant R in J/(mol K) (CODATA 2018, exact since the 2019 SI redefinition).
GAS_CONSTANT = 8.314462618

#: Two-sided 95 % normal quantile used for every interval.
Z95 = 1.959963984540054

#: Largest C2 (K) the WLF fit explores; beyond it WLF is indistinguishable from Arrhenius.
_C2_MAX = 1.0e5


def wlf_log_aT(T: Any, T_ref: float, C1: float, C2: float) -> np.ndarray:
    """Return log10 a_T = −C1 (T − T_ref)/(C2 + T − T_ref) (Williams, Landel & Ferry 1955)."""
    dT = np.asarray(T, dtype=float) - T_ref
    return -C1 * dT / (C2 + dT)


def arrhenius_log_aT(T: Any, T_ref: float, Ea: float) -> np.ndarray:
    """Return log10 a_T from ln a_T = (E_a/R)(1/T − 1/T_ref) (Ferry 1980, ch. 11)."""
    T = np.asarray(T, dtype=float)
    return Ea / GAS_CONSTANT * (1.0 / T - 1.0 / T_ref) / math.log(10.0)


@record
class WLFFit:
    """The WLF constants at ``T_ref`` with 95 % intervals.

    ``C1`` is dimensionless, ``C2`` in K.  ``chi2`` is the weighted sum of
    squared misfits of the pairwise shifts, ``dof`` its degrees of freedom,
    ``aic`` = χ² + 4.  ``at_bound`` is True when C2 ran into the edge of the
    explored range (the data look Arrhenius-like, or C2 is not determined).
    """

    C1: float
    C2: float
    C1_ci: tuple[float, float]
    C2_ci: tuple[float, float]
    T_ref: float = field(key="T_ref_K")
    chi2: float
    dof: int
    aic: float
    at_bound: bool
    cov: tuple[tuple[float, float], tuple[float, float]]

    def log_aT(self, T: Any) -> np.ndarray:
        """Return the fitted log10 a_T at temperatures ``T`` (K)."""
        return wlf_log_aT(T, self.T_ref, self.C1, self.C2)



@record
class ArrheniusFit:
    """The Arrhenius activation energy ``Ea`` (J/mol) at ``T_ref`` with its 95 % interval."""

    Ea: float
    Ea_ci: tuple[float, float]
    T_ref: float = field(key="T_ref_K")
    chi2: float
    dof: int
    aic: float

    def log_aT(self, T: Any) -> np.ndarray:
        """Return the fitted log10 a_T at temperatures ``T`` (K)."""
        return arrhenius_log_aT(T, self.T_ref, self.Ea)



def _pairs(temperatures: np.ndarray, shifts: np.ndarray, errors: np.ndarray):
    T = np.asarray(temperatures, dtype=float)
    d = np.asarray(shifts, dtype=float)
    s = np.asarray(errors, dtype=float)
    if len(T) != len(d) + 1 or len(s) != len(d):
        raise ValueError("need n temperatures and n-1 pairwise shifts with their errors")
    if np.any(np.diff(T) <= 0):
        raise ValueError("temperatures must be strictly increasing")
    if np.any(~(s > 0)):
        raise ValueError("standard errors must be positive")
    return T, d, s


def _ci(value: float, var: float) -> tuple[float, float]:
    half = Z95 * math.sqrt(var) if var >= 0 and math.isfinite(var) else math.inf
    return (value - half, value + half)


def fit_arrhenius(temperatures: Any, shifts: Any, errors: Any, *, T_ref: float) -> ArrheniusFit:
    """Fit E_a to the pairwise shifts d_k between adjacent temperatures.

    d_k = (E_a / (R ln 10)) (1/T_{k+1} − 1/T_k) is linear in E_a, so the
    weighted least-squares estimate is closed-form.  The variance is scaled
    by χ²/dof when that exceeds 1 (the scatter is then larger than the
    stated errors).

    Parameters
    ----------
    temperatures : array_like
        n strictly increasing temperatures, K.
    shifts, errors : array_like
        n − 1 pairwise shifts d_k (decades) and their standard errors.
    T_ref : float
        Reference temperature, K.
    """
    T, d, s = _pairs(temperatures, shifts, errors)
    g = (1.0 / T[1:] - 1.0 / T[:-1]) / (GAS_CONSTANT * math.log(10.0))
    w = 1.0 / s**2
    Ea = float(np.sum(w * g * d) / np.sum(w * g * g))
    chi2 = float(np.sum(w * (d - Ea * g) ** 2))
    dof = len(d) - 1
    var = 1.0 / float(np.sum(w * g * g))
    if dof > 0:
        var *= max(1.0, chi2 / dof)
    return ArrheniusFit(T_ref=float(T_ref), Ea=Ea, Ea_ci=_ci(Ea, var), chi2=chi2, dof=dof, aic=chi2 + 2.0)


def fit_wlf(temperatures: Any, shifts: Any, errors: Any, *, T_ref: float) -> WLFFit | None:
    """Fit the WLF constants C1, C2 (at ``T_ref``) to pairwise shifts.

    For a fixed C2 the model is linear in C1, so C1 is profiled out in closed
    form and the remaining one-dimensional problem in C2 is solved by a grid
    in ln(C2 + T_min − T_ref) followed by a bounded scalar minimization.
    C2 is kept above T_ref − T_min (so that C2 + T − T_ref > 0 over the data;
    the Vogel temperature T_ref − C2 lies below every measured temperature)
    and below 1e5 K.  The covariance comes from the Jacobian of the weighted
    residuals (Gauss–Newton), scaled by χ²/dof when that exceeds 1.

    Returns ``None`` with fewer than three temperatures (two pairwise shifts
    cannot fix two constants).
    """
    T, d, s = _pairs(temperatures, shifts, errors)
    if len(T) < 3:
        return None
    w = 1.0 / s**2
    floor = float(T_ref - T[0])  # C2 must exceed this

    def basis(C2: float) -> np.ndarray:
        f = (T - T_ref) / (C2 + T - T_ref)
        return -(f[1:] - f[:-1])  # d_k = C1 * basis

    def profile(u: float) -> tuple[float, float]:
        C2 = floor + math.exp(u)
        b = basis(C2)
        C1 = float(np.sum(w * b * d) / np.sum(w * b * b))
        return C1, float(np.sum(w * (d - C1 * b) ** 2))

    span = float(T[-1] - T[0])
    u_lo = math.log(max(1e-3, 1e-3 * span))
    u_hi = math.log(_C2_MAX)
    grid = np.linspace(u_lo, u_hi, 200)
    chis = np.array([profile(u)[1] for u in grid])
    k = int(np.argmin(chis))
    lo, hi = grid[max(k - 1, 0)], grid[min(k + 1, len(grid) - 1)]
    if hi > lo:
        res = optimize.minimize_scalar(lambda u: profile(u)[1], bounds=(lo, hi), method="bounded",
                                       options={"xatol": 1e-10})
        u_best = float(res.x) if res.fun <= chis[k] else float(grid[k])
    else:
        u_best = float(grid[k])
    C1, chi2 = profile(u_best)
    C2 = floor + math.exp(u_best)
    at_bound = k in (0, len(grid) - 1)

    # Jacobian of the weighted residuals with respect to (C1, C2).
    dT = T - T_ref
    f = dT / (C2 + dT)
    df_dC2 = -dT / (C2 + dT) ** 2
    J = np.column_stack([-(f[1:] - f[:-1]), -C1 * (df_dC2[1:] - df_dC2[:-1])]) / s[:, None]
    dof = len(d) - 2
    with np.errstate(all="ignore"):
        try:
            cov = np.linalg.inv(J.T @ J)
        except np.linalg.LinAlgError:
            cov = np.full((2, 2), np.inf)
    if dof > 0:
        cov = cov * max(1.0, chi2 / dof)
    return WLFFit(
        T_ref=float(T_ref),
        C1=float(C1),
        C2=float(C2),
        C1_ci=_ci(C1, float(cov[0, 0])),
        C2_ci=_ci(C2, float(cov[1, 1])),
        chi2=float(chi2),
        dof=dof,
        aic=float(chi2) + 4.0,
        at_bound=bool(at_bound),
        cov=((float(cov[0, 0]), float(cov[0, 1])), (float(cov[1, 0]), float(cov[1, 1]))),
    )


def compare_fits(wlf: WLFFit | None, arrhenius: ArrheniusFit) -> tuple[str, str]:
    """Return (``"wlf"`` or ``"arrhenius"``, a sentence): the model with the lower AIC.

    A difference below 2 is called weak (Burnham & Anderson 2002, ch. 2:
    models within 2 AIC units both have substantial support).  With
    Arrhenius data WLF reaches the same χ² only in its Arrhenius limit, so
    Arrhenius wins by about 2 for its one constant fewer.
    """
    if wlf is None:
        return "arrhenius", "only Arrhenius was fitted (WLF needs at least three temperatures)"
    delta = arrhenius.aic - wlf.aic
    best, gap = ("wlf", delta) if delta > 0 else ("arrhenius", -delta)
    name = "WLF" if best == "wlf" else "Arrhenius"
    strength = " (weak: a difference below 2)" if gap < 2.0 else ""
    return best, f"{name} fits better: AIC lower by {number(gap)}{strength}"
