"""``tauspec predict``: relaxation modulus, creep compliance or steady-shear viscosity predicted from a sweep.

The sweep is represented by discrete Maxwell modes (:func:`tauspec.modes.fit_modes`),
or by the continuous spectrum with ``--basis spectrum``; the predicted curve is
written as CSV (and PNG with ``--plot``), each point with the share of its value
that comes from relaxation times outside the supported window.
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import SettingsError, TauspecError
from ..spectrum.options import InvertOptions
from .common import add_output_arguments, output_dir_for, run_each_file
from .options import add_options, options_from_args

QUANTITIES = ("relaxation", "creep", "viscosity")
_POINTS = 50


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``tauspec predict``."""
    parser.add_argument("files", nargs="+", metavar="FILE", help="frequency-sweep file(s)")
    parser.add_argument("--quantity", required=True, choices=QUANTITIES,
                        help="relaxation: G(t); creep: J(t); viscosity: steady-shear viscosity by the Cox-Merz rule")
    parser.add_argument("--times", metavar="SPEC",
                        help="times in s for relaxation/creep: 'a,b,c' or 'start:stop:n' (log-spaced); "
                             "default 1/omega_max to 1/omega_min")
    parser.add_argument("--rates", metavar="SPEC",
                        help="shear rates in 1/s for viscosity: 'a,b,c' or 'start:stop:n' (log-spaced); "
                             "default the measured frequency range")
    parser.add_argument("--basis", choices=("modes", "spectrum"), default="modes",
                        help="predict from the fitted Maxwell modes (default) or the continuous spectrum")
    add_options(parser, InvertOptions, only=("solvent", "equilibrium_modulus"))
    add_output_arguments(parser)


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


def _output_paths(args: argparse.Namespace, path: str) -> tuple[Path, Path]:
    """``--out DIR``: ``DIR/<quantity>.csv`` (``DIR/<file>/...`` for several); else ``<stem>-<quantity>.csv``."""
    out = output_dir_for(args, path)
    csv = out / f"{args.quantity}.csv" if out is not None else Path(f"{Path(path).stem}-{args.quantity}.csv")
    return csv, csv.with_suffix(".png")


def _basis(sweep: Any, args: argparse.Namespace) -> tuple[Any, Any]:
    from ..modes.fit import fit_modes
    from ..modes.options import ModesOptions

    options = options_from_args(args, InvertOptions, only=("solvent", "equilibrium_modulus"))
    spectrum = None
    if args.basis == "spectrum":
        from ..spectrum.invert import invert

        spectrum = invert(sweep, options)
    modes = fit_modes(sweep, spectrum, ModesOptions.like(options))
    return modes, spectrum


def _plot(curve: Any, path: Path, title: str) -> None:
    """Draw the curve on log axes in the house style, flagged points marked, and save it as PNG."""
    import matplotlib as mpl

    from ..output.figures.spectrum import STYLE, _save, new_axes

    with mpl.rc_context(STYLE):
        fig, ax = new_axes()
        ax.loglog(curve.x, curve.y, "-", color="#1f5f9e", label=f"{curve.y_name} from {curve.basis}")
        flags = curve.flags
        if flags.any():
            ax.loglog(curve.x[flags], curve.y[flags], "o", mfc="none", color="#c2501b",
                      label="> 5 % from outside the window")
        ax.set_xlabel(f"{curve.x_name} [{curve.x_unit}]")
        ax.set_ylabel(f"{curve.y_name} [{curve.y_unit}]")
        ax.set_title(title, fontsize=8)
        ax.legend(frameon=False)
        path.parent.mkdir(parents=True, exist_ok=True)
        _save(fig, path.with_suffix(""), ("png",))


def predict_file(path: str, args: argparse.Namespace) -> dict[str, Any]:
    """Predict one file's curve, write the CSV (and PNG); return the JSON object."""
    from ..data.read import read_sweep
    from ..data.write import atomic_write_text
    from ..modes.curves import creep_compliance, relaxation_modulus, shear_viscosity
    from ..modes.derived import derive, side_by_side
    from ..output.results import modes_json
    from ..output.tables import curve_csv_text

    sweep = read_sweep(path)
    modes, spectrum = _basis(sweep, args)
    source = modes if spectrum is None else spectrum
    w = sweep.omega
    if args.quantity == "viscosity":
        x = parse_points(args.rates, "rates") if args.rates else np.geomspace(w[0], w[-1], _POINTS)
        curve = shear_viscosity(source, x)
    else:
        x = parse_points(args.times, "times") if args.times else np.geomspace(1.0 / w[-1], 1.0 / w[0], _POINTS)
        curve = (relaxation_modulus if args.quantity == "relaxation" else creep_compliance)(source, x)
    csv, png = _output_paths(args, path)
    try:
        atomic_write_text(csv, curve_csv_text(curve))
        if args.plot:
            _plot(curve, png, f"{sweep.name}: {curve.y_name}")
    except OSError as exc:
        raise TauspecError(f"cannot write the prediction ({exc.strerror or exc})", str(csv)) from None
    derived = derive(source)
    return {
        "sample": sweep.name,
        "source": sweep.source,
        "quantity": args.quantity,
        "curve": curve.to_dict(),
        "modes": modes_json(modes),
        "derived": derived.to_dict(),
        "files": {"csv": str(csv), "png": str(png) if args.plot else None},
        "_text": "\n".join([modes.report(), curve.report(), side_by_side(derived),
                            f"wrote {csv}" + (f" and {png}" if args.plot else "")]),
    }


def run(args: argparse.Namespace) -> int:
    """Run ``tauspec predict``; return the exit status."""
    if args.quantity == "viscosity" and args.times:
        raise SettingsError("--times belongs to --quantity relaxation or creep; use --rates for viscosity")
    if args.quantity != "viscosity" and args.rates:
        raise SettingsError("--rates belongs to --quantity viscosity; use --times for relaxation or creep")
    # check the point lists before any fitting
    for what in ("times", "rates"):
        if getattr(args, what):
            parse_points(getattr(args, what), what)

    def work(path: str) -> tuple[dict[str, Any], str]:
        result = predict_file(path, args)
        return result, result.pop("_text")

    return run_each_file(args, work)
