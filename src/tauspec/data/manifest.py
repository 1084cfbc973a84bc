"""Manifests: a CSV file that lists sweep files and, optionally, what is known about each sample.

A manifest has a header row with a ``file`` column (paths relative to the manifest's own folder, or absolute) and
optional columns ``M`` (molecular weight, g/mol), ``c`` (concentration), ``T`` (temperature: °C, or K when
written with K) and ``label``; empty cells mean "not given", ``#`` lines are comments.  Other columns are kept
as text in ``extra``; the batch ignores them, ``compare`` refuses them (a misspelt ``M`` must not pass unseen).

The columns may be separated by commas, semicolons or tabs (a spreadsheet saving "CSV" in a locale whose decimal
mark is a comma writes semicolons): the separator is the one that splits the header into a ``file`` column.
With semicolons or tabs a number may use a decimal comma (``0,5``).  A file listed twice with different values
is refused: which row was meant cannot be known.
"""

from __future__ import annotations

import csv
import math
import os
from collections.abc import Mapping
from pathlib import Path

from ..errors import SettingsError
from .cells import with_decimal_point
from .record import field, record
from .units import temperature_kelvin

__all__ = ["ManifestEntry", "MANIFEST_COLUMNS", "SEPARATORS", "read_manifest"]

#: The columns a manifest may name besides its own extras.
MANIFEST_COLUMNS = ("file", "M", "c", "T", "label")


@record
class ManifestEntry:
    """One row of a manifest: the file as written and where it is, and the sample's known values (SI, T in K)."""

    file: str
    path: Path
    M: float | None = None
    c: float | None = None
    T: float | None = None
    label: str | None = None
    extra: Mapping[str, str] = field(default_factory=dict)
    line: int = 0


#: The column separators a manifest may use, tried in this order on its header.
SEPARATORS = (",", ";", "\t")


def _number(text: str, what: str, source: str, line: int, decimal_comma: bool = False) -> float | None:
    text = with_decimal_point((text or "").strip(), decimal_comma)
    if not text:
        return None
    try:
        value = float(text)
    except ValueError:
        raise SettingsError(f"{what} {text!r} is not a number", source, line) from None
    if not (value > 0 and math.isfinite(value)):
        raise SettingsError(f"{what} must be positive, not {text!r}", source, line)
    return value


def read_manifest(path: str | os.PathLike[str]) -> list[ManifestEntry]:
    """Read a manifest; every problem is one :class:`~tauspec.errors.SettingsError` naming the file and line."""
    source = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise SettingsError(f"cannot read the manifest ({exc.strerror or exc})", source) from None
    except UnicodeDecodeError:
        raise SettingsError("the manifest is not UTF-8 text", source) from None
    rows, separator = _rows(text, source)
    if not rows:
        raise SettingsError("the manifest is empty", source)
    header = [h.strip() for h in rows[0][1]]
    if "file" not in header:
        raise SettingsError("the manifest needs a header row with a 'file' column (and optionally "
                            f"{', '.join(MANIFEST_COLUMNS[1:])}), separated by commas, semicolons or tabs",
                            source, rows[0][0])
    comma = separator != ","
    folder = Path(path).parent
    out: list[ManifestEntry] = []
    seen: dict[str, ManifestEntry] = {}
    for line, row in rows[1:]:
        cells = dict(zip(header, (c.strip() for c in row)))
        name = cells.get("file", "")
        if not name:
            raise SettingsError("a manifest row has no file", source, line)
        T = None
        if cells.get("T"):
            try:
                T = temperature_kelvin(with_decimal_point(cells["T"], comma))
            except ValueError as exc:
                raise SettingsError(f"T {cells['T']!r}: {exc}", source, line) from None
        f = Path(name)
        entry = ManifestEntry(
            file=name, path=f if f.is_absolute() else folder / f,
            M=_number(cells.get("M", ""), "M", source, line, comma),
            c=_number(cells.get("c", ""), "c", source, line, comma), T=T, label=cells.get("label") or None,
            extra={k: v for k, v in cells.items() if k not in MANIFEST_COLUMNS}, line=line)
        where = os.path.normpath(os.path.abspath(entry.path))
        first = seen.setdefault(where, entry)
        if first is not entry and _values(first) != _values(entry):
            raise SettingsError(f"{name!r} is listed twice with different values (lines {first.line} and {line}); "
                                "keep one row per file", source, line)
        out.append(entry)
    return out


def _values(entry: ManifestEntry) -> tuple:
    """What a row says about its sample (everything but where the row is)."""
    return entry.M, entry.c, entry.T, entry.label, dict(entry.extra)


def _separator(header: str) -> str:
    """The first of :data:`SEPARATORS` that splits the header line into a ``file`` column (else a comma)."""
    for sep in SEPARATORS:
        if "file" in (c.strip() for c in next(csv.reader([header], delimiter=sep), [])):
            return sep
    return ","


def _rows(text: str, source: str) -> tuple[list[tuple[int, list[str]]], str]:
    """The CSV rows of a manifest with the line each starts on, and its separator.

    Blank lines and ``#`` comments are skipped.  A quoted cell may hold a line break (the row then spans lines
    and is numbered by its first); a quote that is never closed is refused, not read to the end of the file as
    one cell.
    """
    kept = [(k, line) for k, line in enumerate(text.splitlines(), start=1)
            if line.strip() and not line.lstrip().startswith("#")]
    separator = _separator(kept[0][1]) if kept else ","
    reader = csv.reader((line + "\n" for _, line in kept), delimiter=separator, strict=True)
    out = []
    first = 0  # the index in ``kept`` of the next row's first line (the reader counts the lines it took)
    try:
        for row in reader:
            out.append((kept[first][0], row))
            first = reader.line_num
    except csv.Error as exc:
        raise SettingsError(f"a quoted cell is not closed or not written as CSV quotes it ({exc})", source,
                            kept[first][0]) from None
    return out, separator
