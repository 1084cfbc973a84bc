"""The result of an inversion: the spectrum H(τ), its fit and the L-curve of the strength path."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..data.record import field, insert_after, record
from ..data.sweep import Sweep
from .options import InvertOptions

__all__ = ["LCurve", "Spectrum", "ETA_S_LABEL"]

#: What η_s of a spectrum is (issue 16): the data cannot tell the solvent from relaxation modes faster than
#: 1/ω_max, whose viscosity Σ g τ adds to it (docs/inversion.md); the diagnosis separates them for chains.
ETA_S_LABEL = ("Newtonian high-frequency contribution (solvent + modes faster than the window); "
               "the solvent itself: see tauspec diagnose")


@record
class LCurve:
    """The path of strengths with its norms and the chosen point.

    ``strength`` is dimensionless (the problem is scaled by the data); the
    norms are those of the weighted residual (relative residuals) and of
    L·h with h = H/H_scale.
    """

    strength: np.ndarray = field(key="lambda")
    residual_norm: np.ndarray
    solution_norm: np.ndarray
    curvature: np.ndarray
    gcv: np.ndarray
    index: int
    note: str


@record(schema="tauspec.spectrum/1.1")
class Spectrum:
    """A recovered continuous relaxation spectrum and its fit.

    Attributes
    ----------
    sample, source : str
    tau : ndarray
        The τ grid (s), uniform in ln τ.
    H : ndarray
        H(τ) on the grid (Pa), nonnegative.
    strength : float
        The chosen regularization strength λ (dimensionless; JSON key ``lambda``).
    chosen_by : str
        How λ was chosen: ``"lcurve"`` or ``"gcv"`` (the rule of ``options.select``), or ``"fixed"`` when the
        user gave it (JSON key ``select``).
    window : tuple of float
        The supported τ range (Davies & Anderssen 1997); empty when lo ≥ hi.
    eta_s : float
        The Newtonian high-frequency contribution η_s (Pa·s): the solvent plus every mode faster than the window
        (the diagnosis separates the solvent itself).
    G_e : float
        Equilibrium modulus G_e (Pa); 0 unless ``options.equilibrium_modulus``.
    residual_rms : float
        Root mean square of the relative residuals of G' and G''.
    omega, storage, loss, storage_fit, loss_fit : ndarray
        The data and the fitted moduli (SI).
    lcurve : LCurve
        The whole path of strengths.
    warnings : tuple of str
        Cautions about this result, in words.
    options : InvertOptions
        The options, resolved: ``grid`` is the number of τ points used and ``solver`` the solver that ran
        (``"fast"`` or ``"cvxpy"``); in JSON they are part of ``settings``.
    objective : float
        The value of the objective at the solution.
    meta : mapping
        The sweep's metadata.
    """

    sample: str = "sample"
    source: str = ""
    tau: np.ndarray
    H: np.ndarray
    strength: float = field(key="lambda")
    chosen_by: str = field(key="select")
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
    warnings: tuple[str, ...] = ()
    options: InvertOptions = field(key="settings", default_factory=InvertOptions)
    objective: float = float("nan")
    meta: Mapping[str, str] = field(default_factory=dict)

    @property
    def in_window(self) -> np.ndarray:
        """Boolean mask of the grid points inside the supported window."""
        lo, hi = self.window
        return (self.tau >= lo) & (self.tau <= hi)

    @property
    def window_empty(self) -> bool:
        """True when the data determine the spectrum nowhere (ω_max/ω_min ≤ e^π)."""
        return not self.window[0] < self.window[1]

    def as_sweep(self, storage: np.ndarray | None = None, loss: np.ndarray | None = None) -> Sweep:
        """The sweep this spectrum was computed from, or other moduli (SI) on the same frequencies."""
        return Sweep(omega=self.omega, storage=self.storage if storage is None else storage,
                     loss=self.loss if loss is None else loss, name=self.sample, meta=dict(self.meta),
                     source=self.source)

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        """The contract form: ``in_window`` after ``H``; the resolved options, solver and objective in ``settings``."""
        o = self.options
        settings = {"grid": int(len(self.tau)), "tau_range": [float(self.tau[0]), float(self.tau[-1])],
                    "n_strengths": o.n_strengths, "select": o.select, "strength": o.strength, "solvent": o.solvent,
                    "equilibrium_modulus": o.equilibrium_modulus, "eta_s_known": o.eta_s,
                    "bounds": {k: list(v) for k, v in (o.bounds or {}).items()}, "solver": o.solver,
                    "objective": self.objective}
        d = {k: (settings if k == "settings" else v) for k, v in d.items() if k != "objective"}
        return insert_after(d, "H", "in_window", self.in_window.tolist())

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        s = dict(d.get("settings") or {})
        if "plateau" in s and "equilibrium_modulus" not in s:  # results written before the rename (schema 1)
            s["equilibrium_modulus"] = s["plateau"]
        d["objective"] = s.get("objective")
        names = ("grid", "n_strengths", "select", "strength", "solvent", "equilibrium_modulus", "solver")
        options = {k: s[k] for k in names if k in s}
        options["eta_s"] = s.get("eta_s_known")
        options["bounds"] = s.get("bounds") or None
        d["settings"] = options
        d.pop("in_window", None)
        return d

    def report(self) -> str:
        """Return a short text summary."""
        lo, hi = self.window
        lines = [
            f"sample {self.sample}: {len(self.omega)} points, ω {self.omega[0]:.3g}–{self.omega[-1]:.3g} rad/s",
            f"  strength λ = {self.strength:.3g} ({self.chosen_by}); relative residual rms {self.residual_rms:.3%}",
            f"  supported window τ ∈ [{lo:.3g}, {hi:.3g}] s" if not self.window_empty else
            "  supported window: empty (ω range narrower than e^π)",
            f"  η_s = {self.eta_s:.4g} Pa·s: {ETA_S_LABEL}",
            f"  G_e = {self.G_e:.4g} Pa, max H = {float(self.H.max()):.4g} Pa",
        ]
        lines += [f"  caution: {w}" for w in self.warnings]
        return "\n".join(lines)
