"""The result folders of a batch: writing one result, deciding whether a stored result is current (resume).

Also: whether a folder holds another file's result (never overwritten), and removing what an interrupted
write left behind.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import stat
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from ..data.write import atomic_write_bytes, dumps_json
from ..output.words import LEFT_OUT
from .inputs import Input
from .layout import RESULT_NAMES, RUN_FILES, make_folders
from .settings import BatchSettings

__all__ = ["SCHEMA", "LEFT_OUT", "RESULT_FILES", "FIGURES", "error_files", "stored_owner", "remove_temporary_files"]


SCHEMA = "tauspec.batch/1.1"


#: Every file the pipeline may write into a result folder (stale ones are removed when a result changes).
FIGURES = ("fit.png", "spectrum.png", "lcurve.png")
RESULT_FILES = ("spectrum.csv", "fit.csv", "modes.csv") + tuple(
    f"{stem}.{fmt}" for stem in ("fit", "spectrum", "lcurve", "diagnosis") for fmt in ("png", "svg", "pdf"))

# The temporary names of an atomic write: ".NAME.XXXXXXXX.tmp" (tempfile.mkstemp) or ".NAME.tmp" (figures).
_TEMPORARY = re.compile(r"\.(?P<name>.+?)(\.[a-z0-9_]{8})?\.tmp")
_OURS = frozenset(RESULT_NAMES + RUN_FILES)
_BLOCK_FOLDER = re.compile(r"#\d+")  # the result folder of one block of a file, inside the file's folder


def _header(file: str, input_sha: str | None, settings: BatchSettings, status: str = "ok", error: str | None = None,
            retry: bool = False) -> dict[str, Any]:
    return {"schema": SCHEMA, "file": file, "status": status, "error": error, "retry": retry,
            "input_sha256": input_sha, "settings_sha256": settings.digest()}


# --------------------------------------------------------------------------- storing results


def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _load_json(path: Path) -> dict[str, Any] | None:
    try:
        d = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return d if isinstance(d, dict) else None


def stored_owner(folder: Path, stored: Mapping[str, Any] | None, file: str) -> str | None:
    """The refusal when ``folder`` holds the result of another file than ``file`` (never overwritten), or None."""
    if stored is None or stored.get("file") in (None, file):
        return None
    return (f"its result folder {str(folder)!r} holds the result of another file ({stored.get('file')!r}); "
            "move that folder away or choose another --out")


def _is_current(folder: Path, input_sha: str, settings: BatchSettings, stored: Mapping[str, Any] | None) -> bool:
    d = stored
    if not d or d.get("schema") != SCHEMA or d.get("retry"):
        return False
    if d.get("input_sha256") != input_sha or d.get("settings_sha256") != settings.digest():
        return False
    stopped = d.get("timed_out_after")
    if isinstance(stopped, int | float) and stopped < settings.time_limit:  # a longer limit may now finish it
        return False
    for name, sha in (d.get("tables") or {}).items():  # written without fsync: check they survived
        try:
            if _sha256((folder / name).read_bytes()) != sha:
                return False
        except OSError:
            return False
    return not (settings.plots and d.get("status") == "ok" and not all((folder / f).exists() for f in FIGURES))


def _store(out: Path, inp: Input, files: Mapping[str, str | bytes]) -> None:
    """Write one result folder; ``result.json`` last, so its presence means the folder is complete.

    Every file is written atomically; only ``result.json`` is flushed to the disk (fsync): it records the
    sha256 of the tables, which the resume check verifies, so a table lost in a crash of the machine is
    recomputed rather than trusted (one fsync per file instead of three).
    """
    folder = out / inp.key
    make_folders(folder)
    for name in RESULT_FILES:
        if name not in files and os.path.isfile(folder / name):
            (folder / name).unlink()
    for name, content in sorted(files.items(), key=lambda item: item[0] == "result.json"):
        data = content if isinstance(content, bytes) else content.encode("utf-8")
        atomic_write_bytes(folder / name, data, fsync=name == "result.json")


def error_files(file: str, message: str, input_sha: str | None, settings: BatchSettings, retry: bool,
                **extra: Any) -> dict[str, str]:
    """The files of a failed input: its ``result.json`` with the one-line reason (and ``extra`` keys)."""
    result = _header(file, input_sha, settings, "error", message, retry)
    result.update(extra)
    result["notes"] = []
    return {"result.json": dumps_json(result) + "\n"}


def remove_temporary_files(folders: Iterable[Path]) -> int:
    """Remove the temporary files that interrupted atomic writes left in ``folders``; return how many.

    Only regular files whose names are the temporary names tauspec gives its own outputs
    (``.spectrum.csv.k3j9x0ab.tmp``) are removed, in ``folders`` and their blocks' folders (``#2``); anything
    else is left alone.
    """
    removed = 0
    todo = list(folders)
    while todo:
        folder = todo.pop()
        try:
            entries = list(os.scandir(folder))
        except OSError:
            continue
        todo.extend(e.path for e in entries if _BLOCK_FOLDER.fullmatch(e.name) and e.is_dir(follow_symlinks=False))
        for e in entries:
            m = _TEMPORARY.fullmatch(e.name)
            if m is None or m.group("name") not in _OURS:
                continue
            try:
                if stat.S_ISREG(os.lstat(e.path).st_mode):
                    os.unlink(e.path)
                    removed += 1
            except OSError:
                continue
    return removed
