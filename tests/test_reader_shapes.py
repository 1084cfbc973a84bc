"""Export shapes beyond the fixtures: what is read, and what is refused for which real cause (one line each)."""

import math

import numpy as np
import pytest

from tauspec import parse_sweep_text, parse_sweeps_text, read_sweep
from tauspec.errors import DroppedPointsWarning, EncodingGuessWarning, SweepError

W = [0.1, 0.3, 1.0, 3.0, 10.0, 30.0, 100.0]
GP = [1.0, 8.0, 60.0, 300.0, 900.0, 1800.0, 2600.0]
GPP = [10.0, 28.0, 90.0, 240.0, 480.0, 700.0, 900.0]


def body(sep=",", decimal=".", extra=()):
    return "\n".join(sep.join([f"{w:g}", f"{a:g}", f"{b:g}", *extra]).replace(".", decimal)
                     for w, a, b in zip(W, GP, GPP)) + "\n"


READS = [
    # header, body, factor on ω, factor on the moduli
    ('"Angular Frequency (rad/s)","Storage Modulus (kPa)","Loss Modulus (kPa)"', body(), 1.0, 1e3),
    ('"Frequency (Hz)";"G\' (MPa)";"G\'\' (MPa)"', body(";", ","), 2 * math.pi, 1e6),
    ("omega [s⁻¹],G' [GPa],G'' [GPa]", body(), 1.0, 1e9),
    ("omega [rad/s],G' [mPa],G'' [mPa]", body(), 1.0, 1e-3),
    ("Angular frequency in 1/s;Storage modulus in kPa;Loss modulus in kPa", body(";"), 1.0, 1e3),
    ("omega,G',G\"\nrad/s,kPa,kPa", body(), 1.0, 1e3),  # a double quote as the double prime
    ("ω (rad/s)\tG′ (Pa)\tG″ (Pa)\n\t\t", body("\t"), 1.0, 1.0),  # an empty units row is no units row
    ("omega,G',G''\n,,", body(), 1.0, 1.0),  # nor one of bare separators (a spreadsheet's empty row) ...
    ("omega;G';G''\nrad/s;kPa;kPa\n;;", body(";"), 1.0, 1e3),  # ... which is a blank line wherever it stands
    ("omega,G',G''", body().replace("\n", "\n,,\n", 2) + ",,\n", 1.0, 1.0),
    # a units row whose only units are those of columns tauspec does not read (strain, torque)
    ("omega,G',G'',Strain\n,,,%", body(extra=("1.0",)), 1.0, 1.0),
    ("omega;G';G'';Torque\n;;;[µN·m]", body(";", extra=("12.5",)), 1.0, 1.0),
    # blanks between columns and a unit with a space in the units row: the runs of blanks separate the units
    ("omega  G'  G''\nrad s⁻¹  kPa  kPa", body("  "), 1.0, 1e3),
    ("omega  G'  G''\n1/s  kPa  kPa", body("  "), 1.0, 1e3),
    # ... and a name with a space too: the data rows' width picks the split of both rows
    ("omega  G'  G''  Loss Factor\nrad s⁻¹  kPa  kPa  -", body("  ", extra=("0.8",)), 1.0, 1e3),
    # engineering units: 1 N/mm² = 1 MPa; 1 psi = 0.45359237 kg × 9.80665 m/s² / (0.0254 m)² = 6.894 757 kPa
    # (NIST SP 811, from memory; docs/references.md)
    ("omega [rad/s],G' [N/mm²],G'' [N/mm^2]", body(), 1.0, 1e6),
    ("omega [rad/s],G' [psi],G'' [lbf/in²]", body(), 1.0, 6894.757293168361),
    # a modulus written with its argument, as a function of ω
    ("omega [rad/s]\tG'(ω) [kPa]\tG''(ω) [kPa]", body("\t"), 1.0, 1e3),
    ("w [rad/s],G'(w) [Pa],G''(omega) [Pa]", body(), 1.0, 1.0),
    # quantity/unit headings (ISO 80000-1; IUPAC Green Book, Cohen et al. 2007, §1.4; docs/references.md)
    ("ω/rad s⁻¹,G′/kPa,G″/kPa", body(), 1.0, 1e3),
    ("f/Hz;G'/MPa;G''/MPa", body(";"), 2 * math.pi, 1e6),
    ("omega/rad/s,G'/Pa,G''/Pa,T/°C", body(extra=("25",)), 1.0, 1.0),
    # ... where a ratio of moduli is a column of its own, not G'' in the unit G'
    ("omega [rad s^-1],G' [kPa],G''/G',G'' [kPa]", "\n".join(f"{w:g},{a:g},{b / a:g},{b:g}" for w, a, b in
                                                           zip(W, GP, GPP)), 1.0, 1e3),
    ("omega [rad/s],G_prime [kPa],G_double_prime [kPa]", body(), 1.0, 1e3),
    # a rule under the header or its units row, as text tables underline their headings
    ("omega [rad/s],G' [kPa],G'' [kPa]\n-----,-----,------", body(), 1.0, 1e3),
    ("omega  G'  G''\nrad s⁻¹  kPa  kPa\n=====  ===  ===", body("  "), 1.0, 1e3),
    ("omega\tG'\tG''\n-----\t---\t----\nrad/s\tPa\tPa", body("\t"), 1.0, 1.0),
]


