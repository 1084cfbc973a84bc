"""The sweep reader: every supported layout, every refusal, and arbitrary text."""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tauspec.data.read import parse_sweep_text, read_sweep
from tauspec.data.sweep import Sweep
from tauspec.errors import DroppedPointsWarning, EncodingGuessWarning, SweepError

W = [0.1, 0.3, 1.0, 3.0, 10.0, 30.0, 100.0]
GP = [1.0, 8.0, 60.0, 300.0, 900.0, 1800.0, 2600.0]
GPP = [10.0, 28.0, 90.0, 240.0, 480.0, 700.0, 900.0]


def table(header, sep=",", rows=None, decimal=".", pre=""):
    rows = rows or list(zip(W, GP, GPP))
    body = "\n".join(sep.join(f"{v:g}".replace(".", decimal) for v in r) for r in rows)
    return f"{pre}{header}\n{body}\n"


# name, text, factor applied to ω, factor applied to moduli (unit conversions: 1 Hz = 2π rad/s, 1 kPa = 1e3 Pa)
LAYOUTS = [
    ("comma, SI", table("omega [rad/s],G' [Pa],G'' [Pa]"), 1.0, 1.0),
    ("comma, Hz and kPa", table("f (Hz),G' (kPa),G'' (kPa)"), 2 * math.pi, 1e3),
    ("tab, bare names", table("omega\tGp\tGpp", sep="\t"), 1.0, 1.0),
    ("semicolon, decimal comma", table("omega [rad/s];G' [Pa];G'' [Pa]", sep=";", decimal=","), 1.0, 1.0),
    ("tab, decimal comma", table("w [rad/s]\tG' [Pa]\tG'' [Pa]", sep="\t", decimal=","), 1.0, 1.0),
    ("whitespace", table("omega [rad/s]  G' [Pa]  G'' [Pa]", sep="   "), 1.0, 1.0),
    ("whitespace, single spaces", table("omega [rad/s] G' [Pa] G'' [Pa]", sep=" "), 1.0, 1.0),
    ("descriptive names", table("Angular Frequency (rad/s),Storage Modulus (Pa),Loss Modulus (Pa)"), 1.0, 1.0),
    ("MPa", table("omega [rad/s],G' [MPa],G'' [MPa]"), 1.0, 1e6),
    ("units row", "omega;G';G''\nrad/s;kPa;kPa\n" + table("x", sep=";").split("\n", 1)[1], 1.0, 1e3),
    ("ω symbol", table("ω [rad/s],G′ [Pa],G″ [Pa]"), 1.0, 1.0),
    ("comments and metadata", table("omega [rad/s],G' [Pa],G'' [Pa]", pre="# sample: X\n# free comment\n"), 1.0, 1.0),
    ("extra column", table("omega [rad/s],G' [Pa],G'' [Pa],T [C]",
                           rows=[(w, a, b, 25.0) for w, a, b in zip(W, GP, GPP)]), 1.0, 1.0),
]


@pytest.mark.parametrize("name,text,wf,gf", LAYOUTS, ids=[x[0] for x in LAYOUTS])
def test_layouts(name, text, wf, gf):
    s = parse_sweep_text(text, source="t.csv")
    np.testing.assert_allclose(s.omega, np.array(W) * wf, rtol=1e-12)
    np.testing.assert_allclose(s.storage, np.array(GP) * gf, rtol=1e-12)
    np.testing.assert_allclose(s.loss, np.array(GPP) * gf, rtol=1e-12)


@pytest.mark.parametrize("name,text,wf,gf", [x for x in LAYOUTS if x[0] in ("comma, SI", "descriptive names",
                                                                          "semicolon, decimal comma")],
                         ids=["comma", "descriptive", "semicolon"])
def test_separator_named_by_the_header_alone_needs_no_detector(monkeypatch, name, text, wf, gf):
    """When only one separator splits a line into a header, the statistical detector is not consulted."""
    import tauspec.data.read as read_module

    def refuse(lines):
        raise AssertionError("the detector ran although the header names the separator")

    monkeypatch.setattr(read_module, "detect_delimiter", refuse)
    s = parse_sweep_text(text, source="t.csv")
    np.testing.assert_allclose(s.storage, np.array(GP) * gf, rtol=1e-12)


