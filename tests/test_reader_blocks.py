"""A file of several blocks through the layers above the reader: each block a sample in the batch, one master
curve in ``tauspec master``.  The fixture tests/data/three_blocks.txt holds three temperature steps of the invented
Maxwell model of tests/data/make_fixtures.py (Ferry 1980, ch. 3; docs/references.md).
"""

import json
import shutil
import warnings
from pathlib import Path

import numpy as np
import pytest

from tauspec.batch.run import run_batch
from tauspec.batch.settings import BatchSettings
from tauspec.batch.summary import read_summary
from tauspec.cli.main import main
from tauspec.data.read import parse_sweeps_text, read_sweeps
from tauspec.errors import SweepError, TauspecWarning
from tauspec.spectrum.invert import invert
from tauspec.spectrum.options import InvertOptions

DATA = Path(__file__).resolve().parent / "data"
SMALL = BatchSettings(invert=InvertOptions(grid=24), run_modes=False, run_diagnose=False)


@pytest.fixture
def archive(tmp_path):
    work = tmp_path / "arch"
    work.mkdir()
    shutil.copy(DATA / "three_blocks.txt", work)
    shutil.copy(DATA / "quoted_kpa.csv", work)
    shutil.copy(DATA / "cp1252_units.csv", work)
    return work


def test_batch_makes_each_block_a_sample(archive, tmp_path):
    out = tmp_path / "out"
    report = run_batch([archive], out, settings=SMALL, jobs=1)
    rows = {r["file"]: r for r in read_summary(out)}
    assert list(rows) == ["cp1252_units.csv", "quoted_kpa.csv", "three_blocks.txt#1", "three_blocks.txt#2",
                          "three_blocks.txt#3"]
    assert all(r["status"] == "ok" for r in rows.values()) and report.status == 0 and report.inputs == 5
    assert [rows[f"three_blocks.txt#{k}"]["sample"] for k in (1, 2, 3)] == [f"three_blocks#{k}" for k in (1, 2, 3)]
    # each block's result is the inversion of that block's sweep, as read_sweeps gives it
    for k, sweep in enumerate(read_sweeps(archive / "three_blocks.txt"), start=1):
        stored = json.loads((out / "three_blocks.txt" / f"#{k}" / "result.json").read_text(encoding="utf-8"))
        assert stored["file"] == f"three_blocks.txt#{k}"
        with warnings.catch_warnings():  # the batch records these as notes
            warnings.simplefilter("ignore", TauspecWarning)
            direct = invert(sweep, grid=24).to_dict()
        np.testing.assert_allclose(stored["spectrum"]["H"], direct["H"], rtol=1e-12)
    # the encoding the reader guessed is a note of that file's result
    notes = json.loads((out / "cp1252_units.csv" / "result.json").read_text(encoding="utf-8"))["notes"]
    assert any("EncodingGuessWarning" in n and "cp1252" in n for n in notes)
    again = run_batch([archive], out, settings=SMALL, jobs=1)
    assert (again.computed, again.skipped) == (0, 5)



def test_the_separator_is_found_once_per_file(archive, tmp_path, monkeypatch):
    """The client lays each file out once; the workers read its blocks with the separator it found."""
    import tauspec.data.read as read_module

    calls: list[str] = []
    find = read_module._delimiter

    def counted(text, source, opts):
        calls.append(source)
        return find(text, source, opts)

    monkeypatch.setattr(read_module, "_delimiter", counted)
    report = run_batch([archive], tmp_path / "out", settings=SMALL, jobs=1)  # one job: the workers run here
    assert report.ok == 5
    assert sorted(calls) == ["cp1252_units.csv", "quoted_kpa.csv", "three_blocks.txt"]


