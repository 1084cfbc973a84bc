"""Batch reprocessing: outputs, resume after SIGKILL, faults, determinism across --jobs and backends."""

import dataclasses
import hashlib
import json
import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from synthetic import lognormal_sweep, maxwell_sweep
from tauspec.analysis.diagnosis.options import DiagnoseOptions
from tauspec.batch.inputs import find_inputs
from tauspec.batch.pipeline import process
from tauspec.batch.run import run_batch
from tauspec.batch.settings import BatchSettings, load_settings
from tauspec.batch.summary import SUMMARY_COLUMNS, read_summary
from tauspec.cli.main import main
from tauspec.data.read import read_sweep
from tauspec.errors import SettingsError
from tauspec.modes.options import ModesOptions
from tauspec.spectrum.invert import invert
from tauspec.spectrum.options import InvertOptions

SRC = str(Path(__file__).resolve().parents[1] / "src")
GRID = 24  # small τ grids keep the suite quick
# modes and diagnosis take seconds per sweep: the mechanics are tested without them, the demo test runs them
OFF = "[modes]\nrun = false\n[diagnose]\nrun = false\n"
SMALL = BatchSettings(invert=InvertOptions(grid=GRID), run_modes=False, run_diagnose=False)


def write_sweep(path, sweep, extra=""):
    path.parent.mkdir(parents=True, exist_ok=True)
    rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(sweep.omega, sweep.storage, sweep.loss))
    path.write_text(f"# sample: {sweep.name}\n{extra}omega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
    return path


def make_archive(folder, n=8, points=20):
    """n sweeps (log-normal spectra, Maxwell liquids) in two sub-folders, with suffixes .csv and .txt."""
    files = []
    for i in range(n):
        if i % 2:
            s = maxwell_sweep(i, tau=0.1 * (i + 1), eta_s=0.01, n=points)
            files.append(write_sweep(folder / "liquids" / f"m{i}.txt", s))
        else:
            s = lognormal_sweep(i, wmin=1e-2, wmax=1e2, n=points, tau_m=0.5 + i)
            files.append(write_sweep(folder / "solutions" / f"ln{i}.csv", s))
    (folder / "notes.md").write_text("not a sweep: wrong suffix, not searched\n")
    return files


def result_bytes(out):
    return {p.relative_to(out).as_posix(): p.read_bytes() for p in sorted(Path(out).rglob("result.json"))}


@pytest.fixture(scope="module")
def archive(tmp_path_factory):
    folder = tmp_path_factory.mktemp("archive")
    make_archive(folder)
    return folder


@pytest.fixture(scope="module")
def reference(archive, tmp_path_factory):
    """An uninterrupted run with one job: the reference for the other runs."""
    out = tmp_path_factory.mktemp("reference")
    report = run_batch([archive], out, settings=SMALL, jobs=1)
    return out, report


def test_outputs_summary_and_hashes(archive, reference):
    out, report = reference
    assert report.status == 0 and report.inputs == 8 and report.ok == 8 and report.computed == 8
    rows = read_summary(out)
    files = [r["file"] for r in rows]
    assert files == sorted(files) and len(files) == 8 and "notes.md" not in files
    assert set(SUMMARY_COLUMNS) >= {"file", "status", "verdict", "tau_R", "G0", "alpha", "eta0", "lambda",
                                          "error"}
    assert list(rows[0]) == list(SUMMARY_COLUMNS)
    for row in rows:
        folder = out / row["file"]  # the result folder is named by the file, suffix included
        assert (folder / "spectrum.csv").exists() and (folder / "fit.csv").exists()
        stored = json.loads((folder / "result.json").read_text())
        # the recorded input hash is the sha256 (FIPS 180-4) of the file's bytes, computed here by hashlib
        assert stored["input_sha256"] == hashlib.sha256((archive / row["file"]).read_bytes()).hexdigest()
        assert stored["settings_sha256"] == SMALL.digest()
        assert float(row["lambda"]) == stored["spectrum"]["lambda"]
    # the batch result is the library's inversion of the same file, number for number
    path = archive / "solutions" / "ln0.csv"
    direct = invert(read_sweep(path), grid=GRID).to_dict()
    stored = json.loads((out / "solutions" / "ln0.csv" / "result.json").read_text())["spectrum"]
    assert stored["H"] == direct["H"] and stored["lambda"] == direct["lambda"] and stored["tau"] == direct["tau"]
    run = json.loads((out / "run.json").read_text())
    assert run["counts"] == {"inputs": 8, "ok": 8, "failed": 0, "computed": 8, "skipped": 0, "worker_deaths": 0,
                             "refused": 0, "left_out": 0}
    assert run["versions"]["tauspec"] and run["versions"]["numpy"] and run["settings"]["invert"]["grid"] == GRID
    assert run["settings"]["steps"] == ["read", "invert"] and "diagnosis" not in stored and "modes" not in stored
    assert "worker_s" in run["timings"] and "timings" not in stored


def test_jobs_2_equals_jobs_1_byte_for_byte(archive, reference, tmp_path):
    ref, _ = reference
    report = run_batch([archive], tmp_path, settings=SMALL, jobs=2)
    assert report.status == 0
    assert result_bytes(tmp_path) == result_bytes(ref)
    assert (tmp_path / "summary.csv").read_bytes() == (ref / "summary.csv").read_bytes()


def test_resume_skips_current_and_recomputes_changes(archive, tmp_path):
    work = tmp_path / "arch"
    make_archive(work, n=6)
    out = tmp_path / "out"
    assert run_batch([work], out, settings=SMALL).computed == 6
    stamp = {p: p.stat().st_mtime_ns for p in out.rglob("result.json")}
    again = run_batch([work], out, settings=SMALL)
    assert (again.computed, again.skipped) == (0, 6)
    assert {p: p.stat().st_mtime_ns for p in out.rglob("result.json")} == stamp
    # a table that is lost or damaged (it is not flushed to disk: only result.json is) is recomputed
    (out / "solutions" / "ln0.csv" / "spectrum.csv").write_text("tau [s],H [Pa],in_window\n")
    (out / "solutions" / "ln2.csv" / "fit.csv").unlink()
    assert run_batch([work], out, settings=SMALL).computed == 2
    assert run_batch([work], out, settings=SMALL).skipped == 6
    # a changed input recomputes that file only
    target = work / "liquids" / "m1.txt"
    target.write_text(target.read_text().replace("# sample: maxwell-1", "# sample: maxwell-1b"))
    one = run_batch([work], out, settings=SMALL)
    assert (one.computed, one.skipped) == (1, 5)
    assert json.loads((out / "liquids" / "m1.txt" / "result.json").read_text())["sample"] == "maxwell-1b"
    # changed settings recompute everything; so does --force
    gcv = dataclasses.replace(SMALL, invert=InvertOptions(grid=GRID, select="gcv"))
    assert run_batch([work], out, settings=gcv).computed == 6
    assert json.loads((out / "run.json").read_text())["counts"]["computed"] == 6
    assert run_batch([work], out, settings=gcv).skipped == 6
    assert run_batch([work], out, settings=gcv, force=True).computed == 6


def test_broken_file_is_an_error_row_and_exit_1(tmp_path, capsys):
    work = tmp_path / "arch"
    make_archive(work, n=4)
    (work / "solutions" / "cut.csv").write_text("omega [rad/s],G' [Pa],G'' [Pa]\n0.1,1,2\n0.2,3\n")
    (work / "solutions" / "binary.dat").write_bytes(b"\x00\x01\x02PK\x03\x04")
    (work / "settings.toml").write_text(f"[invert]\ngrid = {GRID}\n{OFF}")
    out = tmp_path / "out"
    status = main(["batch", str(work), "--out", str(out), "--quiet", "--settings", str(work / "settings.toml")])
    assert status == 1
    rows = {r["file"]: r for r in read_summary(out)}
    assert len(rows) == 6
    assert rows["solutions/cut.csv"]["status"] == "error"
    assert rows["solutions/cut.csv"]["error"].startswith("solutions/cut.csv:3: ")
    assert "\n" not in rows["solutions/cut.csv"]["error"]
    assert rows["solutions/binary.dat"]["status"] == "error" and "binary" in rows["solutions/binary.dat"]["error"]
    assert [r["status"] for f, r in rows.items() if f not in ("solutions/cut.csv", "solutions/binary.dat")] == \
        ["ok"] * 4
    assert capsys.readouterr().out == ""
    # the stored errors are current too: a rerun skips them and still fails
    assert main(["batch", str(work), "--out", str(out), "--json", "--settings", str(work / "settings.toml")]) == 1
    lines = capsys.readouterr().out.strip().splitlines()
    assert [json.loads(x)["file"] for x in lines] == sorted(rows)
    assert json.loads((out / "run.json").read_text())["counts"]["skipped"] == 6


def dying_step(text, settings, **kwargs):
    """The pipeline step, except that a sweep marked 'kill-me' kills its worker process (as the OOM killer would)."""
    if "kill-me" in text:
        os.kill(os.getpid(), signal.SIGKILL)
    return process(text, settings, **kwargs)


def test_a_dead_worker_costs_only_its_file(tmp_path):
    work = tmp_path / "arch"
    make_archive(work, n=6)
    write_sweep(work / "liquids" / "zz-killer.csv", maxwell_sweep(99, n=20), extra="# note: kill-me\n")
    out = tmp_path / "out"
    report = run_batch([work], out, settings=SMALL, jobs=2, step=dying_step)
    assert report.worker_deaths >= 1
    rows = {r["file"]: r for r in read_summary(out)}
    assert len(rows) == 7 and report.failed == 1
    assert rows["liquids/zz-killer.csv"]["status"] == "error" and "worker" in rows["liquids/zz-killer.csv"]["error"]
    assert all(r["status"] == "ok" for f, r in rows.items() if f != "liquids/zz-killer.csv")
    # a worker death is not a property of the data: the next run tries that file again
    again = run_batch([work], out, settings=SMALL, jobs=1)
    assert (again.computed, again.skipped, again.status) == (1, 6, 0)


def test_sigkill_then_rerun_gives_the_uninterrupted_result(tmp_path):
    work = tmp_path / "arch"
    make_archive(work, n=8, points=40)
    (work / "settings.toml").write_text(f"[invert]\ngrid = 120\n{OFF}")  # slower per file: the kill lands mid-run
    settings = load_settings(work / "settings.toml")
    ref = tmp_path / "ref"
    run_batch([work], ref, settings=settings, jobs=1)
    out = tmp_path / "out"
    env = {**os.environ, "PYTHONPATH": SRC + os.pathsep + os.environ.get("PYTHONPATH", ""),
           "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"}
    proc = subprocess.Popen([sys.executable, "-m", "tauspec", "batch", str(work), "--out", str(out), "--jobs", "2",
                             "--quiet", "--settings", str(work / "settings.toml")],
                            env=env, start_new_session=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and proc.poll() is None and len(list(out.rglob("result.json"))) < 2:
            time.sleep(0.005)
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)
    finally:
        try:
            os.killpg(proc.pid, signal.SIGKILL)  # the workers too, so nothing is left running
        except ProcessLookupError:
            pass
    assert proc.returncode == -signal.SIGKILL
    done_before = len(list(out.rglob("result.json")))
    assert 1 <= done_before < 8, "the kill should land while the run is going on"
    assert not (out / "summary.csv").exists()
    report = run_batch([work], out, settings=settings, jobs=2)
    assert report.skipped == done_before and report.computed == 8 - done_before
    rows = read_summary(out)
    assert sorted(r["file"] for r in rows) == [r["file"] for r in rows] and len({r["file"] for r in rows}) == 8
    assert result_bytes(out) == result_bytes(ref)
    assert (out / "summary.csv").read_bytes() == (ref / "summary.csv").read_bytes()
    assert not list(out.rglob("*.tmp"))


def test_local_dask_cluster_equals_local_run(archive, reference, tmp_path):
    distributed = pytest.importorskip("distributed")
    ref, _ = reference
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1, host="127.0.0.1",
                                  dashboard_address=":0") as cluster:
        report = run_batch([archive], tmp_path, settings=SMALL, backend="dask", scheduler=cluster.scheduler_address)
    assert report.status == 0 and report.computed == 8
    assert result_bytes(tmp_path) == result_bytes(ref)
    assert (tmp_path / "summary.csv").read_bytes() == (ref / "summary.csv").read_bytes()


