"""Reading frequency-sweep files and writing results.

A sweep file is a text table with a header row that names the columns, units
in ``[...]`` or ``(...)``, optional ``# key: value`` metadata lines and ``#``
comments.  Columns may be separated by commas, semicolons, tabs or runs of
white space; a decimal comma is accepted when the separator is not a comma.
Every problem is reported as one :class:`~tauspec.errors.SweepError` naming
the file, the line and the reason.
"""

from __future__ import annotations

import codecs
import math
import os
import re
import warnings
from collections.abc import Iterable, Sequence
from pathlib import Path

import numpy as np

from ..errors import DroppedPointsWarning, SweepError
from .sweep import MIN_POINTS, MODULUS_RANGE, OMEGA_RANGE, Sweep
from .units import to_si

__all__ = [
    "read_sweep",
    "read_sweeps",
    "parse_sweep_text",
    "parse_sweeps_text",
    "MAX_FILE_BYTES",
    "read_capped_bytes",
    "decode_text",
]


#: Files larger than this are refused before reading (a sweep is a few kB).
MAX_FILE_BYTES = 32 * 1024 * 1024

_META_ALIASES = {
    "name": "sample",
    "sample_name": "sample",
    "temp": "temperature",
    "t": "temperature",
    "mw": "molecular_weight",
    "m_w": "molecular_weight",
    "m": "molecular_weight",
    "molar_mass": "molecular_weight",
    "conc": "concentration",
    "c": "concentration",
    "rho": "density",
}

_META_LINE = re.compile(r"^#\s*([A-Za-z][\w .\-/]*?)\s*[:=]\s*(.*?)\s*$")
_UNIT_SUFFIX = re.compile(r"^(.*?)\s*[\[(]\s*([^\])]*?)\s*[\])]\s*$")

# Column roles by normalized name (lower case, primes unified, single spaces).
_ROLE_NAMES: dict[str, tuple[str, ...]] = {
    "omega": ("omega", "ω", "w", "angular frequency", "ang. frequency", "ang frequency", "omega_rad"),
    "frequency": ("f", "freq", "freq.", "frequency", "nu", "ν"),
    "storage": (
        "g'", "gp", "g_p", "gprime", "g_prime", "g1", "g 1", "storage modulus", "storage", "g' storage modulus",
        "storage modulus g'",
    ),
    "loss": (
        "g''", "gpp", "g_pp", "gdprime", "g_dprime", "gdoubleprime", "g2", "g 2", "loss modulus", "loss",
        "g'' loss modulus", "loss modulus g''",
    ),
    "gstar": ("|g*|", "g*", "|g|", "gstar", "g_star", "complex modulus", "|complex modulus|", "complex modulus |g*|"),
    "delta": ("δ", "delta", "phase angle", "phase", "phase angle δ", "phase angle delta", "phase shift angle"),
    "temperature": ("t", "temp", "temp.", "temperature", "sample temperature"),
}
_NAME_TO_ROLE = {name: role for role, names in _ROLE_NAMES.items() for name in names}

_EXPECTED_HEADER = "omega [rad/s], G' [Pa], G'' [Pa] (or f [Hz]; or |G*| and phase angle δ [deg])"


def _normalize_name(name: str) -> str:
    n = name.strip().strip('"').strip()
    for a, b in (("’", "'"), ("′", "'"), ("″", "''"), ("”", "''"), ('"', "''"), ("`", "'")):
        n = n.replace(a, b)
    n = re.sub(r"\s+", " ", n.lower())
    return n.rstrip(":").strip()


def _split_unit(field: str) -> tuple[str, str | None]:
    m = _UNIT_SUFFIX.match(field.strip())
    if m and m.group(1):
        return m.group(1), m.group(2)
    return field.strip(), None


