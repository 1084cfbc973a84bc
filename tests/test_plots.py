"""Every figure: drawn without a display, on a given axes or its own figure, in the house style, within its data's
decades, rendered to PNG (fixed pixel size), SVG and PDF; names as plain text; no code names on the axes."""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from synthetic import lognormal_sweep
from tauspec.analysis.comparison.compare import compare
from tauspec.analysis.diagnosis.diagnose import diagnose
from tauspec.analysis.superposition.master import superpose
from tauspec.cli.demo_archive import demo_samples, temperature_samples
from tauspec.data.sweep import Sweep
from tauspec.modes.curves import creep_compliance, relaxation_modulus, shear_viscosity
from tauspec.modes.fit import fit_modes
from tauspec.modes.options import ModesOptions
from tauspec.output.figures import curve as curves
from tauspec.output.figures import diagnosis as diagnosis_figures
from tauspec.output.figures import master as master_figures
from tauspec.output.figures import overlay as overlays
from tauspec.output.figures import spectrum as plots
from tauspec.output.figures import style
from tauspec.spectrum.invert import invert

PNG = b"\x89PNG\r\n\x1a\n"  # the PNG signature (RFC 2083)


def _sweep(sample):
    return Sweep(omega=sample.omega, storage=sample.storage, loss=sample.loss, name=sample.name, meta=sample.meta)


@pytest.fixture(scope="module")
def spectrum():
    return invert(lognormal_sweep(2, wmin=1e-2, wmax=1e2, n=30))


@pytest.fixture(scope="module")
def modes(spectrum):
    return fit_modes(spectrum.as_sweep(), spectrum, ModesOptions.like(spectrum.options))


@pytest.fixture(scope="module")
def rouse():
    """The demo's M = 40 kg/mol binder (finite-N Rouse chains), its spectrum, modes and diagnosis."""
    sw = _sweep(next(s for s in demo_samples() if s.name == "binder-M40"))
    sp = invert(sw)
    return sw, sp, fit_modes(sw, sp, ModesOptions.like(sp.options)), diagnose(sw, spectrum=sp, intervals=False)


@pytest.fixture(scope="module")
def master_curve():
    return superpose([_sweep(s) for s in temperature_samples()], T_ref=413.15)


@pytest.fixture(scope="module")
def comparison():
    series = [_sweep(s) for s in demo_samples() if s.kind == "rouse"]
    return compare(series, replicates=0)


# --------------------------------------------------------------------------- helpers


def _plotted(ax, which):
    """Every positive finite value drawn on an axis: lines, stems, bands, error bars, and the x extent of spans."""
    vals = []
    k = 0 if which == "x" else 1
    for line in ax.get_lines():
        vals.append(np.asarray(line.get_xdata() if which == "x" else line.get_ydata(), dtype=float))
    for coll in ax.collections:
        for path in coll.get_paths():
            vals.append(np.asarray(path.vertices[:, k], dtype=float))
    if which == "x":
        for patch in ax.patches:  # the supported window (axvspan): its ends are data
            vals.append(np.array([patch.get_x(), patch.get_x() + patch.get_width()], dtype=float))
    arr = np.concatenate(vals) if vals else np.zeros(0)
    return arr[np.isfinite(arr) & (arr > 0)]


def assert_within_decades(ax, *, integer_x=False):
    """Each log axis ends at the decades that enclose what is drawn on it, and everything drawn is inside."""
    for which in ("x", "y"):
        scale = ax.get_xscale() if which == "x" else ax.get_yscale()
        if scale != "log":
            continue
        data = _plotted(ax, which)
        assert data.size, f"nothing drawn on the {which} axis"
        lo, hi = ax.get_xlim() if which == "x" else ax.get_ylim()
        d_lo, d_hi = 10.0 ** math.floor(math.log10(data.min()) + 1e-9), 10.0 ** math.ceil(math.log10(data.max()) - 1e-9)
        margin = 1.3 if (integer_x and which == "x") else 1.0 + 1e-9  # a mode index ends a quarter beyond its count
        assert lo >= d_lo / margin and hi <= max(d_hi, 10 * d_lo) * margin, (which, (lo, hi), (d_lo, d_hi))
        assert data.min() >= lo * (1 - 1e-9) and data.max() <= hi * (1 + 1e-9), (which, (lo, hi), data.min(),
                                                                              data.max())


CODE_NAME = re.compile(r"[A-Za-z]{2,}_[A-Za-z]{2,}")  # eta_cox_merz, shear_rate, window_decades ...
UNIT_IN_PARENTHESES = re.compile(r"\((Pa|s|rad/s|1/s|Pa·s|Pa s|1/Pa|%|K|°C|deg)\)")


