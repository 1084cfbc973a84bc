"""The ``tauspec diagnose FILE...`` command: does the unentangled bead-spring (Rouse) description hold."""

from __future__ import annotations

import argparse
import re
import sys
from pathlib import Path

from ..errors import SettingsError, TauspecError

__all__ = ["add_arguments", "run"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``tauspec diagnose``."""
    parser.add_argument("files", nargs="+", metavar="FILE", help="frequency-sweep files")
    parser.add_argument("--json", action="store_true", help="print one JSON object per file and nothing else")
    parser.add_argument("--plot", action="store_true", help="write <sample>-diagnosis.png (into --out or here)")
    parser.add_argument("--out", metavar="DIR", help="write <sample>-diagnosis.json and .txt (and the PNG) here")
    parser.add_argument("--no-spectrum", action="store_true",
                        help="skip the continuous-spectrum tests (faster; they are then reported as not made)")


def _stem(name: str) -> str:
    return re.sub(r"[^\w.\-]+", "_", name).strip("._") or "sample"


def run(args: argparse.Namespace) -> int:
    """Diagnose each file; return 0, or 1 when any file failed."""
    from ..diagnosis import diagnose
    from ..io import atomic_write_text, dumps_json, read_sweep

    out = Path(args.out) if args.out else None
    if out is not None:
        if out.exists() and not out.is_dir():
            raise SettingsError("--out must be a folder", str(out))
        out.mkdir(parents=True, exist_ok=True)
    status = 0
    for path in args.files:
        try:
            sweep = read_sweep(path)
            diag = diagnose(sweep, use_spectrum=not args.no_spectrum)
            stem = _stem(sweep.name) + "-diagnosis"
            if args.json:
                print(dumps_json(diag.to_dict()), flush=True)
            else:
                print(diag.report(), flush=True)
                print()
            if out is not None:
                atomic_write_text(out / f"{stem}.json", dumps_json(diag.to_dict(), indent=2) + "\n")
                atomic_write_text(out / f"{stem}.txt", diag.report() + "\n")
            if args.plot:
                from ..diagnosis_plot import plot_diagnosis

                plot_diagnosis(diag, (out or Path(".")) / f"{stem}.png")
        except TauspecError as exc:
            if len(args.files) == 1:
                raise
            print(f"tauspec: error: {exc.one_line()}", file=sys.stderr)
            status = 1
    return status
