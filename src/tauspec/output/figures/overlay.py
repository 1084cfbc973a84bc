"""Figures of a comparison: every spectrum in its own supported window, as measured and shifted; series scaling."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np

from ...analysis.comparison.compare import Comparison
from ...data.units import parse_quantity
from .style import (
    DOUBLE_COLUMN,
    NEUTRAL,
    finish_axes,
    legend,
    log_axes,
    new_axes,
    new_grid,
    plain,
    save_figure,
    set_title,
    styled,
)

__all__ = ["plot_overlay", "overlay_figure", "plot_series", "series_figure", "comparison_figures", "save_overlay"]


def _shift_to_first(comparison: Comparison) -> list[tuple[float, float]]:
    """(a, b) mapping each sample onto the reference (or the first sample): H_ref(τ) ≈ H_k(aτ)/b."""
    names = [s["label"] for s in comparison.samples]
    ref = names.index(comparison.reference) if comparison.reference else 0
    shifts = [(1.0, 1.0)] * len(names)
    for p in comparison.pairs:
        i, j = names.index(p.a), names.index(p.b)
        if i == ref:
            shifts[j] = (p.time_shift, p.modulus_shift)
        elif j == ref:
            shifts[i] = (1.0 / p.time_shift, 1.0 / p.modulus_shift)
    return shifts


def plot_overlay(comparison: Comparison, ax: Any = None, *, shifted: bool = False) -> Any:
    """Draw every spectrum of a comparison in its own supported window, raw or shifted onto the reference.

    Shifted: sample k is drawn as H_k(τ)/b against τ/a, with (a, b) its shifts from the reference (or the
    first sample), so that spectra of the same shape fall on one curve.
    """
    if ax is None:
        _, ax = new_axes()
    shifts = _shift_to_first(comparison)
    xs, ys = [], []
    with styled():
        for k, (s, sp) in enumerate(zip(comparison.samples, comparison.spectra)):
            m = sp.in_window & (np.asarray(sp.H) > 0)
            a, b = shifts[k] if shifted else (1.0, 1.0)
            if not (math.isfinite(a) and math.isfinite(b)) or not m.any():
                continue
            x, y = np.asarray(sp.tau)[m] / a, np.asarray(sp.H)[m] / b
            keep = y >= 1e-4 * y.max()
            ax.plot(np.where(keep, x, np.nan), np.where(keep, y, np.nan), "-", color=f"C{k % 8}",
                    label=plain(s["label"]))
            xs.append(x[keep])
            ys.append(y[keep])
        log_axes(ax, xs, ys)
        ref = comparison.reference or comparison.samples[0]["label"]
        ax.set_xlabel("shifted relaxation time τ/a [s]" if shifted else "relaxation time τ [s]")
        ax.set_ylabel("shifted spectrum H(τ)/b [Pa]" if shifted else "H(τ) [Pa]")
        set_title(ax, f"shifted onto {ref}" if shifted else "as measured, each in its supported window")
        legend(ax, loc="lower left", names=True)
        finish_axes(ax)
    return ax


def overlay_figure(comparison: Comparison) -> Any:
    """A double-column figure: the raw overlay (left) beside the shifted one (right)."""
    fig, grid = new_grid(1, 2, width=DOUBLE_COLUMN, height=2.7)
    ax1, ax2 = grid[0]
    plot_overlay(comparison, ax1)
    plot_overlay(comparison, ax2, shifted=True)
    return fig


def _m_scale(comparison: Comparison) -> tuple[float, str]:
    """The factor from the samples' M to the axis, and the axis unit.

    The comparison holds M in g/mol when the sweeps' metadata write a unit (and from a manifest, whose M is in
    g/mol): the axis shows kg/mol.  Numbers written without a unit are drawn as given.
    """
    for sp in comparison.spectra:
        try:
            unit = parse_quantity((sp.meta or {}).get("molecular_weight") or "")[1]
        except ValueError:  # no text (or no number): the next sample's
            continue
        return (1e-3, "kg/mol") if unit.strip() else (1.0, "as given")
    return 1e-3, "kg/mol"


def plot_series(comparison: Comparison, ax: Any = None) -> Any | None:
    """The characteristic time of each sample against its molecular weight M, with the fitted power law.

    The time is τ_R of the Rouse diagnosis when the series fit used it, else the weight-average time τ_w of
    each spectrum (``Comparison.series["time"].measure`` says which).  Returns None (nothing drawn) when the
    comparison has no series fit of the time against M.
    """
    fit = comparison.series.get("time")
    if fit is None or "M" not in fit.exponents:
        return None
    use_rouse = fit.measure.startswith("tau_R")
    pts = [(s["M"], s["tau_R"] if use_rouse else s["tau_w"], s["label"]) for s in comparison.samples]
    pts = [(m, t, lab) for m, t, lab in pts if m is not None and t is not None and m > 0 and t > 0
           and math.isfinite(t)]
    if len(pts) < 2:
        return None
    if ax is None:
        _, ax = new_axes()
    M = np.array([p[0] for p in pts], dtype=float)
    t = np.array([p[1] for p in pts], dtype=float)
    x = fit.exponents["M"]
    lo, hi = fit.intervals["M"]
    scale, unit = _m_scale(comparison)
    with styled():
        ax.plot(M * scale, t, "o", color="C0",
                label=r"$\tau_R$ of each sample" if use_rouse else r"$\tau_w$ of each sample")
        grid = np.geomspace(M.min() / 1.3, M.max() * 1.3, 50)
        line = fit.prefactor * grid**x  # the fit is in the samples' M
        ci = f", 95 % [{lo:.2f}, {hi:.2f}]" if math.isfinite(lo) and math.isfinite(hi) else ""
        ax.plot(grid * scale, line, "-", color=NEUTRAL, lw=1, label=f"fit: τ ∝ $M^{{{x:.2f}}}${ci}")
        log_axes(ax, [grid * scale], [t, line])
        ax.set_xlabel(f"molecular weight M [{unit}]")
        ax.set_ylabel(r"Rouse time $\tau_R$ [s]" if use_rouse else r"weight-average time $\tau_w$ [s]")
        set_title(ax, "series scaling of the relaxation time")
        legend(ax, loc="upper left")
        finish_axes(ax)
    return ax


def series_figure(comparison: Comparison) -> Any | None:
    """A single-column figure of :func:`plot_series`, or None when the comparison has no series fit."""
    fig, ax = new_axes()
    return fig if plot_series(comparison, ax) is not None else None


def comparison_figures(comparison: Comparison) -> dict[str, Any]:
    """The figures of a comparison by file stem: ``overlay`` and, for a series, ``series``."""
    figs = {"overlay": overlay_figure(comparison)}
    series = series_figure(comparison)
    if series is not None:
        figs["series"] = series
    return figs


def save_overlay(comparison: Comparison, folder: Any, prefix: str = "", formats: tuple[str, ...] = ("png",)) -> list:
    """Write the comparison's figures (``<prefix>overlay``, ``<prefix>series``) into ``folder``; return the paths."""
    folder = Path(folder)
    paths: list[Path] = []
    for stem, fig in comparison_figures(comparison).items():
        paths += save_figure(fig, folder / f"{prefix}{stem}", formats)
    return paths

