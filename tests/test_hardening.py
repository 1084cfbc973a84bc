"""Hardening: bad input at every entry point, random input, extreme data, batch faults, determinism.

Every bad file must give exit status 1, exactly one line on stderr naming the file and the reason and no
traceback (``--debug`` shows one). The bad-input catalogue is common practice for file readers (no single
source); the physical checks name their sources beside them.
"""

import errno
import json
import math
import os
import re
import shutil
import warnings

import numpy as np
import pytest

from synthetic import lognormal_sweep
from tauspec import read_sweep
from tauspec.cli.main import main
from tauspec.data.read import MAX_FILE_BYTES
from tauspec.errors import SweepError, TauspecWarning

HEADER = "omega [rad/s],G' [Pa],G'' [Pa]"


def table(omega, storage, loss, header=HEADER):
    rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(omega, storage, loss))
    return f"{header}\n{rows}\n"


GOOD = lognormal_sweep(1, wmin=1e-2, wmax=1e2, n=20)
GOOD_TEXT = table(GOOD.omega, GOOD.storage, GOOD.loss)
GOOD_ROWS = GOOD_TEXT.splitlines()


def _oversized(path):
    with open(path, "wb") as fh:  # sparse: no disk blocks, but stat() reports the size
        fh.truncate(MAX_FILE_BYTES + 1)


#: name -> (writer(path), regex the one-line reason must match)
BAD = {
    "empty": (lambda p: p.write_bytes(b""), r"empty"),
    "header_only": (lambda p: p.write_text(HEADER + "\n"), r"no data rows"),
    "binary": (lambda p: p.write_bytes(bytes(range(256)) * 8), r"binary"),
    "json_document": (lambda p: p.write_text('{"omega": [1, 2, 3], "G1": [1, 2, 3]}\n'), r"no table of numbers"),
    "python_source": (lambda p: p.write_text("import os\n\n\ndef f(x):\n    return x + 1\n"),
                      r"no table of numbers"),
    # a README or lab notes in an archive folder (prose with a few numbers in it)
    "prose": (lambda p: p.write_text("Rheometer archive 2024\n\nMeasured at 25 C, plate-plate 25 mm, gap 1 mm.\n"),
              r"no table of numbers.*not a sweep export"),
    "ragged_rows": (lambda p: p.write_text("\n".join(GOOD_ROWS[:5] + ["1.5,2.5"] + GOOD_ROWS[5:]) + "\n"),
                    r"column|field|value"),
    "nan_inf": (lambda p: p.write_text(table(GOOD.omega, np.where(np.arange(20) % 2, np.nan, GOOD.storage),
                                             np.where(np.arange(20) % 3, np.inf, GOOD.loss))), r"not finite"),
    "all_negative": (lambda p: p.write_text(table(GOOD.omega, -GOOD.storage, -GOOD.loss)), r"positive G'"),
    "zero_frequency": (lambda p: p.write_text(table(np.r_[0.0, GOOD.omega[1:]], GOOD.storage, GOOD.loss)),
                       r"frequenc|ω|omega"),
    "negative_frequency": (lambda p: p.write_text(table(-GOOD.omega, GOOD.storage, GOOD.loss)),
                           r"frequenc|ω|omega"),
    "single_row": (lambda p: p.write_text("\n".join(GOOD_ROWS[:2]) + "\n"), r"1 data point; at least"),
    "duplicate_frequencies": (lambda p: p.write_text(table(np.repeat(GOOD.omega[:10], 2), GOOD.storage,
                                                           GOOD.loss)), r"duplicate|same|repeat"),
    # Text that is not UTF-8 is read as cp1252 with a warning (the reader issue); UTF-16 needs its byte-order mark.
    "utf16_without_bom": (lambda p: p.write_bytes(GOOD_TEXT.encode("utf-16-le")), r"UTF-16.*byte-order mark"),
    "subnormal_frequency": (lambda p: p.write_text(table(np.r_[5e-324, GOOD.omega[1:]], GOOD.storage, GOOD.loss)),
                            r"outside"),
    "subnormal_modulus": (lambda p: p.write_text(table(GOOD.omega, np.r_[GOOD.storage[:3], 5e-324, GOOD.storage[4:]],
                                                       GOOD.loss)), r"outside"),
    "huge_frequency": (lambda p: p.write_text(table(np.r_[GOOD.omega[:-1], 1e300], GOOD.storage, GOOD.loss)),
                       r"outside"),
    "huge_modulus": (lambda p: p.write_text(table(GOOD.omega, GOOD.storage, np.r_[GOOD.loss[:-1], 1e300])),
                     r"outside"),
    "oversized": (_oversized, r"MiB"),
    "directory": (lambda p: p.mkdir(), r"folder"),
    "missing": (lambda p: None, r"no such file"),
}