def test_polar_form():
    # |G*| and phase angle δ: G' = |G*| cos δ, G'' = |G*| sin δ (definition of the complex modulus, Ferry 1980 ch. 1)
    rows = [(w, math.hypot(a, b), math.degrees(math.atan2(b, a))) for w, a, b in zip(W, GP, GPP)]
    text = "omega [rad/s],|G*| [Pa],phase angle [deg]\n" + "\n".join(f"{w!r},{g!r},{d!r}" for w, g, d in rows)
    s = parse_sweep_text(text)
    np.testing.assert_allclose(s.storage, GP, rtol=1e-12)
    np.testing.assert_allclose(s.loss, GPP, rtol=1e-12)
    rows_rad = "\n".join(f"{w!r},{g!r},{math.radians(d)!r}" for w, g, d in rows)
    s2 = parse_sweep_text("omega [rad/s],G* [kPa],delta [rad]\n" + rows_rad)
    np.testing.assert_allclose(s2.storage, np.array(GP) * 1e3, rtol=1e-12)


def test_metadata_and_sorting(tmp_path):
    rows = list(zip(W, GP, GPP))[::-1]  # high to low frequency, as many rheometers sweep
    p = tmp_path / "b7.csv"
    p.write_text(table("omega [rad/s],G' [Pa],G'' [Pa]", rows=rows,
                       pre="# sample: batch 7\n# Temperature: 130 C\n# Mw: 52 kg/mol\n# concentration: 0.2 g/mL\n"))
    s = read_sweep(p)
    assert s.name == "batch 7"
    assert s.meta["temperature"] == "130 C"
    assert s.meta["molecular_weight"] == "52 kg/mol"
    assert s.meta["concentration"] == "0.2 g/mL"
    assert s.meta_number("temperature", kind="temperature") == pytest.approx(403.15)
    np.testing.assert_allclose(s.omega, W)
    assert read_sweep(tmp_path / "b7.csv").source.endswith("b7.csv")


def test_missing_cells_dropped_with_one_warning():
    # A NaN, empty, "-", "--" (or any run of dashes) or "#N/A" modulus drops its row (the issue "never a silently
    # wrong number": a missing value is not data; it was refused as "not finite" before).
    rows = [f"{w:g},{a:g},{b:g}" for w, a, b in zip(W, GP, GPP)] + ["500,nan,3", "600,,3", "700,4,-", "800,--,2",
                                                                    "900,-----,2", "950,3,#N/A"]
    with pytest.warns(DroppedPointsWarning, match="a missing value at lines 9-14"):
        s = parse_sweep_text("omega,G',G''\n" + "\n".join(rows), source="x.csv")
    assert len(s) == 7 and s.meta["dropped_lines"] == "9-14"


def test_nonpositive_points_dropped_with_warning():
    rows = list(zip(W, GP, GPP)) + [(300.0, -2.0, 1000.0), (1000.0, 3000.0, 0.0)]
    with pytest.warns(DroppedPointsWarning, match="lines 9-10"):
        s = parse_sweep_text(table("omega,G',G''", rows=rows), source="x.csv")
    assert len(s) == 7
    assert s.meta["dropped_lines"] == "9-10"


BAD = [
    ("", "empty or holds only comments"),
    ("# only a comment\n", "empty or holds only comments"),
    ("omega,G',G''\n", "header but no data rows"),
    ("1,2,3\n4,5,6\n", "no header row"),
    ("time [s],G(t) [Pa]\n1,2\n", "no frequency column"),
    ("omega,G'\n1,2\n", "no G'' column"),
    ("frequency,G',G''\n" + "\n".join("1,2,3" for _ in range(7)), "has no unit"),
    ("omega [furlong],G',G''\n1,2,3\n", "not a frequency unit"),
    ("omega,G' [stone],G''\n1,2,3\n", "not a modulus unit"),
    (table("omega,G',G''") + "5,6\n", "row has 2 values"),
    (table("omega,G',G''") + "500,abc,3\n", "column G': value 'abc' is not a number"),
    (table("omega,G',G''") + "500,inf,3\n", "is not finite"),
    (table("omega,G',G''") + "0,5,3\n", "frequency must be positive"),
    (table("omega,G',G''") + "-1,5,3\n", "frequency must be positive"),
    (table("omega,G',G''") + "10,5,3\n", "duplicate frequency 10 rad/s"),
    (table("omega,G',G''", rows=[(w, -a, b) for w, a, b in zip(W, GP, GPP)]), "only 0 points have positive"),
    ("omega,G',G''\n1,2,3\n5\n", "row has 1 value but the header names 3 columns"),
    (table("omega,G',G''", rows=list(zip(W, GP, GPP))[:5]), "at least 6 are needed"),
    ("omega,G',G'',G'\n1,2,3,4\n", "two columns are the storage column"),
]


@pytest.mark.parametrize("text,message", BAD, ids=[m for _, m in BAD])
def test_refusals(text, message):
    with pytest.raises(SweepError, match=message.replace("(", r"\(")) as info:
        parse_sweep_text(text, source="bad.csv")
    assert info.value.one_line().startswith("bad.csv")
    assert "\n" not in info.value.one_line()


