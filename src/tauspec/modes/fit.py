"""Discrete Maxwell modes fitted to a frequency sweep.

The model is the generalized Maxwell model (Ferry 1980, ch. 3)

    G'(ω)  = G_e + Σ g_i (ωτ_i)²/(1 + (ωτ_i)²)
    G''(ω) = η_s ω + Σ g_i ωτ_i/(1 + (ωτ_i)²)

with g_i > 0, τ_i > 0, η_s ≥ 0, G_e ≥ 0.  The modes are fitted by nonlinear
least squares in (ln g_i, ln τ_i) on the relative residuals
r = (G'_fit − G')/G', (G''_fit − G'')/G''.  Starting values come from the
continuous spectrum when one is given (lumps of H d ln τ) or else from
unregularized NNLS on a fine τ grid, whose solution is sparse by itself
(Jakeš 1995).  The number of modes is the smallest M whose fit is not
significantly worse than the fit with M + 1 modes (nested-model F-test), and
never more than the data resolve.  See ``docs/modes.md``.

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, ch. 3.
Jakeš, J. (1995). Collect. Czech. Chem. Commun. 60, 1815.
Baumgaertel, M. & Winter, H. H. (1989). Rheol. Acta 28, 511.
Seber, G. A. F. & Wild, C. J. (1989). *Nonlinear Regression*, Wiley, §5.3
(F-test for nested models; section from memory).
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from ..errors import SettingsError, WeakResultWarning
from ..spectrum.invert import supported_window
from ..spectrum.kernels import loss_kernel, modes_moduli, quadrature_weights, storage_kernel
from .derived import outside_mask

__all__ = ["Modes", "fit_modes", "ModeCandidate"]

#: A fitted mode whose largest contribution to G' or G'' is below this share of
#: the data is dropped and the fit repeated.
_NEGLIGIBLE = 1e-4

#: Relaxation times are kept within this factor beyond the measured 1/ω range ...
_TAU_MARGIN = 100.0
#: ... or within this factor on the side where a solvent viscosity (or a plateau) is fitted, since
#: a mode beyond it cannot be told apart from η_s (or G_e).
_NEAR = 10.0


@dataclasses.dataclass(frozen=True, kw_only=True)
class ModeCandidate:
    """One candidate mode set considered by the mode-count rule."""

    n_modes: int
    rss: float
    n_params: int
    f_stat: float
    p_value: float
    resolved: bool

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form."""
        return dataclasses.asdict(self)


