"""CSV tables of results: the spectrum, the fit, the Maxwell modes, a predicted curve, a master curve.

Each function returns the text of one table (comma-separated, a header row with units in brackets, SI values);
the callers write it (atomically, :mod:`tauspec.data.write`).  Metadata belong in the JSON beside a table.
"""

from __future__ import annotations

import math
import os
from typing import Any

from ..data.write import atomic_write_text, csv_text

__all__ = ["spectrum_tables", "modes_csv_text", "write_modes_csv", "curve_csv_text", "master_csv_text"]


def spectrum_tables(spectrum: Any) -> dict[str, str]:
    """The CSV tables of one spectrum: ``{"spectrum.csv": text, "fit.csv": text}``."""
    return {
        "spectrum.csv": csv_text(["tau [s]", "H [Pa]", "in_window"],
                                 [spectrum.tau, spectrum.H, [int(v) for v in spectrum.in_window]]),
        "fit.csv": csv_text(
            ["omega [rad/s]", "G' [Pa]", "G'' [Pa]", "G' fit [Pa]", "G'' fit [Pa]"],
            [spectrum.omega, spectrum.storage, spectrum.loss, spectrum.storage_fit, spectrum.loss_fit],
        ),
    }


def modes_csv_text(modes: Any) -> str:
    """Return the modes as CSV text: ``# key: value`` lines for η_s, G_e and the window, then one row per mode.

    Columns: ``mode, g [Pa], tau [s], g_se [Pa], tau_se [s], outside_window``.
    """
    def num(v: float) -> str:
        return repr(float(v)) if math.isfinite(v) else ""

    lines = [
        f"# sample: {modes.sample}",
        f"# eta_s: {num(modes.eta_s)} Pa s",
        f"# G_e: {num(modes.G_e)} Pa",
        f"# window: {num(modes.window[0])} s to {num(modes.window[1])} s",
        "mode,g [Pa],tau [s],g_se [Pa],tau_se [s],outside_window",
    ]
    for i in range(modes.n_modes):
        lines.append(",".join([str(i + 1), num(modes.g[i]), num(modes.tau[i]), num(modes.g_se[i]),
                               num(modes.tau_se[i]), "yes" if modes.outside_window[i] else "no"]))
    return "\n".join(lines) + "\n"


def write_modes_csv(path: str | os.PathLike[str], modes: Any) -> None:
    """Write :func:`modes_csv_text` to ``path`` (atomically)."""
    atomic_write_text(path, modes_csv_text(modes))


def curve_csv_text(curve: Any) -> str:
    """A predicted curve (:class:`~tauspec.modes.derived.Curve`) as CSV: abscissa, value, out-of-window share, flag."""
    return csv_text([f"{curve.x_name} [{curve.x_unit}]", f"{curve.y_name} [{curve.y_unit}]", "outside_share",
                     "outside_window"],
                    [curve.x, curve.y, curve.outside_share, ["yes" if f else "no" for f in curve.flags]])


def master_csv_text(result: Any) -> str:
    """Return the text of ``master.csv``: ``# key: value`` metadata lines, a header row and the data (SI)."""
    lines = [f"# {key}: {value}" for key, value in result.sweep.meta.items()]
    lines.append("omega [rad/s],G' [Pa],G'' [Pa]")
    lines.extend(f"{w!r},{gp!r},{gpp!r}" for w, gp, gpp in
                 zip(result.omega.tolist(), result.storage.tolist(), result.loss.tolist()))
    return "\n".join(lines) + "\n"