def _role_of(name: str) -> str | None:
    n = _normalize_name(name)
    if n in _NAME_TO_ROLE:
        return _NAME_TO_ROLE[n]
    # Descriptive names with the symbol attached, e.g. "storage modulus G'".
    for key, role in (
        ("storage modulus", "storage"),
        ("loss modulus", "loss"),
        ("complex modulus", "gstar"),
        ("phase angle", "delta"),
        ("angular frequency", "omega"),
    ):
        if key in n:
            return role
    return None


def decode_text(raw: bytes, source: str) -> str:
    """Decode the bytes of a sweep file (UTF-16 with a byte-order mark, else UTF-8); refuse binary data."""
    if raw.startswith(codecs.BOM_UTF16_LE) or raw.startswith(codecs.BOM_UTF16_BE):
        try:
            return raw.decode("utf-16")
        except UnicodeDecodeError:
            raise SweepError("text marked as UTF-16 cannot be decoded", source) from None
    if b"\x00" in raw[:8192]:
        raise SweepError("binary data, not a text table of a frequency sweep", source)
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise SweepError(
            f"not UTF-8 text (byte 0x{raw[exc.start]:02x}); save the export as UTF-8", source, line
        ) from None


def read_sweep(path: str | os.PathLike[str], *, max_bytes: int = MAX_FILE_BYTES) -> Sweep:
    """Read a frequency sweep from a text file.

    Parameters
    ----------
    path : path-like
        A comma, semicolon, tab or white-space separated table whose header
        row names the columns (see :func:`parse_sweep_text`).
    max_bytes : int, optional
        Larger files are refused before they are read.

    Returns
    -------
    Sweep
        SI arrays sorted by ω, with the file's metadata.

    Raises
    ------
    SweepError
        For anything that is not a usable sweep, with the file and line.

    Warns
    -----
    DroppedPointsWarning
        When points with a non-positive modulus are dropped.
    """
    p = Path(path)
    source = str(path)
    raw = read_capped_bytes(p, source, max_bytes)
    return parse_sweep_text(decode_text(raw, source), source=source, default_name=p.stem)


def read_sweeps(path: str | os.PathLike[str], *, max_bytes: int = MAX_FILE_BYTES) -> list[Sweep]:
    """Read a file that may hold sweeps at several temperatures (a temperature column); one Sweep each."""
    p = Path(path)
    return parse_sweeps_text(decode_text(read_capped_bytes(p, str(path), max_bytes), str(path)), source=str(path),
                             default_name=p.stem)


def read_capped_bytes(p: Path, source: str, max_bytes: int = MAX_FILE_BYTES) -> bytes:
    """Return the file's bytes, refusing folders, missing, unreadable and oversized files before reading."""
    try:
        if p.is_dir():
            raise SweepError("is a folder, not a sweep file", source)
        if not p.exists():
            raise SweepError("no such file", source)
        size = p.stat().st_size
        if size > max_bytes:
            raise SweepError(
                f"file is {size / 2**20:.1f} MiB; a frequency sweep is a few kB (limit {max_bytes / 2**20:.0f} MiB)",
                source,
            )
        with open(p, "rb") as fh:
            raw = fh.read(max_bytes + 1)
    except PermissionError:
        raise SweepError("permission denied: the file cannot be read", source) from None
    except OSError as exc:
        raise SweepError(f"cannot be read ({exc.strerror or exc})", source) from None
    if len(raw) > max_bytes:
        raise SweepError(f"file is larger than {max_bytes / 2**20:.0f} MiB", source)
    return raw


def _split_line(line: str, delim: str | None) -> list[str]:
    if delim is None:
        return line.split()
    return [f.strip() for f in line.split(delim)]


def _split_header(line: str, delim: str | None, n_data: int | None) -> list[str]:
    if delim is not None:
        return _split_line(line, delim)
    wide = [f for f in re.split(r"\s{2,}|\t", line.strip()) if f]
    if n_data is None or len(wide) == n_data:
        if n_data is not None or len(wide) > 1:
            return wide
    tokens = line.split()
    fields: list[str] = []
    for tok in tokens:
        if fields and re.fullmatch(r"[\[(][^\])]*[\])]", tok):
            fields[-1] = f"{fields[-1]} {tok}"
        else:
            fields.append(tok)
    return fields