def _bad_file(tmp_path, kind):
    path = tmp_path / f"{kind}.csv"
    BAD[kind][0](path)
    return path


def _check_one_error_line(err, path, match):
    """Exactly one stderr line naming ``path``, whose reason matches ``match``; no traceback."""
    assert "Traceback" not in err
    lines = [ln for ln in err.strip().splitlines() if not ln.startswith("tauspec: warning:")]
    assert len(lines) == 1, err
    assert lines[0].startswith("tauspec: error: "), err
    assert str(path) in lines[0], err
    assert re.search(match, lines[0].split(str(path), 1)[1], re.IGNORECASE), lines[0]


COMMANDS = {
    "invert": ["invert", "--grid", "40"],
    "diagnose": ["diagnose", "--no-spectrum"],
    "predict": ["predict", "--quantity", "relaxation"],
    "master": ["master"],
}


@pytest.mark.parametrize("kind", sorted(BAD))
def test_read_sweep_refuses_with_the_reason(tmp_path, kind):
    path = _bad_file(tmp_path, kind)
    with pytest.raises(SweepError, match=BAD[kind][1]) as info:
        read_sweep(path)
    assert str(path) in info.value.one_line()
    assert "\n" not in info.value.one_line()


@pytest.mark.parametrize("command", sorted(COMMANDS))
@pytest.mark.parametrize("kind", sorted(BAD))
def test_cli_bad_file_one_line_exit_1(tmp_path, capsys, command, kind):
    path = _bad_file(tmp_path, kind)
    assert main([*COMMANDS[command], str(path), "--json"]) == 1
    out, err = capsys.readouterr()
    assert out == ""
    _check_one_error_line(err, path, BAD[kind][1])


@pytest.mark.parametrize("kind", sorted(BAD))
def test_compare_bad_file_one_line_exit_1(tmp_path, capsys, kind):
    good = tmp_path / "good.csv"
    good.write_text(GOOD_TEXT)
    path = _bad_file(tmp_path, kind)
    assert main(["compare", "--grid", "40", str(good), str(path), "--json"]) == 1
    out, err = capsys.readouterr()
    assert out == ""
    _check_one_error_line(err, path, BAD[kind][1])


def test_compare_of_one_file_named_twice_says_so(tmp_path, capsys):
    good = tmp_path / "a.csv"
    good.write_text(GOOD_TEXT)
    assert main(["compare", str(good), str(good)]) == 1
    assert capsys.readouterr().err.strip() == ("tauspec: error: compare needs at least two different files (the "
                                               "same file was given twice)")


def test_compare_goes_on_without_a_bad_file(tmp_path, capsys):
    # three files, one of them bad: the two good ones are compared, the bad one gets its line, exit status 1
    # (compare stopped at the bad file before, unlike every other command)
    good = [tmp_path / "a.csv", tmp_path / "b.csv"]
    for p in good:
        p.write_text(GOOD_TEXT)
    bad = _bad_file(tmp_path, "ragged_rows")
    assert main(["compare", "--grid", "40", "--replicates", "0", str(good[0]), str(bad), str(good[1]), "--json"]) == 1
    out, err = capsys.readouterr()
    _check_one_error_line(err, bad, BAD["ragged_rows"][1])
    result = json.loads(out)
    assert len(result["pairs"]) == 1 and len(result["samples"]) == 2
    # the reference itself bad: nothing to compare against, its line only
    assert main(["compare", "--grid", "40", str(good[0]), str(bad), str(good[1]), "--reference", str(bad)]) == 1
    out, err = capsys.readouterr()
    assert out == ""
    _check_one_error_line(err, bad, BAD["ragged_rows"][1])


