"""The τ range a frequency window determines (Davies & Anderssen 1997) and the default τ grid."""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from .kernels import log_grid

__all__ = ["supported_window", "measured_range", "outside_mask", "default_grid"]


def supported_window(omega: Sequence[float] | np.ndarray) -> tuple[float, float]:
    """Return the τ range a sweep determines, [e^(π/2)/ω_max, e^(−π/2)/ω_min].

    Outside it, the spectrum is not determined by data on [ω_min, ω_max]
    (Davies & Anderssen 1997).  The window is empty (lo ≥ hi) unless
    ω_max/ω_min > e^π ≈ 23.14.
    """
    w = np.asarray(omega, dtype=float)
    return (math.exp(math.pi / 2) / float(w.max()), math.exp(-math.pi / 2) / float(w.min()))


def measured_range(window: tuple[float, float]) -> tuple[float, float]:
    """Return (ω_min, ω_max) of the sweep whose supported window is ``window``: :func:`supported_window` inverted."""
    return math.exp(-math.pi / 2) / window[1], math.exp(math.pi / 2) / window[0]


def default_grid(omega: np.ndarray, n: int | None = None, margin: float = 1.0) -> np.ndarray:
    """Return the default τ grid: from 1/ω_max to 1/ω_min widened by ``margin`` decades.

    The grid does not reach below 1/ω_max: a mode with ωτ ≪ 1 at every
    measured frequency adds g ωτ to G'' exactly as a viscosity g τ does, so
    the data cannot tell such modes from the solvent.  They are carried by
    η_s, which is therefore the solvent viscosity plus the viscosity of every
    mode faster than 1/ω_max (measured: with the grid a decade below 1/ω_max,
    η_s carrying 20 % of G'' at ω_max was lost entirely on some 1 %-noise
    sweeps).  At the long end the grid extends ``margin`` decades beyond
    1/ω_min, where the terminal zone lies.  ``n`` defaults to 12 points per
    decade, between 40 and 200.
    """
    lo = 1.0 / float(np.max(omega))
    hi = 1.0 / float(np.min(omega)) * 10**margin
    if n is None:
        n = int(np.clip(round(12 * math.log10(hi / lo)), 40, 200))
    return log_grid(lo, hi, n)


def outside_mask(tau: np.ndarray, window: tuple[float, float]) -> np.ndarray:
    """True where ``tau`` lies outside the supported ``window`` (everywhere when the window is empty).

    The complement of ``Spectrum.in_window`` on the same grid.
    """
    tau = np.asarray(tau, dtype=float)
    lo, hi = window
    if not lo < hi:
        return np.ones(tau.shape, dtype=bool)
    return (tau < lo) | (tau > hi)
