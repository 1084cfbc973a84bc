"""Whole results as the commands and the batch store them, written and read back through the records.

A stored result is one JSON object: the spectrum's keys at the top (``tauspec invert --out``) or wrapped in a
batch result (``spectrum``, ``modes``, ``modes_fit``, ``derived``, ``derived_spectrum``, ``diagnosis``).  This
module assembles those entries and reads them back with the records' ``from_dict``
(:mod:`tauspec.data.record`), so that the report, ``compare`` and the batch read results one way.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from ..analysis.diagnosis.diagnose import Diagnosis
from ..data.write import atomic_write_text, dumps_json
from ..errors import TauspecError
from ..modes.derived import derive
from ..spectrum.result import Spectrum

__all__ = ["modes_json", "modes_entries", "read_result_json", "spectrum_from_result", "diagnosis_from_result",
           "INDEX_NAME", "INDEX_SCHEMA", "write_run_index", "read_run_index", "result_folder", "expand_batch_folders"]

#: The index of a batch output folder: which input's result is in which folder (written by the batch at the end
#: of every run; the report and ``compare`` find results through it, never by guessing a folder from a name).
INDEX_NAME = "index.json"
INDEX_SCHEMA = "tauspec.batch-index/1"

#: The keys of the ``modes`` object of a result: the modes and their standard errors.
_MODES_KEYS = ("g", "tau", "g_se", "tau_se")


def modes_json(modes: Any) -> dict[str, Any]:
    """The ``modes`` object of a result: the modes and their standard errors (``g``, ``tau``, ``g_se``, ``tau_se``)."""
    d = modes.to_dict()
    return {k: d[k] for k in _MODES_KEYS}


def modes_entries(modes: Any, spectrum: Any) -> dict[str, Any]:
    """The entries of a result for fitted Maxwell modes started from ``spectrum``.

    ``modes`` ({g, tau, g_se, tau_se}), ``modes_fit`` (flags, window, count rule), ``derived`` (from the modes)
    and ``derived_spectrum`` (the same numbers from the continuous spectrum).
    """
    return {"modes": modes_json(modes), "modes_fit": modes.details(),
            "derived": derive(modes).to_dict(), "derived_spectrum": derive(spectrum).to_dict()}


def read_result_json(path: str | os.PathLike[str]) -> dict[str, Any]:
    """The JSON object of a stored result: a ``result.json`` file, or a folder holding one.

    Raises
    ------
    TauspecError
        One line naming the file: missing, unreadable, not JSON, not an object.
    """
    p = Path(path)
    if p.is_dir():
        p = p / "result.json"
        if not p.is_file():
            raise TauspecError("folder has no result.json (write one with 'tauspec invert --out')", str(path))
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise TauspecError("no such file", str(p)) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise TauspecError(f"cannot read ({exc})", str(p)) from None
    except json.JSONDecodeError as exc:
        raise TauspecError(f"not valid JSON ({exc.msg})", str(p), exc.lineno) from None
    if not isinstance(data, dict):
        raise TauspecError("not a result (expected a JSON object)", str(p))
    return data


def spectrum_from_result(d: Mapping[str, Any], source: str = "<result>") -> Spectrum:
    """The :class:`~tauspec.spectrum.result.Spectrum` of a stored result (a spectrum, or a batch result wrapping one).

    Raises
    ------
    TauspecError
        When the result holds no spectrum (a failed batch file says why) or the spectrum is malformed.
    """
    if not isinstance(d, Mapping):
        raise TauspecError("not a spectrum result (expected a JSON object)", source)
    if "status" in d and "spectrum" in d or str(d.get("schema", "")).startswith("tauspec.batch/"):
        if not isinstance(d.get("spectrum"), Mapping):
            raise TauspecError(f"the stored result holds no spectrum (status {d.get('status')!r}"
                               + (f": {d['error']}" if d.get("error") else "") + ")", source)
        d = d["spectrum"]
    if "schema" not in d:
        raise TauspecError("not a spectrum result (no schema)", source)
    return Spectrum.from_dict(d, source)


def diagnosis_from_result(d: Mapping[str, Any]) -> Diagnosis | None:
    """The stored diagnosis of a batch result (``result["diagnosis"]``), or None when there is none."""
    diag = d.get("diagnosis") if isinstance(d, Mapping) else None
    if not isinstance(diag, Mapping) or "verdict" not in diag:
        return None
    try:
        return Diagnosis.from_dict(diag)
    except TauspecError:
        return None


# --------------------------------------------------------------------------- the index of a batch run


def write_run_index(out: str | os.PathLike[str], entries: Iterable[Mapping[str, Any]],
                    notes: Iterable[str] = ()) -> Path:
    """Write ``out/index.json``: one entry per input, in summary order, and the run's notes.

    Each entry has ``file``, ``folder`` (relative to ``out``; null when the input was refused) and ``status``;
    the notes say what the folder walk left out.
    """
    path = Path(out) / INDEX_NAME
    doc = {"schema": INDEX_SCHEMA, "results": [dict(e) for e in entries], "notes": list(notes)}
    atomic_write_text(path, dumps_json(doc, indent=1) + "\n")
    return path


def read_run_index(out: str | os.PathLike[str]) -> dict[str, str | None]:
    """The index of a batch output folder: input file → its result folder (relative to ``out``, or None).

    Raises
    ------
    TauspecError
        When ``out`` has no readable index (a folder written before the index existed: run the batch again,
        current results are kept).
    """
    path = Path(out) / INDEX_NAME
    try:
        d = json.loads(path.read_text(encoding="utf-8"))
        if not str(d.get("schema", "")).startswith("tauspec.batch-index/"):
            raise ValueError("not a batch index")
        return {str(e["file"]): (None if e.get("folder") is None else str(e["folder"])) for e in d["results"]}
    except FileNotFoundError:
        raise TauspecError("no batch index here (index.json); run 'tauspec batch' into this folder again "
                           "(current results are kept)", str(path)) from None
    except (OSError, ValueError, TypeError, KeyError, AttributeError) as exc:
        raise TauspecError(f"not a batch index ({exc})", str(path)) from None


def result_folder(out: str | os.PathLike[str], index: Mapping[str, str | None], file: str) -> Path | None:
    """The result folder of ``file`` by the run's index, when it holds that file's own result (else None)."""
    folder = index.get(file)
    if not folder or os.path.isabs(folder) or ".." in Path(folder).parts:
        return None
    p = Path(out) / folder
    try:
        stored = read_result_json(p)
    except TauspecError:
        return None
    return p if stored.get("file") == file else None


def expand_batch_folders(paths: Iterable[str]) -> list[str]:
    """``paths`` with each batch output folder replaced by its inputs' result folders (those that succeeded)."""
    out: list[str] = []
    for p in paths:
        if os.path.isdir(p) and not os.path.exists(os.path.join(p, "result.json")) and \
                os.path.exists(os.path.join(p, INDEX_NAME)):
            index = read_run_index(p)
            for file in index:
                folder = result_folder(p, index, file)
                if folder is not None and read_result_json(folder).get("status") == "ok":
                    out.append(str(folder))
        else:
            out.append(p)
    return out
