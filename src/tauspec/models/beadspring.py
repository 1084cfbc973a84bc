"""Bead-spring chain models (Rouse, Zimm and a free mode exponent) and their direct fits to a sweep.

Every model is a set of N Maxwell modes of equal modulus G0 plus a Newtonian solvent,

    G'(ω)  = G0 Σ_p (ωτ_p)²/(1 + (ωτ_p)²)
    G''(ω) = η_s ω + G0 Σ_p ωτ_p/(1 + (ωτ_p)²),        p = 1 … N,

with the mode times in one of two forms,

    "sine"  (finite chain):     τ_p = τ_1 [sin(π/(2(N+1))) / sin(pπ/(2(N+1)))]^a
    "power" (truncated law):    τ_p = τ_1 p^(−a).

a = 2 in the sine form is the exact discrete Rouse chain; a = 3ν in the power form is the Zimm chain
(ν = 1/2 θ solvent, ν ≈ 0.588 good solvent).

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

import dataclasses
import math
from collections.abc import Sequence
from typing import Any

import numpy as np
from scipy import optimize, stats

from ..spectrum.kernels import modes_moduli

__all__ = [
    "FORMS",
    "MODELS",
    "NU_GOOD",
    "mode_times",
    "chain_moduli",
    "rouse_moduli",
    "zimm_moduli",
    "BeadSpringFit",
    "fit_chain",
    "fit_all",
    "add_intervals",
    "jacobian_intervals",
]

FORMS = ("sine", "power")

#: Flory exponent of a chain in good solvent (renormalization-group value; Rubinstein & Colby 2003, ch. 8).
NU_GOOD = 0.588

#: model name -> (form, fixed exponent a, or None when a is fitted)
MODELS: dict[str, tuple[str, float | None]] = {
    "rouse": ("sine", 2.0),
    "zimm_theta": ("power", 1.5),
    "zimm_good": ("power", 3 * NU_GOOD),
    "general_sine": ("sine", None),
    "general_power": ("power", None),
}

#: Largest N considered by the fits (a chain with more modes is indistinguishable within any sweep: its
#: fastest modes act like extra solvent viscosity).
N_MAX = 5000.0
A_BOUNDS = (1.0, 3.0)
#: modes with ω_max τ_p below this are summed in their low-frequency limit (relative error ≈ TAIL_EPS²).
TAIL_EPS = 1e-3
#: modes summed one by one; above this the sum over p uses bins of relative width BIN_RATIO − 1.
EXACT_MODES = 100
BIN_RATIO = 1.02


def mode_times(tau1: float, n: int, a: float = 2.0, form: str = "sine") -> np.ndarray:
    """Return the N mode relaxation times of a bead-spring chain, longest first.

    sine:  τ_p = τ_1 [sin(π/(2(N+1))) / sin(pπ/(2(N+1)))]^a ;  power:  τ_p = τ_1 p^(−a),  p = 1 … N.

    References
    ----------
    Rouse, P. E. (1953), J. Chem. Phys. 21, 1272 (a = 2, sine form); Zimm, B. H. (1956), J. Chem. Phys. 24, 269.
    """
    n = int(n)
    if n < 1:
        raise ValueError("a chain needs at least one mode")
    if form not in FORMS:
        raise ValueError(f"unknown form {form!r} (use one of {FORMS})")
    return _times_at(tau1, n, np.arange(1, n + 1, dtype=float), a, form)


def _mode_positions(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Mode indices p (possibly fractional) and multiplicities for summing over p = 1 … n.

    Modes up to :data:`EXACT_MODES` are taken one by one; above, consecutive modes are grouped in bins of
    relative width BIN_RATIO − 1 and each bin is represented by its midpoint times its count (the midpoint
    rule for a sum of a smooth function of p; the relative error is of order (Δ ln τ)²/24 ≈ 1e-4).
    """
    if n <= EXACT_MODES:
        return np.arange(1, n + 1, dtype=float), np.ones(n)
    edges = [EXACT_MODES]
    while edges[-1] < n:
        edges.append(min(n, max(edges[-1] + 1, int(edges[-1] * BIN_RATIO))))
    e = np.array(edges, dtype=float)
    lo, hi = e[:-1] + 1, e[1:]
    p = np.concatenate([np.arange(1, EXACT_MODES + 1, dtype=float), 0.5 * (lo + hi)])
    m = np.concatenate([np.ones(EXACT_MODES), hi - lo + 1])
    return p, m


