r"""Confidence bands on H(τ) and intervals on reported numbers, by resampling the sweep.

The sweep is resampled around the fitted moduli (a parametric or a residual
bootstrap), every resample is inverted again with the settings of the
original spectrum (λ re-chosen by the same rule, or fixed at the original
choice), and the spread of the resampled spectra gives pointwise bands for
H(τ) and intervals for η_s, G_e and any other *statistic* — a function of a
resampled sweep and its spectrum (see :data:`STATISTICS`).

Noise model (multiplicative, separately for G' and G''):

    G'_i = G'_true(ω_i) (1 + σ' ε_i),   G''_i = G''_true(ω_i) (1 + σ'' ε'_i)

σ', σ'' are estimated from the relative residuals r = G_fit/G − 1 of the
fit, corrected for the fitted degrees of freedom with the influence matrix
H_λ of the regularized fit on its free set (R = I − H_λ, r ≈ −R ε):

    E‖r_B‖² = Σ_{i∈B} Σ_j R_ij² σ_j²,   B ∈ {G', G''}

a 2 × 2 linear system in σ'², σ''² (Wahba 1983; Hastie & Tibshirani 1990,
*Generalized Additive Models*, §3.4 — the residual variance of a linear
smoother).

Bands are computed from the B resampled spectra H*_b(τ) with the quantiles
q_lo(τ), q_hi(τ) at α/2 and 1 − α/2 (:func:`pointwise_interval`):

* ``"percentile"``:  [q_lo, q_hi]
* ``"basic"`` (bias-corrected):  [2Ĥ − q_hi, 2Ĥ − q_lo] (Davison & Hinkley
  1997, eq. 5.6)
* ``"widened"`` (default):  [min(q_lo, 2Ĥ − q_hi), max(q_hi, 2Ĥ − q_lo)]

all clipped at 0.  The percentile band of a regularized (smoothed, hence
biased) estimator is centred near the twice-smoothed spectrum, displaced by
about twice the regularization bias; the basic band shifts it back by the
bootstrap estimate of the bias, which for a linear filter with factor s on a
component is (s − 1)s h instead of the true (s − 1)h — half of it where
s ≈ ½.  The widened band spends the bias estimate as an allowance in both
directions, which covers the remaining bias (1 − s)²h wherever s ≥ ½.
docs/uncertainty.md has the measured coverage that chose the defaults.

References
----------
Efron, B. & Tibshirani, R. J. (1993). *An Introduction to the Bootstrap*.
Chapman & Hall, ch. 6 (parametric bootstrap), ch. 9 (regression: bootstrapping
residuals), ch. 13 (percentile intervals).
Davison, A. C. & Hinkley, D. V. (1997). *Bootstrap Methods and their
Application*. Cambridge University Press, §5.2–5.3 (basic and percentile
intervals), §6.2–6.3 (residual resampling, modified residuals).
Wahba, G. (1983). Bayesian "confidence intervals" for the cross-validated
smoothing spline. J. R. Stat. Soc. B 45:133–150.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Callable, Iterable, Mapping, Sequence
from typing import Any

import numpy as np

from ...data.sweep import Sweep
from ...errors import SettingsError, TauspecError, WeakResultWarning
from ...spectrum.invert import Spectrum, build_problem, invert

__all__ = [
    "Noise",
    "Interval",
    "Bands",
    "Statistic",
    "STATISTICS",
    "register_statistic",
    "estimate_noise",
    "sweep_of",
    "resample_sweeps",
    "confidence_bands",
    "pointwise_interval",
    "SCHEMA",
]

#: Version of the JSON form of a Bands result.
SCHEMA = "tauspec.bands/1"

METHODS = ("residual", "parametric")
INTERVALS = ("widened", "basic", "percentile")
STRENGTH_MODES = ("fixed", "rechosen")

#: Largest relative noise the resampling accepts: beyond it 1 + σε can turn negative.
MAX_NOISE = 0.2


# --------------------------------------------------------------------------- results
@dataclasses.dataclass(frozen=True, kw_only=True)
class Noise:
    """The relative noise of G' and G'' used for resampling.

    Attributes
    ----------
    storage, loss : float
        Relative standard deviations σ', σ'' of G' and G''.
    given : bool
        True when the user gave them, False when estimated from the residuals.
    dof : float
        Effective number of fitted parameters (trace of the influence matrix);
        NaN when the noise was given.
    how : str
        How the numbers were obtained, in words.
    """

    storage: float
    loss: float
    given: bool
    dof: float
    how: str

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form."""
        return {"storage": self.storage, "loss": self.loss, "given": self.given, "dof": self.dof, "how": self.how}


