"""The figure of a time–temperature superposition: sweeps, master curve, shift factors, van Gurp–Palmen view."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from ...analysis.superposition.master import MasterCurve
from .style import DOUBLE_COLUMN, NEUTRAL, finish_axes, legend, log_axes, log_axis, new_grid, styled
from .text import literal

__all__ = ["plot_master"]


def plot_master(result: MasterCurve, axes: Sequence[Any] | None = None) -> Any:
    """Draw the four panels of a master curve and return the figure.

    (a) the sweeps as measured, G′ and G″ against ω; (b) the master curve at T_ref against a_T ω; (c) log10 a_T
    against T with its 95 % intervals and the fitted WLF and Arrhenius curves; (d) the van Gurp–Palmen view,
    the phase angle δ = atan(G″/G′) against |G*| = √(G′² + G″²) of every sweep unshifted — the curves of a
    thermorheologically simple material fall on one line without any shifting (van Gurp & Palmen 1998).

    Parameters
    ----------
    result : MasterCurve
        Made in this process (it keeps the input sweeps in memory).
    axes : four matplotlib Axes, optional
        Where to draw (a, b, c, d); without them a new double-column figure is made.

    References
    ----------
    van Gurp, M. & Palmen, J. (1998). Time–temperature superposition for polymeric blends.
    *Rheology Bulletin* 67, 5–8.
    """
    import matplotlib as mpl

    if axes is None:
        fig, grid = new_grid(2, 2, width=DOUBLE_COLUMN, height=5.0, suptitle=True, gap_x=0.75, gap_y=0.75)
        axes = list(grid.ravel())
    else:
        fig = axes[0].figure
    with styled():
        _draw(result, axes, mpl.colormaps["viridis"])
        names = sorted({s.name for s in result.inputs})
        if names:
            fig.suptitle(literal(", ".join(names[:3]) + (" …" if len(names) > 3 else "")), parse_math=False, x=0.01,
                         y=0.99, ha="left", va="top", fontsize=8)
        for ax in axes:
            finish_axes(ax)
    return fig


def _draw(result: MasterCurve, axes: Sequence[Any], cmap: Any) -> None:
    T = result.temperatures
    order = np.argsort(T)
    color = {int(i): cmap(0.9 * k / max(len(T) - 1, 1)) for k, i in enumerate(order)}
    sweeps = result.inputs

    ax = axes[0]
    for i in order:
        s = sweeps[i]
        ax.plot(s.omega, s.storage, "o", ms=2.5, color=color[int(i)], label=f"{T[i] - 273.15:g} °C")
        ax.plot(s.omega, s.loss, "^", ms=3.5, mew=0.7, mfc="none", color=color[int(i)])
    log_axes(ax, [s.omega for s in sweeps], [v for s in sweeps for v in (s.storage, s.loss)])
    ax.set(xlabel="angular frequency ω [rad/s]", ylabel="G′ (●), G″ (△) [Pa]")
    ax.set_title("(a) sweeps as measured")
    legend(ax, loc="lower right", ncols=2 if len(T) > 4 else 1)

    ax = axes[1]
    xs, ys = [], []
    for i in order:
        s = sweeps[i]
        w = s.omega * result.aT[i]
        ax.plot(w, s.storage / result.bT[i], "o", ms=2.5, color=color[int(i)])
        ax.plot(w, s.loss / result.bT[i], "^", ms=3.5, mew=0.7, mfc="none", color=color[int(i)])
        xs.append(w)
        ys += [s.storage / result.bT[i], s.loss / result.bT[i]]
    log_axes(ax, xs, ys)
    ax.set(xlabel=r"reduced frequency $a_T\,\omega$ [rad/s]", ylabel=r"G′/$b_T$, G″/$b_T$ [Pa]")
    ax.set_title(f"(b) master curve at {result.T_ref - 273.15:g} °C")

    ax = axes[2]
    lo = result.log_aT - np.log10(result.aT_ci[:, 0])
    hi = np.log10(result.aT_ci[:, 1]) - result.log_aT
    ax.errorbar(T - 273.15, result.log_aT, yerr=[lo, hi], fmt="o", color="k", ms=3, capsize=2,
                label="from the overlaps (95 %)")
    grid = np.linspace(T.min(), T.max(), 200)
    if result.wlf is not None:
        w = result.wlf
        ax.plot(grid - 273.15, w.log_aT(grid), "-", label=rf"WLF: $C_1$ = {w.C1:.3g}, $C_2$ = {w.C2:.3g} K")
    a = result.arrhenius
    ax.plot(grid - 273.15, a.log_aT(grid), "--", label=rf"Arrhenius: $E_a$ = {a.Ea / 1e3:.3g} kJ/mol")
    ax.set(xlabel="temperature T [°C]", ylabel=r"shift factor log$_{10}$ $a_T$")
    ax.set_title("(c) shift factors")
    legend(ax)

    ax = axes[3]
    mods = []
    for i in order:
        s = sweeps[i]
        g = np.hypot(s.storage, s.loss)
        ax.plot(g, np.degrees(np.arctan2(s.loss, s.storage)), "o-", ms=2.5, lw=0.6, color=color[int(i)])
        mods.append(g)
    rng = [float(np.min([m.min() for m in mods])), float(np.max([m.max() for m in mods]))] if mods else [1.0, 10.0]
    log_axis(ax, "x", *rng)
    ax.set_ylim(0, 90)
    ax.set_yticks([0, 15, 30, 45, 60, 75, 90])
    ax.set(xlabel="complex modulus |G*| [Pa]", ylabel="phase angle δ [°]")
    ax.set_title("(d) van Gurp–Palmen")
    verdict = "holds" if result.check.simple else "fails"
    ax.text(0.03, 0.05, f"superposition {verdict}\n(misfit {result.check.misfit:.2f} × noise)",
            transform=ax.transAxes, color=NEUTRAL)
