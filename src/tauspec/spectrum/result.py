"""The result of an inversion: the spectrum H(τ), its fit and the L-curve of the strength path."""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from typing import Any

import numpy as np

__all__ = ["SCHEMA", "LCurve", "Spectrum"]


#: Version of the JSON form of a Spectrum.
SCHEMA = "tauspec.spectrum/1"


@dataclasses.dataclass(frozen=True)
class LCurve:
    """The path of strengths with its norms and the chosen point.

    ``strength`` is dimensionless (the problem is scaled by the data); the
    norms are those of the weighted residual (relative residuals) and of
    L·h with h = H/H_scale.
    """

    strength: np.ndarray
    residual_norm: np.ndarray
    solution_norm: np.ndarray
    curvature: np.ndarray
    gcv: np.ndarray
    index: int
    note: str

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form."""
        return {
            "lambda": self.strength.tolist(),
            "residual_norm": self.residual_norm.tolist(),
            "solution_norm": self.solution_norm.tolist(),
            "curvature": self.curvature.tolist(),
            "gcv": self.gcv.tolist(),
            "index": self.index,
            "note": self.note,
        }


@dataclasses.dataclass(frozen=True)
class Spectrum:
    """A recovered continuous relaxation spectrum and its fit.

    Attributes
    ----------
    tau : ndarray
        The τ grid (s), uniform in ln τ.
    H : ndarray
        H(τ) on the grid (Pa), nonnegative.
    strength : float
        The chosen regularization strength λ (dimensionless).
    select : str
        How λ was chosen: ``"lcurve"``, ``"gcv"`` or ``"fixed"``.
    window : tuple of float
        The supported τ range (Davies & Anderssen 1997); empty when lo ≥ hi.
    eta_s : float
        Solvent (or high-frequency) viscosity η_s (Pa·s).
    G_e : float
        Equilibrium modulus G_e (Pa); 0 unless ``plateau=True``.
    residual_rms : float
        Root mean square of the relative residuals of G' and G''.
    omega, storage, loss, storage_fit, loss_fit : ndarray
        The data and the fitted moduli (SI).
    lcurve : LCurve
        The whole path of strengths.
    sample, source : str
    meta : mapping
        The sweep's metadata.
    warnings : tuple of str
        Cautions about this result, in words.
    settings : mapping
        The resolved settings (grid size, rule, solver ...).
    """

    tau: np.ndarray
    H: np.ndarray
    strength: float
    select: str
    window: tuple[float, float]
    eta_s: float
    G_e: float
    residual_rms: float
    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray
    storage_fit: np.ndarray
    loss_fit: np.ndarray
    lcurve: LCurve
    sample: str = "sample"
    source: str = ""
    meta: Mapping[str, str] = dataclasses.field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    settings: Mapping[str, Any] = dataclasses.field(default_factory=dict)

    @property
    def in_window(self) -> np.ndarray:
        """Boolean mask of the grid points inside the supported window."""
        lo, hi = self.window
        return (self.tau >= lo) & (self.tau <= hi)

    @property
    def window_empty(self) -> bool:
        """True when the data determine the spectrum nowhere (ω_max/ω_min ≤ e^π)."""
        return not self.window[0] < self.window[1]

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form (keys are a public contract: add, never rename)."""
        return {
            "schema": SCHEMA,
            "sample": self.sample,
            "source": self.source,
            "tau": self.tau.tolist(),
            "H": self.H.tolist(),
            "in_window": self.in_window.tolist(),
            "lambda": self.strength,
            "select": self.select,
            "window": list(self.window),
            "eta_s": self.eta_s,
            "G_e": self.G_e,
            "residual_rms": self.residual_rms,
            "omega": self.omega.tolist(),
            "storage": self.storage.tolist(),
            "loss": self.loss.tolist(),
            "storage_fit": self.storage_fit.tolist(),
            "loss_fit": self.loss_fit.tolist(),
            "lcurve": self.lcurve.to_dict(),
            "warnings": list(self.warnings),
            "settings": dict(self.settings),
            "meta": dict(self.meta),
        }

    def report(self) -> str:
        """Return a short text summary."""
        lo, hi = self.window
        lines = [
            f"sample {self.sample}: {len(self.omega)} points, ω {self.omega[0]:.3g}–{self.omega[-1]:.3g} rad/s",
            f"  strength λ = {self.strength:.3g} ({self.select}); relative residual rms {self.residual_rms:.3%}",
            f"  supported window τ ∈ [{lo:.3g}, {hi:.3g}] s" if not self.window_empty else
            "  supported window: empty (ω range narrower than e^π)",
            f"  η_s = {self.eta_s:.4g} Pa·s, G_e = {self.G_e:.4g} Pa, max H = {float(self.H.max()):.4g} Pa",
        ]
        lines += [f"  caution: {w}" for w in self.warnings]
        return "\n".join(lines)
