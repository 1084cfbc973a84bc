"""Discrete Maxwell modes fitted to a frequency sweep.

The model is the generalized Maxwell model (Ferry 1980, ch. 3)

    G'(ω)  = G_e + Σ g_i (ωτ_i)²/(1 + (ωτ_i)²)
    G''(ω) = η_s ω + Σ g_i ωτ_i/(1 + (ωτ_i)²)

with g_i > 0, τ_i > 0, η_s ≥ 0, G_e ≥ 0, fitted on the relative residuals
r = (G'_fit − G')/G', (G''_fit − G'')/G''.  For given times the strengths, η_s and
G_e are a small nonnegative linear least-squares problem, solved inside every
evaluation, so the nonlinear fit has only the log-times (variable projection,
Golub & Pereyra 1973; :class:`~tauspec.modes.problem._Projected`).  Starting
values come from the continuous spectrum when one is given (lumps of H d ln τ)
or else from unregularized NNLS on a fine τ grid, whose solution is sparse by
itself (Jakeš 1995).  The number of modes is the smallest M whose fit is not
significantly worse than the fit with M + 1 modes (nested-model F-test), and
never more than the data resolve; it is searched along one path of counts, each
fit started from the last one plus the mode the residual asks for most (see
:func:`fit_modes`).  See ``docs/modes.md``.

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, ch. 3.
Jakeš, J. (1995). Collect. Czech. Chem. Commun. 60, 1815.
Baumgaertel, M. & Winter, H. H. (1989). Rheol. Acta 28, 511.
Seber, G. A. F. & Wild, C. J. (1989). *Nonlinear Regression*, Wiley, §5.3
(F-test for nested models; section from memory).
Golub, G. H. & Pereyra, V. (1973). SIAM J. Numer. Anal. 10, 413 (variable projection).
"""

from __future__ import annotations

import math
import warnings
from typing import Any

import numpy as np

from ..data.record import resolve_options
from ..errors import DroppedPointsWarning, SettingsError, WeakResultWarning
from ..rounding import counted
from ..spectrum.kernels import loss_kernel, modes_moduli, quadrature_weights, storage_kernel
from ..spectrum.lsq import levenberg_marquardt
from ..spectrum.problem import known_solvent_caution
from ..spectrum.threads import limited
from ..spectrum.window import outside_mask, supported_window
from .options import ModesOptions
from .problem import _NEAR, _NEGLIGIBLE, _TAU_MARGIN, _Fit, _Problem, _Projected
from .result import ModeCandidate, Modes
from .starts import _clusters, _gradient_insert, _grown_starts, _lumps, _nnls_start, _not_duplicate, _peaks

__all__ = ["fit_modes"]


#: tolerances of the fits that compare starting sets and counts (χ² to about 1e-6 relative: enough to rank
#: fits and for the F-test), and of the final fit
_COARSE = {"ftol": 1e-6, "xtol": 1e-7, "gtol": 1e-6}
_TIGHT = {"ftol": 1e-10, "xtol": 1e-12, "gtol": 1e-8}


def _run_fit(prob: _Problem, t0: np.ndarray, tol: dict | None = None) -> _Fit | None:
    """Fit modes started at the times ``t0`` by variable projection (:data:`_COARSE` unless ``tol``).

    Modes that carry a negligible share of the data, or duplicate another within 1 % in τ, are dropped and
    the fit repeated (at most four times).  None when no mode is left.
    """
    lo, hi = prob.ln_tau_bounds
    u0 = np.sort(np.log(np.asarray(t0, dtype=float)))
    for _ in range(4):
        if u0.size == 0:
            return None
        m = u0.size
        vp = _Projected(prob)
        res = levenberg_marquardt(vp, np.clip(u0, lo + 1e-9, hi - 1e-9), np.full(m, lo), np.full(m, hi),
                                  max_nfev=100 * (m + 1), **(tol or _COARSE))
        _, c, _ = vp.solve(res.x, False)
        g, tau = c[:m], np.exp(res.x)
        k = m
        eta_s = G_e = 0.0
        if prob.solvent:
            eta_s = float(c[k]) * prob.eta_ref
            k += 1
        if prob.equilibrium_modulus:
            G_e = float(c[k]) * prob.G_ref
        fit, keep = _settle(prob, g, tau, eta_s, G_e)
        if fit is not None:
            return fit
        u0 = np.sort(res.x[keep])
    return None