@dataclasses.dataclass(frozen=True, kw_only=True)
class Interval:
    """A confidence interval of one reported number.

    ``method`` says how it was computed, in words; ``n`` is the number of
    resamples on which the statistic was finite.
    """

    name: str
    estimate: float
    lo: float
    hi: float
    level: float
    method: str
    n: int
    description: str = ""

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form."""
        return {"estimate": self.estimate, "lo": self.lo, "hi": self.hi, "level": self.level,
                "method": self.method, "n": self.n, "description": self.description}


@dataclasses.dataclass(frozen=True, kw_only=True)
class Bands:
    """Pointwise confidence band of H(τ) and intervals of reported numbers.

    Attributes
    ----------
    tau, H : ndarray
        The grid (s) and the original estimate (Pa).
    H_lo, H_hi : ndarray
        The band (Pa) at every grid point; it means something only inside the
        supported window (``in_window``).
    in_window : ndarray of bool
    level : float
        Nominal coverage, e.g. 0.95.
    method : {"residual", "parametric"}
        How the sweeps were resampled.
    interval : {"widened", "basic", "percentile"}
        How the band was formed from the resampled spectra (:func:`pointwise_interval`).
    strength_mode : {"rechosen", "fixed"}
        Whether λ was re-chosen on every resample or fixed at the original.
    n_resamples, n_failed, n_cautioned : int
        Resamples asked for; those whose inversion failed (excluded); those
        whose inversion gave a caution (kept).
    noise : Noise
    intervals : mapping of str to Interval
    seed : int
    strength_range : tuple of float
        The 5 % and 95 % quantiles of the resamples' λ.
    samples : ndarray, shape (B, n)
        The resampled spectra H*_b(τ) that did not fail (not in the JSON form).
    statistic_samples : mapping of str to ndarray
        Every statistic on those resamples (NaN where it failed; not in the JSON form).
    """

    tau: np.ndarray
    H: np.ndarray
    H_lo: np.ndarray
    H_hi: np.ndarray
    in_window: np.ndarray
    level: float
    method: str
    interval: str
    strength_mode: str
    n_resamples: int
    n_failed: int
    n_cautioned: int
    noise: Noise
    intervals: Mapping[str, Interval]
    seed: int
    strength_range: tuple[float, float]
    samples: np.ndarray = dataclasses.field(default_factory=lambda: np.zeros((0, 0)), repr=False, compare=False)
    statistic_samples: Mapping[str, np.ndarray] = dataclasses.field(default_factory=dict, repr=False, compare=False)

    def describe(self) -> str:
        """Return how the band was computed, in one line."""
        kind = "residual bootstrap" if self.method == "residual" else "parametric bootstrap"
        lam = "λ re-chosen on each resample" if self.strength_mode == "rechosen" else "λ fixed at the original"
        return f"{kind}, {self.n_resamples - self.n_failed} resamples, {lam}, pointwise {_BAND_WORDS[self.interval]}"

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form (keys are a public contract: add, never rename)."""
        return {
            "schema": SCHEMA,
            "tau": self.tau.tolist(),
            "H": self.H.tolist(),
            "H_lo": self.H_lo.tolist(),
            "H_hi": self.H_hi.tolist(),
            "in_window": self.in_window.tolist(),
            "level": self.level,
            "method": self.method,
            "interval": self.interval,
            "strength_mode": self.strength_mode,
            "description": self.describe(),
            "n_resamples": self.n_resamples,
            "n_failed": self.n_failed,
            "n_cautioned": self.n_cautioned,
            "noise": self.noise.to_dict(),
            "intervals": {k: v.to_dict() for k, v in self.intervals.items()},
            "seed": self.seed,
            "strength_range": list(self.strength_range),
        }

    def report(self) -> str:
        """Return a short text summary."""
        n = self.noise
        lines = [
            f"  {self.level:.0%} band: {self.describe()}",
            f"  noise: G' {n.storage:.3%}, G'' {n.loss:.3%} ({n.how})",
        ]
        for name, iv in self.intervals.items():
            lines.append(f"  {name} = {iv.estimate:.4g}, {iv.level:.0%} interval [{iv.lo:.4g}, {iv.hi:.4g}]")
        if self.n_failed:
            lines.append(f"  caution: {self.n_failed} of {self.n_resamples} resamples failed and were left out")
        return "\n".join(lines)