def _unreadable(tmp_path):
    path = tmp_path / "locked.csv"
    path.write_text(GOOD_TEXT)
    path.chmod(0)
    if os.access(path, os.R_OK):  # root reads any file whatever its mode: nothing to test then
        path.chmod(0o644)
        pytest.skip("running as root: chmod 000 does not stop root from reading")
    return path


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_unreadable_file(tmp_path, capsys, command):
    path = _unreadable(tmp_path)
    try:
        assert main([*COMMANDS[command], str(path), "--json"]) == 1
        out, err = capsys.readouterr()
        assert out == ""
        _check_one_error_line(err, path, r"permission")
        with pytest.raises(SweepError, match="permission"):
            read_sweep(path)
    finally:
        path.chmod(0o644)


def test_oversized_file_is_refused_before_it_is_opened(tmp_path, monkeypatch):
    path = _bad_file(tmp_path, "oversized")
    import builtins
    import io as stdio

    opened = []
    real_open = builtins.open

    def spy(file, *a, **k):
        opened.append(str(file))
        return real_open(file, *a, **k)

    monkeypatch.setattr(builtins, "open", spy)
    monkeypatch.setattr(stdio, "open", spy)
    with pytest.raises(SweepError, match=r"MiB"):
        read_sweep(path)
    assert str(path) not in opened


@pytest.mark.parametrize("command", ["invert", "diagnose", "compare", "predict", "master"])
def test_debug_shows_the_traceback(tmp_path, capsys, command):
    path = _bad_file(tmp_path, "ragged_rows")
    good = tmp_path / "good.csv"
    good.write_text(GOOD_TEXT)
    argv = ["compare", "--grid", "40", str(good), str(path)] if command == "compare" else [*COMMANDS[command],
                                                                                           str(path)]
    assert main(["--debug", *argv]) == 1
    err = capsys.readouterr().err
    assert "Traceback" in err and "SweepError" in err
    assert err.strip().splitlines()[-1].startswith("tauspec: error: ")


def test_batch_bad_files_are_error_rows_exit_1(tmp_path, capsys):
    from tauspec.batch.summary import read_summary

    work = tmp_path / "arch"
    work.mkdir()
    (work / "good.csv").write_text(GOOD_TEXT)
    kinds = sorted(set(BAD) - {"directory", "missing"})  # the batch walks folders; a missing file is not found
    for kind in kinds:
        BAD[kind][0](work / f"{kind}.csv")
    (work / "settings.toml").write_text("[invert]\ngrid = 40\n[modes]\nrun = false\n[diagnose]\nrun = false\n")
    out = tmp_path / "out"
    status = main(["batch", str(work), "--out", str(out), "--quiet", "--settings", str(work / "settings.toml")])
    out_text, err = capsys.readouterr()
    assert status == 1
    assert "Traceback" not in err
    rows = {r["file"]: r for r in read_summary(out)}
    assert rows["good.csv"]["status"] == "ok"
    for kind in kinds:
        row = rows[f"{kind}.csv"]
        assert row["status"] == "error", (kind, row)
        assert row["error"].startswith(f"{kind}.csv"), row
        assert re.search(BAD[kind][1], row["error"], re.IGNORECASE), row
        assert "\n" not in row["error"]


def test_every_command_refuses_an_out_that_is_a_file(tmp_path, capsys):
    # batch said "cannot write (File exists) ... free space or make the folder writable": not the cause
    from tauspec.batch.run import run_batch
    from tauspec.errors import TauspecError

    (tmp_path / "a.csv").write_text(GOOD_TEXT)
    target = tmp_path / "notes.txt"
    target.write_text("the user's file\n")
    for argv in (["batch", str(tmp_path / "a.csv")], ["invert", str(tmp_path / "a.csv")],
                 ["diagnose", str(tmp_path / "a.csv"), "--no-intervals"]):
        assert main([*argv, "--out", str(target)]) == 1
        assert capsys.readouterr().err.strip() == f"tauspec: error: --out {str(target)!r} is a file, not a folder"
    with pytest.raises(TauspecError, match="the output folder is a file"):
        run_batch([tmp_path / "a.csv"], target)
    assert target.read_text() == "the user's file\n"


# --- random input: nothing but our own one-line error, or success ------------------------------------------

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_number = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True, width=64),
    st.floats(min_value=1e-8, max_value=1e12),
    st.integers(min_value=-5, max_value=10**6),
)