#: evaluations of the short runs that rank starting sets (:func:`_race`), and how many go on to converge from
#: the starting sets of one count (two) and from the two starts of a path step (one); chosen as the least work
#: that reaches the optimum of the fit from every start on the cases of tests/test_fit_reference.py
_RACE_NFEV = 8
_RACE_KEEP = 2
_PATH_KEEP = 1


def _race(prob: _Problem, starts: list[np.ndarray], keep: int) -> list[_Fit]:
    """Fits from the ``keep`` most promising ``starts``.

    Each start is run for a few evaluations only, and those ahead after them are run to convergence (the
    others rarely overtake: checked against the fit from every start in ``tests/test_fit_reference.py``).
    """
    lo, hi = prob.ln_tau_bounds
    scouts = []
    for t0 in starts:
        u0 = np.sort(np.log(np.asarray(t0, dtype=float)))
        if u0.size == 0:
            continue
        res = levenberg_marquardt(_Projected(prob), np.clip(u0, lo + 1e-9, hi - 1e-9), np.full(u0.size, lo),
                                  np.full(u0.size, hi), max_nfev=_RACE_NFEV, **_COARSE)
        scouts.append((res.cost, np.exp(res.x)))
    scouts.sort(key=lambda s: s[0])
    return [f for f in (_run_fit(prob, t) for _, t in scouts[:keep]) if f is not None]


def _settle(prob: _Problem, g: np.ndarray, tau: np.ndarray, eta_s: float,
            G_e: float) -> tuple[_Fit | None, np.ndarray]:
    """The fit of a converged mode set, or None and the modes to keep when some are negligible or duplicate.

    A mode is negligible when its largest contribution to G' or G'' is below _NEGLIGIBLE of the data, and a
    duplicate within 1 % in τ of another; η_s or G_e approaching 0 from inside is the bound itself.
    """
    eta_s = 0.0 if eta_s < 1e-9 * prob.eta_ref else eta_s
    G_e = 0.0 if G_e < 1e-9 * prob.G_ref else G_e
    xt = np.outer(prob.omega, tau)
    share = np.maximum((storage_kernel(xt) * g / prob.storage[:, None]).max(axis=0),
                       (loss_kernel(xt) * g / prob.loss[:, None]).max(axis=0))
    keep = (share > _NEGLIGIBLE) & _not_duplicate(tau)
    if not keep.all():
        return None, keep
    order = np.argsort(tau)
    x = prob.pack(g[order], tau[order], eta_s, G_e)
    return _Fit(g[order], tau[order], float(eta_s), float(G_e), float(np.sum(prob.residuals(x) ** 2)), x), keep


def _no_modes(prob: _Problem) -> _Fit:
    """The fit with no modes at all: η_s and/or G_e alone by nonnegative linear least squares."""
    from scipy.optimize import nnls

    x, _ = nnls(prob.extra_columns(), prob.target())
    _, _, eta_s, G_e = prob.unpack(x)
    return _Fit(np.array([]), np.array([]), float(eta_s), float(G_e), float(np.sum(prob.residuals(x) ** 2)), x)


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


