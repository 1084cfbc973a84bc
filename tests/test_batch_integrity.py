"""Batch integrity: every file its own result, one run at a time, no hostile name or special file can hurt it.

Each test reproduces one attack on the batch (docs/reliability.md, "Batch integrity", lists them with their
outcome) and checks the defended behaviour.
"""

from __future__ import annotations

import csv
import dataclasses
import json
import os
import re
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from synthetic import lognormal_sweep
from tauspec.batch.layout import RESERVED, RUN_FILES, result_key
from tauspec.batch.lock import HOLDER_NAME, LOCK_NAME, run_lock
from tauspec.batch.run import run_batch
from tauspec.batch.settings import BatchSettings, load_settings
from tauspec.batch.summary import read_summary
from tauspec.cli.main import main
from tauspec.errors import SettingsError, TauspecError
from tauspec.output.report import REPORT_NAME
from tauspec.output.results import INDEX_NAME, read_run_index, result_folder
from tauspec.output.text import printable, spreadsheet_cell, spreadsheet_value
from tauspec.spectrum.options import InvertOptions

SRC = str(Path(__file__).resolve().parents[1] / "src")
SMALL = BatchSettings(invert=InvertOptions(grid=24), run_modes=False, run_diagnose=False)
OFF = "[invert]\ngrid = 24\n[modes]\nrun = false\n[diagnose]\nrun = false\n"


def sweep_file(path: Path, seed: int, sample: str | None = None, extra: str = "") -> Path:
    """A small log-normal sweep (tests/synthetic.py) whose '# sample:' line names it (by default: its seed)."""
    s = lognormal_sweep(seed, wmin=1e-2, wmax=1e2, n=20, tau_m=0.5 + seed % 7)
    rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(s.omega, s.storage, s.loss))
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(f"# sample: {sample or f'sample-{seed}'}\n{extra}omega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
    return path


def settings_file(folder: Path) -> Path:
    path = folder / "settings.toml"
    path.write_text(OFF)
    return path


def env() -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": SRC + os.pathsep + os.environ.get("PYTHONPATH", ""),
            "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MPLBACKEND": "Agg"}


def remove_tree(top: Path) -> None:
    """Remove a folder tree of any depth (shutil.rmtree recurses: RecursionError at 1,100 levels; rm does not)."""
    subprocess.run(["rm", "-rf", "--", os.fspath(top)], check=True)


def stored(out: Path, file: str) -> dict:
    return json.loads((out / result_key(file) / "result.json").read_text())


# --------------------------------------------------------------------------- 1. silent overwrite between samples


def test_same_stem_files_each_keep_their_own_result(tmp_path, capsys):
    arch = tmp_path / "arch"
    for seed, name in enumerate(("a.csv", "a.dat", "a.csv.csv", "b/a.csv")):
        sweep_file(arch / name, seed, sample=f"sample of {name}")
    out = tmp_path / "out"
    assert main(["batch", str(arch), "--out", str(out), "--quiet", "--settings", str(settings_file(tmp_path))]) == 0
    rows = read_summary(out)
    assert [r["file"] for r in rows] == ["a.csv", "a.csv.csv", "a.dat", "b/a.csv"]  # one row per input
    for r in rows:
        assert r["status"] == "ok" and r["sample"] == f"sample of {r['file']}"  # each row shows its own file
        d = stored(out, r["file"])
        assert d["file"] == r["file"] and d["sample"] == r["sample"] and float(r["lambda"]) == d["spectrum"]["lambda"]
    assert sorted(p.parent.relative_to(out).as_posix() for p in out.rglob("result.json")) == \
        ["a.csv", "a.csv.csv", "a.dat", "b/a.csv"]


def test_names_equal_but_for_case_are_refused_before_any_work(tmp_path, capsys):
    arch = tmp_path / "arch"
    sweep_file(arch / "Data.csv", 1)
    sweep_file(arch / "data.csv", 2)
    sweep_file(arch / "good.csv", 3)
    out = tmp_path / "out"
    argv = ["batch", str(arch), "--out", str(out), "--settings", str(settings_file(tmp_path))]
    assert main(argv) == 1
    printed = capsys.readouterr().out
    errors = [line for line in printed.splitlines() if line.startswith("  error: ")]
    assert len(errors) == 2 and all("would be the same as that of" in e and "ignores case" in e for e in errors)
    assert errors[0].startswith("  error: Data.csv: ") and errors[1].startswith("  error: data.csv: ")
    rows = {r["file"]: r for r in read_summary(out)}
    assert [rows[f]["status"] for f in ("Data.csv", "data.csv", "good.csv")] == ["error", "error", "ok"]
    assert not (out / "Data.csv").exists() and not (out / "data.csv").exists()  # refused before any work
    assert read_run_index(out)["data.csv"] is None


