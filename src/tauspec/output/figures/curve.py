"""The figure of a predicted curve: G(t), J(t), |η*|(ω) or the steady-shear viscosity (Cox–Merz)."""

from __future__ import annotations

from typing import Any

import numpy as np

from .style import LOSS, STORAGE, WINDOW, finish_axes, legend, log_axes, new_axes, set_title, styled

__all__ = ["plot_curve", "curve_figure", "CURVE_WORDS", "RELAXATION_DECADES"]

#: Axis labels of each predicted quantity (``Curve.quantity``): (abscissa, ordinate), units in brackets.
CURVE_WORDS = {
    "relaxation": ("time t [s]", "relaxation modulus G(t) [Pa]"),
    "creep": ("time t [s]", "creep compliance J(t) [1/Pa]"),
    "complex_viscosity": ("angular frequency ω [rad/s]", "complex viscosity |η*| [Pa·s]"),
    "viscosity": ("shear rate [1/s]", "steady-shear viscosity η (Cox–Merz) [Pa·s]"),
}
#: G(t) is drawn until it has fallen by this many decades below its first value (the rest is in the CSV).
RELAXATION_DECADES = 6.0


def _shown(curve: Any) -> np.ndarray:
    """The points drawn: all, except a relaxation modulus beyond its fall by :data:`RELAXATION_DECADES`."""
    x, y = np.asarray(curve.x, dtype=float), np.asarray(curve.y, dtype=float)
    ok = np.isfinite(y) & (y > 0)
    if curve.quantity == "relaxation" and ok.any():  # G(t) decreases: its largest value is its first
        below = ok & (y < float(y[ok].max()) * 10**-RELAXATION_DECADES)
        if below.any():
            ok &= x <= x[below].min()  # keep the first point below the floor: the curve reaches it
    return ok


def plot_curve(curve: Any, ax: Any = None, *, title: str | None = None) -> Any:
    """Plot a predicted curve on log axes, the points that lean on the unsupported spectrum marked.

    The supported window of the spectrum or modes the curve came from is shaded on the time axis of G(t) and
    J(t) (a time t is governed by the relaxation times near t).  G(t) is drawn until it has fallen six decades
    below its first value: beyond, it is numerically zero on a log axis.

    Parameters
    ----------
    curve : Curve
        From :func:`tauspec.relaxation_modulus`, :func:`tauspec.creep_compliance`,
        :func:`tauspec.complex_viscosity` or :func:`tauspec.shear_viscosity`.
    ax : matplotlib Axes, optional
    title : str, optional
        The sample's name (plain text).
    """
    if ax is None:
        _, ax = new_axes()
    order = np.argsort(np.asarray(curve.x, dtype=float))  # times may be given in any order
    x, y = np.asarray(curve.x, dtype=float)[order], np.asarray(curve.y, dtype=float)[order]
    shown = _shown(curve)[order]
    flags = np.asarray(curve.flags)[order] & shown
    xlabel, ylabel = CURVE_WORDS.get(curve.quantity, (f"{curve.x_name} [{curve.x_unit}]",
                                                      f"{curve.y_name} [{curve.y_unit}]"))
    with styled():
        log_axes(ax, [x[shown]], [y[shown]])
        if curve.window is not None and curve.quantity in ("relaxation", "creep"):
            lo, hi = curve.window
            if lo < hi:
                ax.axvspan(lo, hi, facecolor=WINDOW, edgecolor="none", zorder=0, label="supported window")
        ax.plot(np.where(shown, x, np.nan), np.where(shown, y, np.nan), "-", color=STORAGE,
                label=f"from the {curve.basis}")
        if flags.any():
            ax.plot(x[flags], y[flags], "o", mfc="none", color=LOSS,
                    label="extrapolated (beyond the data or the window)")
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel)
        if title is not None:
            set_title(ax, title)
        legend(ax)
        finish_axes(ax)
    return ax


def curve_figure(curve: Any, title: str | None = None) -> Any:
    """A single-column figure of :func:`plot_curve`."""
    fig, ax = new_axes()
    plot_curve(curve, ax, title=title)
    return fig
