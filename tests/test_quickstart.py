"""The quick start in a terminal, in an environment holding only the required dependencies.

The test makes a fresh virtual environment without access to this one's packages and links into it exactly
the distributions that ``pip install .`` would bring: tauspec's ``[project] dependencies`` and, recursively,
theirs (read from their installed metadata), nothing optional.  It then runs ``tauspec demo`` under a
pseudo-terminal, where the progress bar is drawn, and the batch with ``--quiet`` and with redirected output,
where it is not.
"""

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
import time
from importlib import metadata
from pathlib import Path

import numpy as np
import pytest
from packaging.requirements import Requirement
from packaging.utils import canonicalize_name

from synthetic import lognormal_sweep
from tauspec.batch.summary import read_summary
from tauspec.cli.demo_archive import demo_samples
from tauspec.cli.main import main

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

ROOT = Path(__file__).resolve().parents[1]
BAR = re.compile(r"\d+/\d+ \[[^\]]*(sweep/s|s/sweep)\]")  # tqdm's "3/9 [00:05<00:10,  1.7sweep/s]"


def required_distributions() -> dict[str, metadata.Distribution]:
    """The distributions ``pip install .`` installs: the required dependencies, recursively, no extras."""
    todo = [(Requirement(r), "") for r in tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
            ["dependencies"]]
    found: dict[str, metadata.Distribution] = {}
    while todo:
        req, extra = todo.pop()
        if req.marker is not None and not req.marker.evaluate({"extra": extra}):
            continue
        name = canonicalize_name(req.name)
        if name in found:
            continue
        dist = found[name] = metadata.distribution(req.name)
        for text in dist.requires or ():
            todo.extend((Requirement(text), e) for e in ("", *req.extras))
    return found


@pytest.fixture(scope="module")
def bare(tmp_path_factory) -> dict[str, str]:
    """The environment of a fresh venv with tauspec (this checkout) and only its required dependencies."""
    venv = tmp_path_factory.mktemp("bare") / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True)
    site = next((venv / "lib").glob("python*/site-packages"))
    for dist in required_distributions().values():
        tops = {Path(f).parts[0] for f in dist.files or ()} - {"..", "__pycache__"}
        for top in sorted(tops):
            target = Path(dist.locate_file(top))
            if target.exists() and not (site / top).exists():
                (site / top).symlink_to(target)
    (site / "tauspec-checkout.pth").write_text(str(ROOT / "src") + "\n")
    script = venv / "bin" / "tauspec"  # what pip writes for [project.scripts]
    script.write_text(f"#!{venv / 'bin' / 'python'}\nimport sys\nfrom tauspec.cli.main import main\n"
                      "sys.exit(main())\n")
    script.chmod(0o755)
    env = {"PATH": f"{venv / 'bin'}:/usr/bin:/bin", "HOME": str(venv.parent), "PYTHONNOUSERSITE": "1",
           "LANG": "C.UTF-8", "TERM": "xterm", "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"}
    probe = subprocess.run(["python", "-c", "import numpy, matplotlib\n"
                            "try:\n    import distributed\nexcept ImportError:\n    print('isolated')"],
                           env=env, capture_output=True, text=True, check=True)
    assert probe.stdout.strip() == "isolated"  # an optional dependency of this environment is not there
    return env


def in_terminal(argv: list[str], env: dict[str, str], cwd: Path, timeout: float = 600) -> tuple[int, str]:
    """Run ``argv`` with a pseudo-terminal (100 × 24) as stdin, stdout and stderr; return (status, output)."""
    master, slave = pty.openpty()
    fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", 24, 100, 0, 0))
    proc = subprocess.Popen(argv, stdin=slave, stdout=slave, stderr=slave, env=env, cwd=cwd, close_fds=True)
    os.close(slave)
    chunks, deadline = [], time.monotonic() + timeout
    try:
        while time.monotonic() < deadline:
            if select.select([master], [], [], 1.0)[0]:
                try:
                    data = os.read(master, 65536)
                except OSError:  # EIO: every writer of the terminal has closed it
                    break
                if not data:
                    break
                chunks.append(data)
        else:
            proc.kill()
            pytest.fail(f"{argv} did not finish in {timeout} s")
    finally:
        os.close(master)
    return proc.wait(timeout=60), b"".join(chunks).decode("utf-8", "replace")