def test_names_equal_but_for_the_dots_and_spaces_that_end_them_are_refused(tmp_path, capsys):
    # Windows drops the dots and spaces that end a name (Microsoft, "Naming Files, Paths, and Namespaces"):
    # a.csv, a.csv. and "a.csv " would be one result folder there, and summary.csv. the run's own table
    arch = tmp_path / "arch"
    names = ["a.csv", "a.csv.", "a.csv ", "summary.csv.", "good.csv"]
    for seed, name in enumerate(names):
        sweep_file(arch / name, seed, sample=f"sample of {name}")
    out = tmp_path / "out"  # named, since a folder's search takes only the known suffixes
    argv = ["batch", *(str(arch / n) for n in names), "--out", str(out), "--settings", str(settings_file(tmp_path))]
    assert main(argv) == 1
    errors = [line for line in capsys.readouterr().out.splitlines() if line.startswith("  error: ")]
    assert len(errors) == 3 and all("would be the same as that of" in e and "on Windows" in e for e in errors)
    rows = {r["file"]: r for r in read_summary(out)}
    assert [rows[f]["status"] for f in ("a.csv", "a.csv.", "a.csv ")] == ["error"] * 3
    assert rows["summary.csv."]["status"] == rows["good.csv"]["status"] == "ok"
    assert result_key("summary.csv.") == "_summary.csv." and (out / "_summary.csv." / "result.json").exists()
    assert not (out / "a.csv").exists()


