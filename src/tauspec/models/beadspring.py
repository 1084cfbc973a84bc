"""Bead-spring chain models (Rouse, Zimm and a free mode exponent) and their direct fits to a sweep.

Every model is a set of N Maxwell modes of equal modulus G0 plus a Newtonian solvent,

    G'(ω)  = G0 Σ_p (ωτ_p)²/(1 + (ωτ_p)²)
    G''(ω) = η_s ω + G0 Σ_p ωτ_p/(1 + (ωτ_p)²),        p = 1 … N,

with the mode times in one of two forms,

    "sine"  (finite chain):     τ_p = τ_1 [sin(π/(2(N+1))) / sin(pπ/(2(N+1)))]^a
    "power" (truncated law):    τ_p = τ_1 p^(−a).

a = 2 in the sine form is the exact discrete Rouse chain, a = 2 in the power form the continuum Rouse law
τ_p = τ_R/p²; a = 3ν in the power form is the Zimm chain (ν = 1/2 θ solvent, ν ≈ 0.588 good solvent), in the
sine form its discrete-chain counterpart (models/chains.py).  Every law is fitted in both forms.

Fits minimise the sum of squared relative residuals (G'_fit/G'_data − 1, G''_fit/G''_data − 1).  G0 and η_s
enter linearly and are solved by nonnegative least squares inside each evaluation (variable projection,
Golub & Pereyra 1973); τ_1, N and a are the nonlinear parameters.  N is treated as continuous: a non-integer
N = n + f is the mixture (1 − f)·chain(n) + f·chain(n + 1), which is continuous in N and equal to the
discrete chain at every integer.  Intervals are 95 % profile-likelihood intervals with the F form of the
threshold; when a profile cannot be followed the Jacobian (Wald) interval is given and the fit says so.

References
----------
Rouse, P. E. (1953). J. Chem. Phys. 21, 1272.
Zimm, B. H. (1956). J. Chem. Phys. 24, 269.
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 9.
Golub, G. H. & Pereyra, V. (1973). SIAM J. Numer. Anal. 10, 413 (variable projection).
Bates, D. M. & Watts, D. G. (1988). *Nonlinear Regression Analysis and Its Applications*, ch. 6
(profile-likelihood intervals).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
from scipy import optimize

from ..data.record import field, record
from .bounds import checked_interval
from .chains import A_BOUNDS, N_MAX, NU_GOOD, _chain_unit, mode_times

__all__ = ["MODELS", "ROUSE_MODELS", "ZIMM_MODELS", "BeadSpringFit", "fit_chain", "fit_all"]


#: model name -> (form, fixed exponent a, or None when a is fitted)
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


@record
class BeadSpringFit:
    """A bead-spring model fitted to one sweep.

    ``chi2`` is the sum of squared relative residuals over G' and G''; ``reduced_chi2 = chi2/(n − k)``;
    ``aic = n ln(chi2/n) + 2k`` and ``bic = n ln(chi2/n) + k ln n`` (Gaussian errors of unknown common
    relative size; Burnham & Anderson 2002, ch. 2).  Intervals are 95 %; ``ci_method`` says how they were
    found ("profile likelihood", "jacobian", or "none").
    """

    model: str
    form: str
    G0: float
    G0_ci: tuple[float, float] = (math.nan, math.nan)
    tau1: float
    tau1_ci: tuple[float, float] = (math.nan, math.nan)
    N: float
    eta_s: float
    a: float
    a_free: bool
    a_ci: tuple[float, float] = (math.nan, math.nan)
    ci_method: str = "none"
    chi2: float
    n_data: int
    n_params: int
    reduced_chi2: float
    aic: float
    bic: float
    rms: float
    notes: tuple[str, ...] = ()
    storage_fit: np.ndarray = field(transient=True, default=None)
    loss_fit: np.ndarray = field(transient=True, default=None)

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        # no zero-width interval is written (issue 16): a fixed exponent has none, a degenerate one is withheld,
        # and a parameter at a search bound is listed in ``at_bound`` with its interval withheld
        bounds = self.at_bound()
        for key, value in (("G0", self.G0), ("tau1", self.tau1), ("a", self.a)):
            d[f"{key}_ci"] = list(checked_interval(key, value, d[f"{key}_ci"], bounds.get(key, ""))[0])
        if not self.a_free:  # a held at its model value
            d["a_ci"] = [math.nan, math.nan]
        d["at_bound"] = sorted(bounds)
        return d

    def at_bound(self, omega: np.ndarray | None = None) -> dict[str, str]:
        """Parameters at a search bound, each with its bound.

        N at 1 or N_MAX, a at A_BOUNDS, τ_1 at the limits 10⁻³/ω_max and 10³/ω_min of the fit (when ``omega``
        is given).
        """
        out = {}
        if self.N >= N_MAX * (1 - 1e-6):
            out["N"] = f"N_MAX = {N_MAX:g}"
        elif self.N <= 1 + 1e-6:
            out["N"] = "N = 1"
        if self.a_free and min(self.a - A_BOUNDS[0], A_BOUNDS[1] - self.a) < 1e-6:
            out["a"] = f"a in [{A_BOUNDS[0]:g}, {A_BOUNDS[1]:g}]"
        if omega is not None:
            lo, hi = 1e-3 / float(np.max(omega)), 1e3 / float(np.min(omega))
            if abs(math.log(self.tau1 / lo)) < 1e-6 or abs(math.log(self.tau1 / hi)) < 1e-6:
                out["tau1"] = f"tau_1 in [{lo:.3g}, {hi:.3g}] s"
        return out

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        if not d.get("a_free", True):
            d.pop("a_ci", None)
        return d

    def mode_times(self) -> np.ndarray:
        """Return the mode times of the fitted chain (N rounded to the nearest integer)."""
        return mode_times(self.tau1, max(1, round(self.N)), self.a, self.form)



class _Problem:
    """The relative-residual least-squares problem of one model on one sweep."""

    def __init__(self, omega, storage, loss, form: str, a_fixed: float | None, solvent: bool = True):
        self.omega = np.asarray(omega, dtype=float)
        self.gp = np.asarray(storage, dtype=float)
        self.gpp = np.asarray(loss, dtype=float)
        self.form = form
        self.a_fixed = a_fixed
        self.solvent = solvent
        w = self.omega
        self.lo_tau = math.log(1e-3 / w[-1])
        self.hi_tau = math.log(1e3 / w[0])
        self.n = 2 * len(w)

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

    def linear(self, sp: np.ndarray, spp: np.ndarray, G0: float | None = None) -> tuple[float, float]:
        """Best nonnegative (G0, η_s) for unit moduli; with G0 given only η_s is solved."""
        u = sp / self.gp
        v = spp / self.gpp
        s = self.omega / self.gpp
        if G0 is not None:
            if not self.solvent:
                return G0, 0.0
            # minimise Σ(G0 u − 1)² + Σ(G0 v + η s − 1)² over η ≥ 0
            eta = float(np.dot(s, 1 - G0 * v) / np.dot(s, s))
            return G0, max(eta, 0.0)
        if self.solvent:
            A = np.zeros((self.n, 2))
            A[: len(u), 0] = u
            A[len(u):, 0] = v
            A[len(u):, 1] = s
        else:
            A = np.concatenate([u, v])[:, None]
        x, _ = optimize.nnls(A, np.ones(self.n))
        return float(x[0]), float(x[1]) if self.solvent else 0.0

    def evaluate(self, theta, G0: float | None = None):
        tau1, N, a = self.unpack(theta)
        sp, spp = _chain_unit(self.omega, tau1, N, a, self.form)
        g0, eta = self.linear(sp, spp, G0)
        fp = g0 * sp
        fpp = g0 * spp + eta * self.omega
        r = np.concatenate([fp / self.gp - 1.0, fpp / self.gpp - 1.0])
        return r, g0, eta, fp, fpp

    def residuals(self, theta, G0: float | None = None) -> np.ndarray:
        return self.evaluate(theta, G0)[0]


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


def _fit_from(prob: _Problem, starts: Sequence[np.ndarray]) -> optimize.OptimizeResult:
    lo, hi = prob.bounds()
    best = None
    for x0 in starts:
        x0 = np.clip(np.asarray(x0, dtype=float), np.array(lo) + 1e-9, np.array(hi) - 1e-9)
        res = optimize.least_squares(prob.residuals, x0, bounds=(lo, hi), method="trf", x_scale=1.0,
                                     diff_step=1e-5, xtol=1e-10, ftol=1e-12, max_nfev=400)
        if best is None or res.cost < best.cost:
            best = res
    return best


def _stats(chi2: float, n: int, k: int) -> tuple[float, float, float]:
    chi2 = max(chi2, 1e-300)
    red = chi2 / max(n - k, 1)
    ll = n * math.log(chi2 / n)
    return red, ll + 2 * k, ll + k * math.log(n)


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
    N_MAX (× a ∈ {1.5, 2} when a is free) are scored by one evaluation each; the two best starts are
    refined by trust-region least squares and the best result is kept.  Intervals are not computed here
    (see :func:`add_intervals`).
    """
    if model not in MODELS:
        raise ValueError(f"unknown model {model!r}")
    form, a_fixed = MODELS[model]
    omega = np.asarray(omega, dtype=float)
    storage = np.asarray(storage, dtype=float)
    loss = np.asarray(loss, dtype=float)
    prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
    taus = [t for t in list(_terminal_tau_estimate(omega, storage, loss)) + list(tau_starts)
            if t > 0 and math.isfinite(t)]
    candidates = []
    for t in taus:
        for fac in (0.5, 1.0, 2.0):
            for n_ in np.geomspace(1, N_MAX, 14):
                for a in ((1.5, 2.0) if a_fixed is None else (None,)):
                    th = [math.log(t * fac), math.log(n_)] + ([a] if a is not None else [])
                    th[0] = min(max(th[0], prob.lo_tau), prob.hi_tau)
                    r = prob.residuals(np.array(th))
                    candidates.append((float(r @ r), th))
    candidates.sort(key=lambda c: c[0])
    res = _fit_from(prob, [np.array(c[1]) for c in candidates[:2]])
    return _make_fit(prob, model, res.x)


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


def fit_all(omega, storage, loss, *, tau_starts: Sequence[float] = (), solvent: bool = True,
            models: Sequence[str] = tuple(MODELS)) -> dict[str, BeadSpringFit]:
    """Fit every model in ``models`` (default: all of :data:`MODELS`); return name -> fit."""
    return {m: fit_chain(omega, storage, loss, m, tau_starts=tau_starts, solvent=solvent) for m in models}