@pytest.mark.parametrize("header,rows,wf,gf", READS, ids=[r[0][:30] for r in READS])
def test_reads(header, rows, wf, gf):
    s = parse_sweep_text(f"{header}\n{rows}", source="x.csv")
    np.testing.assert_allclose(s.omega, np.array(W) * wf, rtol=1e-12)
    np.testing.assert_allclose(s.storage, np.array(GP) * gf, rtol=1e-12)
    np.testing.assert_allclose(s.loss, np.array(GPP) * gf, rtol=1e-12)


REFUSED = [
    ("omega [rad/s],G''/G' [-],G' [Pa]\n" + body(), r"x.csv:1: header names no G'' column"),
    ("omega [rad/s],G' [mpa],G'' [mpa]\n" + body(), r"x.csv:1: unit 'mpa' of column G' \[mpa\] is ambiguous"),
    ("Frequency (1/s),G',G''\n" + body(), r"x.csv:1: column Frequency \(1/s\): 1/s after a frequency could be"),
    ("omega [Hz],G',G''\n" + body(), r"x.csv:1: column omega \[Hz\] is an angular frequency but its unit is Hz"),
    ("omega [rad/s],G' [kPa],G'' [kPa]\nrad/s,Pa,Pa\n" + body(), r"x.csv:1: column G' \[kPa\] says kPa but the "
                                                                  r"units row below says Pa"),
    ("omega [rad/s];G' [Pa];G'' [Pa]\n" + body(";").replace("0,3;", "0.3;").replace("10;", "10,0;"),
     r"x.csv:6: mixes decimal points \(line 2\) and decimal commas \(line 6\)"),
    ('omega,G\',G\'\'\n"0,1",1,2\n' + body(), r"x.csv:2: column omega: value '0,1' holds a comma in a "
                                               r"comma-separated file"),
    ('"omega","G\'","G\'\'"\n' + body().replace("0.1,1,10", '"0.1,1,10'), r"x.csv:2: a quoted field is not written"),
    ("omega,G',G''\n" + body() + "End of run\n" + body(), r"x.csv:10: numbers after the text on line 9 "
                                                           r"\('End of run'\) but no header row of their own"),
    ("omega  G'  G''\nrad/s  Pa\n" + body("  "), r"x.csv:2: the units row has 2 fields but the header names 3"),
    ("omega,G',G'',T [C],temperature [K]\n" + body(extra=("25", "298")), r"two columns are the temperature column"),
    ("omega,G',G'',T [C]\n" + "\n".join(f"{w},{a},{b},{20 + 0.5 * i}" for i, (w, a, b) in
                                        enumerate(zip(W, GP, GPP))), r"temperatures drift over 3 K \(20–23 C\)"),
    ("omega,G',G''\nOmega value,Storage value,Loss value\n" + body(), r"x.csv:2: the line after the header is "
                                                                      r"neither a units row nor data"),
    ("omega,G',G''\nω,G',G''\n" + body(), r"x.csv:2: lines 1 and 2 are both header rows"),
    ("omega,G',G''\n\nTitle\nω,G',G''\n" + body(), r"x.csv:3: the line after the header is neither"),
    ("omega,G',G''\n" + body() + "\nTitle\nomega,G',G''\n", r"x.csv:11: header but no data rows"),
    ("omega,|G*|,delta\n" + "\n".join(f"{w},{a},{0.2 + 0.2 * i}" for i, (w, a) in enumerate(zip(W, GP))),
     r"x.csv:1: column delta has no unit and its values \(at most 1.4\) could be degrees or radians"),
    ("omega [rad/s],G' [kPa],G'' [kPa]\n" + body() + "\nomega,G',G''\n" + body(),
     r"x.csv:10: block 2 names G' without a unit where block 1 gives kPa"),
    ("omega [rad/s],G' [Pa],G'' [Pa]\n" + body().replace("900,", "inf,"), r"x.csv:6: column G' \[Pa\]: value 'inf' "
                                                                            r"is not finite"),
    # digit grouping, as a spreadsheet writes 2058.87 where the decimal mark is a comma
    ("omega [rad/s];G' [Pa];G'' [Pa]\n" + body(";", ",").replace("1800", "1.800,0"),
     r"x.csv:7: column G' \[Pa\]: value '1.800,0' holds both '.' and ',' \(a thousands separator\?\)"),
]


