"""The one place where units are converted.

Inside tauspec every quantity is SI: angular frequency in rad/s, moduli in Pa,
times in s, viscosity in Pa·s, compliance in 1/Pa, angles in rad, temperature
in K.  Readers convert at the edge with :func:`to_si`.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping

__all__ = ["KIND_UNITS", "normalize_unit", "to_si", "celsius_to_kelvin", "parse_quantity", "temperature_kelvin",
           "density_kg_m3", "molar_mass_g_mol"]


_TWO_PI = 2.0 * math.pi

#: Multiplicative factors to SI, by kind of quantity and normalized unit text.
KIND_UNITS: dict[str, dict[str, float]] = {
    "frequency": {
        "rad/s": 1.0,
        "1/s": 1.0,
        "s-1": 1.0,
        "hz": _TWO_PI,
        "khz": _TWO_PI * 1e3,
    },
    "modulus": {
        "pa": 1.0,
        "mpa": 1e6,  # upper-case MPa; milli-pascal is caught case-sensitively
        "kpa": 1e3,
        "gpa": 1e9,
        "hpa": 1e2,
        "dyn/cm2": 0.1,
        "bar": 1e5,
    },
    "angle": {"deg": math.pi / 180.0, "rad": 1.0},
    "viscosity": {"pa.s": 1.0, "mpa.s": 1e-3, "poise": 0.1, "cp": 1e-3},
}

_ALIASES = {
    "rad/sec": "rad/s",
    "rad.s-1": "rad/s",
    "rads-1": "rad/s",
    "rad/s.": "rad/s",
    "s^-1": "s-1",
    "sec-1": "s-1",
    "1/sec": "1/s",
    "cps": "hz",
    "°": "deg",
    "degree": "deg",
    "degrees": "deg",
    "grad": "deg",
    "radian": "rad",
    "radians": "rad",
    "dyn/cm^2": "dyn/cm2",
    "dyn/cm²": "dyn/cm2",
    "dyne/cm2": "dyn/cm2",
    "pas": "pa.s",
    "pa*s": "pa.s",
    "pa s": "pa.s",
    "pa·s": "pa.s",
    "mpas": "mpa.s",
    "mpa*s": "mpa.s",
    "mpa·s": "mpa.s",
    "p": "poise",
}


# Prefixes where case decides between milli and mega: looked up before lower-casing.
_CASE_SENSITIVE: dict[str, dict[str, float]] = {
    "frequency": {"mHz": _TWO_PI * 1e-3, "MHz": _TWO_PI * 1e6},
    "modulus": {"mPa": 1e-3, "MPa": 1e6},
    "viscosity": {"mPa.s": 1e-3, "mPa s": 1e-3, "mPa·s": 1e-3, "mPas": 1e-3},
}


def normalize_unit(text: str) -> str:
    """Return a canonical spelling of a unit: lower case, no spaces.

    ``"rad s⁻¹"``, ``"rad/sec"`` and ``"Rad/s"`` all become ``"rad/s"``.
    """
    t = text.strip().replace("⁻¹", "-1").replace("⁻", "-").replace("²", "2").lower()
    if t in _ALIASES:
        return _ALIASES[t]
    compact = re.sub(r"\s+", "", t)
    return _ALIASES.get(compact, compact)


def to_si(kind: str, unit: str | None) -> float:
    """Return the factor that converts a value in ``unit`` to SI.

    Parameters
    ----------
    kind : {"frequency", "modulus", "angle", "viscosity"}
    unit : str or None
        The unit as written; ``None`` or ``""`` means the SI unit of the kind.

    Raises
    ------
    KeyError
        When the unit is not known for that kind.
    """
    if unit is None or unit.strip() == "":
        return 1.0
    exact = _CASE_SENSITIVE.get(kind, {})
    if unit.strip() in exact:
        return exact[unit.strip()]
    return KIND_UNITS[kind][normalize_unit(unit)]


def celsius_to_kelvin(value: float) -> float:
    """Convert a temperature in °C to K."""
    return value + 273.15


_NUMBER_UNIT = re.compile(r"^\s*([-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


def parse_quantity(text: str) -> tuple[float, str]:
    """Split ``"130 C"`` or ``"2,5e4 g/mol"`` into ``(130.0, "C")``.

    Raises
    ------
    ValueError
        When the text does not start with a number.
    """
    m = _NUMBER_UNIT.match(text)
    if not m:
        raise ValueError(f"not a number with a unit: {text!r}")
    return float(m.group(1).replace(",", ".")), m.group(2)


def temperature_kelvin(text: str) -> float:
    """Return a temperature written as ``"130"``, ``"130 C"``, ``"130 °C"`` or ``"403.15 K"`` in kelvin.

    A bare number is °C (the laboratory convention for rheometer sweeps).

    Raises
    ------
    ValueError
        When the text is not a number or the unit is not C or K.
    """
    value, unit = parse_quantity(text)
    u = unit.strip().lstrip("°").upper()
    if u in ("", "C"):
        return celsius_to_kelvin(value)
    if u == "K":
        return value
    raise ValueError(f"temperature unit {unit!r} not understood (use C or K)")


_DENSITY = {"kg/m3": 1.0, "kg/m^3": 1.0, "kg/m³": 1.0, "g/cm3": 1e3, "g/cm^3": 1e3, "g/cm³": 1e3, "g/ml": 1e3,
            "g/cc": 1e3, "kg/l": 1e3, "g/l": 1.0}
_MOLAR_MASS = {"g/mol": 1.0, "da": 1.0, "kg/mol": 1e3, "kda": 1e3, "mg/mol": 1e-3}


def _with_unit(text: str, table: Mapping[str, float], what: str, units: str) -> tuple[float, bool]:
    """(value converted by the table, whether a unit was given); a unit not in the table is refused."""
    value, unit = parse_quantity(text)
    u = unit.strip().lower().replace(" ", "")
    if not u:
        return value, False
    if u not in table:
        raise ValueError(f"metadata {what}: unknown unit {unit!r} (use {units})")
    return value * table[u], True


def density_kg_m3(text: str) -> float:
    """A density in kg/m³ from metadata text such as ``"0.92 g/cm3"`` or ``"920 kg/m3"``.

    Without a unit the magnitude decides, since polymer densities (0.8–2.2 g/cm³) leave no overlap:
    0.3–5 is read as g/cm³, 300–5000 as kg/m³; anything else without a unit is refused.

    Raises
    ------
    ValueError
        When the text is not a positive number with a known unit (or a unitless value in those ranges).
    """
    value, given = _with_unit(text, _DENSITY, "density", "g/cm3 or kg/m3")
    if not given:
        if 0.3 <= value <= 5:
            value *= 1e3
        elif not 300 <= value <= 5000:
            raise ValueError(f"metadata density {text!r}: give a unit (g/cm3 or kg/m3)")
    if not (value > 0 and math.isfinite(value)):
        raise ValueError(f"metadata density {text!r} is not a positive number")
    return value


def molar_mass_g_mol(text: str) -> float:
    """A molecular weight in g/mol (the unit of the trade) from text such as ``"100 kg/mol"``; no unit: g/mol.

    Raises
    ------
    ValueError
        When the text is not a positive number with a known unit.
    """
    value, _ = _with_unit(text, _MOLAR_MASS, "molecular_weight", "g/mol or kg/mol")
    if not (value > 0 and math.isfinite(value)):
        raise ValueError(f"metadata molecular_weight {text!r} is not a positive number")
    return value