def assert_words(fig):
    """Axis labels, titles and legends say what is drawn in words and [unit] brackets, never code names."""
    texts = []
    for ax in fig.axes:
        texts += [ax.get_xlabel(), ax.get_ylabel(), ax.get_title()]
        leg = ax.get_legend()
        if leg is not None:
            texts += [t.get_text() for t in leg.get_texts()]
        for label in (ax.get_xlabel(), ax.get_ylabel()):
            assert not UNIT_IN_PARENTHESES.search(label), label  # units in [...], not (...)
    for t in texts:
        assert not CODE_NAME.search(t), t


def render(fig, tmp_path, stem):
    """Write the figure as PNG, SVG and PDF; the PNG has the figure's size at the one resolution of the style."""
    paths = style.save_figure(fig, tmp_path / stem, ("png", "svg", "pdf"))
    png = paths[0].read_bytes()
    assert png[:8] == PNG
    w, h = int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")
    width, height = fig.get_size_inches()
    assert (w, h) == (round(width * style.DPI), round(height * style.DPI))
    assert paths[1].read_text().lstrip().startswith("<?xml") and paths[2].read_bytes()[:5] == b"%PDF-"
    assert all(p.stat().st_size > 1000 for p in paths)
    return paths


# --------------------------------------------------------------------------- one test per figure


@pytest.mark.parametrize("fn", [plots.plot_fit, plots.plot_residuals, plots.plot_spectrum, plots.plot_lcurve])
def test_spectrum_functions_take_and_return_axes(fn, spectrum):
    fig, ax = style.new_axes()
    assert fn(spectrum, ax) is ax
    assert ax.has_data()
    own = fn(spectrum)  # without ax: a new figure
    assert own is not ax and own.figure is not fig


def test_fit_figure(spectrum, tmp_path):
    fig = plots.fit_figure(spectrum)
    top, bottom = fig.axes
    assert_within_decades(top)
    assert bottom.get_xlim() == top.get_xlim() and bottom.get_ylabel() == "residual [%]"
    assert top.get_title(loc="left") == spectrum.sample
    assert "[rad/s]" in bottom.get_xlabel() and "[Pa]" in top.get_ylabel()
    assert_words(fig)
    render(fig, tmp_path, "fit")


def test_spectrum_figure_with_modes_band_and_window(spectrum, modes, tmp_path):
    band = (spectrum.H * 0.8, spectrum.H * 1.2)
    fig = plots.spectrum_figure(spectrum, band=band, modes=modes)
    ax = fig.axes[0]
    assert_within_decades(ax)
    # the modes are stems: one vertical segment per mode from the bottom of the axis to g_i at τ_i
    stems = [c for c in ax.collections if len(c.get_paths()) == modes.n_modes]
    assert stems, "the Maxwell modes are not drawn as stems"
    tops = sorted(p.vertices[:, 1].max() for p in stems[0].get_paths())
    np.testing.assert_allclose(tops, np.sort(modes.g), rtol=1e-12)
    # the legend sits on an opaque box, so the grey window swatch never vanishes on the grey shading
    leg = ax.get_legend()
    labels = [t.get_text() for t in leg.get_texts()]
    assert "supported window" in labels and leg.get_frame().get_alpha() >= 0.8
    assert leg.get_frame().get_facecolor()[:3] == (1.0, 1.0, 1.0)
    swatch = leg.legend_handles[labels.index("supported window")]
    assert swatch.get_facecolor()[:3] != leg.get_frame().get_facecolor()[:3]
    assert ax.get_title(loc="left") == spectrum.sample
    assert_words(fig)
    render(fig, tmp_path, "spectrum")


def test_lcurve_figure(spectrum, tmp_path):
    fig = plots.lcurve_figure(spectrum)
    assert_within_decades(fig.axes[0])
    assert_words(fig)
    render(fig, tmp_path, "lcurve")


def test_diagnosis_figure(rouse, tmp_path):
    _, _, _, diag = rouse
    fig = diagnosis_figures.plot_diagnosis(diag)
    fits, mode_times, spectrum_ax = fig.axes
    assert_within_decades(fits)
    assert_within_decades(mode_times, integer_x=True)
    assert_within_decades(spectrum_ax)
    assert fig.get_suptitle() == f"{diag.sample}: {diag.verdict}"
    # the mode index is labelled with plain counts (1, 2, 5, 10 ...), never 2×10⁰
    fig.canvas.draw()
    ticks = [t.get_text() for t in mode_times.get_xticklabels() if t.get_text()]
    assert ticks and all(t.isdigit() for t in ticks), ticks
    assert all("[" in ax.get_ylabel() for ax in fig.axes)
    assert_words(fig)
    render(fig, tmp_path, "diagnosis")
    # it draws into given axes too, and returns their figure
    other, grid = style.new_grid(1, 3, width=style.DOUBLE_COLUMN)
    assert diagnosis_figures.plot_diagnosis(diag, axes=list(grid[0])) is other


