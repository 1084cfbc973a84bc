"""Numbers for reading: the one rule of significant figures, and of counts, for every text tauspec prints.

Here, below every layer, so that the reader's messages, the analysis reports (comparison, bands,
superposition) and the output words round and count alike.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

__all__ = ["number", "interval", "telling_digits", "is_finite_number", "counted"]


def number(value: Any, digits: int = 3) -> str:
    """A number rounded to ``digits`` significant figures for reading (``"–"`` when missing or not finite)."""
    if isinstance(value, bool) or value is None:
        return "–"
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return "–"
    if v == 0:
        return "0"
    text = f"{v:.{digits}g}"
    if "e" in text:
        mantissa, exp = text.split("e")
        return f"{mantissa}e{int(exp)}"
    return text


def interval(ci: Any, digits: int = 3) -> str:
    """``[lo, hi]`` of a two-number interval, or "" when there is none."""
    if isinstance(ci, Sequence) and not isinstance(ci, str) and len(ci) == 2:
        lo, hi = number(ci[0], digits), number(ci[1], digits)
        if lo != "–" and hi != "–":
            return f"[{lo}, {hi}]"
    return ""


def telling_digits(value: Any, ci: Any, digits: int) -> int:
    """The fewest significant digits from ``digits`` (at most 6) at which a value and its interval's ends read apart.

    G0 = 1000 Pa with the interval [995, 1004] read "1e3 Pa, 95 % interval [995, 1e3] Pa" at three digits.
    """
    if not (isinstance(ci, Sequence) and not isinstance(ci, str) and len(ci) == 2):
        return digits
    for d in range(digits, 7):
        texts = [number(v, d) for v in (ci[0], value, ci[1])]
        same = [a == b for a, b, x, y in ((texts[0], texts[1], ci[0], value), (texts[1], texts[2], value, ci[1]))
                if is_finite_number(x) and is_finite_number(y) and float(x) != float(y)]
        if not any(same):
            return d
    return 6


def is_finite_number(v: Any) -> bool:
    """True for a value that reads as a finite number."""
    try:
        return math.isfinite(float(v))
    except (TypeError, ValueError):
        return False


def counted(n: int, noun: str) -> str:
    """``n`` and the noun, in the plural unless n is one: "1 Maxwell mode", "3 Maxwell modes"."""
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"
