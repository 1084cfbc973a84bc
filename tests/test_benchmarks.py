"""The benchmark runner's quick mode runs, so the benchmarks cannot rot (no timing is asserted)."""

import importlib.util
import json
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_runner_quick_mode(tmp_path, capsys):
    spec = importlib.util.spec_from_file_location("bench_run", ROOT / "benchmarks" / "run.py")
    runner = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(runner)
    assert runner.main(["--quick", "--out", str(tmp_path), "--only", "invert", "scaling"]) == 0
    data = json.loads((tmp_path / "benchmarks.json").read_text())
    inv = data["results"]["invert"]
    assert inv["max_rel_objective_vs_nnls"] < 1e-9  # same optimum as scipy's nnls at every strength
    assert set(inv["ratios"]) >= {"invert / nnls loop", "cvxpy rebuilt / invert", "invert / Cholesky floor"}
    assert "exponent_grid" in data["results"]["scaling"]
    assert "## invert" in (tmp_path / "benchmarks.md").read_text()
    assert data["machine"]["versions"]["numpy"]
