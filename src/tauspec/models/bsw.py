"""The Baumgaertel–Schausberger–Winter (BSW) spectrum of an entangled melt, its moduli and its fit.

    H(τ) = G_N⁰ [n_e (τ/τ_max)^(n_e) + n_g (τ/τ_c)^(−n_g)]   for τ ≤ τ_max,   0 above

(Baumgaertel, Schausberger & Winter 1990; form as in REFERENCES.md, from memory).  The first term is the
entanglement (plateau and terminal) zone; its integral ∫ H d ln τ is exactly G_N⁰, the plateau modulus.
The second is the onset of the transition zone.  The moduli of each term have a closed form: for a
spectrum H = (τ/τ_max)^m on 0 < τ ≤ τ_max and Ω = ωτ_max,

    G'(ω)  = Ω²/(m + 2) · ₂F₁(1, (m + 2)/2; (m + 4)/2; −Ω²)        (m > −2)
    G''(ω) = Ω/(m + 1)  · ₂F₁(1, (m + 1)/2; (m + 3)/2; −Ω²)        (m > −1)

(term-by-term integration of the Maxwell kernels; checked against the quadrature values of REFERENCES.md:
with G_N⁰ = τ_max = 1, n_e = 0.23, G'(1) = 0.0700578, G''(1) = 0.1417297).

The fit is least squares on relative residuals with the amplitudes A_e = G_N⁰ n_e, A_g = G_N⁰ n_g
(τ_max/τ_c)^(n_g) and the high-frequency Newtonian term η_s solved by nonnegative least squares inside each
evaluation (variable projection, Golub & Pereyra 1973, 2003); θ = (ln τ_max, n_e, n_g) is fitted by the
bounded Levenberg–Marquardt iteration of :mod:`tauspec.spectrum.lsq` with the variable-projection Jacobian
(eq. (1) there).  It needs the derivatives of the unit moduli.  Writing the term-by-term integral with
u = ωτ, x = τ/τ_max,

    G'(Ω)  = ∫_0^1 x^m Ω²x²/(1 + Ω²x²) dx/x = Ω^(−m) ∫_0^Ω u^(m+1)/(1 + u²) du
    G''(Ω) = ∫_0^1 x^m Ωx/(1 + Ω²x²) dx/x   = Ω^(−m) ∫_0^Ω u^m/(1 + u²) du,

so (the fundamental theorem of calculus on the upper limit, the product rule on Ω^(−m))

    ∂G'/∂ln τ_max  = Ω dG'/dΩ  = −m G'  + Ω²/(1 + Ω²)
    ∂G''/∂ln τ_max = Ω dG''/dΩ = −m G'' + Ω/(1 + Ω²)

exactly (checked against mpmath in tests/test_entanglement.py).  The derivative in the exponent m is a
derivative of ₂F₁ in its parameters, which has no elementary form (it is a Lerch transcendent of order 2);
it is the central difference [G(m + h) − G(m − h)]/(2h), h = 1e-5 (:data:`M_STEP`): two more ₂F₁ evaluations
per modulus, against the ≈ 50 nodes per frequency a quadrature over the kernel's knee would take; measured
within 5e-8 of mpmath for m ∈ [−0.95, 0.8], Ω ∈ [1e-3, 1e6] (the error only slows the last iterations: the
optimum is that of the residual, computed exactly).  Starts: as the trust-region fit it replaced (the two best
of a grid by one evaluation), each refined with coarse tolerances and the better one tightly.  Intervals are
95 % Wald intervals from a finite-difference Jacobian of all parameters (Bates & Watts 1988, ch. 2), ln G_N⁰
and ln τ_max symmetric.

References
----------
Baumgaertel, M., Schausberger, A. & Winter, H. H. (1990). Rheol. Acta 29, 400–408.
Golub, G. H. & Pereyra, V. (1973). SIAM J. Numer. Anal. 10, 413.
Golub, G. H. & Pereyra, V. (2003). Inverse Problems 19, R1.
Moré, J. J. (1978). The Levenberg–Marquardt algorithm. In *Numerical Analysis* (ed. G. A. Watson), Springer,
vol. 630, 105.
Bates, D. M. & Watts, D. G. (1988). *Nonlinear Regression Analysis and Its Applications*, Wiley.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Sequence

import numpy as np
from scipy import special, stats

from ..data.record import field, record
from ..spectrum.lsq import levenberg_marquardt, nnls_small, projected_jacobian

__all__ = ["cutoff_power_moduli", "bsw_moduli", "BSWFit", "fit_bsw", "N_E_BOUNDS", "N_G_BOUNDS"]

#: Search bounds of the exponents (BSW 1990 report n_e ≈ 0.2–0.25 and n_g ≈ 0.67 for their melts; the
#: bounds are wide on purpose, our choice).  A fit at a bound is flagged.
N_E_BOUNDS = (0.02, 0.8)
N_G_BOUNDS = (0.2, 0.95)


def cutoff_power_moduli(omega: np.ndarray, tau_max: float, m: float) -> tuple[np.ndarray, np.ndarray]:
    """(G', G'') of the unit spectrum H = (τ/τ_max)^m on 0 < τ ≤ τ_max (closed form, module docstring)."""
    W = np.asarray(omega, dtype=float) * tau_max
    W2 = W * W
    gp = W2 / (m + 2) * special.hyp2f1(1.0, (m + 2) / 2, (m + 4) / 2, -W2)
    gpp = W / (m + 1) * special.hyp2f1(1.0, (m + 1) / 2, (m + 3) / 2, -W2)
    return gp, gpp


def bsw_moduli(omega: np.ndarray, G_N: float, tau_max: float, n_e: float = 0.23, n_g: float = 0.67,
               tau_c: float | None = None, eta_s: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """(G', G'') of the BSW spectrum (without τ_c: the entanglement part alone) plus η_s ω."""
    gp, gpp = cutoff_power_moduli(omega, tau_max, n_e)
    gp, gpp = G_N * n_e * gp, G_N * n_e * gpp
    if tau_c is not None:
        a, b = cutoff_power_moduli(omega, tau_max, -n_g)
        amp = G_N * n_g * (tau_max / tau_c) ** n_g
        gp, gpp = gp + amp * a, gpp + amp * b
    return gp, gpp + eta_s * np.asarray(omega, dtype=float)


@record
class BSWFit:
    """A BSW-form fit: plateau modulus, terminal time, exponents, fit statistics and 95 % intervals.

    ``G_N_ci``, ``tau_max_ci`` and ``n_e_ci`` are Wald intervals (``ci_method``); ``at_bound`` names the
    parameters that ended at a search bound (their intervals are then not claimed).  ``glass_amplitude`` is 0
    when the transition-zone term was not needed.
    """

    G_N: float
    tau_max: float
    n_e: float
    n_g: float
    glass_amplitude: float
    eta_s: float
    G_N_ci: tuple[float, float] = (math.nan, math.nan)
    tau_max_ci: tuple[float, float] = (math.nan, math.nan)
    n_e_ci: tuple[float, float] = (math.nan, math.nan)
    chi2: float
    n_data: int
    n_params: int
    reduced_chi2: float
    rms: float
    at_bound: tuple[str, ...] = ()
    ci_method: str = "jacobian (Wald)"
    storage_fit: np.ndarray = field(transient=True, default=None)
    loss_fit: np.ndarray = field(transient=True, default=None)


#: Step in the exponent m of the central difference for ∂G/∂m (module docstring): truncation ∝ h², rounding of
#: ₂F₁ ≈ 1e-14/h; measured within 5e-8 relative of mpmath (tests/test_entanglement.py)
M_STEP = 1e-5


def cutoff_power_derivatives(omega: np.ndarray, tau_max: float, m: float, storage: np.ndarray,
                             loss: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """∂/∂ln τ_max and ∂/∂m of the unit cut-off power-law moduli (G', G'') = ``storage``, ``loss`` at (τ_max, m).

    With Ω = ωτ_max, G'(Ω) = Ω^(−m) ∫_0^Ω u^(m+1)/(1 + u²) du and G''(Ω) = Ω^(−m) ∫_0^Ω u^m/(1 + u²) du, so

        ∂G'/∂ln τ_max  = Ω dG'/dΩ  = −m G'  + Ω²/(1 + Ω²)
        ∂G''/∂ln τ_max = Ω dG''/dΩ = −m G'' + Ω/(1 + Ω²)

    exactly; ∂/∂m has no elementary form (a parameter derivative of ₂F₁) and is the central difference
    [G(m + h) − G(m − h)]/(2h), h = :data:`M_STEP`.  Returns (∂G'/∂ln τ, ∂G''/∂ln τ, ∂G'/∂m, ∂G''/∂m).
    """
    W = np.asarray(omega, dtype=float) * tau_max
    den = 1.0 + W * W
    up_p, up_pp = cutoff_power_moduli(omega, tau_max, m + M_STEP)
    dn_p, dn_pp = cutoff_power_moduli(omega, tau_max, m - M_STEP)
    return (-m * storage + W * W / den, -m * loss + W / den,
            (up_p - dn_p) / (2 * M_STEP), (up_pp - dn_pp) / (2 * M_STEP))


class _Problem:
    """Relative-residual least squares of the BSW form with the amplitudes solved inside (NNLS).

    θ = (ln τ_max, n_e, n_g); the columns of the amplitudes c = (A_e[, A_g][, η_s]) ≥ 0 are the unit moduli
    of the entanglement term (m = n_e), of the transition term (m = −n_g) and (0, ω), each divided by the
    data, and the residual is r = B(θ) c − 1.
    """

    def __init__(self, omega, storage, loss, solvent: bool, glassy: bool):
        self.w = np.asarray(omega, dtype=float)
        self.gp = np.asarray(storage, dtype=float)
        self.gpp = np.asarray(loss, dtype=float)
        self.solvent = solvent
        self.glassy = glassy
        self.lo = [math.log(0.01 / self.w[-1]), N_E_BOUNDS[0], N_G_BOUNDS[0]]
        self.hi = [math.log(1e4 / self.w[0]), N_E_BOUNDS[1], N_G_BOUNDS[1]]
        self.inv = 1.0 / np.concatenate([self.gp, self.gpp])
        self.s = np.concatenate([np.zeros_like(self.w), self.w]) * self.inv
        self.free: np.ndarray | None = None  # the positive set of the last evaluation (warm start of NNLS)

    def _terms(self, theta: np.ndarray) -> list[tuple[float, tuple[np.ndarray, np.ndarray]]]:
        """(m, unit moduli) of the power-law terms in use at θ."""
        tmax = math.exp(theta[0])
        ms = [float(theta[1])] + ([-float(theta[2])] if self.glassy else [])
        return [(m, cutoff_power_moduli(self.w, tmax, m)) for m in ms]

    def columns(self, theta: np.ndarray) -> np.ndarray:
        """Relative-residual design matrix of the linear amplitudes (A_e, A_g, η_s) at θ."""
        return self._design(self._terms(theta))

    def _design(self, terms: list[tuple[float, tuple[np.ndarray, np.ndarray]]]) -> np.ndarray:
        """The design matrix from the unit moduli of the power-law terms (and the solvent column)."""
        cols = [np.concatenate(g) * self.inv for _, g in terms]
        return np.column_stack(cols + ([self.s] if self.solvent else []))

    def _linear(self, B: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray | None]:
        """NNLS for c on the columns scaled to unit maximum: (scale, c·scale, positive set, r, Cholesky factor)."""
        scale = np.max(np.abs(B), axis=0)
        scale[scale == 0] = 1.0
        Bs = B / scale
        free = self.free if self.free is not None and self.free.size == B.shape[1] else None
        cs, free, R = nnls_small(Bs, np.ones(B.shape[0]), free)
        self.free = free
        return scale, cs, free, Bs @ cs - 1.0, R

    def solve(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The residual and the amplitudes (A_e[, A_g][, η_s]) at θ."""
        scale, cs, _, r, _ = self._linear(self.columns(theta))
        return r, cs / scale

    def residuals(self, theta: np.ndarray) -> np.ndarray:
        return self.solve(theta)[0]

    def fun(self, theta: np.ndarray) -> tuple[np.ndarray, Callable[[], np.ndarray]]:
        """Residual and the function giving its variable-projection Jacobian in θ (eq. (1) of spectrum/lsq.py).

        ∂B/∂θ: the entanglement column depends on ln τ_max and n_e, the transition column on ln τ_max and
        n_g (m = −n_g, so ∂/∂n_g = −∂/∂m), the solvent column on neither (:func:`cutoff_power_derivatives`).
        The Jacobian is computed only when the solver asks for it, at the points it accepts (Golub & Pereyra
        1973).
        """
        tmax = math.exp(theta[0])
        terms = self._terms(theta)
        B = self._design(terms)
        scale, cs, free, r, R = self._linear(B)

        def jacobian() -> np.ndarray:
            c = cs / scale
            dBc = np.zeros((r.size, 3))
            dBt_r = np.zeros((B.shape[1], 3))
            for j, (m, (gp, gpp)) in enumerate(terms):
                dt_p, dt_pp, dm_p, dm_pp = cutoff_power_derivatives(self.w, tmax, m, gp, gpp)
                dt = np.concatenate([dt_p, dt_pp]) * self.inv
                dm = np.concatenate([dm_p, dm_pp]) * self.inv * (1.0 if j == 0 else -1.0)
                k = 1 + j  # n_e for the entanglement term, n_g for the transition term
                dBc[:, 0] += c[j] * dt
                dBc[:, k] = c[j] * dm
                dBt_r[j, 0] = float(dt @ r) / scale[j]
                dBt_r[j, k] = float(dm @ r) / scale[j]
            return projected_jacobian(B / scale, cs, free, r, dBc, dBt_r, R)

        return r, jacobian


def _starts(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, tau_starts: Sequence[float]) -> list[float]:
    """Starting values of τ_max.

    The terminal ratio G'/(ωG'') (→ τ_max (1 + n_e)/(2 + n_e) ≈ 0.55 τ_max for the entanglement part, from
    η0 J_e⁰ of REFERENCES.md) and the first G' = G'' crossover (at ωτ_max ≈ 3).
    """
    out = [float(storage[0] / (omega[0] * loss[0])) / 0.55]
    d = np.log(storage) - np.log(loss)
    up = np.nonzero((d[:-1] < 0) & (d[1:] >= 0))[0]
    if len(up):
        out.append(3.0 / float(omega[up[0]]))
    return out + [t for t in tau_starts if t > 0 and math.isfinite(t)]


#: Levenberg–Marquardt tolerances: the final refinement (those of the trust-region fit it replaced, ftol 1e-12 and
#: xtol 1e-10, with a gradient test as well), and the coarse runs that only compare the two best starts
_TIGHT = {"ftol": 1e-12, "xtol": 1e-10, "gtol": 1e-9, "max_nfev": 300}
_COARSE = {"ftol": 1e-8, "xtol": 1e-7, "gtol": 1e-7, "max_nfev": 100}


def fit_bsw(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, *, solvent: bool = True,
            glassy: bool = True, tau_starts: Sequence[float] = (), level: float = 0.95) -> BSWFit:
    """Fit the BSW form to a sweep (relative least squares, variable projection).

    Starts: τ_max from the terminal ratio, the first crossover and ``tau_starts``, each × 0.5, 1, 2, with
    n_e ∈ {0.15, 0.3} and n_g = 0.67; the best two by one evaluation are refined by variable-projection
    Levenberg–Marquardt with coarse tolerances, and the better one tightly.
    """
    w = np.asarray(omega, dtype=float)
    prob = _Problem(w, storage, loss, solvent, glassy)
    cands = []
    for t in _starts(w, np.asarray(storage), np.asarray(loss), tau_starts):
        for fac in (0.5, 1.0, 2.0):
            for ne in (0.15, 0.3):
                th = np.array([min(max(math.log(t * fac), prob.lo[0] + 1e-6), prob.hi[0] - 1e-6), ne, 0.67])
                r = prob.residuals(th)
                cands.append((float(r @ r), th))
    cands.sort(key=lambda c: c[0])
    lo, hi = np.array(prob.lo), np.array(prob.hi)
    best = min((levenberg_marquardt(prob.fun, th, lo, hi, **_COARSE) for _, th in cands[:2]), key=lambda res: res.cost)
    best = levenberg_marquardt(prob.fun, best.x, lo, hi, **_TIGHT)
    return _make_fit(prob, best.x, level)


def _make_fit(prob: _Problem, theta: np.ndarray, level: float) -> BSWFit:
    r, x = prob.solve(theta)
    tmax, ne, ng = math.exp(theta[0]), float(theta[1]), float(theta[2])
    A_e = float(x[0])
    A_g = float(x[1]) if prob.glassy else 0.0
    eta = float(x[-1]) if prob.solvent else 0.0
    chi2 = float(r @ r)
    n = len(r)
    at_bound = [name for name, v, lo, hi in (("tau_max", theta[0], prob.lo[0], prob.hi[0]),
                                             ("n_e", ne, prob.lo[1], prob.hi[1]),
                                             ("n_g", ng, prob.lo[2], prob.hi[2]))
                if (name != "n_g" or A_g > 0) and min(v - lo, hi - v) < 1e-4 * max(1.0, hi - lo)]
    if A_e <= 0:
        at_bound.append("G_N")
    # k: τ_max, n_e, A_e, and n_g with A_g when the transition term is used, η_s when nonzero
    k = 3 + (2 if A_g > 0 else 0) + (1 if eta > 0 else 0)
    model = (r + 1.0) * np.concatenate([prob.gp, prob.gpp])
    fit_p, fit_pp = model[: len(prob.w)], model[len(prob.w):]
    G_N = A_e / ne if ne > 0 else math.nan
    out = BSWFit(G_N=G_N, tau_max=tmax, n_e=ne, n_g=ng, glass_amplitude=A_g, eta_s=eta, chi2=chi2, n_data=n,
                 n_params=k, reduced_chi2=chi2 / max(n - k, 1), rms=math.sqrt(chi2 / n), storage_fit=fit_p,
                 loss_fit=fit_pp, at_bound=tuple(at_bound))
    return _wald(prob, out, level) if A_e > 0 else out


def _wald(prob: _Problem, fit: BSWFit, level: float) -> BSWFit:
    """Wald intervals for ln G_N, ln τ_max and n_e from the Jacobian of every free parameter."""
    names = ["lnGN", "lntau", "ne"] + (["ng", "lnAg"] if fit.glass_amplitude > 0 else []) + \
        (["eta"] if fit.eta_s > 0 else [])
    v0 = {"lnGN": math.log(fit.G_N), "lntau": math.log(fit.tau_max), "ne": fit.n_e, "ng": fit.n_g,
          "lnAg": math.log(fit.glass_amplitude) if fit.glass_amplitude > 0 else 0.0, "eta": fit.eta_s}
    data = np.concatenate([prob.gp, prob.gpp])

    def resid(vec: np.ndarray) -> np.ndarray:
        d = {**v0, **dict(zip(names, vec))}
        gp, gpp = cutoff_power_moduli(prob.w, math.exp(d["lntau"]), d["ne"])
        model = math.exp(d["lnGN"]) * d["ne"] * np.concatenate([gp, gpp])
        if fit.glass_amplitude > 0:
            model = model + math.exp(d["lnAg"]) * np.concatenate(cutoff_power_moduli(prob.w, math.exp(d["lntau"]),
                                                                                     -d["ng"]))
        model = model + d["eta"] * np.concatenate([np.zeros_like(prob.w), prob.w])
        return model / data - 1.0

    x0 = np.array([v0[k] for k in names])
    r0 = resid(x0)
    J = np.empty((len(r0), len(names)))
    for j, name in enumerate(names):
        h = 1e-6 * max(1.0, abs(x0[j])) if name != "eta" else 1e-6 * max(fit.eta_s, 1e-300)
        xp = x0.copy()
        xp[j] += h
        J[:, j] = (resid(xp) - r0) / h
    s2 = float(r0 @ r0) / max(len(r0) - len(names), 1)
    try:
        cov = s2 * np.linalg.inv(J.T @ J)
    except np.linalg.LinAlgError:
        return dataclasses.replace(fit, ci_method="none (singular Jacobian)")
    se = np.sqrt(np.clip(np.diag(cov), 0, None))
    z = float(stats.norm.ppf(0.5 + level / 2))
    if not (se[0] > 0 and se[1] > 0):
        return dataclasses.replace(fit, ci_method="none (zero standard error)")
    if z * max(se[0], se[1]) > 700:  # undetermined: no finite interval (an open one, not an overflow)
        return dataclasses.replace(fit, G_N_ci=(0.0, math.inf), tau_max_ci=(0.0, math.inf),
                                   ci_method="jacobian (Wald); undetermined")
    return dataclasses.replace(
        fit,
        G_N_ci=(fit.G_N * math.exp(-z * se[0]), fit.G_N * math.exp(z * se[0])),
        tau_max_ci=(fit.tau_max * math.exp(-z * se[1]), fit.tau_max * math.exp(z * se[1])),
        n_e_ci=(fit.n_e - z * se[2], fit.n_e + z * se[2]),
    )