# --------------------------------------------------------------------------- statistics
@dataclasses.dataclass(frozen=True)
class Statistic:
    """A number (or several) computed from a resampled sweep and its spectrum.

    ``fn(sweep, spectrum)`` returns a float or a mapping of names to floats
    (NaN when it cannot be computed on that resample).  ``nonnegative``
    clips the basic interval at 0.  ``applies(spectrum)`` says whether the
    statistic is meaningful for a spectrum (e.g. G_e only with a plateau);
    ``default=False`` statistics are computed only when asked for by name
    (they are costly, or meaningful only for some samples).
    """

    fn: Callable[[Sweep, Spectrum], float | Mapping[str, float]]
    description: str
    nonnegative: bool = False
    applies: Callable[[Spectrum], bool] | None = None
    default: bool = True


def _eta_s(sweep: Sweep, spectrum: Spectrum) -> float:
    return spectrum.eta_s


def _G_e(sweep: Sweep, spectrum: Spectrum) -> float:
    return spectrum.G_e


def _fits_eta_s(spectrum: Spectrum) -> bool:
    s = spectrum.settings
    return bool(s.get("solvent", True)) and s.get("eta_s_known") is None


def _fits_G_e(spectrum: Spectrum) -> bool:
    return bool(spectrum.settings.get("plateau", False))


_DERIVED = ("eta0", "Je0", "tau_n", "tau_w", "tau_longest")


def _derived(sweep: Sweep, spectrum: Spectrum) -> dict[str, float]:
    from ...modes.derived import derive

    d = derive(spectrum)
    return {k: getattr(d, k) for k in _DERIVED}


def _modes(sweep: Sweep, spectrum: Spectrum) -> dict[str, float]:
    from ...modes.derived import derive
    from ...modes.fit import fit_modes

    s = spectrum.settings
    modes = fit_modes(sweep, spectrum, solvent=bool(s.get("solvent", True)), plateau=bool(s.get("plateau", False)),
                      eta_s=s.get("eta_s_known"))
    d = derive(modes)
    return {"n_modes": float(modes.n_modes), **{f"modes_{k}": getattr(d, k) for k in _DERIVED}}


def _rouse(sweep: Sweep, spectrum: Spectrum) -> dict[str, float]:
    from ...models.beadspring import fit_chain

    fit = fit_chain(sweep.omega, sweep.storage, sweep.loss, "rouse", solvent=_fits_eta_s(spectrum))
    return {"tau_R": fit.tau1, "G0": fit.G0}


def _bead_spring(sweep: Sweep, spectrum: Spectrum) -> dict[str, float]:
    from ..diagnosis.diagnose import diagnose

    d = diagnose(sweep, spectrum=spectrum, solvent=_fits_eta_s(spectrum), intervals=False)
    return {"tau_R": d.tau_R, "G0": d.G0, "a": d.alpha}


#: The registry of statistics (name → Statistic); those with ``default=True`` are computed on every band.
STATISTICS: dict[str, Statistic] = {
    "eta_s": Statistic(_eta_s, "solvent viscosity η_s (Pa·s) of the inversion", True, _fits_eta_s),
    "G_e": Statistic(_G_e, "equilibrium modulus G_e (Pa) of the inversion", True, _fits_G_e),
    "derived": Statistic(_derived, "η0, J_e⁰, τ_n, τ_w and the longest time of the spectrum (tauspec.derived.derive)",
                         True),
    "modes": Statistic(_modes, "number of Maxwell modes and the derived numbers from them (tauspec.modes.fit_modes, "
                       "then tauspec.derived.derive); single modes are not compared across resamples, whose "
                       "count may differ", True, None, False),
    "rouse": Statistic(_rouse, "τ_R = τ_1 (s) and G0 (Pa) of the finite-N Rouse fit (tauspec.beadspring.fit_chain)",
                       True, None, False),
    "bead_spring": Statistic(_bead_spring, "τ_R (s), G0 (Pa) of the reported model and the mode exponent a of the "
                             "bead-spring diagnosis (tauspec.diagnosis.diagnose, without its own intervals)",
                             True, None, False),
}