class _CountSearch:
    """The mode-count search of :func:`fit_modes` over one sweep.

    ``grid`` and ``c`` are the starting distribution (H d ln τ of the spectrum, or unregularized NNLS); the
    resolution limit ``step`` is the least spacing of resolved modes in ln τ; ``significance`` the size of the
    nested-model F-test.
    """

    def __init__(self, prob: _Problem, grid: np.ndarray, c: np.ndarray, *, step: float, significance: float):
        self.prob, self.grid, self.c, self.step, self.significance = prob, grid, c, step, significance
        self.natural = [_clusters(grid, c), _peaks(grid, c)]
        self.n_extra = prob.n_extra()

    def f_test(self, fit: _Fit, prev: _Fit) -> tuple[float, float]:
        """F statistic and p-value of ``fit`` (two more parameters) against ``prev`` (Seber & Wild 1989, §5.3)."""
        from scipy.special import fdtrc  # the F survival function (as scipy.stats.f.sf, without its overhead)

        dof = self.prob.n_data - (2 * fit.n_modes + self.n_extra)
        drop = max(prev.rss - fit.rss, 0.0)
        f_stat = (drop / 2.0) / (fit.rss / dof) if fit.rss > 0 else math.inf
        return float(f_stat), (float(fdtrc(2, dof, f_stat)) if math.isfinite(f_stat) else 0.0)

    def significant(self, fit: _Fit, prev: _Fit) -> bool:
        """``fit`` improves significantly on ``prev`` by the F-test."""
        return self.f_test(fit, prev)[1] < self.significance

    def best_fit(self, m: int, prev: _Fit | None, fits: list[_Fit] | None = None,
                 lumped: bool = False) -> tuple[_Fit | None, bool]:
        """Best resolved m-mode fit over the starting sets, and whether it is resolved.

        The starting sets: the lumps of the distribution (unless ``lumped``: already among ``fits``), its
        clusters and peaks of m modes, and ``prev`` with one mode inserted below, above or in the widest gap;
        then, only when those do not beat ``prev`` significantly (only then can they change the decision),
        ``prev`` with each mode split in two.
        """
        inserts, splits = _grown_starts(self.prob, prev, self.step) if prev is not None and prev.n_modes else ([], [])
        first = ([] if lumped else [_lumps(self.grid, self.c, m)]) + [s for s in self.natural if s[0].size == m]
        fits = list(fits or [])
        best: tuple[_Fit | None, bool] = (None, False)
        for tier in (first + inserts, splits):
            starts = [t0 for _, t0 in tier if t0.size]
            fits += [f for f in _race(self.prob, starts, _RACE_KEEP) if f.n_modes == m]
            if not fits:
                continue
            good = [f for f in fits if _resolved(f, self.step)]
            best = (min(good, key=lambda f: f.rss), True) if good else (min(fits, key=lambda f: f.rss), False)
            if prev is None or (best[1] and self.significant(best[0], prev)):
                break
        return best

    def next_fit(self, m: int, prev: _Fit | None) -> tuple[_Fit | None, bool, bool]:
        """The m-mode fit along the path of counts.

        Returns the fit, whether it is resolved, and whether the path step alone found it.  The step fits
        ``prev`` plus the mode the residual asks for most (:func:`_gradient_insert`), and the lumps of the
        distribution into m modes; the other starting sets only when neither is resolved and significantly
        better than ``prev``.
        """
        if prev is None or not prev.n_modes:
            return (*self.best_fit(m, None), False)
        starts = [_gradient_insert(self.prob, prev, self.grid), _lumps(self.grid, self.c, m)[1]]
        fits = [f for f in _race(self.prob, starts, _PATH_KEEP) if f.n_modes == m]
        good = [f for f in fits if _resolved(f, self.step)]
        if good:
            fit = min(good, key=lambda f: f.rss)
            if self.significant(fit, prev):
                return fit, True, True
        return (*self.best_fit(m, prev, fits, lumped=True), False)

    def path(self, m_max: int) -> tuple[_Fit | None, list[tuple[_Fit, bool]], bool]:
        """Counts 0 (with η_s or G_e), 1, 2 … while one more mode is resolved and significant.

        Returns the chosen fit, every count tried (fit, resolved) in order, and whether ``m_max`` was
        reached.  A count chosen by the path step alone is also fitted from the other starting sets, since
        the path may have found a poorer optimum there.
        """
        tried: list[tuple[_Fit, bool]] = []
        prev: _Fit | None = None
        from_path = False
        if self.n_extra:  # the set with no mode at all (η_s and/or G_e alone) is the first candidate
            prev = _no_modes(self.prob)
            tried.append((prev, True))
        limit = True
        for m in range(1, m_max + 1):
            fit, ok, path_step = self.next_fit(m, prev)
            if fit is None:
                limit = False
                break
            tried.append((fit, ok))
            if prev is not None and (not ok or not self.significant(fit, prev)):
                limit = False
                break
            prev, from_path = fit, path_step
            if not ok:  # the first count, unresolved
                limit = False
                break
        if prev is not None and prev.n_modes and from_path:
            k = next(i for i, (f, _) in enumerate(tried) if f is prev)
            before = tried[k - 1][0] if k > 0 else None
            polished, ok = self.best_fit(prev.n_modes, before if before is not None and before.n_modes else None,
                                         [prev], lumped=True)
            if polished is not None and ok and polished.rss < prev.rss:
                tried[k] = (polished, True)
                prev = polished
        return prev, tried, limit

    def candidates(self, tried: list[tuple[_Fit, bool]]) -> list[ModeCandidate]:
        """The record of every count tried, each with its F-test against the one before."""
        out = []
        for i, (fit, ok) in enumerate(tried):
            f_stat, p_value = self.f_test(fit, tried[i - 1][0]) if i > 0 else (math.nan, math.nan)
            out.append(ModeCandidate(n_modes=fit.n_modes, rss=fit.rss, n_params=2 * fit.n_modes + self.n_extra,
                                     f_stat=float(f_stat), p_value=p_value, resolved=ok))
        return out


