"""Header fields: the column's name, its unit, and its role (frequency, G', G'', |G*|, δ, temperature, time).

A unit is written after the name in ``(...)`` or ``[...]``, as ``... in kPa``, as a quantity divided by its
unit (``G'/kPa``, ``ω/rad s⁻¹``: the table headings of ISO 80000-1 and the IUPAC Green Book, Cohen et al.
2007, §1.4), or in a units row under the header.
Every step here is a fixed number of passes over the field (``rfind``, ``split``, set look-ups): no
regular expression runs over header text, so the time is linear in the field's length whatever it holds.
"""

from __future__ import annotations

import dataclasses

from .units import unit_kind

__all__ = ["Column", "split_unit", "strip_brackets", "normalize_name", "role_of", "columns_of", "is_header",
           "EXPECTED_HEADER", "MAX_COLUMNS"]

EXPECTED_HEADER = "omega [rad/s], G' [Pa], G'' [Pa] (or f [Hz]; or |G*| and phase angle δ [deg])"

# Column roles by normalized name (lower case, primes unified, single spaces).
_ROLE_NAMES: dict[str, tuple[str, ...]] = {
    "omega": ("omega", "ω", "w", "angular frequency", "ang. frequency", "ang frequency", "angular freq.",
              "angular freq", "ang. freq.", "circular frequency", "radian frequency", "omega_rad"),
    "frequency": ("f", "freq", "freq.", "frequency", "nu", "ν", "oscillation frequency", "osc. frequency"),
    "storage": ("g'", "gp", "g_p", "gprime", "g_prime", "g1", "g 1", "storage modulus", "storage",
                "elastic modulus", "shear storage modulus"),
    "loss": ("g''", "gpp", "g_pp", "gdprime", "g_dprime", "gdoubleprime", "g_double_prime", "g2", "g 2",
             "loss modulus", "loss", "viscous modulus", "shear loss modulus"),
    "gstar": ("|g*|", "g*", "|g|", "gstar", "g_star", "complex modulus", "|complex modulus|",
              "complex shear modulus", "magnitude of complex modulus"),
    "delta": ("δ", "delta", "phase angle", "phase", "phase shift", "phase shift angle", "loss angle", "phase lag"),
    "temperature": ("temp", "temp.", "temperature", "sample temperature", "temperature of sample"),
    "time": ("time", "step time", "interval time", "measuring time", "measurement time", "elapsed time",
             "total time", "test time", "time of measurement", "running time"),
}
_NAME_TO_ROLE = {name: role for role, names in _ROLE_NAMES.items() for name in names}

# Descriptive names with more words around them ("storage modulus G'", "phase angle δ (raw)"); a name that
# holds the key phrases of two roles ("loss modulus / storage modulus") gets no role.
_PHRASES = (
    ("angular frequency", "omega"),
    ("storage modulus", "storage"),
    ("loss modulus", "loss"),
    ("complex modulus", "gstar"),
    ("phase angle", "delta"),
    ("loss angle", "delta"),
)

_PRIMES = (("’", "'"), ("′", "'"), ("″", "''"), ("”", "''"), ('"', "''"), ("`", "'"), ("´", "'"))


@dataclasses.dataclass(frozen=True)
class Column:
    """One header field: where it is, what it is called, its unit (or ``None``) and role (or ``None``).

    ``unit_below`` is a different unit the units row gives for the same column (a contradiction to refuse).
    """

    index: int
    label: str
    name: str
    unit: str | None
    role: str | None
    unit_below: str | None = None


def strip_brackets(text: str) -> str:
    """``"[kPa]"`` → ``"kPa"``, ``"(Hz)"`` → ``"Hz"``; anything else stripped of blanks."""
    t = text.strip()
    if len(t) >= 2 and t[0] + t[-1] in ("[]", "()"):
        return t[1:-1].strip()
    return t


