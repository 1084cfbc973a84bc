"""``tauspec invert FILE...``: the continuous relaxation spectrum of each sweep."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..data.read import read_sweep
from ..data.write import atomic_write_text, dumps_json
from ..errors import SettingsError
from ..output.results import modes_entries
from ..output.tables import spectrum_tables, write_modes_csv
from ..spectrum.invert import invert
from ..spectrum.result import Spectrum
from .bands import add_band_arguments, band_fields, band_settings
from .common import add_output_arguments, output_dir_for, run_each_file


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``invert``: those of the inversion and those of ``--bands``."""
    add_inversion_options(p)
    add_band_arguments(p)


def add_inversion_options(p: argparse.ArgumentParser) -> None:
    """Register the files, output and inversion options (shared with commands that invert sweeps)."""
    p.add_argument("files", nargs="+", metavar="FILE", help="sweep files (text tables with a header row)")
    add_output_arguments(p)
    p.add_argument("--strength", default="auto", metavar="auto|VALUE",
                   help="regularization strength λ: 'auto' (default) or a positive number")
    p.add_argument("--select", default="lcurve", choices=["lcurve", "gcv"],
                   help="rule for --strength auto: L-curve corner (default) or GCV")
    p.add_argument("--grid", type=int, default=None, metavar="N", help="number of τ grid points")
    p.add_argument("--no-solvent", dest="solvent", action="store_false", help="do not fit a solvent viscosity η_s")
    p.add_argument("--plateau", action="store_true", help="fit an equilibrium modulus G_e (gels, solids)")
    p.add_argument("--eta-s", type=float, default=None, metavar="PA_S",
                   help="known solvent viscosity in Pa·s (subtracted instead of fitted)")
    p.add_argument("--no-modes", dest="modes", action="store_false",
                   help="skip the discrete Maxwell modes and the numbers derived from them")


def strength_value(text: str) -> str | float:
    """Parse ``--strength``: 'auto' or a positive number."""
    if text == "auto":
        return "auto"
    try:
        value = float(text)
    except ValueError:
        raise SettingsError(f"--strength must be 'auto' or a positive number, not {text!r}") from None
    if not value > 0:
        raise SettingsError(f"--strength must be positive, not {text!r}")
    return value


def invert_settings(args: argparse.Namespace) -> dict:
    """Keyword arguments for :func:`tauspec.spectrum.invert` from the parsed options."""
    return {
        "strength": strength_value(args.strength),
        "select": args.select,
        "grid": args.grid,
        "solvent": args.solvent,
        "plateau": args.plateau,
        "eta_s": args.eta_s,
    }


def add_modes(sweep: Any, spectrum: Spectrum, args: argparse.Namespace, result: dict) -> Any:
    """Fit Maxwell modes started from ``spectrum`` and add them to ``result`` (see :func:`modes_entries`)."""
    from ..modes.fit import fit_modes

    modes = fit_modes(sweep, spectrum, solvent=args.solvent, plateau=args.plateau, eta_s=args.eta_s)
    result.update(modes_entries(modes, spectrum))
    return modes


def modes_report(spectrum: Spectrum, modes: Any) -> str:
    """The modes table and the derived numbers from modes and spectrum side by side."""
    from ..modes.derived import derive, side_by_side

    return modes.report() + "\n" + side_by_side(derive(modes), derive(spectrum))


def write_spectrum_files(spectrum: Spectrum, out: Path, result: dict) -> None:
    """Write ``spectrum.csv``, ``fit.csv`` and ``result.json`` into ``out`` (each atomically)."""
    out.mkdir(parents=True, exist_ok=True)
    for name, text in spectrum_tables(spectrum).items():
        atomic_write_text(out / name, text)
    atomic_write_text(out / "result.json", dumps_json(result, indent=1) + "\n")


def run(args: argparse.Namespace) -> int:
    """Invert every file; print JSON lines or a text report."""
    settings = invert_settings(args)
    bands_kw = band_settings(args) if args.bands else None

    def work(path: str) -> tuple[dict, str]:
        sweep = read_sweep(path)
        spectrum = invert(sweep, **settings)
        result = spectrum.to_dict()
        modes = add_modes(sweep, spectrum, args, result) if getattr(args, "modes", True) else None
        bands = None
        if bands_kw is not None:
            from ..analysis.uncertainty.bands import confidence_bands

            bands = confidence_bands(spectrum, **bands_kw)
            result.update(band_fields(bands))
        out = output_dir_for(args, path)
        if out is not None:
            write_spectrum_files(spectrum, out, result)
            if modes is not None:
                write_modes_csv(out / "modes.csv", modes)
        if args.plot:
            from ..output.figures.spectrum import save_spectrum_figures

            save_spectrum_figures(spectrum, out or Path("."), prefix="" if out else f"{Path(path).stem}-",
                                  band=None if bands is None else (bands.H_lo, bands.H_hi))
        text = spectrum.report()
        if modes is not None:
            text += "\n" + modes_report(spectrum, modes)
        if bands is not None:
            text += "\n" + bands.report()
        return result, text

    return run_each_file(args, work)