def test_master_figure(master_curve, tmp_path):
    fig = master_figures.plot_master(master_curve)
    a, b, c, d = fig.axes
    for ax in (a, b, d):
        assert_within_decades(ax)
    assert c.get_xscale() == "linear" and d.get_ylim() == (0.0, 90.0)
    assert "control-entangled-A" in fig.get_suptitle()
    assert_words(fig)
    render(fig, tmp_path, "master")
    other, grid = style.new_grid(2, 2, width=style.DOUBLE_COLUMN, height=5.0)
    assert master_figures.plot_master(master_curve, axes=list(grid.ravel())) is other


def test_overlay_and_series_figures(comparison, tmp_path):
    fig = overlays.overlay_figure(comparison)
    for ax in fig.axes:
        assert_within_decades(ax)
    labels = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert labels == [s["label"] for s in comparison.samples]
    assert_words(fig)
    render(fig, tmp_path, "overlay")
    # the series figure: τ against M of the four binders with the fitted power law (Rouse: τ ∝ M², Ferry 1980,
    # ch. 9); the demo's molecular weights are in kg/mol
    fig = overlays.series_figure(comparison)
    ax = fig.axes[0]
    assert "[kg/mol]" in ax.get_xlabel()
    assert_within_decades(ax)
    assert_words(fig)
    render(fig, tmp_path, "series")
    np.testing.assert_allclose(sorted(ax.get_lines()[0].get_xdata()), [10, 20, 40, 80])


@pytest.mark.parametrize("quantity", ["relaxation", "creep", "viscosity"])
def test_curve_figures(rouse, quantity, tmp_path):
    sw, _, modes, _ = rouse
    w = sw.omega
    t = np.geomspace(1 / w[-1], 1 / w[0], 50)
    curve = {"relaxation": lambda: relaxation_modulus(modes, t), "creep": lambda: creep_compliance(modes, t),
             "viscosity": lambda: shear_viscosity(modes, w)}[quantity]()
    fig = curves.curve_figure(curve, title=sw.name)
    ax = fig.axes[0]
    assert_within_decades(ax)
    assert_words(fig)
    assert ax.get_xlabel() == curves.CURVE_WORDS[quantity][0]
    render(fig, tmp_path, quantity)


def test_relaxation_modulus_stops_six_decades_down(tmp_path):
    # One Maxwell mode (Ferry 1980, ch. 3): G(t) = g exp(−t/τ).  Over the default times 1/ω_max … 1/ω_min of a
    # sweep reaching ω = 0.01 rad/s, G(100 s) = g e^(−200) ≈ 1e-87 g: the axis must stop about six decades
    # below G(t)'s largest value instead of running down to 10^-84.
    from synthetic import maxwell_sweep

    sw = maxwell_sweep(1, g=1e4, tau=0.5)
    m = fit_modes(sw, n_modes=1)
    curve = relaxation_modulus(m, np.geomspace(1 / sw.omega[-1], 1 / sw.omega[0], 50))
    assert curve.y.min() < 1e-60 * curve.y.max()
    ax = curves.plot_curve(curve)
    lo, hi = ax.get_ylim()
    assert lo >= 10 ** -7 * curve.y.max() and hi <= 10 * curve.y.max()
    assert ax.get_xlim()[1] <= 100.0  # and the time axis ends where the curve does
    render(ax.figure, tmp_path, "maxwell")


def test_names_are_plain_text(spectrum, tmp_path):
    # a sample named like math text (two dollar signs) is drawn as written (Batch lot names: "5$ lot #1")
    named = invert(Sweep(omega=spectrum.omega, storage=spectrum.storage, loss=spectrum.loss,
                         name="5$ lot #1, 6$ lot_2"))
    fig = plots.spectrum_figure(named)
    assert fig.axes[0].get_title(loc="left") == "5$ lot #1, 6$ lot_2"
    render(fig, tmp_path, "named")


def test_style_sheet_is_one_style():
    # the style sheet is a file of the package that matplotlib reads as is; its sizes and colours are ours
    import matplotlib

    assert style.STYLE_SHEET.is_file()
    rc = matplotlib.rc_params_from_file(str(style.STYLE_SHEET), use_default_template=False)
    assert rc["savefig.dpi"] == style.DPI and list(rc["figure.figsize"]) == [style.SINGLE_COLUMN, 2.6]
    colours = [c["color"].lower().lstrip("#") for c in rc["axes.prop_cycle"]]
    assert colours[:2] == [style.STORAGE.lower().lstrip("#"), style.LOSS.lower().lstrip("#")]
    with pytest.raises(Exception, match="png, svg, pdf"):
        style.check_formats(["jpeg"])
