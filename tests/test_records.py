"""Every result and options record round-trips through its JSON text: from_dict(to_dict(x)) == x.

The round trip goes through the JSON text itself (NaN and infinities become null and come back as NaN), and each
case also checks that the equality can fail: a record with one field changed is not equal to the original.
"""

import dataclasses
import json
import math
import warnings

import numpy as np
import pytest

from synthetic import lognormal_sweep, maxwell_sweep
from synthetic_sweeps import bsw_melt_sweep
from tauspec.analysis.comparison.compare import compare
from tauspec.analysis.comparison.options import CompareOptions
from tauspec.analysis.diagnosis.diagnose import diagnose
from tauspec.analysis.diagnosis.options import DiagnoseOptions
from tauspec.analysis.superposition.master import superpose
from tauspec.analysis.uncertainty.bands import confidence_bands
from tauspec.analysis.uncertainty.options import BandOptions
from tauspec.batch.run import BatchReport
from tauspec.batch.settings import BatchSettings
from tauspec.data.manifest import read_manifest
from tauspec.data.read import ReadOptions
from tauspec.data.record import is_record
from tauspec.data.sweep import Sweep
from tauspec.data.write import dumps_json
from tauspec.errors import SettingsError, TauspecError, WeakResultWarning
from tauspec.models.beadspring import fit_chain
from tauspec.models.chains import rouse_moduli
from tauspec.models.shift_laws import fit_arrhenius, fit_wlf
from tauspec.modes.curves import relaxation_modulus
from tauspec.modes.derived import derive
from tauspec.modes.fit import fit_modes
from tauspec.modes.options import ModesOptions
from tauspec.modes.retardation import retardation_spectrum
from tauspec.spectrum.invert import invert
from tauspec.spectrum.options import InvertOptions
from test_superpose import T_REF_WLF, TEMPS_WLF, make_sweeps, wlf_truth


def _round_trip(x):
    text = dumps_json(x.to_dict())
    return type(x).from_dict(json.loads(text))


def _changed(x):
    """A copy of ``x`` with one numeric or text field changed to another valid value (the equality must see it)."""
    for f in dataclasses.fields(x):
        v = getattr(x, f.name)
        if f.metadata.get("tauspec.transient"):
            continue
        if isinstance(v, bool):
            candidates = [not v]
        elif isinstance(v, float | int) and math.isfinite(v):
            candidates = [v * 1.5 + 1, v * 0.5, v + 1]
        elif isinstance(v, str):
            candidates = [v + "x"]
        elif isinstance(v, tuple) and all(isinstance(s, str) for s in v):
            candidates = [(*v, "x")]
        else:
            continue
        for new in candidates:
            try:
                return dataclasses.replace(x, **{f.name: new if isinstance(v, tuple) else type(v)(new)})
            except (SettingsError, TauspecError, ValueError):
                continue
    raise AssertionError(f"no field of {type(x).__name__} to change")


@pytest.fixture(scope="module")
def results():
    sweep = lognormal_sweep(3, wmin=1e-2, wmax=1e2, n=30)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", WeakResultWarning)
        spectrum = invert(sweep, grid=40)
        modes = fit_modes(sweep, spectrum)
        w = np.geomspace(1e-2, 1e3, 36)
        gp, gpp = rouse_moduli(w, 1e3, 1.0, 30)
        rouse = Sweep(omega=w, storage=gp, loss=gpp, name="rouse")
        diagnosis = diagnose(rouse, intervals=False)
        melt, _ = bsw_melt_sweep(1, tc_ratio=1e7, wmax=10**3.5)  # an entangled melt (issue 16)
        entangled = diagnose(melt.replace(meta={"density": "0.78 g/cm3", "temperature": "150 C"}), intervals=False,
                             use_spectrum=False)
        bands = confidence_bands(spectrum, resamples=10, statistics=("eta_s",))
        comparison = compare([sweep, maxwell_sweep(4)], replicates=3, invert_options=InvertOptions(grid=40))
        T = np.asarray(TEMPS_WLF, dtype=float)
        shifts = np.diff([wlf_truth(t) for t in T])
        master = superpose(make_sweeps(T, wlf_truth, T_ref=T_REF_WLF, seed=1), T_ref=T_REF_WLF)
    return {
        "sweep": sweep, "spectrum": spectrum, "lcurve": spectrum.lcurve, "modes": modes,
        "candidate": modes.candidates[0], "derived": derive(spectrum),
        "curve": relaxation_modulus(modes, np.geomspace(0.01, 10, 5)),
        "retardation": retardation_spectrum(modes.g, modes.tau, eta_s=modes.eta_s),
        "chain_fit": fit_chain(rouse.omega, rouse.storage, rouse.loss, "rouse"),
        "wlf": fit_wlf(T, shifts, np.full(len(shifts), 0.01), T_ref=T_REF_WLF),
        "arrhenius": fit_arrhenius(T, shifts, np.full(len(shifts), 0.01), T_ref=T_REF_WLF),
        "diagnosis": diagnosis, "evidence": diagnosis.evidence[0], "entangled": entangled,
        "entanglement": entangled.entanglement, "estimate": entangled.entanglement.estimates[0],
        "bsw_fit": entangled.entanglement.bsw, "bands": bands, "noise": bands.noise,
        "interval": next(iter(bands.intervals.values())), "comparison": comparison, "pair": comparison.pairs[0],
        "master": master, "pair_shift": master.pairs[0], "check": master.check,
        "report": BatchReport(out="out", inputs=3, ok=2, failed=1, computed=3, skipped=0, worker_deaths=0,
                              seconds=1.5),
        "invert_options": InvertOptions(strength=0.3, select="gcv", grid=50, equilibrium_modulus=True, eta_s=1.0),
        "modes_options": ModesOptions(n_modes=3, significance=0.05),
        "diagnose_options": DiagnoseOptions(intervals=False),
        "band_options": BandOptions(resamples=20, noise=0.02, level=0.9),
        "compare_options": CompareOptions(replicates=4, significance=0.1, reselect=False),
        "batch_settings": BatchSettings(invert=InvertOptions(grid=30, solvent=False), run_diagnose=False),
        "read_options": ReadOptions(temperature_tolerance=0.5, max_rows=1000),
    }


