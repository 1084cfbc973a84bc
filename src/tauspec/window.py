"""The range of relaxation times a frequency sweep supports (Davies & Anderssen 1997).

This small helper stands in for ``tauspec.spectrum.supported_window`` until
the spectrum module is on main; :func:`supported_window` delegates to it when
it is importable, so both always agree.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["supported_window", "outside_mask"]


def supported_window(omega: np.ndarray) -> tuple[float, float]:
    """Return the supported window (tau_lo, tau_hi) of a sweep.

    tau_lo = e^(π/2)/ω_max,  tau_hi = e^(−π/2)/ω_min.
    ``tau_lo >= tau_hi`` means the window is empty (ω_max/ω_min ≤ e^π ≈ 23.14).

    References
    ----------
    Davies, A. R. & Anderssen, R. S. (1997). Sampling localization in
    determining the relaxation spectrum. J. Non-Newtonian Fluid Mech. 73, 163.
    """
    try:  # the spectrum module owns the canonical version once it exists
        from .spectrum import supported_window as _canonical
    except ImportError:
        _canonical = None
    if _canonical is not None:
        lo, hi = _canonical(omega)
        return float(lo), float(hi)
    omega = np.asarray(omega, dtype=float)
    return math.exp(math.pi / 2) / float(np.max(omega)), math.exp(-math.pi / 2) / float(np.min(omega))


def outside_mask(tau: np.ndarray, window: tuple[float, float]) -> np.ndarray:
    """Return True where ``tau`` lies outside ``window`` (everything, if the window is empty)."""
    tau = np.asarray(tau, dtype=float)
    lo, hi = window
    if not lo < hi:
        return np.ones(tau.shape, dtype=bool)
    return (tau < lo) | (tau > hi)