def _choose_delimiter(header: str, data: Sequence[str]) -> str | None:
    """Pick the separator (``None`` is white space).

    The header decides: the separator whose split of the header yields the
    most recognized column names (ties: tab, semicolon, comma, white space).
    When no split names a known column, the first separator that splits the
    header and at least half of the first rows into equally many fields wins.
    """
    best, best_known = None, 0
    for delim in ("\t", ";", ",", None):
        if delim is not None and delim not in header:
            continue
        names = _split_header(header, delim, None)
        known = sum(_role_of(_split_unit(f)[0]) is not None for f in names)
        if known > best_known:
            best, best_known = delim, known
    if best_known:
        return best
    sample = list(data[:20])
    for delim in ("\t", ";", ","):
        if delim not in header:
            continue
        n = len(_split_line(header, delim))
        if n >= 2 and (not sample or 2 * sum(len(_split_line(d, delim)) == n for d in sample) >= len(sample)):
            return delim
    return None


_NUMBER = re.compile(r"^[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?$|^[-+]?(?:nan|inf|infinity)$", re.IGNORECASE)


def _to_float(text: str, decimal_comma: bool) -> float | None:
    t = text.strip().strip('"')
    if decimal_comma and "," in t:
        if "." in t:
            return None
        t = t.replace(",", ".")
    if not _NUMBER.match(t):
        return None
    return float(t)


def parse_sweep_text(text: str, *, source: str = "<text>", default_name: str = "sample") -> Sweep:
    """Parse the text of a sweep file; see :func:`read_sweep` and :func:`parse_sweeps_text`.

    Raises
    ------
    SweepError
        Also when a temperature column holds several temperatures (use
        :func:`parse_sweeps_text` or :func:`read_sweeps` for such files).
    """
    sweeps = parse_sweeps_text(text, source=source, default_name=default_name)
    if len(sweeps) > 1:
        temps = ", ".join(s.meta["temperature"] for s in sweeps)
        raise SweepError(f"holds sweeps at {len(sweeps)} temperatures ({temps}); superpose them with "
                         "'tauspec master' or read them with read_sweeps", source)
    return sweeps[0]