def test_demo_in_a_terminal_with_only_the_required_dependencies(bare, tmp_path, capsys):
    """The demo runs the whole pipeline (read, invert, diagnosis) on its invented archive, in a terminal."""
    status, shown = in_terminal(["tauspec", "demo", "--out", str(tmp_path), "--jobs", "2"], bare, tmp_path)
    assert status == 0, shown[-2000:]  # the corrupted export is expected: exit 0
    assert "internal error" not in shown and "Traceback" not in shown
    assert BAR.search(shown), "no progress bar in the terminal"
    assert "exports/batch-22-truncated.csv" in shown and "line 4: row has 2 values" in shown and "9 computed" in shown
    rows = {r["file"]: r for r in read_summary(tmp_path / "results")}
    assert len(rows) == 9
    for s in demo_samples():
        if s.kind != "rouse":
            continue
        row = rows[f"series/{s.name}.csv"]
        stored = json.loads((tmp_path / "results" / "series" / f"{s.name}.csv" / "result.json").read_text())
        assert row["verdict"] == stored["diagnosis"]["verdict"] and float(row["tau_R"]) == stored["diagnosis"]["tau_R"]
        # the generator's finite-N Rouse chains (Rouse 1953; Ferry 1980, ch. 9): τ_1 and G0 = cRT/M come back,
        # and η0 = η_s + G0 Σ τ_p with τ_p = τ_1 sin²(π/(2(N+1)))/sin²(pπ/(2(N+1))) (Ferry 1980, ch. 9)
        assert float(row["tau_R"]) == pytest.approx(s.truth["tau_R"], rel=0.1)
        assert float(row["G0"]) == pytest.approx(s.truth["G0"], rel=0.15)
        N = s.truth["N"]
        p = np.arange(1, N + 1)
        taus = s.truth["tau_R"] * np.sin(np.pi / (2 * (N + 1))) ** 2 / np.sin(p * np.pi / (2 * (N + 1))) ** 2
        assert float(row["eta0"]) == pytest.approx(s.truth["eta_s"] + s.truth["G0"] * taus.sum(), rel=0.05)
        assert int(row["n_modes"]) == len(stored["modes"]["g"]) >= 1
        assert (tmp_path / "results" / "series" / f"{s.name}.csv" / "modes.csv").exists()
    # the critical gel G' ∝ G'' ∝ ω^n (Winter & Chambon 1986): its exponent in the summary, and no η0 (it diverges)
    gel = next(s for s in demo_samples() if s.kind == "gel")
    row = rows[f"retains/{gel.name}.csv"]
    assert row["verdict"] == "gel" and float(row["gel_n"]) == pytest.approx(gel.truth["n"], abs=0.03)
    assert row["eta0"] == "" and row["tau_R"] == ""
    # and it resumes: nothing is computed twice
    assert main(["demo", "--out", str(tmp_path), "--jobs", "2"]) == 0
    assert "0 computed, 9 already current" in capsys.readouterr().out


def test_the_progress_bar_is_silent_when_redirected_or_quiet(bare, tmp_path):
    arch = tmp_path / "arch"
    arch.mkdir()
    for i in range(2):
        s = lognormal_sweep(i, wmin=1e-2, wmax=1e2, n=20)
        rows = "\n".join(f"{w:.17g},{a:.17g},{b:.17g}" for w, a, b in zip(s.omega, s.storage, s.loss))
        (arch / f"s{i}.csv").write_text(f"omega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
    (tmp_path / "s.toml").write_text("[invert]\ngrid = 24\n[modes]\nrun = false\n[diagnose]\nrun = false\n")
    batch = ["tauspec", "batch", str(arch), "--settings", str(tmp_path / "s.toml"), "--out"]
    status, shown = in_terminal([*batch, str(tmp_path / "a")], bare, tmp_path)
    assert status == 0 and BAR.search(shown) and "2 samples: 2 ok" in shown
    status, shown = in_terminal([*batch, str(tmp_path / "b"), "--quiet"], bare, tmp_path)
    assert (status, shown) == (0, "")
    proc = subprocess.run([*batch, str(tmp_path / "c")], env=bare, cwd=tmp_path, capture_output=True, text=True)
    assert proc.returncode == 0 and proc.stderr == "" and "2 samples: 2 ok" in proc.stdout