def register_statistic(name: str, statistic: Statistic) -> None:
    """Add a statistic to :data:`STATISTICS` so that every band computes its interval by default."""
    if not name or not isinstance(statistic, Statistic):
        raise SettingsError(f"a statistic needs a name and a Statistic, not {name!r}: {statistic!r}")
    STATISTICS[name] = statistic


def _resolve_statistics(spectrum: Spectrum, statistics: Any) -> dict[str, Statistic]:
    if statistics is None:
        return {k: v for k, v in STATISTICS.items() if v.default and (v.applies is None or v.applies(spectrum))}
    out: dict[str, Statistic] = {}
    items: Iterable[tuple[str, Any]]
    if isinstance(statistics, Mapping):
        items = statistics.items()
    else:
        items = ((name, None) for name in statistics)
    for name, value in items:
        if value is None:
            if name not in STATISTICS:
                raise SettingsError(f"unknown statistic {name!r}; known: {sorted(STATISTICS)}")
            value = STATISTICS[name]
        elif callable(value) and not isinstance(value, Statistic):
            value = Statistic(value, f"user statistic {name}")
        if not isinstance(value, Statistic):
            raise SettingsError(f"statistic {name!r} must be a callable or a Statistic")
        out[str(name)] = value
    return out


def _evaluate(stats: Mapping[str, Statistic], sweep: Sweep, spectrum: Spectrum,
              owners: dict[str, str] | None = None) -> dict[str, float]:
    """Evaluate every statistic; a mapping-valued one reports each of its keys (``owners`` records whose)."""
    values: dict[str, float] = {}
    for name, st in stats.items():
        try:
            v = st.fn(sweep, spectrum)
        except (TauspecError, ValueError, ArithmeticError, np.linalg.LinAlgError):
            v = math.nan  # not computable on this resample
        if isinstance(v, Mapping):
            for key, x in v.items():
                values[str(key)] = _as_float(x)
                if owners is not None:
                    owners[str(key)] = name
        else:
            values[name] = _as_float(v)
            if owners is not None:
                owners[name] = name
    return values


def _as_float(x: Any) -> float:
    try:
        return float(x)
    except (TypeError, ValueError):
        return math.nan


# --------------------------------------------------------------------------- noise
def sweep_of(spectrum: Spectrum, storage: np.ndarray | None = None, loss: np.ndarray | None = None) -> Sweep:
    """Return the sweep a spectrum was computed from (or with other moduli on the same frequencies)."""
    return Sweep(omega=spectrum.omega, storage=spectrum.storage if storage is None else storage,
                 loss=spectrum.loss if loss is None else loss, name=spectrum.sample, meta=spectrum.meta,
                 source=spectrum.source)


def _influence(spectrum: Spectrum) -> np.ndarray:
    """Influence matrix H_λ = A_F (A_FᵀA_F + λ² L_FᵀL_F)⁻¹ A_Fᵀ of the fit, on its free set F."""
    s = spectrum.settings
    eta_known = s.get("eta_s_known")
    solvent = bool(s.get("solvent", True))
    plateau = bool(s.get("plateau", False))
    prob = build_problem(sweep_of(spectrum), spectrum.tau, solvent=solvent, plateau=plateau, eta_s=eta_known)
    values = [spectrum.H]
    if prob.solvent:
        values.append([spectrum.eta_s])
    if prob.plateau:
        values.append([spectrum.G_e])
    x = np.concatenate(values) / prob.scale
    F = x > 1e-10 * max(float(np.max(x)), 1e-300)
    A, L = prob.A[:, F], prob.L[:, F]
    M = A.T @ A + spectrum.strength**2 * (L.T @ L)
    try:
        Z = np.linalg.solve(M, A.T)
    except np.linalg.LinAlgError:
        Z = np.linalg.lstsq(M, A.T, rcond=None)[0]
    return A @ Z