@pytest.mark.parametrize("text,message", REFUSED, ids=[m[:40] for _, m in REFUSED])
def test_refused_for_the_real_cause(text, message):
    with pytest.raises(SweepError, match=message) as info:
        parse_sweep_text(text, source="x.csv")
    assert "\n" not in info.value.one_line()


def test_preamble_of_free_text_and_key_value_lines():
    text = ("Rheometer export\nSample: HM-12\nTemperature: 150 °C\nNotes; plates 25 mm\n\n"
            "Angular Frequency (rad/s),Storage Modulus (Pa),Loss Modulus (Pa)\n" + body())
    s = parse_sweep_text(text, source="x.csv")
    assert s.name == "HM-12" and s.meta["notes"] == "plates 25 mm"
    assert s.meta_number("temperature", kind="temperature") == pytest.approx(423.15)


def test_blocks_by_blank_line_and_title_with_temperature_in_the_title():
    text = ("Step A 130 °C\nomega,G',G''\n" + body() + "\nStep B 150 °C\nomega,G',G''\n" + body())
    sweeps = parse_sweeps_text(text, source="s.csv", default_name="s")
    assert [s.name for s in sweeps] == ["s#1", "s#2"]
    assert [s.meta["temperature"] for s in sweeps] == ["130 °C", "150 °C"]
    with pytest.raises(SweepError, match=r"s.csv: holds 2 sweeps in 2 blocks \(s#1, s#2\)"):
        parse_sweep_text(text, source="s.csv", default_name="s")


def test_metadata_above_the_first_block_is_shared_but_its_temperature_is_not():
    text = ("# sample: P\n# temperature: 130 C\nomega,G',G''\n" + body() + "# temperature: 150 C\nomega,G',G''\n"
            + body() + "omega,G',G''\n" + body())
    a, b, c = parse_sweeps_text(text, source="s.csv")
    assert [s.name for s in (a, b, c)] == ["P#1", "P#2", "P#3"]
    assert a.meta["temperature"] == "130 C" and b.meta["temperature"] == "150 C"
    assert "temperature" not in c.meta  # not copied from the first block: master then asks for it


def test_missing_temperature_cells_drop_their_rows_and_an_empty_column_is_ignored():
    rows = [f"{w},{a},{b},{'' if i == 2 else 150}" for i, (w, a, b) in enumerate(zip(W, GP, GPP))]
    with pytest.warns(DroppedPointsWarning, match="a missing value at lines 4"):
        s = parse_sweep_text("omega,G',G'',T [C]\n" + "\n".join(rows) + "\n1000,3000,1000,150\n", source="x")
    assert len(s) == 7 and s.meta["temperature"] == "150 C"
    empty = parse_sweep_text("omega,G',G'',T [C]\n" + body(extra=("",)), source="x")
    assert "temperature" not in empty.meta and empty.meta["ignored_columns"] == "T [C] (empty)"


def test_latin1_bytes_outside_cp1252_read_as_latin1(tmp_path):
    path = tmp_path / "l1.csv"
    path.write_bytes(("# note: \x81\nomega,G',G''\n" + body()).encode("latin-1"))
    with pytest.warns(EncodingGuessWarning, match=r"read as Latin-1"):
        assert len(read_sweep(path)) == 7


def test_utf8_bom_with_bad_bytes_refused(tmp_path):
    path = tmp_path / "b.csv"
    path.write_bytes(b"\xef\xbb\xbfomega,G',G''\n\xb0\n")
    with pytest.raises(SweepError, match=r"b.csv:2: marked as UTF-8 \(byte-order mark\) but byte 0xb0"):
        read_sweep(path)


def test_comma_column_with_decimal_comma_inside_quotes_semicolon_file():
    text = '"omega";"G\'";"G\'\'"\n' + "\n".join(f'"{w:g}";"{a:g}";"{b:g}"'.replace(".", ",")
                                                for w, a, b in zip(W, GP, GPP))
    np.testing.assert_allclose(parse_sweep_text(text).omega, W)


def test_trailing_separator_and_trailer_text():
    text = "omega,G',G'',\n" + body().replace("\n", ",\n") + "End of data\n"
    s = parse_sweep_text(text)
    np.testing.assert_allclose(s.storage, GP)


def test_one_block_of_several():
    from tauspec.data.read import count_blocks

    bad = "omega,G',G''\n" + body().replace("900,", "oops,")
    text = "omega,G',G''\n" + body() + "\nStep 2\n" + bad + "\nStep 3\nomega,G',G''\n" + body()
    assert count_blocks(text) == 3
    (third,) = parse_sweeps_text(text, source="s.csv", default_name="s", block=3)
    assert third.name == "s#3" and third.meta["block_title"] == "Step 3"
    with pytest.raises(SweepError, match=r"s.csv:16: column G': value 'oops' is not a number"):
        parse_sweeps_text(text, source="s.csv", block=2)
    with pytest.raises(SweepError, match="has 3 block"):
        parse_sweeps_text(text, source="s.csv", block=4)
