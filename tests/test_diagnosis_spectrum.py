"""The spectrum-level tests of the diagnosis, on the continuous spectrum from ``tauspec.spectrum.invert``."""

from __future__ import annotations

import numpy as np
import pytest

from synthetic_sweeps import rouse_sweep, zimm_sweep
from tauspec import diagnose


@pytest.fixture(scope="module")
def rouse_with_spectrum():
    return [diagnose(rouse_sweep(s)[0]) for s in (204, 210, 3)]


def test_rouse_verdict_holds_with_the_spectrum_tests(rouse_with_spectrum):
    for d in rouse_with_spectrum:
        assert d.spectrum is not None
        assert d.verdict == "rouse", (d.sample, d.reason)


def test_cumulative_spectrum_slope_is_minus_one_half_for_rouse(rouse_with_spectrum):
    # H = s G0 (τ_1/τ)^s with s = 1/2 (Rouse 1953; Ferry 1980 ch. 9), so ∫_τ^∞ H d ln τ ∝ τ^(−1/2).
    # The slope over a window of under a decade scatters (one case of three reads −0.39 at 2 % noise), so
    # the median is checked tightly and each value loosely.
    slopes = [d.evidence_by_name()["spectrum_slope"].value for d in rouse_with_spectrum]
    assert all(s is not None for s in slopes)
    assert np.median(slopes) == pytest.approx(-0.5, abs=0.05)
    assert all(-0.7 < s < -0.3 for s in slopes)


@pytest.mark.parametrize("seed", [200, 202])
def test_zimm_theta_spectrum_slope_is_steeper_than_rouse(seed):
    # Zimm θ: s = 1/(3ν) = 2/3 (Zimm 1956; docs/references.md: H slope −2/3).
    sw, _ = zimm_sweep(seed, 0.5)
    d = diagnose(sw)
    assert d.verdict == "zimm", d.reason
    slope = d.evidence_by_name()["spectrum_slope"].value
    assert slope == pytest.approx(-2 / 3, abs=0.1)
    assert d.evidence_by_name()["spectrum_slope"].passed is False  # not the Rouse −1/2