def _times_at(tau1: float, n: int, p: np.ndarray, a: float, form: str) -> np.ndarray:
    if form == "sine":
        q = math.pi / (2 * (n + 1))
        return tau1 * (math.sin(q) / np.sin(p * q)) ** a
    return tau1 * p ** (-a)


def _unit_chain(omega: np.ndarray, tau1: float, n: int, a: float, form: str) -> tuple[np.ndarray, np.ndarray]:
    """Unit-G0 moduli of an integer chain; modes far faster than 1/ω_max enter in their low-ω limit."""
    p, mult = _mode_positions(n)
    tau = _times_at(tau1, n, p, a, form)
    wmax = float(np.max(omega))
    fast = tau * wmax < TAIL_EPS
    sp, spp = modes_moduli(omega, mult[~fast], tau[~fast])
    if np.any(fast):
        tail, mt = tau[fast], mult[fast]
        sp = sp + omega**2 * float(np.dot(mt, tail**2))
        spp = spp + omega * float(np.dot(mt, tail))
    return sp, spp


def _chain_unit(omega: np.ndarray, tau1: float, N: float, a: float, form: str) -> tuple[np.ndarray, np.ndarray]:
    """Unit-G0 moduli of a chain with a real number of modes N ≥ 1 (mixture of the neighbouring integers)."""
    N = min(max(float(N), 1.0), N_MAX)
    n = math.floor(N)
    f = N - n
    sp, spp = _unit_chain(omega, tau1, n, a, form)
    if f > 1e-12:
        sp1, spp1 = _unit_chain(omega, tau1, n + 1, a, form)
        sp = (1 - f) * sp + f * sp1
        spp = (1 - f) * spp + f * spp1
    return sp, spp


