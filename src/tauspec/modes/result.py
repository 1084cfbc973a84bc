"""The result of a discrete-mode fit: Maxwell modes with their standard errors and the mode-count search."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..data.record import field, record
from ..spectrum.kernels import modes_moduli
from .options import ModesOptions

__all__ = ["ModeCandidate", "Modes"]


@record
class ModeCandidate:
    """One candidate mode set considered by the mode-count rule."""

    n_modes: int
    rss: float
    n_params: int
    f_stat: float
    p_value: float
    resolved: bool


@record
class Modes:
    """Discrete Maxwell modes fitted to one sweep.

    Attributes
    ----------
    g, tau : ndarray
        Mode strengths (Pa) and relaxation times (s), sorted by τ.
    g_se, tau_se : ndarray
        Standard errors from the Jacobian at the solution (delta method from
        ln g, ln τ); NaN where the covariance is singular.
    eta_s, eta_s_se : float
        Solvent (high-frequency Newtonian) viscosity, Pa·s, and its standard error.
    G_e, G_e_se : float
        Equilibrium modulus, Pa, and its standard error.
    window : (float, float)
        Supported window (tau_lo, tau_hi) of the data (Davies & Anderssen 1997).
    outside_window : ndarray of bool
        True for modes whose τ lies outside the window.
    residual_rms : float
        Root-mean-square relative residual of the fit.
    candidates : tuple of ModeCandidate
        Every mode count tried, with its F-test against the next smaller set.
    start : str
        Where the starting modes came from: ``"spectrum"`` or ``"nnls"``.
    options : ModesOptions
        The options of the fit.
    """

    g: np.ndarray
    tau: np.ndarray
    g_se: np.ndarray
    tau_se: np.ndarray
    eta_s: float
    eta_s_se: float
    G_e: float
    G_e_se: float
    window: tuple[float, float]
    outside_window: np.ndarray
    residual_rms: float
    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray
    storage_fit: np.ndarray
    loss_fit: np.ndarray
    candidates: tuple[ModeCandidate, ...] = ()
    start: str = "nnls"
    options: ModesOptions = field(default_factory=ModesOptions)
    sample: str = ""
    source: str = ""
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        for name in ("g", "tau", "g_se", "tau_se", "outside_window", "omega", "storage", "loss", "storage_fit",
                     "loss_fit"):
            arr = np.array(getattr(self, name), copy=True)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def n_modes(self) -> int:
        """Number of Maxwell modes."""
        return int(self.g.size)

    @property
    def in_window(self) -> np.ndarray:
        """True for modes inside the supported window."""
        return ~self.outside_window

    def moduli(self, omega: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Return (G', G'') of the mode set at ``omega`` (rad/s)."""
        return modes_moduli(omega, self.g, self.tau, eta_s=self.eta_s, G_e=self.G_e)

    @property
    def fits_eta_s(self) -> bool:
        """True when η_s was fitted (not switched off, not given)."""
        return self.options.solvent and self.options.eta_s is None

    def details(self) -> dict[str, Any]:
        """Return everything else about the fit (window, flags, η_s, G_e, the mode-count search)."""
        return {
            "n_modes": self.n_modes,
            "outside_window": self.outside_window.tolist(),
            "window": list(self.window),
            "eta_s": self.eta_s,
            "eta_s_se": self.eta_s_se,
            "G_e": self.G_e,
            "G_e_se": self.G_e_se,
            "residual_rms": self.residual_rms,
            "start": self.start,
            "count_rule": f"F-test for nested fits, significance {self.options.significance:g}, at most "
                          f"{self.options.per_decade:g} modes per decade",
            "candidates": [c.to_dict() for c in self.candidates],
            "warnings": list(self.warnings),
        }

    def report(self) -> str:
        """Return a plain-text table of the modes with their standard errors and window flags."""
        lo, hi = self.window
        lines = [
            f"{self.n_modes} Maxwell mode(s) for {self.sample or self.source or 'the sample'} "
            f"(relative rms residual {100 * self.residual_rms:.2f} %; started from {self.start})",
            f"supported window {lo:.4g} s to {hi:.4g} s (Davies & Anderssen 1997)",
            f"{'mode':>4}  {'g [Pa]':>12}  {'± se':>10}  {'tau [s]':>12}  {'± se':>10}",
        ]
        for i, (g, gse, t, tse, out) in enumerate(
            zip(self.g, self.g_se, self.tau, self.tau_se, self.outside_window), start=1
        ):
            flag = "  outside the supported window" if out else ""
            lines.append(f"{i:>4}  {g:12.5g}  {gse:10.3g}  {t:12.5g}  {tse:10.3g}{flag}")
        if self.fits_eta_s:
            lines.append(f"solvent viscosity eta_s = {self.eta_s:.5g} Pa s (± {self.eta_s_se:.3g})")
        elif self.eta_s > 0:
            lines.append(f"solvent viscosity eta_s = {self.eta_s:.5g} Pa s (given, not fitted)")
        if self.options.equilibrium_modulus:
            lines.append(f"equilibrium modulus G_e = {self.G_e:.5g} Pa (± {self.G_e_se:.3g})")
        counts = ", ".join(
            f"{c.n_modes}" + ("" if math.isnan(c.p_value) else f": p={c.p_value:.3g}")
            + ("" if c.resolved else " (not resolved)") for c in self.candidates
        )
        lines.append(f"mode count by F-test (significance {self.options.significance:g}); tried {counts}")
        lines.extend(f"warning: {w}" for w in self.warnings)
        return "\n".join(lines)
