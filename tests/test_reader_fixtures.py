"""One fixture file per export shape (tests/data, invented numbers): read right, or refused for the real cause.

The files hold a three-mode generalized Maxwell model (Ferry 1980, *Viscoelastic Properties of Polymers*, 3rd ed.,
ch. 3; docs/references.md) written with six significant digits in each shape's units; every test recomputes the
model at the frequencies read and compares in SI, so a unit read wrongly (kPa as Pa, Hz as rad/s) fails.
"""

import importlib.util
import math
import warnings
from pathlib import Path

import numpy as np
import pytest

from tauspec import read_sweep, read_sweeps
from tauspec.errors import DroppedPointsWarning, EncodingGuessWarning, SweepError

DATA = Path(__file__).resolve().parent / "data"
_spec = importlib.util.spec_from_file_location("make_fixtures", DATA / "make_fixtures.py")
fixtures = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(fixtures)

#: Six significant digits in the file: each value within 5e-6 relative; the model at a rounded ω moves less.
RTOL = 2e-5
#: |G*| and δ rounded: G' = |G*| cos δ moves by tan δ · δ · 5e-6 relative, up to ~6e-5 where δ is near 83°.
RTOL_POLAR = 2e-4


def model(omega, a_t=1.0):
    pairs = [fixtures.maxwell(w, a_t) for w in omega]
    return np.array([p[0] for p in pairs]), np.array([p[1] for p in pairs])


def assert_model(sweep, a_t=1.0, n=16, rtol=RTOL):
    assert len(sweep) == n
    gp, gpp = model(sweep.omega, a_t)
    np.testing.assert_allclose(sweep.storage, gp, rtol=rtol)
    np.testing.assert_allclose(sweep.loss, gpp, rtol=rtol)
    assert sweep.omega[0] == pytest.approx(0.1, rel=1e-5) and sweep.omega[-1] == pytest.approx(100.0, rel=1e-5)


READ = ["quoted_kpa.csv", "quoted_mpa.csv", "quoted_hz.csv", "preamble_text.csv", "preamble_semicolon.csv",
        "time_column.csv", "hz_and_rads.csv", "temperature_drift.csv", "units_row.tsv", "in_kpa.csv",
        "gstar_phase_deg.csv", "gstar_phase_rad.csv", "utf16_bom.txt", "whitespace_aligned.dat",
        "utf8_bom_semicolon.csv", "verbose_columns.csv"]


@pytest.mark.parametrize("name", READ)
def test_shape_reads_the_right_numbers(name):
    assert_model(read_sweep(DATA / name), rtol=RTOL_POLAR if name.startswith("gstar") else RTOL)


def test_quoted_kpa_is_not_pascal():
    # The issue's wrong number: a quoted header's unit was ignored, G' came out 1000× too small.
    s = read_sweep(DATA / "quoted_kpa.csv")
    assert s.storage[-1] == pytest.approx(25307.6, rel=1e-9)  # "25.3076" kPa at 100 rad/s
    assert read_sweep(DATA / "quoted_mpa.csv").storage[-1] == pytest.approx(25307.6, rel=1e-9)


def test_cp1252_degree_and_micro_sign():
    with pytest.warns(EncodingGuessWarning, match="cp1252"):
        s = read_sweep(DATA / "cp1252_units.csv")
    assert_model(s)
    assert s.meta["temperature"] == "150 °C"
    assert s.meta["ignored_columns"] == "Point, Torque [µN·m]"


def test_preamble_is_metadata():
    s = read_sweep(DATA / "preamble_text.csv")
    assert s.name == "HM-12"
    assert s.meta["operator"] == "R. Ionescu"
    assert s.meta_number("temperature", kind="temperature") == pytest.approx(423.15)
    assert s.meta["geometry"] == "plates 25 mm, gap 1.000 mm"
    semi = read_sweep(DATA / "preamble_semicolon.csv")
    assert semi.name == "HM-12" and semi.meta["strain"] == "1 %"


