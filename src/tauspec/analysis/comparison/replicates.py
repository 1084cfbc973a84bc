"""Replicate spectra of one sample by parametric resampling, and the uncertainty of ln H they give."""

from __future__ import annotations

import dataclasses
import math
import warnings
import zlib

import numpy as np
from scipy import stats

from ...data.sweep import Sweep
from ...errors import SettingsError, TauspecError, WeakResultWarning
from ...spectrum.invert import invert
from ...spectrum.options import InvertOptions
from ...spectrum.problem import build_problem
from ...spectrum.regularize import TikhonovPath
from ...spectrum.result import Spectrum
from ..uncertainty.noise import pooled_noise
from ..uncertainty.resample import parametric_sweep, replicate_options

__all__ = [
    "N_REPLICATES", "LOG_FLOOR", "SMOOTH", "STRENGTH_DECADES", "SampleUncertainty",
    "sample_uncertainty"
]


#: Replicate spectra per sample for the null distribution and the intervals.
N_REPLICATES = 12

#: ε in ℓ = ln(H + ε) as a fraction of the largest H in the window (our choice; see docs/compare.md).
LOG_FLOOR = 1e-2

#: Width (standard deviation in ln τ) of the Gaussian that smooths every spectrum before comparison.
SMOOTH = 0.3

#: Replicates whose strength lies more than this many decades from the replicates' median are dropped.
STRENGTH_DECADES = 1.0


# ----------------------------------------------------------------------------------------- log spectra
def _smooth(tau: np.ndarray, H: np.ndarray, width: float | None = None) -> np.ndarray:
    """H convolved with a normalized Gaussian of standard deviation ``width`` in ln τ (renormalized at the ends)."""
    width = SMOOTH if width is None else width
    if not width > 0 or len(tau) < 3:
        return H
    du = float(np.log(tau[1] / tau[0]))
    half = int(math.ceil(4 * width / du))
    k = np.exp(-0.5 * (np.arange(-half, half + 1) * du / width) ** 2)
    num = np.convolve(H, k, mode="same")
    den = np.convolve(np.ones_like(H), k, mode="same")
    return num / den


def _log_spectrum(spectrum: Spectrum, floor: float | None = None) -> tuple[np.ndarray, np.ndarray, float]:
    """Return (u, ℓ, ε): u = ln τ and ℓ = ln(H + ε) on the grid points inside the window."""
    m = spectrum.in_window
    if spectrum.window_empty or int(m.sum()) < 3:
        raise TauspecError("the supported window is empty or has fewer than 3 grid points; nothing to compare",
                           spectrum.source or spectrum.sample)
    H = _smooth(np.asarray(spectrum.tau), np.asarray(spectrum.H))[m]
    if floor is None:
        top = float(np.max(H))
        if not top > 0:
            raise TauspecError("the spectrum is zero throughout its window; nothing to compare",
                               spectrum.source or spectrum.sample)
        floor = LOG_FLOOR * top
    return np.log(np.asarray(spectrum.tau)[m]), np.log(H + floor), floor


# ----------------------------------------------------------------------------------------- replicates
@dataclasses.dataclass(frozen=True, kw_only=True)
class SampleUncertainty:
    """Replicate spectra of one sample and the pointwise uncertainty of ℓ = ln(H + ε) in its window.

    ``replicates`` has shape (R, n_window); ``sigma`` is the standard deviation of ℓ (replicate spread
    smoothed over three neighbours, plus the data noise level as a floor in quadrature).  ``noise`` is the
    relative noise level used to re-noise the fitted moduli.  ``source`` says where σ came from.
    """

    u: np.ndarray
    ell: np.ndarray
    floor: float
    sigma: np.ndarray
    replicates: np.ndarray
    noise: float
    source: str
    dropped: int = 0

    @property
    def floor_level(self) -> float:
        """ℓ = ln 2ε: below it H is under ε."""
        return math.log(2 * self.floor)


