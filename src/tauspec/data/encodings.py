"""Bytes to text: UTF-8 (with or without a byte-order mark), UTF-16 (with one), else a single-byte encoding.

The order is fixed, not guessed from letter statistics: a statistical detector is unreliable on a few hundred
bytes of numbers, and every character that matters to the reader (digits, separators, ``°``, ``µ``, ``·``,
``²``) has the same byte in cp1252 and Latin-1.  A file that is not UTF-8 is decoded as cp1252 (Windows
Western European, what spreadsheet exports on Windows write) and, when it holds one of the five bytes cp1252
leaves undefined, as Latin-1; either way an :class:`~tauspec.errors.EncodingGuessWarning` names the encoding.
"""

from __future__ import annotations

import codecs
import warnings

from ..errors import EncodingGuessWarning, SweepError

__all__ = ["decode"]

_SINGLE_BYTE = (("cp1252", "cp1252 (Windows Western European)"), ("latin-1", "Latin-1 (ISO 8859-1)"))


def _looks_like_utf16_without_bom(raw: bytes) -> bool:
    """ASCII text stored as UTF-16 without a byte-order mark: nearly every other byte is NUL."""
    head = raw[:4096]
    if len(head) < 8:
        return False
    even, odd = head[0::2], head[1::2]
    return ((odd.count(0) >= 0.9 * len(odd) and even.count(0) == 0)
            or (even.count(0) >= 0.9 * len(even) and odd.count(0) == 0))


def decode(raw: bytes, source: str) -> str:
    """Return the text of a sweep file's bytes.

    Raises
    ------
    SweepError
        For binary data (NUL bytes outside UTF-16), UTF-16 without a byte-order mark, and text whose
        byte-order mark promises an encoding its bytes do not follow.

    Warns
    -----
    EncodingGuessWarning
        When the text is not UTF-8 and was decoded as cp1252 or Latin-1.
    """
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            text = raw.decode("utf-16")
        except UnicodeDecodeError:
            raise SweepError("text marked as UTF-16 (byte-order mark) cannot be decoded", source) from None
        if "\x00" in text:
            raise SweepError("binary data, not a text table of a frequency sweep", source)
        return text
    if raw.startswith(codecs.BOM_UTF8):
        try:
            return raw[len(codecs.BOM_UTF8):].decode("utf-8")
        except UnicodeDecodeError as exc:
            at = exc.start + len(codecs.BOM_UTF8)
            line = raw[:at].count(b"\n") + 1
            raise SweepError(f"marked as UTF-8 (byte-order mark) but byte 0x{raw[at]:02x} is not UTF-8",
                             source, line) from None
    if b"\x00" in raw[:8192]:
        if _looks_like_utf16_without_bom(raw):
            raise SweepError("looks like UTF-16 text without a byte-order mark; save it as UTF-8 or as UTF-16 "
                             "with a byte-order mark", source)
        raise SweepError("binary data, not a text table of a frequency sweep", source)
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        first_bad = exc.start
    for codec, label in _SINGLE_BYTE:
        try:
            text = raw.decode(codec)
        except UnicodeDecodeError:
            continue
        line = raw[:first_bad].count(b"\n") + 1
        warnings.warn(f"{source}: not UTF-8 (byte 0x{raw[first_bad]:02x} on line {line}); read as {label}",
                      EncodingGuessWarning, stacklevel=3)
        return text
    raise AssertionError("Latin-1 decodes every byte")  # pragma: no cover
