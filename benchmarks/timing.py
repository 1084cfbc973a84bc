"""Timing shared by the benchmarks: a call repeated, its median, least and greatest wall time."""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable, Sequence
from typing import Any


def row(times: Sequence[float]) -> dict[str, float]:
    """{"median_s", "min_s", "max_s"} of wall times in seconds."""
    return {"median_s": statistics.median(times), "min_s": min(times), "max_s": max(times)}


def timed(fn: Callable[[], Any], repeats: int, *, ignore: tuple[type[BaseException], ...] = ()
          ) -> tuple[dict[str, float], Any]:
    """Call ``fn`` ``repeats`` times; return the :func:`row` of its wall times and its last result.

    Exceptions of the types in ``ignore`` end a call (a refusal being timed) and leave the result None.
    """
    times, out = [], None
    for _ in range(repeats):
        t = time.perf_counter()
        try:
            out = fn()
        except ignore:
            out = None
        times.append(time.perf_counter() - t)
    return row(times), out
