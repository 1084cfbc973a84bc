"""The figure of a bead-spring diagnosis: the chain fits, the mode times, the spectrum with the Rouse slope."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from ...models.chains import chain_moduli
from ..diagnosis_words import MODEL_WORDS
from .style import (
    DOUBLE_COLUMN,
    LOSS,
    MODES,
    NEUTRAL,
    STORAGE,
    WINDOW,
    finish_axes,
    legend,
    log_axes,
    log_axis,
    new_grid,
    positive_range,
    styled,
)
from .text import literal

__all__ = ["plot_diagnosis", "plot_chain_fits", "plot_mode_times", "plot_rouse_spectrum"]

def _words(model: str) -> str:
    return MODEL_WORDS.get(model, model.replace("_", " ")).replace("good solvent", "good solv.")


def plot_diagnosis(diag: Any, axes: Sequence[Any] | None = None) -> Any:
    """Draw the three panels of a :class:`~tauspec.analysis.diagnosis.diagnose.Diagnosis` and return the figure.

    Left: the data with the Rouse fit and the better Zimm fit.  Middle: mode times τ_p against the mode index
    p (the discrete modes of the data and the fitted Rouse chain) with the slopes −2 (Rouse) and −1.5 (Zimm,
    θ solvent) through τ_R.  Right: the recovered H(τ) with the slope −1/2 of the Rouse region.

    Parameters
    ----------
    diag : Diagnosis
    axes : three matplotlib Axes, optional
        Where to draw; without them a new double-column figure is made.
    """
    if axes is None:
        fig, grid = new_grid(1, 3, width=DOUBLE_COLUMN, height=2.5)
        axes = list(grid[0])
    else:
        fig = axes[0].figure
    plot_chain_fits(diag, axes[0])
    plot_mode_times(diag, axes[1])
    plot_rouse_spectrum(diag, axes[2])
    with styled():
        fig.suptitle(f"{literal(diag.sample)}: {diag.verdict}", parse_math=False, x=0.01, y=0.985, ha="left", va="top",
                     fontsize=8)
    return fig


def plot_chain_fits(diag: Any, ax: Any) -> Any:
    """G′ and G″ with the moduli of the Rouse fit (solid) and of the better Zimm fit (dashed)."""
    with styled():
        if diag.omega is None:
            ax.text(0.5, 0.5, "the data are not stored with this diagnosis", ha="center", va="center",
                    transform=ax.transAxes)
            return ax
        w = np.asarray(diag.omega)
        wd = np.geomspace(w[0], w[-1], 200)
        ax.plot(w, diag.storage, "o", mfc="none", color=STORAGE, label="G′")
        ax.plot(w, diag.loss, "s", mfc="none", color=LOSS, label="G″")
        curves = [diag.storage, diag.loss]
        zimm = [m for m in diag.fits if m.startswith("zimm")]
        shown = (["rouse"] if "rouse" in diag.fits else []) + ([min(zimm, key=lambda m: diag.fits[m].bic)]
                                                               if zimm else [])
        for name, style in zip(shown, ("-", "--")):
            fit = diag.fits[name]
            gp, gpp = chain_moduli(wd, fit.G0, fit.tau1, fit.N, a=fit.a, form=fit.form, eta_s=fit.eta_s)
            ax.plot(wd, gp, style, color=STORAGE, lw=1)
            ax.plot(wd, gpp, style, color=LOSS, lw=1)
            ax.plot([], [], style, color=NEUTRAL, lw=1, label=f"{_words(name)}, rms {100 * fit.rms:.1f} %")
            curves += [gp, gpp]
        log_axes(ax, [w], curves)
        ax.set_xlabel("angular frequency ω [rad/s]")
        ax.set_ylabel("G′, G″ [Pa]")
        legend(ax, loc="best", fontsize=6.5)
        finish_axes(ax)
    return ax


def plot_mode_times(diag: Any, ax: Any) -> Any:
    """Mode times τ_p against the mode index p, with the Rouse (−2) and Zimm θ (−1.5) slopes through τ_R.

    A discrete mode of the data that merges several chain modes is placed at its cumulative mode count
    0.5 + (Σ_{i≤j} g_i − g_j/2)/G0, so that a chain of equal strengths G0 falls on the integers.
    """
    with styled():
        rouse = diag.fits.get("rouse")
        n_show = int(min(max(round(rouse.N), 1), 60)) if rouse is not None else 20
        p = np.arange(1, n_show + 1)
        ys = []
        if len(diag.modes_tau) and diag.G0 > 0:
            g = np.asarray(diag.modes_g)
            j = 0.5 + (np.cumsum(g) - g / 2) / diag.G0
            ok = j >= 0.5
            ax.plot(np.maximum(j[ok], 1.0), np.asarray(diag.modes_tau)[ok], "o", color=MODES,
                    label="discrete modes of the data")
            ys.append(np.asarray(diag.modes_tau)[ok])
        if rouse is not None:
            ax.plot(p, rouse.mode_times()[:n_show], ".", color=NEUTRAL, label="fitted Rouse chain")
            ys.append(rouse.mode_times()[:n_show])
        if np.isfinite(diag.tau_R) and diag.tau_R > 0:
            ax.plot(p, diag.tau_R * p**-2.0, "-", color="k", lw=0.8, label="slope −2 (Rouse)")
            ax.plot(p, diag.tau_R * p**-1.5, "--", color="k", lw=0.8, label="slope −1.5 (Zimm θ)")
            ys += [diag.tau_R * p**-2.0, diag.tau_R * p**-1.5]
        rng = positive_range(ys)
        log_axis(ax, "x", 1.0, float(n_show), integer=True)
        if rng is not None:
            log_axis(ax, "y", *rng)
        ax.set_xlabel("mode index p")
        ax.set_ylabel(r"mode time $\tau_p$ [s]")
        legend(ax, loc="best", fontsize=6.5)
        finish_axes(ax)
    return ax


def plot_rouse_spectrum(diag: Any, ax: Any) -> Any:
    """The recovered H(τ) in its supported window with the Rouse line (G0/2)(τ_R/τ)^(1/2)."""
    with styled():
        sp = diag.spectrum
        if sp is None:
            ax.text(0.5, 0.5, "continuous spectrum not available", ha="center", va="center", transform=ax.transAxes)
            finish_axes(ax)
            return ax
        tau, H = np.asarray(sp.tau), np.asarray(sp.H)
        top = float(H.max()) if H.size and H.max() > 0 else 1.0
        shown = H >= 1e-4 * top  # hide the numerically zero tail
        lo, hi = sp.window
        log_axis(ax, "x", *(positive_range([tau[shown]] + ([np.array([lo, hi])] if lo < hi else []))
                            or (float(tau.min()), float(tau.max()))))
        if lo < hi:
            ax.axvspan(lo, hi, facecolor=WINDOW, edgecolor="none", zorder=0, label="supported window")
        ax.plot(np.where(shown, tau, np.nan), np.where(shown, H, np.nan), "-", color="k", label="H(τ)")
        ys = [H[shown]]
        if np.isfinite(diag.tau_R) and diag.tau_R > 0 and diag.G0 > 0:
            t_ref = np.geomspace(max(lo, tau[0]), min(diag.tau_R, tau[-1]), 50)
            if t_ref[0] < t_ref[-1]:
                ref = 0.5 * diag.G0 * (diag.tau_R / t_ref) ** 0.5
                ax.plot(t_ref, ref, "--", color=LOSS, lw=1, label="slope −1/2 (Rouse)")
                ys.append(ref)
        rng = positive_range(ys)
        if rng is not None:
            log_axis(ax, "y", max(rng[0], 1e-4 * top), rng[1])
        ax.set_xlabel("relaxation time τ [s]")
        ax.set_ylabel("H(τ) [Pa]")
        legend(ax, loc="lower left", fontsize=6.5)
        finish_axes(ax)
    return ax
