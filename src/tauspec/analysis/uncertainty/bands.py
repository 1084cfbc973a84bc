"""Confidence bands on H(τ) and intervals on reported numbers, by resampling the sweep.

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

import math
import warnings
from collections.abc import Callable, Mapping
from typing import Any

import numpy as np

from ...data.record import field, insert_after, record, resolve_options
from ...errors import SettingsError, WeakResultWarning
from ...spectrum.result import Spectrum
from .noise import Noise
from .options import INTERVALS, BandOptions
from .resample import _design, _run_resamples
from .statistics import _evaluate, _resolve_statistics

__all__ = ["Interval", "Bands", "pointwise_interval", "confidence_bands"]




@record
class Interval:
    """A confidence interval of one reported number.

    ``method`` says how it was computed, in words; ``n`` is the number of
    resamples on which the statistic was finite.
    """

    estimate: float
    lo: float
    hi: float
    level: float
    method: str
    n: int
    description: str = ""


@record(schema="tauspec.bands/1")
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
    samples: np.ndarray = field(transient=True, default_factory=lambda: np.zeros((0, 0)))
    statistic_samples: Mapping[str, np.ndarray] = field(transient=True, default_factory=dict)

    def describe(self) -> str:
        """Return how the band was computed, in one line."""
        kind = "residual bootstrap" if self.method == "residual" else "parametric bootstrap"
        lam = "λ re-chosen on each resample" if self.strength_mode == "rechosen" else "λ fixed at the original"
        return f"{kind}, {self.n_resamples - self.n_failed} resamples, {lam}, pointwise {_BAND_WORDS[self.interval]}"

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        return insert_after(d, "strength_mode", "description", self.describe())

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        d.pop("description", None)
        return d

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


def confidence_bands(spectrum: Spectrum, options: BandOptions | None = None, *,
                     progress: Callable[[int], Any] | None = None, **changes: Any) -> Bands:
    """Pointwise confidence band of H(τ) and intervals of η_s, G_e and other statistics.

    Each of ``resamples`` sweeps is made from the fitted moduli of
    ``spectrum`` with relative noise — drawn from N(0, σ²) (``"parametric"``)
    or resampled from the centred, rescaled relative residuals
    (``"residual"``) — and inverted by :func:`tauspec.invert` with
    the original options, λ re-chosen by the same rule (``"rechosen"``) or
    fixed at the original value (``"fixed"``, the default: measured to cover as well as re-choosing it, with a
    narrower band; docs/uncertainty.md).  The band is formed by :func:`pointwise_interval`; ``"widened"`` (the
    default) is the one whose coverage was measured nearest the nominal level (docs/uncertainty.md).

    Parameters
    ----------
    spectrum : Spectrum
        The inversion to put a band on.
    options : BandOptions, optional
        Resamples, method, known noise, strength mode, interval kind, level, seed, jobs and the statistics
        (names from :data:`~tauspec.analysis.uncertainty.statistics.STATISTICS`, or callables
        ``fn(sweep, spectrum) -> float | mapping``); see :class:`~tauspec.analysis.uncertainty.options.BandOptions`.
    progress : callable, optional
        Called with the number of resamples done since the last call (a progress bar's ``update``).
    **changes
        Fields of ``BandOptions`` given directly (``confidence_bands(spectrum, resamples=100)``).

    Returns
    -------
    Bands

    References
    ----------
    Efron & Tibshirani (1993), *An Introduction to the Bootstrap*, ch. 6, 9, 13;
    Davison & Hinkley (1997), *Bootstrap Methods and their Application*, ch. 5–6.
    """
    opts = resolve_options(BandOptions, options, changes, "confidence_bands()")
    resamples, method, interval, level = opts.resamples, opts.method, opts.interval, opts.level
    strength_mode, seed, jobs = opts.strength_mode, opts.seed, opts.jobs
    stats = _resolve_statistics(spectrum, opts.statistics)
    design = _design(spectrum, method, opts.noise, strength_mode, stats)
    seeds = np.random.SeedSequence(int(seed)).spawn(int(resamples))

    if jobs == 1:
        rows = _run_resamples(design, seeds, progress)
    else:
        from joblib import Parallel, delayed

        n_chunks = min(len(seeds), 4 * int(jobs))
        bounds = np.linspace(0, len(seeds), n_chunks + 1).astype(int)
        rows = []
        for part in Parallel(n_jobs=int(jobs), return_as="generator")(
                delayed(_run_resamples)(design, seeds[a:b]) for a, b in zip(bounds[:-1], bounds[1:]) if b > a):
            rows += part
            if progress is not None:
                progress(len(part))

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
        estimates = _evaluate(stats, spectrum.as_sweep(), spectrum, owner)
    how = (f"{_BAND_WORDS[interval].split(' band')[0]} bootstrap interval, {method} resampling, "
           f"λ {'re-chosen' if strength_mode == 'rechosen' else 'fixed'}")
    intervals: dict[str, Interval] = {}
    columns: dict[str, np.ndarray] = {}
    for name, est in estimates.items():
        col = columns[name] = np.array([r[1].get(name, math.nan) for r in ok], dtype=float)
        good = col[np.isfinite(col)]
        st = stats[owner[name]]
        on_log = st.positive and est > 0 and bool(np.all(good > 0))
        if len(good) < 10 or not math.isfinite(est):
            lo = hi = math.nan
        elif on_log:  # a positive number: on its logarithm, transformed back (docs/uncertainty.md)
            lo, hi = (math.exp(float(v)) for v in pointwise_interval(math.log(est), np.log(good), float(level),
                                                                      interval, False))
        else:
            lo, hi = (float(v) for v in pointwise_interval(est, good, float(level), interval, st.nonnegative))
        intervals[name] = Interval(estimate=est, lo=lo, hi=hi, level=float(level),
                                   method=f"{how}{', on ln' if on_log else ''}, {len(good)} of {len(ok)} resamples",
                                   n=len(good), description=st.description)
    strengths = np.array([r[2] for r in ok])
    return Bands(
        tau=spectrum.tau, H=spectrum.H, H_lo=H_lo, H_hi=H_hi, in_window=spectrum.in_window, level=float(level),
        method=method, interval=interval, strength_mode=strength_mode, n_resamples=int(resamples),
        n_failed=n_failed, n_cautioned=sum(bool(r[3]) for r in ok), noise=design.noise, intervals=intervals,
        seed=int(seed), strength_range=(float(np.quantile(strengths, 0.05)), float(np.quantile(strengths, 0.95))),
        samples=Hs, statistic_samples=columns,
    )
