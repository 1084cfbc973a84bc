"""A four-panel figure of a time–temperature superposition (matplotlib, no pyplot state)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ...analysis.superposition.master import MasterCurve

__all__ = ["plot_master"]


def plot_master(result: MasterCurve, path: str | Path) -> Path:
    """Write a PNG with four panels and return its path.

    (a) the sweeps as measured, G' and G'' against ω; (b) the master curve at
    T_ref against a_T ω; (c) log10 a_T against T with its 95 % intervals and
    the fitted WLF and Arrhenius curves; (d) the van Gurp–Palmen view, the
    phase angle δ = atan(G''/G') against |G*| = sqrt(G'² + G''²) of every
    sweep unshifted — the curves of a thermorheologically simple material
    fall on one line without any shifting (van Gurp & Palmen 1998).

    References
    ----------
    van Gurp, M. & Palmen, J. (1998). Time–temperature superposition for polymeric blends.
    *Rheology Bulletin* 67, 5–8.
    """
    import matplotlib as mpl
    from matplotlib.figure import Figure

    from .spectrum import COLUMN_WIDTH, STYLE, _save

    with mpl.rc_context(STYLE):
        fig = Figure(figsize=(2 * COLUMN_WIDTH, 5.6), layout="constrained")
        axes = fig.subplots(2, 2)
        _draw(result, axes, mpl.colormaps["viridis"])
        path = Path(path)
        return _save(fig, path.with_suffix(""), ("png",))[0]


def _draw(result: MasterCurve, axes, cmap) -> None:
    T = result.temperatures
    order = np.argsort(T)
    color = {int(i): cmap(0.9 * k / max(len(T) - 1, 1)) for k, i in enumerate(order)}

    ax = axes[0, 0]
    for i in order:
        s = result.inputs[i]
        ax.loglog(s.omega, s.storage, "o", ms=2.5, color=color[int(i)], label=f"{T[i] - 273.15:g} °C")
        ax.loglog(s.omega, s.loss, "^", ms=3.5, mew=0.7, mfc="none", color=color[int(i)])
    ax.set(xlabel="ω [rad/s]", ylabel="G′ (●), G″ (△) [Pa]", title="(a) sweeps as measured")
    ax.legend(frameon=False)

    ax = axes[0, 1]
    for i in order:
        s = result.inputs[i]
        w = s.omega * result.aT[i]
        ax.loglog(w, s.storage / result.bT[i], "o", ms=2.5, color=color[int(i)])
        ax.loglog(w, s.loss / result.bT[i], "^", ms=3.5, mew=0.7, mfc="none", color=color[int(i)])
    ax.set(xlabel="a_T ω [rad/s]", ylabel="G′/b_T, G″/b_T [Pa]",
           title=f"(b) master curve at {result.T_ref - 273.15:g} °C")

    ax = axes[1, 0]
    lo = result.log_aT - np.log10(result.aT_ci[:, 0])
    hi = np.log10(result.aT_ci[:, 1]) - result.log_aT
    ax.errorbar(T - 273.15, result.log_aT, yerr=[lo, hi], fmt="ko", ms=3, capsize=2, label="from the overlaps")
    grid = np.linspace(T.min(), T.max(), 200)
    if result.wlf is not None:
        w = result.wlf
        ax.plot(grid - 273.15, w.log_aT(grid), "-", label=f"WLF C1={w.C1:.3g}, C2={w.C2:.3g} K")
    a = result.arrhenius
    ax.plot(grid - 273.15, a.log_aT(grid), "--", label=f"Arrhenius E_a={a.Ea / 1e3:.3g} kJ/mol")
    ax.set(xlabel="T [°C]", ylabel="log10 a_T", title="(c) shift factors")
    ax.legend(frameon=False)

    ax = axes[1, 1]
    for i in order:
        s = result.inputs[i]
        ax.semilogx(np.hypot(s.storage, s.loss), np.degrees(np.arctan2(s.loss, s.storage)), "o-", ms=2.5, lw=0.6,
                    color=color[int(i)])
    verdict = "holds" if result.check.simple else "FAILS"
    ax.set(xlabel="|G*| [Pa]", ylabel="δ [deg]", title="(d) van Gurp–Palmen")
    ax.text(0.03, 0.04, f"superposition {verdict}\n(misfit {result.check.misfit:.2f}× noise)", transform=ax.transAxes)