@pytest.mark.parametrize(
    "text, match",
    [
        ("[invert]\ngird = 40\n", r"unknown key 'gird' in \[invert\]; known keys: strength, select, grid"),
        ("[inverse]\ngrid = 40\n", r"unknown section or key 'inverse'"),
        ("[invert]\nselect = \"best\"\n", r"\[invert\] select must be one of 'gcv', 'lcurve', not 'best'"),
        ("[invert]\ngrid = 4\n", r"\[invert\] grid must be a whole number of τ points from 10 to 2000"),
        ("[invert]\ngrid = \"fine\"\n", r"\[invert\] grid must be a number of τ points or at least 10 times"),
        ("[invert]\ngrid = [1, \"a\"]\n", r"\[invert\] grid must be a number of τ points or at least 10 times"),
        ("[invert]\nstrength = -1\n", r"\[invert\] strength must be 'auto' or a positive number"),
        ("[invert]\nplateau = true\n", r"unknown key 'plateau' in \[invert\]; known keys: .*equilibrium_modulus"),
        ("[modes]\nn_modes = 0\n", r"\[modes\] n_modes must be a whole number of modes from 1 to 50"),
        ("[invert]\nsolvent = \"yes\"\n", r"\[invert\] solvent must be true or false"),
        ("[invert\n", r"not a valid TOML file"),
        ("[modes]\nalpha = 0.01\n", r"unknown key 'alpha' in \[modes\]; known keys: run, n_modes, significance"),
        ("[modes]\nsignificance = 2\n", r"\[modes\] significance must be a test size above 0 and below 1"),
        ("[diagnose]\nrun = 1\n", r"\[diagnose\] run must be true or false"),
        ("grid = 40\n", r"unknown section or key 'grid'; known sections: \[invert\], \[modes\], \[diagnose\]"),
    ],
)
def test_settings_file_errors(tmp_path, text, match):
    path = tmp_path / "s.toml"
    path.write_text(text)
    with pytest.raises(SettingsError, match=match) as info:
        load_settings(path)
    assert info.value.source == str(path)


