"""Rouse and Zimm in both forms: the discrete chain (sine spacing) and the continuum law τ_p = τ_1 p^(−a).

Rouse 1953 (J. Chem. Phys. 21:1272) for the discrete chain; the continuum law τ_p = τ_R/p² is the N ≫ 1 form
handbooks write (Ferry 1980, *Viscoelastic Properties of Polymers*, ch. 9; Doi & Edwards 1986, ch. 4); Zimm 1956
(J. Chem. Phys. 24:269) with ν = 1/2 and 0.588 (Rubinstein & Colby 2003, ch. 8).  Sources in docs/references.md.
"""

from __future__ import annotations

import json
import math

import mpmath
import numpy as np
import pytest

from synthetic_sweeps import chain_form_sweep
from tauspec import diagnose
from tauspec.data.write import dumps_json
from tauspec.models.chains import NU_GOOD, power_tail


@pytest.mark.parametrize("x, N, a", [(30.0, 30, 2.0), (300.0, 30, 2.0), (50.0, 100, 1.5)])
def test_power_tail_is_the_sum_over_the_missing_modes(x, N, a):
    # Σ_{p>N} (x p^−a)^k / (1 + (x p^−a)²) for the unit chain, by mpmath's nsum with the Euler–Maclaurin method
    # (an outside reference; the default extrapolation is not reliable for the slowly converging p^−1.5 terms).
    gp, gpp = power_tail(np.array([x]), 1.0, N, a)
    em = {"method": "euler-maclaurin"}
    ref_pp = mpmath.nsum(lambda p: x * p ** (-a) / (1 + (x * p ** (-a)) ** 2), [N + 1, mpmath.inf], **em)
    ref_p = mpmath.nsum(lambda p: (x * p ** (-a)) ** 2 / (1 + (x * p ** (-a)) ** 2), [N + 1, mpmath.inf], **em)
    assert gpp[0] == pytest.approx(float(ref_pp), rel=1e-3)
    assert gp[0] == pytest.approx(float(ref_p), rel=1e-3)


CASES = [(2.0, "power", 30, True), (2.0, "power", 100, True), (2.0, "power", 100, False), (2.0, "power", 300, False),
         (2.0, "sine", 30, True), (2.0, "sine", 300, False),
         (1.5, "power", 30, True), (1.5, "power", 300, False), (1.5, "sine", 30, True), (1.5, "sine", 300, False),
         (3 * NU_GOOD, "power", 100, True), (3 * NU_GOOD, "sine", 100, True)]


@pytest.fixture(scope="module")
def form_results():
    out = []
    for k, (a, form, N, reach) in enumerate(CASES):
        sw, truth = chain_form_sweep(10 + k, a, form, N, reach)
        out.append((a, form, N, reach, truth, diagnose(sw, use_spectrum=False)))
    return out


def test_both_forms_are_called_rouse_or_zimm_with_accurate_parameters(form_results):
    # Done-when of issue 16: continuum-form Rouse and Zimm samples are called rouse/zimm with τ_R within 10 %,
    # G0 within 15 %, over windows that reach the shortest modes (ω_max τ_N = 30) and that do not (0.03).
    for a, form, N, reach, truth, d in form_results:
        expected = "rouse" if a == 2.0 else "zimm"
        assert d.verdict == expected, (a, form, N, reach, d.reason)
        assert d.tau_R == pytest.approx(truth["tau1"], rel=0.10), (a, form, N, reach)
        assert d.G0 == pytest.approx(truth["G0"], rel=0.15), (a, form, N, reach)


def test_the_form_of_the_data_is_preferred_when_the_window_reaches_the_shortest_modes(form_results):
    # Where the window reaches τ_N the two spacings differ (the sine form bunches its fastest modes): the BIC
    # picks the form the data were made with, by more than 10 (very strong evidence, Kass & Raftery 1995).
    for a, form, N, reach, _, d in form_results:
        if reach and a == 2.0:
            assert d.rouse_form == {"sine": "discrete", "power": "continuum"}[form], (form, N)
            assert d.rouse_form_delta_bic > 10
            assert d.fits[d.reported_model].form == form
        if a == 2.0:
            assert ("discrete form" in d.statement) or ("continuum form" in d.statement)
            assert "BIC lower by" in d.statement


def test_rouse_form_is_in_the_json(form_results):
    d = form_results[0][-1]
    obj = json.loads(dumps_json(d.to_dict()))
    assert obj["rouse_form"] in ("discrete", "continuum")
    assert obj["rouse_form_delta_bic"] >= 0
    assert {"rouse", "rouse_continuum", "zimm_theta_discrete", "zimm_good_discrete"} <= set(obj["fits"])


def test_the_continuum_tail_brings_tan_delta_back_to_one(form_results):
    # tan δ of the Rouse region is 1 (Ferry 1980 ch. 9; REFERENCES.md): with the modes p > N of the continuum law
    # added back, the exact N = 30 continuum chain reads 1 within the test's tolerance (0.79 without them).
    a, form, N, reach, truth, d = form_results[0]
    ev = d.evidence_by_name()["tan_delta_intermediate"]
    assert ev.value == pytest.approx(1.0, abs=0.12)
    assert math.isfinite(ev.value)
