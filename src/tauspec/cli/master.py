"""``tauspec master``: superpose sweeps at several temperatures into one master curve."""

from __future__ import annotations

import argparse
import math
from pathlib import Path

from ..data.read import read_sweeps
from ..data.units import temperature_kelvin
from ..data.write import atomic_write_text, dumps_json
from ..errors import SettingsError
from ..output.tables import master_csv_text
from ..output.words import counted
from .common import add_output_arguments, check_output_arguments, each_file, figure_formats, print_text

__all__ = ["add_arguments", "run"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``tauspec master``."""
    parser.add_argument("files", nargs="+", metavar="FILE", help="sweep files, one per temperature")
    parser.add_argument("--reference-temperature", metavar="T", default=None,
                        help="reference temperature in °C (or '423.15 K'); default: the middle sweep temperature")
    parser.add_argument("--temperatures", metavar="T1,T2,...", default=None,
                        help="temperature of each file in °C, in the order of the files (overrides the "
                             "'# temperature:' lines)")
    parser.add_argument("--vertical", choices=("density", "fit"), default="density",
                        help="vertical factor b_T: from the density rule T/T_ref (default) or fitted to the overlaps")
    add_output_arguments(parser, out_help="write master.csv (a sweep file at T_ref) and master.json into DIR",
                         json_help="print the master curve as one JSON object on stdout, nothing else")


def _kelvin(text: str, what: str) -> float:
    try:
        return temperature_kelvin(text)
    except ValueError as exc:
        raise SettingsError(f"{what} {text!r}: {exc}") from None


def run(args: argparse.Namespace) -> int:
    """Read the files, superpose them and write the results; return the exit status."""
    from ..analysis.superposition.master import superpose

    check_output_arguments(args)
    formats = figure_formats(args)
    sweeps = [s for f in each_file(args.files) for s in read_sweeps(f)]  # a file may hold several temperatures
    temperatures = None
    if args.temperatures is not None:
        parts = [p for p in args.temperatures.split(",") if p.strip()]
        if len(parts) != len(sweeps):
            raise SettingsError(f"--temperatures gives {counted(len(parts), 'value')} for {len(sweeps)} files")
        temperatures = [_kelvin(p, "--temperatures value") for p in parts]
    if args.reference_temperature is not None:
        T_ref = _kelvin(args.reference_temperature, "--reference-temperature")
    else:
        from ..analysis.superposition.master import sweep_temperatures

        Ts = sorted(sweep_temperatures(sweeps, temperatures).tolist())
        T_ref = Ts[(len(Ts) - 1) // 2]
    if not math.isfinite(T_ref):
        raise SettingsError("--reference-temperature must be a finite number")

    result = superpose(sweeps, T_ref=T_ref, temperatures=temperatures, vertical=args.vertical)
    data = result.to_dict()
    written = []
    if args.out is not None:
        out = Path(args.out)
        atomic_write_text(out / "master.csv", master_csv_text(result))
        atomic_write_text(out / "master.json", dumps_json(data, indent=2) + "\n")
        written += [out / "master.csv", out / "master.json"]
        if args.plot:
            from ..output.figures.master import plot_master
            from ..output.figures.style import save_figure

            written += save_figure(plot_master(result), out / "master", formats)
    if args.json:
        print(dumps_json(data))
    else:
        print_text(args, result.report() + "".join(f"\nwrote {p}" for p in written))
    return 0