def estimate_noise(spectrum: Spectrum) -> Noise:
    """Estimate the relative noise σ', σ'' of G' and G'' from the fit residuals.

    With relative residuals r = G_fit/G − 1 ≈ −R ε, R = I − H_λ (H_λ the
    influence matrix of the regularized fit on its free set), the expected
    squared residuals of the G' rows and of the G'' rows are

        E‖r'‖²  = σ'² Σ_{i∈',j∈'} R_ij² + σ''² Σ_{i∈',j∈''} R_ij²
        E‖r''‖² = σ'² Σ_{i∈'',j∈'} R_ij² + σ''² Σ_{i∈'',j∈''} R_ij²

    solved for σ'², σ''².  When the solution is not positive (the cross
    terms are large), each block is corrected by its own share of the
    trace instead: σ_B² = ‖r_B‖² / (m_B − tr_B H_λ).

    References
    ----------
    Hastie, T. & Tibshirani, R. (1990). *Generalized Additive Models*, §3.4
    (residual variance of a linear smoother); Wahba (1983), J. R. Stat. Soc.
    B 45:133.
    """
    n = len(spectrum.omega)
    Hm = _influence(spectrum)
    R = np.eye(2 * n) - Hm
    W = R * R
    C = np.array([[W[:n, :n].sum(), W[:n, n:].sum()], [W[n:, :n].sum(), W[n:, n:].sum()]])
    rp = spectrum.storage_fit / spectrum.storage - 1.0
    rpp = spectrum.loss_fit / spectrum.loss - 1.0
    ss = np.array([rp @ rp, rpp @ rpp])
    dof = float(np.trace(Hm))
    try:
        s2 = np.linalg.solve(C, ss)
    except np.linalg.LinAlgError:
        s2 = np.array([-1.0, -1.0])
    how = "estimated from the relative residuals, corrected by the influence matrix of the fit"
    if not np.all(s2 > 0):
        d = np.diag(Hm)
        free = np.array([n - d[:n].sum(), n - d[n:].sum()])
        if np.any(free <= 0.5):
            raise SettingsError("too few frequencies to estimate the noise from the residuals; give the noise",
                                spectrum.source or spectrum.sample)
        s2 = ss / free
        how = "estimated from the relative residuals, each modulus corrected by its share of the fitted parameters"
    return Noise(storage=float(np.sqrt(s2[0])), loss=float(np.sqrt(s2[1])), given=False, dof=dof,
                 how=f"{how} ({dof:.1f} effective parameters, {2 * n} data)")


def _given_noise(noise: float | Sequence[float]) -> Noise:
    vals = np.atleast_1d(np.asarray(noise, dtype=float)).ravel()
    if vals.size == 1:
        vals = np.repeat(vals, 2)
    if vals.size != 2 or not np.all(np.isfinite(vals)) or np.any(vals <= 0):
        raise SettingsError(f"noise must be a positive relative size (or one for G' and one for G''), not {noise!r}")
    return Noise(storage=float(vals[0]), loss=float(vals[1]), given=True, dof=math.nan, how="given")


# --------------------------------------------------------------------------- resampling
@dataclasses.dataclass(frozen=True)
class _Design:
    """Everything a worker needs to make and invert resamples (picklable)."""

    spectrum: Spectrum
    method: str
    noise: Noise
    res_storage: np.ndarray  # centred, rescaled relative residuals (residual bootstrap)
    res_loss: np.ndarray
    invert_kwargs: Mapping[str, Any]
    stats: Mapping[str, Statistic]


def _residual_pool(fit: np.ndarray, data: np.ndarray, sigma: float) -> np.ndarray:
    """Relative residuals e = G/G_fit − 1, centred and rescaled to rms σ (Davison & Hinkley 1997, §6.2.3)."""
    e = data / fit - 1.0
    e = e - e.mean()
    rms = float(np.sqrt(np.mean(e * e)))
    return e * (sigma / rms) if rms > 0 else e


def _resampled(design: _Design, rng: np.random.Generator) -> Sweep:
    sp = design.spectrum
    n = len(sp.omega)
    if design.method == "parametric":
        ep = design.noise.storage * rng.standard_normal(n)
        epp = design.noise.loss * rng.standard_normal(n)
    else:
        ep = design.res_storage[rng.integers(0, n, n)]
        epp = design.res_loss[rng.integers(0, n, n)]
    fp, fpp = 1.0 + ep, 1.0 + epp
    if np.any(fp <= 0) or np.any(fpp <= 0):
        raise SettingsError("a resampled modulus is not positive; the noise is too large for this method")
    return sweep_of(sp, sp.storage_fit * fp, sp.loss_fit * fpp)


