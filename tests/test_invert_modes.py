"""``tauspec invert`` carries the Maxwell modes and the derived numbers (JSON keys, modes.csv, text)."""

from __future__ import annotations

import json

import numpy as np
import pytest

from synthetic import lognormal_sweep
from tauspec.cli.main import main


@pytest.fixture()
def sweep_file(tmp_path):
    sw = lognormal_sweep(3)  # σ = 1.2 log-normal over 1e-3–1e3 rad/s, 1 % noise
    rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(sw.omega, sw.storage, sw.loss))
    path = tmp_path / "ln.csv"
    path.write_text(f"# sample: {sw.name}\nomega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
    return path


def test_json_has_modes_and_derived(sweep_file, tmp_path, capsys):
    out = tmp_path / "res"
    assert main(["invert", str(sweep_file), "--json", "--out", str(out)]) == 0
    d = json.loads(capsys.readouterr().out)
    assert list(d["modes"]) == ["g", "tau", "g_se", "tau_se"]
    assert {"eta0", "Je0", "tau_n", "tau_w", "tau_longest", "flags"} <= set(d["derived"])
    assert d["derived"]["basis"] == "modes" and d["derived_spectrum"]["basis"] == "spectrum"
    # log-normal σ = 1.2: η0 = 2.054433 G_t τ_m, J_e⁰ G_t = 4.220696 (docs/references.md, checked in test_derived.py)
    for key in ("derived", "derived_spectrum"):
        assert d[key]["eta0"] == pytest.approx(2.054433e4, rel=0.05)
    assert d["derived"]["Je0"] == pytest.approx(4.220696e-4, rel=0.05)
    assert len(d["modes_fit"]["outside_window"]) == len(d["modes"]["g"])
    # modes.csv beside result.json holds the same modes
    lines = (out / "modes.csv").read_text().splitlines()
    table = np.array([[float(v) for v in ln.split(",")[1:5]] for ln in lines[1:]])
    np.testing.assert_allclose(table[:, 0], d["modes"]["g"], rtol=1e-15)
    np.testing.assert_allclose(table[:, 1], d["modes"]["tau"], rtol=1e-15)
    assert json.loads((out / "result.json").read_text())["modes"] == d["modes"]


def test_text_and_no_modes(sweep_file, capsys):
    assert main(["invert", str(sweep_file)]) == 0
    text = capsys.readouterr().out
    assert "Maxwell modes" in text and "from the modes" in text and "from the spectrum" in text
    assert main(["invert", str(sweep_file), "--json", "--no-modes"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert "modes" not in d and "derived" not in d


def test_known_solvent_viscosity_reaches_the_modes(sweep_file, capsys):
    assert main(["invert", str(sweep_file), "--json", "--eta-s", "0.0"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["modes_fit"]["eta_s"] == 0.0 and d["modes_fit"]["eta_s_se"] == 0.0
    # the text says whose η_s it prints: the user's known value, not the fitted high-frequency contribution
    assert main(["invert", str(sweep_file), "--eta-s", "0.0", "--no-modes"]) == 0
    assert "η_s = 0 Pa·s (given: the solvent's viscosity)" in capsys.readouterr().out
    assert main(["invert", str(sweep_file), "--no-modes"]) == 0
    assert "(Newtonian high-frequency contribution: solvent plus modes" in capsys.readouterr().out
