"""``tauspec demo``: write the invented example archive and process it."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..errors import TauspecError
from ..io import read_sweep
from ..spectrum import invert


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``demo``."""
    p.add_argument("--out", type=Path, default=Path("tauspec-demo"), metavar="DIR",
                   help="folder for the demo archive and its results (default: ./tauspec-demo)")
    p.add_argument("--seed", type=int, default=20261201, help="seed of the invented noise")


def run(args: argparse.Namespace) -> int:
    """Write the archive, invert each sweep, print a table."""
    import warnings

    from ..demo import write_demo_archive

    files = write_demo_archive(args.out / "archive", seed=args.seed)
    print(f"demo archive: {len(files)} sweep files in {args.out / 'archive'}")
    header = f"{'file':42s} {'status':6s} {'λ':>9s} {'rms':>7s} {'η_s [Pa·s]':>11s} {'window [s]':>19s}"
    print(header)
    print("-" * len(header))
    for path in files:
        rel = path.relative_to(args.out / "archive")
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                sp = invert(read_sweep(path))
        except TauspecError as exc:
            print(f"{str(rel):42s} error  {exc.reason}")
            continue
        lo, hi = sp.window
        print(f"{str(rel):42s} ok     {sp.strength:9.3g} {sp.residual_rms:7.2%} {sp.eta_s:11.3g} "
              f"{lo:9.3g}–{hi:<9.3g}")
    sys.stdout.flush()
    return 0
