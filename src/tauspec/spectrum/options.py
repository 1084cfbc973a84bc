"""The options of an inversion: one frozen record, validated once, built alike by the API, the CLI and TOML."""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from ..data.record import check_bool, check_choice, check_number, option, record
from ..data.sweep import frequency_range_option, set_frequency_range
from ..errors import SettingsError
from .rules import RULES

__all__ = ["InvertOptions", "SOLVERS", "BOUND_NAMES"]

#: How problem (1) of :mod:`tauspec.spectrum.regularize` is solved: ``auto`` takes the fast exact path unless
#: bounds are given, which need the general convex solver.
SOLVERS = ("auto", "fast", "cvxpy")
#: Quantities that may carry bounds (SI): the spectrum, the Newtonian high-frequency viscosity, G_e.
BOUND_NAMES = ("H", "eta_s", "G_e")


@record
class InvertOptions:
    """How :func:`~tauspec.spectrum.invert.invert` recovers a spectrum.

    Attributes
    ----------
    strength : "auto" or float
        The regularization strength λ (dimensionless, as reported in ``Spectrum.strength``), or ``"auto"`` to
        choose it along the path by the rule ``select``.
    select : str
        The strength rule, by name from :data:`tauspec.spectrum.rules.RULES`: ``"lcurve"`` (L-curve corner,
        Hansen 1992) or ``"gcv"`` (Golub, Heath & Wahba 1979).
    grid : int or array, optional
        The number of τ points of the default grid (10 to 2000), or the τ grid itself (s, uniform in ln τ).
    solvent : bool
        Fit η_s ≥ 0, the Newtonian high-frequency contribution (solvent plus modes faster than the window).
    equilibrium_modulus : bool
        Fit an equilibrium modulus G_e ≥ 0 (G' += G_e), for gels and solids.
    eta_s : float, optional
        A known solvent viscosity (Pa·s), subtracted from G'' instead of fitted.
    bounds : mapping, optional
        Bounds ``{"H": (lo, hi), "eta_s": (lo, hi), "G_e": (lo, hi)}`` in SI; they need the cvxpy solver.
    solver : {"auto", "fast", "cvxpy"}
    n_strengths : int
        Strengths on the initial path (at least 8).
    omega_min, omega_max : float, optional
        Use only the points with ω_min ≤ ω ≤ ω_max (rad/s), e.g. to leave out points spoiled by instrument
        inertia; the others are dropped with a note.
    """

    strength: str | float = option("auto", metavar="auto|VALUE",
                                   help="regularization strength λ: 'auto' (chosen by --select) or a positive number")
    select: str = option("lcurve", choices=lambda: sorted(RULES),
                         help="rule that chooses λ for --strength auto: the L-curve corner or the GCV minimum")
    grid: int | np.ndarray | None = option(None, metavar="N", help="number of τ grid points (default 12 per decade)")
    solvent: bool = option(True, negate="--no-solvent",
                           help="fit η_s, the Newtonian high-frequency contribution: solvent + modes faster "
                                "than the window (--no-solvent: none)",
                           negate_help="no Newtonian high-frequency term η_s ω in G'' (default: η_s fitted, for "
                                       "the solvent and the modes faster than the window)")
    equilibrium_modulus: bool = option(False, help="fit an equilibrium modulus G_e (gels, solids)")
    eta_s: float | None = option(None, metavar="PA_S",
                                 help="known solvent viscosity in Pa·s (subtracted instead of fitted)")
    bounds: Mapping[str, tuple[float, float]] | None = option(None, cli=False, help="bounds on H, eta_s, G_e (SI)")
    solver: str = option("auto", cli=False, choices=SOLVERS, help="solver of the regularized problem")
    n_strengths: int = option(50, cli=False, help="strengths on the initial path")
    omega_min: float | None = frequency_range_option("min")
    omega_max: float | None = frequency_range_option("max")

    def __post_init__(self) -> None:
        if not (isinstance(self.strength, str) and self.strength == "auto"):
            s = self.strength
            if isinstance(s, bool) or not isinstance(s, int | float) or not (math.isfinite(s) and s > 0):
                raise SettingsError(f"strength must be 'auto' or a positive number, not {s!r}")
            object.__setattr__(self, "strength", float(s))
        check_choice("select", self.select, sorted(RULES))
        if self.grid is not None and not isinstance(self.grid, int | np.integer):
            try:
                tau = np.array(self.grid, dtype=float).reshape(-1)
            except (TypeError, ValueError):
                raise SettingsError(f"grid must be a number of τ points or at least 10 times, "
                                    f"not {self.grid!r}") from None
            lt = np.diff(np.log(tau)) if tau.size > 1 and np.all(tau > 0) else np.array([np.nan])
            if tau.size < 10 or not np.all(np.isfinite(lt)) or not np.allclose(lt, lt[0], rtol=1e-6) or lt[0] <= 0:
                raise SettingsError("grid must be at least 10 increasing times, uniformly spaced in ln τ")
            tau.setflags(write=False)
            object.__setattr__(self, "grid", tau)
        elif self.grid is not None:
            check_number("grid", self.grid, lo=10, hi=2000, integer=True, what="a whole number of τ points")
            object.__setattr__(self, "grid", int(self.grid))
        check_bool("solvent", self.solvent)
        check_bool("equilibrium_modulus", self.equilibrium_modulus)
        if self.eta_s is not None:
            check_number("eta_s", self.eta_s, lo=0, what="a nonnegative viscosity in Pa·s", say_range=False)
            object.__setattr__(self, "eta_s", float(self.eta_s))
        check_choice("solver", self.solver, SOLVERS)
        check_number("n_strengths", self.n_strengths, lo=8, integer=True, what="a whole number")
        set_frequency_range(self)
        if self.bounds is not None:
            self._check_bounds()

    def _check_bounds(self) -> None:
        bounds = dict(self.bounds or {})
        unknown = sorted(set(bounds) - set(BOUND_NAMES))
        if unknown:
            raise SettingsError(f"bounds may name {', '.join(BOUND_NAMES)}, not {unknown}")
        clean = {}
        for name, pair in bounds.items():
            try:
                lo, hi = (float(v) for v in pair)
            except (TypeError, ValueError):
                raise SettingsError(f"bounds[{name!r}] must be a pair (lo, hi) of numbers, not {pair!r}") from None
            if math.isnan(lo) or math.isnan(hi) or lo > hi:
                raise SettingsError(f"bounds[{name!r}]: the lower bound exceeds the upper bound ({lo:g} > {hi:g})")
            clean[name] = (lo, hi)
        if self.solver == "fast" and clean:
            raise SettingsError("bounds need solver='cvxpy' (or 'auto')")
        if "eta_s" in clean and not (self.solvent and self.eta_s is None):
            raise SettingsError("bounds on eta_s need the solvent term (solvent=True and no fixed eta_s)")
        if "G_e" in clean and not self.equilibrium_modulus:
            raise SettingsError("bounds on G_e need equilibrium_modulus=True")
        object.__setattr__(self, "bounds", clean or None)

    @property
    def uses_cvxpy(self) -> bool:
        """True when the general convex solver is used (asked for, or needed by bounds)."""
        return self.solver == "cvxpy" or (self.solver == "auto" and bool(self.bounds))
