"""The command line: JSON contract, output files, one-line errors and exit codes."""

import json
import subprocess
import sys

import numpy as np
import pytest

from synthetic import lognormal_sweep
from tauspec.cli.main import main


def write_sweep(path, sweep, header="omega [rad/s],G' [Pa],G'' [Pa]"):
    rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(sweep.omega, sweep.storage, sweep.loss))
    path.write_text(f"# sample: {sweep.name}\n{header}\n{rows}\n")
    return path


@pytest.fixture
def sweep_file(tmp_path):
    return write_sweep(tmp_path / "ln.csv", lognormal_sweep(1, wmin=1e-2, wmax=1e2, n=30))


def test_invert_json_is_one_object(sweep_file, capsys):
    assert main(["invert", str(sweep_file), "--json"]) == 0
    out = capsys.readouterr().out
    lines = out.strip().splitlines()
    assert len(lines) == 1
    d = json.loads(lines[0])
    for key in ["tau", "H", "lambda", "select", "window", "eta_s", "G_e", "residual_rms", "omega", "storage_fit",
                "loss_fit", "lcurve", "sample", "schema"]:
        assert key in d
    assert d["sample"] == "lognormal-1"
    assert set(d["lcurve"]) >= {"lambda", "residual_norm", "solution_norm"}


def test_invert_several_files_one_line_each(sweep_file, tmp_path, capsys):
    other = write_sweep(tmp_path / "b.csv", lognormal_sweep(2, wmin=1e-2, wmax=1e2, n=30))
    assert main(["invert", str(sweep_file), str(other), "--json", "--select", "gcv"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert [json.loads(x)["select"] for x in lines] == ["gcv", "gcv"]


def test_invert_out_and_plot(sweep_file, tmp_path, capsys):
    out = tmp_path / "res"
    assert main(["invert", str(sweep_file), "--out", str(out), "--plot", "--strength", "0.01"]) == 0
    for name in ["spectrum.csv", "fit.csv", "result.json", "fit.png", "spectrum.png", "lcurve.png"]:
        assert (out / name).stat().st_size > 0, name
    d = json.loads((out / "result.json").read_text())
    assert d["lambda"] == 0.01 and d["select"] == "fixed"
    table = np.genfromtxt(out / "spectrum.csv", delimiter=",", skip_header=1)
    np.testing.assert_allclose(table[:, 1], d["H"])
    assert "λ = 0.01 (given)" in capsys.readouterr().out


def test_bad_file_one_line_exit_1(tmp_path, sweep_file, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("omega,G',G''\n1,2\n")
    assert main(["invert", str(bad), str(sweep_file), "--json"]) == 1
    captured = capsys.readouterr()
    err = captured.err.strip().splitlines()
    assert len(err) == 1 and "bad.csv:2" in err[0] and "row has 2 values" in err[0]
    assert len(captured.out.strip().splitlines()) == 1  # the good file still done


def test_bad_usage_exit_2(sweep_file, capsys):
    with pytest.raises(SystemExit) as info:
        main(["invert", str(sweep_file), "--select", "best"])
    assert info.value.code == 2
    assert main(["invert", str(sweep_file), "--strength", "-3"]) == 1
    assert "--strength must be 'auto' or a positive number, not -3.0" in capsys.readouterr().err


def test_real_subprocess(sweep_file):
    r = subprocess.run([sys.executable, "-m", "tauspec", "invert", str(sweep_file), "--json"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    assert json.loads(r.stdout)["schema"] == "tauspec.spectrum/1.1"
    r = subprocess.run([sys.executable, "-m", "tauspec", "invert", "/nonexistent/x.csv"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 1 and r.stderr.strip() == "tauspec: error: /nonexistent/x.csv: no such file"
    assert "Traceback" not in r.stderr


def test_import_is_light():
    code = "import sys, tauspec; tauspec.read_sweep; print('cvxpy' in sys.modules, 'matplotlib' in sys.modules)"
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert r.stdout.split() == ["False", "False"]


def test_every_public_name_resolves_from_its_defining_module():
    # The lazy exports of tauspec/__init__.py name the module that defines each object (not one that imports it).
    import importlib

    import tauspec

    for name, module in tauspec._EXPORTS.items():
        obj = getattr(tauspec, name)
        assert getattr(obj, "__module__", None) == f"tauspec.{module}", name
        assert obj is getattr(importlib.import_module(f"tauspec.{module}"), name)
    assert set(dir(tauspec)) == set(tauspec._EXPORTS) | {"__version__"}


def test_equilibrium_modulus_switch_and_no_plateau_option(tmp_path, capsys):
    # A Maxwell mode plus an equilibrium modulus (Ferry 1980, ch. 3: G' = G_e + g ω²τ²/(1 + ω²τ²)): the switch
    # that fits G_e is --equilibrium-modulus on every command that inverts; "plateau" is offered nowhere.
    w = np.geomspace(1e-2, 1e2, 30)
    G_e, g, tau = 500.0, 1e3, 1.0
    x = w * tau
    gp, gpp = G_e + g * x**2 / (1 + x**2), g * x / (1 + x**2)
    from tauspec.data.sweep import Sweep

    path = write_sweep(tmp_path / "solid.csv", Sweep(omega=w, storage=gp, loss=gpp, name="solid"))
    for command in ("invert", "diagnose", "predict", "compare", "batch"):
        with pytest.raises(SystemExit):
            main([command, "--help"])
        text = capsys.readouterr().out
        assert "plateau" not in text.lower(), command
    for command in ("invert", "predict", "compare"):
        with pytest.raises(SystemExit):
            main([command, "--help"])
        assert "--equilibrium-modulus" in capsys.readouterr().out, command
    assert main(["invert", str(path), "--json", "--no-modes", "--equilibrium-modulus"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["settings"]["equilibrium_modulus"] is True and "plateau" not in d["settings"]
    assert d["G_e"] == pytest.approx(G_e, rel=0.02)
    with pytest.raises(SystemExit) as info:
        main(["invert", str(path), "--plateau"])
    assert info.value.code == 2
    capsys.readouterr()
