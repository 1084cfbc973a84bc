"""Data-level and spectrum-level signatures used by the bead-spring diagnosis.

Pure functions over numpy arrays; each returns numbers, the decision is made in :mod:`tauspec.analysis.diagnosis`.

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
    "local_lines",
    "median_in",
    "SparseModes",
    "sparse_modes",
    "crossovers",
    "storage_between_crossovers",
    "storage_dominated_rise",
    "entangled_spectrum_shape",
    "gauss_smooth",
]

#: Rouse intermediate-region coefficient: G'' − η_s ω → (π/(2√2)) G0 (ωτ_1)^(1/2) (Ferry 1980, ch. 9).
ROUSE_G_COEFF = math.pi / (2 * math.sqrt(2))


def loglog_slope(x: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    """Least-squares slope of ln y against ln x and the rms of the log residuals.

    The straight line in closed form about the means (slope Σ dx dy / Σ dx², dx = ln x − mean, dy likewise).
    """
    lx = np.log(np.asarray(x, dtype=float))
    ly = np.log(np.asarray(y, dtype=float))
    if len(lx) < 2 or np.ptp(lx) == 0:
        return math.nan, math.nan
    dx = lx - lx.mean()
    dy = ly - ly.mean()
    slope = float(dx @ dy) / float(dx @ dx)
    res = dy - slope * dx
    return slope, math.sqrt(float(res @ res) / len(res))


#: Points this close (in decades) beyond the edge of a frequency window count as inside it.  Instruments measure
#: on regular grids (4, 5, 6 or 10 points per decade) that put points exactly on the edges of the quarter- and
#: half-decade windows, and export the frequencies rounded (three significant digits move a point by up to 0.002
#: decades): with a hairline edge the same sweep read from rad/s and from Hz selected different points (local
#: slopes 0.28 and 0.37, a verdict changed).  Our choice.
EDGE_TOLERANCE = 0.005


def local_lines(omega: np.ndarray, y: np.ndarray, half_width: float = 0.25) -> tuple[np.ndarray, np.ndarray]:
    """Straight lines of ln y against ln ω over ±``half_width`` decades around each point (≥ 3 points).

    Returns the local slopes d ln y / d ln ω and the lines' values of ln y at each point.  All windows at
    once: slope_i = Σ_j w_ij (x_j − x̄_i)(y_j − ȳ_i) / Σ_j w_ij (x_j − x̄_i)² and value_i = ȳ_i + slope_i (x_i − x̄_i),
    the least-squares line over the points j of window i (x = ln ω, y = ln y); the slope is NaN (and the value
    the window's mean) where a window spans no frequency range.  A point within :data:`EDGE_TOLERANCE` of a
    window's edge is inside it.
    """
    omega = np.asarray(omega, dtype=float)
    lw = np.log10(omega)
    dist = np.abs(lw[:, None] - lw[None, :])
    sel = dist <= half_width + EDGE_TOLERANCE
    for i in np.flatnonzero(np.count_nonzero(sel, axis=1) < 3):
        sel[i] = False
        sel[i, np.argsort(dist[i])[:3]] = True
    w = sel.astype(float)
    lx, ly = np.log(omega), np.log(np.asarray(y, dtype=float))
    count = w.sum(axis=1)
    mx, my = (w @ lx) / count, (w @ ly) / count
    dx = lx[None, :] - mx[:, None]
    dy = ly[None, :] - my[:, None]
    sxx = np.einsum("ij,ij->i", w, dx * dx)
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = np.where(sxx > 0, np.einsum("ij,ij->i", w, dx * dy) / sxx, math.nan)
    value = my + np.where(sxx > 0, slope, 0.0) * (lx - mx)
    return slope, value


def local_slopes(omega: np.ndarray, y: np.ndarray, half_width: float = 0.25) -> np.ndarray:
    """Local d ln y / d ln ω by a straight-line fit over ±``half_width`` decades around each point (≥ 3 points).

    The slopes of :func:`local_lines`; NaN where a window spans no frequency range.
    """
    return local_lines(omega, y, half_width)[0]


def end_slopes(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, decades: float = 0.5) -> tuple[float, float]:
    """Slopes of ln G' and ln G'' over the lowest ``decades`` of the window (at least the first three points).

    A point within :data:`EDGE_TOLERANCE` beyond the edge counts as inside.
    """
    sel = omega <= omega[0] * 10 ** (decades + EDGE_TOLERANCE)
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
                 solvent: bool = True, equilibrium_modulus: bool = False) -> SparseModes:
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
    if equilibrium_modulus:  # G_e ≥ 0: G' += G_e
        A = np.hstack([A, np.concatenate([1.0 / storage, np.zeros_like(omega)])[:, None]])
    if solvent:
        A = np.hstack([A, np.concatenate([np.zeros_like(omega), omega / loss])[:, None]])
    scale = np.max(A, axis=0)
    scale[scale == 0] = 1.0
    x, _ = optimize.nnls(A / scale, np.ones(A.shape[0]), maxiter=50 * A.shape[1])
    x = x / scale
    eta = float(x[-1]) if solvent else 0.0
    G_e = float(x[len(tau)]) if equilibrium_modulus else 0.0
    g_grid = x[: len(tau)]
    gp, gpp = modes_moduli(omega, g_grid, tau, eta_s=eta)
    gp = gp + G_e
    r = np.concatenate([gp / storage - 1, gpp / loss - 1])
    active = g_grid > 1e-8 * max(float(g_grid.max()), 1e-300)
    n_active = int(np.count_nonzero(active)) + (1 if eta > 0 else 0) + (1 if G_e > 0 else 0)
    modes_g, modes_t = _merge_modes(g_grid[active], tau[active], MERGE_RATIO)
    keep = modes_g >= 1e-3 * max(float(modes_g.sum()), 1e-300)  # drop specks that carry no modulus
    modes_g, modes_t = modes_g[keep], modes_t[keep]
    order = np.argsort(modes_t)[::-1]
    return SparseModes(g=modes_g[order], tau=modes_t[order], eta_s=eta,
                       chi2=float(r @ r), n_data=len(r), n_active=n_active)


# ----------------------------------------------------------------------------------- entanglement signatures
def crossovers(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray,
               half_width: float = 0.25) -> list[tuple[float, int]]:
    """Frequencies where G' and G'' cross, with the direction (+1: G' rises above G'', −1: falls below).

    ln(G'/G'') is smoothed by local straight lines over ±``half_width`` decades (so that noise around a
    near-equality does not make spurious crossings); crossings are interpolated linearly in ln ω.
    """
    lw = np.log10(omega)
    sm = local_lines(omega, storage / loss, half_width)[1]
    out = []
    for i in range(len(sm) - 1):
        if sm[i] == 0 or np.sign(sm[i]) != np.sign(sm[i + 1]):
            t = sm[i] / (sm[i] - sm[i + 1]) if sm[i] != sm[i + 1] else 0.0
            out.append((float(10 ** (lw[i] + t * (lw[i + 1] - lw[i]))), 1 if sm[i + 1] > sm[i] else -1))
    return out


def storage_between_crossovers(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray) -> float:
    """Decades between a crossover where G' rises above G'' and the next where it falls below; 0 without.

    The entanglement plateau lies between the terminal and the transition zone (Ferry 1980, ch. 2 and 13).
    """
    xs = crossovers(omega, storage, loss)
    best = 0.0
    ratio = np.log(storage / loss)
    for (w1, s1), (w2, s2) in zip(xs, xs[1:]):
        between = (omega >= w1) & (omega <= w2)
        # G' must stand clearly above G'' in between (at least 20 %, our choice): a critical gel with
        # n = 1/2 has G' = G'' and its noise alone makes crossings
        if s1 > 0 and s2 < 0 and np.any(between) and float(np.max(ratio[between])) >= math.log(1.2):
            best = max(best, math.log10(w2 / w1))
    return best


def storage_dominated_rise(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray,
                           half_width: float = 0.5) -> float:
    """Decades above the first crossover over which G' stays above G'' with a rising G''.

    G'' must rise and tan δ must not (local slopes over ±``half_width`` decades, tan δ slope ≤ 0.1), provided
    tan δ falls to 0.8 or below in that stretch; 0 otherwise.  The stretch ends where the first of these
    conditions stops holding, interpolated linearly between the two points around it, so that the length
    changes continuously with the data (counted in whole points it moves by a point spacing, 0.17 decade at six
    points per decade, when a condition changes sign at one point).

    A chain with τ_p = τ_1 p^(−a), a ≥ 1.5, has tan δ = tan(π/(2a)) ≥ 1 in its bead-spring region
    (REFERENCES.md), so G' well above G'' with a rising G'' means a spectrum flatter than τ^(−1/2):
    entanglement (Ferry 1980, ch. 2 and 13).  A finite chain near its shortest modes also shows it (its
    modes run out and G' levels off at N G0; measured on a continuum-form Rouse chain of N = 30: 1.1
    decades with tan δ down to 0.6), which is why the diagnosis asks for it only after the bead-spring
    tests have failed.  The 0.8 and 0.1 are our choice.
    """
    xs = crossovers(omega, storage, loss)
    ups = [w for w, s in xs if s > 0]
    if not ups:
        return 0.0
    start = ups[0]
    s_loss = local_slopes(omega, loss, half_width)
    s_tan = local_slopes(omega, loss / storage, half_width)
    # each condition as a margin that is positive where it holds: G' > G'', G'' rising, tan δ slope ≤ 0.1
    margins = np.vstack([np.log(storage / loss), s_loss, 0.1 - s_tan])
    ok = (omega >= start) & np.all(margins > 0, axis=0)
    lw = np.log10(omega)
    i = int(np.searchsorted(omega, start))
    end = i
    while end < len(omega) and ok[end]:
        end += 1
    if end == i or float(np.min(loss[i:end] / storage[i:end])) > 0.8:
        return 0.0
    last = float(lw[end - 1])
    if end < len(omega):  # the stretch ends between two points: where the first margin reaches zero (linearly)
        a, b = margins[:, end - 1], margins[:, end]
        fail = ~(b > 0)  # NaN included: a slope window with no frequency range ends the stretch at the last point
        t = np.nan_to_num(a[fail] / (a[fail] - b[fail]), nan=0.0)
        last += float(t.min()) * float(lw[end] - lw[end - 1])
    return last - math.log10(start)


#: Standard deviation (in ln τ) of the Gaussian that smooths H before the shape test: at the small strengths the
#: L-curve picks at 1–3 % noise a BSW spectrum comes back as peaks about a quarter decade apart (seen on the
#: synthetic melts), which hide the power law.  Our choice.
SHAPE_SMOOTH = 0.5


def gauss_smooth(tau: np.ndarray, H: np.ndarray, width: float) -> np.ndarray:
    """H convolved with a normalized Gaussian of standard deviation ``width`` in ln τ (on a log grid).

    Renormalized at the ends, so a constant stays constant.
    """
    du = float(np.log(tau[1] / tau[0]))
    half = int(math.ceil(4 * width / du))
    k = np.exp(-0.5 * (np.arange(-half, half + 1) * du / width) ** 2)
    return np.convolve(H, k, mode="same") / np.convolve(np.ones_like(H), k, mode="same")


def entangled_spectrum_shape(tau: np.ndarray, H: np.ndarray, window: tuple[float, float]) -> tuple[float, float, str]:
    """(n_e, width in decades, note) of a τ^(n_e) rise of H ending in a sharp cut-off (BSW 1990).

    Inside the supported window: the last peak of H (≥ 5 % of its maximum) must lie at least half a decade
    below the long end of the window, H must fall below a tenth of the peak within one decade above it (the
    cut-off), and below the peak ln H must rise along a straight line with slope n_e in
    [0.05, 0.6] over at least half a decade, ending 0.2 decade below the peak (where the regularization rounds
    the cut-off), rms ≤ 0.15.  H is first smoothed by a Gaussian of :data:`SHAPE_SMOOTH` in ln τ.  Returns
    (NaN, 0, why) when
    any of this is missing.  BSW (1990) found n_e ≈ 0.2–0.25 for
    their melts; the band and the other numbers are our choice.
    """
    lo, hi = window
    m = (tau >= lo) & (tau <= hi)
    t, h = tau[m], gauss_smooth(tau, np.clip(H, 0.0, None), SHAPE_SMOOTH)[m]
    if len(t) < 8 or not np.any(h > 0):
        return math.nan, 0.0, "too few grid points in the window"
    peaks = [k for k in range(1, len(h) - 1) if h[k] >= h[k - 1] and h[k] >= h[k + 1] and h[k] >= 0.05 * h.max()]
    if not peaks:
        return math.nan, 0.0, "no peak of H inside the window"
    p = peaks[-1]
    if math.log10(hi / t[p]) < 0.5:
        return math.nan, 0.0, "the last peak of H lies within half a decade of the window's long end"
    above = (t > t[p]) & (t <= 10 * t[p])
    if not np.any(h[above] < 0.1 * h[p]):
        return math.nan, 0.0, "H does not fall to a tenth of its last peak within a decade: no sharp cut-off"
    end = t[p] / 10**0.2
    best = (math.nan, 0.0)
    for start_dec in np.arange(0.5, 3.01, 0.25):
        sel = (t >= end / 10**start_dec) & (t <= end) & (h > 0)
        if np.count_nonzero(sel) < 5 or t[sel][0] > end / 10**start_dec * 1.2:
            break
        slope, rms = loglog_slope(t[sel], h[sel])
        if 0.05 <= slope <= 0.6 and rms <= 0.15:
            best = (slope, float(start_dec + 0.2))
    if not best[1]:
        return math.nan, 0.0, "below the last peak H does not rise as one power law with 0.05 <= n_e <= 0.6"
    return best[0], best[1], f"H rises as tau^{best[0]:.2f} over {best[1]:.2f} decades up to a cut-off at {t[p]:.3g} s"
