"""``tauspec predict``: relaxation modulus, creep compliance or steady-shear viscosity predicted from a sweep.

The sweep is represented by discrete Maxwell modes (:func:`tauspec.modes.fit.fit_modes`), or by the continuous
spectrum with ``--basis spectrum``; each point of the predicted curve carries the share of its value that comes
from relaxation times outside the supported window.  Without ``--out`` the curve is printed; with it, it is
written as ``<quantity>.csv`` (and drawn with ``--plot``).
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import SettingsError, TauspecError
from ..output.words import counted
from ..spectrum.options import InvertOptions
from .common import add_output_arguments, check_output_arguments, figure_formats, output_dir_for, run_each_file
from .options import add_options, options_from_args

QUANTITIES = ("relaxation", "creep", "viscosity")
_POINTS = 50
_PHYSICS = ("solvent", "equilibrium_modulus", "omega_min", "omega_max")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``tauspec predict``."""
    parser.add_argument("files", nargs="+", metavar="FILE", help="frequency-sweep file(s)")
    parser.add_argument("--quantity", required=True, choices=QUANTITIES,
                        help="relaxation: G(t); creep: J(t); viscosity: steady-shear viscosity by the Cox-Merz rule")
    parser.add_argument("--times", metavar="SPEC",
                        help="times in s for relaxation/creep: 'a,b,c' or 'start:stop:n' (log-spaced); "
                             "default 1/ω_max to 1/ω_min")
    parser.add_argument("--rates", metavar="SPEC",
                        help="shear rates in 1/s for viscosity: 'a,b,c' or 'start:stop:n' (log-spaced); "
                             "default the measured frequency range")
    parser.add_argument("--basis", choices=("modes", "spectrum"), default="modes",
                        help="predict from the fitted Maxwell modes (default) or the continuous spectrum")
    add_options(parser, InvertOptions, only=_PHYSICS)
    add_output_arguments(parser, out_help="write <quantity>.csv into DIR (DIR/<file stem>/ for several files); "
                                          "without it the curve is printed")


def parse_points(spec: str, what: str) -> np.ndarray:
    """Parse ``'a,b,c'`` or ``'start:stop:n'`` (n log-spaced points) into positive floats."""
    text = spec.strip()
    try:
        if ":" in text:
            parts = text.split(":")
            if len(parts) != 3:
                raise ValueError
            start, stop, n = float(parts[0]), float(parts[1]), int(parts[2])
            if n < 1 or not (start > 0 and stop > 0) or not (math.isfinite(start) and math.isfinite(stop)):
                raise ValueError
            values = np.geomspace(start, stop, n)
        else:
            values = np.array([float(v) for v in text.split(",") if v.strip()], dtype=float)
    except ValueError:
        raise SettingsError(f"--{what} {spec!r}: give positive numbers 'a,b,c' or 'start:stop:n'") from None
    if values.size == 0 or not np.all(np.isfinite(values)) or np.any(values <= 0):
        raise SettingsError(f"--{what} {spec!r}: every value must be a positive finite number")
    return values


def _basis(sweep: Any, args: argparse.Namespace) -> tuple[Any, Any]:
    from ..modes.fit import fit_modes
    from ..modes.options import ModesOptions

    options = options_from_args(args, InvertOptions, only=_PHYSICS)
    spectrum = None
    if args.basis == "spectrum":
        from ..spectrum.invert import invert

        spectrum = invert(sweep, options)
    modes = fit_modes(sweep, spectrum, ModesOptions.like(options))
    return modes, spectrum


def predict_file(path: str, args: argparse.Namespace) -> tuple[dict[str, Any], str, list[str]]:
    """Predict one file's curve; write the CSV (and figures) with ``--out``; return (JSON object, text, caveats)."""
    from ..data.read import read_sweep
    from ..data.write import atomic_write_text
    from ..modes.curves import creep_compliance, relaxation_modulus, shear_viscosity
    from ..modes.derived import derive
    from ..output.results import modes_json
    from ..output.tables import curve_csv_text
    from .text import curve_text, derived_text

    sweep = read_sweep(path)
    modes, spectrum = _basis(sweep, args)
    source = modes if spectrum is None else spectrum
    w = modes.omega  # the frequencies used (within --omega-min/--omega-max)
    if args.quantity == "viscosity":
        x = parse_points(args.rates, "rates") if args.rates else np.geomspace(w[0], w[-1], _POINTS)
        curve = shear_viscosity(source, x)
    else:
        x = parse_points(args.times, "times") if args.times else np.geomspace(1.0 / w[-1], 1.0 / w[0], _POINTS)
        curve = (relaxation_modulus if args.quantity == "relaxation" else creep_compliance)(source, x)
    out = output_dir_for(args, path)
    csv = out / f"{args.quantity}.csv" if out is not None else None
    figures: list[Path] = []
    if out is not None:
        try:
            atomic_write_text(csv, curve_csv_text(curve))
            if args.plot:
                from ..output.figures.curve import curve_figure
                from ..output.figures.style import save_figure

                figures = save_figure(curve_figure(curve, title=sweep.name), out / args.quantity,
                                      figure_formats(args))
        except OSError as exc:
            raise TauspecError(f"cannot write the prediction ({exc.strerror or exc})", str(csv)) from None
    derived = derive(source)
    head = (f"{sweep.name}: {counted(modes.n_modes, 'Maxwell mode')} (rms residual {100 * modes.residual_rms:.1f} %)"
            if spectrum is None else f"{sweep.name}: continuous spectrum (rms residual "
            f"{100 * spectrum.residual_rms:.1f} %)")
    text, caveats = curve_text(curve, table=out is None)
    dtext, dcaveats = derived_text(derived)
    lines = [head, text, dtext]
    if out is not None:
        lines.append(f"  wrote {csv}" + "".join(f", {p}" for p in figures))
    result = {
        "sample": sweep.name,
        "source": sweep.source,
        "quantity": args.quantity,
        "curve": curve.to_dict(),
        "modes": modes_json(modes),
        "derived": derived.to_dict(),
        "files": {"csv": None if csv is None else str(csv),
                  "png": next((str(p) for p in figures if p.suffix == ".png"), None),
                  "figures": [str(p) for p in figures]},
    }
    return result, "\n".join(lines), caveats + dcaveats + list(modes.warnings)


def run(args: argparse.Namespace) -> int:
    """Run ``tauspec predict``; return the exit status."""
    check_output_arguments(args)
    if args.quantity == "viscosity" and args.times:
        raise SettingsError("--times belongs to --quantity relaxation or creep; use --rates for viscosity")
    if args.quantity != "viscosity" and args.rates:
        raise SettingsError("--rates belongs to --quantity viscosity; use --times for relaxation or creep")
    # check the point lists before any fitting
    for what in ("times", "rates"):
        if getattr(args, what):
            parse_points(getattr(args, what), what)

    return run_each_file(args, lambda path: predict_file(path, args))
