"""User text made safe where it is shown: spreadsheet cells, terminal lines, HTML (bidirectional controls).

File and sample names come from the user's archive and may hold anything a file system allows: a leading ``=``
that a spreadsheet runs as a formula, control characters that move a terminal's cursor or split a line, and
bidirectional controls (U+202E ...) that make text read in an order other than the one stored (Boldyreva et
al. 2021, "Trojan Source", CVE-2021-42574).  These helpers render such text inert without losing it.
"""

from __future__ import annotations

import re

__all__ = ["BIDI_CONTROLS", "spreadsheet_cell", "spreadsheet_value", "printable", "show_bidi_controls"]

#: The bidirectional formatting characters of Unicode (UAX #9): embeddings, overrides, isolates and marks.
BIDI_CONTROLS = frozenset("\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u200e\u200f\u061c")

# A spreadsheet reads a cell starting with one of these as a formula (OWASP, "CSV Injection"); the quote is the
# escape character itself, so that the escaping can be undone.
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "'")
_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")
_UNPRINTABLE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029" + "".join(sorted(BIDI_CONTROLS)) + "\ud800-\udfff]")


def spreadsheet_cell(text: str) -> str:
    """The cell text for a CSV file: text a spreadsheet would run as a formula gets a leading ``'``.

    Cells starting with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return (and, so that the escape can be
    undone, ``'``) are prefixed with a single quote, which spreadsheets show as text (OWASP, "CSV Injection",
    common practice, no single source); a plain number such as ``-1.5e-3`` stays a number.

    Examples
    --------
    >>> spreadsheet_cell("=SUM(A1:A9)"), spreadsheet_cell("-0.5"), spreadsheet_cell("a.csv")
    ("'=SUM(A1:A9)", '-0.5', 'a.csv')
    """
    if text.startswith(_FORMULA_START) and not _NUMBER.fullmatch(text):
        return "'" + text
    return text


def spreadsheet_value(cell: str) -> str:
    """The text a cell written by :func:`spreadsheet_cell` stands for (its inverse)."""
    if cell.startswith("'") and cell[1:].startswith(_FORMULA_START) and not _NUMBER.fullmatch(cell[1:]):
        return cell[1:]
    return cell


def _escape(m: re.Match[str]) -> str:
    c = m.group(0)
    return f"\\x{ord(c):02x}" if ord(c) < 0x100 else f"\\u{ord(c):04x}"


def printable(text: str) -> str:
    r"""``text`` for one line of a terminal, every character visible as what it is.

    Control, line-separator, bidirectional and lone-surrogate characters become escapes (``\x1b``, ``\u202e``),
    so a name cannot move the cursor, split the line or reorder it.
    """
    return _UNPRINTABLE.sub(_escape, text)


def show_bidi_controls(text: str) -> str:
    """``text`` with each bidirectional control replaced by a visible ``<U+202E>`` marker (escape it for HTML)."""
    return "".join(f"<U+{ord(c):04X}>" if c in BIDI_CONTROLS else c for c in text)
