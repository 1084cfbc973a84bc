"""A block's data rows to SI arrays, following its :class:`~tauspec.data.plan.Plan`.

A row with a missing frequency or modulus (empty, ``NaN``, ``-``, ``--``) is left out and its line recorded;
text or an infinite value in a used column is refused with its line.  A block must use one decimal mark in its
used columns.  A Hz column beside the rad/s one must agree with it (ω = 2πf within 0.5 %); the complex-modulus
form becomes G' = |G*| cos δ and G'' = |G*| sin δ (the definition of the complex modulus; Ferry 1980,
*Viscoelastic Properties of Polymers*, 3rd ed., ch. 1).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from ..errors import SweepError
from .blocks import Block
from .cells import MISSING, decimal_mark, digit_grouped, parse_cell
from .columns import Column
from .plan import Plan

__all__ = ["Table", "read_table", "FREQUENCY_AGREEMENT"]

#: Largest relative difference between a rad/s column and 2π times a Hz column beside it (a rounding of the
#: export, not a measurement); common practice, no single source.
FREQUENCY_AGREEMENT = 0.005


@dataclasses.dataclass(frozen=True)
class Table:
    """A block's values in SI (ω in rad/s, moduli in Pa; temperature in the column's own scale, C or K)."""

    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray
    lines: np.ndarray
    temperature: np.ndarray | None
    missing_lines: tuple[int, ...]
    notes: dict[str, str]


def _cell(col: Column, text: str, decimal_comma: bool, source: str, number: int) -> float | None:
    """The cell's number; ``None`` when missing; refuses text and infinities."""
    value = parse_cell(text, decimal_comma=decimal_comma)
    if value is MISSING:
        return None
    if value is None:
        if not decimal_comma and "," in text:
            raise SweepError(f"column {col.label}: value {text[:40]!r} holds a comma in a comma-separated file "
                             "(decimal comma or thousands separator?); separate the columns with ';' or tabs",
                             source, number)
        if digit_grouped(text):
            raise SweepError(f"column {col.label}: value {text[:40]!r} holds both '.' and ',' (a thousands "
                             "separator?); write the numbers without digit grouping", source, number)
        raise SweepError(f"column {col.label}: value {text[:40]!r} is not a number", source, number)
    if not math.isfinite(value):
        raise SweepError(f"column {col.label}: value {text[:40]!r} is not finite", source, number)
    return value


def _values(block: Block, plan: Plan, decimal_comma: bool, source: str):
    """Rows of used values (None where missing), their lines, and the lines of rows left out."""
    used = plan.used
    marks: dict[str, int] = {}
    rows, lines, missing = [], [], []
    for number, fields in block.rows:
        row = []
        for col in used:
            text = fields[col.index]
            value = _cell(col, text, decimal_comma, source, number)
            mark = decimal_mark(text) if value is not None else None
            if mark is not None and mark not in marks:
                marks[mark] = number
                if len(marks) == 2:
                    raise SweepError(f"mixes decimal points (line {marks['.']}) and decimal commas (line "
                                     f"{marks[',']}) in its numbers", source, number)
            row.append(value)
        if any(v is None for v in row[:3]) or (plan.check is not None and row[3] is None):
            missing.append(number)
            continue
        rows.append([math.nan if v is None else v for v in row])  # only a temperature can be None here
        lines.append(number)
    return rows, lines, missing


def _check_frequencies(omega: np.ndarray, hz: np.ndarray, lines: np.ndarray, plan: Plan, source: str) -> None:
    bad = np.flatnonzero(np.abs(hz - omega) > FREQUENCY_AGREEMENT * np.abs(omega))
    if bad.size:
        i = bad[0]
        raise SweepError(f"the frequency columns disagree: {plan.check.label} gives {hz[i]:.6g} rad/s, "
                         f"{plan.frequency.label} {omega[i]:.6g} rad/s (more than 0.5 % apart)",
                         source, int(lines[i]))


def _angle_factor(delta: np.ndarray, plan: Plan, source: str, notes: dict[str, str]) -> float:
    """The phase angle's factor to radians: its unit, or degrees when a value exceeds π; else refused.

    Radians never exceed π (|δ| ≤ π whatever the signs of G' and G''); below it a glitch of a radian file
    (δ > π/2, a negative G') and an elastic solid in degrees (δ of a few degrees) cannot be told apart.
    """
    if plan.second_factor is not None:
        return plan.second_factor
    top = float(np.max(delta)) if delta.size else 0.0
    if top > math.pi:
        notes["phase_angle_unit"] = f"deg (no unit given; values up to {top:.4g} exceed π)"
        return math.pi / 180.0
    raise SweepError(f"column {plan.second.label} has no unit and its values (at most {top:.4g}) could be degrees "
                     f"or radians; write {plan.second.name} [deg] or {plan.second.name} [rad]", source, plan.line)


def read_table(block: Block, plan: Plan, *, delimiter: str, source: str) -> Table:
    """Convert a block's rows to SI arrays (see the module docstring).

    Raises
    ------
    SweepError
        For text, an infinite value or mixed decimal marks in a used column, disagreeing frequency columns,
        and a phase angle whose unit is missing and cannot be told from its values.
    """
    rows, lines, missing = _values(block, plan, delimiter != ",", source)
    notes: dict[str, str] = {}
    if plan.ignored:
        notes["ignored_columns"] = ", ".join(plan.ignored)
    arr = np.array(rows, dtype=float).reshape(-1, len(plan.used))
    line_no = np.array(lines, dtype=int)
    omega = arr[:, 0] * plan.frequency_factor
    first = arr[:, 1] * plan.first_factor
    if plan.check is not None:
        _check_frequencies(omega, arr[:, 3] * plan.check_factor, line_no, plan, source)
    if plan.form == "pair":
        storage, loss = first, arr[:, 2] * plan.second_factor
    else:
        delta = arr[:, 2] * _angle_factor(arr[:, 2], plan, source, notes)
        storage, loss = first * np.cos(delta), first * np.sin(delta)
    temperature = None
    if plan.temperature is not None:
        temperature = arr[:, -1]
        if np.all(np.isnan(temperature)):  # an empty temperature column: as if it were not there
            notes["ignored_columns"] = ", ".join([*plan.ignored, f"{plan.temperature.label} (empty)"])
            temperature = None
        elif np.any(np.isnan(temperature)):
            keep = ~np.isnan(temperature)
            missing = sorted([*missing, *line_no[~keep].tolist()])
            omega, storage, loss, line_no, temperature = (a[keep] for a in (omega, storage, loss, line_no,
                                                                            temperature))
    return Table(omega=omega, storage=storage, loss=loss, lines=line_no, temperature=temperature,
                 missing_lines=tuple(missing), notes=notes)