def _replicate_H(sweep: Sweep, options: InvertOptions) -> tuple[np.ndarray, float]:
    """Return H of one replicate and its strength.

    At a fixed strength without bounds: one solve on the fast exact path of the problem
    :func:`~tauspec.spectrum.invert.invert` forms; otherwise ``invert`` itself.
    """
    if options.strength != "auto" and not options.uses_cvxpy:
        pb = build_problem(sweep, np.asarray(options.grid), options)
        x = TikhonovPath(pb.A, pb.b, pb.L).solve(float(options.strength))[0]
        return (x * pb.scale)[: pb.n_grid], float(options.strength)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", WeakResultWarning)
        rep = invert(sweep, options)
    return np.asarray(rep.H), float(rep.strength)


def _data_seed(spectrum: Spectrum, seed: int) -> np.random.Generator:
    """A generator seeded by ``seed`` and the data themselves, so results do not depend on the order of samples."""
    key = zlib.crc32(np.ascontiguousarray(np.concatenate([spectrum.omega, spectrum.storage, spectrum.loss])).data)
    return np.random.default_rng([int(seed), key])


def _spread(reps: np.ndarray) -> np.ndarray:
    """Variance of ℓ across replicates at each grid point, smoothed by a three-point mean."""
    var = np.var(reps, axis=0, ddof=1)
    return np.convolve(np.pad(var, 1, mode="edge"), np.ones(3) / 3, mode="valid")


def sample_uncertainty(spectrum: Spectrum, *, replicates: int = N_REPLICATES, seed: int = 0,
                       band: tuple[np.ndarray, np.ndarray] | None = None,
                       reselect: bool = True) -> SampleUncertainty:
    """Replicate spectra of one sample by parametric resampling.

    Each replicate is ``invert`` (same options, same grid) of the fitted moduli multiplied by
    (1 + σ_n ε), ε standard normal, σ_n the pooled noise of
    :func:`~tauspec.analysis.uncertainty.noise.pooled_noise` (Efron & Tibshirani 1993, ch. 6).  The
    uncertainty of ℓ = ln(H + ε) is the replicate standard deviation, smoothed by a three-point mean of the
    variance, with σ_n added in quadrature as a floor.  A ``band`` of H on the grid — a pair (lo, hi) read as a
    95 % interval, or an object with ``H_lo``, ``H_hi`` and ``level`` — replaces the replicate spread in σ
    (the replicates are still made: they give the null distribution of the shape distance).
    """
    if replicates < 0:
        raise SettingsError(f"replicates must be 0 or more, not {replicates}")
    u, ell, floor = _log_spectrum(spectrum)
    noise = pooled_noise(spectrum)
    rng = _data_seed(spectrum, seed)
    options = replicate_options(spectrum, fixed_strength=not reselect)
    m = spectrum.in_window
    reps = np.empty((replicates, len(u)))
    strengths = np.empty(replicates)
    for i in range(replicates):
        H, strengths[i] = _replicate_H(parametric_sweep(spectrum, noise, noise, rng), options)
        reps[i] = np.log(_smooth(np.asarray(spectrum.tau), H)[m] + floor)
    dropped = 0
    if reselect and replicates >= 3:
        # A replicate whose strength is more than a decade from the median of the replicates took another
        # corner of the L-curve (typically the collapsed, unregularized end): it is not noise of this spectrum.
        keep = np.abs(np.log10(strengths / np.median(strengths))) <= STRENGTH_DECADES
        dropped = int(np.sum(~keep))
        reps = reps[keep]
    floor_var = noise**2
    if band is not None:
        level = float(getattr(band, "level", 0.95))
        pair = (band.H_lo, band.H_hi) if hasattr(band, "H_lo") else band
        lo, hi = (np.asarray(b, dtype=float)[m] for b in pair)
        z = stats.norm.ppf(0.5 + level / 2)
        var = ((np.log(hi + floor) - np.log(np.maximum(lo, 0) + floor)) / (2 * z)) ** 2
        source = "band"
    elif len(reps) >= 2:
        var = _spread(reps)
        source = f"{len(reps)} replicates" + (f" ({dropped} dropped: strength a decade off)" if dropped else "")
    else:
        var = np.zeros(len(u))
        source = "data noise only"
    return SampleUncertainty(u=u, ell=ell, floor=floor, sigma=np.sqrt(var + floor_var), replicates=reps,
                             noise=noise, source=source, dropped=dropped)
