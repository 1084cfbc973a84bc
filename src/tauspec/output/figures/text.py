"""Names in figures as plain text: matplotlib must not read a sample's ``$`` signs as math (mathtext)."""

from __future__ import annotations

from typing import Any

__all__ = ["literal", "plain_text"]


def literal(name: Any) -> str:
    """``name`` with its control characters (newlines, bidi controls ...) as spaces: for titles (no math text)."""
    return "".join(ch if ch.isprintable() else " " for ch in str(name)).strip()


def plain_text(name: Any) -> str:
    r"""``name`` as matplotlib shows it literally where it parses math text (legends, labels): ``$`` escaped.

    matplotlib parses text holding an even number of unescaped ``$`` as mathtext, so a sample called
    ``5$ lot #1, 6$ lot #2`` would fail to draw (or draw as math); with each ``$`` escaped the count of
    unescaped dollars is zero and the text is drawn as written, ``\$`` shown as ``$`` (matplotlib,
    "Writing mathematical expressions": "a dollar sign ... escape it").  Control characters become spaces.
    """
    return literal(name).replace("$", r"\$")
