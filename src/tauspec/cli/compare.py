"""``tauspec compare FILE...``: shifts, shape distances and series scaling between samples.

Each FILE is a sweep file (inverted with the ``invert`` options), a ``result.json`` written by
``tauspec invert --out``, or a folder holding one, so archived results need not be recomputed.
"""

from __future__ import annotations

import argparse
import csv
import json
import math
from pathlib import Path
from typing import Any

from ..data.read import read_sweep
from ..data.units import temperature_kelvin
from ..data.write import atomic_write_text, dumps_json, write_csv
from ..errors import SettingsError, TauspecError
from . import invert as invert_command
from .common import each_file

__all__ = ["add_arguments", "run", "load_result", "read_manifest"]


MANIFEST_COLUMNS = ("file", "M", "c", "T", "label")


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``compare`` (the ``invert`` options apply to sweep files)."""
    invert_command.add_inversion_options(p)
    for action in p._actions:
        if action.dest == "files":
            action.help = "sweep files, result.json files or result folders written by 'tauspec invert --out'"
        elif action.dest == "json":
            action.help = "print the comparison as one JSON object on stdout, nothing else"
    p.add_argument("--reference", metavar="FILE", default=None,
                   help="compare every sample against this one (one of the FILEs) instead of all pairs")
    p.add_argument("--manifest", metavar="CSV", default=None,
                   help="CSV with columns file,M,c,T,label giving molecular weight, concentration, "
                        "temperature and a label per file (overrides the '# key: value' metadata)")
    p.add_argument("--replicates", type=int, default=None, metavar="N",
                   help="replicate spectra per sample for the shape test and the intervals (default 12; 0: none)")
    p.add_argument("--level", type=float, default=None, help="level of the shape test (default 0.05)")
    p.add_argument("--seed", type=int, default=0, help="seed of the resampling (default 0)")
    p.add_argument("--fixed-strength", action="store_true",
                   help="keep each sample's own strength λ in its replicates instead of re-choosing it (faster)")
    p.add_argument("--diagnose", action="store_true",
                   help="run the bead-spring diagnosis for Rouse parameter ratios and τ_R in the series")


def load_result(path: str, settings: dict[str, Any]) -> tuple[Any, Any]:
    """Return (Spectrum, stored diagnosis or None) from a sweep file (inverted), a result.json, or its folder.

    A result.json is either a spectrum (``tauspec invert --out``) or a batch result wrapping one (with its
    diagnosis, when the batch made one).
    """
    from ..output.results import diagnosis_from_dict, spectrum_from_dict
    from ..spectrum.invert import invert

    p = Path(path)
    if p.is_dir():
        p = p / "result.json"
        if not p.is_file():
            raise TauspecError("folder has no result.json (write one with 'tauspec invert --out')", path)
    if p.suffix.lower() == ".json":
        try:
            data = json.loads(p.read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise TauspecError("no such file", str(p)) from None
        except (OSError, UnicodeDecodeError) as exc:
            raise TauspecError(f"cannot read ({exc})", str(p)) from None
        except json.JSONDecodeError as exc:
            raise TauspecError(f"not valid JSON ({exc.msg})", str(p), exc.lineno) from None
        return spectrum_from_dict(data, str(p)), diagnosis_from_dict(data)
    return invert(read_sweep(path), **settings), None


def _number(text: str, what: str, source: str, line: int) -> float | None:
    text = (text or "").strip()
    if not text:
        return None
    try:
        value = float(text)
    except ValueError:
        raise SettingsError(f"{what} {text!r} is not a number", source, line) from None
    if not (value > 0 and math.isfinite(value)):
        raise SettingsError(f"{what} must be positive, not {text!r}", source, line)
    return value


def read_manifest(path: str) -> dict[str, dict[str, Any]]:
    """Read a manifest CSV ``file,M,c,T,label``; return a mapping from the file column to its values.

    Empty cells mean "not given".  T is in °C unless written with K (e.g. ``403.15 K``).
    """
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise SettingsError(f"cannot read the manifest ({exc.strerror or exc})", path) from None
    rows = list(csv.reader(line for line in text.splitlines() if line.strip() and not line.startswith("#")))
    if not rows:
        raise SettingsError("the manifest is empty", path)
    header = [h.strip() for h in rows[0]]
    if "file" not in header:
        raise SettingsError(f"the manifest needs a header row with the columns {','.join(MANIFEST_COLUMNS)}", path, 1)
    unknown = set(header) - set(MANIFEST_COLUMNS)
    if unknown:
        raise SettingsError(f"unknown manifest columns {sorted(unknown)} (allowed: {','.join(MANIFEST_COLUMNS)})",
                            path, 1)
    out: dict[str, dict[str, Any]] = {}
    for k, row in enumerate(rows[1:], start=2):
        cells = dict(zip(header, (c.strip() for c in row)))
        name = cells.get("file", "")
        if not name:
            raise SettingsError("a manifest row has no file", path, k)
        T = None
        if cells.get("T"):
            try:
                T = temperature_kelvin(cells["T"])
            except ValueError as exc:
                raise SettingsError(f"T {cells['T']!r}: {exc}", path, k) from None
        out[name] = {"M": _number(cells.get("M", ""), "M", path, k), "c": _number(cells.get("c", ""), "c", path, k),
                     "T": T, "label": cells.get("label") or None}
    return out


def _manifest_entry(manifest: dict[str, dict[str, Any]], path: str) -> dict[str, Any]:
    if path in manifest:
        return manifest[path]
    resolved = Path(path).resolve()
    for key, value in manifest.items():
        if Path(key).resolve() == resolved:
            return value
    by_name = [v for k, v in manifest.items() if Path(k).name == Path(path).name]
    return by_name[0] if len(by_name) == 1 else {}


def run(args: argparse.Namespace) -> int:
    """Load every sample, compare them and print the result (one JSON object with --json)."""
    from ..analysis.comparison.compare import compare
    from ..analysis.comparison.replicates import N_REPLICATES
    from ..analysis.comparison.shape import LEVEL
    from ..output.figures.overlay import save_overlay

    files = list(each_file(args.files))
    if len(files) < 2:
        raise SettingsError("compare needs at least two files")
    settings = invert_command.invert_settings(args)
    spectra, stored = [], []
    for f in files:
        try:
            spectrum, diagnosis = load_result(f, settings)
        except TauspecError as exc:
            if exc.source is None:
                exc = type(exc)(exc.reason, f, exc.line)
            raise exc from None
        spectra.append(spectrum)
        stored.append(diagnosis)
    # stored diagnoses (batch results) are used unless --diagnose asks for fresh ones
    diagnoses = stored if any(d is not None for d in stored) and not args.diagnose else None
    manifest = read_manifest(args.manifest) if args.manifest else {}
    entries = [_manifest_entry(manifest, f) for f in files]
    metadata = [{k: e.get(k) for k in ("M", "c", "T")} for e in entries]
    labels = [e.get("label") or sp.sample or Path(f).stem for e, sp, f in zip(entries, spectra, files)]
    if len(set(labels)) < len(labels):  # sample names repeat: fall back to the files as given
        labels = files
    reference = None
    if args.reference is not None:
        matches = [i for i, f in enumerate(files) if f == args.reference or Path(f).resolve() ==
                   Path(args.reference).resolve()]
        if not matches:
            raise SettingsError(f"--reference {args.reference!r} is not one of the FILEs")
        reference = matches[0]
    result = compare(spectra, labels=labels, reference=reference, metadata=metadata,
                     replicates=N_REPLICATES if args.replicates is None else args.replicates,
                     level=LEVEL if args.level is None else args.level, seed=args.seed, diagnose=args.diagnose,
                     diagnoses=diagnoses,
                     reselect=not args.fixed_strength)
    data = result.to_dict()
    if args.out is not None:
        out = Path(args.out)
        if out.exists() and not out.is_dir():
            raise SettingsError(f"--out {args.out!r} is a file, not a folder")
        out.mkdir(parents=True, exist_ok=True)
        atomic_write_text(out / "comparison.json", dumps_json(data, indent=1) + "\n")
        cols = ["a", "b", "time_shift", "modulus_shift", "shape_distance", "p_value", "same_shape"]
        write_csv(out / "pairs.csv", cols + ["time_shift_lo", "time_shift_hi", "modulus_shift_lo", "modulus_shift_hi"],
                  [[getattr(p, c) for p in result.pairs] for c in cols]
                  + [[p.time_shift_ci[0] for p in result.pairs], [p.time_shift_ci[1] for p in result.pairs],
                     [p.modulus_shift_ci[0] for p in result.pairs], [p.modulus_shift_ci[1] for p in result.pairs]])
    if args.plot:
        save_overlay(result, args.out or ".", prefix="" if args.out else "compare-")
    if args.json:
        print(dumps_json(data), flush=True)
    else:
        print(result.report(), flush=True)
    return 0
