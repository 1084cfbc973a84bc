"""Resampled sweeps around a fit (parametric or residual bootstrap) and their inversion."""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np

from ...data.record import check_choice
from ...data.sweep import Sweep
from ...errors import SettingsError, TauspecError, WeakResultWarning
from ...spectrum.invert import invert
from ...spectrum.options import InvertOptions
from ...spectrum.result import Spectrum
from ...spectrum.threads import one_thread
from .noise import MAX_NOISE, Noise, _given_noise, estimate_noise
from .options import METHODS
from .statistics import Statistic, _evaluate

__all__ = ["resample_sweeps", "parametric_sweep", "replicate_options"]




# --------------------------------------------------------------------------- resampling
@dataclasses.dataclass(frozen=True)
class _Design:
    """Everything a worker needs to make and invert resamples (picklable)."""

    spectrum: Spectrum
    method: str
    noise: Noise
    res_storage: np.ndarray  # centred, rescaled relative residuals (residual bootstrap)
    res_loss: np.ndarray
    options: InvertOptions
    stats: Mapping[str, Statistic]


def _residual_pool(fit: np.ndarray, data: np.ndarray, sigma: float) -> np.ndarray:
    """Relative residuals e = G/G_fit − 1, centred and rescaled to rms σ (Davison & Hinkley 1997, §6.2.3)."""
    e = data / fit - 1.0
    e = e - e.mean()
    rms = float(np.sqrt(np.mean(e * e)))
    return e * (sigma / rms) if rms > 0 else e


def parametric_sweep(spectrum: Spectrum, sigma_storage: float, sigma_loss: float,
                     rng: np.random.Generator) -> Sweep:
    """The fitted moduli of ``spectrum`` re-noised: G'_fit (1 + σ' ε), G''_fit (1 + σ'' ε'), ε, ε' standard normal.

    The parametric bootstrap of Efron & Tibshirani (1993), ch. 6, under the multiplicative noise model of the
    module :mod:`~tauspec.analysis.uncertainty.noise`.  The G' draws come first, then the G'' draws (the order
    fixes the stream of a seed).  A factor below 10⁻³ (a draw beyond −5σ at σ = 0.2) is held at 10⁻³ so
    that every modulus stays positive.
    """
    n = len(spectrum.omega)
    fp = np.maximum(1.0 + sigma_storage * rng.standard_normal(n), 1e-3)
    fpp = np.maximum(1.0 + sigma_loss * rng.standard_normal(n), 1e-3)
    return spectrum.as_sweep(spectrum.storage_fit * fp, spectrum.loss_fit * fpp)


def replicate_options(spectrum: Spectrum, *, fixed_strength: bool) -> InvertOptions:
    """The options that reproduce ``spectrum`` on its own grid, λ re-chosen by its rule or fixed at its value."""
    opts = dataclasses.replace(spectrum.options, grid=np.asarray(spectrum.tau))
    if fixed_strength or spectrum.chosen_by == "fixed":
        opts = dataclasses.replace(opts, strength=float(spectrum.strength))
    return opts


def _resampled(design: _Design, rng: np.random.Generator) -> Sweep:
    sp = design.spectrum
    if design.method == "parametric":
        return parametric_sweep(sp, design.noise.storage, design.noise.loss, rng)
    n = len(sp.omega)
    fp = 1.0 + design.res_storage[rng.integers(0, n, n)]
    fpp = 1.0 + design.res_loss[rng.integers(0, n, n)]
    if np.any(fp <= 0) or np.any(fpp <= 0):
        raise SettingsError("a resampled modulus is not positive; the noise is too large for this method")
    return sp.as_sweep(sp.storage_fit * fp, sp.loss_fit * fpp)


def _run_resamples(design: _Design, seeds: Sequence[np.random.SeedSequence],
                   progress: Callable[[int], Any] | None = None) -> list[tuple[Any, ...]]:
    """Make and invert one resample per seed; return (H, statistics, λ, cautioned, failure) for each.

    BLAS is limited to one thread so that the floating-point result of every
    resample does not depend on the process it runs in.  ``progress(1)`` is called after each resample.
    """
    out: list[tuple[Any, ...]] = []
    with one_thread():
        for ss in seeds:
            rng = np.random.default_rng(ss)
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", WeakResultWarning)
                try:
                    sweep = _resampled(design, rng)
                    sp = invert(sweep, design.options)
                    stats = _evaluate(design.stats, sweep, sp)
                except TauspecError as exc:
                    out.append((None, {}, math.nan, False, exc.reason))
                    sp = None
            if sp is not None:
                cautioned = any(issubclass(w.category, WeakResultWarning) for w in caught)
                out.append((sp.H, stats, sp.strength, cautioned, None))
            if progress is not None:
                progress(1)
    return out


def resample_sweeps(spectrum: Spectrum, n: int, *, method: str = "residual", noise: Any = None,
                    seed: int = 0) -> list[Sweep]:
    """Return the ``n`` resampled sweeps :func:`confidence_bands` would invert (for inspection and tests)."""
    check_choice("method", method, METHODS)
    design = _design(spectrum, method, noise, "fixed", {})
    return [_resampled(design, np.random.default_rng(ss)) for ss in np.random.SeedSequence(seed).spawn(n)]


def _design(spectrum: Spectrum, method: str, noise: Any, strength_mode: str,
            stats: Mapping[str, Statistic]) -> _Design:
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
        options=replicate_options(spectrum, fixed_strength=strength_mode == "fixed"),
        stats=stats,
    )
