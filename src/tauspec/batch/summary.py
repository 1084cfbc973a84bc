"""summary.csv: one row per input file, rebuilt from the stored results.

A row shows the input's own result only: the stored result must name the same file, otherwise the row says no
result is stored.  Text cells a spreadsheet would run as a formula (``=``, ``+``, ``-``, ``@``, tab, CR) are
written with a leading ``'`` (:func:`tauspec.output.text.spreadsheet_cell`); :func:`read_summary` undoes it.
"""

from __future__ import annotations

import csv
import io
import math
import os
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from ..data.write import atomic_write_text
from ..output.text import spreadsheet_cell, spreadsheet_value
from ..output.words import key_numbers, zero_shear_viscosity
from .inputs import Input
from .store import _load_json

__all__ = ["SUMMARY_COLUMNS", "TEXT_COLUMNS", "summary_row", "summary_rows", "write_summary", "read_summary"]


#: Columns of ``summary.csv``, in order.  The verdict's numbers: τ_R, G0 and the mode exponent a for a Rouse or
#: Zimm sample, G_N⁰ and τ_d for an entangled one, the gel exponent n for a gel (blank for the other verdicts: a
#: bead-spring fit's τ_R means nothing for an entangled melt); the last three came later and follow ``error``.
SUMMARY_COLUMNS = ("file", "status", "sample", "verdict", "tau_R", "G0", "alpha", "eta0", "lambda", "eta_s",
                   "residual_rms", "n_modes", "warnings", "error", "GN0", "tau_d", "gel_n")
#: The columns that hold text (the others hold numbers, written as ``repr(float)``).
TEXT_COLUMNS = ("file", "status", "sample", "verdict", "error")


# --------------------------------------------------------------------------- the summary


def _num(v: Any) -> str:
    if isinstance(v, bool) or v is None:
        return ""
    if isinstance(v, int | float):
        return repr(float(v)) if math.isfinite(v) else ""
    return str(v)


def _error_row(file: str, error: str) -> dict[str, str]:
    return {**dict.fromkeys(SUMMARY_COLUMNS, ""), "file": file, "status": "error", "error": error}


def summary_row(result: Mapping[str, Any] | None, file: str) -> dict[str, str]:
    """One row of ``summary.csv`` from a stored result (blank where a step is not available).

    A result that names another file than ``file`` is not this file's result: the row says none is stored.
    """
    if result is None or result.get("file", file) != file:
        return _error_row(file, f"{file}: no result stored (run the batch again)")
    spectrum = result.get("spectrum") or {}
    diagnosis = result.get("diagnosis") or {}
    derived = result.get("derived") or {}
    modes = result.get("modes") or {}
    warn = list(result.get("notes") or [])  # every warning of every step (the spectrum's are among them)
    key = {k: v for k, v, _ in key_numbers(diagnosis)} if diagnosis else {}
    row = {
        "file": file,
        "status": str(result.get("status", "error")),
        "sample": str(result.get("sample") or ""),
        "verdict": str(diagnosis.get("verdict") or ""),
        "tau_R": _num(key.get("tau_R")),
        "G0": _num(key.get("G0")),
        "alpha": _num(key.get("alpha")),
        "eta0": _num(zero_shear_viscosity(derived)[0]),
        "lambda": _num(spectrum.get("lambda")),
        "eta_s": _num(spectrum.get("eta_s")),
        "residual_rms": _num(spectrum.get("residual_rms")),
        "n_modes": str(len(modes["g"])) if "g" in modes else "",
        "warnings": str(len(warn)) if result.get("status") == "ok" else "",
        "error": str(result.get("error") or ""),
        "GN0": _num(key.get("GN0")),
        "tau_d": _num(key.get("tau_d")),
        "gel_n": _num(key.get("n")),
    }
    return row


def summary_rows(out: str | os.PathLike[str], inputs: Iterable[Input],
                 refused: Mapping[str, str] | None = None) -> list[dict[str, str]]:
    """The rows of ``summary.csv``, one per input in the order given: a refused input's row gives the reason."""
    out = Path(out)
    refused = refused or {}
    rows = []
    for inp in inputs:
        if inp.file in refused:
            rows.append(_error_row(inp.file, f"{inp.file}: {refused[inp.file]}"))
        else:
            rows.append(summary_row(_load_json(out / inp.key / "result.json"), inp.file))
    return rows


def write_summary(out: str | os.PathLike[str], rows: Iterable[Mapping[str, str]]) -> Path:
    """Write ``summary.csv`` (atomically), its text cells made safe for spreadsheets."""
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=SUMMARY_COLUMNS, lineterminator="\n")
    writer.writeheader()
    for row in rows:
        writer.writerow({k: spreadsheet_cell(v) if k in TEXT_COLUMNS else v for k, v in row.items()})
    path = Path(out) / "summary.csv"
    atomic_write_text(path, buf.getvalue())
    return path


def read_summary(out: str | os.PathLike[str]) -> list[dict[str, str]]:
    """Read ``summary.csv`` back as a list of rows (the text as it was before it was made spreadsheet-safe)."""
    with open(Path(out) / "summary.csv", encoding="utf-8", newline="") as fh:
        return [{k: spreadsheet_value(v) if k in TEXT_COLUMNS else v for k, v in row.items()}
                for row in csv.DictReader(fh)]