@pytest.mark.parametrize("name", [
    "sweep", "spectrum", "lcurve", "modes", "candidate", "derived", "curve", "retardation", "chain_fit", "wlf",
    "arrhenius", "diagnosis", "evidence", "entangled", "entanglement", "estimate", "bsw_fit",
    "bands", "noise", "interval", "comparison", "pair", "master",
    "pair_shift", "check", "report", "invert_options", "modes_options", "diagnose_options", "band_options",
    "compare_options", "batch_settings", "read_options",
])
def test_round_trip(results, name):
    x = results[name]
    assert is_record(x)
    back = _round_trip(x)
    assert type(back) is type(x) and back == x
    assert dumps_json(back.to_dict()) == dumps_json(x.to_dict())
    assert _changed(x) != x


def test_manifest_entry_round_trip(tmp_path):
    path = tmp_path / "list.csv"
    path.write_text("file,M,c,T,label,operator\n# a comment\na.csv,40000,0.1,150,first,Kim\n")
    (entry,) = read_manifest(path)
    assert entry.T == pytest.approx(423.15) and entry.extra == {"operator": "Kim"} and entry.line == 3
    assert _round_trip(entry) == entry and _changed(entry) != entry


def test_arrays_compare_by_value_and_nan_equals_nan(results):
    sp = results["spectrum"]
    assert dataclasses.replace(sp, H=sp.H.copy()) == sp
    assert dataclasses.replace(sp, H=sp.H * (1 + 1e-12)) != sp
    d = results["derived"]
    nan = dataclasses.replace(d, Je0=math.nan)  # a solid has NaN J_e⁰
    assert nan == dataclasses.replace(d, Je0=math.nan)
    assert math.isfinite(d.Je0) and nan != d  # the log-normal liquid has a finite J_e⁰: NaN differs from a number


def test_schema_of_another_kind_is_refused(results):
    d = results["spectrum"].to_dict()
    with pytest.raises(TauspecError, match="schema"):
        type(results["spectrum"]).from_dict({**d, "schema": "tauspec.bands/1"}, "x.json")
    old = {**d, "schema": "tauspec.spectrum/1", "settings": {**d["settings"]}}
    old["settings"]["plateau"] = old["settings"].pop("equilibrium_modulus")
    assert type(results["spectrum"]).from_dict(old) == results["spectrum"]  # a result written before the rename


def test_reprs_are_short(results):
    from html.parser import HTMLParser

    for name, x in results.items():
        assert len(repr(x)) < 300, name
        # in a notebook: the same numbers as a small table
        page = x._repr_html_()
        cells: list[str] = []
        parser = HTMLParser()
        parser.handle_data = cells.append
        parser.feed(page)
        assert page.startswith("<table>") and cells[0] == type(x).__name__, name
        for part in repr(x)[len(type(x).__name__) + 1:-1].split(", ")[:3]:
            if "=" in part and not part.endswith("...") and not any(c in part for c in "()[]'\""):
                key, value = part.split("=", 1)
                assert key in cells and value in cells, (name, key)


def test_options_are_validated_once_with_one_line(results):
    with pytest.raises(SettingsError, match="select must be one of 'gcv', 'lcurve', not 'best'"):
        InvertOptions(select="best")
    with pytest.raises(SettingsError, match="invert\\(\\) has no option 'plateau'; its options: strength"):
        invert(results["sweep"], plateau=True)
    with pytest.raises(SettingsError, match="n_modes must be a whole number of modes from 1 to 50, not 0"):
        ModesOptions(n_modes=0)