def _invert_kwargs(spectrum: Spectrum, strength_mode: str) -> dict[str, Any]:
    """The settings of the original inversion, for :func:`tauspec.spectrum.invert`."""
    s = spectrum.settings
    kw: dict[str, Any] = {
        "grid": spectrum.tau,
        "select": s.get("select", "lcurve"),
        "solvent": bool(s.get("solvent", True)),
        "plateau": bool(s.get("plateau", False)),
        "eta_s": s.get("eta_s_known"),
        "bounds": {k: tuple(v) for k, v in dict(s.get("bounds") or {}).items()},
        "solver": s.get("solver", "auto"),
        "n_strengths": int(s.get("n_strengths", 50)),
    }
    if strength_mode == "fixed" or spectrum.select == "fixed":
        kw["strength"] = float(spectrum.strength)
    return kw


def _run_resamples(design: _Design, seeds: Sequence[np.random.SeedSequence]) -> list[tuple[Any, ...]]:
    """Make and invert one resample per seed; return (H, statistics, λ, cautioned, failure) for each.

    BLAS is limited to one thread so that the floating-point result of every
    resample does not depend on the process it runs in.
    """
    from threadpoolctl import threadpool_limits

    out: list[tuple[Any, ...]] = []
    with threadpool_limits(limits=1):
        for ss in seeds:
            rng = np.random.default_rng(ss)
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", WeakResultWarning)
                try:
                    sweep = _resampled(design, rng)
                    sp = invert(sweep, **design.invert_kwargs)
                    stats = _evaluate(design.stats, sweep, sp)
                except TauspecError as exc:
                    out.append((None, {}, math.nan, False, exc.reason))
                    continue
            cautioned = any(issubclass(w.category, WeakResultWarning) for w in caught)
            out.append((sp.H, stats, sp.strength, cautioned, None))
    return out


def resample_sweeps(spectrum: Spectrum, n: int, *, method: str = "residual", noise: Any = None,
                    seed: int = 0) -> list[Sweep]:
    """Return the ``n`` resampled sweeps :func:`confidence_bands` would invert (for inspection and tests)."""
    design = _design(spectrum, method, noise, "fixed", {})
    return [_resampled(design, np.random.default_rng(ss)) for ss in np.random.SeedSequence(seed).spawn(n)]


def _design(spectrum: Spectrum, method: str, noise: Any, strength_mode: str,
            stats: Mapping[str, Statistic]) -> _Design:
    if method not in METHODS:
        raise SettingsError(f"method must be one of {list(METHODS)}, not {method!r}")
    if strength_mode not in STRENGTH_MODES:
        raise SettingsError(f"strength_mode must be one of {list(STRENGTH_MODES)}, not {strength_mode!r}")
    if not (np.all(spectrum.storage_fit > 0) and np.all(spectrum.loss_fit > 0)):
        raise SettingsError("the fitted moduli are not all positive; they cannot be resampled",
                            spectrum.source or spectrum.sample)
    nz = estimate_noise(spectrum) if noise is None else _given_noise(noise)
    if max(nz.storage, nz.loss) > MAX_NOISE:
        raise SettingsError(f"the relative noise ({max(nz.storage, nz.loss):.0%}) is above {MAX_NOISE:.0%}: the fit "
                            "is too poor to resample around", spectrum.source or spectrum.sample)
    return _Design(
        spectrum=spectrum,
        method=method,
        noise=nz,
        res_storage=_residual_pool(spectrum.storage_fit, spectrum.storage, nz.storage),
        res_loss=_residual_pool(spectrum.loss_fit, spectrum.loss, nz.loss),
        invert_kwargs=_invert_kwargs(spectrum, strength_mode),
        stats=stats,
    )


