"""Honest intervals: no zero-width interval is reported, and a parameter at a search bound says so (issue 16)."""

from __future__ import annotations

import math

__all__ = ["checked_interval"]


def checked_interval(name: str, value: float, ci: tuple[float, float] | list[float],
                     bound: str = "") -> tuple[tuple[float, float], str | None]:
    """An interval fit to report, and a note when it is not reported as computed.

    A zero-width interval (hi − lo ≤ 10⁻⁹ of the value) claims a certainty no data give — it comes from a fit
    without residual scatter or a Jacobian that does not move — so it is withheld (NaN, NaN) with a note.
    ``bound`` names the search bound the parameter ended at; the interval is then withheld too, with a note.
    """
    lo, hi = (math.nan if c is None else float(c) for c in ci)
    if bound:
        return (math.nan, math.nan), f"{name} = {value:.4g} lies at its search bound ({bound}): no interval is claimed"
    if math.isfinite(lo) and math.isfinite(hi) and hi - lo <= 1e-9 * max(abs(float(value)), 1e-300):
        return (math.nan, math.nan), (f"{name}: the interval came out of zero width ({lo:.4g}); it is withheld "
                                      "(no scatter to scale it: the data are not describable by this model)")
    return (lo, hi), None
