"""The one figure style of tauspec: sizes, resolution, colours, log axes with plain decade ticks, saving.

Every figure function of :mod:`tauspec.output.figures` draws inside :func:`styled` (the style sheet
``tauspec.mplstyle`` beside this module), sets its log axes with :func:`log_axis` (limits at the decades that
enclose the data, ticks at the decades only) and names its sample with :func:`set_title` (plain text, never
parsed as math).  Figures are :class:`matplotlib.figure.Figure` objects made without pyplot, so no display and
no global figure state are involved.

Colours are those of Okabe & Ito (2008), *Color Universal Design*, distinguishable with every common form of
colour-vision deficiency: G′ blue, G″ vermillion, fits in the colour of their data, the supported window grey.
"""

from __future__ import annotations

import contextlib
import io
import math
from collections.abc import Iterable, Iterator, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from .text import literal, plain_text

__all__ = [
    "SINGLE_COLUMN", "DOUBLE_COLUMN", "DPI", "FORMATS", "STORAGE", "LOSS", "MODES", "WINDOW", "BAND", "NEUTRAL",
    "STYLE_SHEET", "MARGINS", "styled", "new_figure", "new_grid", "new_axes", "log_axis", "log_axes", "decade_limits",
    "positive_range", "set_title", "plain", "legend", "finish_axes", "save_figure", "figure_bytes", "check_formats",
]

#: Width of a single journal column and of a double column, in inches.
SINGLE_COLUMN = 3.4
DOUBLE_COLUMN = 7.0
#: The one resolution of every raster figure (dots per inch): a single-column PNG is 680 px wide.
DPI = 200
#: The file formats a figure can be written in.
FORMATS = ("png", "svg", "pdf")

# Okabe & Ito (2008): blue, vermillion, bluish green, reddish purple, orange, sky blue.
STORAGE = "#0072B2"
LOSS = "#D55E00"
MODES = "#009E73"
ACCENT = "#CC79A7"
NEUTRAL = "#4d4d4d"
WINDOW = "#e3e3e3"
BAND = "#56B4E9"

#: The style sheet (matplotlib's own format).
STYLE_SHEET = Path(__file__).with_name("tauspec.mplstyle")

#: Tick settings applied to every axes explicitly: ticks are created when a figure is drawn, which may be
#: outside :func:`styled`, so they must not depend on the style being active then.
_TICKS = {"direction": "in", "top": True, "right": True, "labelsize": 7}


@contextlib.contextmanager
def styled() -> Iterator[None]:
    """Draw with the tauspec style sheet for the duration of the block."""
    import matplotlib.style

    with matplotlib.style.context(str(STYLE_SHEET)):
        yield


#: Margins around the axes, in inches (room for 7 pt tick labels like 10^-10, an 8 pt axis label and a title).
#: Fixed margins give every figure of one size the same axes frame, and cost nothing to compute (an automatic
#: layout engine measures every text several times per figure).
MARGINS = {"left": 0.58, "right": 0.14, "bottom": 0.44, "top": 0.26}
#: Room between panels, in inches: for the y label and tick labels of the next panel, and below a panel for its
#: x label and the next panel's title.
GAP_X, GAP_Y = 0.66, 0.66


def new_figure(width: float = SINGLE_COLUMN, height: float = 2.6) -> Any:
    """A new, empty :class:`matplotlib.figure.Figure` in the tauspec style (no pyplot)."""
    from matplotlib.figure import Figure

    with styled():
        return Figure(figsize=(width, height), layout="none")


def new_grid(nrows: int = 1, ncols: int = 1, *, width: float = SINGLE_COLUMN, height: float = 2.6,
             gap_x: float = GAP_X, gap_y: float = GAP_Y, suptitle: bool = False, **kw: Any) -> tuple[Any, Any]:
    """Return (figure, 2-D array of axes) with fixed margins and gaps in inches (see :data:`MARGINS`).

    ``suptitle`` leaves room above for a figure title; other keywords go to ``Figure.subplots`` (``sharex``,
    ``gridspec_kw={"height_ratios": ...}``).
    """
    fig = new_figure(width, height)
    m = MARGINS
    top = m["top"] + (0.18 if suptitle else 0.0)
    ax_w = (width - m["left"] - m["right"] - gap_x * (ncols - 1)) / ncols
    ax_h = (height - m["bottom"] - top - gap_y * (nrows - 1)) / nrows
    grid = dict(kw.pop("gridspec_kw", {}) or {})
    grid.update(left=m["left"] / width, right=1 - m["right"] / width, bottom=m["bottom"] / height,
                top=1 - top / height, wspace=gap_x / ax_w, hspace=gap_y / ax_h)
    with styled():
        axes = fig.subplots(nrows, ncols, squeeze=False, gridspec_kw=grid, **kw)
    return fig, axes


def new_axes(nrows: int = 1, height: float = 2.6, width: float = SINGLE_COLUMN, **kw: Any) -> tuple[Any, Any]:
    """Return (figure, axes) of a new figure with ``nrows`` axes stacked (one axes when ``nrows`` is 1)."""
    fig, axes = new_grid(nrows, 1, width=width, height=height, **kw)
    return fig, (axes[0, 0] if nrows == 1 else axes[:, 0])


def plain(text: Any) -> str:
    """A name as plain text for a legend or label (``$`` escaped, no control characters)."""
    return plain_text(text)


