"""``tauspec demo``: the whole job on an invented archive — batch and report, compare, master curve, prediction."""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
from pathlib import Path
from typing import Any

from ..output.words import counted, number
from .common import add_output_arguments, check_output_arguments

#: The demo's default folder (documented in ``--help`` and the README): the one place it writes without ``--out``.
DEFAULT_FOLDER = Path("tauspec-demo")


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``demo``."""
    add_output_arguments(p, out_default=DEFAULT_FOLDER,
                         out_help=f"folder for the demo archive and everything made from it (default: "
                                  f"./{DEFAULT_FOLDER})",
                         plot_help="draw every figure (the default for the demo; --no-plot skips them)",
                         json_help="print one JSON object: where everything is and how long each step took")
    p.add_argument("--no-plot", dest="plot", action="store_false", help="draw no figures (faster)")
    p.set_defaults(plot=True)
    g = p.add_argument_group("demo")
    g.add_argument("--seed", type=int, default=20261201, help="seed of the invented noise")
    g.add_argument("--jobs", type=int, default=min(2, os.cpu_count() or 1), metavar="N",
                   help="worker processes for the batch (default: 2, or 1 on a single core)")


def _step(args: argparse.Namespace, argv: list[str]) -> float:
    """Run one tauspec command quietly (its results go to files); return its time in seconds.

    The batch keeps its progress bar (on stderr, in a terminal only): its printed summary is dropped instead,
    since the demo prints its own table.
    """
    import contextlib
    import io

    from .main import main

    t = time.perf_counter()
    extra = ["--plot", "--format", args.format] if args.plot else []
    if argv[0] == "batch" and not args.quiet:
        with contextlib.redirect_stdout(io.StringIO()):
            status = main(argv + extra)
    else:
        status = main(argv + ["--quiet"] + extra)
    if status not in (0, 1):
        raise RuntimeError(f"tauspec {argv[0]} failed (exit status {status})")
    return time.perf_counter() - t


def run(args: argparse.Namespace) -> int:
    """Write the archive, run the batch and the other commands on it, say where everything is.

    Exit status 0 when the only failure is the archive's deliberately corrupted export.
    """
    from ..batch.summary import read_summary
    from .demo_archive import CORRUPTED, WLF_DEMO, write_demo_archive, write_temperature_set

    check_output_arguments(args)
    out = Path(args.out)
    archive, results, temps = out / "archive", out / "results", out / "temperatures"
    files = write_demo_archive(archive, seed=args.seed)
    t_files = write_temperature_set(temps, seed=args.seed)
    say = (lambda *a: None) if (args.quiet or args.json) else (lambda *a: print(*a, flush=True))
    say(f"demo archive: {len(files)} sweep files in {archive} (an invented coatings lab: "
        "tauspec/cli/demo_archive.py)")
    seconds: dict[str, float] = {}

    say(f"1. tauspec batch {archive} --out {results} --jobs {args.jobs}" + (" --plot --report" if args.plot else
                                                                              "; tauspec report " + str(results)))
    seconds["batch"] = _step(args, ["batch", str(archive), "--out", str(results), "--jobs", str(args.jobs)]
                             + (["--report"] if args.plot else []))
    if not args.plot:
        _step(args, ["report", str(results)])
    rows = read_summary(results)
    ok = sum(r["status"] == "ok" for r in rows)
    counts = json.loads((results / "run.json").read_text(encoding="utf-8")).get("counts", {})
    say("")
    say(_table(results, rows))
    say(f"   {counted(len(rows), 'sample')}: {ok} ok, {len(rows) - ok} failed (one export is corrupted on purpose); "
        f"{counts.get('computed', 0)} computed, {counts.get('skipped', 0)} already current; {seconds['batch']:.0f} s")

    from ..output.results import read_run_index, result_folder

    index = read_run_index(results)  # each file's result folder, as the batch recorded it
    series = sorted(str(result_folder(results, index, f"series/{f.name}")) for f in files
                    if f.parent.name == "series")
    say(f"2. tauspec compare {' '.join(Path(s).stem for s in series)} (the M series, from the batch's results)")
    seconds["compare"] = _step(args, ["compare", *series, "--out", str(out / "compare")])
    series_line = _series_words(out / "compare" / "comparison.json")
    say(f"   {series_line}, {seconds['compare']:.0f} s")

    say(f"3. tauspec master {' '.join(p.name for p in t_files)} (one control at "
        f"{', '.join(f'{T:g}' for T in WLF_DEMO['temperatures'])} °C)")
    seconds["master"] = _step(args, ["master", *map(str, t_files), "--out", str(out / "master")])
    say(f"   {_master_words(out / 'master' / 'master.json')}, {seconds['master']:.0f} s")

    sample = next(f for f in files if f.stem == "binder-M40")
    say(f"4. tauspec predict {sample.name} --quantity relaxation (G(t) from its Maxwell modes)")
    seconds["predict"] = _step(args, ["predict", str(sample), "--quantity", "relaxation", "--out",
                                      str(out / "predict")])
    say(f"   {_predict_words(out / 'predict' / 'relaxation.csv')}, {seconds['predict']:.0f} s")

    where = {
        "report": str(results / "report.html"),
        "summary": str(results / "summary.csv"),
        "results": f"{results}/<folder>/<file>/ (result.json, spectrum.csv, fit.csv, modes.csv"
                   + (", figures" if args.plot else "") + ")",
        "comparison": str(out / "compare"),
        "master curve": str(out / "master"),
        "prediction": str(out / "predict"),
    }
    say("\nwhere everything is:")
    for name, path in where.items():
        say(f"  {name + ':':<14}{path}")
    if args.json:
        print(json.dumps({"where": where, "seconds": {k: round(v, 1) for k, v in seconds.items()}}))
    expected = {Path(f).as_posix() for f in CORRUPTED}
    unexpected = [r for r in rows if r["status"] != "ok" and r["file"] not in expected]
    sys.stdout.flush()
    return 1 if unexpected else 0


def _table(results: Path, rows: list[dict[str, str]]) -> str:
    """The batch in a few lines: each file's verdict and the numbers that mean something for it, with units."""
    from ..output.results import read_result_json, read_run_index, result_folder
    from ..output.words import error_words, key_numbers, number, quantity

    index = read_run_index(results)
    width = max(len(r["file"]) for r in rows)
    lines = [f"   {'file':<{width}}  {'verdict':<12}  key numbers"]
    for r in rows:
        if r["status"] != "ok":
            lines.append(f"   {r['file']:<{width}}  {'failed':<12}  {error_words(r['error'], r['file'])}")
            continue
        folder = result_folder(results, index, r["file"])
        diag = (read_result_json(folder).get("diagnosis") or {}) if folder is not None else {}
        numbers = [quantity(k, v) for k, v, _ in key_numbers(diag)[:3] if number(v) != "–"]
        lines.append(f"   {r['file']:<{width}}  {r['verdict'] or '–':<12}  {', '.join(numbers)}")
    return "\n".join(lines)