def chain_moduli(
    omega: np.ndarray,
    G0: float,
    tau1: float,
    N: float,
    *,
    a: float = 2.0,
    form: str = "sine",
    eta_s: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Return (G', G'') of a bead-spring chain with mode times from :func:`mode_times`.

    G' = G0 Σ (ωτ_p)²/(1+(ωτ_p)²),  G'' = η_s ω + G0 Σ ωτ_p/(1+(ωτ_p)²)  (Ferry 1980, ch. 9).
    A non-integer N = n + f gives (1 − f)·chain(n) + f·chain(n + 1).
    """
    omega = np.asarray(omega, dtype=float)
    sp, spp = _chain_unit(omega, tau1, N, a, form)
    return G0 * sp, G0 * spp + eta_s * omega


def rouse_moduli(omega: np.ndarray, G0: float, tau1: float, N: float, *, eta_s: float = 0.0):
    """Return (G', G'') of the exact finite Rouse chain (sine form, a = 2) plus solvent.

    τ_p = τ_1 sin²(π/(2(N+1))) / sin²(pπ/(2(N+1))), each mode G0 (Rouse 1953; Ferry 1980, ch. 9).
    """
    return chain_moduli(omega, G0, tau1, N, a=2.0, form="sine", eta_s=eta_s)


def zimm_moduli(omega: np.ndarray, G0: float, tau1: float, N: float, *, nu: float = 0.5, eta_s: float = 0.0):
    """Return (G', G'') of the Zimm chain τ_p = τ_1 p^(−3ν), p = 1 … N, plus solvent (Zimm 1956)."""
    return chain_moduli(omega, G0, tau1, N, a=3.0 * nu, form="power", eta_s=eta_s)


# --------------------------------------------------------------------------------------------- fitting


@dataclasses.dataclass(frozen=True, kw_only=True)
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
    tau1: float
    N: float
    eta_s: float
    a: float
    a_free: bool
    chi2: float
    n_data: int
    n_params: int
    reduced_chi2: float
    aic: float
    bic: float
    rms: float
    storage_fit: np.ndarray
    loss_fit: np.ndarray
    G0_ci: tuple[float, float] = (math.nan, math.nan)
    tau1_ci: tuple[float, float] = (math.nan, math.nan)
    a_ci: tuple[float, float] = (math.nan, math.nan)
    ci_method: str = "none"
    notes: tuple[str, ...] = ()

    def mode_times(self) -> np.ndarray:
        """Return the mode times of the fitted chain (N rounded to the nearest integer)."""
        return mode_times(self.tau1, max(1, round(self.N)), self.a, self.form)

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON-ready form (without the fitted curves)."""
        return {
            "model": self.model,
            "form": self.form,
            "G0": self.G0,
            "G0_ci": list(self.G0_ci),
            "tau1": self.tau1,
            "tau1_ci": list(self.tau1_ci),
            "N": self.N,
            "eta_s": self.eta_s,
            "a": self.a,
            "a_free": self.a_free,
            "a_ci": list(self.a_ci) if self.a_free else [self.a, self.a],
            "ci_method": self.ci_method,
            "chi2": self.chi2,
            "n_data": self.n_data,
            "n_params": self.n_params,
            "reduced_chi2": self.reduced_chi2,
            "aic": self.aic,
            "bic": self.bic,
            "rms": self.rms,
            "notes": list(self.notes),
        }


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


# ------------------------------------------------------------------------------------------- intervals


def _threshold(chi2: float, n: int, k: int, level: float = 0.95) -> float:
    """Profile threshold χ²_min (1 + F(1, n−k; level)/(n−k)) (Bates & Watts 1988, ch. 6)."""
    dof = max(n - k, 1)
    return chi2 * (1.0 + stats.f.ppf(level, 1, dof) / dof)


def _jacobian_se(prob: _Problem, fit: BeadSpringFit) -> dict[str, float]:
    """Wald standard errors of ln G0, ln τ1 and a from the numerical Jacobian of the full model."""
    names = ["lnG0", "lntau", "lnN"] + (["eta"] if prob.solvent else []) + (["a"] if prob.a_fixed is None else [])
    x0 = {"lnG0": math.log(fit.G0), "lntau": math.log(fit.tau1), "lnN": math.log(max(fit.N, 1.0)),
          "eta": fit.eta_s, "a": fit.a}

    def resid(vec):
        d = dict(zip(names, vec))
        a = d.get("a", fit.a)
        gp, gpp = chain_moduli(prob.omega, math.exp(d["lnG0"]), math.exp(d["lntau"]), math.exp(d["lnN"]),
                               a=a, form=prob.form, eta_s=d.get("eta", 0.0))
        return np.concatenate([gp / prob.gp - 1, gpp / prob.gpp - 1])

    v0 = np.array([x0[k] for k in names])
    r0 = resid(v0)
    J = np.empty((len(r0), len(names)))
    for j, name in enumerate(names):
        h = 1e-5 if name != "eta" else max(1e-6 * abs(fit.eta_s), 1e-9 * fit.G0 * fit.tau1)
        v = v0.copy()
        v[j] += h
        J[:, j] = (resid(v) - r0) / h
    s2 = float(r0 @ r0) / max(len(r0) - len(names), 1)
    cov = s2 * np.linalg.pinv(J.T @ J)
    se = np.sqrt(np.clip(np.diag(cov), 0, None))
    return dict(zip(names, se))


def jacobian_intervals(fit: BeadSpringFit, omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, *,
                       solvent: bool = True, level: float = 0.95) -> BeadSpringFit:
    """Return ``fit`` with Wald intervals from the numerical Jacobian (ln τ_1, ln G0 symmetric; a linear).

    cov = s² (JᵀJ)⁻¹ with s² = χ²/(n − k) (Bates & Watts 1988, ch. 2).  Cheaper and less faithful than
    :func:`add_intervals`; the fit's ``ci_method`` says "jacobian".
    """
    form, a_fixed = MODELS[fit.model]
    prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
    se = _jacobian_se(prob, fit)
    z = float(stats.norm.ppf(0.5 + level / 2))
    a_ci = (fit.a - z * se["a"], fit.a + z * se["a"]) if a_fixed is None else (fit.a, fit.a)
    return dataclasses.replace(fit, tau1_ci=_log_interval(fit.tau1, z * se["lntau"]),
                               G0_ci=_log_interval(fit.G0, z * se["lnG0"]), a_ci=a_ci, ci_method="jacobian")


def _log_interval(x: float, half_width: float) -> tuple[float, float]:
    """(x e^(−h), x e^(h)); an undetermined parameter (h huge or not finite) gets (0, ∞)."""
    if not math.isfinite(half_width) or half_width > 700:
        return 0.0, math.inf
    return x * math.exp(-half_width), x * math.exp(half_width)


def _profile_side(f, x_hat: float, step: float, direction: int, limit: float, max_steps: int = 14):
    """Walk from x_hat until f(x) > 0; return the crossing (brentq) or None when the profile stays inside."""
    x_in = x_hat
    x = x_hat
    s = step
    for _ in range(max_steps):
        x = x_hat + direction * s
        if (direction > 0 and x >= limit) or (direction < 0 and x <= limit):
            x = limit
            if f(x) <= 0:
                return None
            break
        if f(x) > 0:
            break
        x_in = x
        s *= 1.8
    else:
        return None
    return optimize.brentq(f, min(x_in, x), max(x_in, x), xtol=0.01 * step + 1e-12, maxiter=30)


def add_intervals(
    fit: BeadSpringFit,
    omega: np.ndarray,
    storage: np.ndarray,
    loss: np.ndarray,
    *,
    solvent: bool = True,
    level: float = 0.95,
    params: Sequence[str] = ("tau1", "G0", "a"),
) -> BeadSpringFit:
    """Return ``fit`` with 95 % profile-likelihood intervals for τ_1, G0 and (when fitted) a.

    Only the parameters named in ``params`` are profiled; the others keep their Jacobian (Wald) intervals.

    The profile χ²_p(ψ) minimises over the other parameters at fixed ψ; the interval is
    {ψ : χ²_p(ψ) ≤ χ²_min (1 + F_{1,n−k}(0.95)/(n−k))} (Bates & Watts 1988, ch. 6).  When a profile
    cannot be followed the Wald interval from the Jacobian is used for that parameter and the fit's
    ``ci_method`` and ``notes`` say so.
    """
    form, a_fixed = MODELS[fit.model]
    prob = _Problem(omega, storage, loss, form, a_fixed, solvent)
    lo, hi = prob.bounds()
    thr = _threshold(fit.chi2, prob.n, fit.n_params, level)
    theta_hat = np.array([math.log(fit.tau1), math.log(max(fit.N, 1.0))] + ([fit.a] if a_fixed is None else []))
    se = _jacobian_se(prob, fit)
    z = stats.norm.ppf(0.5 + level / 2)
    notes = list(fit.notes)
    wald = jacobian_intervals(fit, omega, storage, loss, solvent=solvent, level=level)
    out: dict[str, tuple[float, float]] = {"tau1": wald.tau1_ci, "G0": wald.G0_ci, "a": wald.a_ci}
    used_jacobian = [p for p in ("tau1", "G0", "a") if p not in params and (p != "a" or a_fixed is None)]

    def profile_of(index: int | None):
        """χ²_p − threshold as a function of the fixed value (index into θ, or None for ln G0)."""
        free = [i for i in range(len(theta_hat)) if i != index]
        state = {"x": theta_hat[free].copy()}

        def f(value: float) -> float:
            def r(xf):
                th = theta_hat.copy()
                th[free] = xf
                if index is not None:
                    th[index] = value
                    return prob.residuals(th)
                return prob.residuals(th, G0=math.exp(value))

            flo = np.array(lo)[free] + 1e-9
            fhi = np.array(hi)[free] - 1e-9
            best = optimize.least_squares(r, np.clip(state["x"], flo, fhi), bounds=(flo, fhi), method="trf",
                                          diff_step=1e-5, xtol=1e-8, ftol=1e-9, max_nfev=80)
            state["x"] = best.x
            return 2 * best.cost - thr

        return f

    specs = [("tau1", 0, theta_hat[0], se["lntau"], True, (lo[0], hi[0])),
             ("G0", None, math.log(fit.G0), se["lnG0"], True, (math.log(fit.G0) - 20, math.log(fit.G0) + 20))]
    if a_fixed is None:
        specs.append(("a", 2, fit.a, se["a"], False, (lo[2], hi[2])))
    for name, index, x_hat, s, is_log, (xlo, xhi) in specs:
        if name not in params:
            continue
        step = min(max(s, 1e-3), 1.0)
        try:
            f = profile_of(index)
            left = _profile_side(f, x_hat, step, -1, xlo)
            f = profile_of(index)
            right = _profile_side(f, x_hat, step, +1, xhi)
            lo_v = -math.inf if left is None else left
            hi_v = math.inf if right is None else right
            if left is None or right is None:
                notes.append(f"the {name} profile stays inside the 95 % region up to the search limit: "
                             f"the interval is open on that side")
        except (ValueError, RuntimeError, FloatingPointError):
            lo_v, hi_v = x_hat - z * s, x_hat + z * s
            used_jacobian.append(name)
        if is_log:
            lo_v, hi_v = (math.exp(v) if math.isfinite(v) else (0.0 if v < 0 else math.inf) for v in (lo_v, hi_v))
        out[name] = (lo_v, hi_v)
    failed = [p for p in used_jacobian if p in params]
    if failed:
        notes.append("the profile could not be followed for " + ", ".join(failed)
                     + "; the Jacobian (Wald) interval is given instead")
    if used_jacobian:
        method = "profile likelihood; jacobian for " + ", ".join(used_jacobian)
    else:
        method = "profile likelihood"
    return dataclasses.replace(fit, tau1_ci=out["tau1"], G0_ci=out["G0"], a_ci=out.get("a", (fit.a, fit.a)),
                               ci_method=method, notes=tuple(notes))
