"""Bead-spring chain models (Rouse, Zimm and a free mode exponent) and their direct fits to a sweep.

Every model is a set of N Maxwell modes of equal modulus G0 plus a Newtonian solvent,

    G'(ω)  = G0 Σ_p (ωτ_p)²/(1 + (ωτ_p)²)
    G''(ω) = η_s ω + G0 Σ_p ωτ_p/(1 + (ωτ_p)²),        p = 1 … N,

with the mode times given by a mode-time law of :mod:`tauspec.models.chains`, in two forms,

    "sine"  (discrete chain):   τ_p = τ_1 [sin(π/(2(N+1))) / sin(pπ/(2(N+1)))]^a
    "power" (continuum law):    τ_p = τ_1 p^(−a).

a = 2 in the sine form is the exact discrete Rouse chain, a = 2 in the power form the continuum Rouse law
τ_p = τ_R/p²; a = 3ν in the power form is the Zimm chain (ν = 1/2 θ solvent, ν ≈ 0.588 good solvent), in the
sine form its discrete-chain counterpart (models/chains.py).  Every law is fitted in both forms.

Fits minimise the sum of squared relative residuals (G'_fit/G'_data − 1, G''_fit/G''_data − 1).  G0 and η_s
enter linearly: they are solved by nonnegative least squares inside each evaluation and the outer problem in
θ = (ln τ_1, ln N[, a]) is solved with the variable-projection Jacobian built from the analytic derivatives of
the Maxwell kernels (Golub & Pereyra 1973, 2003; :mod:`tauspec.spectrum.lsq`).  N is treated as continuous: a
non-integer N = n + f is the mixture (1 − f)·chain(n) + f·chain(n + 1), which is continuous in N and equal to
the discrete chain at every integer; the fit searches the whole-number segments of N for the best one
(:func:`_best_segment`).  Intervals: :mod:`tauspec.models.intervals`.

References
----------
Rouse, P. E. (1953). J. Chem. Phys. 21, 1272.
Zimm, B. H. (1956). J. Chem. Phys. 24, 269.
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 9.
Golub, G. H. & Pereyra, V. (1973). SIAM J. Numer. Anal. 10, 413 (variable projection).
Golub, G. H. & Pereyra, V. (2003). Inverse Problems 19, R1 (variable projection, a review).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from ..spectrum.lsq import levenberg_marquardt, projected_jacobian
from ..spectrum.threads import limited
from .chainfit import BeadSpringFit
from .chains import A_BOUNDS, N_MAX, NU_GOOD, Frame, chain_columns, chain_columns_lazy, get_law, tabulated_chains

__all__ = ["MODELS", "ROUSE_MODELS", "ZIMM_MODELS", "BeadSpringFit", "fit_chain", "fit_all"]


#: model name -> (form, fixed exponent a, or None when a is fitted); a form is a mode-time law of
#: :mod:`tauspec.models.chains` (a law registered there is fitted without a change here).
MODELS: dict[str, tuple[str, float | None]] = {
    "rouse": ("sine", 2.0),
    "zimm_theta": ("power", 1.5),
    "zimm_good": ("power", 3 * NU_GOOD),
    "general_sine": ("sine", None),
    "general_power": ("power", None),
    "rouse_continuum": ("power", 2.0),
    "zimm_theta_discrete": ("sine", 1.5),
    "zimm_good_discrete": ("sine", 3 * NU_GOOD),
}

#: The models of each chain family, in both forms (discrete chain and continuum law; models/chains.py).
ROUSE_MODELS = ("rouse", "rouse_continuum")
ZIMM_MODELS = ("zimm_theta", "zimm_good", "zimm_theta_discrete", "zimm_good_discrete")


# --------------------------------------------------------------------------------------------- fitting


class _Problem:
    """The relative-residual least-squares problem of one model on one sweep.

    θ = (ln τ_1, ln N[, a]); the linear coefficients c = (G0, η_s) ≥ 0 multiply the columns
    u = (S'/G', S''/G'') and s = (0, ω/G'') of the residual r = G0 u + η_s s − 1.
    """

    def __init__(self, omega, storage, loss, form: str, a_fixed: float | None, solvent: bool = True):
        self.omega = np.asarray(omega, dtype=float)
        self.gp = np.asarray(storage, dtype=float)
        self.gpp = np.asarray(loss, dtype=float)
        self.form = form
        self.law = get_law(form)
        self.a_fixed = a_fixed
        self.solvent = solvent
        w = self.omega
        self.lo_tau = math.log(1e-3 / w[-1])
        self.hi_tau = math.log(1e3 / w[0])
        self.n = 2 * len(w)
        self.inv = np.concatenate([1.0 / self.gp, 1.0 / self.gpp])
        self.frame = Frame(self.omega)
        self.s = np.concatenate([np.zeros_like(w), w / self.gpp])
        self.ss = float(self.s @ self.s)
        self.sy = float(self.s.sum())

    @property
    def n_theta(self) -> int:
        return 2 if self.a_fixed is not None else 3

    # θ = (ln τ1, ln N[, a])
    def unpack(self, theta: np.ndarray) -> tuple[float, float, float]:
        a = self.a_fixed if self.a_fixed is not None else float(theta[2])
        return math.exp(theta[0]), math.exp(theta[1]), a

    def bounds(self) -> tuple[list[float], list[float]]:
        lo = [self.lo_tau, 0.0]
        hi = [self.hi_tau, math.log(N_MAX)]
        if self.a_fixed is None:
            lo.append(A_BOUNDS[0])
            hi.append(A_BOUNDS[1])
        return lo, hi

    def columns(self, theta: np.ndarray, deriv: bool) -> tuple[np.ndarray, np.ndarray | None]:
        """u(θ) and, with ``deriv``, ∂u/∂θ (one column per entry of θ)."""
        tau1, N, a = self.unpack(theta)
        v, dv = chain_columns(self.frame, tau1, N, a, self.law, deriv)
        if dv is None:
            return v * self.inv, None
        return v * self.inv, dv[:, : self.n_theta] * self.inv[:, None]

    def linear(self, u: np.ndarray, G0: float | None = None) -> tuple[float, float]:
        """Best nonnegative (G0, η_s) for the column u; with G0 given only η_s is solved."""
        s = self.s
        if G0 is not None:
            if not self.solvent:
                return G0, 0.0
            # minimise Σ(G0 u + η s − 1)² over η ≥ 0
            return G0, max(float(s @ (1.0 - G0 * u)) / self.ss, 0.0)
        uu = float(u @ u)
        uy = float(u.sum())
        if not self.solvent:
            return max(uy / uu, 0.0), 0.0
        us = float(u @ s)
        det = uu * self.ss - us * us
        if det > 1e-13 * uu * self.ss:
            g0 = (uy * self.ss - self.sy * us) / det
            eta = (self.sy * uu - uy * us) / det
            if g0 >= 0 and eta >= 0:
                return g0, eta
        # one column alone: the better of G0 only and η_s only (cost ‖y‖² − b²/‖col‖²)
        g_only = max(uy / uu, 0.0)
        e_only = max(self.sy / self.ss, 0.0)
        return (g_only, 0.0) if g_only * uy >= e_only * self.sy else (0.0, e_only)

    def evaluate(self, theta, G0: float | None = None):
        u, _ = self.columns(np.asarray(theta, dtype=float), False)
        g0, eta = self.linear(u, G0)
        r = g0 * u + eta * self.s - 1.0
        m = len(self.omega)
        fp = g0 * u[:m] * self.gp
        fpp = (g0 * u[m:] + eta * self.s[m:]) * self.gpp
        return r, g0, eta, fp, fpp

    def residuals(self, theta, G0: float | None = None) -> np.ndarray:
        return self.evaluate(theta, G0)[0]

    def fun(self, theta: np.ndarray, G0: float | None = None) -> tuple[np.ndarray, Callable[[], np.ndarray]]:
        """Residual, and the function giving its variable-projection Jacobian in θ.

        Golub & Pereyra (1973); :mod:`tauspec.spectrum.lsq` calls the function only at the points it accepts.
        """
        tau1, N, a = self.unpack(np.asarray(theta, dtype=float))
        v, dv = chain_columns_lazy(self.frame, tau1, N, a, self.law)
        u = v * self.inv
        g0, eta = self.linear(u, G0)
        r = g0 * u + eta * self.s - 1.0

        def jacobian() -> np.ndarray:
            du = dv()[:, : self.n_theta] * self.inv[:, None]
            dBc = g0 * du
            if G0 is not None:  # G0 held: only η_s is projected out
                if self.solvent and eta > 0:
                    return dBc - np.outer(self.s, self.s @ dBc) / self.ss
                return dBc
            B = np.column_stack([u, self.s]) if self.solvent else u[:, None]
            c = np.array([g0, eta])[: B.shape[1]]
            dBt_r = np.zeros((B.shape[1], du.shape[1]))
            dBt_r[0] = du.T @ r
            return projected_jacobian(B, c, c > 0, r, dBc, dBt_r)

        return r, jacobian


def _terminal_tau_estimate(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray) -> list[float]:
    """Starting values for τ_1: the terminal ratio G'/(ω G'') at the lowest ω and the G' = G'' crossover.

    For a Rouse chain G'/(ωG'') → Στ_p²/Στ_p = (π²/15) τ_1 in the terminal zone (Ferry 1980, ch. 9).
    """
    est = [float(storage[0] / (omega[0] * loss[0])) * 15 / math.pi**2]
    d = np.log(storage) - np.log(loss)
    cross = np.nonzero(np.diff(np.sign(d)) > 0)[0]
    if len(cross):
        i = int(cross[0])
        t = d[i] / (d[i] - d[i + 1])
        lw = math.log(omega[i]) + t * (math.log(omega[i + 1]) - math.log(omega[i]))
        est.append(1.0 / math.exp(lw))
    return est


#: tolerances of the final refinement, and of the coarse runs that only compare basins and segments of N (χ²
#: to about 1e-4 relative; the tight refinement from the best of them reaches the same optimum as 1e-8 did on
#: the demo archive and on tests/test_fit_reference.py, with about a quarter fewer evaluations)
_TIGHT = {"ftol": 1e-10, "xtol": 1e-12, "gtol": 1e-9, "max_nfev": 400}
_COARSE = {"ftol": 1e-4, "xtol": 1e-4, "gtol": 1e-4, "max_nfev": 100}


def _refine(prob: _Problem, x0: np.ndarray, tol: dict | None = None):
    """Levenberg–Marquardt in θ from ``x0`` (held inside the bounds) with the tolerances ``tol``."""
    lo, hi = prob.bounds()
    lo_a, hi_a = np.array(lo), np.array(hi)
    x0 = np.clip(np.asarray(x0, dtype=float), lo_a + 1e-9, hi_a - 1e-9)
    return levenberg_marquardt(prob.fun, x0, lo_a, hi_a, **(tol or _TIGHT))


def _stats(chi2: float, n: int, k: int) -> tuple[float, float, float]:
    chi2 = max(chi2, 1e-300)
    red = chi2 / max(n - k, 1)
    ll = n * math.log(chi2 / n)
    return red, ll + 2 * k, ll + k * math.log(n)


#: N of the starting grid: 14 values from 1 to N_MAX, geometric, rounded to whole chains
_N_GRID = tuple(int(v) for v in np.unique(np.round(np.geomspace(1, N_MAX, 14))))
#: scale factors applied to every τ_1 estimate on the starting grid
_TAU_FACTORS = (0.5, 1.0, 2.0)


def _scored_starts(prob: _Problem, taus: Sequence[float], a_values: Sequence[float | None],
                   keep: int) -> list[np.ndarray]:
    """θ of the ``keep`` best starts on the grid τ_1 estimates × _TAU_FACTORS × _N_GRID × a, best first.

    Each start is scored with (G0, η_s) solved exactly, on tabulated unit chains
    (:func:`tauspec.models.chains.tabulated_chains`): cheap, and accurate enough to rank starts.  Equal scores
    keep the grid's order (a, then N, then τ_1).
    """
    if keep <= 0:
        return []
    ln_t = np.clip(np.log([t * f for t in taus for f in _TAU_FACTORS]), prob.lo_tau, prob.hi_tau)
    U = np.log(prob.omega)[None, :] + ln_t[:, None]
    s, ss, sy = prob.s, prob.ss, prob.sy
    scores = []
    for a in a_values:
        sp, spp = tabulated_chains(U, _N_GRID, prob.a_fixed if a is None else a, prob.law)
        u = np.concatenate([sp, spp], axis=2) * prob.inv  # (N grid, τ starts, 2m)
        uu = np.einsum("ijk,ijk->ij", u, u)
        uy = u.sum(axis=2)
        g_only = np.maximum(uy / uu, 0.0)
        if prob.solvent:
            us = u @ s
            det = uu * ss - us * us
            with np.errstate(divide="ignore", invalid="ignore"):
                g0 = (uy * ss - sy * us) / det
                eta = (sy * uu - uy * us) / det
            ok = (det > 1e-13 * uu * ss) & (g0 >= 0) & (eta >= 0)
            e_only = max(sy / ss, 0.0)
            alone = g_only * uy >= e_only * sy
            g0 = np.where(ok, g0, np.where(alone, g_only, 0.0))
            eta = np.where(ok, eta, np.where(alone, 0.0, e_only))
        else:
            g0, eta = g_only, np.zeros_like(g_only)
        r = g0[..., None] * u + eta[..., None] * s - 1.0
        scores.append(np.einsum("ijk,ijk->ij", r, r).ravel())  # N outer, τ_1 inner
    per_a = len(_N_GRID) * ln_t.size
    out = []
    for k in np.argsort(np.concatenate(scores), kind="stable")[:keep]:
        b, rest = divmod(int(k), per_a)
        i, j = divmod(rest, ln_t.size)
        a = a_values[b]
        out.append(np.array([float(ln_t[j]), math.log(_N_GRID[i])] + ([a] if a is not None else [])))
    return out


def _held(prob: _Problem, x: np.ndarray, hold: int, tol: dict) -> tuple[float, np.ndarray]:
    """½χ² and θ refitted with θ[hold] held at x[hold] and the other parameters free."""
    lo, hi = prob.bounds()
    free = [i for i in range(len(x)) if i != hold]
    theta = np.array(x, dtype=float)

    def fun(xf: np.ndarray) -> tuple[np.ndarray, Callable[[], np.ndarray]]:
        theta[free] = xf
        r, jacobian = prob.fun(theta)
        return r, lambda: jacobian()[:, free]

    start = np.clip(theta[free], np.array(lo)[free] + 1e-9, np.array(hi)[free] - 1e-9)
    res = levenberg_marquardt(fun, start, np.array(lo)[free], np.array(hi)[free], **tol)
    theta[free] = res.x
    return res.cost, theta


def _best_segment(prob: _Problem, x: np.ndarray) -> np.ndarray:
    """θ at the middle of the whole-number segment of N whose fit is best, found near the N of ``x``.

    The mixture in N makes χ² scalloped: one local minimum inside every segment [n, n + 1] (the whole
    numbers are kinks), on a smooth trend that a gradient method cannot follow across the kinks.  The trend
    is the envelope h(n) = min χ² at N = n + ½ over the other parameters; it is searched over whole n by
    bracketing from the start (steps of one segment, doubled while h falls) and parabolic interpolation.
    """
    cache: dict[int, tuple[float, np.ndarray]] = {}
    n_hi = int(N_MAX) - 1

    def h(n: int) -> float:
        if n not in cache:
            near = min(cache, key=lambda k: abs(k - n)) if cache else None
            start = (cache[near][1] if near is not None else x).copy()
            start[1] = math.log(n + 0.5)
            cache[n] = _held(prob, start, 1, _COARSE)
        return cache[n][0]

    n0 = min(max(math.floor(math.exp(x[1])), 1), n_hi)
    d = 1
    mid = n0
    lo_n, hi_n = max(1, mid - d), min(n_hi, mid + d)
    # bracket: walk downhill with doubling steps until both neighbours of mid are higher (or a bound is hit)
    for _ in range(30):
        if h(lo_n) < h(mid) and lo_n < mid:
            hi_n, mid = mid, lo_n
            d *= 2
            lo_n = max(1, mid - d)
        elif h(hi_n) < h(mid) and hi_n > mid:
            lo_n, mid = mid, hi_n
            d *= 2
            hi_n = min(n_hi, mid + d)
        else:
            break
    # narrow: parabolic interpolation on (lo, mid, hi), falling back to the middle of the larger side
    for _ in range(30):
        if hi_n - lo_n <= 2:
            break
        fa, fb, fc = h(lo_n), h(mid), h(hi_n)
        den = (mid - lo_n) * (fb - fc) - (mid - hi_n) * (fb - fa)
        num = (mid - lo_n) ** 2 * (fb - fc) - (mid - hi_n) ** 2 * (fb - fa)
        t = round(mid - 0.5 * num / den) if den != 0 else mid
        if not lo_n < t < hi_n or t == mid:
            t = (lo_n + mid) // 2 if mid - lo_n > hi_n - mid else (mid + hi_n + 1) // 2
        if t == mid or not lo_n < t < hi_n:
            break
        if h(t) < fb:
            lo_n, hi_n = (mid, hi_n) if t > mid else (lo_n, mid)
            mid = t
        else:
            lo_n, hi_n = (lo_n, t) if t > mid else (t, hi_n)
    for n in (mid - 1, mid + 1):  # the segment minimum can sit one segment off the envelope's
        if 1 <= n <= n_hi:
            h(n)
    return min(cache.values(), key=lambda v: v[0])[1]


def _fit(prob: _Problem, model: str, taus: Sequence[float], extra: Sequence[np.ndarray] = (),
         n_grid: int = 2) -> BeadSpringFit:
    """The best fit from the ``n_grid`` best-scored starts and the ``extra`` ones.

    Each start is refined coarsely; the best is compared with the best whole-number segment of N near it
    (:func:`_best_segment`), refined tightly, and on a kink of N refitted with N held there.
    """
    a_values = (1.5, 2.0) if prob.a_fixed is None else (None,)
    starts = _scored_starts(prob, taus, a_values, n_grid) + list(extra)
    best = min((_refine(prob, x0, _COARSE) for x0 in starts), key=lambda res: res.cost)
    x_seg = _best_segment(prob, best.x)
    if math.floor(math.exp(x_seg[1])) != math.floor(math.exp(best.x[1])):
        seg = _refine(prob, x_seg, _COARSE)
        if seg.cost < best.cost:
            best = seg
    best = _refine(prob, best.x)
    x = best.x
    N = math.exp(x[1])
    if abs(N - round(N)) <= 1e-6 * N:  # on a kink: the other parameters with N held there
        cost, x2 = _held(prob, x, 1, _TIGHT)
        if cost < best.cost:
            x = x2
    return _make_fit(prob, model, x)


def _tau_estimates(omega, storage, loss, tau_starts: Sequence[float]) -> list[float]:
    """The τ_1 starting estimates from the data and the finite positive ``tau_starts``."""
    return [t for t in list(_terminal_tau_estimate(omega, storage, loss)) + list(tau_starts)
            if t > 0 and math.isfinite(t)]


@limited
def fit_chain(
    omega: np.ndarray,
    storage: np.ndarray,
    loss: np.ndarray,
    model: str,
    *,
    tau_starts: Sequence[float] = (),
    solvent: bool = True,
) -> BeadSpringFit:
    """Fit one bead-spring model (a key of :data:`MODELS`) to a sweep by relative least squares.

    Starts: every τ_1 estimate (terminal ratio, G' = G'' crossover and any ``tau_starts``, e.g. the
    longest time of the recovered spectrum) × scale factors 0.5, 1, 2 × N on a geometric grid from 1 to
    N_MAX (× a ∈ {1.5, 2} when a is free) are scored with G0 and η_s solved exactly; the two best starts are
    refined by variable-projection Levenberg–Marquardt and the best result is kept.  Intervals are not
    computed here (see :func:`add_intervals`).
    """
    if model not in MODELS:
        raise ValueError(f"unknown model {model!r}")
    form, a_fixed = MODELS[model]
    omega = np.asarray(omega, dtype=float)
    storage = np.asarray(storage, dtype=float)
    loss = np.asarray(loss, dtype=float)
    prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
    return _fit(prob, model, _tau_estimates(omega, storage, loss, tau_starts))


def _make_fit(prob: _Problem, model: str, theta: np.ndarray, **extra: Any) -> BeadSpringFit:
    r, g0, eta, fp, fpp = prob.evaluate(theta)
    tau1, N, a = prob.unpack(theta)
    chi2 = float(r @ r)
    k = 3 + (1 if prob.solvent else 0) + (1 if prob.a_fixed is None else 0)  # G0, τ1, N, (η_s), (a)
    red, aic, bic = _stats(chi2, prob.n, k)
    return BeadSpringFit(model=model, form=prob.form, G0=g0, tau1=tau1, N=N, eta_s=eta, a=a,
                         a_free=prob.a_fixed is None, chi2=chi2, n_data=prob.n, n_params=k,
                         reduced_chi2=red, aic=aic, bic=bic, rms=math.sqrt(chi2 / prob.n),
                         storage_fit=fp, loss_fit=fpp, **extra)


@limited
def fit_all(omega, storage, loss, *, tau_starts: Sequence[float] = (), solvent: bool = True,
            models: Sequence[str] = tuple(MODELS)) -> dict[str, BeadSpringFit]:
    """Fit every model in ``models`` (default: all of :data:`MODELS`); return name -> fit.

    A model with a free exponent also starts from the optimum of every fitted model of the same form with a
    fixed exponent (the general sine form from the Rouse chain, the general power form from the Zimm chains),
    so that it never fits worse than the model it contains.
    """
    omega = np.asarray(omega, dtype=float)
    storage = np.asarray(storage, dtype=float)
    loss = np.asarray(loss, dtype=float)
    taus = _tau_estimates(omega, storage, loss, tau_starts)
    unknown = [m for m in models if m not in MODELS]
    if unknown:
        raise ValueError(f"unknown model {unknown[0]!r}")
    fits: dict[str, BeadSpringFit] = {}
    for m in sorted(models, key=lambda m: MODELS[m][1] is None):  # fixed exponents first
        form, a_fixed = MODELS[m]
        prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
        extra = []
        if a_fixed is None:
            extra = [np.array([math.log(f.tau1), math.log(max(f.N, 1.0)), f.a]) for f in fits.values()
                     if f.form == form]
        fits[m] = _fit(prob, m, taus, extra, n_grid=0 if extra else 2)
    return {m: fits[m] for m in models}