def _series_words(path: Path) -> str:
    """The series scaling of the comparison in words: ``τ_R ∝ M^1.99 [1.97, 2.01] (Rouse chains: 2)``."""
    d: dict[str, Any] = json.loads(path.read_text(encoding="utf-8"))
    fit = (d.get("series") or {}).get("time")
    if not fit or "M" not in (fit.get("exponents") or {}):
        return "no series scaling (the molecular weights are not known)"
    x = fit["exponents"]["M"]
    lo, hi = fit["intervals"]["M"]
    what = "τ_R" if str(fit.get("measure", "")).startswith("tau_R") else "τ_w"
    return f"series scaling {what} ∝ M^{x:.2f}, 95 % interval [{lo:.2f}, {hi:.2f}] (Rouse chains: 2)"


def _predict_words(path: Path) -> str:
    """The predicted G(t) in words: its range and how many points are extrapolations."""
    import csv

    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))[1:]
    t, G = [float(r[0]) for r in rows], [float(r[1]) for r in rows]
    flagged = sum(r[-1] == "yes" for r in rows)
    return (f"G(t) at {counted(len(rows), 'time')} from {number(t[0])} s ({number(G[0])} Pa) to {number(t[-1])} s "
            f"({number(G[-1])} Pa); {flagged} flagged as extrapolations")


def _master_words(path: Path) -> str:
    d: dict[str, Any] = json.loads(path.read_text(encoding="utf-8"))
    wlf = d.get("wlf") or {}
    simple = (d.get("superposition") or {}).get("simple")
    text = f"master curve at {d['T_ref']:g} °C"
    if wlf.get("C1") is not None:
        text += f", WLF C1 = {wlf['C1']:.3g}, C2 = {wlf['C2']:.3g} K (made with 8.86, 101.6 K)"
    return text + (", superposition holds" if simple else ", superposition fails")
