"""The one place where units are converted.

Inside tauspec every quantity is SI: angular frequency in rad/s, moduli in Pa,
times in s, viscosity in Pa·s, compliance in 1/Pa, angles in rad, temperature
in K.  Readers convert at the edge with :func:`to_si`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

__all__ = [
    "KIND_UNITS",
    "AmbiguousUnitError",
    "normalize_unit",
    "to_si",
    "unit_kind",
    "celsius_to_kelvin",
    "parse_quantity",
    "temperature_kelvin",
    "temperature_scale",
    "number_end",
    "density_kg_m3",
    "molar_mass_g_mol",
    "molar_mass",
    "concentration",
]

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
        "kpa": 1e3,
        "gpa": 1e9,
        "hpa": 1e2,
        "dyn/cm2": 0.1,
        "n/m2": 1.0,
        "n/mm2": 1e6,
        "bar": 1e5,
        # the pound-force per square inch: 0.45359237 kg × 9.80665 m/s² / (0.0254 m)² (NIST SP 811, from memory)
        "psi": 0.45359237 * 9.80665 / 0.0254**2,
    },
    "angle": {"deg": math.pi / 180.0, "rad": 1.0, "mrad": 1e-3},
    "viscosity": {"pa.s": 1.0, "poise": 0.1, "cp": 1e-3},
    "time": {"s": 1.0, "ms": 1e-3, "min": 60.0, "h": 3600.0},
}

_ALIASES = {
    "rad/sec": "rad/s",
    "rad.s-1": "rad/s",
    "rads-1": "rad/s",
    "rads^-1": "rad/s",
    "rad/s.": "rad/s",
    "rad·s-1": "rad/s",
    "rad*s-1": "rad/s",
    "rad/s^1": "rad/s",
    "rad.s^-1": "rad/s",
    "rad·s^-1": "rad/s",
    "s^-1": "s-1",
    "sec-1": "s-1",
    "sec^-1": "s-1",
    "1/sec": "1/s",
    "cps": "hz",
    "°": "deg",
    "º": "deg",  # the masculine ordinal, typed for a degree sign on many keyboards
    "degree": "deg",
    "degrees": "deg",
    "radian": "rad",
    "radians": "rad",
    "dyn/cm^2": "dyn/cm2",
    "dyne/cm2": "dyn/cm2",
    "dyne/cm^2": "dyn/cm2",
    "n/m^2": "n/m2",
    "n/mm^2": "n/mm2",
    "lbf/in2": "psi",
    "lbf/in^2": "psi",
    "pas": "pa.s",
    "pa*s": "pa.s",
    "pa·s": "pa.s",
    "pa∙s": "pa.s",
    "sec": "s",
    "secs": "s",
    "seconds": "s",
    "second": "s",
}


# Prefixes where case decides between milli and mega: looked up before lower-casing.  Any other spelling of
# these prefixes (``mpa``, ``mPA``, ``mhz``) is ambiguous and refused (AmbiguousUnitError).
_CASE_SENSITIVE: dict[str, dict[str, float]] = {
    "frequency": {"mHz": _TWO_PI * 1e-3, "MHz": _TWO_PI * 1e6, "MHZ": _TWO_PI * 1e6},
    "modulus": {"mPa": 1e-3, "MPa": 1e6, "MPA": 1e6, "Mpa": 1e6},
    "viscosity": {"mPa.s": 1e-3, "mPa s": 1e-3, "mPa·s": 1e-3, "mPas": 1e-3, "mPa*s": 1e-3, "mPa∙s": 1e-3},
}


class AmbiguousUnitError(KeyError):
    """A unit whose spelling does not say which of two units it is (``mpa``: milli- or megapascal?)."""


def normalize_unit(text: str) -> str:
    """Return a canonical spelling of a unit: lower case, no spaces.

    ``"rad s⁻¹"``, ``"rad/sec"`` and ``"Rad/s"`` all become ``"rad/s"``; ``"N/m²"`` becomes ``"n/m2"``.
    """
    t = text.strip().replace("⁻¹", "-1").replace("⁻", "-").replace("²", "2").replace("¹", "1").lower()
    if t in _ALIASES:
        return _ALIASES[t]
    compact = "".join(t.split())
    return _ALIASES.get(compact, compact)


def to_si(kind: str, unit: str | None) -> float:
    """Return the factor that converts a value in ``unit`` to SI.

    Parameters
    ----------
    kind : {"frequency", "modulus", "angle", "viscosity", "time"}
    unit : str or None
        The unit as written; ``None`` or ``""`` means the SI unit of the kind.

    Raises
    ------
    AmbiguousUnitError
        When the spelling leaves milli or mega open (``mpa``, ``mhz``).
    KeyError
        When the unit is not known for that kind.
    """
    if unit is None or unit.strip() == "":
        return 1.0
    text = unit.strip()
    exact = _CASE_SENSITIVE.get(kind, {})
    if text in exact:
        return exact[text]
    key = normalize_unit(text)
    if key in KIND_UNITS[kind]:
        return KIND_UNITS[kind][key]
    if any(normalize_unit(spelled) == key for spelled in exact):
        raise AmbiguousUnitError(text)
    raise KeyError(text)


def unit_kind(unit: str) -> str | None:
    """Return the kind of quantity ``unit`` measures (``"frequency"``, ``"modulus"`` ...), or ``None``.

    Temperature units give ``"temperature"``; a spelling ambiguous between milli and mega still names its kind.
    """
    if temperature_scale(unit) is not None:
        return "temperature"
    for kind in KIND_UNITS:
        try:
            to_si(kind, unit)
        except AmbiguousUnitError:
            return kind
        except KeyError:
            continue
        return kind
    return None


_CELSIUS = {"c", "°c", "℃", "degc", "deg c", "deg.c", "celsius", "oc", "ºc"}
_KELVIN = {"k", "°k", "kelvin"}


def temperature_scale(unit: str | None) -> str | None:
    """Return ``"C"`` or ``"K"`` for a temperature unit as written (``°C``, ``℃``, ``degC``, ``K``), else ``None``."""
    if unit is None:
        return None
    t = " ".join(unit.strip().lower().split())
    if t in _CELSIUS or t.replace(" ", "") in _CELSIUS:
        return "C"
    if t in _KELVIN:
        return "K"
    return None


def celsius_to_kelvin(value: float) -> float:
    """Convert a temperature in °C to K."""
    return value + 273.15


def number_end(text: str, start: int) -> int:
    """End of the decimal number (sign, digits, one ``.`` or ``,``, exponent) that starts at ``start``; one pass."""
    i, n = start, len(text)
    if i < n and text[i] in "+-":
        i += 1
    digits_from = i
    while i < n and text[i].isascii() and text[i].isdigit():
        i += 1
    whole = i - digits_from
    frac = 0
    if i < n and text[i] in ".,":
        j = i + 1
        while j < n and text[j].isascii() and text[j].isdigit():
            j += 1
        frac = j - i - 1
        if whole or frac:
            i = j
    if not (whole or frac):
        return start
    if i < n and text[i] in "eE":
        j = i + 1
        if j < n and text[j] in "+-":
            j += 1
        k = j
        while k < n and text[k].isascii() and text[k].isdigit():
            k += 1
        if k > j:
            i = k
    return i


def parse_quantity(text: str) -> tuple[float, str]:
    """Split ``"130 C"`` or ``"2,5e4 g/mol"`` into ``(130.0, "C")``.

    Linear in the length of ``text`` (no backtracking).

    Raises
    ------
    ValueError
        When the text does not start with a number.
    """
    body = text.strip()
    end = number_end(body, 0)
    if end == 0:
        raise ValueError(f"not a number with a unit: {text[:60]!r}")
    return float(body[:end].replace(",", ".")), body[end:].strip()


def temperature_kelvin(text: str) -> float:
    """Return a temperature written as ``"130"``, ``"130 C"``, ``"130 °C"`` or ``"403.15 K"`` in kelvin.

    A bare number is °C (the laboratory convention for rheometer sweeps).

    Raises
    ------
    ValueError
        When the text is not a number or the unit is not C or K.
    """
    value, unit = parse_quantity(text)
    scale = "C" if unit.strip() == "" else temperature_scale(unit)
    if scale == "C":
        return celsius_to_kelvin(value)
    if scale == "K":
        return value
    raise ValueError(f"temperature unit {unit!r} not understood (use C or K)")


_DENSITY = {"kg/m3": 1.0, "g/cm3": 1e3, "g/ml": 1e3, "g/cc": 1e3, "kg/l": 1e3, "g/l": 1.0}
_MOLAR_MASS = {"g/mol": 1.0, "da": 1.0, "kg/mol": 1e3, "kda": 1e3}
#: Molecular-weight units where case decides between milli and mega (as for the moduli): the mega ones are read,
#: any other spelling of them is refused (a milligram per mole is no polymer's molecular weight).
_MOLAR_MASS_CASED = {"Mg/mol": 1e6, "MDa": 1e6}
#: Mass concentrations, to kg/m³ (= g/L = mg/mL).
_MASS_CONCENTRATION = {"kg/m3": 1.0, "g/l": 1.0, "mg/ml": 1.0, "g/ml": 1e3, "g/cm3": 1e3, "g/dl": 10.0,
                       "mg/l": 1e-3, "µg/ml": 1e-3, "ug/ml": 1e-3}
#: Mass fractions, to a fraction.
_MASS_FRACTION = {"%": 1e-2, "wt%": 1e-2, "wt.%": 1e-2, "w%": 1e-2, "%w/w": 1e-2, "w/w%": 1e-2, "ppm": 1e-6}
_CONCENTRATION = {**_MASS_CONCENTRATION, **_MASS_FRACTION}


def _with_unit(text: str, table: Mapping[str, float], what: str, units: str,
               cased: Mapping[str, float] | None = None) -> tuple[float, str]:
    """(value converted by the table, the unit's key in it or "" when none is written); other units are refused.

    Keys are lower case without blanks (``³`` and ``^3`` written ``3``).  ``cased`` holds the spellings where
    case decides between milli and mega, as :func:`to_si` does for the moduli: written exactly they are read,
    any other spelling of them is refused as ambiguous.
    """
    value, unit = parse_quantity(text)
    compact = unit.replace(" ", "")
    if cased and compact in cased:
        return value * cased[compact], compact
    key = compact.lower().replace("³", "3").replace("^3", "3")
    if cased and any(key == spelled.lower() for spelled in cased):
        raise ValueError(f"metadata {what} {text!r}: {unit!r} is ambiguous (milli or mega?); write {units}")
    if key and key not in table:
        raise ValueError(f"metadata {what}: unknown unit {unit!r} (use {units})")
    return value * table.get(key, 1.0), key


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
    return molar_mass(text)[0]


def molar_mass(text: str) -> tuple[float, bool]:
    """A molecular weight in g/mol from metadata text, and whether a unit was written (without one: g/mol).

    g/mol, Da, kg/mol, kDa, Mg/mol and MDa; ``mg/mol`` and ``mDa`` are refused (milli or mega?).

    Raises
    ------
    ValueError
        When the text is not a positive number with a known unit.
    """
    value, key = _with_unit(text, _MOLAR_MASS, "molecular_weight", "g/mol, kg/mol or Mg/mol", _MOLAR_MASS_CASED)
    if not (value > 0 and math.isfinite(value)):
        raise ValueError(f"metadata molecular_weight {text!r} is not a positive number")
    return value, bool(key)


def concentration(text: str) -> tuple[float, str]:
    """A concentration from metadata text, and its kind.

    Returns a mass concentration in kg/m³ (g/mL, mg/mL, g/L, g/dL, kg/m³ …) with the kind
    ``"mass concentration"``, a mass fraction (wt%, %, ppm) as a fraction with ``"mass fraction"``, or the
    number as written with ``""`` when no unit is given.  The two kinds do not convert into each other
    without the solution's density.

    Raises
    ------
    ValueError
        When the text is not a positive number with a known unit.
    """
    value, key = _with_unit(text, _CONCENTRATION, "concentration", "g/mL, mg/mL, g/L, kg/m3 or wt%")
    if not (value > 0 and math.isfinite(value)):
        raise ValueError(f"metadata concentration {text!r} is not a positive number")
    return value, ("mass fraction" if key in _MASS_FRACTION else "mass concentration") if key else ""