@st.composite
def numeric_tables(draw):
    n_rows = draw(st.integers(min_value=0, max_value=25))
    n_cols = draw(st.integers(min_value=1, max_value=4))
    header = draw(st.sampled_from([HEADER, "w,G',G''", "omega;Gp;Gpp", "freq\tstorage\tloss", "", "a,b,c"]))
    delim = draw(st.sampled_from([",", ";", "\t", " "]))
    rows = [delim.join(repr(draw(_number)) for _ in range(draw(st.integers(n_cols - 1, n_cols + 1)) or 1))
            for _ in range(n_rows)]
    return "\n".join([header, *rows]) + "\n"


@st.composite
def damaged_sweeps(draw):
    """A good sweep with one to three cells replaced by random numbers (an instrument glitch)."""
    rows = [r.split(",") for r in GOOD_ROWS[1:]]
    for _ in range(draw(st.integers(1, 3))):
        rows[draw(st.integers(0, len(rows) - 1))][draw(st.integers(0, 2))] = repr(draw(_number))
    return "\n".join([HEADER, *(",".join(r) for r in rows)]) + "\n"


_text = st.one_of(st.text(max_size=400), numeric_tables(), damaged_sweeps(),
                  st.builds(lambda a, b: a + b, numeric_tables(), st.text(max_size=60)))


def _check_cli_outcome(status, out, err, path):
    assert status in (0, 1), err
    assert "Traceback" not in err and "internal error" not in err
    if status == 0:
        lines = out.strip().splitlines()
        assert len(lines) == 1
        json.loads(lines[0], parse_constant=_no_constant)
    else:
        _check_one_error_line(err, path, r".")


def _no_constant(name):
    raise AssertionError(f"{name} in JSON output")


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=_text)
def test_random_text_gives_our_error_or_a_result(tmp_path, capsys, text):
    path = tmp_path / "random.csv"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    status = main(["invert", "--grid", "40", "--no-modes", str(path), "--json"])
    out, err = capsys.readouterr()
    _check_cli_outcome(status, out, err, path)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.binary(max_size=300))
def test_random_bytes_at_the_reader(tmp_path, data):
    path = tmp_path / "random.bin"
    path.write_bytes(data)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", TauspecWarning)
            read_sweep(path)
    except SweepError as exc:
        assert str(path) in exc.one_line() and "\n" not in exc.one_line()


# --- extreme but valid data ----------------------------------------------------------------------------------

_W30 = np.geomspace(1e-2, 1e2, 30)


def _extreme(name):
    """The sweep (ω, G', G'') of one extreme case; log-normal spectra (analytic moduli, tests/synthetic.py)."""
    if name == "solid":  # G' flat, G'' a millionth of it: an elastic solid (Ferry 1980, ch. 1)
        return _W30, np.full(30, 1e5), np.full(30, 0.1)
    if name == "liquid":  # Newtonian liquid η = 10 Pa·s: G'' = ηω, G' → 0 (Ferry 1980, ch. 1); a trace of G'
        return _W30, 1e-6 * (10.0 * _W30) ** 2, 10.0 * _W30
    kw = {"soft": {"G_t": 1e-3}, "stiff": {"G_t": 1e10}, "wide": {"sigma": 3.0, "wmin": 1e-6, "wmax": 1e8, "n": 60},
          "six": {"n": 6}, "many": {"wmin": 1e-3, "wmax": 1e3, "n": 2000}, "noisy": {"noise": 0.2},
          "narrow": {"wmin": 1.0, "wmax": 10.0, "n": 15}}[name]
    s = lognormal_sweep(3, **{"wmin": 1e-2, "wmax": 1e2, "n": 30, **kw})
    return s.omega, s.storage, s.loss


#: cases whose result is weak: the run must say so in words on stderr
WEAK = {"six", "noisy", "narrow", "solid", "liquid"}


def _run_json(capsys, argv):
    status = main(argv)
    out, err = capsys.readouterr()
    assert status == 0, err
    assert "Traceback" not in err
    lines = out.strip().splitlines()
    assert len(lines) == 1
    return json.loads(lines[0], parse_constant=_no_constant), err  # NaN/Infinity would raise here


@pytest.mark.parametrize("name", ["soft", "stiff", "wide", "six", pytest.param("many", marks=pytest.mark.slow), "noisy",
                                  "narrow", "solid", "liquid"])