def test_settings_file_values_reach_invert(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text("[invert]\nstrength = 0.01\nselect = \"gcv\"\ngrid = 30\nsolvent = false\neta_s = 0.5\n")
    path.write_text(path.read_text() + "[modes]\nn_modes = 4\n[diagnose]\nintervals = false\n")
    s = load_settings(path)
    assert s.invert == InvertOptions(strength=0.01, select="gcv", grid=30, solvent=False, eta_s=0.5)
    # the physical switches of [invert] hold for every step
    assert s.modes == ModesOptions(n_modes=4, solvent=False, eta_s=0.5)
    assert s.diagnose == DiagnoseOptions(intervals=False, solvent=False)
    assert s.steps == ("read", "invert", "modes", "diagnose")
    assert s.digest() != BatchSettings().digest() and s.digest() == load_settings(path).digest()


def test_cli_usage_errors(tmp_path, capsys):
    assert main(["batch", str(tmp_path / "missing"), "--out", str(tmp_path / "o")]) == 1
    assert "missing: no such file or folder" in capsys.readouterr().err
    (tmp_path / "empty").mkdir()
    assert main(["batch", str(tmp_path / "empty"), "--out", str(tmp_path / "o")]) == 1
    assert "no sweep files" in capsys.readouterr().err
    assert main(["batch", str(tmp_path), "--out", str(tmp_path / "o"), "--scheduler", "tcp://127.0.0.1:1"]) == 1
    assert "--scheduler needs --backend dask" in capsys.readouterr().err


def test_inputs_layout_manifest_and_name_clashes(tmp_path):
    work = tmp_path / "arch"
    make_archive(work, n=2)
    write_sweep(work / "solutions" / "ln0.dat", lognormal_sweep(5, n=20))  # same stem as ln0.csv
    (work / ".hidden").mkdir()
    write_sweep(work / ".hidden" / "x.csv", lognormal_sweep(6, n=20))
    out = work / "results"  # an output folder inside the archive is not searched
    write_sweep(out / "old.csv", lognormal_sweep(7, n=20))
    manifest = tmp_path / "extra" / "list.csv"
    write_sweep(tmp_path / "extra" / "odd.sweep", lognormal_sweep(8, n=20))
    manifest.write_text("file,operator\nodd.sweep,demo\n")
    inputs = find_inputs([work], out, manifest)
    assert [(i.file, i.key) for i in inputs] == [
        ("arch/liquids/m1.txt", "arch/liquids/m1.txt"),
        ("arch/solutions/ln0.csv", "arch/solutions/ln0.csv"),
        ("arch/solutions/ln0.dat", "arch/solutions/ln0.dat"),
        ("extra/odd.sweep", "extra/odd.sweep"),
    ]
    assert [(i.file, i.key) for i in find_inputs([work / "liquids" / "m1.txt"], out)] == [("m1.txt", "m1.txt")]


def test_demo_runs_the_whole_job(tmp_path, capsys):
    """The demo runs the whole job on its invented archive (40 s or so: the batch, compare, master, predict)."""
    assert main(["demo", "--out", str(tmp_path), "--jobs", "2"]) == 0  # the corrupted export is expected: exit 0
    first = capsys.readouterr().out
    assert "exports/batch-22-truncated.csv" in first and "line 4: row has 2 values" in first and "9 computed" in first
    # after the batch: the series compared, the master curve and a prediction, each with its figures
    for name in ("compare/overlay.png", "compare/series.png", "master/master.png", "predict/relaxation.png",
                 "results/report.html", "results/series/binder-M40.csv/spectrum.png"):
        assert (tmp_path / name).stat().st_size > 10_000, name
    assert "series scaling τ_R ∝ M^2.0" in first  # Rouse chains: τ_R ∝ M² (Ferry 1980, ch. 9)
    assert "G(t) at 50 times from 0.001 s" in first  # the prediction says what it made (it printed "0 s" alone)
    assert "where everything is:" in first
    # the science of the demo and its resume: tests/test_quickstart.py
    assert len(read_summary(tmp_path / "results")) == 9


def test_written_files_get_the_usual_permissions(reference):
    out, _ = reference
    mask = os.umask(0o022)
    os.umask(mask)
    for p in [out / "summary.csv", out / "run.json", *out.rglob("result.json"), *out.rglob("spectrum.csv")]:
        assert p.stat().st_mode & 0o777 == 0o666 & ~mask, p  # as open() would create them, not mkstemp's 0600


def test_manifest_entry_missing_is_an_error_row_and_progress_goes_to_stderr(tmp_path, capsys):
    work = tmp_path / "arch"
    make_archive(work, n=2)
    manifest = tmp_path / "list.csv"
    manifest.write_text("file\narch/solutions/ln0.csv\narch/gone.csv\n")
    report = run_batch([], tmp_path / "out", settings=SMALL, manifest=manifest, progress=True)
    assert (report.inputs, report.ok, report.failed) == (2, 1, 1)
    rows = {r["file"]: r for r in read_summary(tmp_path / "out")}
    assert rows["arch/gone.csv"]["error"] == "arch/gone.csv: no such file"
    captured = capsys.readouterr()
    assert captured.out == "" and "sweep" in captured.err  # the tqdm bar, on stderr only
    # a missing file has no content hash: it is looked for again on every run
    assert run_batch([], tmp_path / "out", settings=SMALL, manifest=manifest).computed == 1


def test_manifest_rows_are_numbered_by_their_line_and_an_open_quote_is_refused(tmp_path):
    from tauspec.data.manifest import read_manifest

    manifest = tmp_path / "list.csv"
    # a comment, a label over two lines (a quoted line break) and a blank line before the faulty row
    manifest.write_text('file,M,label\n# lot 7\na.csv,1e5,"first\nsecond"\n\nb.csv,x,plain\n')
    with pytest.raises(SettingsError, match=r"list.csv:6: M 'x' is not a number"):
        read_manifest(manifest)
    manifest.write_text('file,M,label\na.csv,1e5,"first\nsecond"\nb.csv,2e5,plain\n')
    assert [(e.file, e.line, e.label) for e in read_manifest(manifest)] == [("a.csv", 2, "first\nsecond"),
                                                                              ("b.csv", 4, "plain")]
    # an unclosed quote is refused at its row, not read to the end of the file as one cell (which lost b.csv)
    manifest.write_text('file,M,label\na.csv,1e5,"open\nb.csv,2e5,plain\n')
    with pytest.raises(SettingsError, match=r"list.csv:2: a quoted cell is not closed"):
        read_manifest(manifest)


def test_manifest_separated_by_semicolons_or_tabs_and_a_file_listed_twice(tmp_path):
    from tauspec.data.manifest import read_manifest

    manifest = tmp_path / "list.csv"
    # what a spreadsheet saves as "CSV" where the decimal mark is a comma: semicolons, decimal commas, a BOM
    manifest.write_bytes("\ufefffile;M;c;T;label\na.csv;1,5e5;0,25;25,5;lot 7\nb.csv;2e5;;;\n".encode())
    rows = [(e.file, e.M, e.c, e.T, e.label) for e in read_manifest(manifest)]
    assert rows == [("a.csv", 1.5e5, 0.25, pytest.approx(298.65), "lot 7"), ("b.csv", 2e5, None, None, None)]
    manifest.write_text("file\tM\na.csv\t3,5e4\n")
    assert [e.M for e in read_manifest(manifest)] == [3.5e4]
    # with commas between the columns a comma inside a number is not a decimal mark
    manifest.write_text('file,M\na.csv,"1,5"\n')
    with pytest.raises(SettingsError, match=r"list.csv:2: M '1,5' is not a number"):
        read_manifest(manifest)
    # the same file twice: the same values are one sample; different values cannot both be meant
    manifest.write_text("file,M\na.csv,1e5\n./a.csv,1e5\n")
    assert [e.M for e in read_manifest(manifest)] == [1e5, 1e5]
    manifest.write_text("file,M\na.csv,1e5\nb.csv,3e5\n./a.csv,2e5\n")
    with pytest.raises(SettingsError, match=r"list.csv:4: './a.csv' is listed twice with different values "
                                            r"\(lines 2 and 4\)"):
        read_manifest(manifest)
    manifest.write_text("name;M\na.csv;1e5\n")
    with pytest.raises(SettingsError, match=r"list.csv:1: the manifest needs a header row with a 'file' column"):
        read_manifest(manifest)


def test_plots_are_drawn_once_and_a_rerun_with_plots_draws_missing_ones(tmp_path):
    work = tmp_path / "arch"
    make_archive(work, n=2)
    out = tmp_path / "out"
    assert run_batch([work], out, settings=SMALL).computed == 2
    plots = dataclasses.replace(SMALL, plots=True)
    assert plots.digest() == SMALL.digest()  # drawing figures does not change a result
    assert run_batch([work], out, settings=plots).computed == 2  # the figures were missing
    for name in ("fit.png", "spectrum.png", "lcurve.png"):
        png = (out / "solutions" / "ln0.csv" / name).read_bytes()
        assert png[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (RFC 2083)
    assert run_batch([work], out, settings=plots).skipped == 2
    assert run_batch([work], out, settings=SMALL).skipped == 2


def test_the_dask_cluster_does_not_talk_on_the_terminal(archive, tmp_path):
    # distributed logs its scheduler's and nannies' start and stop at INFO: about thirty lines of "Start Nanny
    # at ...", "Register worker ..." on the terminal of every `tauspec batch --backend dask` before; now none.
    pytest.importorskip("distributed")
    settings = tmp_path / "s.toml"
    settings.write_text(f"[invert]\ngrid = {GRID}\n[modes]\nrun = false\n[diagnose]\nrun = false\n")
    proc = subprocess.run([sys.executable, "-m", "tauspec", "batch", str(archive), "--out", str(tmp_path / "out"),
                           "--jobs", "2", "--backend", "dask", "--settings", str(settings)],
                          env={**os.environ, "PYTHONPATH": SRC + os.pathsep + os.environ.get("PYTHONPATH", "")},
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert "8 samples: 8 ok" in proc.stdout
    assert not [line for line in proc.stderr.splitlines() if re.search(r"Nanny|Scheduler|[Ww]orker", line)], proc.stderr


@pytest.mark.parametrize("verdict,shown", [
    ("rouse", {"tau_R": 0.6, "G0": 1.5e4, "alpha": 2.0}),
    ("zimm", {"tau_R": 0.5, "G0": 7.9, "alpha": 1.76}),
    ("entangled", {"GN0": 2e5, "tau_d": 8.0}),
    ("gel", {"gel_n": 0.5}),
    ("other", {}),
    ("inconclusive", {}),
])
def test_summary_gives_each_verdict_its_own_numbers(verdict, shown):
    # A bead-spring fit's τ_R, G0 and a are written for a Rouse or Zimm sample only; an entangled melt gets G_N⁰
    # and τ_d, a gel its exponent n (as the text of the diagnosis shows them; docs/batch.md).  Before, every
    # verdict carried the bead-spring numbers, and an entangled melt's "tau_R" sat in the column beside the Rouse
    # samples' ones.
    from tauspec.batch.summary import summary_row

    zimm = verdict == "zimm"
    diagnosis = {"verdict": verdict, "tau_R": 0.5 if zimm else 0.6, "G0": 7.9 if zimm else 1.5e4,
                 "alpha": 1.76 if zimm else 2.0, "N": 39.4, "GN0": 2e5, "tau_d": 8.0,
                 "n": 0.5 if verdict == "gel" else None}
    row = summary_row({"file": "a.csv", "status": "ok", "diagnosis": diagnosis}, "a.csv")
    for column in ("tau_R", "G0", "alpha", "GN0", "tau_d", "gel_n"):
        assert row[column] == (repr(float(shown[column])) if column in shown else ""), column
    assert list(row) == list(SUMMARY_COLUMNS)


@pytest.mark.parametrize("side,flagged,kept", [("long", True, False), ("short", True, True), ("long", False, True)])
def test_summary_leaves_out_a_zero_shear_viscosity_the_terminal_zone_does_not_determine(side, flagged, kept):
    # η0 = η_s + Σ g τ (Ferry 1980, ch. 3) needs the terminal zone: when the flagged share of it comes from times
    # longer than the supported window (a critical gel's η0 diverges, Winter & Chambon 1986) the column is blank;
    # a share from shorter times is taken up by η_s and the number stays.
    from tauspec.batch.summary import summary_row

    derived = {"eta0": 1.7e4, "flags": {"eta0": flagged}, "outside_side": {"eta0": side},
               "outside_share": {"eta0": 0.92}}
    row = summary_row({"file": "a.csv", "status": "ok", "derived": derived}, "a.csv")
    assert row["eta0"] == ("17000.0" if kept else "")