def set_title(ax: Any, text: Any, **kw: Any) -> None:
    """Title an axes with a sample name (rendered as plain text: ``$`` and ``_`` stay themselves)."""
    ax.set_title(literal(text), parse_math=False, **kw)


def decade_limits(lo: float, hi: float) -> tuple[float, float]:
    """The decades that enclose [lo, hi] (both > 0): 10^floor(log10 lo), 10^ceil(log10 hi), at least one apart."""
    a = math.floor(math.log10(lo) + 1e-9)
    b = math.ceil(math.log10(hi) - 1e-9)
    if b <= a:
        b = a + 1
    return 10.0**a, 10.0**b


def positive_range(values: Iterable[Any]) -> tuple[float, float] | None:
    """(min, max) of the finite positive values among arrays, or None when there are none."""
    parts = [np.asarray(v, dtype=float).ravel() for v in values]
    arr = np.concatenate(parts) if parts else np.zeros(0)
    arr = arr[np.isfinite(arr) & (arr > 0)]
    return (float(arr.min()), float(arr.max())) if arr.size else None


def log_axis(ax: Any, which: str, lo: float, hi: float, *, integer: bool = False) -> None:
    """Make ``which`` ('x' or 'y') a log axis from the decades enclosing [lo, hi], ticks at decades only.

    Decades are labelled 10^k (thinned to at most about six labels); the minor ticks carry no labels.  With
    ``integer`` (a mode index) the labels are plain counts 1, 2, 5, 10, 20, 50 ...
    """
    from matplotlib import ticker

    axis = ax.xaxis if which == "x" else ax.yaxis
    (ax.set_xscale if which == "x" else ax.set_yscale)("log")
    a, b = decade_limits(lo, hi) if not integer else (max(0.8, lo * 0.8), hi * 1.25)
    (ax.set_xlim if which == "x" else ax.set_ylim)(a, b)
    decades = math.log10(b / a)
    if integer:
        ticks = [v * 10**k for k in range(0, 6) for v in (1, 2, 5)]
        axis.set_major_locator(ticker.FixedLocator([t for t in ticks if a <= t <= b]))
        axis.set_major_formatter(ticker.FormatStrFormatter("%d"))
        axis.set_minor_locator(ticker.NullLocator())
        return
    axis.set_major_locator(ticker.LogLocator(base=10.0, subs=(1.0,), numticks=7))
    axis.set_major_formatter(ticker.LogFormatterSciNotation(base=10.0, labelOnlyBase=True))
    if decades <= 2:  # minor ticks at 2..9 only where they help reading a value: each tick costs drawing time
        axis.set_minor_locator(ticker.LogLocator(base=10.0, subs=np.arange(2, 10) * 1.0, numticks=12))
        axis.set_minor_formatter(ticker.NullFormatter())
    else:
        axis.set_minor_locator(ticker.NullLocator())


def log_axes(ax: Any, x: Sequence[Any], y: Sequence[Any]) -> None:
    """Log x and y axes over the decades of the given data arrays (the positive finite values)."""
    for which, values in (("x", x), ("y", y)):
        rng = positive_range(values)
        if rng is not None:
            log_axis(ax, which, *rng)


def finish_axes(ax: Any) -> None:
    """Apply the tick settings that must hold whenever the figure is drawn (see ``_TICKS``)."""
    ax.tick_params(which="both", **_TICKS)


def legend(ax: Any, *, names: bool = False, **kw: Any) -> Any:
    """A legend on an opaque white box, so a swatch never disappears on a shaded region.

    ``names``: the labels are sample names, shown as plain text (no math-text parsing).
    """
    kw.setdefault("frameon", True)
    kw.setdefault("framealpha", 0.9)
    kw.setdefault("facecolor", "white")
    kw.setdefault("edgecolor", "none")
    leg = ax.legend(**kw)
    if names:
        for text in leg.get_texts():
            text.set_parse_math(False)
    return leg


def check_formats(formats: Iterable[str]) -> tuple[str, ...]:
    """The formats, validated (png, svg, pdf), in the order given, each once."""
    from ...errors import SettingsError

    out = tuple(dict.fromkeys(str(f).lower().lstrip(".") for f in formats))
    bad = [f for f in out if f not in FORMATS]
    if bad or not out:
        raise SettingsError(f"figure format must be one of {', '.join(FORMATS)}, not {', '.join(bad) or 'nothing'}")
    return out


def _metadata(fmt: str) -> dict[str, Any]:
    """File metadata without dates, so the same figure gives the same bytes."""
    if fmt == "pdf":
        return {"CreationDate": None, "ModDate": None}
    if fmt == "svg":
        return {"Date": None}
    return {}


def figure_bytes(fig: Any, fmt: str = "png") -> bytes:
    """The figure as the bytes of one file (PNG at :data:`DPI`, SVG or PDF)."""
    buf = io.BytesIO()
    with styled():
        fig.savefig(buf, format=fmt, dpi=DPI, metadata=_metadata(fmt))
    return buf.getvalue()


def save_figure(fig: Any, stem: str | Path, formats: Iterable[str] = ("png",)) -> list[Path]:
    """Write the figure as ``stem.<fmt>`` for each format (each atomically); return the paths."""
    from ...data.write import atomic_write_bytes

    out = []
    for fmt in check_formats(formats):
        path = Path(f"{stem}.{fmt}")
        atomic_write_bytes(path, figure_bytes(fig, fmt))
        out.append(path)
    return out
