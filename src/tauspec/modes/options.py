"""The options of the discrete-mode fit: one frozen record, validated once."""

from __future__ import annotations

from typing import Any

from ..data.record import check_bool, check_number, option, record
from ..data.sweep import frequency_range_option, set_frequency_range
from ..spectrum.options import InvertOptions

__all__ = ["ModesOptions"]


@record
class ModesOptions:
    """How :func:`~tauspec.modes.fit.fit_modes` fits Maxwell modes.

    Attributes
    ----------
    n_modes : int, optional
        Fix the number of modes instead of choosing it by the F-test.
    significance : float
        Size of the nested-model F-test that decides whether one more mode improves the fit (Seber & Wild
        1989, §5.3).
    per_decade : float
        Resolution limit: at most about ``per_decade`` modes per decade of the measured frequency range, and
        adjacent modes at least 1/``per_decade`` decade apart (1–2 per decade: common practice, no single source).
    solvent, equilibrium_modulus : bool
        Fit η_s ≥ 0 (G'' gains η_s ω) and G_e ≥ 0 (G' gains G_e), as in the inversion.
    eta_s : float, optional
        A known solvent viscosity (Pa·s), held fixed instead of fitted.
    omega_min, omega_max : float, optional
        Fit only the points with ω_min ≤ ω ≤ ω_max (rad/s), as in the inversion.
    """

    n_modes: int | None = option(None, flag="--modes", metavar="N",
                                 help="fix the number of Maxwell modes (default: chosen by the F-test)")
    significance: float = option(0.01, cli=False, help="size of the F-test for one more mode")
    per_decade: float = option(2.0, cli=False, help="at most this many modes per decade")
    solvent: bool = option(True, cli=False, help="fit η_s")
    equilibrium_modulus: bool = option(False, cli=False, help="fit G_e")
    eta_s: float | None = option(None, cli=False, help="known solvent viscosity (Pa·s)")
    omega_min: float | None = frequency_range_option("min", cli=False)
    omega_max: float | None = frequency_range_option("max", cli=False)

    @classmethod
    def like(cls, invert_options: InvertOptions, **changes: Any) -> ModesOptions:
        """Options with the physical switches of an inversion (solvent, equilibrium modulus, known η_s, ω range)."""
        o = invert_options
        return cls(**{"solvent": o.solvent, "equilibrium_modulus": o.equilibrium_modulus, "eta_s": o.eta_s,
                      "omega_min": o.omega_min, "omega_max": o.omega_max, **changes})

    def __post_init__(self) -> None:
        if self.n_modes is not None:
            check_number("n_modes", self.n_modes, lo=1, hi=50, integer=True, what="a whole number of modes")
            object.__setattr__(self, "n_modes", int(self.n_modes))
        check_number("significance", self.significance, lo=0, hi=1, lo_open=True, hi_open=True,
                     what="a test size")
        object.__setattr__(self, "significance", float(self.significance))
        check_number("per_decade", self.per_decade, lo=0, hi=10, lo_open=True, what="a number of modes per decade")
        object.__setattr__(self, "per_decade", float(self.per_decade))
        check_bool("solvent", self.solvent)
        check_bool("equilibrium_modulus", self.equilibrium_modulus)
        if self.eta_s is not None:
            check_number("eta_s", self.eta_s, lo=0, what="a nonnegative viscosity in Pa·s", say_range=False)
            object.__setattr__(self, "eta_s", float(self.eta_s))
        set_frequency_range(self)