def pointwise_interval(estimate: np.ndarray | float, samples: np.ndarray, level: float, kind: str,
                       nonnegative: bool) -> tuple[np.ndarray, np.ndarray]:
    """Return the ``level`` interval of ``estimate`` from bootstrap ``samples`` (axis 0), pointwise.

    With q_lo, q_hi the α/2 and 1 − α/2 quantiles of the samples (order
    statistics at positions p(B + 1), so that B = 39 gives the extremes at 95 %;
    Davison & Hinkley 1997, §5.2.1):

    * ``"percentile"``: [q_lo, q_hi];
    * ``"basic"``: [2θ̂ − q_hi, 2θ̂ − q_lo], centred at θ̂ − b with the bootstrap
      bias b = (centre of the samples) − θ̂ (Davison & Hinkley 1997, eq. 5.6);
    * ``"widened"``: the union of the two, [min(q_lo, 2θ̂ − q_hi), max(q_hi, 2θ̂ − q_lo)],
      about θ̂ ± (half-width + |b|): the bias correction is applied as an
      allowance in both directions rather than as a shift (see docs/uncertainty.md).

    ``nonnegative`` clips both ends at 0.
    """
    alpha = 1.0 - level
    q_lo, q_hi = np.quantile(samples, [alpha / 2, 1 - alpha / 2], axis=0, method="weibull")
    est = np.asarray(estimate, dtype=float)
    if kind == "percentile":
        lo, hi = q_lo, q_hi
    elif kind == "basic":
        lo, hi = 2 * est - q_hi, 2 * est - q_lo
    elif kind == "widened":
        lo, hi = np.minimum(q_lo, 2 * est - q_hi), np.maximum(q_hi, 2 * est - q_lo)
    else:
        raise SettingsError(f"interval must be one of {list(INTERVALS)}, not {kind!r}")
    if nonnegative:
        lo, hi = np.maximum(lo, 0.0), np.maximum(hi, 0.0)
    return lo, hi


_BAND_WORDS = {
    "widened": "bias-widened bootstrap band [min(q_lo, 2Ĥ − q_hi), max(q_hi, 2Ĥ − q_lo)]",
    "basic": "basic (bias-corrected) bootstrap band [2Ĥ − q_hi, 2Ĥ − q_lo]",
    "percentile": "percentile band [q_lo, q_hi]",
}


