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
from .bands import add_band_arguments, band_fields, band_settings, run_bands
from .common import add_output_arguments, check_output_arguments, figure_formats, output_dir_for, run_each_file
from .options import add_options, options_from_args
from .text import bands_text, derived_text, modes_text, spectrum_text


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``invert``: those of the inversion and those of ``--bands``."""
    add_inversion_options(p)
    add_band_arguments(p)


def add_inversion_options(p: argparse.ArgumentParser, *, modes: bool = True) -> None:
    """Register the files, output and inversion options (shared with commands that invert sweeps)."""
    p.add_argument("files", nargs="+", metavar="FILE", help="sweep files (text tables with a header row)")
    add_output_arguments(p, out_help="write spectrum.csv, fit.csv, modes.csv and result.json into DIR "
                                     "(DIR/<file stem>/ for several files)")
    g = p.add_argument_group("inversion")
    add_options(g, InvertOptions)
    if modes:
        g = p.add_argument_group("Maxwell modes")
        g.add_argument("--no-modes", dest="modes", action="store_false",
                       help="skip the discrete Maxwell modes and the numbers derived from them")
        add_options(g, ModesOptions)


def invert_options(args: argparse.Namespace) -> InvertOptions:
    """The inversion options from the parsed arguments."""
    return options_from_args(args, InvertOptions)


def fit_modes_for(sweep: Any, spectrum: Spectrum, args: argparse.Namespace) -> Any:
    """Maxwell modes started from ``spectrum``, with its physical switches and the ``--modes`` count."""
    from ..modes.fit import fit_modes

    return fit_modes(sweep, spectrum, ModesOptions.like(spectrum.options, **_modes_fields(args)))


def _modes_fields(args: argparse.Namespace) -> dict[str, Any]:
    return {"n_modes": getattr(args, "n_modes", None)}


def write_spectrum_files(spectrum: Spectrum, out: Path, result: dict) -> None:
    """Write ``spectrum.csv``, ``fit.csv`` and ``result.json`` into ``out`` (each atomically)."""
    out.mkdir(parents=True, exist_ok=True)
    for name, text in spectrum_tables(spectrum).items():
        atomic_write_text(out / name, text)
    atomic_write_text(out / "result.json", dumps_json(result, indent=1) + "\n")


def run(args: argparse.Namespace) -> int:
    """Invert every file; print JSON lines or a short text summary, the caveats at its end."""
    check_output_arguments(args)
    options = invert_options(args)
    options_from_args(args, ModesOptions)  # refuse a bad --modes before any work
    band_options = band_settings(args) if args.bands else None
    formats = figure_formats(args)

    def work(path: str) -> tuple[dict, str, list[str]]:
        sweep = read_sweep(path)
        spectrum = invert(sweep, options)  # (the ω range of the options applies to the modes too)
        result = spectrum.to_dict()
        text, caveats = spectrum_text(spectrum)
        from ..modes.derived import derive

        modes = None
        derived: tuple = ()
        if getattr(args, "modes", True):
            modes = fit_modes_for(sweep, spectrum, args)
            result.update(modes_entries(modes, spectrum))
            derived = (derive(modes), derive(spectrum))
            for part in (modes_text(modes), derived_text(*derived)):
                text += "\n" + part[0]
                caveats += part[1]
        bands = None
        if band_options is not None:
            bands = run_bands(spectrum, band_options, args)
            result.update(band_fields(bands))
            part = bands_text(bands, derived or (derive(spectrum),))
            text += "\n" + part[0]
            caveats += part[1]
        out = output_dir_for(args, path)
        if out is not None:
            write_spectrum_files(spectrum, out, result)
            if modes is not None:
                write_modes_csv(out / "modes.csv", modes)
            text += f"\n  wrote {out}/ (spectrum.csv, fit.csv" + (", modes.csv" if modes is not None else "") + \
                    ", result.json" + (", figures" if args.plot else "") + ")"
        if args.plot and out is not None:
            from ..output.figures.spectrum import save_spectrum_figures

            save_spectrum_figures(spectrum, out, formats=formats, modes=modes,
                                  band=None if bands is None else (bands.H_lo, bands.H_hi))
        return result, text, caveats

    return run_each_file(args, work)
