"""CSV tables of results: the spectrum, the fit, the Maxwell modes, a predicted curve, a master curve.

Each function returns the text of one table (comma-separated, a header row with units in brackets, SI values);
the callers write it (atomically, :mod:`tauspec.data.write`).  Metadata belong in the JSON beside a table.
"""

from __future__ import annotations

import math
import os
from typing import Any

from ..data.write import atomic_write_text, csv_text

__all__ = ["spectrum_tables", "modes_csv_text", "write_modes_csv", "curve_csv_text", "master_csv_text", "MODES_COLUMNS",
           "CURVE_COLUMNS"]


def spectrum_tables(spectrum: Any) -> dict[str, str]:
    """The CSV tables of one spectrum: ``{"spectrum.csv": text, "fit.csv": text}``."""
    return {
        "spectrum.csv": csv_text(["tau [s]", "H [Pa]", "in window"],
                                 [spectrum.tau, spectrum.H, [int(v) for v in spectrum.in_window]]),
        "fit.csv": csv_text(
            ["omega [rad/s]", "G' [Pa]", "G'' [Pa]", "G' fit [Pa]", "G'' fit [Pa]"],
            [spectrum.omega, spectrum.storage, spectrum.loss, spectrum.storage_fit, spectrum.loss_fit],
        ),
    }


#: The columns of ``modes.csv``.
MODES_COLUMNS = ("mode", "g [Pa]", "tau [s]", "g standard error [Pa]", "tau standard error [s]", "outside window")


def modes_csv_text(modes: Any) -> str:
    """Return the modes as a plain CSV table, one row per mode (η_s, G_e and the window are in the JSON beside it).

    Columns: :data:`MODES_COLUMNS`; a standard error that could not be computed is left empty.
    """
    def num(v: float) -> str:
        return repr(float(v)) if math.isfinite(v) else ""

    lines = [",".join(MODES_COLUMNS)]
    for i in range(modes.n_modes):
        lines.append(",".join([str(i + 1), num(modes.g[i]), num(modes.tau[i]), num(modes.g_se[i]),
                               num(modes.tau_se[i]), "yes" if modes.outside_window[i] else "no"]))
    return "\n".join(lines) + "\n"


def write_modes_csv(path: str | os.PathLike[str], modes: Any) -> None:
    """Write :func:`modes_csv_text` to ``path`` (atomically)."""
    atomic_write_text(path, modes_csv_text(modes))


#: The CSV columns of each predicted quantity (``Curve.quantity``): (abscissa, ordinate), units in brackets.
CURVE_COLUMNS = {
    "relaxation": ("t [s]", "G(t) [Pa]"),
    "creep": ("t [s]", "J(t) [1/Pa]"),
    "complex_viscosity": ("omega [rad/s]", "|eta*| [Pa s]"),
    "viscosity": ("shear rate [1/s]", "viscosity Cox-Merz [Pa s]"),
}


def curve_csv_text(curve: Any) -> str:
    """A predicted curve (:class:`~tauspec.modes.curves.Curve`) as CSV.

    Columns: abscissa, value, out-of-window share, whether the point lies beyond the measured range, and whether
    it is an extrapolation (either reason).
    """
    x_col, y_col = CURVE_COLUMNS.get(curve.quantity, (f"{curve.x_name} [{curve.x_unit}]",
                                                      f"{curve.y_name} [{curve.y_unit}]"))
    return csv_text([x_col, y_col, "outside share", "beyond measured", "extrapolation"],
                    [curve.x, curve.y, curve.outside_share, ["yes" if f else "no" for f in curve.beyond],
                     ["yes" if f else "no" for f in curve.flags]])


def master_csv_text(result: Any) -> str:
    """Return the text of ``master.csv``: ``# key: value`` metadata lines, a header row and the data (SI)."""
    lines = [f"# {key}: {value}" for key, value in result.sweep.meta.items()]
    lines.append("omega [rad/s],G' [Pa],G'' [Pa]")
    lines.extend(f"{w!r},{gp!r},{gpp!r}" for w, gp, gpp in
                 zip(result.omega.tolist(), result.storage.tolist(), result.loss.tolist()))
    return "\n".join(lines) + "\n"
