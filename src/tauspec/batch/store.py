"""The result folders of a batch: writing one result, and deciding whether a stored result is current (resume)."""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..data.write import atomic_write_bytes, dumps_json
from .inputs import Input
from .settings import BatchSettings

__all__ = ["SCHEMA", "RESULT_FILES", "FIGURES"]


SCHEMA = "tauspec.batch/1.1"


#: Every file the pipeline may write into a result folder (stale ones are removed when a result changes).
FIGURES = ("fit.png", "spectrum.png", "lcurve.png")
RESULT_FILES = ("spectrum.csv", "fit.csv", "modes.csv") + tuple(
    f"{stem}.{fmt}" for stem in ("fit", "spectrum", "lcurve", "diagnosis") for fmt in ("png", "svg", "pdf"))


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


def _is_current(folder: Path, input_sha: str, settings_sha: str, plots: bool) -> bool:
    d = _load_json(folder / "result.json")
    if not d or d.get("schema") != SCHEMA or d.get("retry"):
        return False
    if d.get("input_sha256") != input_sha or d.get("settings_sha256") != settings_sha:
        return False
    for name, sha in (d.get("tables") or {}).items():  # written without fsync: check they survived
        try:
            if _sha256((folder / name).read_bytes()) != sha:
                return False
        except OSError:
            return False
    return not (plots and d.get("status") == "ok" and not all((folder / f).exists() for f in FIGURES))


def _store(out: Path, inp: Input, files: Mapping[str, str | bytes]) -> None:
    """Write one result folder; ``result.json`` last, so its presence means the folder is complete.

    Every file is written atomically; only ``result.json`` is flushed to the disk (fsync): it records the
    sha256 of the tables, which the resume check verifies, so a table lost in a crash of the machine is
    recomputed rather than trusted (one fsync per file instead of three).
    """
    folder = out / inp.key
    folder.mkdir(parents=True, exist_ok=True)
    for name in RESULT_FILES:
        if name not in files and (folder / name).exists():
            (folder / name).unlink()
    for name, content in sorted(files.items(), key=lambda item: item[0] == "result.json"):
        data = content if isinstance(content, bytes) else content.encode("utf-8")
        atomic_write_bytes(folder / name, data, fsync=name == "result.json")


def _error_files(inp: Input, message: str, input_sha: str | None, settings: BatchSettings,
                 retry: bool) -> dict[str, str]:
    result = _header(inp.file, input_sha, settings, "error", message, retry)
    result["notes"] = []
    return {"result.json": dumps_json(result) + "\n"}
