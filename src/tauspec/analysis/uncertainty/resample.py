"""Resampled sweeps around a fit (parametric or residual bootstrap) and their inversion."""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ...data.sweep import Sweep
from ...errors import SettingsError, TauspecError, WeakResultWarning
from ...spectrum.invert import invert
from ...spectrum.result import Spectrum
from .noise import MAX_NOISE, Noise, _given_noise, estimate_noise, sweep_of
from .statistics import Statistic, _evaluate

__all__ = ["METHODS", "STRENGTH_MODES", "resample_sweeps"]


METHODS = ("residual", "parametric")
STRENGTH_MODES = ("fixed", "rechosen")


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