def test_a_separator_given_to_the_reader_is_one_it_knows():
    from tauspec.data.read import file_layout, parse_sweeps_text
    from tauspec.errors import SettingsError

    text = (DATA / "three_blocks.txt").read_text(encoding="utf-8")
    separator, count = file_layout(text)
    assert (separator, count) == ("\t", 3)
    given = parse_sweeps_text(text, separator=separator)
    found = parse_sweeps_text(text)
    assert [s.name for s in given] == [s.name for s in found]
    for a, b in zip(given, found):
        np.testing.assert_array_equal(a.storage, b.storage)
    with pytest.raises(SettingsError, match="separator must be one of"):
        parse_sweeps_text(text, separator="|")


def test_a_bad_block_is_its_own_error_row(archive, tmp_path):
    text = (archive / "three_blocks.txt").read_text(encoding="utf-8").splitlines()
    text[text.index("Step 2  150 °C") + 5] = "39.8107\tbroken\t13881.2\t150.0"
    (archive / "three_blocks.txt").write_text("\n".join(text) + "\n", encoding="utf-8")
    out = tmp_path / "out"
    report = run_batch([archive], out, settings=SMALL, jobs=2)
    rows = {r["file"]: r for r in read_summary(out)}
    assert [rows[f"three_blocks.txt#{k}"]["status"] for k in (1, 2, 3)] == ["ok", "error", "ok"]
    assert "value 'broken' is not a number" in rows["three_blocks.txt#2"]["error"]
    assert report.status == 1


