"""``tauspec invert FILE...``: the continuous relaxation spectrum of each sweep."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..data.read import read_sweep
from ..data.write import atomic_write_text, dumps_json
from ..modes.options import ModesOptions
from ..output.results import modes_entries
from ..output.tables import spectrum_tables, write_modes_csv
from ..spectrum.invert import invert
from ..spectrum.options import InvertOptions
from ..spectrum.result import Spectrum
from .bands import add_band_arguments, band_fields, band_settings
from .common import add_output_arguments, output_dir_for, run_each_file
from .options import add_options, options_from_args


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``invert``: those of the inversion and those of ``--bands``."""
    add_inversion_options(p)
    add_band_arguments(p)


def add_inversion_options(p: argparse.ArgumentParser, *, modes: bool = True) -> None:
    """Register the files, output and inversion options (shared with commands that invert sweeps)."""
    p.add_argument("files", nargs="+", metavar="FILE", help="sweep files (text tables with a header row)")
    add_output_arguments(p)
    add_options(p, InvertOptions)
    if modes:
        p.add_argument("--no-modes", dest="modes", action="store_false",
                       help="skip the discrete Maxwell modes and the numbers derived from them")
        add_options(p, ModesOptions)


def invert_options(args: argparse.Namespace) -> InvertOptions:
    """The inversion options from the parsed arguments."""
    return options_from_args(args, InvertOptions)


def add_modes(sweep: Any, spectrum: Spectrum, args: argparse.Namespace, result: dict) -> Any:
    """Fit Maxwell modes started from ``spectrum`` and add them to ``result`` (see :func:`modes_entries`)."""
    from ..modes.fit import fit_modes

    modes = fit_modes(sweep, spectrum, options_from_args(args, ModesOptions, **_physics(spectrum.options)))
    result.update(modes_entries(modes, spectrum))
    return modes


def _physics(options: InvertOptions) -> dict[str, Any]:
    """The physical switches of an inversion, which the modes share."""
    return {"solvent": options.solvent, "equilibrium_modulus": options.equilibrium_modulus, "eta_s": options.eta_s}


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
    options = invert_options(args)
    options_from_args(args, ModesOptions)  # refuse a bad --modes before any work
    band_options = band_settings(args) if args.bands else None

    def work(path: str) -> tuple[dict, str]:
        sweep = read_sweep(path)
        spectrum = invert(sweep, options)
        result = spectrum.to_dict()
        modes = add_modes(sweep, spectrum, args, result) if getattr(args, "modes", True) else None
        bands = None
        if band_options is not None:
            from ..analysis.uncertainty.bands import confidence_bands

            bands = confidence_bands(spectrum, band_options)
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