def confidence_bands(
    spectrum: Spectrum,
    *,
    resamples: int = 200,
    method: str = "residual",
    noise: float | Sequence[float] | None = None,
    strength_mode: str = "fixed",
    interval: str = "widened",
    level: float = 0.95,
    seed: int = 0,
    jobs: int = 1,
    statistics: Mapping[str, Any] | Sequence[str] | None = None,
) -> Bands:
    """Pointwise confidence band of H(τ) and intervals of η_s, G_e and other statistics.

    Each of ``resamples`` sweeps is made from the fitted moduli of
    ``spectrum`` with relative noise — drawn from N(0, σ²) (``"parametric"``)
    or resampled from the centred, rescaled relative residuals
    (``"residual"``) — and inverted by :func:`tauspec.spectrum.invert` with
    the original settings, λ re-chosen by the same rule (``"rechosen"``) or
    fixed at the original value (``"fixed"``).

    Parameters
    ----------
    spectrum : Spectrum
        The inversion to put a band on.
    resamples : int
        Number of resampled sweeps B (at least 10).
    method : {"residual", "parametric"}
    noise : float or (float, float), optional
        Known relative noise of G' and G'' (e.g. 0.02); estimated from the
        residuals when omitted (:func:`estimate_noise`).
    strength_mode : {"fixed", "rechosen"}
        λ fixed at the original choice (default: measured to cover as well as
        re-choosing it, with a narrower band; docs/uncertainty.md) or re-chosen
        by the original rule on every resample.
    interval : {"widened", "basic", "percentile"}
        How the band is formed from the resampled spectra (see
        :func:`pointwise_interval`); ``"widened"`` (the default) is the one whose
        coverage was measured nearest the nominal level (docs/uncertainty.md).
    level : float
        Nominal coverage, 0 < level < 1.
    seed : int
        Resample b uses ``numpy.random.default_rng(SeedSequence(seed).spawn(B)[b])``,
        so the result does not depend on ``jobs`` or scheduling.
    jobs : int
        Worker processes (joblib); 1 runs in this process.
    statistics : sequence of names or mapping of name to callable/Statistic, optional
        Statistics to compute intervals for: names from :data:`STATISTICS`, or
        callables ``fn(sweep, spectrum) -> float | mapping``.  Default: every
        registered statistic that applies to the spectrum.

    Returns
    -------
    Bands

    References
    ----------
    Efron & Tibshirani (1993), *An Introduction to the Bootstrap*, ch. 6, 9, 13;
    Davison & Hinkley (1997), *Bootstrap Methods and their Application*, ch. 5–6.
    """
    if not isinstance(resamples, int | np.integer) or resamples < 10:
        raise SettingsError(f"resamples must be an integer of at least 10, not {resamples!r}")
    if interval not in INTERVALS:
        raise SettingsError(f"interval must be one of {list(INTERVALS)}, not {interval!r}")
    if not (isinstance(level, float | int) and 0.5 <= float(level) < 1):
        raise SettingsError(f"level must lie in [0.5, 1), not {level!r}")
    if not isinstance(jobs, int | np.integer) or jobs < 1:
        raise SettingsError(f"jobs must be a positive integer, not {jobs!r}")
    if not isinstance(seed, int | np.integer) or seed < 0:
        raise SettingsError(f"seed must be a nonnegative integer, not {seed!r}")
    stats = _resolve_statistics(spectrum, statistics)
    design = _design(spectrum, method, noise, strength_mode, stats)
    seeds = np.random.SeedSequence(int(seed)).spawn(int(resamples))

    if jobs == 1:
        rows = _run_resamples(design, seeds)
    else:
        from joblib import Parallel, delayed

        n_chunks = min(len(seeds), 4 * int(jobs))
        bounds = np.linspace(0, len(seeds), n_chunks + 1).astype(int)
        parts = Parallel(n_jobs=int(jobs))(
            delayed(_run_resamples)(design, seeds[a:b]) for a, b in zip(bounds[:-1], bounds[1:]) if b > a)
        rows = [r for part in parts for r in part]

    ok = [r for r in rows if r[4] is None]
    n_failed = len(rows) - len(ok)
    if len(ok) < max(10, resamples // 2):
        first = next((r[4] for r in rows if r[4] is not None), "")
        raise SettingsError(f"{n_failed} of {resamples} resampled inversions failed ({first})",
                            spectrum.source or spectrum.sample)
    Hs = np.vstack([r[0] for r in ok])
    H_lo, H_hi = pointwise_interval(spectrum.H, Hs, float(level), interval, True)

    owner: dict[str, str] = {}
    with warnings.catch_warnings():  # the cautions of the original inversion were given already
        warnings.simplefilter("ignore", WeakResultWarning)
        estimates = _evaluate(stats, sweep_of(spectrum), spectrum, owner)
    how = (f"{_BAND_WORDS[interval].split(' band')[0]} bootstrap interval, {method} resampling, "
           f"λ {'re-chosen' if strength_mode == 'rechosen' else 'fixed'}")
    intervals: dict[str, Interval] = {}
    columns: dict[str, np.ndarray] = {}
    for name, est in estimates.items():
        col = columns[name] = np.array([r[1].get(name, math.nan) for r in ok], dtype=float)
        good = col[np.isfinite(col)]
        st = stats[owner[name]]
        if len(good) < 10 or not math.isfinite(est):
            lo = hi = math.nan
        else:
            lo, hi = (float(v) for v in pointwise_interval(est, good, float(level), interval, st.nonnegative))
        intervals[name] = Interval(name=name, estimate=est, lo=lo, hi=hi, level=float(level),
                                   method=f"{how}, {len(good)} of {len(ok)} resamples", n=len(good),
                                   description=st.description)
    lams = np.array([r[2] for r in ok])
    return Bands(
        tau=spectrum.tau, H=spectrum.H, H_lo=H_lo, H_hi=H_hi, in_window=spectrum.in_window, level=float(level),
        method=method, interval=interval, strength_mode=strength_mode, n_resamples=int(resamples),
        n_failed=n_failed, n_cautioned=sum(bool(r[3]) for r in ok), noise=design.noise, intervals=intervals,
        seed=int(seed), strength_range=(float(np.quantile(lams, 0.05)), float(np.quantile(lams, 0.95))),
        samples=Hs, statistic_samples=columns,
    )
