"""Writing results: atomic file writes, CSV tables and deterministic JSON.

Every result file is written atomically (a temporary file in the same folder, then a rename), so a crash leaves
the old file or the new one, never half of one.  JSON is deterministic: NaN and infinities become ``null`` and
keys keep their order, so the same result gives byte-identical text.
"""

from __future__ import annotations

import functools
import json
import math
import os
import tempfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

__all__ = ["atomic_write_bytes", "atomic_write_text", "csv_text", "write_csv", "dumps_json", "jsonable"]


@functools.lru_cache(maxsize=1)
def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes, *, fsync: bool = True) -> None:
    """Write ``data`` to ``path`` atomically: a temporary file in the same folder, then a rename.

    A crash of the process leaves either the old file or the new one, never half
    of one.  ``fsync`` (default) also flushes the data to the disk before the
    rename, against a crash of the machine; without it the write is cheaper and
    still atomic for the process.  The file gets the usual permissions (0666
    less the umask), not the 0600 of a temporary file.
    """
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=p.parent)
    try:
        os.fchmod(fd, 0o666 & ~_umask())
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            if fsync:
                os.fsync(fh.fileno())
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def atomic_write_text(path: str | os.PathLike[str], text: str) -> None:
    """Write ``text`` (UTF-8, newlines as given) to ``path`` atomically (see :func:`atomic_write_bytes`)."""
    atomic_write_bytes(path, text.encode("utf-8"))


def _fmt(v: Any) -> str:
    if isinstance(v, float | np.floating):
        return "" if not math.isfinite(v) else repr(float(v))
    return "" if v is None else str(v)


def csv_text(header: Sequence[str], columns: Sequence[Sequence[Any]]) -> str:
    """Return equal-length columns as comma-separated text with a header row."""
    n = len(columns[0]) if columns else 0
    out = [",".join(header)]
    for i in range(n):
        out.append(",".join(_fmt(c[i]) for c in columns))
    return "\n".join(out) + "\n"


def write_csv(path: str | os.PathLike[str], header: Sequence[str], columns: Sequence[Sequence[Any]]) -> None:
    """Write equal-length columns as a comma-separated file with a header row (atomically)."""
    atomic_write_text(path, csv_text(header, columns))


def jsonable(obj: Any) -> Any:
    """Return ``obj`` with numpy values as Python numbers and lists, non-finite floats as ``None``."""
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [jsonable(v) for v in obj.tolist()]
    if isinstance(obj, np.bool_ | bool):
        return bool(obj)
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, float | np.floating):
        f = float(obj)
        return f if math.isfinite(f) else None
    return obj


def dumps_json(obj: Any, *, indent: int | None = None) -> str:
    """Return deterministic JSON: NaN and infinities become ``null``, keys keep their order."""
    return json.dumps(jsonable(obj), indent=indent, allow_nan=False, ensure_ascii=False)
