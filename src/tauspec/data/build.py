"""One sweep's SI columns to a validated :class:`~tauspec.data.sweep.Sweep`: sorted, cleaned, checked.

Points with a missing value (left out by the table) and points with a non-positive modulus are dropped with one
:class:`~tauspec.errors.DroppedPointsWarning` listing their lines; too few remaining points, a non-positive or
repeated frequency, and values outside the computable range are refused with their line.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable, Mapping

import numpy as np

from ..errors import DroppedPointsWarning, SweepError
from ..rounding import counted
from .sweep import MIN_POINTS, MODULUS_RANGE, OMEGA_RANGE, Sweep

__all__ = ["build_sweep", "line_ranges"]


def line_ranges(numbers: Iterable[int]) -> str:
    """``[3, 4, 5, 9]`` → ``"3-5, 9"``."""
    parts: list[str] = []
    start = prev = None
    for n in sorted(numbers):
        if start is None:
            start = prev = n
        elif n == prev + 1:
            prev = n
        else:
            parts.append(f"{start}" if start == prev else f"{start}-{prev}")
            start = prev = n
    if start is not None:
        parts.append(f"{start}" if start == prev else f"{start}-{prev}")
    return ", ".join(parts)


def _check_range(values: np.ndarray, bounds: tuple[float, float], what: str, unit: str, line_no: np.ndarray,
                 source: str) -> None:
    """Refuse the first value outside ``bounds`` (wrong units, a glitch, or beyond what float64 computes with)."""
    bad = np.flatnonzero((values < bounds[0]) | (values > bounds[1]))
    if bad.size:
        raise SweepError(
            f"{what} = {values[bad[0]]:g} {unit} lies outside {bounds[0]:g}–{bounds[1]:g} {unit}, the range tauspec "
            "computes with (wrong units or an instrument glitch?)",
            source,
            int(line_no[bad[0]]),
        )


def _sorted_checked(omega, storage, loss, line_no, source):
    bad_w = np.flatnonzero(omega <= 0)
    if bad_w.size:
        raise SweepError(f"frequency must be positive (value {omega[bad_w[0]]:g})", source, int(line_no[bad_w[0]]))
    _check_range(omega, OMEGA_RANGE, "frequency", "rad/s", line_no, source)
    order = np.argsort(omega, kind="stable")
    omega, storage, loss, line_no = omega[order], storage[order], loss[order], line_no[order]
    dup = np.flatnonzero(np.diff(omega) <= 0)
    if dup.size:
        i = dup[0]
        a, b = sorted((int(line_no[i]), int(line_no[i + 1])))
        raise SweepError(f"duplicate frequency {omega[i]:g} rad/s (lines {a} and {b})", source, b)
    return omega, storage, loss, line_no


def build_sweep(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, line_no: np.ndarray, *,
                missing_lines: Iterable[int] = (), meta: Mapping[str, str], source: str, name: str) -> Sweep:
    """Validate, sort and clean one sweep's SI columns and make the Sweep (see the module docstring)."""
    missing = list(missing_lines)
    omega, storage, loss, line_no = _sorted_checked(omega, storage, loss, line_no, source)
    keep = (storage > 0) & (loss > 0)
    negative = line_no[~keep].tolist()
    meta = dict(meta)
    if negative or missing:
        reasons = "; ".join(text for text in (
            f"a missing value at lines {line_ranges(missing)}" if missing else "",
            f"a non-positive modulus at lines {line_ranges(negative)}" if negative else "") if text)
        if keep.sum() < MIN_POINTS:
            n = int(keep.sum())
            raise SweepError(f"only {counted(n, 'point')} {'has' if n == 1 else 'have'} positive G' and G'' (at least "
                             f"{MIN_POINTS} needed); {reasons}", source)
        warnings.warn(f"{source}: dropped {len(negative) + len(missing)} point(s): {reasons}", DroppedPointsWarning,
                      stacklevel=5)
        meta["dropped_lines"] = line_ranges(negative + missing)
        omega, storage, loss, line_no = omega[keep], storage[keep], loss[keep], line_no[keep]
    if len(omega) < MIN_POINTS:
        points = "1 data point" if len(omega) == 1 else f"{len(omega)} data points"
        raise SweepError(f"{points}; at least {MIN_POINTS} are needed", source)
    _check_range(storage, MODULUS_RANGE, "G'", "Pa", line_no, source)
    _check_range(loss, MODULUS_RANGE, "G''", "Pa", line_no, source)
    return Sweep(omega=omega, storage=storage, loss=loss, name=name, meta=meta, source=source)
