"""One grammar on the command line: the same flags everywhere, nothing written without --out, short summaries with
units and the caveats once at the end, a frequency range, numbers as JSON numbers, progress bars only in a
terminal."""

from __future__ import annotations

import fcntl
import json
import os
import pty
import re
import select
import struct
import subprocess
import sys
import termios

import numpy as np
import pytest

from synthetic import lognormal_sweep
from tauspec.cli.demo_archive import demo_samples
from tauspec.cli.main import SUBCOMMANDS, main
from tauspec.data.read import read_sweep
from tauspec.spectrum.invert import invert

COMMON = ("--out", "--json", "--plot", "--format", "--quiet")


def write_sweep(path, sweep):
    rows = "\n".join(f"{w!r},{a!r},{b!r}" for w, a, b in zip(sweep.omega.tolist(), sweep.storage.tolist(),
                                                             sweep.loss.tolist()))
    meta = "".join(f"# {k}: {v}\n" for k, v in sweep.meta.items() if k != "sample")
    path.write_text(f"# sample: {sweep.name}\n{meta}omega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
    return path


@pytest.fixture
def sweep_file(tmp_path):
    return write_sweep(tmp_path / "ln.csv", lognormal_sweep(1, wmin=1e-2, wmax=1e2, n=30))


@pytest.mark.parametrize("command", sorted(SUBCOMMANDS))
def test_every_command_takes_the_common_flags(command, capsys):
    with pytest.raises(SystemExit) as info:
        main([command, "--help"])
    assert info.value.code == 0
    text = capsys.readouterr().out
    for flag in COMMON:
        assert re.search(rf"(^|\s){flag}\b", text), (command, flag)
    assert "--plots" not in text  # batch's old spelling is still read, but offered nowhere


def test_every_off_switch_says_what_turning_it_off_does():
    """A switch that is on by default is offered as its off flag (--no-solvent); its help must describe that
    flag, not the switch turned on (which read as "--no-solvent: fit η_s")."""
    import argparse

    from tauspec.cli.main import build_parser

    sub = next(a for a in build_parser()._actions if isinstance(a, argparse._SubParsersAction))
    seen = 0
    for name, parser in sub.choices.items():
        for action in parser._actions:
            if isinstance(action, argparse._StoreFalseAction):
                seen += 1
                flag = action.option_strings[0]
                assert flag not in action.help, (name, flag, action.help)
                assert not action.help.startswith(("fit ", "make ", "re-choose", "profile-likelihood")), (name, flag)
    assert seen >= 5  # --no-solvent (invert, diagnose, compare, predict), --no-spectrum, --no-intervals, ...


@pytest.mark.parametrize("command", ["invert", "diagnose", "predict", "master", "compare"])
def test_nothing_is_written_without_out(command, sweep_file, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    before = sorted(os.listdir(tmp_path))
    extra = {"predict": ["--quantity", "creep"], "diagnose": ["--no-intervals"], "compare": ["--replicates", "0"],
             "master": ["--temperatures", "130,150"]}.get(command, [])
    files = [str(sweep_file)] * (1 if command not in ("compare", "master") else 0)
    if command in ("compare", "master"):
        other = write_sweep(tmp_path / "b.csv", lognormal_sweep(2, wmin=1e-2, wmax=1e2, n=30))
        files = [str(sweep_file), str(other)]
        before = sorted(os.listdir(tmp_path))
    main([command, *files, *extra])
    assert sorted(os.listdir(tmp_path)) == before, command
    # --plot without --out is refused in one line: figures go only where asked
    assert main([command, *files, *extra, "--plot"]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert err[-1] == "tauspec: error: --plot needs --out DIR: figures are written only where you ask"
    assert sorted(os.listdir(tmp_path)) == before


def test_formats_quiet_and_bad_format(sweep_file, tmp_path, capsys):
    out = tmp_path / "o"
    assert main(["invert", str(sweep_file), "--out", str(out), "--plot", "--format", "svg,pdf", "--quiet"]) == 0
    assert capsys.readouterr().out == ""
    for stem in ("fit", "spectrum", "lcurve"):
        assert (out / f"{stem}.svg").read_text().lstrip().startswith("<?xml")
        assert (out / f"{stem}.pdf").read_bytes()[:5] == b"%PDF-"
        assert not (out / f"{stem}.png").exists()
    assert main(["invert", str(sweep_file), "--out", str(out), "--plot", "--format", "jpeg"]) == 1
    assert "--format: figure format must be one of png, svg, pdf, not jpeg" in capsys.readouterr().err


def test_invert_summary_is_short_with_the_caveats_once_at_the_end(tmp_path, capsys):
    sample = next(s for s in demo_samples() if s.name == "binder-M40")
    from tauspec.data.sweep import Sweep

    path = write_sweep(tmp_path / "b.csv", Sweep(omega=sample.omega, storage=sample.storage, loss=sample.loss,
                                                 name=sample.name))
    assert main(["invert", str(path)]) == 0
    captured = capsys.readouterr()
    lines = captured.out.rstrip().splitlines()
    assert captured.err == ""  # the cautions are in the summary, not repeated as warnings
    assert len(lines) <= 22, len(lines)
    assert lines.count("caveats:") == 1
    start = lines.index("caveats:")
    caveats = lines[start + 1:]
    assert caveats and all(c.startswith("  - ") for c in caveats)  # nothing after them but caveats
    assert len(set(caveats)) == len(caveats)
    body = "\n".join(lines[:start])
    assert "caution" not in body and "warning" not in body
    assert "η_s = " in body and "Pa·s" in body and "λ = " in body


def test_units_on_every_printed_interval(sweep_file, capsys):
    assert main(["invert", str(sweep_file), "--bands", "--resamples", "10", "--no-modes"]) == 0
    intervals = [ln for ln in capsys.readouterr().out.splitlines() if "interval [" in ln]
    assert len(intervals) >= 4
    for ln in intervals:
        name = ln.split("=")[0].strip()
        unit = re.search(r"= \S+ (\S+), \d+ % interval \[[^\]]+\]( [^*\s]+)?( \*)?$", ln)  # * : window flag
        assert unit, ln
        assert unit.group(2) == f" {unit.group(1)}", ln  # the same unit on the value and on the interval
        assert name in ("η_s", "G_e", "η0", "J_e⁰", "τ_n", "τ_w", "τ_longest"), name


def test_frequency_range_in_the_api_the_command_line_and_the_batch(sweep_file, tmp_path, capsys):
    sweep = read_sweep(sweep_file)
    kept = (sweep.omega >= 0.02) & (sweep.omega <= 50)
    # the API: points outside are dropped with a note, exactly as if the user had cut the file
    with pytest.warns(UserWarning, match=r"points outside ω = 0.02–50 rad/s were left out"):
        sp = invert(sweep, omega_min=0.02, omega_max=50)
    cut = invert(sweep.replace(omega=sweep.omega[kept], storage=sweep.storage[kept], loss=sweep.loss[kept]))
    np.testing.assert_array_equal(sp.H, cut.H)
    assert sp.warnings[0].startswith(f"{int((~kept).sum())} of 30 points outside")
    assert sp.to_dict()["settings"]["omega_max"] == 50
    # the command line: invert and diagnose
    assert main(["invert", str(sweep_file), "--json", "--omega-min", "0.02", "--omega-max", "50"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert len(d["omega"]) == int(kept.sum()) and min(d["omega"]) >= 0.02
    assert main(["diagnose", str(sweep_file), "--json", "--no-intervals", "--omega-max", "50"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert any("left out" in n for n in d["notes"])
    # the batch settings
    settings = tmp_path / "s.toml"
    settings.write_text("[invert]\nomega_max = 50.0\n[diagnose]\nrun = false\n")
    arch = tmp_path / "arch"
    arch.mkdir()
    write_sweep(arch / "ln.csv", sweep)
    assert main(["batch", str(arch), "--out", str(tmp_path / "b"), "--settings", str(settings), "--quiet"]) == 0
    stored = json.loads((tmp_path / "b" / "ln.csv" / "result.json").read_text())
    assert max(stored["spectrum"]["omega"]) <= 50 and any("left out" in n for n in stored["notes"])
    assert len(stored["modes"]["g"]) >= 1


def test_bad_range_is_one_line(sweep_file, capsys):
    assert main(["invert", str(sweep_file), "--omega-min", "10", "--omega-max", "1"]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert err == ["tauspec: error: --omega-min must be below --omega-max, not 10 ≥ 1"]
    assert main(["invert", str(sweep_file), "--omega-min", "90"]) == 1
    assert "only 1 point is left when those below ω = 90 rad/s are left out" in capsys.readouterr().err


def test_batch_json_numbers_are_numbers(sweep_file, tmp_path, capsys):
    arch = tmp_path / "arch"
    arch.mkdir()
    write_sweep(arch / "ln.csv", read_sweep(sweep_file))
    (arch / "bad.csv").write_text("omega,G',G''\n1,2\n")
    assert main(["batch", str(arch), "--out", str(tmp_path / "b"), "--json"]) == 1
    rows = {r["file"]: r for r in map(json.loads, capsys.readouterr().out.splitlines())}
    ok, bad = rows["ln.csv"], rows["bad.csv"]
    for key in ("lambda", "eta_s", "residual_rms"):
        assert isinstance(ok[key], float), key
    # η0 only where the terminal zone determines it (here 30 points over 4 decades of a broad log-normal do not)
    derived = json.loads((tmp_path / "b" / "ln.csv" / "result.json").read_text())["derived"]
    undetermined = derived["flags"]["eta0"] and derived["outside_side"]["eta0"] == "long"
    assert ok["eta0"] is None if undetermined else isinstance(ok["eta0"], float)
    chain = ok["verdict"] in ("rouse", "zimm")  # the verdict's own numbers: the others are null
    for key in ("tau_R", "G0", "alpha"):
        assert isinstance(ok[key], float) if chain else ok[key] is None, key
    assert isinstance(ok["n_modes"], int) and isinstance(ok["warnings"], int)
    assert ok["status"] == "ok" and bad["status"] == "error" and bad["tau_R"] is None and bad["lambda"] is None


def _run_in_terminal(argv: list[str]) -> str:
    """Run tauspec with stderr on a pseudo-terminal (as in a user's terminal); return what it wrote there."""
    master, slave = pty.openpty()
    fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", 30, 100, 0, 0))  # a terminal has a size
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    proc = subprocess.Popen([sys.executable, "-m", "tauspec", *argv], stdout=subprocess.DEVNULL, stderr=slave, env=env)
    os.close(slave)
    chunks = []
    while True:
        ready, _, _ = select.select([master], [], [], 120)
        if not ready:
            break
        try:
            data = os.read(master, 4096)
        except OSError:  # the other end closed
            break
        if not data:
            break
        chunks.append(data)
    proc.wait(timeout=300)
    os.close(master)
    return b"".join(chunks).decode("utf-8", "replace")


def test_progress_bars_only_in_a_terminal_and_never_with_quiet(sweep_file, tmp_path):
    argv = ["invert", str(sweep_file), "--no-modes", "--bands", "--resamples", "10"]
    shown = _run_in_terminal(argv)
    assert "resample" in shown and "/10 [" in shown
    assert "resample" not in _run_in_terminal(argv + ["--quiet"])
    piped = subprocess.run([sys.executable, "-m", "tauspec", *argv], capture_output=True, text=True, timeout=300,
                           env={**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)})
    assert piped.returncode == 0 and "resample" not in piped.stderr and "\r" not in piped.stderr
    # compare and report show theirs too
    other = write_sweep(tmp_path / "b.csv", lognormal_sweep(2, wmin=1e-2, wmax=1e2, n=30))
    assert "compare:" in _run_in_terminal(["compare", str(sweep_file), str(other), "--replicates", "2"])
    folder = tmp_path / "batch"
    folder.mkdir()
    (folder / "summary.csv").write_text("file,status,sample,verdict,error\n" + "".join(
        f"f{k}.csv,error,,,f{k}.csv: no such file\n" for k in range(3)))
    shown = _run_in_terminal(["report", str(folder)])
    assert "report:" in shown and "/3 [" in shown
    assert (folder / "report.html").exists()