def test_extreme_data_invert_and_diagnose(tmp_path, capsys, name):
    path = tmp_path / f"{name}.csv"
    path.write_text(table(*_extreme(name)))
    heavy = name in ("many", "wide")  # 2,000 points or 14 decades: skip the modes and the diagnosis's spectrum
    inv, err_inv = _run_json(capsys, ["invert", "--grid", "40", *(["--no-modes"] if heavy else []), str(path),
                                      "--json"])
    assert all(math.isfinite(h) for h in inv["H"])
    diag, err_diag = _run_json(capsys, ["diagnose", *(["--no-spectrum"] if heavy else []), str(path), "--json"])
    assert isinstance(diag["verdict"], str)
    if name in WEAK:
        assert "tauspec: warning:" in err_inv + err_diag
    if name == "narrow":  # Davies & Anderssen 1997: a window narrower than e^π determines H nowhere
        assert "e^π" in err_inv
        assert diag["verdict"] == "inconclusive"


def test_extreme_narrow_window_through_batch(tmp_path):
    from tauspec.batch.summary import read_summary

    work = tmp_path / "arch"
    work.mkdir()
    (work / "narrow.csv").write_text(table(*_extreme("narrow")))
    settings_file = tmp_path / "settings.toml"
    settings_file.write_text("[invert]\ngrid = 40\n[modes]\nrun = false\n")
    out = tmp_path / "out"
    assert main(["batch", str(work), "--out", str(out), "--quiet", "--settings", str(settings_file)]) == 0
    results = list(out.rglob("result.json"))
    assert len(results) == 1
    json.loads(results[0].read_text(), parse_constant=_no_constant)
    (row,) = read_summary(out)
    assert row["status"] == "ok"
    assert "inconclusive" in row.values(), row


# --- batch faults: disk full, read-only output ---------------------------------------------------------------

BATCH_SETTINGS = "[invert]\ngrid = 40\n[modes]\nrun = false\n[diagnose]\nrun = false\n"


def _archive(tmp_path, n=5):
    work = tmp_path / "arch"
    work.mkdir()
    for i in range(n):
        s = lognormal_sweep(10 + i, wmin=1e-2, wmax=1e2, n=20)
        (work / f"s{i}.csv").write_text(table(s.omega, s.storage, s.loss))
    settings_file = tmp_path / "settings.toml"
    settings_file.write_text(BATCH_SETTINGS)
    return work, settings_file


def _finished(out):
    """Every result.json that exists: it must parse and say ok (a finished result stays intact)."""
    done = {}
    for p in sorted(out.rglob("result.json")):
        d = json.loads(p.read_text(), parse_constant=_no_constant)
        assert d["status"] == "ok", d
        done[d["file"]] = p.read_bytes()
    return done


def _failing_writer(real, k, err):
    calls = {"n": 0}

    def writer(path, data, **kw):  # the writer fails from the (k+1)-th call on, as a full disk would
        calls["n"] += 1
        if calls["n"] > k:
            raise OSError(err, os.strerror(err), str(path))
        return real(path, data, **kw)

    return writer


@pytest.mark.parametrize("err", [errno.ENOSPC, errno.EACCES])
@pytest.mark.parametrize("jobs", ["1", "2"])
def test_write_failure_keeps_finished_results_and_a_rerun_completes(tmp_path, capsys, monkeypatch, err, jobs):
    import tauspec.batch.store
    import tauspec.batch.summary

    work, settings_file = _archive(tmp_path)
    out = tmp_path / "out"
    argv = ["batch", str(work), "--out", str(out), "--quiet", "--jobs", jobs, "--settings", str(settings_file)]
    real = tauspec.batch.store.atomic_write_bytes
    # 3 results, 2 files each
    monkeypatch.setattr(tauspec.batch.store, "atomic_write_bytes", _failing_writer(real, 6, err))
    assert main(argv) == 1
    stdout, stderr = capsys.readouterr()
    assert "Traceback" not in stderr
    lines = stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("tauspec: error: "), stderr
    assert os.strerror(err) in lines[0] and "not done" in lines[0], lines[0]
    first = _finished(out)
    assert f"{len(first)} of 5 files finished and kept, {5 - len(first)} of 5 files not done" in lines[0]
    assert 0 < len(first) < 5
    assert not list(out.rglob("*.tmp"))
    monkeypatch.setattr(tauspec.batch.store, "atomic_write_bytes", real)
    assert main(argv) == 0
    capsys.readouterr()
    second = _finished(out)
    assert len(second) == 5
    assert all(second[f] == b for f, b in first.items())  # the finished ones were kept, not rewritten
    assert json.loads((out / "run.json").read_text())["counts"]["skipped"] == len(first)


