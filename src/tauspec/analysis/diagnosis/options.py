"""The options of the diagnosis: one frozen record, validated once."""

from __future__ import annotations

from ...data.record import check_bool, option, record
from ...data.sweep import frequency_range_option, set_frequency_range

__all__ = ["DiagnoseOptions"]


@record
class DiagnoseOptions:
    """How :func:`~tauspec.analysis.diagnosis.diagnose.diagnose` decides.

    Attributes
    ----------
    use_spectrum : bool
        Make the tests on the recovered continuous spectrum (computed when none is given).
    solvent : bool
        Fit a Newtonian contribution η_s ω to G'' in the chain fits.
    intervals : bool
        Compute the 95 % profile-likelihood intervals (the costly part); otherwise Jacobian intervals.
    omega_min, omega_max : float, optional
        Use only the points with ω_min ≤ ω ≤ ω_max (rad/s); the others are dropped with a note.
    """

    use_spectrum: bool = option(True, negate="--no-spectrum",
                                help="make the continuous-spectrum tests (--no-spectrum: faster; listed as not made)",
                                negate_help="skip the continuous-spectrum tests (faster; they are listed as not "
                                            "made)")
    solvent: bool = option(True, negate="--no-solvent",
                           help="fit a Newtonian contribution η_s ω to G'' (--no-solvent: none)",
                           negate_help="no Newtonian contribution η_s ω in G'' (default: fitted)")
    intervals: bool = option(True, negate="--no-intervals",
                             help="profile-likelihood intervals (--no-intervals: Jacobian intervals, faster)",
                             negate_help="Jacobian (Wald) intervals instead of profile-likelihood ones (faster)")

    omega_min: float | None = frequency_range_option("min")
    omega_max: float | None = frequency_range_option("max")

    def __post_init__(self) -> None:
        for name in ("use_spectrum", "solvent", "intervals"):
            check_bool(name, getattr(self, name))
        set_frequency_range(self)
