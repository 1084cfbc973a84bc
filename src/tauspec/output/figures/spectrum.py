"""Figures of one inversion: the data and fit, the residuals, the spectrum with its modes, the L-curve.

Every ``plot_*`` function takes an optional ``ax`` (a matplotlib Axes) and returns the axes it drew on, so
figures can be composed; without ``ax`` it makes a new single-column figure in the tauspec style.  The
``*_figure`` functions return a whole :class:`matplotlib.figure.Figure`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from .style import (
    BAND,
    LOSS,
    MODES,
    NEUTRAL,
    STORAGE,
    WINDOW,
    finish_axes,
    legend,
    log_axes,
    log_axis,
    new_axes,
    positive_range,
    save_figure,
    set_title,
    styled,
)

__all__ = ["plot_fit", "plot_residuals", "plot_spectrum", "plot_lcurve", "fit_figure", "spectrum_figure",
           "lcurve_figure", "spectrum_figures", "save_spectrum_figures", "new_axes"]

#: The spectrum is drawn down to this fraction of its largest value (four decades); below, H is numerically 0.
H_DECADES = 1e-4


def plot_fit(spectrum: Any, ax: Any = None) -> Any:
    """Plot G′ and G″ (markers) and the fitted moduli (lines) against ω on log axes; title: the sample."""
    if ax is None:
        _, ax = new_axes()
    w = np.asarray(spectrum.omega)
    with styled():
        ax.plot(w, spectrum.storage, "o", mfc="none", color=STORAGE, label="G′ data")
        ax.plot(w, spectrum.loss, "s", mfc="none", color=LOSS, label="G″ data")
        ax.plot(w, spectrum.storage_fit, "-", color=STORAGE, label="G′ fit")
        ax.plot(w, spectrum.loss_fit, "-", color=LOSS, label="G″ fit")
        log_axes(ax, [w], [spectrum.storage, spectrum.loss, spectrum.storage_fit, spectrum.loss_fit])
        ax.set_xlabel("angular frequency ω [rad/s]")
        ax.set_ylabel("G′, G″ [Pa]")
        legend(ax, ncols=2, loc="best")
        set_title(ax, spectrum.sample)
        finish_axes(ax)
    return ax


def plot_residuals(spectrum: Any, ax: Any = None) -> Any:
    """Plot the relative residuals 100 (fit/data − 1) of G′ and G″ in per cent against ω."""
    if ax is None:
        _, ax = new_axes(height=1.4)
    w = np.asarray(spectrum.omega)
    with styled():
        rp = 100 * (np.asarray(spectrum.storage_fit) / spectrum.storage - 1)
        rpp = 100 * (np.asarray(spectrum.loss_fit) / spectrum.loss - 1)
        ax.plot(w, rp, "o-", ms=2.5, lw=0.6, color=STORAGE, label="G′")
        ax.plot(w, rpp, "s-", ms=2.5, lw=0.6, color=LOSS, label="G″")
        ax.axhline(0, color=NEUTRAL, lw=0.6)
        log_axis(ax, "x", float(w.min()), float(w.max()))
        top = float(np.nanmax(np.abs(np.concatenate([rp, rpp])))) if len(w) else 1.0
        top = max(top * 1.15, 0.1) if np.isfinite(top) else 1.0
        ax.set_ylim(-top, top)
        ax.set_xlabel("angular frequency ω [rad/s]")
        ax.set_ylabel("residual [%]")
        finish_axes(ax)
    return ax


def plot_spectrum(spectrum: Any, ax: Any = None, *, band: tuple[np.ndarray, np.ndarray] | None = None,
                  modes: Any = None, label: str | None = None) -> Any:
    """Plot H(τ) on log axes with the supported window shaded, a band and the Maxwell modes as stems.

    Parameters
    ----------
    spectrum : Spectrum
    ax : matplotlib Axes, optional
    band : (lower, upper), optional
        A pointwise band of H on the spectrum's grid (Pa).
    modes : Modes, optional
        Discrete Maxwell modes: each drawn as a stem at τ_i of height g_i (Pa).  A mode's strength is the
        content ∫H d ln τ of the part of the spectrum it stands for, so stems and H share the axis but not
        the meaning: stems sit above H by about the mode spacing in ln τ.
    label : str, optional
        Legend text of the spectrum (default ``H(τ)``).

    The axes span the decades of what is drawn (H down to four decades below its largest value, the band, the
    modes) and the supported window.
    """
    if ax is None:
        _, ax = new_axes()
    tau, H = np.asarray(spectrum.tau), np.asarray(spectrum.H)
    g = np.asarray(modes.g) if modes is not None else np.zeros(0)
    top_rng = positive_range([H, g] + ([band[1]] if band is not None else []))
    top = top_rng[1] if top_rng else 1.0
    floor = top * H_DECADES
    shown = H >= floor
    lo, hi = spectrum.window
    spans = [tau[shown], np.asarray(modes.tau)[g >= floor] if g.size else np.zeros(0)]
    if band is not None:
        spans.append(tau[np.asarray(band[1]) >= floor])
    x_rng = positive_range(spans + ([np.array([lo, hi])] if lo < hi else [])) or (float(tau.min()),
                                                                                float(tau.max()))
    with styled():
        log_axis(ax, "x", *x_rng)
        log_axis(ax, "y", floor, top)
        bottom = ax.get_ylim()[0]
        if lo < hi:
            ax.axvspan(lo, hi, facecolor=WINDOW, edgecolor="none", zorder=0, label="supported window")
        if band is not None:
            lo_b = np.clip(np.asarray(band[0], dtype=float), bottom, None)
            hi_b = np.clip(np.asarray(band[1], dtype=float), bottom, None)
            ax.fill_between(tau, lo_b, hi_b, color=BAND, alpha=0.45, lw=0, label="confidence band")
        ax.plot(np.where(shown, tau, np.nan), np.where(shown, H, np.nan), "-", color="k", label=label or "H(τ)")
        if g.size:
            t = np.asarray(modes.tau)
            keep = g >= bottom
            ax.vlines(t[keep], bottom, g[keep], color=MODES, lw=1.0, zorder=3)
            ax.plot(t[keep], g[keep], "o", color=MODES, ms=3.5, zorder=4, label="Maxwell modes $g_i$")
        ax.set_xlabel("relaxation time τ [s]")
        ax.set_ylabel(r"H(τ), $g_i$ [Pa]" if g.size else "H(τ) [Pa]")
        legend(ax, loc="best")
        set_title(ax, spectrum.sample)
        finish_axes(ax)
    return ax


def plot_lcurve(spectrum: Any, ax: Any = None) -> Any:
    """Plot the L-curve (roughness ‖L h‖ against the residual norm, log–log) with the chosen strength marked."""
    if ax is None:
        _, ax = new_axes()
    lc = spectrum.lcurve
    res, sol = np.asarray(lc.residual_norm), np.asarray(lc.solution_norm)
    with styled():
        ok = (res > 0) & (sol > 0)
        ax.plot(res[ok], sol[ok], ".-", color=NEUTRAL, lw=0.8, ms=2.5, label="strength path")
        i = lc.index
        ax.plot([res[i]], [sol[i]], "o", color=LOSS, ms=5, label=f"chosen λ = {lc.strength[i]:.3g} "
                f"({_rule_words(spectrum.chosen_by)})")
        log_axes(ax, [res[ok]], [sol[ok]])
        ax.set_xlabel("residual norm ‖W(Kh − y)‖")
        ax.set_ylabel("roughness ‖L h‖")
        legend(ax)
        set_title(ax, spectrum.sample)
        finish_axes(ax)
    return ax


def _rule_words(chosen_by: str) -> str:
    return {"lcurve": "L-curve corner", "gcv": "GCV minimum", "fixed": "given"}.get(chosen_by, str(chosen_by))


def fit_figure(spectrum: Any, height: float = 3.4) -> Any:
    """A single-column figure: the data and fit above, the relative residuals below (shared ω axis)."""
    fig, (ax1, ax2) = new_axes(2, height=height, sharex=True, gap_y=0.1, gridspec_kw={"height_ratios": [3, 1]})
    plot_fit(spectrum, ax1)
    ax1.set_xlabel("")
    plot_residuals(spectrum, ax2)
    return fig


def spectrum_figure(spectrum: Any, *, band: tuple[np.ndarray, np.ndarray] | None = None, modes: Any = None) -> Any:
    """A single-column figure of :func:`plot_spectrum`."""
    fig, ax = new_axes()
    plot_spectrum(spectrum, ax, band=band, modes=modes)
    return fig


def lcurve_figure(spectrum: Any) -> Any:
    """A single-column figure of :func:`plot_lcurve`."""
    fig, ax = new_axes()
    plot_lcurve(spectrum, ax)
    return fig


def spectrum_figures(spectrum: Any, *, band: tuple[np.ndarray, np.ndarray] | None = None,
                     modes: Any = None) -> dict[str, Any]:
    """The figures of one inversion by file stem: ``fit``, ``spectrum``, ``lcurve``."""
    return {"fit": fit_figure(spectrum), "spectrum": spectrum_figure(spectrum, band=band, modes=modes),
            "lcurve": lcurve_figure(spectrum)}


def save_spectrum_figures(spectrum: Any, folder: str | Path, prefix: str = "", formats: tuple[str, ...] = ("png",),
                          band: tuple[np.ndarray, np.ndarray] | None = None, modes: Any = None) -> list[Path]:
    """Write ``fit``, ``spectrum`` and ``lcurve`` figures into ``folder`` in each format; return the paths."""
    folder = Path(folder)
    written: list[Path] = []
    for stem, fig in spectrum_figures(spectrum, band=band, modes=modes).items():
        written += save_figure(fig, folder / f"{prefix}{stem}", formats)
    return written
