"""Names in figures as plain text: matplotlib must not read a sample's ``$`` signs as math (mathtext)."""

from __future__ import annotations

from typing import Any

__all__ = ["plain_text"]


def plain_text(name: Any) -> str:
    r"""``name`` as matplotlib shows it literally: every ``$`` escaped as ``\$``.

    matplotlib parses text holding an even number of unescaped ``$`` as mathtext, so a sample called
    ``5$ lot #1, 6$ lot #2`` would fail to draw (or draw as math); with each ``$`` escaped the count of
    unescaped dollars is zero and the text is drawn as written, ``\$`` shown as ``$`` (matplotlib,
    "Writing mathematical expressions": "a dollar sign ... escape it").  A backslash is drawn as itself.
    """
    return str(name).replace("$", r"\$")
