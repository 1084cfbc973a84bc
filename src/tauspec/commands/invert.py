"""``tauspec invert FILE...``: the continuous relaxation spectrum of each sweep."""

from __future__ import annotations

import argparse
from pathlib import Path

from ..errors import SettingsError
from ..io import atomic_write_text, dumps_json, read_sweep, write_csv
from ..spectrum import Spectrum, invert
from ._bands import add_band_arguments, band_fields, band_settings
from ._common import add_output_arguments, output_dir_for, run_each_file


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``invert``."""
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
    add_band_arguments(p)


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


def write_spectrum_files(spectrum: Spectrum, out: Path, result: dict) -> None:
    """Write ``spectrum.csv``, ``fit.csv`` and ``result.json`` into ``out`` (each atomically)."""
    out.mkdir(parents=True, exist_ok=True)
    write_csv(out / "spectrum.csv", ["tau [s]", "H [Pa]", "in_window"],
              [spectrum.tau, spectrum.H, [int(v) for v in spectrum.in_window]])
    write_csv(
        out / "fit.csv",
        ["omega [rad/s]", "G' [Pa]", "G'' [Pa]", "G' fit [Pa]", "G'' fit [Pa]"],
        [spectrum.omega, spectrum.storage, spectrum.loss, spectrum.storage_fit, spectrum.loss_fit],
    )
    atomic_write_text(out / "result.json", dumps_json(result, indent=1) + "\n")


def run(args: argparse.Namespace) -> int:
    """Invert every file; print JSON lines or a text report."""
    settings = invert_settings(args)
    bands_kw = band_settings(args) if args.bands else None

    def work(path: str) -> tuple[dict, str]:
        sweep = read_sweep(path)
        spectrum = invert(sweep, **settings)
        result = spectrum.to_dict()
        bands = None
        if bands_kw is not None:
            from ..uncertainty import confidence_bands

            bands = confidence_bands(spectrum, **bands_kw)
            result.update(band_fields(bands))
        out = output_dir_for(args, path)
        if out is not None:
            write_spectrum_files(spectrum, out, result)
        if args.plot:
            from ..plots import save_spectrum_figures

            save_spectrum_figures(spectrum, out or Path("."), prefix="" if out else f"{Path(path).stem}-",
                                  band=None if bands is None else (bands.H_lo, bands.H_hi))
        return result, spectrum.report() + ("" if bands is None else "\n" + bands.report())

    return run_each_file(args, work)