def test_master_takes_a_file_of_blocks(tmp_path, capsys):
    assert main(["master", str(DATA / "three_blocks.txt"), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    np.testing.assert_allclose(sorted(data["temperatures"]), [129.99375, 149.99375, 169.99375], atol=1e-3)
    assert len(data["aT"]) == 3


def test_single_sweep_commands_refuse_a_file_of_blocks(capsys):
    assert main(["invert", str(DATA / "three_blocks.txt")]) == 1
    err = capsys.readouterr().err
    assert "holds 3 sweeps in 3 blocks" in err and "read_sweeps" in err and "'tauspec batch'" in err


def _amplitude_then_frequency(path: Path, with_frequency_sweep: bool = True) -> Path:
    """An export of an amplitude sweep (ω fixed at 10 rad/s, the strain rising) and then a frequency sweep of one
    Maxwell mode, g = 10 kPa, τ = 1 s (Ferry 1980, ch. 3), in one file, as rheometer software writes a test
    program's intervals."""
    strain = np.geomspace(0.01, 100, 12)
    w = np.geomspace(0.1, 100, 16)
    lines = ["Test: amplitude sweep", "", "Point\tStrain\tAngular Frequency\tStorage Modulus\tLoss Modulus",
             "\t[%]\t[rad/s]\t[Pa]\t[Pa]"]
    lines += [f"{i}\t{s:.4g}\t10\t{5000 / (1 + (s / 20) ** 2):.6g}\t{1000 / (1 + (s / 30) ** 2):.6g}"
              for i, s in enumerate(strain, start=1)]
    if with_frequency_sweep:
        lines += ["", "Test: frequency sweep", "", "Point\tStrain\tAngular Frequency\tStorage Modulus\tLoss Modulus",
                  "\t[%]\t[rad/s]\t[Pa]\t[Pa]"]
        lines += [f"{i}\t1\t{x:.8g}\t{1e4 * x * x / (1 + x * x):.8g}\t{1e4 * x / (1 + x * x):.8g}"
                  for i, x in enumerate(w, start=1)]
    path.write_text("\n".join(lines) + "\n")
    return path


def test_an_amplitude_sweep_block_is_left_out_with_its_reason(tmp_path):
    # before: "duplicate frequency 10 rad/s (lines 5 and 6)", and the frequency sweep beside it was not read
    both = _amplitude_then_frequency(tmp_path / "program.txt")
    with pytest.warns(TauspecWarning, match=r"left out block 1 \(lines 3-16\): the frequency is 10 rad/s at every "
                                            r"point: an amplitude, time or temperature sweep, not a frequency sweep"):
        (sw,) = read_sweeps(both)
    assert sw.name == "program#2" and len(sw.omega) == 16
    np.testing.assert_allclose(sw.storage[sw.omega == 1.0], 5000.0, rtol=1e-7)  # G' = g/2 at ωτ = 1
    with pytest.raises(SweepError, match=r"program.txt:5: block 1 \(lines 3-16\): the frequency is 10 rad/s"):
        parse_sweeps_text(both.read_text(), source="program.txt", block=1)
    only = _amplitude_then_frequency(tmp_path / "amplitude.txt", with_frequency_sweep=False)
    with pytest.raises(SweepError, match=r"amplitude.txt:5: the frequency is 10 rad/s at every point: an amplitude, "
                                         r"time or temperature sweep, not a frequency sweep"):
        read_sweeps(only)
    # the batch: the amplitude block is a row 'left out' with the reason, not a failure (the run's exit status
    # is 0; it was an error row and exit status 1 before), the frequency sweep a result; a file holding only
    # the amplitude sweep is still an error
    out = tmp_path / "out"
    report = run_batch([both, only], out, settings=SMALL, jobs=1)
    rows = {r["file"]: r for r in read_summary(out)}
    assert rows["program.txt#2"]["status"] == "ok"
    assert rows["program.txt#1"]["status"] == "left out"
    assert "an amplitude, time or temperature sweep" in rows["program.txt#1"]["error"]
    assert rows["amplitude.txt"]["status"] == "error"
    assert (report.ok, report.left_out, report.failed) == (1, 1, 1)
    assert run_batch([both], tmp_path / "out2", settings=SMALL, jobs=1).status == 0
    # the report lists it apart from the failures, not in their colour
    from tauspec.output.report import write_report

    page = write_report(out).read_text(encoding="utf-8")
    assert "1 left out" in page and "Blocks left out (not frequency sweeps)" in page
    assert page.count('data-status="left-out"') == 1 and page.count('data-status="failed"') == 1
    assert "line 5: block 1 (lines 3-16): the frequency is 10 rad/s" in page  # the row names the file already
    assert "program.txt#1</bdi></code>: <bdi>line 5: block 1" in page  # and so does the list below the table


def _maxwell_rows(omega):
    """Rows of one Maxwell mode, g = 1e4 Pa, τ = 1 s (Ferry 1980, ch. 3)."""
    return [f"{w!r},{1e4 * w * w / (1 + w * w)!r},{1e4 * w / (1 + w * w)!r}" for w in omega.tolist()]


@pytest.mark.parametrize("between", ["", "\n"])
def test_a_header_repeated_at_a_page_break_continues_the_table(between):
    # An export that repeats its header every few rows (a page break) was read as two sweeps and refused by the
    # single-sweep commands ("holds 2 sweeps in 2 blocks").  The header repeated with nothing but blank lines
    # before it and the frequencies going on in the same direction is the same table.
    head = "omega [rad/s],G' [Pa],G'' [Pa]"
    w = np.geomspace(0.01, 100, 17)
    rows = _maxwell_rows(w)
    text = "\n".join([head, *rows[:9], between + head, *rows[9:]]) + "\n"
    (sw,) = parse_sweeps_text(text, source="paged.csv")
    np.testing.assert_allclose(sw.omega, w, rtol=1e-15)
    np.testing.assert_allclose(sw.storage[8], 5e3, rtol=1e-12)  # G' = g/2 at ωτ = 1
    assert "block" not in sw.meta


def test_two_sweeps_under_one_header_stay_apart():
    # the same header twice, but the second table starts the range again (a second run), or stands under a
    # metadata line of its own: two sweeps, as before
    head = "omega [rad/s],G' [Pa],G'' [Pa]"
    rows = _maxwell_rows(np.geomspace(0.01, 100, 17))
    again = "\n".join([head, *rows, "", head, *rows]) + "\n"
    assert len(parse_sweeps_text(again, source="again.csv")) == 2
    titled = "\n".join([head, *rows[:9], "# temperature: 150 C", head, *rows[9:]]) + "\n"
    assert len(parse_sweeps_text(titled, source="titled.csv")) == 2
