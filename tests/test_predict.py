"""The ``tauspec predict`` command: curves written as CSV/PNG/JSON agree with the library functions."""

from __future__ import annotations

import argparse
import json

import numpy as np
import pytest

from synthetic import noisy_sweep
from tauspec.cli import predict
from tauspec.data.read import read_sweep
from tauspec.data.write import write_csv
from tauspec.errors import SettingsError
from tauspec.modes.curves import creep_compliance, relaxation_modulus
from tauspec.modes.fit import fit_modes
from tauspec.spectrum.kernels import modes_moduli


def _args(*argv):
    parser = argparse.ArgumentParser()
    predict.add_arguments(parser)
    return parser.parse_args(list(argv))


@pytest.fixture()
def sweep_file(tmp_path):
    # invented two-mode fluid, 1 % noise
    w = np.geomspace(1e-2, 1e2, 41)
    gp, gpp = modes_moduli(w, [1e4, 1e3], [0.1, 5.0])
    sw = noisy_sweep(w, gp, gpp, 0.01, 3)
    path = tmp_path / "fluid.csv"
    write_csv(path, ["omega [rad/s]", "G' [Pa]", "G'' [Pa]"], [sw.omega, sw.storage, sw.loss])
    return path


def _read_curve(path):
    lines = path.read_text().splitlines()
    rows = [ln.split(",") for ln in lines[1:]]
    return lines[0], np.array([float(r[0]) for r in rows]), np.array([float(r[1]) for r in rows])


def test_relaxation_csv_matches_library(sweep_file, tmp_path, capsys):
    assert predict.run(_args(str(sweep_file), "--quantity", "relaxation", "--times", "0.01,0.1,1,10",
                             "--out", str(tmp_path / "res"))) == 0
    out = tmp_path / "res" / "relaxation.csv"
    header, t, G = _read_curve(out)
    assert header.startswith("t [s],G(t) [Pa]")
    np.testing.assert_array_equal(t, [0.01, 0.1, 1, 10])
    expected = relaxation_modulus(fit_modes(read_sweep(sweep_file)), t).y
    np.testing.assert_allclose(G, expected, rtol=1e-15)
    text = capsys.readouterr().out
    assert "Maxwell modes" in text and f"wrote {out}" in text


def test_creep_json_is_one_object(sweep_file, tmp_path, capsys):
    out = tmp_path / "res"
    assert predict.run(_args(str(sweep_file), "--quantity", "creep", "--times", "0.01:100:9", "--json",
                             "--out", str(out))) == 0
    lines = capsys.readouterr().out.splitlines()
    assert len(lines) == 1
    obj = json.loads(lines[0])
    assert list(obj["modes"]) == ["g", "tau", "g_se", "tau_se"]
    assert {"eta0", "Je0", "tau_n", "tau_w", "tau_longest", "flags"} <= set(obj["derived"])
    assert obj["files"]["csv"] == str(out / "creep.csv")
    _, t, J = _read_curve(out / "creep.csv")
    np.testing.assert_allclose(t, np.geomspace(0.01, 100, 9), rtol=1e-15)
    np.testing.assert_allclose(J, creep_compliance(fit_modes(read_sweep(sweep_file)), t).y, rtol=1e-15)
    np.testing.assert_allclose(obj["curve"]["y"], J, rtol=1e-15)


