"""Points of one block grouped by temperature: steps of a temperature column become separate sweeps.

Temperatures are sorted and split where two neighbours differ by more than the tolerance (default 1 K); a group
that then still spans more than the tolerance is a ramp, not a step, and is refused.  A group's temperature is
its mean, and its spread (largest minus smallest) goes into the metadata.  Tolerance: common practice, no single
source (a rheometer's oven holds a set point to a few tenths of a kelvin).
"""

from __future__ import annotations

import numpy as np

from ..errors import SweepError

__all__ = ["DEFAULT_TOLERANCE", "group_temperatures", "describe"]

#: Temperatures closer than this (K, the same in °C) belong to one sweep.
DEFAULT_TOLERANCE = 1.0


def group_temperatures(temperature: np.ndarray, tolerance: float, *, unit: str, source: str) -> list[np.ndarray]:
    """Index arrays of the points of each temperature step, in the order the steps first appear.

    Raises
    ------
    SweepError
        When the temperatures spread over more than ``tolerance`` without a gap larger than it.
    """
    order = np.argsort(temperature, kind="stable")
    t = temperature[order]
    cuts = np.flatnonzero(np.diff(t) > tolerance) + 1
    groups = []
    for part in np.split(np.arange(t.size), cuts):
        span = float(t[part[-1]] - t[part[0]])
        if span > tolerance:
            raise SweepError(f"temperatures drift over {span:.3g} K ({t[part[0]]:.6g}–{t[part[-1]]:.6g} {unit}) "
                             f"with no step larger than {tolerance:g} K: a ramp, not steps; widen the temperature "
                             "tolerance to read it as one sweep", source)
        groups.append(np.sort(order[part]))
    groups.sort(key=lambda g: int(g[0]))
    return groups


def describe(temperature: np.ndarray, unit: str) -> dict[str, str]:
    """The metadata of one group: mean temperature (in the column's unit) and spread in K."""
    mean = float(np.mean(temperature))
    spread = float(np.max(temperature) - np.min(temperature))
    return {"temperature": f"{mean:.6g} {unit}", "temperature_spread": f"{spread:.3g} K"}