def test_file_level_refusals(tmp_path):
    (tmp_path / "d").mkdir()
    with pytest.raises(SweepError, match="is a folder"):
        read_sweep(tmp_path / "d")
    with pytest.raises(SweepError, match="no such file"):
        read_sweep(tmp_path / "missing.csv")
    (tmp_path / "bin.csv").write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00\x00")
    with pytest.raises(SweepError, match="binary data"):
        read_sweep(tmp_path / "bin.csv")
    # Not UTF-8 is now read as cp1252 with a warning naming it (it was refused); this file then has no data rows.
    (tmp_path / "latin.csv").write_bytes("omega,G',G''\n# Temperatur: 25 \xb0C\n".encode("latin-1"))
    with pytest.warns(EncodingGuessWarning, match="read as cp1252"), pytest.raises(SweepError, match="no data rows"):
        read_sweep(tmp_path / "latin.csv")
    big = tmp_path / "big.csv"
    big.write_text("x" * 2000)
    with pytest.raises(SweepError, match="limit"):
        read_sweep(big, max_bytes=1000)


def test_utf16_and_bom(tmp_path):
    text = table("omega [rad/s],G' [Pa],G'' [Pa]")
    (tmp_path / "u16.csv").write_text(text, encoding="utf-16")
    (tmp_path / "bom.csv").write_text(text, encoding="utf-8-sig")
    for name in ("u16.csv", "bom.csv"):
        np.testing.assert_allclose(read_sweep(tmp_path / name).storage, GP)


def test_sweep_constructor_validates():
    with pytest.raises(SweepError, match="strictly increasing"):
        Sweep(omega=[1, 2, 2, 3, 4, 5], storage=[1] * 6, loss=[1] * 6)
    with pytest.raises(SweepError, match="different lengths"):
        Sweep(omega=[1, 2, 3], storage=[1, 2], loss=[1, 2, 3])
    s = Sweep(omega=W, storage=GP, loss=GPP)
    with pytest.raises(ValueError):
        s.omega[0] = 5.0  # read-only arrays


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=400))
def test_arbitrary_text_only_sweep_errors(text):
    # Any text gives a sweep, a SweepError naming the file, or a warning about dropped points; nothing else.
    try:
        s = parse_sweep_text(text, source="fuzz.csv")
    except SweepError as exc:
        assert exc.source == "fuzz.csv" and exc.one_line().startswith("fuzz.csv")
        return
    except DroppedPointsWarning:
        return
    assert np.all(np.isfinite(s.omega)) and np.all(s.storage > 0) and np.all(s.loss > 0)


_cell = st.one_of(st.floats(allow_nan=True, allow_infinity=True, width=32).map(repr), st.sampled_from(["", "x", "1,5"]))


@settings(max_examples=200, deadline=None)
@given(st.sampled_from(["omega,G',G''", "f [Hz];Gp;Gpp", "w\t|G*|\tdelta"]),
       st.lists(st.lists(_cell, min_size=1, max_size=4), max_size=12),
       st.sampled_from([",", ";", "\t", " "]))
def test_arbitrary_numeric_tables_only_sweep_errors(header, rows, sep):
    text = header + "\n" + "\n".join(sep.join(r) for r in rows)
    try:
        s = parse_sweep_text(text, source="fuzz.csv")
    except SweepError as exc:
        assert exc.source == "fuzz.csv"
        return
    except DroppedPointsWarning:
        return
    assert np.all(np.isfinite(s.omega)) and np.all(s.storage > 0) and np.all(s.loss > 0)


def test_temperature_column(tmp_path):
    from tauspec.data.read import read_sweeps

    rows = [(w, a, b, 25.02) for w, a, b in zip(W, GP, GPP)]
    s = parse_sweep_text(table("omega [rad/s],G' [Pa],G'' [Pa],T [°C]", rows=rows))
    assert s.meta["temperature"] == "25.02 °C"
    assert s.meta_number("temperature", kind="temperature") == pytest.approx(298.17)
    two = rows + [(w, 2 * a, 2 * b, 60.0) for w, a, b in zip(W, GP, GPP)]
    text = table("omega [rad/s],G' [Pa],G'' [Pa],temperature [K]", rows=two, pre="# sample: S\n")
    with pytest.raises(SweepError, match="holds sweeps at 2 temperatures"):
        parse_sweep_text(text)
    p = tmp_path / "multi.csv"
    p.write_text(text)
    sweeps = read_sweeps(p)
    assert [s.name for s in sweeps] == ["S@25.02K", "S@60K"]
    np.testing.assert_allclose(sweeps[1].storage, 2 * np.array(GP))
    with pytest.raises(SweepError, match="temperature unit"):
        parse_sweep_text(table("omega,G',G'',T [F]", rows=rows))
