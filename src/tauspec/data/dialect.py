"""The CSV dialect: which separator a file uses, and splitting one line into fields.

The separator is detected by clevercsv (van den Burg, Nazábal & Sutton 2019, "Wrangling messy CSV files by
detecting row and type patterns", Data Min. Knowl. Disc. 33:1799; see docs/reader.md for why not
``csv.Sniffer``) on a bounded sample of the file, among comma, semicolon, tab and space.  The header then
confirms it: when the detected separator splits no line into a header, the other candidates are tried.

Lines are split by the standard library's :mod:`csv` in strict mode with ``"`` as the quote character, so
quoted fields, commas inside quotes and doubled quotes are read as written, and an unclosed quote is refused.
The apostrophe is never a quote character here: it is the prime of G' and G''.  Runs of blanks separate
fields when the separator is a space.
"""

from __future__ import annotations

import csv
import re

from ..errors import SweepError
from .columns import MAX_COLUMNS

__all__ = ["CANDIDATES", "detect_delimiter", "split_fields", "trim", "header_splits", "units_splits", "SAMPLE_LINES",
           "SAMPLE_CHARS"]

#: Separators tried, in the order used when the detector gives none and the header must decide.
CANDIDATES = ("\t", ";", ",", " ")
#: The detector sees at most this many lines, at most this many characters of each, and of all together: its
#: time grows faster than linearly with a line's length (measured in benchmarks/bench_reader.py), so it gets a
#: bounded sample (a header of twenty verbose column names is about 600 characters).
SAMPLE_LINES = 60
SAMPLE_LINE_CHARS = 1024
SAMPLE_CHARS = 8192

# Only bounded, non-nested patterns over one header line (at most max_line_chars long): linear.
_WIDE_GAP = re.compile(r"\s{2,}|\t")


def detect_delimiter(sample_lines: list[str]) -> str | None:
    """The separator clevercsv detects on the sample, or ``None`` when it finds none of :data:`CANDIDATES`."""
    import clevercsv  # deferred: a dependency of reading only, not of ``import tauspec``

    sample = "\n".join(line[:SAMPLE_LINE_CHARS] for line in sample_lines)[:SAMPLE_CHARS]
    if not sample.strip():
        return None
    try:
        dialect = clevercsv.Detector().detect(sample, delimiters=list(CANDIDATES))
    except Exception:  # noqa: BLE001 - any failure of the detector leaves the choice to the header
        return None
    if dialect is None or dialect.delimiter not in CANDIDATES:
        return None
    return dialect.delimiter


def _csv_split(line: str, delimiter: str, skip_blanks: bool, source: str, number: int, strict: bool) -> list[str]:
    try:
        rows = list(csv.reader([line], delimiter=delimiter, quotechar='"', doublequote=True, strict=strict,
                               skipinitialspace=skip_blanks))
    except csv.Error as exc:
        raise SweepError(f"a quoted field is not written as CSV quotes it ({exc})", source, number) from None
    return rows[0] if rows else []


def split_fields(line: str, delimiter: str, *, source: str = "<text>", number: int = 0,
                 strict: bool = True) -> list[str]:
    """The line's fields, each stripped of surrounding blanks.

    ``strict=False`` reads a malformed quote as text instead of refusing it (to name what a line is about).

    Raises
    ------
    SweepError
        When a quote is opened and not closed, or text follows a closing quote.
    """
    if delimiter == " ":
        text = line.replace("\t", " ").strip()
        fields = _csv_split(text, " ", True, source, number, strict) if '"' in text else text.split()
    elif '"' in line:
        fields = _csv_split(line, delimiter, False, source, number, strict)
    else:
        fields = line.split(delimiter)
    return [f.strip() for f in fields]


def trim(fields: list[str], width: int = 0) -> list[str]:
    """``fields`` without the empty fields a trailing separator leaves beyond the first ``width``."""
    end = len(fields)
    while end > width and not fields[end - 1]:
        end -= 1
    return fields if end == len(fields) else fields[:end]


def header_splits(line: str, delimiter: str, *, source: str = "<text>", number: int = 0,
                  strict: bool = True) -> list[list[str]]:
    """The ways a header line may split into column names, most likely first.

    With a separator other than a space there is one.  With blanks the names themselves may hold spaces
    (``omega [rad/s]``): the line is split at runs of two or more blanks, and also at every blank with a
    bracketed unit joined to the name before it; the first data row decides between the two.
    """
    plain = trim(split_fields(line, delimiter, source=source, number=number, strict=strict))
    if delimiter != " " or '"' in line or len(plain) > 2 * MAX_COLUMNS:  # joining halves the count at most
        return [plain]
    joined: list[str] = []
    for tok in plain:
        if joined and len(tok) >= 2 and tok[0] in "[(" and tok[-1] in "])":
            joined[-1] = f"{joined[-1]} {tok}"
        else:
            joined.append(tok)
    wide = _wide_split(line)
    out = [joined]
    if wide != joined:
        out.append(wide)
    return out


def units_splits(fields: list[str], line: str, delimiter: str) -> list[list[str]]:
    """The ways a units row (split as ``fields``) may split into one unit per column, most likely first.

    With blanks a unit may hold a space (``rad s⁻¹``): the row is also split at runs of two or more blanks,
    and the header's width decides between the two.
    """
    plain = trim(fields)
    if delimiter != " " or '"' in line:
        return [plain]
    wide = _wide_split(line)
    return [plain] if wide == plain else [plain, wide]


def _wide_split(line: str) -> list[str]:
    """``line`` split at tabs and at runs of two or more blanks."""
    return [f for f in _WIDE_GAP.split(line.strip()) if f]
