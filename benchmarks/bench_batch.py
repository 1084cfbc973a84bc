"""Batch throughput, per-task overhead and peak memory per worker.

    OPENBLAS_NUM_THREADS=1 python benchmarks/bench_batch.py [--n 200] [--small 50] [--json out.json]

Each measurement runs in a fresh Python process with its workers started and warmed up before the clock
starts (the cold total, with worker start-up, is reported too). Baselines in the same run:

* bare loop: ``read_sweep`` + ``invert`` for each file in one process, no batch machinery;
* bare workers: the same two calls through ``joblib.Parallel(n_jobs=2)`` (loky), BLAS limited to one thread;
* batch: ``run_batch`` at --jobs 1 and 2 (hashing, result files, summary, run.json included).

By default the pipeline is read + invert (``[modes]`` and ``[diagnose]`` ``run = false``) in the batch and the
baselines alike; ``--full`` adds the modes (with the derived numbers) and the diagnosis to both.

Peak memory: ``ru_maxrss`` of the client and of each worker process after the run; the batch at --jobs 2 is
run on ``--small`` and ``--n`` sweeps to show whether it grows with the archive.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
SRC = HERE.parent / "src"


def write_archive(folder: Path, n: int) -> None:
    from tauspec.cli.demo_archive import demo_samples

    count, seed = 0, 1
    while count < n:
        for s in demo_samples(seed):
            if count == n:
                break
            rows = "\n".join(f"{w:.6g},{a:.6g},{b:.6g}" for w, a, b in zip(s.omega, s.storage, s.loss))
            path = folder / f"seed{seed:03d}" / f"{s.name}.csv"
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_text(f"# sample: {s.name}\nomega [rad/s],G' [Pa],G'' [Pa]\n{rows}\n")
            count += 1
        seed += 1


def _bare_one(path: str, full: bool = False) -> float:
    import warnings

    from threadpoolctl import threadpool_limits

    from tauspec.data.read import read_sweep
    from tauspec.spectrum.invert import invert

    with threadpool_limits(1), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        sweep = read_sweep(path)
        spectrum = invert(sweep)
        if full:
            from tauspec.analysis.diagnosis.diagnose import diagnose
            from tauspec.modes.derived import derive
            from tauspec.modes.fit import fit_modes

            derive(fit_modes(sweep, spectrum))
            diagnose(sweep, spectrum=spectrum)
        return spectrum.strength


def _worker_rss() -> tuple[int, int]:
    time.sleep(0.05)  # let every worker take one
    return os.getpid(), resource.getrusage(resource.RUSAGE_SELF).ru_maxrss


def child(mode: str, archive: str, out: str, jobs: int, full: bool) -> dict:
    from joblib import Parallel, delayed

    from tauspec.batch.run import run_batch
    from tauspec.batch.settings import BatchSettings

    files = sorted(str(p) for p in Path(archive).rglob("*.csv"))
    t_cold = time.perf_counter()
    _bare_one(files[0])  # imports and first-call costs, in this process
    if jobs > 1:
        Parallel(n_jobs=jobs)(delayed(_bare_one)(f) for f in files[: 2 * jobs])
    t0, c0 = time.perf_counter(), time.process_time()
    if mode == "bare":
        if jobs == 1:
            for f in files:
                _bare_one(f, full)
        else:
            Parallel(n_jobs=jobs)(delayed(_bare_one)(f, full) for f in files)
    else:
        report = run_batch([archive], out, jobs=jobs, settings=BatchSettings(run_modes=full,
                                                                     run_diagnose=full))
        assert report.ok == len(files), report
    wall, cpu = time.perf_counter() - t0, time.process_time() - c0
    workers = {}
    if jobs > 1:
        workers = dict(Parallel(n_jobs=jobs)(delayed(_worker_rss)() for _ in range(8 * jobs)))
    return {"mode": mode, "jobs": jobs, "n": len(files), "seconds": wall, "client_cpu_seconds": cpu,
            "cold_seconds": time.perf_counter() - t_cold,
            "client_maxrss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
            "worker_maxrss_mb": sorted(v / 1024 for v in workers.values())}


def measure(mode: str, archive: Path, jobs: int, tmp: Path, full: bool) -> dict:
    out = tmp / f"out-{mode}-{jobs}-{archive.name}"  # a fresh folder: nothing is current
    env = {**os.environ, "PYTHONPATH": f"{SRC}{os.pathsep}{os.environ.get('PYTHONPATH', '')}",
           "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"}
    r = subprocess.run([sys.executable, __file__, "--child", mode, str(archive), str(out), str(jobs), str(int(full))],
                       capture_output=True, text=True, env=env, check=True)
    return json.loads(r.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=200)
    ap.add_argument("--small", type=int, default=50)
    ap.add_argument("--repeats", type=int, default=3, help="interleaved repeats; the minimum is reported")
    ap.add_argument("--json", type=Path, default=None)
    ap.add_argument("--full", action="store_true",
                    help="add modes and diagnosis (seconds per sweep: use a small --n) to the batch and the baselines")
    ap.add_argument("--child", nargs=5, default=None, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        mode, archive, out, jobs, full = args.child
        print(json.dumps(child(mode, archive, out, int(jobs), full == "1")))
        return
    sys.path.insert(0, str(SRC))
    load = [os.getloadavg()]
    runs: dict[str, list[dict]] = {}
    with tempfile.TemporaryDirectory(prefix="bench-batch-") as tmp_name:
        tmp = Path(tmp_name)
        big, small = tmp / "big", tmp / "small"
        write_archive(big, args.n)
        write_archive(small, args.small)
        for rep in range(args.repeats):
            for mode, jobs, archive in (("bare", 1, big), ("batch", 1, big), ("bare", 2, big), ("batch", 2, big),
                                        ("batch", 2, small)):
                key = f"{mode}-{jobs}-{archive.name}"
                r = measure(mode, archive, jobs, tmp / f"rep{rep}", args.full)
                runs.setdefault(key, []).append(r)
                load.append(os.getloadavg())
                print(f"{key:16s} n={r['n']:4d}  {r['seconds']:7.2f} s  {r['n'] / r['seconds']:6.2f} sweeps/s  "
                      f"(cold {r['cold_seconds']:.2f} s)  cpu {r['client_cpu_seconds']:.2f} s  "
                      f"client {r['client_maxrss_mb']:.0f} MB  "
                      f"workers {[round(v) for v in r['worker_maxrss_mb']]} MB  load {load[-1][0]:.2f}", flush=True)
    best = {k: min(v, key=lambda r: r["seconds"]) for k, v in runs.items()}
    med = {k: statistics.median(r["seconds"] for r in v) for k, v in runs.items()}
    n = args.n
    summary = {
        "sweeps_per_s_min_time": {k: r["n"] / r["seconds"] for k, r in best.items()},
        "speedup_batch_jobs2_over_jobs1 (min)": best["batch-1-big"]["seconds"] / best["batch-2-big"]["seconds"],
        "speedup_batch_jobs2_over_jobs1 (median)": med["batch-1-big"] / med["batch-2-big"],
        "speedup_bare_workers_2_over_bare_loop (min)": best["bare-1-big"]["seconds"] / best["bare-2-big"]["seconds"],
        "overhead_per_task_ms_jobs1 (min)": 1e3 * (best["batch-1-big"]["seconds"] - best["bare-1-big"]["seconds"]) / n,
        "overhead_share_jobs1 (min)": best["batch-1-big"]["seconds"] / best["bare-1-big"]["seconds"] - 1,
        "cpu_overhead_per_task_ms_jobs1 (min)": 1e3 * (min(r["client_cpu_seconds"] for r in runs["batch-1-big"])
                                                      - min(r["client_cpu_seconds"] for r in runs["bare-1-big"])) / n,
        "cpu_overhead_share_jobs1 (min)": min(r["client_cpu_seconds"] for r in runs["batch-1-big"])
        / min(r["client_cpu_seconds"] for r in runs["bare-1-big"]) - 1,
        "client_cpu_ms_per_task_jobs2 (min)": 1e3 * min(r["client_cpu_seconds"] for r in runs["batch-2-big"]) / n,
        "overhead_share_jobs2_vs_bare_workers (min)": best["batch-2-big"]["seconds"] / best["bare-2-big"]["seconds"]
        - 1,
        "worker_maxrss_mb_small_vs_big": [max(best["batch-2-small"]["worker_maxrss_mb"]),
                                          max(best["batch-2-big"]["worker_maxrss_mb"])],
        "client_maxrss_mb_small_vs_big": [best["batch-2-small"]["client_maxrss_mb"],
                                          best["batch-2-big"]["client_maxrss_mb"]],
        "load_average_1min": [round(x[0], 2) for x in load],
        "cpus": os.cpu_count(),
    }
    for k, v in summary.items():
        if isinstance(v, dict):
            v = {a: round(b, 2) for a, b in v.items()}
        elif isinstance(v, float):
            v = round(v, 3)
        print(f"{k}: {v}")
    if args.json:
        args.json.write_text(json.dumps({"runs": runs, "summary": summary}, indent=1) + "\n")


if __name__ == "__main__":
    main()
