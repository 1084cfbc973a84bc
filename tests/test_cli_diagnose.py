"""``tauspec diagnose``: JSON contract, output files, figure, one-line errors."""

from __future__ import annotations

import json

import pytest

from synthetic_sweeps import gel_sweep, rouse_sweep
from tauspec.cli.main import main


def _write(path, sweep):
    rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(sweep.omega, sweep.storage, sweep.loss))
    path.write_text(f"# sample: {sweep.name}\nomega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
    return path


def test_diagnose_json_one_object_per_file_with_the_documented_fields(tmp_path, capsys):
    a = _write(tmp_path / "a.csv", rouse_sweep(4)[0])
    b = _write(tmp_path / "b.csv", gel_sweep(5, 0.5)[0])
    assert main(["diagnose", str(a), str(b), "--json"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert len(lines) == 2
    first, second = (json.loads(x) for x in lines)
    for key in ("schema", "sample", "verdict", "statement", "tau_R", "tau_R_ci", "G0", "G0_ci", "N", "eta_s",
                "alpha", "alpha_ci", "evidence", "fits"):
        assert key in first
    assert first["verdict"] == "rouse" and first["sample"] == "rouse-4"
    assert first["spectrum_used"] is True
    slope = {e["test"]: e for e in first["evidence"]}["spectrum_slope"]
    assert slope["value"] is not None
    assert second["verdict"] != "rouse"


def test_diagnose_out_and_plot(tmp_path, capsys):
    a = _write(tmp_path / "a.csv", rouse_sweep(6)[0])
    out = tmp_path / "res"
    assert main(["diagnose", str(a), "--out", str(out), "--plot", "--no-spectrum"]) == 0
    for name in ("diagnosis.json", "diagnosis.txt", "diagnosis.png"):
        assert (out / name).stat().st_size > 0, name
    d = json.loads((out / "diagnosis.json").read_text())
    assert d["spectrum_used"] is False
    text = capsys.readouterr().out
    assert text.startswith("rouse-6: ROUSE") and "evidence:" in text


def test_diagnose_bad_file_is_one_line_and_exit_1(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("omega,G',G''\n1,2\n")
    assert main(["diagnose", str(bad), "--json"]) == 1
    cap = capsys.readouterr()
    assert cap.out == ""
    err = cap.err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("tauspec: error:") and "bad.csv" in err[0]
    assert main(["diagnose", str(tmp_path / "missing.csv")]) == 1
    assert "no such file" in capsys.readouterr().err


def _write_meta(path, sweep, meta):
    rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(sweep.omega, sweep.storage, sweep.loss))
    head = "".join(f"# {k}: {v}\n" for k, v in meta.items())
    path.write_text(f"# sample: {sweep.name}\n{head}omega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
    return path


def test_diagnose_text_shows_the_entangled_melt_numbers(tmp_path, capsys):
    # A BSW melt (Baumgaertel, Schausberger & Winter 1990) with density, temperature and M in the metadata: the
    # text shows G_N0, tau_d, M_e = rho R T/G_N0 (Ferry 1980 ch. 13) and Z, and the JSON carries the new keys.
    from synthetic_sweeps import bsw_melt_sweep

    sw, truth = bsw_melt_sweep(1, tc_ratio=1e7, wmax=10**3.5)
    a = _write_meta(tmp_path / "melt.csv", sw, {"density": "0.78 g/cm3", "temperature": "150 C",
                                                "molecular_weight": "100 kg/mol"})
    assert main(["diagnose", str(a), "--no-spectrum"]) == 0
    text = capsys.readouterr().out
    assert "ENTANGLED" in text
    for word in ("G_N⁰ = ", "τ_d = ", "M_e = ", "g/mol, 95 % interval [", "Z = ", "BSW fit"):  # words, units
        assert word in text, word
    assert main(["diagnose", str(a), "--no-spectrum", "--json"]) == 0
    obj = json.loads(capsys.readouterr().out)
    assert abs(obj["GN0"] / truth["G_N"] - 1) < 0.15
    assert obj["Me"] > 0 and obj["Z"] == pytest.approx(1e5 / obj["Me"])


def test_diagnose_bad_density_is_one_line(tmp_path, capsys):
    from synthetic_sweeps import bsw_melt_sweep

    a = _write_meta(tmp_path / "melt.csv", bsw_melt_sweep(2, tc_ratio=1e7, wmax=10**3.5)[0], {"density": "42 furlongs"})
    assert main(["diagnose", str(a), "--no-spectrum"]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "melt.csv" in err[0] and "density" in err[0]


def test_a_passed_test_without_a_number_reads_none_found_not_not_made():
    # the entangled-shape test passes with no number when no entangled shape is found; it was printed as
    # "✓ ...: not made (...)", a tick beside "not made", while the count line called it passed
    from tauspec.output.words import evidence_line

    text, passed = evidence_line({"test": "entangled_shape", "value": None, "passed": True, "note": "no cut-off"})
    assert passed is True and text.endswith(": none found (no cut-off)")
    text, passed = evidence_line({"test": "mode_ratio_12", "value": None, "passed": None, "note": "not resolved"})
    assert passed is None and text.endswith(": not made (not resolved)")


def test_an_interval_end_never_reads_as_the_value():
    # G0 = 1000.2 Pa, 95 % interval [995.3, 1004.9]: at three digits "1e3 Pa, 95 % interval [995, 1e3] Pa",
    # as if the upper end were the value; enough digits are shown for the three numbers to read apart
    from tauspec.output.words import quantity

    assert quantity("G0", 1000.2, (995.3, 1004.9)) == "G0 = 1000 Pa, 95 % interval [995.3, 1005] Pa"
    assert quantity("tau_R", 2.41, (2.39, 2.43)) == "τ_R = 2.41 s, 95 % interval [2.39, 2.43] s"


def test_the_verdict_heading_does_not_name_a_signature_the_reason_does_not_give():
    # an entangled verdict reached by "G' stays above G'' with a rising G''" was headed "ENTANGLED — entangled: a
    # rubbery plateau", a plateau the same output's plateau test had just measured at 0 decades
    from tauspec.cli.text import diagnosis_text

    d = {"sample": "x", "verdict": "entangled", "reason": "G' stays above G'' with a rising G'' over 1.10 decades"}
    assert diagnosis_text(d)[0].splitlines()[0] == "x: ENTANGLED — entangled chains"


def test_a_failed_value_never_reads_as_its_bound():
    # a reduced χ² ratio of 1.5703 failing the bound 1.57 read "1.57, expected ≤ 1.57" beside a cross
    from tauspec.output.words import evidence_line

    text, passed = evidence_line({"test": "rouse_fit", "value": 1.5703, "passed": False,
                                  "expected": "<= 1.57 (F test, 1 %)"})
    assert passed is False and ": 1.5703, expected ≤ 1.57 (F test, 1 %)" in text
    text, _ = evidence_line({"test": "mode_exponent", "value": 2.0, "passed": True, "expected": "2 (Rouse)"})
    assert text.endswith(": 2, expected 2 (Rouse)")  # a passed test equal to its expected value stays short
    # a plateau of exactly one decade (the test's bound) read "1 decades, expected < 1 decade"
    text, _ = evidence_line({"test": "plateau", "value": 1.0, "passed": False, "expected": "< 1 decade"})
    assert text == "extent of a rubbery plateau: 1 decade, expected < 1 decade"
    text, _ = evidence_line({"test": "plateau", "value": 1.5, "passed": False, "expected": "< 1 decade"})
    assert text == "extent of a rubbery plateau: 1.5 decades, expected < 1 decade"


def test_a_fractional_chain_length_says_what_it_is():
    # N = 64.5 is the fit's mixture of the chains of 64 and 65 modes (docs/diagnosis.md); it was printed bare
    from tauspec.output.words import quantity

    assert quantity("N", 64.5) == "N = 64.5 (a mixture of the chains of 64 and 65 modes)"
    assert quantity("N", 197.0) == "N = 197"


def test_a_gel_by_its_equilibrium_modulus_gets_no_gel_exponent():
    # A solid of two Maxwell modes and G_e = 500 Pa (Ferry 1980, ch. 3) is a gel by its equilibrium modulus; the
    # critical-gel test finds no power law G' ∝ G'' ∝ ω^n (Winter & Chambon 1986) there, and the slope of its
    # straight line was printed as "n = 0.341".  A critical gel keeps its n.
    import numpy as np

    from synthetic import noisy_sweep
    from tauspec.analysis.diagnosis.diagnose import diagnose
    from tauspec.cli.text import diagnosis_text
    from tauspec.spectrum.kernels import modes_moduli

    w = np.geomspace(0.01, 100, 41)
    solid = diagnose(noisy_sweep(w, *modes_moduli(w, [1e4, 3e3], [1.0, 0.05], G_e=500.0), 0.01, 11), intervals=False)
    assert solid.verdict == "gel" and "equilibrium modulus" in solid.reason
    assert not any(line.strip().startswith("n =") for line in diagnosis_text(solid)[0].splitlines())
    gel = diagnose(gel_sweep(3, 0.5)[0], intervals=False)
    assert gel.verdict == "gel"
    (line,) = [ln for ln in diagnosis_text(gel)[0].splitlines() if ln.strip().startswith("n =")]
    assert float(line.split("=")[1].split(",")[0]) == pytest.approx(0.5, abs=0.05)