def parse_sweeps_text(text: str, *, source: str = "<text>", default_name: str = "sample") -> list[Sweep]:
    """Parse the text of a sweep file into one Sweep per temperature.

    Without a temperature column (``T [C]``, ``temperature [K]``...) the list
    has one sweep.  With one, rows within 0.5 K of each other form one sweep,
    whose ``meta["temperature"]`` is set from the column (in its unit, °C when
    none is given).

    The header row must name a frequency column and either the storage and
    loss moduli or the complex-modulus magnitude and the phase angle.
    Recognized names (case-insensitive) include ``omega``, ``ω``, ``w``,
    ``angular frequency`` (default unit rad/s) and ``f``/``frequency`` (unit
    required: rad/s or Hz); ``G'``, ``Gp``, ``storage modulus``; ``G''``,
    ``Gpp``, ``loss modulus``; ``|G*|``, ``complex modulus``; ``delta``, ``δ``,
    ``phase angle`` (default unit degrees).  Moduli without a unit are Pa.
    Other columns are ignored and listed in ``meta["ignored_columns"]``.
    """
    meta: dict[str, str] = {}
    rows: list[tuple[int, str]] = []
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            m = _META_LINE.match(stripped)
            if m:
                key = re.sub(r"[\s.\-/]+", "_", m.group(1).strip().lower())
                meta[_META_ALIASES.get(key, key)] = m.group(2)
            continue
        rows.append((number, line))
    if not rows:
        raise SweepError("no data: the file is empty or holds only comments", source)

    header_line_no, header = rows[0]
    data = rows[1:]
    delim = _choose_delimiter(header, [d for _, d in data])
    # A units row ("rad/s  Pa  Pa") may follow the header.
    fields_first = _split_line(data[0][1], delim) if data else []
    n_data = len(fields_first) if data else None
    names = _split_header(header, delim, n_data)
    decimal_comma = delim != ","

    if all(_to_float(f, decimal_comma) is not None for f in names):
        raise SweepError(f"no header row naming the columns; expected e.g. {_EXPECTED_HEADER}", source, header_line_no)

    units_row: list[str] | None = None
    if data and all(_to_float(f, decimal_comma) is None for f in fields_first) and len(fields_first) == len(names):
        units_row = [f.strip().strip("[]()") for f in fields_first]
        data = data[1:]

    roles: dict[str, tuple[int, str | None, str]] = {}
    ignored: list[str] = []
    for i, field in enumerate(names):
        name, unit = _split_unit(field)
        if unit is None and units_row is not None:
            unit = units_row[i] or None
        role = _role_of(name)
        if role is None:
            if field.strip():
                ignored.append(field.strip())
            continue
        if role == "frequency":
            role = "omega_or_f"
        key = "omega" if role in ("omega", "omega_or_f") else role
        if key in roles:
            what = key.replace("gstar", "|G*|")
            raise SweepError(f"two columns are the {what} column: {roles[key][2]} and {field.strip()}",
                             source, header_line_no)
        roles[key] = (i, unit, field.strip())
        if role == "omega_or_f":
            roles[key] = (i, unit if unit is not None else "?", field.strip())

    if "omega" not in roles:
        raise SweepError(f"header names no frequency column; expected e.g. {_EXPECTED_HEADER}", source, header_line_no)
    pair = "storage" in roles and "loss" in roles
    polar = "gstar" in roles and "delta" in roles
    if not (pair or polar):
        missing = [label for key, label in (("storage", "G'"), ("loss", "G''")) if key not in roles]
        raise SweepError(
            f"header names no {' or '.join(missing)} column (nor |G*| with phase angle); "
            f"expected e.g. {_EXPECTED_HEADER}",
            source,
            header_line_no,
        )

    def factor(key: str, kind: str) -> float:
        idx, unit, label = roles[key]
        if unit == "?":
            raise SweepError(f"column {label} has no unit: write {label} [rad/s] or {label} [Hz]", source,
                             header_line_no)
        try:
            return to_si(kind, unit)
        except KeyError:
            raise SweepError(f"unit {unit!r} of column {label} is not a {kind} unit tauspec knows", source,
                             header_line_no) from None

    used = ["omega", "storage", "loss"] if pair else ["omega", "gstar", "delta"]
    kinds = {"omega": "frequency", "storage": "modulus", "loss": "modulus", "gstar": "modulus", "delta": "angle"}
    if "delta" in used and roles["delta"][1] is None:
        roles["delta"] = (roles["delta"][0], "deg", roles["delta"][2])  # rheometers export degrees
    factors = {k: factor(k, kinds[k]) for k in used}
    if "temperature" in roles:
        used.append("temperature")
        factors["temperature"] = 1.0  # kept in the column's unit (°C or K) for the metadata
    columns = {k: roles[k][0] for k in used}

    values: list[list[float]] = []
    lines: list[int] = []
    width = len(names)
    for number, line in data:
        fields = _split_line(line, delim)
        if len(fields) != width:
            raise SweepError(f"row has {len(fields)} values but the header names {width} columns", source, number)
        row = []
        for k in used:
            cell = fields[columns[k]]
            v = _to_float(cell, decimal_comma)
            if v is None:
                raise SweepError(f"column {roles[k][2]}: value {cell[:40]!r} is not a number", source, number)
            if not math.isfinite(v):
                raise SweepError(f"column {roles[k][2]}: value {cell[:40]!r} is not finite", source, number)
            row.append(v * factors[k])
        values.append(row)
        lines.append(number)

    if not values:
        raise SweepError("header but no data rows", source)
    if ignored:
        meta["ignored_columns"] = ", ".join(ignored)
    arr = np.array(values)
    line_no = np.array(lines)
    if pair:
        storage, loss = arr[:, 1], arr[:, 2]
    else:
        storage, loss = arr[:, 1] * np.cos(arr[:, 2]), arr[:, 1] * np.sin(arr[:, 2])
    name = meta.get("sample") or default_name
    if "temperature" not in roles:
        return [_build_sweep(arr[:, 0], storage, loss, line_no, meta, source, name)]
    # a temperature column: one sweep per temperature (within 0.5 K), in the order they appear
    T_unit = roles["temperature"][1] or "C"
    if T_unit.strip().lstrip("°").upper() not in ("C", "K"):
        raise SweepError(f"temperature unit {T_unit!r} not understood (use C or K)", source, header_line_no)
    T = np.array([row[-1] for row in values])
    groups: list[list[int]] = []
    centres: list[float] = []
    for i, t in enumerate(T):
        for g, c in enumerate(centres):
            if abs(t - c) <= 0.5:
                groups[g].append(i)
                break
        else:
            centres.append(float(t))
            groups.append([i])
    out = []
    for g in groups:
        idx = np.array(g)
        sub_meta = dict(meta)
        sub_meta["temperature"] = f"{float(np.mean(T[idx])):.6g} {T_unit.strip()}"
        sub_name = name if len(groups) == 1 else f"{name}@{float(np.mean(T[idx])):.4g}{T_unit.strip()}"
        out.append(_build_sweep(arr[idx, 0], storage[idx], loss[idx], line_no[idx], sub_meta, source, sub_name))
    return out