def test_invert_out_with_several_same_named_inputs(tmp_path, capsys, monkeypatch):
    x = sweep_file(tmp_path / "x" / "s.csv", 1, sample="from x")
    y = sweep_file(tmp_path / "y" / "s.csv", 2, sample="from y")
    out = tmp_path / "D"
    assert main(["invert", str(x), str(y), "--out", str(out), "--no-modes", "--grid", "24", "--json"]) == 0
    capsys.readouterr()
    assert json.loads((out / "x" / "s.csv" / "result.json").read_text())["sample"] == "from x"
    assert json.loads((out / "y" / "s.csv" / "result.json").read_text())["sample"] == "from y"
    # names equal but for case: each refused with one line, nothing written for them
    X = sweep_file(tmp_path / "X" / "s.csv", 3)
    assert main(["invert", str(X), str(x), "--out", str(tmp_path / "E"), "--no-modes", "--grid", "24"]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2 and all(line.startswith("tauspec: error: ") and "ignores case" in line for line in err)
    assert not (tmp_path / "E").exists()
    # without --out nothing is written, so figures cannot overwrite each other: --plot alone is refused
    monkeypatch.chdir(tmp_path)
    assert main(["diagnose", str(x), str(y), "--plot", "--no-intervals"]) == 1
    assert "--plot needs --out DIR" in capsys.readouterr().err
    assert not list(tmp_path.glob("*.png"))


# --------------------------------------------------------------------------- 2. stale results in the report


def test_report_shows_each_files_own_result_after_a_file_is_added(tmp_path):
    arch = tmp_path / "arch"
    sweep_file(arch / "a.csv", 1, sample="first sample")
    out = tmp_path / "out"
    settings = str(settings_file(tmp_path))
    assert main(["batch", str(arch), "--out", str(out), "--quiet", "--settings", settings]) == 0
    sweep_file(arch / "a.dat", 5, sample="second sample")
    assert main(["batch", str(arch), "--out", str(out), "--quiet", "--settings", settings, "--report"]) == 0
    text = (out / REPORT_NAME).read_text()
    sections = text.split('<section class="sample"')[1:]
    assert len(sections) == 2
    for file, sample in (("a.csv", "first sample"), ("a.dat", "second sample")):
        (section,) = [s for s in sections if f"<bdi>{file}</bdi>" in s]
        assert f"<bdi>{sample}</bdi>" in section
        lam = stored(out, file)["spectrum"]["lambda"]
        assert f"λ = {lam:.3g}" in section
    # a folder that holds another file's result is never taken for this file's
    index = read_run_index(out)
    assert result_folder(out, {**index, "a.dat": index["a.csv"]}, "a.dat") is None


def test_compare_takes_a_batch_folder_through_its_index(tmp_path, capsys):
    arch = tmp_path / "arch"
    for seed in (1, 2, 3):
        sweep_file(arch / f"s{seed}.csv", seed)
    (arch / "broken.csv").write_text("not a sweep\n")
    out = tmp_path / "out"
    assert main(["batch", str(arch), "--out", str(out), "--quiet", "--settings", str(settings_file(tmp_path))]) == 1
    assert main(["compare", str(out), "--json", "--replicates", "4"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert [s["label"] for s in d["samples"]] == ["sample-1", "sample-2", "sample-3"]  # the broken one left out


# --------------------------------------------------------------------------- 3. one name blocks the archive


def test_reserved_and_nested_names_cannot_block_the_archive(tmp_path, capsys):
    arch = tmp_path / "arch"
    names = ["summary.csv", "_summary.csv", "run.json.csv", "x.csv", "x/spectrum.csv.csv", "y.csv/fit.csv",
             "Q.csv", "q.csv/spectrum.csv", "blocked.csv", "con.csv"]  # Q.csv/, q.csv/: one folder on macOS
    for seed, name in enumerate(names):
        sweep_file(arch / name, seed, sample=f"sample of {name}")
    out = tmp_path / "out"
    out.mkdir()
    (out / "blocked.csv").write_text("a file of the user's, not written by tauspec\n")
    argv = ["batch", str(arch), "--out", str(out), "--settings", str(settings_file(tmp_path))]
    for _ in range(2):  # and on every rerun
        assert main(argv) == 1
        printed = capsys.readouterr().out
        assert [line for line in printed.splitlines() if "error:" in line] == [
            f"  error: blocked.csv: {str(out / 'blocked.csv')!r} is in the way of its result folder: a file "
            "tauspec did not write; move it or choose another --out"]
        rows = read_summary(out)
        assert sorted(r["file"] for r in rows) == sorted(names)
        for r in rows:
            if r["file"] != "blocked.csv":
                assert r["status"] == "ok" and r["sample"] == f"sample of {r['file']}", r
                assert stored(out, r["file"])["file"] == r["file"]
    assert (out / "blocked.csv").read_text() == "a file of the user's, not written by tauspec\n"
    assert result_key("summary.csv") == "_summary.csv" and result_key("_summary.csv") == "__summary.csv"
    assert result_key("y.csv/fit.csv") == "y.csv/_fit.csv" and (out / "y.csv" / "_fit.csv" / "result.json").exists()
    assert (out / "_con.csv" / "result.json").exists() and not (out / "con.csv").exists()
    # Windows device names, whatever the case and extension (Microsoft, "Naming Files, Paths, and Namespaces"),
    # and one-to-one with the names that already begin with an underscore
    assert [result_key(n) for n in ("con.csv", "lab/NUL.dat", "Com1", "lpt9.csv.csv", "_con.csv", "console.csv",
                                    "con2.csv", "aux.")] == [
        "_con.csv", "lab/_NUL.dat", "_Com1", "_lpt9.csv.csv", "__con.csv", "console.csv", "con2.csv", "_aux."]
    assert {n.casefold() for n in (*RUN_FILES, REPORT_NAME, INDEX_NAME, LOCK_NAME, HOLDER_NAME)} <= RESERVED


_PARTS = st.sampled_from(["a.csv", "A.CSV", "a.csv.", "a.csv ", "summary.csv", "Summary.CSV.", "_summary.csv",
                          "#2", "_#2", "#2.", "con", "CON.txt", "_con.txt", "nul.", "run.json", "x", "_"])


@settings(max_examples=300)
@given(st.lists(st.lists(_PARTS, min_size=1, max_size=3).map("/".join), min_size=1, max_size=8, unique=True))
def test_result_folders_are_one_to_one_and_never_a_reserved_name(files):
    """Rule 2 of batch/layout.py for any set of relative paths: distinct inputs get distinct folders, and no
    folder name is, as Windows reads it (case folded, the dots and spaces at its end dropped), a name tauspec
    writes, a block's folder or a device name (Microsoft, "Naming Files, Paths, and Namespaces")."""
    from tauspec.batch.layout import same_folder_refusals

    keys = {f: result_key(f) for f in files}
    assert len(set(keys.values())) == len(files)
    for key in keys.values():
        for part in key.split("/"):
            windows = part.casefold().rstrip(" .")
            assert windows not in RESERVED and not re.fullmatch(r"#\d+", windows), key
            assert not re.fullmatch(r"(con|prn|aux|nul|com\d|lpt\d)(\..*)?", windows), key
    # two inputs are refused exactly when their folders are one on Windows
    refused = same_folder_refusals(keys)
    windows_form = {f: "/".join(p.casefold().rstrip(" .") for p in k.split("/")) for f, k in keys.items()}
    for f in files:
        shared = any(windows_form[o] == windows_form[f] for o in files if o != f)
        assert (f in refused) == shared, (f, keys)


# --------------------------------------------------------------------------- 4. --out inside the archive


def test_results_are_never_read_back_as_inputs(tmp_path):
    arch = tmp_path / "arch"
    for seed in range(3):
        sweep_file(arch / f"s{seed}.csv", seed)
    inside = arch / "results"
    for _ in range(3):  # the count stays at 3 however often it runs
        report = run_batch([arch], inside, settings=SMALL)
        assert (report.inputs, report.ok) == (3, 3)
    # the output folder reached through a link (either way round) is not read either
    out = tmp_path / "out"
    out.mkdir()
    (arch / "link-to-out").symlink_to(out, target_is_directory=True)
    for _ in range(2):
        report = run_batch([arch], out, settings=SMALL)
        assert (report.inputs, report.ok) == (3, 3), report
        assert f"{arch / 'link-to-out'}: skipped, the output folder of this run" in report.notes
    (tmp_path / "arch-link").symlink_to(arch, target_is_directory=True)
    for again in (False, True):
        report = run_batch([arch], tmp_path / "arch-link" / "results2", settings=SMALL)
        assert (report.inputs, report.ok) == (3, 3), report
        assert again is (f"{arch / 'results2'}: skipped, the output folder of this run" in report.notes)
    # results of another run (another --out) inside the archive are not inputs either; nor is the manifest
    manifest = arch / "manifest.csv"
    manifest.write_text("file\ns0.csv\n")
    report = run_batch([arch], tmp_path / "out3", settings=SMALL, manifest=manifest)
    assert report.inputs == 3 and report.ok == 3
    assert any("results: skipped, a folder of results written by tauspec" in n for n in report.notes)
    assert any("manifest.csv: skipped, the manifest" in n for n in report.notes)
    with pytest.raises(TauspecError, match="holds results written by tauspec"):
        run_batch([inside], tmp_path / "out4", settings=SMALL)


# --------------------------------------------------------------------------- 5. special files


def test_special_files_are_refused_in_bounded_time(tmp_path, capsys):
    arch = tmp_path / "arch"
    sweep_file(arch / "good.csv", 1)
    os.mkfifo(arch / "pipe.csv")
    (arch / "zero.csv").symlink_to("/dev/zero")
    (arch / "gone.csv").symlink_to(arch / "nothing-here.csv")
    (arch / "loop").symlink_to(arch, target_is_directory=True)  # a folder link back into the archive
    deep = arch
    for _ in range(1100):  # deeper than Python's recursion limit
        deep = deep / "d"
        deep.mkdir()
    sweep_file(deep / "deep.csv", 2)
    try:
        _special_files(tmp_path, arch)
        assert main(["batch", str(arch), "--out", str(tmp_path / "out"), "--settings", str(settings_file(tmp_path))]) \
            == 0  # the notes are printed too
        assert "note: " in capsys.readouterr().out
    finally:  # pytest's own clean-up of old temporary folders would fail on these depths
        for top in (arch / "d", tmp_path / "out" / "arch" / "d", tmp_path / "out" / "d"):
            if top.is_dir():
                remove_tree(top)


def _special_files(tmp_path: Path, arch: Path) -> None:
    fifo2 = tmp_path / "named.csv"
    os.mkfifo(fifo2)
    (tmp_path / "zero-link.csv").symlink_to("/dev/zero")
    out = tmp_path / "out"
    t = time.monotonic()
    proc = subprocess.run([sys.executable, "-m", "tauspec", "batch", str(arch), str(fifo2),
                           str(tmp_path / "zero-link.csv"),
                           "--out", str(out), "--settings", str(settings_file(tmp_path))],
                          env=env(), capture_output=True, text=True, timeout=300)
    seconds = time.monotonic() - t
    assert proc.returncode == 1, proc.stderr  # the FIFO and the device named on the command line are error rows
    rows = {r["file"]: r for r in read_summary(out)}
    assert rows["arch/good.csv"]["status"] == "ok"
    deep_name = "arch/" + "d/" * 1100 + "deep.csv"
    assert rows[deep_name]["status"] == "ok"
    assert "a FIFO (named pipe), not a regular file" in rows["named.csv"]["error"]
    assert "a character device, not a regular file" in rows["zero-link.csv"]["error"]
    assert set(rows) == {"arch/good.csv", deep_name, "named.csv", "zero-link.csv"}
    notes = json.loads((out / "run.json").read_text())["notes"]
    assert any(n.endswith("pipe.csv: skipped, a FIFO (named pipe), not a sweep file") for n in notes)
    assert any(n.endswith("zero.csv: skipped, a character device, not a sweep file") for n in notes)
    assert any("gone.csv: skipped, a link that leads nowhere" in n for n in notes)
    assert any(n.endswith("loop: skipped, a link to a folder that holds the archive (a loop)") for n in notes)
    print(f"batch with two FIFOs, a device and a 1100-deep folder: {seconds:.1f} s (subprocess, imports included)")


def test_a_file_over_the_size_cap_is_refused_before_reading(tmp_path):
    big = tmp_path / "big.csv"
    with open(big, "wb") as fh:  # sparse: no disk used
        fh.truncate(32 * 1024 * 1024 + 1)
    report = run_batch([big], tmp_path / "out", settings=SMALL)
    assert report.failed == 1 and "a frequency sweep is a few kB" in read_summary(tmp_path / "out")[0]["error"]


# --------------------------------------------------------------------------- 6. math text in names


def test_dollar_signs_in_names_draw_as_plain_text(tmp_path, capsys, monkeypatch):
    name = "5$ lot #1, 6$ lot #2"
    arch = tmp_path / "arch"
    sweep_file(arch / "lots$1$.csv", 1, sample=name)
    out = tmp_path / "out"
    status = main(["batch", str(arch), "--out", str(out), "--quiet", "--plots", "--report",
                   "--settings", str(settings_file(tmp_path))])
    assert status == 0
    row = read_summary(out)[0]
    assert row["status"] == "ok" and row["sample"] == name
    assert (out / "lots$1$.csv" / "fit.png").read_bytes()[:4] == b"\x89PNG"
    assert name in (out / REPORT_NAME).read_text()
    assert main(["invert", str(arch / "lots$1$.csv"), "--plot", "--no-modes", "--grid", "24", "--out",
                 str(tmp_path / "one")]) == 0
    assert (tmp_path / "one" / "fit.png").read_bytes()[:4] == b"\x89PNG"


# --------------------------------------------------------------------------- 7. concurrent runs


_HOLD = """
import sys, time
from pathlib import Path
from tauspec.batch.lock import run_lock
with run_lock(Path(sys.argv[1])):
    print("held", flush=True)
    time.sleep(600)
"""


def _holder(out: Path) -> subprocess.Popen:
    out.mkdir(parents=True, exist_ok=True)
    proc = subprocess.Popen([sys.executable, "-c", _HOLD, str(out)], env=env(), stdout=subprocess.PIPE, text=True)
    assert proc.stdout.readline().strip() == "held"
    return proc


def test_a_second_run_is_refused_and_a_dead_runs_lock_is_taken_over(tmp_path, capsys):
    arch = tmp_path / "arch"
    sweep_file(arch / "a.csv", 1)
    out = tmp_path / "out"
    proc = _holder(out)
    try:
        assert main(["batch", str(arch), "--out", str(out), "--settings", str(settings_file(tmp_path))]) == 1
        err = capsys.readouterr().err.strip()
        started = json.loads((out / HOLDER_NAME).read_text())["started_utc"]
        assert err == (f"tauspec: error: {out}: another tauspec batch run (PID {proc.pid} on {socket.gethostname()}, "
                       f"started {started}) is writing into this folder; wait for it to finish or choose another --out")
        assert not (out / "a.csv").exists() and not (out / "summary.csv").exists()
    finally:
        proc.kill()  # SIGKILL: the holder cannot release anything itself
        proc.wait()
        proc.stdout.close()
    report = run_batch([arch], out, settings=SMALL)  # the dead run's lock is free: taken over
    assert report.ok == 1
    with run_lock(out), pytest.raises(TauspecError, match="another tauspec batch run"):
        run_batch([arch], out, settings=SMALL)  # a second run in the same process is refused too


# --------------------------------------------------------------------------- 8. leftovers after SIGKILL


def _group_alive(pgid: int) -> bool:
    try:
        os.killpg(pgid, 0)
    except ProcessLookupError:
        return False
    return True


@pytest.mark.parametrize("backend", ["loky", "dask"])
def test_workers_die_with_a_killed_batch(tmp_path, backend):
    if backend == "dask":
        pytest.importorskip("distributed")
    arch = tmp_path / "arch"
    for seed in range(12):
        sweep_file(arch / f"s{seed:02d}.csv", seed)
    settings = tmp_path / "settings.toml"
    settings.write_text("[invert]\ngrid = 150\n[modes]\nrun = false\n[diagnose]\nrun = false\n")  # slow: mid-run
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-m", "tauspec", "batch", str(arch), "--out", str(out), "--jobs", "2",
                             "--backend", backend, "--quiet", "--settings", str(settings)],
                            env=env(), start_new_session=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 180
        while time.monotonic() < deadline and proc.poll() is None and not list(out.rglob("result.json")):
            time.sleep(0.01)
        assert proc.poll() is None, "the run should still be going"
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)
        killed = time.monotonic()
        while _group_alive(proc.pid) and time.monotonic() - killed < 30:
            time.sleep(0.1)
        seconds = time.monotonic() - killed
        assert not _group_alive(proc.pid), "a worker outlived its killed batch by more than 30 s"
        print(f"{backend}: every worker gone {seconds:.1f} s after the SIGKILL of the batch")
    finally:
        try:
            os.killpg(proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass


_ORPHAN = """
import os, socket, sys
from tauspec.batch.settings import BatchSettings
from tauspec.batch.worker import run_step

def step(*args, **kw):
    print("ran the step", flush=True)
    return {}

children = sys.argv[2] == "children"
run_step(step, "", BatchSettings(), source="a.csv", input_sha256=None,
         client=(socket.gethostname(), int(sys.argv[1]), children))
print("returned", flush=True)
"""


@pytest.mark.parametrize("children", [True, False])
def test_a_task_from_a_dead_client_is_not_run_by_its_orphaned_worker(children):
    """A pool worker orphaned before its first task ends when that task arrives, without running it.

    The client here is a process that has already exited; the worker is not its child (as after orphaning).
    Workers that are not the client's own (Dask: ``children`` false) run the task as before.
    """
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    proc = subprocess.run([sys.executable, "-c", _ORPHAN, str(dead.pid), "children" if children else "cluster"],
                          env=env(), capture_output=True, text=True, timeout=120)
    if children:
        assert proc.returncode == 70 and "ran the step" not in proc.stdout, proc.stdout + proc.stderr
    else:
        assert proc.returncode == 0 and "ran the step" in proc.stdout, proc.stdout + proc.stderr


def test_temporary_files_of_an_interrupted_write_are_removed(tmp_path):
    arch = tmp_path / "arch"
    sweep_file(arch / "a.csv", 1)
    out = tmp_path / "out"
    run_batch([arch], out, settings=SMALL)
    leftovers = [out / "a.csv" / ".result.json.k3j9x0ab.tmp", out / "a.csv" / ".spectrum.csv.abc_1234.tmp",
                 out / ".summary.csv.zz9xx0aa.tmp"]
    for p in leftovers:
        p.write_text("half a file")
    mine = [out / "a.csv" / ".notes.tmp", out / ".my-draft.abcdefgh.tmp"]
    for p in mine:
        p.write_text("not tauspec's")
    report = run_batch([arch], out, settings=SMALL)
    assert report.skipped == 1 and "removed 3 temporary files left by an interrupted run" in report.notes
    assert not any(p.exists() for p in leftovers) and all(p.exists() for p in mine)


# --------------------------------------------------------------------------- 9. formula injection


def test_summary_cells_cannot_run_as_formulas(tmp_path):
    arch = tmp_path / "arch"
    names = {"=HYPERLINK(1).csv": '=HYPERLINK("http://example.invalid","x")', "@cmd.csv": "+1+cmd|' /C calc'!A0",
             "-2+3.csv": "-5", "quote.csv": "'=already quoted"}
    for seed, (file, sample) in enumerate(names.items()):
        sweep_file(arch / file, seed, sample=sample)
    out = tmp_path / "out"
    run_batch([arch], out, settings=SMALL)
    with open(out / "summary.csv", newline="", encoding="utf-8") as fh:
        raw = {r["file"]: r for r in csv.DictReader(fh)}
    dangerous = ("=", "+", "-", "@", "\t", "\r")
    for row in raw.values():
        for key in ("file", "sample", "error"):
            assert not row[key].startswith(dangerous) or row[key] == "-5", (key, row[key])
        float(row["lambda"])  # numbers stay numbers
    assert raw["'=HYPERLINK(1).csv"]["sample"] == "'" + names["=HYPERLINK(1).csv"]
    assert raw["'-2+3.csv"]["sample"] == "-5"  # a plain number is a number, not a formula
    assert raw["quote.csv"]["sample"] == "''=already quoted"
    # read back, every cell is the text it stands for
    assert {r["file"]: r["sample"] for r in read_summary(out)} == names
    for text in ("=1+1", "-0.5", "1e-3", "'", "''x", "@x", "-x", "a", "\rx", "\tx", "+", ""):
        assert spreadsheet_value(spreadsheet_cell(text)) == text


def test_terminal_lines_show_control_characters(tmp_path, capsys):
    arch = tmp_path / "arch"
    (arch / "bad\x1b[2Jname.csv").parent.mkdir(parents=True)
    (arch / "bad\x1b[2Jname.csv").write_text("not\na sweep\n")
    (arch / "new\nline.csv").write_text("x,y\n1,2\n")
    assert main(["batch", str(arch), "--out", str(tmp_path / "out"), "--settings", str(settings_file(tmp_path))]) == 1
    printed = capsys.readouterr().out
    assert "\x1b" not in printed and "bad\\x1b[2Jname.csv" in printed
    assert [line for line in printed.splitlines() if "error:" in line][1].startswith("  error: new\\x0aline.csv:1: ")
    assert printable("a\u202eb") == "a\\u202eb"


# --------------------------------------------------------------------------- 10. limits


def slow_step(text, settings, **kwargs):
    """The pipeline step, except that a sweep marked 'slow-me' computes (in Python) for a long time."""
    from tauspec.batch.pipeline import process

    if "slow-me" in text:
        t = time.monotonic()
        while time.monotonic() - t < 120:
            pass
    return process(text, settings, **kwargs)


@pytest.mark.parametrize("jobs", [1, 2])
def test_a_file_over_the_time_limit_is_an_error_row_and_the_run_goes_on(tmp_path, jobs):
    arch = tmp_path / "arch"
    for seed in range(3):
        sweep_file(arch / f"s{seed}.csv", seed)
    sweep_file(arch / "slow.csv", 9, extra="# note: slow-me\n")
    out = tmp_path / "out"
    limited = dataclasses.replace(SMALL, time_limit=2.0)
    t = time.monotonic()
    report = run_batch([arch], out, settings=limited, jobs=jobs, step=slow_step)
    assert time.monotonic() - t < 60
    rows = {r["file"]: r for r in read_summary(out)}
    assert report.failed == 1 and all(rows[f"s{i}.csv"]["status"] == "ok" for i in range(3))
    assert "past the per-file time limit of 2 s" in rows["slow.csv"]["error"]
    assert stored(out, "slow.csv")["timed_out_after"] == 2.0
    # stored like a data error: skipped by a rerun with the same limit, tried again under a longer one
    assert run_batch([arch], out, settings=limited, jobs=jobs, step=slow_step).skipped == 4
    assert run_batch([arch], out, settings=dataclasses.replace(limited, time_limit=3.0), jobs=jobs,
                     step=slow_step).computed == 1


def test_settings_ranges_are_checked_in_the_options(tmp_path, capsys):
    path = tmp_path / "s.toml"
    for text, match in (("[batch]\ntime_limit = 0\n", r"\[batch\] time_limit must be a time in seconds above 0"),
                        ("[batch]\nlimit = 3\n", r"unknown key 'limit' in \[batch\]; known keys: time_limit"),
                        ("[modes]\nn_modes = 0\n", r"\[modes\] n_modes must be a whole number of modes from 1")):
        path.write_text(text)
        with pytest.raises(SettingsError, match=match):
            load_settings(path)
    path.write_text("[batch]\ntime_limit = 30\n")
    assert load_settings(path).time_limit == 30.0 and load_settings(path).digest() == BatchSettings().digest()
    assert main(["batch", str(tmp_path), "--out", str(tmp_path / "o"), "--time-limit", "-1"]) == 1
    assert capsys.readouterr().err.strip() == "tauspec: error: --time-limit must be a time in seconds above 0, " \
                                             "not -1.0"


def test_a_file_that_kills_its_dask_worker_is_one_error_row(tmp_path):
    pytest.importorskip("distributed")
    from test_batch import dying_step

    arch = tmp_path / "arch"
    for seed in range(5):
        sweep_file(arch / f"s{seed}.csv", seed)
    sweep_file(arch / "killer.csv", 9, extra="# note: kill-me\n")
    out = tmp_path / "out"
    report = run_batch([arch], out, settings=SMALL, backend="dask", jobs=2, step=dying_step)
    rows = {r["file"]: r for r in read_summary(out)}
    assert len(rows) == 6 and report.failed == 1 and report.worker_deaths >= 1
    assert "worker process died" in rows["killer.csv"]["error"]
    assert all(rows[f"s{i}.csv"]["status"] == "ok" for i in range(5))
    assert stored(out, "killer.csv")["retry"] is True


# --------------------------------------------------------------------------- hostile names, all at once


def test_hostile_names_never_give_an_internal_error(tmp_path, capsys):
    arch = tmp_path / "arch"
    names = ["$x$.csv", "=1+1.csv", "a\u202etxt.csv", "tab\tname.csv", "ü-NFC.csv", "u\u0308-NFD.csv",
             "summary.csv", ".hidden-but-named.csv", "x" * 250 + ".csv"]
    for seed, name in enumerate(names):
        sweep_file(arch / name, seed, sample=f"<b>{name}</b> $\\frac{{1}}{{0}}$ \u202e")
    with open(os.fsencode(arch) + b"/bytes-\xff.csv", "w") as fh:
        fh.write("not a sweep\n")
    out = tmp_path / "out"
    explicit = [str(arch / ".hidden-but-named.csv")]
    status = main(["batch", str(arch), *explicit, "--out", str(out), "--plots", "--report",
                   "--settings", str(settings_file(tmp_path))])
    captured = capsys.readouterr()
    assert status == 1 and "internal error" not in captured.out + captured.err
    rows = read_summary(out)
    assert len(rows) == len(names) + 1  # every name once (the hidden one because it is named), and the bytes
    assert [r["file"] for r in rows if r["status"] != "ok"] == ["bytes-\\udcff.csv"]
    text = (out / REPORT_NAME).read_text()
    assert "\u202e" not in text and "&lt;U+202E&gt;" in text and "<b>" not in text
    assert text.count('<section class="sample"') == len(rows) - 1  # every result found through the index
    for name in ("$x$.csv", "=1+1.csv"):
        assert main(["invert", str(arch / name), "--plot", "--no-modes", "--grid", "24", "--out",
                     str(tmp_path / "single")]) == 0


def test_blocks_have_folders_no_input_can_name(tmp_path):
    import shutil

    arch = tmp_path / "arch"
    arch.mkdir()
    shutil.copy(Path(__file__).parent / "data" / "three_blocks.txt", arch / "steps.txt")
    named = sweep_file(arch / "steps.txt#2", 1, sample="a file, not a block")  # named like block 2 of steps.txt
    sweep_file(arch / "sub" / "#2" / "s.csv", 2)  # a folder named like a block's folder
    out = tmp_path / "out"
    report = run_batch([arch, named], out, settings=SMALL)
    rows = read_summary(out)
    assert [r["file"] for r in rows] == ["steps.txt#1", "steps.txt#2", "steps.txt#3", "steps.txt\\x232",
                                         "sub/#2/s.csv"]
    assert report.failed == 0 and rows[3]["sample"] == "a file, not a block"
    for k in (1, 2, 3):
        assert json.loads((out / "steps.txt" / f"#{k}" / "result.json").read_text())["file"] == f"steps.txt#{k}"
    leftover = out / "steps.txt" / "#2" / ".fit.csv.abcd1234.tmp"  # a write into a block's folder, interrupted
    leftover.write_text("half")
    again = run_batch([arch, named], out, settings=SMALL)
    assert again.skipped == 5 and not leftover.exists() and again.notes[-1].startswith("removed 1 temporary file")
    assert (out / "steps.txt\\x232" / "result.json").exists()
    assert result_key("sub/#2/s.csv") == "sub/_#2/s.csv" and (out / "sub" / "_#2" / "s.csv" / "result.json").exists()
    index = read_run_index(out)
    assert index["steps.txt#2"] == "steps.txt/#2" and index["steps.txt\\x232"] == "steps.txt\\x232"