def test_viscosity_with_plot(sweep_file, tmp_path, capsys, monkeypatch):
    out = tmp_path / "v"
    assert predict.run(_args(str(sweep_file), "--quantity", "viscosity", "--rates", "0.1:10:3", "--plot",
                             "--format", "png,svg", "--out", str(out))) == 0
    header, _, eta = _read_curve(out / "viscosity.csv")
    assert header.startswith("shear rate [1/s],viscosity Cox-Merz [Pa s]")
    assert np.all(np.diff(eta) < 0)  # shear thinning of a Maxwell fluid's |η*|
    assert (out / "viscosity.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert (out / "viscosity.svg").read_text().lstrip().startswith("<?xml")
    assert "Cox–Merz" in capsys.readouterr().out


def test_nothing_is_written_without_out(sweep_file, tmp_path, capsys, monkeypatch):
    # without --out the curve is printed, one line per point, and no file appears in the current folder
    monkeypatch.chdir(tmp_path)
    before = sorted(tmp_path.iterdir())
    assert predict.run(_args(str(sweep_file), "--quantity", "relaxation", "--times", "0.1,1,10")) == 0
    text = capsys.readouterr().out
    assert sorted(tmp_path.iterdir()) == before
    rows = [ln.split() for ln in text.splitlines() if ln.strip().split()[:1] in (["0.1"], ["1"], ["10"])]
    expected = relaxation_modulus(fit_modes(read_sweep(sweep_file)), [0.1, 1, 10]).y
    np.testing.assert_allclose([float(r[1]) for r in rows], expected, rtol=1e-3)  # printed to 4 digits
    with pytest.raises(SettingsError, match="--plot needs --out"):
        predict.run(_args(str(sweep_file), "--quantity", "relaxation", "--plot"))


def test_one_point_is_named_in_the_singular(sweep_file, capsys):
    assert predict.run(_args(str(sweep_file), "--quantity", "relaxation", "--times", "1")) == 0
    assert "from the modes: 1 point, time t 1 s" in capsys.readouterr().out  # was "1 points, time t 1–1 s"


@pytest.mark.parametrize(
    ("argv", "match"),
    [
        (["--quantity", "viscosity", "--times", "1,2"], "--times belongs to --quantity relaxation or creep"),
        (["--quantity", "creep", "--rates", "1,2"], "--rates belongs to --quantity viscosity"),
        (["--quantity", "creep", "--times", "1:2"], "give positive numbers"),
        (["--quantity", "creep", "--times", "1,-2"], "every value must be a positive"),
        (["--quantity", "creep", "--times", "a,b"], "give positive numbers"),
        (["--quantity", "creep", "--times", "0:10:5"], "give positive numbers"),
    ],
)
def test_bad_options(sweep_file, argv, match):
    with pytest.raises(SettingsError, match=match):
        predict.run(_args(str(sweep_file), *argv))


def test_missing_file_and_several_files(sweep_file, tmp_path, capsys):
    assert predict.run(_args(str(tmp_path / "nope.csv"), "--quantity", "creep")) == 1
    assert capsys.readouterr().err.strip() == f"tauspec: error: {tmp_path / 'nope.csv'}: no such file"
    out = tmp_path / "many"
    status = predict.run(_args(str(tmp_path / "nope.csv"), str(sweep_file), "--quantity", "relaxation",
                               "--out", str(out), "--json"))
    assert status == 1
    captured = capsys.readouterr()
    assert captured.err.strip().count("\n") == 0 and "no such file" in captured.err
    assert (out / "fluid.csv" / "relaxation.csv").exists()  # several files: one folder per file, named by it
    assert len(captured.out.splitlines()) == 1


def test_through_the_command_line(sweep_file, tmp_path, capsys, monkeypatch):
    # only this subcommand is registered here, so the test does not depend on the other command modules
    import tauspec.cli.main as cli

    monkeypatch.setattr(cli, "SUBCOMMANDS", {"predict": cli.SUBCOMMANDS["predict"]})
    main = cli.main

    out = tmp_path / "c"
    assert main(["predict", str(sweep_file), "--quantity", "creep", "--json", "--out", str(out)]) == 0
    assert (out / "creep.csv").exists()
    assert json.loads(capsys.readouterr().out)["quantity"] == "creep"
    assert main(["predict", str(sweep_file), "--quantity", "viscosity", "--times", "1"]) == 1
    assert "--times belongs" in capsys.readouterr().err


def test_basis_spectrum(sweep_file, tmp_path, capsys):
    # the curve from the Tikhonov spectrum and from the modes of the same sweep agree where the data are
    # (both reproduce the same G', G''); compared at times inside the supported window
    args = ["--quantity", "relaxation", "--times", "0.1,1,3", "--json"]
    assert predict.run(_args(str(sweep_file), *args, "--out", str(tmp_path / "a"))) == 0
    from_modes = json.loads(capsys.readouterr().out)
    assert predict.run(_args(str(sweep_file), *args, "--basis", "spectrum", "--out", str(tmp_path / "b"))) == 0
    from_spectrum = json.loads(capsys.readouterr().out)
    assert from_spectrum["curve"]["basis"] == "spectrum"
    np.testing.assert_allclose(from_spectrum["curve"]["y"], from_modes["curve"]["y"], rtol=0.05)


def test_creep_of_a_set_it_cannot_be_computed_from_is_an_error():
    """The exact interconversion (Tschoegl 1989, as in modes/retardation.py) needs distinct relaxation times:
    two Maxwell modes at one τ are reported as an error, not returned as a J(t) of NaN."""
    from types import SimpleNamespace

    twins = SimpleNamespace(g=np.array([1e3, 2e3]), tau=np.array([1.0, 1.0]), eta_s=0.0, G_e=0.0, window=None)
    with pytest.raises(SettingsError, match="share one relaxation time"):
        creep_compliance(twins, [0.1, 1.0])
    # the share from outside a window that holds no mode is still computed: every point comes from outside
    outside = SimpleNamespace(g=np.array([1e3]), tau=np.array([10.0]), eta_s=1.0, G_e=0.0, window=(0.01, 0.1))
    curve = creep_compliance(outside, [0.1, 1.0])
    assert np.all(np.isfinite(curve.y)) and np.all(curve.outside_share > 0.05)


def test_a_value_starting_with_a_dash_is_explained(sweep_file, capsys):
    # "--times -1,2": argparse reads -1,2 as a flag and said only "expected one argument"
    from tauspec.cli.main import main

    with pytest.raises(SystemExit) as stop:
        main(["predict", str(sweep_file), "--quantity", "creep", "--times", "-1,2"])
    assert stop.value.code == 2
    err = capsys.readouterr().err.strip()
    assert err.endswith("(a value that starts with '-' is written --times=VALUE)") and len(err.splitlines()) == 1
    with pytest.raises(SystemExit):
        main(["invert", str(sweep_file), "--out"])  # a value simply missing: no such hint
    assert "written --out=VALUE" not in capsys.readouterr().err
    assert main(["predict", str(sweep_file), "--quantity", "creep", "--times=-1,2"]) == 1  # the real refusal
    assert "positive" in capsys.readouterr().err