def split_unit(field: str) -> tuple[str, str | None]:
    """Split ``"Storage Modulus (kPa)"``, ``"G' [kPa]"``, ``"Storage modulus in kPa"`` or ``"G'/kPa"``.

    The quantity/unit form is taken only when the part before the first ``/`` names a column tauspec knows and
    the part after it is a unit tauspec knows, so that a ratio such as ``G''/G'`` stays one name.
    """
    f = field.strip()
    if f and f[-1] in ")]":
        k = f.rfind("(" if f[-1] == ")" else "[")
        if k > 0 and f[:k].strip():
            return f[:k].strip(), f[k + 1:-1].strip() or None
    k = f.lower().rfind(" in ")
    if k > 0:
        tail = f[k + 4:].strip()
        if tail and len(tail.split()) == 1 and f[:k].strip():
            return f[:k].strip(), tail
    k = f.find("/")
    if k > 0:
        name, unit = f[:k].strip(), f[k + 1:].strip()
        if name and unit and unit_kind(unit) is not None and role_of(name, unit) is not None:
            return name, unit
    return f, None


#: The argument a modulus may be written with (``G'(ω)``, ``G''(omega)``): the same column.
_ARGUMENTS = ("(ω)", "(omega)", "(w)")


def normalize_name(name: str) -> str:
    """Lower case, primes unified (``′ ″ ’ "`` → ``' ''``), single spaces, no trailing colon or ``(ω)``."""
    n = name
    for a, b in _PRIMES:
        n = n.replace(a, b)
    n = " ".join(n.lower().split()).rstrip(":").strip()
    for arg in _ARGUMENTS:
        if n.endswith(arg) and len(n) > len(arg):
            return n[: -len(arg)].strip()
    return n


def role_of(name: str, unit: str | None) -> str | None:
    """The role of a column from its name and unit, or ``None`` for a column tauspec does not use.

    ``T`` is temperature and ``t`` time; either with a time unit (s, min, h) is time, with a temperature unit
    temperature, so a time column ``t [s]`` is never taken for a temperature.
    """
    n = normalize_name(name)
    if n == "t":
        kind = unit_kind(unit) if unit else None
        if kind == "time" or (kind is None and unit is None and name.strip() == "t"):
            return "time"
        return "temperature"
    if n in _NAME_TO_ROLE:
        role = _NAME_TO_ROLE[n]
        if role == "temperature" and unit and unit_kind(unit) == "time":
            return "time"
        return role
    found = {role for phrase, role in _PHRASES if phrase in n}
    return found.pop() if len(found) == 1 else None


#: Units-row cells that say "no unit" (a dimensionless column, or a placeholder where cells cannot be empty).
_NO_UNIT = frozenset({"", "-", "--", "1"})


def _unit_below(cell: str) -> str | None:
    unit = strip_brackets(cell)
    return None if unit in _NO_UNIT else unit


def columns_of(fields: list[str], units_row: list[str] | None = None) -> list[Column]:
    """The columns a header row names; a unit in the units row fills a header field without one."""
    out = []
    for i, field in enumerate(fields):
        name, unit = split_unit(field)
        below = _unit_below(units_row[i]) if units_row is not None and i < len(units_row) else None
        conflict = below if unit is not None and below is not None and below != unit else None
        unit = unit if unit is not None else below
        out.append(Column(index=i, label=field.strip(), name=name, unit=unit, role=role_of(name, unit),
                          unit_below=conflict))
    return out


#: A row of more fields is not a sweep's header (an export has a few to a few tens of columns); the bound keeps
#: the search for the header cheap on long lines of text.
MAX_COLUMNS = 256


def is_header(fields: list[str]) -> bool:
    """Whether a row names a frequency column and at least one modulus column (then it is a header row)."""
    if len(fields) > MAX_COLUMNS:
        return False
    roles = {role_of(*split_unit(f)) for f in fields}
    return bool(roles & {"omega", "frequency"}) and bool(roles & {"storage", "loss", "gstar"})
