"""``tauspec compare FILE...``: shifts, shape distances and series scaling between samples.

Each FILE is a sweep file (inverted with the ``invert`` options), a ``result.json`` written by
``tauspec invert --out``, or a folder holding one, so archived results need not be recomputed; a batch output
folder stands for every result of that run that succeeded, found through the run's index.
"""

from __future__ import annotations

import argparse
import sys
import traceback
from pathlib import Path
from typing import Any

from ..analysis.comparison.options import CompareOptions
from ..data.manifest import MANIFEST_COLUMNS, ManifestEntry, read_manifest
from ..data.read import read_sweep
from ..data.write import atomic_write_text, dumps_json, write_csv
from ..errors import SettingsError, TauspecError
from ..spectrum.options import InvertOptions
from . import invert as invert_command
from .common import check_output_arguments, each_file, figure_formats, print_text, progress_bar
from .options import add_options, options_from_args

__all__ = ["add_arguments", "run", "load_result", "PAIR_COLUMNS"]

#: The columns of pairs.csv: the pair's field (or interval end) → the column's name in words.
PAIR_COLUMNS = {"a": "sample a", "b": "sample b", "time_shift": "time shift a_t", "modulus_shift": "modulus shift b",
                "shape_distance": "shape distance D2", "p_value": "p value", "same_shape": "same shape",
                "time_shift_lo": "a_t low (95 %)", "time_shift_hi": "a_t high (95 %)",
                "modulus_shift_lo": "b low (95 %)", "modulus_shift_hi": "b high (95 %)"}


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``compare`` (the ``invert`` options apply to sweep files)."""
    invert_command.add_inversion_options(p, modes=False)
    for action in p._actions:
        if action.dest == "files":
            action.help = "sweep files, result.json files or result folders written by 'tauspec invert --out'"
        elif action.dest == "json":
            action.help = "print the comparison as one JSON object on stdout, nothing else"
        elif action.dest == "out":
            action.help = "write comparison.json and pairs.csv into DIR"
    p.add_argument("--reference", metavar="FILE", default=None,
                   help="compare every sample against this one (one of the FILEs) instead of all pairs")
    p.add_argument("--manifest", metavar="CSV", default=None,
                   help="CSV with columns file,M,c,T,label giving molecular weight, concentration, "
                        "temperature and a label per file (overrides the '# key: value' metadata)")
    add_options(p, CompareOptions)
    p.add_argument("--diagnose", action="store_true",
                   help="run the bead-spring diagnosis for Rouse parameter ratios and τ_R in the series")


def load_result(path: str, options: InvertOptions) -> tuple[Any, Any]:
    """Return (Spectrum, stored diagnosis or None) from a sweep file (inverted), a result.json, or its folder.

    A result.json is either a spectrum (``tauspec invert --out``) or a batch result wrapping one (with its
    diagnosis, when the batch made one).
    """
    from ..output.results import diagnosis_from_result, read_result_json, spectrum_from_result
    from ..spectrum.invert import invert

    p = Path(path)
    if p.is_dir() or p.suffix.lower() == ".json":
        data = read_result_json(p)
        return spectrum_from_result(data, str(p)), diagnosis_from_result(data)
    return invert(read_sweep(path), options), None


def _manifest_entry(manifest: list[ManifestEntry], path: str) -> ManifestEntry | None:
    """The manifest row of a FILE argument: the same path as written, the same file, or a unique file name."""
    for entry in manifest:
        if entry.file == path:
            return entry
    resolved = Path(path).resolve()
    for entry in manifest:
        if Path(entry.file).resolve() == resolved or entry.path.resolve() == resolved:
            return entry
    by_name = [e for e in manifest if Path(e.file).name == Path(path).name]
    return by_name[0] if len(by_name) == 1 else None


def _read_manifest(path: str) -> list[ManifestEntry]:
    """The manifest of ``--manifest``; compare uses M, c, T and label and refuses other columns."""
    entries = read_manifest(path)
    extra = sorted({k for e in entries for k in e.extra})
    if extra:
        raise SettingsError(f"unknown manifest columns {extra} (allowed: {','.join(MANIFEST_COLUMNS)})", path, 1)
    return entries


def _same_file(a: str, b: str) -> bool:
    return a == b or Path(a).resolve() == Path(b).resolve()


def run(args: argparse.Namespace) -> int:
    """Load every sample, compare them and print the result (one JSON object with --json).

    A file that cannot be read or inverted gets one line ``tauspec: error: file: reason`` on stderr and the others
    are compared without it (exit status 1), as the other commands do; nothing is compared when the reference is
    among those files or fewer than two samples are left.
    """
    check_output_arguments(args)
    from ..output.results import expand_batch_folders

    files = expand_batch_folders(each_file(args.files))  # a batch output folder: its results, by its index
    if len(files) < 2:
        twice = " (the same file was given twice)" if len(args.files) >= 2 else ""
        raise SettingsError(f"compare needs at least two different files{twice}")
    options = options_from_args(args, CompareOptions)
    inversion = invert_command.invert_options(args)
    formats = figure_formats(args)
    bar = progress_bar(args, 2 * len(files), "step", desc="compare")
    try:
        spectra, stored, kept, failed = [], [], [], []
        for f in files:
            try:
                spectrum, diagnosis = load_result(f, inversion)
            except TauspecError as exc:
                if getattr(args, "debug", False):  # --debug shows the traceback, here as in cli.main
                    traceback.print_exc()
                if exc.source is None:
                    exc = type(exc)(exc.reason, f, exc.line)
                print(f"tauspec: error: {exc.one_line()}", file=sys.stderr)
                failed.append(f)
                continue
            finally:
                if bar is not None:
                    bar.update(1)
            kept.append(f)
            spectra.append(spectrum)
            stored.append(diagnosis)
        if failed and (len(kept) < 2 or (args.reference is not None
                                         and any(_same_file(f, args.reference) for f in failed))):
            return 1  # each failure has its line; nothing is left to compare
        result = _compare(args, kept, spectra, stored, options, None if bar is None else bar.update)
    finally:
        if bar is not None:
            bar.close()
    data = result.to_dict()
    written = []
    if args.out is not None:
        out = Path(args.out)
        out.mkdir(parents=True, exist_ok=True)
        atomic_write_text(out / "comparison.json", dumps_json(data, indent=1) + "\n")
        write_csv(out / "pairs.csv", list(PAIR_COLUMNS.values()),
                  [[getattr(p, c) for p in result.pairs] for c in list(PAIR_COLUMNS)[:7]]
                  + [[p.time_shift_ci[0] for p in result.pairs], [p.time_shift_ci[1] for p in result.pairs],
                     [p.modulus_shift_ci[0] for p in result.pairs], [p.modulus_shift_ci[1] for p in result.pairs]])
        written += [out / "comparison.json", out / "pairs.csv"]
        if args.plot:
            from ..output.figures.overlay import save_overlay

            written += save_overlay(result, out, formats=formats)
    if args.json:
        print(dumps_json(data), flush=True)
    else:
        text = result.report() + "".join(f"\n  wrote {p}" for p in written)
        print_text(args, text)
    return 1 if failed else 0


def _compare(args: argparse.Namespace, files: list[str], spectra: list[Any], stored: list[Any],
             options: CompareOptions, progress: Any) -> Any:
    """The comparison of the loaded samples with the manifest's metadata and labels (see ``run``)."""
    from ..analysis.comparison.compare import compare

    # stored diagnoses (batch results) are used unless --diagnose asks for fresh ones
    diagnoses = stored if any(d is not None for d in stored) and not args.diagnose else None
    manifest = _read_manifest(args.manifest) if args.manifest else []
    entries = [_manifest_entry(manifest, f) for f in files]
    metadata = [{"M": e.M, "c": e.c, "T": e.T} if e is not None else {} for e in entries]
    labels = [(e.label if e is not None else None) or sp.sample or Path(f).stem
              for e, sp, f in zip(entries, spectra, files)]
    if len(set(labels)) < len(labels):  # sample names repeat: fall back to the files as given
        labels = files
    reference = None
    if args.reference is not None:
        matches = [i for i, f in enumerate(files) if _same_file(f, args.reference)]
        if not matches:
            raise SettingsError(f"--reference {args.reference!r} is not one of the FILEs")
        reference = matches[0]
    return compare(spectra, options, labels=labels, reference=reference, metadata=metadata,
                   diagnose=args.diagnose, diagnoses=diagnoses, progress=progress)
