"""Figures of a fit, a spectrum and an L-curve (matplotlib, no pyplot state).

Every function takes an optional ``ax`` (a matplotlib Axes) and returns the
axes it drew on, so figures can be composed.  Without ``ax`` a new
:class:`matplotlib.figure.Figure` is made (no GUI backend is needed).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from .text import plain_text

__all__ = ["fit_figure", "plot_fit", "plot_residuals", "plot_spectrum", "plot_lcurve", "save_spectrum_figures",
           "new_axes"]


#: Single journal column: 3.4 in wide.
COLUMN_WIDTH = 3.4
STYLE = {
    "font.size": 8,
    "axes.labelsize": 8,
    "legend.fontsize": 7,
    "xtick.labelsize": 7,
    "ytick.labelsize": 7,
    "lines.linewidth": 1.2,
    "lines.markersize": 3.5,
    "savefig.dpi": 200,
}
STORAGE_COLOR = "#1f5f9e"
LOSS_COLOR = "#c2501b"
WINDOW_COLOR = "#e8e8e0"


def new_axes(nrows: int = 1, height: float = 2.6, width: float = COLUMN_WIDTH, **kw: Any):
    """Return (figure, axes) of a new figure in the house style."""
    import matplotlib as mpl
    from matplotlib.figure import Figure

    with mpl.rc_context(STYLE):
        fig = Figure(figsize=(width, height), layout="constrained")
        axes = fig.subplots(nrows, 1, squeeze=False, **kw)[:, 0]
    return fig, (axes[0] if nrows == 1 else axes)


def plot_fit(spectrum: Any, ax: Any = None) -> Any:
    """Plot G', G'' data (markers) and the fitted moduli (lines) on log axes."""
    if ax is None:
        _, ax = new_axes()
    w = np.asarray(spectrum.omega)
    ax.loglog(w, spectrum.storage, "o", mfc="none", color=STORAGE_COLOR, label="G′ data")
    ax.loglog(w, spectrum.loss, "s", mfc="none", color=LOSS_COLOR, label="G″ data")
    ax.loglog(w, spectrum.storage_fit, "-", color=STORAGE_COLOR, label="G′ fit")
    ax.loglog(w, spectrum.loss_fit, "-", color=LOSS_COLOR, label="G″ fit")
    ax.set_xlabel("angular frequency ω [rad/s]")
    ax.set_ylabel("modulus [Pa]")
    ax.legend(frameon=False, ncols=2)
    ax.set_title(plain_text(spectrum.sample), fontsize=8)
    return ax


def plot_residuals(spectrum: Any, ax: Any = None) -> Any:
    """Plot the relative residuals (fit/data − 1) of G' and G'' against ω."""
    if ax is None:
        _, ax = new_axes(height=1.4)
    w = np.asarray(spectrum.omega)
    ax.semilogx(w, 100 * (np.asarray(spectrum.storage_fit) / spectrum.storage - 1), "o-", ms=2.5, lw=0.6,
                color=STORAGE_COLOR, label="G′")
    ax.semilogx(w, 100 * (np.asarray(spectrum.loss_fit) / spectrum.loss - 1), "s-", ms=2.5, lw=0.6,
                color=LOSS_COLOR, label="G″")
    ax.axhline(0, color="0.5", lw=0.6)
    ax.set_xlabel("angular frequency ω [rad/s]")
    ax.set_ylabel("residual [%]")
    return ax


def plot_spectrum(spectrum: Any, ax: Any = None, *, band: tuple[np.ndarray, np.ndarray] | None = None,
                  label: str | None = None) -> Any:
    """Plot H(τ) on log axes with the supported window shaded (and a band, if given)."""
    if ax is None:
        _, ax = new_axes()
    tau = np.asarray(spectrum.tau)
    H = np.asarray(spectrum.H)
    lo, hi = spectrum.window
    if lo < hi:
        ax.axvspan(lo, hi, color=WINDOW_COLOR, zorder=0, label="supported window")
    if band is not None:
        ax.fill_between(tau, np.maximum(band[0], 1e-300), band[1], color="#9ab8d6", alpha=0.6, lw=0, label="band")
    positive = H > 0
    top = float(H.max()) if H.size and H.max() > 0 else 1.0
    ax.loglog(tau[positive], H[positive], "-", color="k", label=plain_text(label) if label else "H(τ)")
    ax.set_ylim(top * 1e-4, top * 3)
    ax.set_xlabel("relaxation time τ [s]")
    ax.set_ylabel("H(τ) [Pa]")
    ax.legend(frameon=False)
    return ax


def plot_lcurve(spectrum: Any, ax: Any = None) -> Any:
    """Plot the L-curve (‖L h‖ against ‖residual‖, log–log) with the chosen strength marked."""
    if ax is None:
        _, ax = new_axes()
    lc = spectrum.lcurve
    ax.loglog(lc.residual_norm, lc.solution_norm, ".-", color="0.3", lw=0.8)
    i = lc.index
    ax.loglog([lc.residual_norm[i]], [lc.solution_norm[i]], "o", color=LOSS_COLOR,
              label=f"chosen λ = {lc.strength[i]:.3g} ({spectrum.chosen_by})")
    ax.set_xlabel("residual norm ‖W(Kh − y)‖")
    ax.set_ylabel("roughness ‖L h‖")
    ax.legend(frameon=False)
    return ax


def fit_figure(spectrum: Any, height: float = 3.6) -> Any:
    """Return a new figure: the data and fit above, the relative residuals below."""
    fig, (ax1, ax2) = new_axes(2, height=height, sharex=True, gridspec_kw={"height_ratios": [3, 1]})
    plot_fit(spectrum, ax1)
    ax1.set_xlabel("")
    plot_residuals(spectrum, ax2)
    return fig


def save_spectrum_figures(spectrum: Any, folder: str | Path, prefix: str = "", formats: tuple[str, ...] = ("png",),
                          band: tuple[np.ndarray, np.ndarray] | None = None) -> list[Path]:
    """Write ``fit``, ``spectrum`` and ``lcurve`` figures into ``folder``; return the paths."""
    import matplotlib as mpl

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    with mpl.rc_context(STYLE):
        written += _save(fit_figure(spectrum), folder / f"{prefix}fit", formats)
        fig, ax = new_axes()
        plot_spectrum(spectrum, ax, band=band)
        written += _save(fig, folder / f"{prefix}spectrum", formats)
        fig, ax = new_axes()
        plot_lcurve(spectrum, ax)
        written += _save(fig, folder / f"{prefix}lcurve", formats)
    return written


def _save(fig: Any, stem: Path, formats: tuple[str, ...]) -> list[Path]:
    out = []
    for fmt in formats:
        path = stem.with_suffix(f".{fmt}")
        tmp = path.with_name(f".{path.name}.tmp")
        fig.savefig(tmp, format=fmt)
        tmp.replace(path)
        out.append(path)
    return out
