"""The whole pipeline per sweep, and the batch around it, as ratios in one run.

    python benchmarks/bench_pipeline.py [--quick]

Per stage (read, invert, modes, diagnose with its default intervals) on the demo
archive's valid sweeps (24 of them: the demo's invented models with several noise
seeds), with the ratio of the whole pipeline to ``invert`` per sweep (median; the
target of issue 18 is ≤ 5), then the batch (``run_batch``) at --jobs 1 and 2 on a small archive against a
bare loop calling the library in one process, and on a dask LocalCluster
(2 processes) when distributed is installed.  Ratios: jobs-2/jobs-1 speed-up
(target ≥ 1.8 on two free cores) and the batch's overhead per task over the
bare loop.  The load average is recorded: on a shared machine the speed-up
measures the free cores as much as tauspec.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
import warnings
from pathlib import Path

from threadpoolctl import threadpool_limits

from tauspec.cli.demo_archive import demo_samples
from tauspec.data.read import read_sweep


def _archive(folder: Path, n: int) -> list[Path]:
    files = []
    seed = 1
    while len(files) < n:
        for s in demo_samples(seed):
            if len(files) == n:
                break
            rows = "\n".join(f"{w:.6g},{a:.6g},{b:.6g}" for w, a, b in zip(s.omega, s.storage, s.loss))
            path = folder / f"s{seed:03d}" / f"{s.name}.csv"
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_text(f"# sample: {s.name}\nomega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
            files.append(path)
        seed += 1
    return files


def _stages(files: list[Path]) -> tuple[dict[str, float], float]:
    from tauspec.analysis.diagnosis.diagnose import diagnose
    from tauspec.modes.fit import fit_modes
    from tauspec.spectrum.invert import invert

    acc: dict[str, list[float]] = {"read": [], "invert": [], "modes": [], "diagnose": []}
    whole: list[float] = []  # (read + invert + modes + diagnose) / invert, per sweep
    for f in files:
        t = time.perf_counter()
        sw = read_sweep(f)
        acc["read"].append(time.perf_counter() - t)
        t = time.perf_counter()
        sp = invert(sw)
        acc["invert"].append(time.perf_counter() - t)
        t = time.perf_counter()
        fit_modes(sw, sp)
        acc["modes"].append(time.perf_counter() - t)
        t = time.perf_counter()
        diagnose(sw, spectrum=sp)
        acc["diagnose"].append(time.perf_counter() - t)
        whole.append(sum(v[-1] for v in acc.values()) / acc["invert"][-1])
    return {k: statistics.median(v) for k, v in acc.items()}, statistics.median(whole)


def _bare(files: list[Path]) -> float:
    from tauspec.spectrum.invert import invert

    t = time.perf_counter()
    for f in files:
        invert(read_sweep(f))
    return time.perf_counter() - t


def _batch(files_root: Path, out: Path, jobs: int, backend: str = "loky") -> float:
    from tauspec.batch.run import run_batch
    from tauspec.batch.settings import settings_from_mapping

    settings = settings_from_mapping({"modes": {"run": False}, "diagnose": {"run": False}})  # as the bare loop
    t = time.perf_counter()
    run_batch([files_root], out, settings=settings, jobs=jobs, backend=backend, progress=False)
    return time.perf_counter() - t


def run(quick: bool = False) -> dict:
    """Run the pipeline benchmark; return its figures."""
    warnings.simplefilter("ignore")
    n = 16 if quick else 120
    with tempfile.TemporaryDirectory(prefix="tauspec-bench-") as tmp, threadpool_limits(1):
        root = Path(tmp) / "archive"
        files = _archive(root, n)
        _stages(files[:2])  # imports and caches outside the timings
        stages, whole = _stages(files[: (4 if quick else 24)])
        bare = _bare(files)
        j1 = _batch(root, Path(tmp) / "out1", 1)
        j2 = _batch(root, Path(tmp) / "out2", 2)
        rows = {
            "bare loop read+invert": (bare, bare, bare),
            "batch --jobs 1 (read+invert)": (j1, j1, j1),
            "batch --jobs 2 (read+invert)": (j2, j2, j2),
        }
        out = {"sweeps": n, "stage_median_s": stages}
        if not quick:
            try:
                import distributed  # noqa: F401

                jd = _batch(root, Path(tmp) / "outd", 2, backend="dask")
                rows["batch dask LocalCluster, 2 workers"] = (jd, jd, jd)
            except ImportError:
                pass
    out["rows"] = {k: {"median_s": v[0], "min_s": v[1], "max_s": v[2]} for k, v in rows.items()}
    out["ratios"] = {
        "whole pipeline / invert (median per sweep)": whole,
        "speed-up jobs 2 / jobs 1": j1 / j2,
        "batch jobs 1 / bare loop": j1 / bare,
        "overhead per task [ms]": 1e3 * (j1 - bare) / n,
    }
    out["load_average_1min"] = os.getloadavg()[0]
    out["peak_memory_MiB"] = _peak_memory_mib()
    return out


def _peak_memory_mib() -> float:
    """Peak resident memory of this process (the stages and the bare loop ran in it), MiB."""
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def main() -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    res = run(p.parse_args().quick)
    print(f"{res['sweeps']} sweeps; load average {res['load_average_1min']:.2f}")
    for k, v in res["stage_median_s"].items():
        print(f"  stage {k:10s} {1e3 * v:9.1f} ms per sweep (median)")
    for k, v in res["rows"].items():
        print(f"  {k:40s} {v['median_s']:8.2f} s")
    for k, v in res["ratios"].items():
        print(f"  {k:40s} {v:8.3f}")
    print(f"  peak memory of this process {res['peak_memory_MiB']:.1f} MiB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
