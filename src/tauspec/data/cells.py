"""One cell of a table: a number, a missing value, or text.

A cell is a number when it holds only ASCII digits, signs, ``.``, ``e``/``E`` (a ``,`` as the decimal mark when
the separator is not a comma) and ``float`` accepts it: one set check and one conversion, both linear in the
cell's length; no regular expression runs over a cell.  ``float`` alone would also take ``1_000``, ``١٢``
(Arabic-Indic digits) or surrounding blanks, which an instrument never writes.
"""

from __future__ import annotations

__all__ = ["MISSING", "Missing", "parse_cell", "decimal_mark", "digit_grouped", "with_decimal_point"]


class Missing:
    """The marker of an empty or explicitly missing cell (``""``, ``NaN``, ``-``, ``--``)."""

    __slots__ = ()

    def __repr__(self) -> str:
        return "MISSING"


MISSING = Missing()

#: Cell texts (compared in lower case) that mean "no value here"; so does a cell of dashes only ("---", "-----",
#: as exports pad an invalid point).
_MISSING_TEXTS = frozenset({"", "nan", "-nan", "+nan", "n/a", "#n/a"})
_NUMBER_CHARS = frozenset("0123456789+-.eE")
_INFINITE = {"inf": float("inf"), "+inf": float("inf"), "-inf": float("-inf"), "infinity": float("inf"),
             "+infinity": float("inf"), "-infinity": float("-inf")}


def decimal_mark(text: str) -> str | None:
    """The decimal mark a number's text uses: ``"."``, ``","``, or ``None`` (an integer, or exponent only)."""
    if "," in text:
        return ","
    if "." in text:
        return "."
    return None


def with_decimal_point(text: str, decimal_comma: bool) -> str:
    """``text`` with its decimal comma written as a point when a comma is a decimal mark (``0,5`` → ``0.5``).

    Only a single comma with no point is a decimal comma; any other text is returned as it is.
    """
    return text.replace(",", ".") if decimal_comma and text.count(",") == 1 and "." not in text else text


def digit_grouped(text: str) -> bool:
    """Whether a number's text holds both ``.`` and ``,`` (digit grouping: ``2.058,870``, ``1,234.5``)."""
    t = text.strip()
    return "," in t and "." in t and _NUMBER_CHARS.issuperset(t.replace(",", ""))


def parse_cell(text: str, *, decimal_comma: bool) -> float | Missing | None:
    """Return the cell's number, :data:`MISSING`, or ``None`` when it is text.

    Parameters
    ----------
    text : str
        The cell as split from the line (quotes already removed).
    decimal_comma : bool
        Whether a comma is a decimal mark (the column separator is not a comma).  With ``False`` a cell holding
        a comma is not a number.

    Infinite values are returned as ``inf`` so that the caller can refuse them with their line.
    """
    t = text.strip()
    low = t.lower()
    if low in _MISSING_TEXTS or (t[:1] == "-" and not t.strip("-")):
        return MISSING
    if low in _INFINITE:
        return _INFINITE[low]
    if "," in t:
        t = with_decimal_point(t, decimal_comma)
        if "," in t:
            return None
    if not _NUMBER_CHARS.issuperset(t):
        return None
    try:
        return float(t)
    except ValueError:
        return None
