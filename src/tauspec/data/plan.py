"""Which columns of a header make the sweep, and the factors that bring them to SI.

The plan is decided from the header (and units row) alone, before any number is read: one frequency column
(rad/s preferred; a Hz column beside it is kept to check against), either G' and G'' or |G*| and the phase
angle δ, and at most one temperature column.  Everything else is listed as ignored.  Every problem is a
:class:`~tauspec.errors.SweepError` naming the header line.
"""

from __future__ import annotations

import dataclasses

from ..errors import SweepError
from .columns import EXPECTED_HEADER, Column
from .units import AmbiguousUnitError, normalize_unit, temperature_scale, to_si

__all__ = ["Plan", "make_plan"]

@dataclasses.dataclass(frozen=True)
class Plan:
    """The columns a block's values are read from, with their factors to SI.

    ``form`` is ``"pair"`` (``first`` = G', ``second`` = G'') or ``"polar"`` (``first`` = |G*|, ``second`` =
    δ).  ``second_factor`` is ``None`` for a phase angle without a unit (decided from its values, or refused).
    ``check`` is a second frequency column (Hz beside rad/s) that must agree with ``frequency``.
    """

    frequency: Column
    frequency_factor: float
    first: Column
    first_factor: float
    second: Column
    second_factor: float | None
    form: str
    check: Column | None = None
    check_factor: float = 1.0
    temperature: Column | None = None
    temperature_scale: str = "C"
    ignored: tuple[str, ...] = ()
    line: int | None = None

    @property
    def used(self) -> tuple[Column, ...]:
        """The columns whose cells are read, frequency first."""
        cols = [self.frequency, self.first, self.second]
        cols += [c for c in (self.check, self.temperature) if c is not None]
        return tuple(cols)


def _no_conflict(col: Column, source: str, line: int) -> None:
    if col.unit_below is not None:
        raise SweepError(f"column {col.label} says {col.unit} but the units row below says {col.unit_below}",
                         source, line)


def _factor(col: Column, kind: str, source: str, line: int) -> float:
    _no_conflict(col, source, line)
    try:
        return to_si(kind, col.unit)
    except AmbiguousUnitError:
        raise SweepError(f"unit {col.unit!r} of column {col.label} is ambiguous: write mPa or MPa (mHz or MHz)",
                         source, line) from None
    except KeyError:
        raise SweepError(f"unit {col.unit!r} of column {col.label} is not a {kind} unit tauspec knows",
                         source, line) from None


def _frequency_columns(cols: list[Column], source: str, line: int) -> tuple[list, list]:
    """Angular (rad/s) and cyclic (Hz) frequency columns, each as (column, factor to rad/s)."""
    angular, cyclic = [], []
    for col in cols:
        if col.role not in ("omega", "frequency"):
            continue
        if col.unit is None and col.unit_below is None:
            if col.role == "frequency":
                raise SweepError(f"column {col.label} has no unit: write {col.name} [rad/s] or {col.name} [Hz]",
                                 source, line)
            angular.append((col, 1.0))
            continue
        factor = _factor(col, "frequency", source, line)
        per_second = factor == 1.0 and normalize_unit(col.unit or "") != "rad/s"
        if factor != 1.0 and col.role == "omega":
            raise SweepError(f"column {col.label} is an angular frequency but its unit is {col.unit}; write rad/s, "
                             "or name it frequency", source, line)
        if per_second and col.role == "frequency":
            raise SweepError(f"column {col.label}: {col.unit} after a frequency could be rad/s or Hz; write "
                             f"{col.name} [rad/s] or {col.name} [Hz]", source, line)
        (angular if factor == 1.0 else cyclic).append((col, factor))
    for found, what in ((angular, "angular frequency (rad/s)"), (cyclic, "frequency (Hz)")):
        if len(found) > 1:
            raise SweepError(f"two columns are the {what} column: {found[0][0].label} and {found[1][0].label}",
                             source, line)
    return angular, cyclic


def _one(cols: list[Column], role: str, source: str, line: int) -> Column | None:
    found = [c for c in cols if c.role == role]
    if len(found) > 1:
        raise SweepError(f"two columns are the {role} column: {found[0].label} and {found[1].label}", source, line)
    return found[0] if found else None


def make_plan(cols: list[Column], source: str, line: int) -> Plan:
    """Decide which columns make the sweep (see the module docstring).

    Raises
    ------
    SweepError
        For a missing or doubled column, a missing or unknown unit, or a contradiction, naming ``line``.
    """
    angular, cyclic = _frequency_columns(cols, source, line)
    if not angular and not cyclic:
        raise SweepError(f"header names no frequency column; expected e.g. {EXPECTED_HEADER}", source, line)
    freq, freq_factor = angular[0] if angular else cyclic[0]
    check, check_factor = cyclic[0] if angular and cyclic else (None, 1.0)
    found = {role: _one(cols, role, source, line) for role in ("storage", "loss", "gstar", "delta", "temperature")}
    if found["storage"] is not None and found["loss"] is not None:
        form, first, second = "pair", found["storage"], found["loss"]
        first_factor = _factor(first, "modulus", source, line)
        second_factor: float | None = _factor(second, "modulus", source, line)
    elif found["gstar"] is not None and found["delta"] is not None:
        form, first, second = "polar", found["gstar"], found["delta"]
        first_factor = _factor(first, "modulus", source, line)
        second_factor = None if second.unit is None and second.unit_below is None else _factor(
            second, "angle", source, line)
    else:
        missing = [label for key, label in (("storage", "G'"), ("loss", "G''")) if found[key] is None]
        raise SweepError(f"header names no {' or '.join(missing)} column (nor |G*| with phase angle); "
                         f"expected e.g. {EXPECTED_HEADER}", source, line)
    temp, scale = found["temperature"], "C"
    if temp is not None:
        _no_conflict(temp, source, line)
        scale = "C" if temp.unit is None else temperature_scale(temp.unit) or ""
        if not scale:
            raise SweepError(f"temperature unit {temp.unit!r} of column {temp.label} not understood (use C or K)",
                             source, line)
    plan = Plan(frequency=freq, frequency_factor=freq_factor, first=first, first_factor=first_factor, second=second,
                second_factor=second_factor, form=form, check=check, check_factor=check_factor, temperature=temp,
                temperature_scale=scale, line=line)
    used = {c.index for c in plan.used}
    ignored = tuple(c.label for c in cols if c.index not in used and c.label)
    return dataclasses.replace(plan, ignored=ignored)
