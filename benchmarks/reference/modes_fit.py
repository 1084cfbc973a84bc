"""Reference: the discrete-mode fit as it was before variable projection (tauspec 0b94b6d, modes/fit.py).

Kept for the benchmark (``bench_modes.py``: the new fit against this one, same process) and for the test that
the new fit reaches the same optimum (``tests/test_fit_reference.py``).  Not part of the package.  Each count
is fitted in (ln g, ln τ, η_s, G_e) by ``scipy.optimize.least_squares`` from several starting sets; the
helpers that did not change (starting sets, covariance) are imported from the package.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy.stats import f as f_dist

from tauspec.data.record import resolve_options
from tauspec.modes.fit import _count_notes, _resolved, _result, _settle, _setup, _start_distribution
from tauspec.modes.options import ModesOptions
from tauspec.modes.problem import _Fit, _Problem
from tauspec.modes.result import ModeCandidate, Modes
from tauspec.modes.starts import _clusters, _grown_starts, _lumps, _peaks

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
        fit, keep = _settle(prob, g, tau, eta_s, G_e)
        if fit is not None:
            return fit
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


def fit_modes(sweep: Any, spectrum: Any = None, options: ModesOptions | None = None, **changes: Any) -> Modes:
    """The discrete-mode fit of tauspec 0b94b6d: every count from several starting sets, least squares in all
    parameters; setup and result as in :func:`tauspec.modes.fit.fit_modes`."""
    opts = resolve_options(ModesOptions, options, changes, "fit_modes()")
    prob, m_max, source = _setup(sweep, opts)
    grid, c, start = _start_distribution(prob, spectrum, source)
    eta_start = float(getattr(spectrum, "eta_s", 0.0) or 0.0) if spectrum is not None else 0.0
    ge_start = float(getattr(spectrum, "G_e", 0.0) or 0.0) if spectrum is not None else 0.0
    step = math.log(10.0) / opts.per_decade
    natural = [_clusters(grid, c), _peaks(grid, c)]
    n_data, n_extra = prob.n_data, prob.n_extra()

    def f_test(fit: _Fit, prev: _Fit) -> tuple[float, float]:
        dof = n_data - (2 * fit.n_modes + n_extra)
        drop = max(prev.rss - fit.rss, 0.0)
        f_stat = (drop / 2.0) / (fit.rss / dof) if fit.rss > 0 else math.inf
        return float(f_stat), (float(f_dist.sf(f_stat, 2, dof)) if math.isfinite(f_stat) else 0.0)

    def best_fit(m: int, prev: _Fit | None) -> tuple[_Fit | None, bool]:
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
            good = [f for f in fits if _resolved(f, step)]
            best = (min(good, key=lambda f: f.rss), True) if good else (min(fits, key=lambda f: f.rss), False)
            if prev is None or (best[1] and f_test(best[0], prev)[1] < opts.significance):
                break
        return best

    candidates: list[ModeCandidate] = []
    loud: list[str] = []
    if opts.n_modes is not None:
        chosen, ok = best_fit(opts.n_modes, None)
        if chosen is None:
            for m in range(1, opts.n_modes + 1):
                chosen, ok = best_fit(m, chosen)
        candidates.append(ModeCandidate(n_modes=chosen.n_modes, rss=chosen.rss, n_params=2 * chosen.n_modes + n_extra,
                                        f_stat=math.nan, p_value=math.nan, resolved=ok))
    else:
        prev: _Fit | None = None
        if n_extra:
            prev = _no_modes(prob)
            candidates.append(ModeCandidate(n_modes=0, rss=prev.rss, n_params=n_extra, f_stat=math.nan,
                                            p_value=math.nan, resolved=True))
        limit = True
        for m in range(1, m_max + 1):
            fit, ok = best_fit(m, prev if prev is not None and prev.n_modes else None)
            if fit is None:
                limit = False
                break
            f_stat, p_value = f_test(fit, prev) if prev is not None else (math.nan, math.nan)
            candidates.append(ModeCandidate(n_modes=m, rss=fit.rss, n_params=2 * m + n_extra, f_stat=float(f_stat),
                                            p_value=p_value, resolved=ok))
            if prev is not None and (not ok or p_value >= opts.significance):
                limit = False
                break
            prev = fit
            if not ok:
                limit = False
                break
        chosen = prev
        loud += _count_notes(prob, chosen, m_max, limit)
    return _result(sweep, prob, chosen, candidates, start, opts, loud)