def test_read_only_output_folder(tmp_path, capsys):
    work, settings_file = _archive(tmp_path, n=2)
    out = tmp_path / "out"
    argv = ["batch", str(work), "--out", str(out), "--quiet", "--settings", str(settings_file)]
    out.mkdir()
    out.chmod(0o555)
    try:
        if os.access(out, os.W_OK):
            pytest.skip("running as root: chmod 555 does not stop root from writing (the EACCES case above "
                        "simulates it)")
        assert main(argv) == 1
        stderr = capsys.readouterr().err
        assert "Traceback" not in stderr and len(stderr.strip().splitlines()) == 1, stderr
        assert "ermission" in stderr
    finally:
        out.chmod(0o755)
    assert main(argv) == 0
    assert len(_finished(out)) == 2


def test_disk_full_at_the_summary_keeps_every_result(tmp_path, capsys, monkeypatch):
    import tauspec.batch.store
    import tauspec.batch.summary

    work, settings_file = _archive(tmp_path, n=3)
    out = tmp_path / "out"
    argv = ["batch", str(work), "--out", str(out), "--quiet", "--settings", str(settings_file)]
    real = tauspec.batch.summary.atomic_write_text
    monkeypatch.setattr(tauspec.batch.summary, "atomic_write_text", _failing_writer(real, 0, errno.ENOSPC))
    assert main(argv) == 1
    stderr = capsys.readouterr().err
    assert len(stderr.strip().splitlines()) == 1 and "summary not written" in stderr, stderr
    assert len(_finished(out)) == 3
    monkeypatch.setattr(tauspec.batch.summary, "atomic_write_text", real)
    assert main(argv) == 0
    assert json.loads((out / "run.json").read_text())["counts"]["skipped"] == 3


# --- determinism: same input and settings, same bytes ---------------------------------------------------------


@pytest.mark.parametrize("argv", [
    ["invert", "--grid", "40"],
    ["diagnose"],
    ["predict", "--quantity", "creep"],
])
def test_json_output_is_byte_identical_across_runs(tmp_path, capsys, argv):
    path = tmp_path / "s.csv"
    s = lognormal_sweep(5, wmin=1e-2, wmax=1e2, n=20)
    path.write_text(table(s.omega, s.storage, s.loss))
    outputs, files = [], []
    for _ in range(2):  # the same --out folder both times: the JSON names the files it wrote
        assert main([*argv, str(path), "--json", "--out", str(tmp_path / "out")]) == 0
        outputs.append(capsys.readouterr().out.encode())
        files.append({p.name: p.read_bytes() for p in sorted((tmp_path / "out").rglob("*")) if p.is_file()})
        shutil.rmtree(tmp_path / "out")
    assert outputs[0] == outputs[1]
    assert files[0] and files[0] == files[1]


def test_compare_json_is_byte_identical_across_runs(tmp_path, capsys):
    paths = []
    for i in range(2):
        s = lognormal_sweep(20 + i, tau_m=1.0 + i, wmin=1e-2, wmax=1e2, n=20)
        paths.append(tmp_path / f"c{i}.csv")
        paths[-1].write_text(table(s.omega, s.storage, s.loss))
    outputs = []
    for _ in range(2):
        assert main(["compare", "--grid", "40", "--replicates", "10", *map(str, paths), "--json"]) == 0
        outputs.append(capsys.readouterr().out.encode())
    assert outputs[0] == outputs[1]


@pytest.mark.parametrize("field, value", [("omega", 5e-324), ("omega", 1e300), ("storage", 5e-324),
                                          ("loss", 1e300)])
def test_sweep_built_in_python_is_range_checked(field, value):
    from tauspec import Sweep

    arrays = {"omega": GOOD.omega.copy(), "storage": GOOD.storage.copy(), "loss": GOOD.loss.copy()}
    arrays[field][0 if value < 1 else -1] = value
    with pytest.raises(SweepError, match=f"{field} has values outside"):
        Sweep(**arrays, name="api")