def _build_sweep(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, line_no: np.ndarray, meta: dict,
                 source: str, name: str) -> Sweep:
    """Validate, sort and clean one sweep's columns (SI) and make the Sweep."""
    bad_w = np.flatnonzero(omega <= 0)
    if bad_w.size:
        raise SweepError(f"frequency must be positive (value {omega[bad_w[0]]:g})", source, int(line_no[bad_w[0]]))
    _check_range(omega, OMEGA_RANGE, "frequency", "rad/s", line_no, source)
    order = np.argsort(omega, kind="stable")
    omega, storage, loss, line_no = omega[order], storage[order], loss[order], line_no[order]
    dup = np.flatnonzero(np.diff(omega) <= 0)
    if dup.size:
        i = dup[0]
        raise SweepError(
            f"duplicate frequency {omega[i]:g} rad/s (lines {min(line_no[i], line_no[i + 1])} and "
            f"{max(line_no[i], line_no[i + 1])})",
            source,
            int(max(line_no[i], line_no[i + 1])),
        )
    keep = (storage > 0) & (loss > 0)
    if not np.all(keep):
        dropped = line_no[~keep].tolist()
        if keep.sum() < MIN_POINTS:
            raise SweepError(
                f"only {int(keep.sum())} points have positive G' and G'' (at least {MIN_POINTS} needed); "
                f"non-positive at lines {_ranges(dropped)}",
                source,
            )
        warnings.warn(
            f"{source}: dropped {len(dropped)} point(s) with a non-positive modulus at lines {_ranges(dropped)}",
            DroppedPointsWarning,
            stacklevel=4,
        )
        meta = dict(meta, dropped_lines=_ranges(dropped))
        omega, storage, loss = omega[keep], storage[keep], loss[keep]
    if len(omega) < MIN_POINTS:
        raise SweepError(f"{len(omega)} data points; at least {MIN_POINTS} are needed", source)
    _check_range(storage, MODULUS_RANGE, "G'", "Pa", line_no[keep], source)
    _check_range(loss, MODULUS_RANGE, "G''", "Pa", line_no[keep], source)
    return Sweep(omega=omega, storage=storage, loss=loss, name=name, meta=meta, source=source)


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


def _ranges(numbers: Iterable[int]) -> str:
    nums = sorted(numbers)
    parts: list[str] = []
    start = prev = None
    for n in nums:
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