@limited
def fit_modes(sweep: Any, spectrum: Any = None, options: ModesOptions | None = None, **changes: Any) -> Modes:
    """Fit nonnegative discrete Maxwell modes to a frequency sweep.

    Parameters
    ----------
    sweep : Sweep
        The data (ω, G', G'').
    spectrum : Spectrum-like, optional
        A continuous spectrum with attributes ``tau`` and ``H`` (and ``eta_s``,
        ``G_e``); its lumps of H d ln τ start the fit.  Without it the start is
        unregularized NNLS on a fine grid (Jakeš 1995).
    options : ModesOptions, optional
        The mode count (fixed or chosen), the F-test size, the resolution limit and the physical switches
        (solvent, equilibrium modulus, known η_s); see :class:`~tauspec.modes.options.ModesOptions`.
    **changes
        Fields of ``ModesOptions`` given directly (``fit_modes(sweep, n_modes=4)``).

    Returns
    -------
    Modes

    Notes
    -----
    The fit minimizes Σ (G'_fit/G' − 1)² + (G''_fit/G'' − 1)² over ln g_i,
    ln τ_i, η_s and G_e.  Going from M to M + 1 modes adds two parameters; the
    statistic F = [(RSS_M − RSS_{M+1})/2] / [RSS_{M+1}/(n − p_{M+1})] is
    compared with the F(2, n − p_{M+1}) distribution; the smallest M whose
    successor is not significant at the size ``significance`` (or is not resolved)
    is kept.  Standard errors are s²(JᵀJ)⁻¹ with s² = RSS/(n − p).

    References
    ----------
    Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 3.
    Jakeš, J. (1995). Collect. Czech. Chem. Commun. 60, 1815.
    Seber, G. A. F. & Wild, C. J. (1989). *Nonlinear Regression*, Wiley, §5.3 (section from memory).
    Davies, A. R. & Anderssen, R. S. (1997). J. Non-Newtonian Fluid Mech. 73, 163.
    """
    opts = resolve_options(ModesOptions, options, changes, "fit_modes()")
    dropped = None
    if opts.omega_min is not None or opts.omega_max is not None:
        sweep, dropped = sweep.restrict(opts.omega_min, opts.omega_max)
        if dropped:
            warnings.warn(f"{sweep.source or sweep.name}: {dropped}", DroppedPointsWarning, stacklevel=2)
    prob, m_max, source = _setup(sweep, opts)
    solvent_note = known_solvent_caution(prob.omega, prob.loss, opts.eta_s, source)
    grid, c, start = _start_distribution(prob, spectrum, source)
    search = _CountSearch(prob, grid, c, step=math.log(10.0) / opts.per_decade, significance=opts.significance)
    loud: list[str] = [solvent_note] if solvent_note else []  # also issued as WeakResultWarning
    if opts.n_modes is not None:
        chosen, ok = search.best_fit(opts.n_modes, None)
        if chosen is None:
            for m in range(1, opts.n_modes + 1):
                chosen, ok = search.best_fit(m, chosen)
        if chosen is None:
            raise SettingsError(f"no fit with {counted(opts.n_modes, 'mode')} converged", source)
        tried = [(chosen, ok)]
    else:
        chosen, tried, limit = search.path(m_max)
        if chosen is None:
            raise SettingsError("no Maxwell-mode fit converged for these data", source)
        loud += _count_notes(prob, chosen, m_max, limit)
    if chosen.n_modes:  # the chosen set to full precision (the search compares fits to about 1e-6)
        final = _run_fit(prob, chosen.tau, _TIGHT)
        if final is not None and final.n_modes == chosen.n_modes and final.rss <= chosen.rss:
            chosen = final
    return _result(sweep, prob, chosen, search.candidates(tried), start, opts, loud, [dropped] if dropped else [])


