"""The options of the confidence bands: one frozen record, validated once."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from ...data.record import check_choice, check_number, option, record
from ...errors import SettingsError

__all__ = ["BandOptions", "METHODS", "INTERVALS", "STRENGTH_MODES"]

#: How the sweeps are resampled: the residual bootstrap or Gaussian (parametric) noise.
METHODS = ("residual", "parametric")
#: How a band is formed from the resampled spectra (:func:`~tauspec.analysis.uncertainty.bands.pointwise_interval`).
INTERVALS = ("widened", "basic", "percentile")
#: λ on every resample: fixed at the original choice, or re-chosen by the original rule.
STRENGTH_MODES = ("fixed", "rechosen")
#: Largest known relative noise a user may give: beyond it 1 + σε can turn negative.
MAX_GIVEN_NOISE = 0.2


@record
class BandOptions:
    """How :func:`~tauspec.analysis.uncertainty.bands.confidence_bands` resamples and forms the band.

    Attributes
    ----------
    resamples : int
        Number of resampled sweeps B (at least 10).
    method : {"residual", "parametric"}
    noise : float or (float, float), optional
        Known relative noise of G' and G'' (e.g. 0.02); estimated from the residuals when omitted.
    strength_mode : {"fixed", "rechosen"}
    interval : {"widened", "basic", "percentile"}
    level : float
        Confidence level of the band and the intervals, in [0.5, 1).
    seed : int
        Resample b uses ``default_rng(SeedSequence(seed).spawn(B)[b])``: the result does not depend on ``jobs``.
    jobs : int
        Worker processes (joblib); 1 runs in this process.
    statistics : sequence of names or mapping of name to callable, optional
        The numbers to give intervals for (default: every registered statistic that applies).
    """

    resamples: int = option(200, metavar="N", help="number of resampled sweeps (200)")
    method: str = option("residual", flag="--band-method", choices=METHODS,
                         help="resample the residuals (default) or draw Gaussian noise")
    noise: float | tuple[float, float] | None = option(
        None, metavar="X",
        help="known relative noise of G' and G'' (e.g. 0.02); estimated from the residuals if omitted")
    strength_mode: str = option("fixed", flag="--band-strength", choices=STRENGTH_MODES,
                                help="keep λ at the original choice on every resample (default) or re-choose it")
    interval: str = option("widened", cli=False, choices=INTERVALS, help="how the band is formed")
    level: float = option(0.95, metavar="P", help="confidence level of the band and intervals (0.95)")
    seed: int = option(0, metavar="N", help="seed of the resampling (0)")
    jobs: int = option(1, metavar="N", help="worker processes (1)")
    statistics: Sequence[str] | Mapping[str, Any] | None = option(
        None, flag="--band-statistics", metavar="NAME[,NAME...]",
        help="numbers to give intervals for (eta_s, G_e, derived, modes, rouse, bead_spring); default: eta_s or "
             "G_e as fitted, and derived")

    def __post_init__(self) -> None:
        check_number("resamples", self.resamples, lo=10, integer=True, what="a whole number")
        check_choice("method", self.method, METHODS)
        check_choice("strength_mode", self.strength_mode, STRENGTH_MODES)
        check_choice("interval", self.interval, INTERVALS)
        check_number("level", self.level, lo=0.5, hi=1, hi_open=True, what="a confidence level")
        check_number("seed", self.seed, lo=0, integer=True, what="a whole number")
        check_number("jobs", self.jobs, lo=1, integer=True, what="a whole number")
        if self.noise is not None:
            values = [self.noise] if isinstance(self.noise, int | float) else list(self.noise)
            if len(values) not in (1, 2):
                raise SettingsError(f"noise must be one relative size, or one for G' and one for G'', not "
                                    f"{self.noise!r}")
            for v in values:
                check_number("noise", v, lo=0, hi=MAX_GIVEN_NOISE, lo_open=True, what="a relative size")
        if isinstance(self.statistics, str):
            names = tuple(s.strip() for s in self.statistics.split(",") if s.strip())
            object.__setattr__(self, "statistics", names)
