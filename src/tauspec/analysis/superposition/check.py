"""Whether the overlaps of the shifted sweeps agree within their noise: thermorheological simplicity."""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from typing import Any

from ...data.record import field, insert_after, record
from ...errors import WeakResultWarning
from .pairs import PairShift, _celsius

__all__ = ["SuperpositionCheck", "superposition_check"]


@record
class SuperpositionCheck:
    """Whether the overlaps agree to within the noise (thermorheological simplicity).

    ``misfit`` is sqrt(χ²/dof) pooled over all overlaps: the ln G' and ln G''
    residuals about one smooth curve through both sweeps of a pair, in units
    of each sweep's own noise; about 1 when superposition holds.  ``simple`` is
    ``misfit <= threshold``.  ``worst`` names the pair with the largest misfit.
    """

    misfit: float
    threshold: float
    simple: bool
    worst: tuple[float, float] = field(key="worst_pair_K")
    statement: str

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        """The worst pair in °C (and in K, which is read back)."""
        return insert_after(d, "simple", "worst_pair", [self.worst[0] - 273.15, self.worst[1] - 273.15])

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        d.pop("worst_pair", None)
        return d


def superposition_check(pairs: Sequence[PairShift], threshold: float) -> SuperpositionCheck:
    """The pooled overlap misfit in units of the noise, and the verdict on superposition (a warning when it fails)."""
    misfit = float(math.sqrt(sum(p.misfit**2 * p.dof for p in pairs) / sum(p.dof for p in pairs)))
    worst = max(pairs, key=lambda p: p.misfit)
    simple = misfit <= threshold
    if simple:
        statement = (f"superposition holds: the overlaps agree to within the noise "
                     f"(misfit {misfit:.2f} × noise, threshold {threshold:g})")
    else:
        statement = (f"superposition fails: the overlaps differ by {misfit:.2f} × the noise (threshold "
                     f"{threshold:g}; worst between {_celsius(worst.T_low)} and {_celsius(worst.T_high)}); "
                     "the material looks thermorheologically complex (a blend, near T_g, a gel?) and the master "
                     "curve should not be trusted — compare the van Gurp–Palmen plot")
        warnings.warn(statement, WeakResultWarning, stacklevel=3)
    return SuperpositionCheck(misfit=misfit, threshold=float(threshold), simple=simple,
                              worst=(worst.T_low, worst.T_high), statement=statement)