def _setup(sweep: Any, opts: ModesOptions) -> tuple[_Problem, int, str]:
    """The problem of one sweep, the largest mode count the data resolve, and the source for messages."""
    eta_s = opts.eta_s
    solvent = opts.solvent and eta_s is None  # a known η_s is held, not fitted
    equilibrium = opts.equilibrium_modulus
    omega = np.asarray(sweep.omega, dtype=float)
    storage = np.asarray(sweep.storage, dtype=float)
    loss = np.asarray(sweep.loss, dtype=float)
    source = str(getattr(sweep, "source", "") or getattr(sweep, "name", ""))
    decades = math.log10(omega[-1] / omega[0])
    n_data = 2 * omega.size
    n_extra = int(solvent) + int(equilibrium)
    # at most per_decade modes per measured decade (plus one), and at least 3 residual degrees of freedom
    m_max = max(1, min(int(math.floor(opts.per_decade * decades)) + 1, (n_data - n_extra - 3) // 2))
    if opts.n_modes is not None and not 1 <= opts.n_modes <= (n_data - n_extra - 1) // 2:
        raise SettingsError(f"the mode count must be between 1 and {(n_data - n_extra - 1) // 2} for "
                            f"{omega.size} points (got {opts.n_modes!r})", source)
    prob = _Problem(
        omega=omega, storage=storage, loss=loss, solvent=solvent, equilibrium_modulus=equilibrium,
        eta_ref=float(loss[-1] / omega[-1]), G_ref=float(storage[0]),
        # a mode much faster than 1/ω_max is a solvent viscosity, one much slower than 1/ω_min an equilibrium modulus:
        # when η_s (G_e) is fitted, modes stay within one decade of the measured range on that side
        ln_tau_bounds=(math.log(1.0 / ((_NEAR if solvent else _TAU_MARGIN) * omega[-1])),
                       math.log((_NEAR if equilibrium else _TAU_MARGIN) / omega[0])),
        # a mode cannot carry more than the data allow at τ = τ_min (g ωτ ≤ G''), nor be far below the data
        ln_g_bounds=(math.log(1e-8 * float(min(storage.min(), loss.min()))),
                     math.log(_TAU_MARGIN * 100.0 * float(max(storage.max(), loss.max())))),
        eta_known=float(eta_s or 0.0),
    )
    return prob, m_max, source


def _start_distribution(prob: _Problem, spectrum: Any, source: str) -> tuple[np.ndarray, np.ndarray, str]:
    """The starting distribution c(τ) on a grid (H d ln τ of the spectrum, or unregularized NNLS) and its name."""
    if spectrum is not None:
        grid = np.asarray(spectrum.tau, dtype=float)
        c = np.maximum(np.asarray(spectrum.H, dtype=float), 0.0) * quadrature_weights(grid)
        if not np.any(c > 0):
            raise SettingsError("the continuous spectrum is zero everywhere; nothing to start the modes from", source)
        return grid, c, "spectrum"
    grid, c, _, _ = _nnls_start(prob)
    if not np.any(c > 0):  # all explained by η_s / G_e: still try one mode
        c = np.zeros_like(grid)
        c[grid.size // 2] = float(np.median(prob.storage))
    return grid, c, "nnls"


def _count_notes(prob: _Problem, chosen: _Fit, m_max: int, limit: bool) -> list[str]:
    """Warnings about the chosen count: at the resolution limit, or no mode at all."""
    out = []
    if limit:
        decades = math.log10(prob.omega[-1] / prob.omega[0])
        out.append(f"the mode count reached its resolution limit ({counted(m_max, 'mode')} for {decades:.2g} "
                   f"decades); more modes might still improve the fit")
    if chosen.n_modes == 0:
        alone = " and ".join(n for n, on in (("eta_s", prob.solvent), ("G_e", prob.equilibrium_modulus)) if on)
        out.append(f"no Maxwell mode improves significantly on {alone} alone; the result has no modes")
    return out


def _result(sweep: Any, prob: _Problem, chosen: _Fit, candidates: list[ModeCandidate], start: str,
            opts: ModesOptions, loud: list[str], said: list[str] | None = None) -> Modes:
    """The :class:`Modes` of the chosen fit: standard errors, window flags and warnings.

    ``loud`` are issued as warnings and recorded; ``said`` (issued already) are recorded first.
    """
    cov = _covariance(prob, chosen)
    m = chosen.n_modes
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    se = np.where(np.isnan(np.diag(cov)), np.nan, se)
    g_se = chosen.g * se[:m]
    tau_se = chosen.tau * se[m:2 * m]
    k = 2 * m
    eta_se = ge_se = 0.0
    if prob.solvent:
        eta_se = float(se[k] * prob.eta_ref)
        k += 1
    if prob.equilibrium_modulus:
        ge_se = float(se[k] * prob.G_ref)
    omega = prob.omega
    window = supported_window(omega)
    outside = outside_mask(chosen.tau, window)
    gp, gpp = modes_moduli(omega, chosen.g, chosen.tau, eta_s=chosen.eta_s, G_e=chosen.G_e)
    rms = float(math.sqrt(chosen.rss / prob.n_data))
    notes: list[str] = []  # recorded in the result
    loud = list(loud)
    if rms > 0.1:
        loud.append(f"the modes fit the data poorly (relative rms residual {100 * rms:.0f} %)")
    if outside.any():
        notes.append(f"{int(outside.sum())} of {m} mode(s) lie outside the supported window "
                     f"{window[0]:.3g}–{window[1]:.3g} s; the data do not determine them")
    if not window[0] < window[1]:
        loud.append("the sweep spans less than e^π in frequency, so no relaxation time is supported")
    source = str(getattr(sweep, "source", "") or getattr(sweep, "name", ""))
    for note in loud:
        warnings.warn(f"{source}: {note}" if source else note, WeakResultWarning, stacklevel=3)
    return Modes(
        g=chosen.g, tau=chosen.tau, g_se=g_se, tau_se=tau_se, eta_s=chosen.eta_s + prob.eta_known, eta_s_se=eta_se,
        G_e=chosen.G_e, G_e_se=ge_se, window=window, outside_window=outside, residual_rms=rms,
        omega=omega, storage=prob.storage, loss=prob.loss, storage_fit=gp, loss_fit=gpp,
        candidates=tuple(candidates), start=start, options=opts,
        sample=str(getattr(sweep, "name", "")), source=str(getattr(sweep, "source", "")),
        warnings=tuple((said or []) + loud + notes),
    )
