"""Every plotting function runs without a display, takes an optional ax and returns it; files are non-empty."""

import numpy as np
import pytest

from synthetic import lognormal_sweep

# figures are made on matplotlib.figure.Figure: no display, no pyplot state
from tauspec.output.figures import spectrum as plots
from tauspec.spectrum.invert import invert


@pytest.fixture(scope="module")
def spectrum():
    return invert(lognormal_sweep(2, wmin=1e-2, wmax=1e2, n=30))


@pytest.mark.parametrize("fn", [plots.plot_fit, plots.plot_residuals, plots.plot_spectrum, plots.plot_lcurve])
def test_functions_take_and_return_axes(fn, spectrum):
    fig, ax = plots.new_axes()
    assert fn(spectrum, ax) is ax
    assert ax.has_data()
    own = fn(spectrum)  # without ax: a new figure
    assert own is not ax and own.figure is not fig


def test_band_and_formats(spectrum, tmp_path):
    band = (spectrum.H * 0.8, spectrum.H * 1.2)
    paths = plots.save_spectrum_figures(spectrum, tmp_path, prefix="x-", formats=("png", "svg", "pdf"), band=band)
    assert len(paths) == 9
    assert all(p.stat().st_size > 1000 for p in paths)
    assert {p.suffix for p in paths} == {".png", ".svg", ".pdf"}


def test_log_axes_and_si_labels(spectrum):
    ax = plots.plot_spectrum(spectrum)
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert "[s]" in ax.get_xlabel() and "[Pa]" in ax.get_ylabel()
    ax = plots.plot_fit(spectrum)
    assert "[rad/s]" in ax.get_xlabel() and "[Pa]" in ax.get_ylabel()
    assert np.all(np.isfinite(ax.get_ylim()))
