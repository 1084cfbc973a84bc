"""The shift between two sweeps at neighbouring temperatures: smooth curves, their overlap and the fitted shift."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from typing import Any

import numpy as np
from numpy.polynomial import legendre
from scipy import optimize

from ...data.record import field, record
from ...data.sweep import Sweep
from ...errors import TauspecError

__all__ = ["MIN_OVERLAP_POINTS", "GRID_STEP", "NOISE_FLOOR", "noise_level", "PairShift"]


#: Fewest points of *each* sweep that must fall inside the overlap of a pair.
MIN_OVERLAP_POINTS = 4

#: Spacing (decades) of the grid of trial shifts; a bounded Brent search refines the best node.
GRID_STEP = 0.02

#: Smallest estimated relative noise (0.1 %): no rheometer resolves the moduli better (common practice, no
#: single source); it keeps the misfit check meaningful on noiseless synthetic data.
NOISE_FLOOR = 1e-3


# --------------------------------------------------------------------------- smooth fits and noise


@dataclasses.dataclass(frozen=True)
class _Poly:
    """A least-squares Legendre polynomial in x = log10 ω over [lo, hi], with its residual scatter."""

    lo: float
    hi: float
    coef: np.ndarray
    sigma: float  # sqrt(RSS / (n − p))

    def __call__(self, x: np.ndarray) -> np.ndarray:
        t = (2.0 * np.asarray(x, dtype=float) - (self.lo + self.hi)) / (self.hi - self.lo)
        return legendre.legval(t, self.coef)


def _gcv_degree(t: np.ndarray, Y: np.ndarray, max_degree: int, w: np.ndarray | None = None) -> int:
    """Return the polynomial degree (1 to ``max_degree``) minimizing GCV = n RSS/(n − p)² over the columns of Y.

    ``w`` are optional row weights (1/σ).  Generalized cross-validation:
    Craven & Wahba (1979), *Numer. Math.* 31, 377–403.
    """
    n = len(t)
    w = np.ones(n) if w is None else np.asarray(w, dtype=float)
    Yw = Y * (w[:, None] if Y.ndim == 2 else w)
    best, best_deg = math.inf, 1
    for deg in range(1, max(1, max_degree) + 1):
        p = deg + 1
        if n - p < 2:
            break
        V = legendre.legvander(t, deg) * w[:, None]
        coef, *_ = np.linalg.lstsq(V, Yw, rcond=None)
        gcv = n * float(np.sum((Yw - V @ coef) ** 2)) / (n - p) ** 2
        if gcv < best * (1 - 1e-9):
            best, best_deg = gcv, deg
    return best_deg


def _fit_poly(x: np.ndarray, y: np.ndarray) -> _Poly:
    """Fit a polynomial in x of GCV-chosen degree (1 to 7, at most n/3)."""
    lo, hi = float(x[0]), float(x[-1])
    t = (2.0 * x - (lo + hi)) / (hi - lo)
    deg = _gcv_degree(t, y, min(7, len(x) // 3))
    V = legendre.legvander(t, deg)
    coef, *_ = np.linalg.lstsq(V, y, rcond=None)
    rss = float(np.sum((y - V @ coef) ** 2))
    return _Poly(lo=lo, hi=hi, coef=coef, sigma=math.sqrt(rss / (len(x) - deg - 1)))


def noise_level(omega: np.ndarray, modulus: np.ndarray) -> float:
    """Return the relative noise of a modulus: the scatter of ln G about a smooth fit in log ω.

    The fit is a polynomial in log10 ω whose degree (1 to 7, at most n/3)
    minimizes generalized cross-validation (Craven & Wahba 1979); the
    estimate is σ = sqrt(RSS/(n − p)) with p coefficients, floored at
    :data:`NOISE_FLOOR`.  Residuals of ln G are relative errors of G.
    """
    x = np.log10(np.asarray(omega, dtype=float))
    return max(_fit_poly(x, np.log(np.asarray(modulus, dtype=float))).sigma, NOISE_FLOOR)


@dataclasses.dataclass(frozen=True)
class _Curve:
    """One sweep prepared for shifting: logs, smooth fits and noise."""

    index: int  # position in the caller's list
    T: float
    x: np.ndarray  # log10 ω
    yp: np.ndarray  # ln G'
    ypp: np.ndarray  # ln G''
    fp: _Poly
    sp: float  # noise of ln G'
    spp: float  # noise of ln G''
    label: str


def _prepare(sweep: Sweep, T: float, index: int) -> _Curve:
    x = np.log10(sweep.omega)
    yp, ypp = np.log(sweep.storage), np.log(sweep.loss)
    fp = _fit_poly(x, yp)
    sp = max(fp.sigma, NOISE_FLOOR)
    spp = noise_level(sweep.omega, sweep.loss)
    return _Curve(index, T, x, yp, ypp, fp, sp, spp, sweep.source or sweep.name)


# --------------------------------------------------------------------------- one pair of sweeps


@record
class PairShift:
    """The shift between two adjacent temperatures ``T_low`` < ``T_high`` (K).

    ``log_shift`` = log10 a_T(T_high) − log10 a_T(T_low) (decades; negative
    when the hotter sweep relaxes faster) with its standard error ``se``;
    ``log_vertical`` = ln b_T(T_high) − ln b_T(T_low) (fixed by the density
    rule, or fitted with standard error ``vertical_se``); ``overlap`` the
    width of the overlap in decades of ω and ``points`` the number of data
    points in it; ``misfit`` the RMS of the overlap residuals of ln G' and
    ln G'' about their common smooth curve, in units of the sweeps' noise
    (about 1 when superposition holds).
    """

    T_low: float = field(key="T_low_K")
    T_high: float = field(key="T_high_K")
    log_shift: float
    se: float
    log_vertical: float
    vertical_se: float
    overlap: float = field(key="overlap_decades")
    points: int
    misfit: float
    dof: int

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        """Temperatures in °C first, then in K (read back from K)."""
        return {"T_low": self.T_low - 273.15, "T_high": self.T_high - 273.15, **d}

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        d.pop("T_low", None)
        d.pop("T_high", None)
        return d


def _celsius(T: float) -> str:
    return f"{T - 273.15:g} C"


@dataclasses.dataclass
class _Fit:
    """The joint fit of one pair at one trial shift."""

    chi2: float
    dof: int
    v: float
    J: np.ndarray | None = None  # weighted Jacobian, column 0 = d (and 1 = v when fitted)
    points: int = 0


class _Pair:
    """Two adjacent sweeps overlapped at a trial shift d (decades) and vertical offset v (ln units).

    In the overlap window the cold sweep's points (x, y) and the hot sweep's
    shifted points (x + d, y − v) are fitted together by one polynomial per
    quantity (ln tan δ; or ln G' and ln G''), weighted by each sweep's noise.
    The shift minimizes the weighted residual sum of squares per degree of
    freedom; the polynomial coefficients (and v, when fitted) are solved
    linearly at every trial d (variable projection: Golub & Pereyra 1973,
    *SIAM J. Numer. Anal.* 10, 413–432).
    """

    def __init__(self, lo: _Curve, hi: _Curve):
        self.lo, self.hi = lo, hi
        self.degree = {"tan": 2, "mod": 2}

    def window(self, d: float) -> tuple[float, float]:
        return max(self.lo.x[0], self.hi.x[0] + d), min(self.lo.x[-1], self.hi.x[-1] + d)

    def overlap_width(self, d: float) -> float:
        a, b = self.window(d)
        return float(b - a)

    def _columns(self, d: float, kind: str, v: float):
        """Return (t, y, sigma, is_hot, quantity index, window) for the points in the overlap, or None."""
        lo, hi = self.lo, self.hi
        a, b = self.window(d)
        if b <= a:
            return None
        m_lo = (lo.x >= a) & (lo.x <= b)
        m_hi = (hi.x + d >= a) & (hi.x + d <= b)
        if m_lo.sum() < MIN_OVERLAP_POINTS or m_hi.sum() < MIN_OVERLAP_POINTS:
            return None
        x = np.concatenate([lo.x[m_lo], hi.x[m_hi] + d])
        hot = np.concatenate([np.zeros(m_lo.sum(), bool), np.ones(m_hi.sum(), bool)])
        if kind == "tan":
            y = np.concatenate([lo.ypp[m_lo] - lo.yp[m_lo], hi.ypp[m_hi] - hi.yp[m_hi]])
            s = np.where(hot, math.hypot(hi.sp, hi.spp), math.hypot(lo.sp, lo.spp))
            q = np.zeros(len(x), dtype=int)
        else:
            x = np.concatenate([x, x])
            hot = np.concatenate([hot, hot])
            y = np.concatenate([lo.yp[m_lo], hi.yp[m_hi] - v, lo.ypp[m_lo], hi.ypp[m_hi] - v])
            s = np.concatenate([np.full(m_lo.sum(), lo.sp), np.full(m_hi.sum(), hi.sp),
                                np.full(m_lo.sum(), lo.spp), np.full(m_hi.sum(), hi.spp)])
            q = np.repeat([0, 1], len(x) // 2)
        t = (2.0 * x - (a + b)) / (b - a)
        return t, y, s, hot, q, (a, b)

    def _design(self, t: np.ndarray, q: np.ndarray, degree: int) -> np.ndarray:
        V = legendre.legvander(t, degree)
        nq = int(q.max()) + 1
        X = np.zeros((len(t), nq * (degree + 1)))
        for k in range(nq):
            X[q == k, k * (degree + 1):(k + 1) * (degree + 1)] = V[q == k]
        return X

    def choose_degree(self, d: float, kind: str, v: float) -> None:
        """Fix the polynomial degree of ``kind`` by GCV on the pooled points at shift d."""
        cols = self._columns(d, kind, v)
        if cols is None:
            return
        t, y, s, hot, q, _ = cols
        n_side = min(int(np.sum(~hot & (q == 0))), int(np.sum(hot & (q == 0))))
        Y = np.column_stack([y[q == k] for k in range(int(q.max()) + 1)])
        self.degree[kind] = _gcv_degree(t[q == 0], Y, min(6, max(1, n_side // 2)), 1.0 / s[q == 0])

    def fit(self, d: float, kind: str, v: float | None, jacobian: bool = False) -> _Fit:
        """Fit at shift d; ``v=None`` fits the vertical offset (``kind="mod"`` only)."""
        cols = self._columns(d, kind, 0.0 if v is None else v)
        if cols is None:
            return _Fit(math.inf, 0, math.nan)
        t, y, s, hot, q, (a, b) = cols
        deg = self.degree[kind]
        X = self._design(t, q, deg)
        if v is None:
            X = np.column_stack([X, hot.astype(float)])
        Xw, yw = X / s[:, None], y / s
        coef, *_ = np.linalg.lstsq(Xw, yw, rcond=None)
        r = yw - Xw @ coef
        dof = len(y) - X.shape[1] - 1
        if dof < 1:
            return _Fit(math.inf, 0, math.nan)
        v_hat = float(coef[-1]) if v is None else float(v)
        out = _Fit(float(r @ r), dof, v_hat, points=int(np.sum(q == 0)))
        if jacobian:
            # ∂(fitted value)/∂d at the hot points: the slope of the polynomial in x = log10 ω.
            nq = int(q.max()) + 1
            slope = np.zeros(len(t))
            for k in range(nq):
                c = coef[k * (deg + 1):(k + 1) * (deg + 1)]
                slope[q == k] = legendre.legval(t[q == k], legendre.legder(c)) * 2.0 / (b - a)
            jd = np.where(hot, slope, 0.0) / s
            out.J = np.column_stack([jd, Xw])  # derivatives of the fitted values; signs do not matter for JᵀJ
        return out

    def objective(self, d: float, kind: str, v: float | None) -> float:
        f = self.fit(d, kind, v)
        return f.chi2 / f.dof if f.dof > 0 else math.inf


def _grid_minimum(fun: Callable[[float], float], lo: float, hi: float, step: float) -> float:
    """Minimize ``fun`` on [lo, hi]: a grid of spacing ``step`` then a bounded Brent search around its best node."""
    n = max(3, int(math.ceil((hi - lo) / step)) + 1)
    grid = np.linspace(lo, hi, n)
    vals = np.array([fun(g) for g in grid])
    finite = np.isfinite(vals)
    if not np.any(finite):
        return math.nan
    k = int(np.argmin(np.where(finite, vals, np.inf)))
    a, b = grid[max(k - 1, 0)], grid[min(k + 1, n - 1)]
    res = optimize.minimize_scalar(fun, bounds=(a, b), method="bounded", options={"xatol": 1e-6})
    return float(res.x) if np.isfinite(res.fun) and res.fun <= vals[k] else float(grid[k])


def _standard_errors(fit: _Fit) -> tuple[float, float]:
    """Standard errors of d (and v) from the weighted Jacobian of the joint fit: cov = s² (JᵀJ)⁻¹, s² = χ²/dof."""
    J = fit.J
    s2 = fit.chi2 / fit.dof
    try:
        cov = s2 * np.linalg.inv(J.T @ J)
    except np.linalg.LinAlgError:
        return math.inf, math.inf
    se_d = math.sqrt(cov[0, 0]) if cov[0, 0] > 0 else math.inf
    se_v = math.sqrt(cov[-1, -1]) if cov[-1, -1] > 0 else math.inf
    return se_d, se_v


def _storage_bracket(pair: _Pair, v_guess: float) -> float:
    """Return a first guess of d from the storage moduli alone, or refuse a pair that cannot overlap.

    G'(ω) of a material with a non-negative spectrum increases with ω (each
    Maxwell term ω²τ²/(1 + ω²τ²) does; Ferry 1980, ch. 3), so two sweeps can
    share reduced frequencies only if their reduced storage moduli share
    values.  The guess matches the hot sweep's G' to the cold sweep's
    smoothed G' curve.
    """
    lo, hi = pair.lo, pair.hi
    g_lo = lo.fp(lo.x)
    g_hi = hi.fp(hi.x) - v_guess
    common = (max(g_lo.min(), g_hi.min()), min(g_lo.max(), g_hi.max()))
    sel_lo = (lo.yp >= common[0]) & (lo.yp <= common[1])
    sel = (hi.yp - v_guess >= common[0]) & (hi.yp - v_guess <= common[1])
    if common[1] <= common[0] or sel_lo.sum() < MIN_OVERLAP_POINTS or sel.sum() < MIN_OVERLAP_POINTS:
        raise TauspecError(
            f"the sweeps at {_celsius(lo.T)} ({lo.label}) and {_celsius(hi.T)} ({hi.label}) do not overlap: "
            f"their reduced storage moduli span {math.exp(g_lo.min()):.3g}–{math.exp(g_lo.max()):.3g} Pa and "
            f"{math.exp(g_hi.min()):.3g}–{math.exp(g_hi.max()):.3g} Pa, so no shift superposes "
            f"{MIN_OVERLAP_POINTS} or more points of each; add a sweep at a temperature in between",
        )
    xs = np.linspace(lo.x[0], lo.x[-1], 400)
    curve = np.maximum.accumulate(lo.fp(xs))
    x_match = np.interp(hi.yp[sel] - v_guess, curve, xs)
    return float(np.median(x_match - hi.x[sel]))


def _shift_pair(pair: _Pair, v_fixed: float | None, v_guess: float, min_overlap: float) -> PairShift:
    """Find the shift of one adjacent pair: ln tan δ first, then ln G' and ln G''."""
    lo, hi = pair.lo, pair.hi
    d0 = _storage_bracket(pair, v_guess)
    a = max(d0 - 1.0, lo.x[0] - hi.x[-1] + min_overlap)
    b = min(d0 + 1.0, lo.x[-1] - hi.x[0] - min_overlap)
    refuse = TauspecError(
        f"the sweeps at {_celsius(lo.T)} ({lo.label}) and {_celsius(hi.T)} ({hi.label}) do not overlap by "
        f"{min_overlap:g} decade of frequency with {MIN_OVERLAP_POINTS} points of each at any plausible shift; "
        "add a sweep at a temperature in between",
    )
    if b <= a:
        raise refuse

    # Stage 1: ln tan δ, which b_T does not affect.
    d_start = min(max(d0, a), b)
    pair.choose_degree(d_start, "tan", 0.0)
    d1 = _grid_minimum(lambda t: pair.objective(t, "tan", 0.0), a, b, GRID_STEP)
    if not math.isfinite(d1):
        raise refuse
    se1, _ = _standard_errors(pair.fit(d1, "tan", 0.0, jacobian=True))

    # Stage 2: refine with ln G' and ln G'' near the tan δ estimate (wider when tan δ is flat).
    half = min(max(0.3, 3.0 * se1), 1.0) if math.isfinite(se1) else 1.0
    a2, b2 = max(a, d1 - half), min(b, d1 + half)
    pair.choose_degree(d1, "mod", v_guess)
    d = _grid_minimum(lambda t: pair.objective(t, "mod", v_fixed), a2, b2, GRID_STEP)
    if not math.isfinite(d):
        d = d1
    fit = pair.fit(d, "mod", v_fixed, jacobian=True)
    if not math.isfinite(fit.chi2):
        raise refuse
    se_d, se_v = _standard_errors(fit)
    return PairShift(
        T_low=lo.T,
        T_high=hi.T,
        log_shift=d,
        se=se_d,
        log_vertical=fit.v,
        vertical_se=se_v if v_fixed is None else 0.0,
        overlap=pair.overlap_width(d),
        points=fit.points,
        misfit=float(math.sqrt(fit.chi2 / fit.dof)),
        dof=fit.dof,
    )


# --------------------------------------------------------------------------- chaining to T_ref


def _chain(values: np.ndarray, variances: np.ndarray, lo: int, f: float) -> tuple[np.ndarray, np.ndarray]:
    """Chain pairwise steps to a reference a fraction ``f`` of the way from node ``lo`` to ``lo + 1``.

    Node i gets Σ(steps from the reference to i); its variance sums the
    variances of the steps crossed (the partial step weighted by f² or (1 − f)²).
    """
    n = len(values) + 1
    cum = np.concatenate([[0.0], np.cumsum(values)])
    ref = cum[lo] + f * values[lo] if lo < len(values) else cum[lo]
    out = cum - ref
    var = np.zeros(n)
    for i in range(n):
        if i <= lo:
            var[i] = float(np.sum(variances[i:lo])) + (f * f * variances[lo] if lo < len(values) else 0.0)
        else:
            var[i] = (1 - f) ** 2 * variances[lo] + float(np.sum(variances[lo + 1:i]))
    return out, var
