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

import math
from typing import Any

import numpy as np

from ..data.record import resolve_options
from ..errors import DroppedPointsWarning, SettingsError, WeakResultWarning
from ..spectrum.kernels import loss_kernel, modes_moduli, quadrature_weights, storage_kernel
from ..spectrum.window import outside_mask, supported_window
from .options import ModesOptions
from .problem import _NEAR, _NEGLIGIBLE, _TAU_MARGIN, _Fit, _Problem
from .result import ModeCandidate, Modes
from .starts import _clusters, _grown_starts, _lumps, _nnls_start, _not_duplicate, _peaks

__all__ = ["fit_modes"]


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
    if prob.equilibrium_modulus:
        cols.append(np.concatenate([prob.G_ref / prob.storage, np.zeros_like(w)]))
    x, _ = nnls(np.column_stack(cols), prob.target())
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
    import warnings

    from scipy.stats import f as f_dist

    opts = resolve_options(ModesOptions, options, changes, "fit_modes()")
    dropped = None
    if opts.omega_min is not None or opts.omega_max is not None:
        sweep, dropped = sweep.restrict(opts.omega_min, opts.omega_max)
        if dropped:
            warnings.warn(f"{sweep.source or sweep.name}: {dropped}", DroppedPointsWarning, stacklevel=2)
    eta_s, per_decade, significance, n_modes = opts.eta_s, opts.per_decade, opts.significance, opts.n_modes
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
    m_max = max(1, min(int(math.floor(per_decade * decades)) + 1, (n_data - n_extra - 3) // 2))
    if n_modes is not None:
        if not 1 <= int(n_modes) <= (n_data - n_extra - 1) // 2:
            raise SettingsError(f"n_modes must be between 1 and {(n_data - n_extra - 1) // 2} for "
                                f"{omega.size} points (got {n_modes!r})", source)
        n_modes = int(n_modes)
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
            if prev is None or (best[1] and f_test(best[0], prev)[1] < significance):
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
            if not ok or p_value >= significance:
                break
            prev = fit
        else:
            loud.append(f"the mode count reached its resolution limit ({m_max} modes for {decades:.2g} "
                        f"decades); more modes might still improve the fit")
        chosen = prev
        if chosen is None:
            raise SettingsError("no Maxwell-mode fit converged for these data", source)
        if chosen.n_modes == 0:
            alone = " and ".join(n for n, on in (("eta_s", solvent), ("G_e", equilibrium)) if on)
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
    if equilibrium:
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
        start=start, options=opts,
        sample=str(getattr(sweep, "name", "")), source=str(getattr(sweep, "source", "")),
        warnings=tuple(([dropped] if dropped else []) + loud + notes),
    )
