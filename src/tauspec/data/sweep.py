"""The :class:`Sweep`: one small-amplitude oscillatory shear frequency sweep in SI units."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from types import MappingProxyType
from typing import Any

import numpy as np

from ..errors import SettingsError, SweepError
from .record import field, option, record
from .units import parse_quantity, temperature_kelvin

__all__ = ["Sweep", "MIN_POINTS", "OMEGA_RANGE", "MODULUS_RANGE", "check_frequency_range", "frequency_range_option",
           "set_frequency_range"]


#: Fewest usable points a sweep must have (common practice: an inversion with
#: fewer points than a handful per decade is not meaningful).
MIN_POINTS = 6
#: Values outside these ranges (SI) are refused: far beyond any rheometer (so most likely wrong units or a
#: glitch), and near the ends of float64 where 1/ω, ω² or G'/G'' overflow or lose all precision.
#: The bounds are ours (common practice, no single source), wide enough for 1e-6–1e8 rad/s and 1e-3–1e10 Pa.
OMEGA_RANGE = (1e-12, 1e12)
MODULUS_RANGE = (1e-20, 1e20)


def _frozen_array(values: Any, name: str, source: str) -> np.ndarray:
    try:
        arr = np.array(values, dtype=float, copy=True).reshape(-1)
    except (TypeError, ValueError) as exc:
        raise SweepError(f"{name} is not a list of numbers ({exc})", source) from None
    arr.setflags(write=False)
    return arr


@record
class Sweep:
    """A frequency sweep: storage and loss moduli against angular frequency.

    All arrays are SI: ``omega`` in rad/s, ``storage`` (G') and ``loss`` (G'')
    in Pa.  Construction validates: the three arrays have equal length, every
    value is finite, ω > 0, ω strictly increasing (no duplicates), moduli
    positive, and at least :data:`MIN_POINTS` points.  Readers sort and drop
    non-positive points before building a Sweep; the constructor refuses them.

    Parameters
    ----------
    omega, storage, loss : array_like
        Angular frequency (rad/s), storage modulus G' (Pa), loss modulus G'' (Pa).
    name : str
        Sample name (from ``# sample:`` metadata or the file name).
    meta : mapping of str to str
        Metadata from the file (``Key: value`` and ``# key: value`` lines above the table, a block's title,
        the temperature column's mean and spread, ignored columns), keys lower case with underscores.
    source : str
        Where the sweep came from (a path), used in error messages.
    """

    name: str = field(key="sample", default="sample")
    source: str = ""
    meta: Mapping[str, str] = field(default_factory=dict)
    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray

    def __post_init__(self) -> None:
        src = self.source or self.name
        arrays = {}
        for q in ("omega", "storage", "loss"):
            arrays[q] = _frozen_array(getattr(self, q), q, src)
            object.__setattr__(self, q, arrays[q])
        object.__setattr__(self, "meta", MappingProxyType(dict(self.meta)))
        problems = []
        n = {len(a) for a in arrays.values()}
        if len(n) != 1:
            raise SweepError("omega, storage and loss have different lengths", src)
        for q, arr in arrays.items():
            if not np.all(np.isfinite(arr)):
                problems.append(f"{q} has non-finite values")
        if not problems:
            if np.any(arrays["omega"] <= 0):
                problems.append("frequencies must be positive")
            if np.any(np.diff(arrays["omega"]) <= 0):
                problems.append("frequencies must be strictly increasing (sorted, no duplicates)")
            if np.any(arrays["storage"] <= 0) or np.any(arrays["loss"] <= 0):
                problems.append("moduli must be positive")
        if not problems:
            for q, (lo, hi), unit in (("omega", OMEGA_RANGE, "rad/s"), ("storage", MODULUS_RANGE, "Pa"),
                                          ("loss", MODULUS_RANGE, "Pa")):
                if np.any((arrays[q] < lo) | (arrays[q] > hi)):
                    problems.append(f"{q} has values outside {lo:g}–{hi:g} {unit}, the range tauspec computes with")
        if len(arrays["omega"]) < MIN_POINTS:
            problems.append(f"{len(arrays['omega'])} points; at least {MIN_POINTS} are needed")
        if problems:
            raise SweepError("; ".join(problems), src)

    def __len__(self) -> int:
        return len(self.omega)

    @property
    def decades(self) -> float:
        """Width of the frequency range in decades, log10(ω_max/ω_min)."""
        return float(math.log10(self.omega[-1] / self.omega[0]))

    def restrict(self, omega_min: float | None = None, omega_max: float | None = None) -> tuple[Sweep, str | None]:
        """The points with ω_min ≤ ω ≤ ω_max (rad/s; None leaves that end open) and a note of what was dropped.

        Returns the sweep itself and None when nothing lies outside.  Points at the ends of a sweep are often
        spoiled by instrument inertia (high ω) or torque resolution (low ω); dropping them is the user's call.

        Raises
        ------
        SweepError
            When fewer than :data:`MIN_POINTS` points remain.
        """
        lo = -math.inf if omega_min is None else float(omega_min)
        hi = math.inf if omega_max is None else float(omega_max)
        keep = (self.omega >= lo) & (self.omega <= hi)
        if keep.all():
            return self, None
        n_keep = int(keep.sum())
        if omega_min is None:
            outside = f"above ω = {hi:g} rad/s"
        elif omega_max is None:
            outside = f"below ω = {lo:g} rad/s"
        else:
            outside = f"outside ω = {lo:g}–{hi:g} rad/s"
        if n_keep < MIN_POINTS:
            left = f"only {n_keep} point is" if n_keep == 1 else f"only {n_keep} points are"
            raise SweepError(f"{left} left when those {outside} are left out; at least {MIN_POINTS} are needed",
                             self.source or self.name)
        note = f"{len(self) - n_keep} of {len(self)} points {outside} were left out (omega_min/omega_max)"
        return self.replace(omega=self.omega[keep], storage=self.storage[keep], loss=self.loss[keep]), note

    def replace(self, **changes: Any) -> Sweep:
        """Return a copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    def meta_number(self, key: str, kind: str | None = None) -> float | None:
        """Return a numeric metadata value, or ``None`` when absent.

        ``kind="temperature"`` converts °C (the default when no unit is
        given) or K to kelvin.

        Raises
        ------
        SweepError
            When the value is present but not a number.
        """
        text = self.meta.get(key)
        if text is None:
            return None
        try:
            value, unit = parse_quantity(text)
        except ValueError:
            raise SweepError(f"metadata {key!r} is not a number: {text!r}", self.source or self.name) from None
        if kind == "temperature":
            try:
                return temperature_kelvin(text)
            except ValueError as exc:
                raise SweepError(str(exc), self.source or self.name) from None
        return value


def check_frequency_range(omega_min: Any, omega_max: Any) -> tuple[float | None, float | None]:
    """Validate an optional frequency range (rad/s) of an options record; return it as floats.

    Raises
    ------
    SettingsError
        For a value that is not a positive number, or ``omega_min`` not below ``omega_max``.
    """
    out = []
    for name, v in (("omega_min", omega_min), ("omega_max", omega_max)):
        if v is None:
            out.append(None)
            continue
        if isinstance(v, bool) or not isinstance(v, int | float | np.integer | np.floating) or not (
                math.isfinite(float(v)) and float(v) > 0):
            raise SettingsError(f"{name} must be a positive angular frequency in rad/s, not {v!r}")
        out.append(float(v))
    if out[0] is not None and out[1] is not None and not out[0] < out[1]:
        raise SettingsError(f"omega_min must be below omega_max, not {out[0]:g} ≥ {out[1]:g}")
    return out[0], out[1]


def frequency_range_option(end: str, *, cli: bool = True) -> Any:
    """The ``omega_min`` (``end="min"``) or ``omega_max`` field of an options record, as the command line offers it."""
    if end == "min":
        return option(None, metavar="RAD_S", cli=cli, help="leave out the points below this angular frequency (rad/s)")
    return option(None, metavar="RAD_S", cli=cli, help="leave out the points above this angular frequency (rad/s), "
                                                       "e.g. those spoiled by instrument inertia")


def set_frequency_range(record: Any) -> None:
    """Validate the ``omega_min``/``omega_max`` fields of a frozen options record and store them as floats."""
    lo, hi = check_frequency_range(record.omega_min, record.omega_max)
    object.__setattr__(record, "omega_min", lo)
    object.__setattr__(record, "omega_max", hi)