@dataclasses.dataclass(frozen=True, kw_only=True, eq=False)
class Modes:
    """Discrete Maxwell modes fitted to one sweep.

    Attributes
    ----------
    g, tau : ndarray
        Mode strengths (Pa) and relaxation times (s), sorted by τ.
    g_se, tau_se : ndarray
        Standard errors from the Jacobian at the solution (delta method from
        ln g, ln τ); NaN where the covariance is singular.
    eta_s, eta_s_se : float
        Solvent (high-frequency Newtonian) viscosity, Pa·s, and its standard error.
    G_e, G_e_se : float
        Equilibrium modulus, Pa, and its standard error.
    window : (float, float)
        Supported window (tau_lo, tau_hi) of the data (Davies & Anderssen 1997).
    outside_window : ndarray of bool
        True for modes whose τ lies outside the window.
    residual_rms : float
        Root-mean-square relative residual of the fit.
    candidates : tuple of ModeCandidate
        Every mode count tried, with its F-test against the next smaller set.
    """

    g: np.ndarray
    tau: np.ndarray
    g_se: np.ndarray
    tau_se: np.ndarray
    eta_s: float
    eta_s_se: float
    G_e: float
    G_e_se: float
    window: tuple[float, float]
    outside_window: np.ndarray
    residual_rms: float
    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray
    storage_fit: np.ndarray
    loss_fit: np.ndarray
    candidates: tuple[ModeCandidate, ...] = ()
    start: str = "nnls"
    alpha: float = 0.01
    per_decade: float = 2.0
    solvent: bool = True
    plateau: bool = False
    sample: str = ""
    source: str = ""
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        for name in ("g", "tau", "g_se", "tau_se", "outside_window", "omega", "storage", "loss", "storage_fit",
                     "loss_fit"):
            arr = np.array(getattr(self, name), copy=True)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def n_modes(self) -> int:
        """Number of Maxwell modes."""
        return int(self.g.size)

    @property
    def in_window(self) -> np.ndarray:
        """True for modes inside the supported window."""
        return ~self.outside_window

    def moduli(self, omega: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Return (G', G'') of the mode set at ``omega`` (rad/s)."""
        return modes_moduli(omega, self.g, self.tau, eta_s=self.eta_s, G_e=self.G_e)

    def to_dict(self) -> dict[str, Any]:
        """Return exactly the ``modes`` object of the JSON output: ``g``, ``tau``, ``g_se``, ``tau_se``."""
        return {"g": self.g.tolist(), "tau": self.tau.tolist(), "g_se": self.g_se.tolist(),
                "tau_se": self.tau_se.tolist()}

    def details(self) -> dict[str, Any]:
        """Return everything else about the fit (window, flags, η_s, G_e, the mode-count search)."""
        return {
            "n_modes": self.n_modes,
            "outside_window": self.outside_window.tolist(),
            "window": list(self.window),
            "eta_s": self.eta_s,
            "eta_s_se": self.eta_s_se,
            "G_e": self.G_e,
            "G_e_se": self.G_e_se,
            "residual_rms": self.residual_rms,
            "start": self.start,
            "count_rule": f"F-test for nested fits, alpha={self.alpha}, at most {self.per_decade:g} modes per decade",
            "candidates": [c.to_dict() for c in self.candidates],
            "warnings": list(self.warnings),
        }

    def report(self) -> str:
        """Return a plain-text table of the modes with their standard errors and window flags."""
        lo, hi = self.window
        lines = [
            f"{self.n_modes} Maxwell mode(s) for {self.sample or self.source or 'the sample'} "
            f"(relative rms residual {100 * self.residual_rms:.2f} %; started from {self.start})",
            f"supported window {lo:.4g} s to {hi:.4g} s (Davies & Anderssen 1997)",
            f"{'mode':>4}  {'g [Pa]':>12}  {'± se':>10}  {'tau [s]':>12}  {'± se':>10}",
        ]
        for i, (g, gse, t, tse, out) in enumerate(
            zip(self.g, self.g_se, self.tau, self.tau_se, self.outside_window), start=1
        ):
            flag = "  outside the supported window" if out else ""
            lines.append(f"{i:>4}  {g:12.5g}  {gse:10.3g}  {t:12.5g}  {tse:10.3g}{flag}")
        if self.solvent:
            lines.append(f"solvent viscosity eta_s = {self.eta_s:.5g} Pa s (± {self.eta_s_se:.3g})")
        elif self.eta_s > 0:
            lines.append(f"solvent viscosity eta_s = {self.eta_s:.5g} Pa s (given, not fitted)")
        if self.plateau:
            lines.append(f"equilibrium modulus G_e = {self.G_e:.5g} Pa (± {self.G_e_se:.3g})")
        counts = ", ".join(
            f"{c.n_modes}" + ("" if math.isnan(c.p_value) else f": p={c.p_value:.3g}")
            + ("" if c.resolved else " (not resolved)") for c in self.candidates
        )
        lines.append(f"mode count by F-test (alpha {self.alpha:g}); tried {counts}")
        lines.extend(f"warning: {w}" for w in self.warnings)
        return "\n".join(lines)


# --------------------------------------------------------------------------- the fit


@dataclasses.dataclass(frozen=True)
class _Problem:
    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray
    solvent: bool
    plateau: bool
    eta_ref: float
    G_ref: float
    ln_tau_bounds: tuple[float, float]
    ln_g_bounds: tuple[float, float]
    eta_known: float = 0.0

    @property
    def n_data(self) -> int:
        return 2 * self.omega.size

    def n_extra(self) -> int:
        return int(self.solvent) + int(self.plateau)

    def unpack(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, float, float]:
        m = (x.size - self.n_extra()) // 2
        g = np.exp(x[:m])
        tau = np.exp(x[m:2 * m])
        k = 2 * m
        eta_s = G_e = 0.0
        if self.solvent:
            eta_s = x[k] * self.eta_ref
            k += 1
        if self.plateau:
            G_e = x[k] * self.G_ref
        return g, tau, eta_s, G_e

    def residuals(self, x: np.ndarray) -> np.ndarray:
        g, tau, eta_s, G_e = self.unpack(x)
        gp, gpp = modes_moduli(self.omega, g, tau, eta_s=eta_s + self.eta_known, G_e=G_e)
        return np.concatenate([gp / self.storage - 1.0, gpp / self.loss - 1.0])

    def target(self) -> np.ndarray:
        """Right-hand side of the linear starts: 1, less the known solvent's share of G''."""
        b = np.ones(self.n_data)
        b[self.omega.size:] -= self.eta_known * self.omega / self.loss
        return b

    def jacobian(self, x: np.ndarray) -> np.ndarray:
        g, tau, _, _ = self.unpack(x)
        m = g.size
        xt = np.outer(self.omega, tau)
        kp = storage_kernel(xt)
        kpp = loss_kernel(xt)
        J = np.zeros((self.n_data, x.size))
        n = self.omega.size
        sp = 1.0 / self.storage[:, None]
        sl = 1.0 / self.loss[:, None]
        J[:n, :m] = kp * g * sp
        J[n:, :m] = kpp * g * sl
        # d/d ln τ of x²/(1+x²) is 2K'(1−K'); of x/(1+x²) is K''(1−2K').
        J[:n, m:2 * m] = 2.0 * kp * (1.0 - kp) * g * sp
        J[n:, m:2 * m] = kpp * (1.0 - 2.0 * kp) * g * sl
        k = 2 * m
        if self.solvent:
            J[n:, k] = self.eta_ref * self.omega / self.loss
            k += 1
        if self.plateau:
            J[:n, k] = self.G_ref / self.storage
        return J

    def pack(self, g: np.ndarray, tau: np.ndarray, eta_s: float, G_e: float) -> np.ndarray:
        lo, hi = self.ln_tau_bounds
        glo, ghi = self.ln_g_bounds
        parts = [np.clip(np.log(np.maximum(g, 1e-300)), glo + 1e-9, ghi - 1e-9),
                 np.clip(np.log(tau), lo + 1e-9, hi - 1e-9)]
        if self.solvent:
            parts.append([max(eta_s, 0.0) / self.eta_ref])
        if self.plateau:
            parts.append([max(G_e, 0.0) / self.G_ref])
        return np.concatenate([np.asarray(p, dtype=float) for p in parts])

    def bounds(self, m: int) -> tuple[np.ndarray, np.ndarray]:
        lo, hi = self.ln_tau_bounds
        glo, ghi = self.ln_g_bounds
        lower = np.concatenate([np.full(m, glo), np.full(m, lo), np.zeros(self.n_extra())])
        upper = np.concatenate([np.full(m, ghi), np.full(m, hi), np.full(self.n_extra(), np.inf)])
        return lower, upper


@dataclasses.dataclass(frozen=True)
class _Fit:
    g: np.ndarray
    tau: np.ndarray
    eta_s: float
    G_e: float
    rss: float
    x: np.ndarray

    @property
    def n_modes(self) -> int:
        return int(self.g.size)


def _nnls_start(prob: _Problem, per_decade_grid: float = 10.0) -> tuple[np.ndarray, np.ndarray, float, float]:
    """Unregularized NNLS on a fine log grid of discrete modes (Jakeš 1995): a sparse starting set."""
    from scipy.optimize import nnls

    w = prob.omega
    lo, hi = math.exp(prob.ln_tau_bounds[0]), math.exp(prob.ln_tau_bounds[1])
    # The grid covers the measured 1/ω range one decade beyond each end.
    t_lo = max(lo, 0.1 / w[-1])
    t_hi = min(hi, 10.0 / w[0])
    n = max(8, int(round(per_decade_grid * math.log10(t_hi / t_lo))) + 1)
    grid = np.geomspace(t_lo, t_hi, n)
    x = np.outer(w, grid)
    A = np.vstack([storage_kernel(x) / prob.storage[:, None], loss_kernel(x) / prob.loss[:, None]])
    cols = [A]
    if prob.solvent:
        cols.append(np.concatenate([np.zeros_like(w), w / prob.loss])[:, None])
    if prob.plateau:
        cols.append(np.concatenate([1.0 / prob.storage, np.zeros_like(w)])[:, None])
    A = np.hstack(cols)
    scale = np.linalg.norm(A, axis=0)
    scale[scale == 0] = 1.0
    sol, _ = nnls(A / scale, prob.target(), maxiter=50 * A.shape[1])
    sol = sol / scale
    g = sol[:n]
    k = n
    eta_s = G_e = 0.0
    if prob.solvent:
        eta_s = float(sol[k])
        k += 1
    if prob.plateau:
        G_e = float(sol[k])
    return grid, g, eta_s, G_e


def _clusters(grid: np.ndarray, c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Merge runs of adjacent nonzero grid weights into single modes (sum of g, weighted mean ln τ)."""
    nz = c > 1e-12 * max(float(c.max(initial=0.0)), 1e-300)
    g_out, t_out = [], []
    i = 0
    while i < c.size:
        if not nz[i]:
            i += 1
            continue
        j = i
        while j + 1 < c.size and nz[j + 1]:
            j += 1
        cc = c[i:j + 1]
        g_out.append(cc.sum())
        t_out.append(math.exp(float(np.sum(cc * np.log(grid[i:j + 1])) / cc.sum())))
        i = j + 1
    return np.array(g_out), np.array(t_out)


def _lumps(grid: np.ndarray, c: np.ndarray, m: int) -> tuple[np.ndarray, np.ndarray]:
    """Split the support of a nonnegative distribution c(τ) into m equal ln τ bins and lump each bin."""
    nz = np.flatnonzero(c > 1e-3 * max(float(c.max(initial=0.0)), 1e-300))
    if nz.size == 0:
        return np.array([]), np.array([])
    u = np.log(grid)
    a, b = u[nz[0]], u[nz[-1]]
    if m == 1 or b - a < 1e-9:
        sel = slice(nz[0], nz[-1] + 1)
        cc = c[sel]
        return np.array([cc.sum()]), np.array([math.exp(float(np.sum(cc * u[sel]) / cc.sum()))])
    edges = np.linspace(a, b, m + 1)
    edges[-1] += 1e-9
    g_out, t_out = [], []
    for k in range(m):
        sel = (u >= edges[k]) & (u < edges[k + 1]) & (c > 0)
        if sel.any():
            cc = c[sel]
            g_out.append(cc.sum())
            t_out.append(math.exp(float(np.sum(cc * u[sel]) / cc.sum())))
    return np.array(g_out), np.array(t_out)


def _peaks(grid: np.ndarray, c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """One mode per local maximum of c, holding the lump between the neighbouring minima."""
    n = c.size
    if n < 3:
        return _clusters(grid, c)
    maxima = [i for i in range(n) if c[i] > 0 and (i == 0 or c[i] >= c[i - 1]) and (i == n - 1 or c[i] > c[i + 1])]
    if not maxima:
        return np.array([]), np.array([])
    # boundaries at the smallest value between consecutive maxima
    bounds = [0]
    for a, b in zip(maxima[:-1], maxima[1:]):
        bounds.append(a + int(np.argmin(c[a:b + 1])))
    bounds.append(n)
    u = np.log(grid)
    g_out, t_out = [], []
    for k in range(len(maxima)):
        cc = c[bounds[k]:bounds[k + 1]]
        if cc.sum() > 0:
            g_out.append(cc.sum())
            t_out.append(math.exp(float(np.sum(cc * u[bounds[k]:bounds[k + 1]]) / cc.sum())))
    return np.array(g_out), np.array(t_out)


def _run_fit(prob: _Problem, g0: np.ndarray, t0: np.ndarray, eta0: float, ge0: float) -> _Fit | None:
    from scipy.optimize import least_squares

    order = np.argsort(t0)
    g0, t0 = np.asarray(g0, float)[order], np.asarray(t0, float)[order]
    for _ in range(4):  # drop negligible modes and refit
        if g0.size == 0:
            return None
        x0 = prob.pack(g0, t0, eta0, ge0)
        lower, upper = prob.bounds(g0.size)
        x0 = np.clip(x0, lower, upper)
        res = least_squares(prob.residuals, x0, jac=prob.jacobian, bounds=(lower, upper), method="trf",
                            x_scale="jac", xtol=1e-8, ftol=1e-10, gtol=1e-8, max_nfev=200 * (x0.size + 1))
        g, tau, eta_s, G_e = prob.unpack(res.x)
        # a bound approached from inside (η_s or G_e → 0) is the bound itself
        eta_s = 0.0 if eta_s < 1e-9 * prob.eta_ref else eta_s
        G_e = 0.0 if G_e < 1e-9 * prob.G_ref else G_e
        xt = np.outer(prob.omega, tau)
        share = np.maximum((storage_kernel(xt) * g / prob.storage[:, None]).max(axis=0),
                           (loss_kernel(xt) * g / prob.loss[:, None]).max(axis=0))
        keep = share > _NEGLIGIBLE
        keep &= _not_duplicate(tau)
        if keep.all():
            order = np.argsort(tau)
            x = prob.pack(g[order], tau[order], eta_s, G_e)
            return _Fit(g[order], tau[order], float(eta_s), float(G_e), float(np.sum(prob.residuals(x) ** 2)), x)
        g0, t0, eta0, ge0 = g[keep], tau[keep], eta_s, G_e
    return None


def _no_modes(prob: _Problem) -> _Fit:
    """The fit with no modes at all: η_s and/or G_e alone by nonnegative linear least squares."""
    from scipy.optimize import nnls

    w = prob.omega
    cols = []
    if prob.solvent:
        cols.append(np.concatenate([np.zeros_like(w), prob.eta_ref * w / prob.loss]))
    if prob.plateau:
        cols.append(np.concatenate([prob.G_ref / prob.storage, np.zeros_like(w)]))
    x, _ = nnls(np.column_stack(cols), prob.target())
    _, _, eta_s, G_e = prob.unpack(x)
    return _Fit(np.array([]), np.array([]), float(eta_s), float(G_e), float(np.sum(prob.residuals(x) ** 2)), x)


def _not_duplicate(tau: np.ndarray) -> np.ndarray:
    """False for a mode within 1 % in τ of an earlier one (the pair is one mode)."""
    keep = np.ones(tau.size, dtype=bool)
    order = np.argsort(tau)
    for a, b in zip(order[:-1], order[1:]):
        if tau[b] / tau[a] < 1.01:
            keep[b] = False
    return keep


def _grown_starts(prob: _Problem, prev: _Fit, step: float) -> tuple[list[Any], list[Any]]:
    """Starting sets of one more mode than ``prev``.

    Returns (inserts, splits): a new small mode below, above or in the widest gap; or one mode split in two
    half a step either side of it.
    """
    u = np.log(prev.tau)
    lo, hi = prob.ln_tau_bounds
    places = [max(lo + 1e-6, u[0] - step), min(hi - 1e-6, u[-1] + step)]
    if u.size > 1:
        gaps = np.diff(u)
        k = int(np.argmax(gaps))
        places.append(0.5 * (u[k] + u[k + 1]))
    inserts = []
    for p in places:
        nearest = int(np.argmin(np.abs(u - p)))
        inserts.append((np.append(prev.g, 0.1 * prev.g[nearest]), np.append(prev.tau, math.exp(p))))
    splits = []
    half = math.exp(step / 2)
    for k in range(u.size):
        g = np.concatenate([np.delete(prev.g, k), [prev.g[k] / 2, prev.g[k] / 2]])
        t = np.concatenate([np.delete(prev.tau, k), [prev.tau[k] / half, prev.tau[k] * half]])
        splits.append((g, t))
    return inserts, splits


def _resolved(fit: _Fit, min_spacing: float) -> bool:
    """The data resolve the set: adjacent modes at least ``min_spacing`` apart in ln τ."""
    if fit.n_modes < 2:
        return True
    return bool(np.min(np.diff(np.log(fit.tau))) >= min_spacing - 1e-9)


def _covariance(prob: _Problem, fit: _Fit) -> np.ndarray:
    """Covariance of the free parameters, s²(JᵀJ)⁻¹, with parameters at a bound held fixed."""
    J = prob.jacobian(fit.x)
    lower, upper = prob.bounds(fit.n_modes)
    free = (fit.x > lower + 1e-8) & (fit.x < upper - 1e-8)  # pack() keeps pinned values 1e-9 inside
    dof = prob.n_data - int(free.sum())
    s2 = fit.rss / dof if dof > 0 else np.nan
    cov = np.full((fit.x.size, fit.x.size), np.nan)
    # (JᵀJ)⁻¹ = V diag(1/σ²) Vᵀ from the SVD of J; directions with σ < 1e-10 σ_max are not determined by
    # the data, and every parameter with a sizeable part in one of them gets no standard error (NaN)
    _, sv, Vt = np.linalg.svd(J[:, free], full_matrices=False)
    good = sv > 1e-10 * (sv[0] if sv.size else 1.0)
    inv = (Vt[good].T / sv[good] ** 2) @ Vt[good]
    undetermined = np.any(np.abs(Vt[~good]) > 0.1, axis=0) if (~good).any() else np.zeros(inv.shape[0], bool)
    inv[undetermined, :] = np.nan
    inv[:, undetermined] = np.nan
    idx = np.flatnonzero(free)
    cov[np.ix_(idx, idx)] = s2 * inv
    # a parameter held at its bound (η_s = 0, G_e = 0) has no spread of its own
    for i in np.flatnonzero(~free):
        cov[i, i] = 0.0 if i >= 2 * fit.n_modes else np.nan
    return cov


def fit_modes(
    sweep: Any,
    spectrum: Any = None,
    *,
    solvent: bool = True,
    plateau: bool = False,
    n_modes: int | None = None,
    alpha: float = 0.01,
    per_decade: float = 2.0,
    eta_s: float | None = None,
) -> Modes:
    """Fit nonnegative discrete Maxwell modes to a frequency sweep.

    Parameters
    ----------
    sweep : Sweep
        The data (ω, G', G'').
    spectrum : Spectrum-like, optional
        A continuous spectrum with attributes ``tau`` and ``H`` (and ``eta_s``,
        ``G_e``); its lumps of H d ln τ start the fit.  Without it the start is
        unregularized NNLS on a fine grid (Jakeš 1995).
    solvent : bool
        Fit a solvent viscosity η_s ≥ 0 (G'' gains η_s ω).
    plateau : bool
        Fit an equilibrium modulus G_e ≥ 0 (G' gains G_e).
    n_modes : int, optional
        Fix the number of modes instead of choosing it.
    eta_s : float, optional
        A known solvent viscosity (Pa·s), held fixed instead of fitted (as ``invert(eta_s=...)``).
    alpha : float
        Significance level of the F-test that decides whether one more mode
        improves the fit.
    per_decade : float
        Resolution limit: at most about ``per_decade`` modes per decade of the
        measured frequency range, and adjacent modes at least
        1/``per_decade`` decade apart (about 1–2 modes per decade is common
        practice, no single source).

    Returns
    -------
    Modes

    Notes
    -----
    The fit minimizes Σ (G'_fit/G' − 1)² + (G''_fit/G'' − 1)² over ln g_i,
    ln τ_i, η_s and G_e.  Going from M to M + 1 modes adds two parameters; the
    statistic F = [(RSS_M − RSS_{M+1})/2] / [RSS_{M+1}/(n − p_{M+1})] is
    compared with the F(2, n − p_{M+1}) distribution; the smallest M whose
    successor is not significant at level ``alpha`` (or is not resolved)
    is kept.  Standard errors are s²(JᵀJ)⁻¹ with s² = RSS/(n − p).

    References
    ----------
    Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 3.
    Jakeš, J. (1995). Collect. Czech. Chem. Commun. 60, 1815.
    Seber, G. A. F. & Wild, C. J. (1989). *Nonlinear Regression*, Wiley, §5.3 (section from memory).
    Davies, A. R. & Anderssen, R. S. (1997). J. Non-Newtonian Fluid Mech. 73, 163.
    """
    import warnings

    from scipy.stats import f as f_dist

    if not 0.0 < alpha < 1.0:
        raise SettingsError(f"alpha must lie between 0 and 1 (got {alpha!r})")
    if not per_decade > 0:
        raise SettingsError(f"per_decade must be positive (got {per_decade!r})")
    if eta_s is not None:
        if not (math.isfinite(eta_s) and eta_s >= 0):
            raise SettingsError(f"eta_s must be a nonnegative number (got {eta_s!r})")
        solvent = False  # known, not fitted
    omega = np.asarray(sweep.omega, dtype=float)
    storage = np.asarray(sweep.storage, dtype=float)
    loss = np.asarray(sweep.loss, dtype=float)
    source = str(getattr(sweep, "source", "") or getattr(sweep, "name", ""))
    decades = math.log10(omega[-1] / omega[0])
    n_data = 2 * omega.size
    n_extra = int(solvent) + int(plateau)
    # at most per_decade modes per measured decade (plus one), and at least 3 residual degrees of freedom
    m_max = max(1, min(int(math.floor(per_decade * decades)) + 1, (n_data - n_extra - 3) // 2))
    if n_modes is not None:
        if not 1 <= int(n_modes) <= (n_data - n_extra - 1) // 2:
            raise SettingsError(f"n_modes must be between 1 and {(n_data - n_extra - 1) // 2} for "
                                f"{omega.size} points (got {n_modes!r})", source)
        n_modes = int(n_modes)
    prob = _Problem(
        omega=omega, storage=storage, loss=loss, solvent=solvent, plateau=plateau,
        eta_ref=float(loss[-1] / omega[-1]), G_ref=float(storage[0]),
        # a mode much faster than 1/ω_max is a solvent viscosity, one much slower than 1/ω_min a plateau:
        # when η_s (G_e) is fitted, modes stay within one decade of the measured range on that side
        ln_tau_bounds=(math.log(1.0 / ((_NEAR if solvent else _TAU_MARGIN) * omega[-1])),
                       math.log((_NEAR if plateau else _TAU_MARGIN) / omega[0])),
        # a mode cannot carry more than the data allow at τ = τ_min (g ωτ ≤ G''), nor be far below the data
        ln_g_bounds=(math.log(1e-8 * float(min(storage.min(), loss.min()))),
                     math.log(_TAU_MARGIN * 100.0 * float(max(storage.max(), loss.max())))),
        eta_known=float(eta_s or 0.0),
    )
    step = math.log(10.0) / per_decade
    min_spacing = step

    # starting distribution c(τ) on a grid, and starting η_s, G_e
    if spectrum is not None:
        grid = np.asarray(spectrum.tau, dtype=float)
        c = np.maximum(np.asarray(spectrum.H, dtype=float), 0.0) * quadrature_weights(grid)
        eta_start = float(getattr(spectrum, "eta_s", 0.0) or 0.0)
        ge_start = float(getattr(spectrum, "G_e", 0.0) or 0.0)
        start = "spectrum"
        if not np.any(c > 0):
            raise SettingsError("the continuous spectrum is zero everywhere; nothing to start the modes from", source)
    else:
        grid, c, eta_start, ge_start = _nnls_start(prob)
        start = "nnls"
        if not np.any(c > 0):  # all explained by η_s / G_e: still try one mode
            c = np.zeros_like(grid)
            c[grid.size // 2] = float(np.median(storage))
    natural = [_clusters(grid, c), _peaks(grid, c)]

    def f_test(fit: _Fit, prev: _Fit) -> tuple[float, float]:
        """F statistic and p-value of ``fit`` (two more parameters) against ``prev``."""
        dof = n_data - (2 * fit.n_modes + n_extra)
        drop = max(prev.rss - fit.rss, 0.0)
        f_stat = (drop / 2.0) / (fit.rss / dof) if fit.rss > 0 else math.inf
        return float(f_stat), (float(f_dist.sf(f_stat, 2, dof)) if math.isfinite(f_stat) else 0.0)

    def best_fit(m: int, prev: _Fit | None) -> tuple[_Fit | None, bool]:
        """Best resolved m-mode fit over the starting sets.

        The splits are tried only when the other starts do not already beat ``prev`` significantly: only
        then can they change the decision.
        """
        inserts, splits = _grown_starts(prob, prev, step) if prev is not None and prev.n_modes else ([], [])
        tiers = [[_lumps(grid, c, m)] + [s for s in natural if s[0].size == m] + inserts, splits]
        fits: list[_Fit] = []
        best: tuple[_Fit | None, bool] = (None, False)
        for tier in tiers:
            for g0, t0 in tier:
                if g0.size == 0:
                    continue
                fit = _run_fit(prob, g0, t0, eta_start, ge_start)
                if fit is not None and fit.n_modes == m:
                    fits.append(fit)
            if not fits:
                continue
            good = [f for f in fits if _resolved(f, min_spacing)]
            best = (min(good, key=lambda f: f.rss), True) if good else (min(fits, key=lambda f: f.rss), False)
            if prev is None or (best[1] and f_test(best[0], prev)[1] < alpha):
                break
        return best

    candidates: list[ModeCandidate] = []
    notes: list[str] = []  # recorded in the result
    loud: list[str] = []  # also issued as WeakResultWarning
    chosen: _Fit | None = None
    if n_modes is not None:
        chosen, ok = best_fit(n_modes, None)
        if chosen is None:
            for m in range(1, n_modes + 1):
                chosen, ok = best_fit(m, chosen)
        if chosen is None:
            raise SettingsError(f"no fit with {n_modes} modes converged", source)
        candidates.append(ModeCandidate(n_modes=chosen.n_modes, rss=chosen.rss,
                                        n_params=2 * chosen.n_modes + n_extra, f_stat=math.nan,
                                        p_value=math.nan, resolved=ok))
    else:
        prev: _Fit | None = None
        if n_extra:  # the set with no mode at all (η_s and/or G_e alone) is the first candidate
            prev = _no_modes(prob)
            candidates.append(ModeCandidate(n_modes=0, rss=prev.rss, n_params=n_extra, f_stat=math.nan,
                                            p_value=math.nan, resolved=True))
        for m in range(1, m_max + 1):
            fit, ok = best_fit(m, prev if prev is not None and prev.n_modes else None)
            if fit is None:
                break
            p_new = 2 * m + n_extra
            if prev is None:
                candidates.append(ModeCandidate(n_modes=m, rss=fit.rss, n_params=p_new, f_stat=math.nan,
                                                p_value=math.nan, resolved=ok))
                prev = fit
                if not ok:
                    break
                continue
            f_stat, p_value = f_test(fit, prev)
            candidates.append(ModeCandidate(n_modes=m, rss=fit.rss, n_params=p_new, f_stat=float(f_stat),
                                            p_value=p_value, resolved=ok))
            if not ok or p_value >= alpha:
                break
            prev = fit
        else:
            loud.append(f"the mode count reached its resolution limit ({m_max} modes for {decades:.2g} "
                        f"decades); more modes might still improve the fit")
        chosen = prev
        if chosen is None:
            raise SettingsError("no Maxwell-mode fit converged for these data", source)
        if chosen.n_modes == 0:
            alone = " and ".join(n for n, on in (("eta_s", solvent), ("G_e", plateau)) if on)
            loud.append(f"no Maxwell mode improves significantly on {alone} alone; the result has no modes")

    cov = _covariance(prob, chosen)
    m = chosen.n_modes
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    se = np.where(np.isnan(np.diag(cov)), np.nan, se)
    g_se = chosen.g * se[:m]
    tau_se = chosen.tau * se[m:2 * m]
    k = 2 * m
    eta_se = ge_se = 0.0
    if solvent:
        eta_se = float(se[k] * prob.eta_ref)
        k += 1
    if plateau:
        ge_se = float(se[k] * prob.G_ref)
    window = supported_window(omega)
    outside = outside_mask(chosen.tau, window)
    gp, gpp = modes_moduli(omega, chosen.g, chosen.tau, eta_s=chosen.eta_s, G_e=chosen.G_e)
    rms = float(math.sqrt(chosen.rss / n_data))
    if rms > 0.1:
        loud.append(f"the modes fit the data poorly (relative rms residual {100 * rms:.0f} %)")
    if outside.any():
        notes.append(f"{int(outside.sum())} of {m} mode(s) lie outside the supported window "
                     f"{window[0]:.3g}–{window[1]:.3g} s; the data do not determine them")
    if not window[0] < window[1]:
        loud.append("the sweep spans less than e^π in frequency, so no relaxation time is supported")
    for note in loud:
        warnings.warn(f"{source}: {note}" if source else note, WeakResultWarning, stacklevel=2)
    return Modes(
        g=chosen.g, tau=chosen.tau, g_se=g_se, tau_se=tau_se, eta_s=chosen.eta_s + prob.eta_known, eta_s_se=eta_se,
        G_e=chosen.G_e, G_e_se=ge_se, window=window, outside_window=outside, residual_rms=rms,
        omega=omega, storage=storage, loss=loss, storage_fit=gp, loss_fit=gpp, candidates=tuple(candidates),
        start=start, alpha=alpha, per_decade=per_decade, solvent=solvent, plateau=plateau,
        sample=str(getattr(sweep, "name", "")), source=str(getattr(sweep, "source", "")), warnings=tuple(loud + notes),
    )
