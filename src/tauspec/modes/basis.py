"""What a derived number is computed from: a spectrum or Maxwell modes, as one weighted set of relaxation times.

A continuous spectrum H(τ) on its grid and a set of Maxwell modes (g_i, τ_i) are both weights on relaxation
times; the derived numbers and curves take either, with the part inside the supported window.
"""

from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np

from ..errors import SettingsError
from ..spectrum.kernels import quadrature_weights
from ..spectrum.window import measured_range, outside_mask, supported_window

__all__ = ["FLAG_SHARE", "LONGEST_SHARE"]


#: A quantity is flagged when more than this share of it comes from outside the supported window.
FLAG_SHARE = 0.05

#: The longest relaxation time is the largest τ whose part at and above it carries this share of Σ g τ.
LONGEST_SHARE = 0.01


# --------------------------------------------------------------------------- a discrete set from either input


@dataclasses.dataclass(frozen=True)
class _Set:
    g: np.ndarray
    tau: np.ndarray
    eta_s: float
    G_e: float
    window: tuple[float, float] | None
    kind: str
    #: (ω_min, ω_max) of the sweep, or None when not known
    measured: tuple[float, float] | None = None

    @property
    def outside(self) -> np.ndarray:
        if self.window is None:
            return np.zeros(self.tau.shape, dtype=bool)
        return outside_mask(self.tau, self.window)

    def inside_part(self) -> _Set:
        keep = ~self.outside
        return dataclasses.replace(self, g=self.g[keep], tau=self.tau[keep])

    def without(self, side: str) -> _Set:
        """The set without the part beyond the window on one side ("long" or "short" times)."""
        if self.window is None:
            return self
        lo, hi = self.window
        drop = self.tau > max(hi, lo) if side == "long" else self.tau < min(lo, hi)
        return dataclasses.replace(self, g=self.g[~drop], tau=self.tau[~drop])


def _as_set(obj: Any) -> _Set:
    """Turn Modes (``g``, ``tau``) or a Spectrum-like object (``tau``, ``H``) into a discrete set."""
    eta_s = float(getattr(obj, "eta_s", 0.0) or 0.0)
    G_e = float(getattr(obj, "G_e", 0.0) or 0.0)
    if hasattr(obj, "g") and hasattr(obj, "tau"):
        g = np.asarray(obj.g, dtype=float)
        tau = np.asarray(obj.tau, dtype=float)
        kind = "modes"
    elif hasattr(obj, "H") and hasattr(obj, "tau"):
        tau = np.asarray(obj.tau, dtype=float)
        g = np.asarray(obj.H, dtype=float)
        kind = "spectrum"
    else:
        raise SettingsError("expected Maxwell modes (g, tau) or a spectrum (tau, H)")
    if g.shape != tau.shape or g.ndim != 1:
        raise SettingsError(f"{kind}: strengths and relaxation times differ in shape")
    if not (np.all(np.isfinite(g)) and np.all(np.isfinite(tau)) and np.all(tau > 0)):
        raise SettingsError(f"{kind}: relaxation times must be positive and all values finite")
    if kind == "spectrum":
        if tau.size > 1 and np.any(np.diff(tau) <= 0):
            raise SettingsError("spectrum: the tau grid must be strictly increasing")
        g = g * quadrature_weights(tau)
    if np.any(g < 0) or eta_s < 0 or G_e < 0:
        raise SettingsError(f"{kind}: strengths, eta_s and G_e must be nonnegative")
    keep = g > 0
    window = getattr(obj, "window", None)
    omega = getattr(obj, "omega", None)
    measured = None
    if omega is not None and np.size(omega):
        w = np.asarray(omega, dtype=float)
        measured = (float(w.min()), float(w.max()))
        if window is None:
            window = supported_window(w)
    if window is not None:
        window = (float(window[0]), float(window[1]))
        if measured is None:
            measured = measured_range(window)
    order = np.argsort(tau[keep])
    return _Set(g[keep][order], tau[keep][order], eta_s, G_e, window, kind, measured)


def _share(full: Any, inside: Any) -> Any:
    """|Q − Q_in|/|Q|, 1 where the in-window value does not exist, 0 where Q is 0 and unchanged."""
    full = np.asarray(full, dtype=float)
    inside = np.asarray(inside, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        s = np.abs(full - inside) / np.abs(full)
    s = np.where(np.isfinite(full) & ~np.isfinite(inside), 1.0, s)
    s = np.where((full == inside) | (~np.isfinite(full) & ~np.isfinite(inside)), 0.0, s)
    s = np.where(np.isnan(s), 1.0, s)
    return float(s) if s.ndim == 0 else s
