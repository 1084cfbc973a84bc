"""Run every benchmark and write one table (Markdown and JSON) with the machine and versions.

    python benchmarks/run.py [--quick] [--out DIR] [--only NAME ...]

Each benchmark module in this folder offers ``run(quick: bool) -> dict``; its
``rows`` (median, min, max seconds) and ``ratios`` go into the table.  Results
are written to ``DIR/benchmarks.md`` and ``DIR/benchmarks.json`` (default
``benchmarks/results``).  Set OPENBLAS_NUM_THREADS=1 for figures comparable
with docs/benchmarks.md.
"""

from __future__ import annotations

import argparse
import importlib
import json
import os
import platform
import sys
import time
from importlib import metadata
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

#: benchmark name -> module in this folder (each has run(quick) -> dict)
BENCHMARKS = {
    "invert": "bench_invert",
    "scaling": "bench_scaling",
    "modes": "bench_modes",
    "pipeline": "bench_pipeline",
    "reader": "bench_reader",
    "dialect": "bench_dialect",
}
OPTIONAL = {"batch": "bench_batch", "uncertainty": "bench_uncertainty", "report": "bench_report",
            "threads": "bench_threads"}


def machine() -> dict:
    """The machine and the versions the figures belong to."""
    versions = {}
    for pkg in ("tauspec", "numpy", "scipy", "cvxpy", "clarabel", "joblib", "threadpoolctl", "dask", "distributed"):
        try:
            versions[pkg] = metadata.version(pkg)
        except metadata.PackageNotFoundError:
            versions[pkg] = "not installed"
    try:
        load = os.getloadavg()[0]
    except OSError:
        load = float("nan")
    blas = "unknown"
    try:
        from threadpoolctl import threadpool_info

        blas = "; ".join(f"{i.get('internal_api')} {i.get('version')} ({i.get('num_threads')} threads)"
                         for i in threadpool_info())
    except ImportError:
        pass
    return {"python": platform.python_version(), "platform": platform.platform(), "cpus": os.cpu_count(),
            "load_average_1min": load, "blas": blas, "versions": versions,
            "date": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime())}


def table(results: dict, info: dict) -> str:
    """The Markdown table of all results."""
    lines = ["# tauspec benchmarks", "",
             f"{info['date']}; Python {info['python']} on {info['platform']}, {info['cpus']} CPUs, "
             f"load average {info['load_average_1min']:.2f}; BLAS: {info['blas']}", "",
             "Versions: " + ", ".join(f"{k} {v}" for k, v in info["versions"].items()), ""]
    for name, res in results.items():
        lines += [f"## {name}", ""]
        if "error" in res:
            lines += [f"not run: {res['error']}", ""]
            continue
        rows = res.get("rows") or {}
        if rows:
            lines += ["| what | median | min – max |", "| --- | ---: | ---: |"]
            for what, r in rows.items():
                lines.append(f"| {what} | {1e3 * r['median_s']:.1f} ms | {1e3 * r['min_s']:.1f} – "
                             f"{1e3 * r['max_s']:.1f} ms |")
            lines.append("")
        ratios = res.get("ratios") or {}
        if ratios:
            lines += ["| ratio | value |", "| --- | ---: |"]
            lines += [f"| {k} | {v:.3g} |" for k, v in ratios.items()]
            lines.append("")
        extra = {k: v for k, v in res.items() if k not in ("rows", "ratios") and not isinstance(v, dict | list)}
        for k, v in extra.items():
            lines.append(f"- {k}: {v:.3g}" if isinstance(v, float) else f"- {k}: {v}")
        for key in ("grid", "frequencies"):
            if isinstance(res.get(key), list):
                lines += ["", f"| {key} n | median | peak memory |", "| ---: | ---: | ---: |"]
                lines += [f"| {r['n']} | {1e3 * r['median_s']:.1f} ms | {r['peak_bytes'] / 2**20:.2f} MiB |"
                          for r in res[key]]
        lines.append("")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true", help="small sizes and few repeats (a smoke test)")
    p.add_argument("--out", type=Path, default=HERE / "results")
    p.add_argument("--only", nargs="*", default=None, metavar="NAME")
    args = p.parse_args(argv)
    names = {**BENCHMARKS, **OPTIONAL}
    chosen = args.only or list(names)
    unknown = [n for n in chosen if n not in names]
    if unknown:
        p.error(f"unknown benchmark(s) {unknown}; choose from {sorted(names)}")
    results = {}
    for name in chosen:
        module = names[name]
        if not (HERE / f"{module}.py").exists():
            continue
        mod = importlib.import_module(module)
        if not hasattr(mod, "run"):
            results[name] = {"error": f"benchmarks/{module}.py runs on its own (python benchmarks/{module}.py)"}
            continue
        t = time.perf_counter()
        results[name] = mod.run(args.quick)
        results[name]["wall_s"] = time.perf_counter() - t
        print(f"{name}: done in {results[name]['wall_s']:.1f} s", file=sys.stderr)
    info = machine()
    args.out.mkdir(parents=True, exist_ok=True)
    (args.out / "benchmarks.json").write_text(json.dumps({"machine": info, "results": results}, indent=1))
    (args.out / "benchmarks.md").write_text(table(results, info))
    print(table(results, info))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