def test_missing_cells_dropped_with_one_warning():
    with pytest.warns(DroppedPointsWarning, match=r"a missing value at lines 4, 7, 11, 14") as rec:
        s = read_sweep(DATA / "missing_cells.csv")
    assert len(rec) == 1
    assert len(s) == 12 and s.meta["dropped_lines"] == "4, 7, 11, 14"
    gp, gpp = model(s.omega)
    np.testing.assert_allclose(s.storage, gp, rtol=RTOL)


def test_time_column_is_not_temperature():
    s = read_sweep(DATA / "time_column.csv")
    assert s.meta["ignored_columns"] == "t [s]"
    assert s.meta["temperature"] == "150 °C"


def test_hz_and_rad_s_columns_must_agree():
    s = read_sweep(DATA / "hz_and_rads.csv")
    assert s.omega[-1] == 100.0  # the rad/s column is used, not 2π × 15.9155
    with pytest.raises(SweepError, match=r"hz_rads_disagree.csv:8: the frequency columns disagree"):
        read_sweep(DATA / "hz_rads_disagree.csv")


def test_three_blocks_are_three_sweeps():
    sweeps = read_sweeps(DATA / "three_blocks.txt")
    assert [s.name for s in sweeps] == ["three_blocks#1", "three_blocks#2", "three_blocks#3"]
    for s, temp in zip(sweeps, sorted(fixtures.SHIFT)):
        assert_model(s, fixtures.SHIFT[temp])
        assert s.meta_number("temperature", kind="temperature") == pytest.approx(temp + 273.15, abs=0.01)
        assert s.meta["block_title"] == f"Step {s.meta['block']}  {temp:.0f} °C"
        assert s.meta["temperature_spread"] == "0.2 K"
    refusal = r"holds 3 sweeps in 3 blocks .*read_sweeps.*'tauspec master'.*'tauspec batch'"
    with pytest.raises(SweepError, match=refusal):
        read_sweep(DATA / "three_blocks.txt")


def test_temperature_drift_is_one_sweep_with_its_spread():
    s = read_sweep(DATA / "temperature_drift.csv")
    assert s.meta["temperature"] == "149.95 °C"  # the mean of 149.60 … 150.30
    assert s.meta["temperature_spread"] == "0.7 K"
    with pytest.raises(SweepError, match="drift over 0.7 K"):
        read_sweep(DATA / "temperature_drift.csv", temperature_tolerance=0.5)


def test_temperature_column_steps():
    sweeps = read_sweeps(DATA / "temperature_column.csv")
    assert [s.meta["temperature"] for s in sweeps] == ["130 °C", "150 °C", "170 °C"]
    for s, temp in zip(sweeps, sorted(fixtures.SHIFT)):
        assert_model(s, fixtures.SHIFT[temp])


def test_phase_angle_without_unit_and_ambiguous_is_refused():
    # Every δ is below π: degrees and radians are both possible, so no number is given.
    with pytest.raises(SweepError, match=r"gstar_phase_nounit.csv:1: column delta has no unit .* degrees or radians"):
        read_sweep(DATA / "gstar_phase_nounit.csv")


def test_every_fixture_is_listed():
    listed = set(READ) | {"cp1252_units.csv", "missing_cells.csv", "hz_rads_disagree.csv", "three_blocks.txt",
                          "temperature_column.csv", "gstar_phase_nounit.csv"}
    assert {p.name for p in DATA.iterdir() if p.suffix != ".py"} == listed


def test_fixtures_are_what_the_generator_writes(tmp_path, monkeypatch):
    monkeypatch.setattr(fixtures, "HERE", tmp_path)
    fixtures.main()
    for p in tmp_path.iterdir():
        assert p.read_bytes() == (DATA / p.name).read_bytes(), p.name


def test_polar_and_pair_agree():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        a = read_sweep(DATA / "gstar_phase_deg.csv")
        b = read_sweep(DATA / "gstar_phase_rad.csv")
    np.testing.assert_allclose(a.storage, b.storage, rtol=RTOL_POLAR)
    assert math.isclose(a.loss[0], b.loss[0], rel_tol=RTOL_POLAR)
