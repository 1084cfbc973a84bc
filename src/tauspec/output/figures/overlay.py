"""The comparison figure: every spectrum in its own supported window, as measured and shifted onto the reference."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np

from ...analysis.comparison.compare import Comparison
from .spectrum import COLUMN_WIDTH, STYLE, _save, new_axes
from .text import plain_text

__all__ = ["plot_overlay", "overlay_figure", "save_overlay"]


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
    for k, (s, sp) in enumerate(zip(comparison.samples, comparison.spectra)):
        m = sp.in_window & (np.asarray(sp.H) > 0)
        a, b = shifts[k] if shifted else (1.0, 1.0)
        if not (math.isfinite(a) and math.isfinite(b)):
            continue
        ax.loglog(np.asarray(sp.tau)[m] / a, np.asarray(sp.H)[m] / b, "-", color=f"C{k % 10}",
                  label=plain_text(s["label"]))
    ref = comparison.reference or comparison.samples[0]["label"]
    ax.set_xlabel("τ / a [s]" if shifted else "relaxation time τ [s]")
    ax.set_ylabel("H(τ) / b [Pa]" if shifted else "H(τ) [Pa]")
    ax.set_title(f"shifted onto {plain_text(ref)}" if shifted else "as measured (each in its window)", fontsize=8)
    ax.legend(frameon=False)
    return ax


def overlay_figure(comparison: Comparison) -> Any:
    """Return a figure with the raw overlay (left) beside the shifted one (right)."""
    import matplotlib as mpl
    from matplotlib.figure import Figure

    with mpl.rc_context(STYLE):
        fig = Figure(figsize=(2 * COLUMN_WIDTH, 2.6), layout="constrained")
        ax1, ax2 = fig.subplots(1, 2)
        plot_overlay(comparison, ax1)
        plot_overlay(comparison, ax2, shifted=True)
    return fig


def save_overlay(comparison: Comparison, folder: Any, prefix: str = "", formats: tuple[str, ...] = ("png",)) -> list:
    """Write the overlay figure ``<prefix>overlay.<fmt>`` into ``folder``; return the paths."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    return _save(overlay_figure(comparison), folder / f"{prefix}overlay", formats)
