"""Metadata from the text around a table: ``# key: value``, ``Key: value``, ``Key;value``, titles.

Keys become lower case with underscores (``Sample Name`` → ``sample_name``) and a few common spellings map to
one key (``name`` → ``sample``, ``temp`` → ``temperature``, ``Mw`` → ``molecular_weight``).  The first line
that is neither a key and value nor a comment is the block's title.  Every step is a split or a scan of one
line; no regular expression runs over the text.
"""

from __future__ import annotations

from .units import parse_quantity, temperature_scale

__all__ = ["parse_preamble", "temperature_in_title"]

_ALIASES = {
    "name": "sample",
    "sample_name": "sample",
    "sample_id": "sample",
    "temp": "temperature",
    "t": "temperature",
    "sample_temperature": "temperature",
    "mw": "molecular_weight",
    "m_w": "molecular_weight",
    "m": "molecular_weight",
    "molar_mass": "molecular_weight",
    "conc": "concentration",
    "rho": "density",
    "c": "concentration",
}
#: Longest key taken as a key (a longer text before a colon is a sentence, not a key).
MAX_KEY = 48


def _key(text: str) -> str | None:
    """The normalized key, or ``None`` when ``text`` is not key-like (empty, too long, not starting a word)."""
    t = text.strip().lstrip("#").strip()
    if not t or len(t) > MAX_KEY or not t[0].isalpha():
        return None
    out, gap = [], False
    for ch in t.lower():
        if ch.isalnum():
            if gap and out:
                out.append("_")
            out.append(ch)
            gap = False
        else:
            gap = True
    key = "".join(out)
    return _ALIASES.get(key, key) if key else None


def _key_value(line: str, delimiter: str) -> tuple[str, str] | None:
    body = line.lstrip("#").strip()
    cut = min((i for i in (body.find(":"), body.find("=")) if i > 0), default=-1)
    if cut > 0:
        key = _key(body[:cut])
        if key is not None:
            return key, body[cut + 1:].strip()
    for sep in dict.fromkeys((delimiter, ";", "\t")):  # the file's separator first
        if sep == " " or sep not in body:
            continue
        parts = [p.strip().strip('"').strip() for p in body.split(sep)]
        while parts and not parts[-1]:
            parts.pop()
        if 2 <= len(parts) <= 3:
            key = _key(parts[0])
            if key is not None and parts[1]:
                return key, " ".join(parts[1:])
    return None


def parse_preamble(lines: list[tuple[int, str]], delimiter: str) -> tuple[dict[str, str], str | None]:
    """The metadata and the title of a block's preamble (``lines`` are (line number, stripped text)).

    ``#`` lines give metadata only when they hold ``key: value`` (or ``key = value``); other lines may also
    separate key and value by the file's separator, a semicolon or a tab (``Sample;HM-12``).  Later lines
    overwrite earlier ones with the same key.
    """
    meta: dict[str, str] = {}
    title = None
    for _, text in lines:
        comment = text.startswith("#")
        kv = _key_value(text, " " if comment else delimiter)
        if kv is not None:
            meta[kv[0]] = kv[1]
        elif not comment and title is None:
            title = text.strip().strip('"').strip()
    return meta, title or None


def temperature_in_title(title: str) -> str | None:
    """The one temperature a title names (``"Step 2  150 °C"`` → ``"150 °C"``), or ``None`` (none or several)."""
    tokens = title.replace("℃", " °C ").split()
    found = []
    for i, tok in enumerate(tokens):
        try:
            value, rest = parse_quantity(tok)
        except ValueError:
            continue
        unit = rest or (tokens[i + 1] if i + 1 < len(tokens) else "")
        scale = temperature_scale(unit.rstrip(",;:)"))
        if scale is not None:
            found.append(f"{value:g} {'°C' if scale == 'C' else 'K'}")
    return found[0] if len(found) == 1 else None
