"""The reader's bounds: how fast over-large input is refused, and that parsing time grows linearly.

    python benchmarks/bench_reader.py [--quick] [--json FILE]

Times (median over repeats, in one run) the baseline — reading a 16-point export, tests/data/quoted_kpa.csv —
and then:

(a) refusing a 1,000,000-row file (under the 32 MiB size bound), (b) refusing a header line of 16,000 ``[ ``,
(c) refusing a 64 KiB metadata line, (d) refusing a FIFO, (e) reading 50,000 and 100,000 data rows (the largest
file accepted), (f) a 1,024- and a 4,096-character header of ``[ `` and of blanks (refused as no header, but
parsed first), (g) refusing 27 MiB of 4,096-character lines of text (no header: the scan stops after 500 such
lines).  Reported as ratios to the baseline; (e) and (f) as the ratio of the larger to the smaller size,
which is about 2 and 4 for linear time (4 and 16 for quadratic).
"""

from __future__ import annotations

import argparse
import json
import os
import tempfile
import warnings
from pathlib import Path

from tauspec.data.read import parse_sweep_text, read_sweep
from tauspec.errors import SweepError
from timing import timed  # noqa: E402 - benchmarks/ is on the path (run directly or by run.py)

FIXTURE = Path(__file__).resolve().parents[1] / "tests" / "data" / "quoted_kpa.csv"
HEADER = "omega [rad/s],G' [Pa],G'' [Pa]\n"


def _rows(n: int) -> str:
    return HEADER + "".join(f"{1e-3 * (1 + i)!r},{1 + i % 7},{2 + i % 5}\n" for i in range(n))


def _refusal(fn) -> str:
    try:
        fn()
    except SweepError as exc:
        return exc.reason
    return "(read, not refused)"


def run(quick: bool = False) -> dict:
    """Run the measurements; return rows (seconds), ratios and the refusal messages."""
    warnings.simplefilter("ignore")
    repeats = 3 if quick else 7
    rows: dict = {}
    messages: dict = {}
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        million = folder / "million.csv"
        million.write_text(HEADER + "1.5,2.5,3.5\n" * 1_000_000)
        fifo = folder / "pipe.csv"
        os.mkfifo(fifo)
        long_header = folder / "brackets.csv"
        long_header.write_text("omega," + "[ " * 16_000 + ",G',G''\n1,2,3\n")
        long_meta = folder / "meta.csv"
        long_meta.write_text("# note: " + "x" * 65_536 + "\n" + HEADER + "1,2,3\n")
        text_file = folder / "text.csv"
        text_file.write_text(("Storage Modulus " * 256 + "\n") * 7000)
        rows["baseline: read a 16-point export"] = timed(lambda: read_sweep(FIXTURE), repeats, ignore=(SweepError,))[0]
        cases = {"(a) refuse 1,000,000 rows": million, "(b) refuse a 16,000-bracket header": long_header,
                 "(c) refuse a 64 KiB metadata line": long_meta, "(d) refuse a FIFO": fifo,
                 "(g) refuse 27 MiB of 4,096-character text lines": text_file}
        for label, path in cases.items():
            rows[label] = timed(lambda p=path: read_sweep(p), repeats, ignore=(SweepError,))[0]
            messages[label] = _refusal(lambda p=path: read_sweep(p))
    sizes = (5_000, 10_000) if quick else (50_000, 100_000)
    for n in sizes:
        text = _rows(n)
        rows[f"(e) read {n:,} rows"] = timed(lambda t=text: parse_sweep_text(t, source="rows.csv"),
                                              1 if quick else 3, ignore=(SweepError,))[0]
    for what, unit in (("brackets", "[ "), ("blanks", " ")):
        for n in (1024, 4096):
            text = "omega," + unit * ((n - 12) // len(unit)) + ",G'\n1,2\n"
            rows[f"(f) {n}-character header of {what}"] = timed(
                lambda t=text: parse_sweep_text(t, source="h.csv"), repeats, ignore=(SweepError,))[0]
    base = rows["baseline: read a 16-point export"]["median_s"]
    ratios = {k[:3] + " / baseline": v["median_s"] / base for k, v in rows.items() if k[:3] in ("(a)", "(b)", "(c)",
                                                                                              "(d)", "(g)")}
    ratios[f"(e) {sizes[1]:,} / {sizes[0]:,} rows"] = (rows[f"(e) read {sizes[1]:,} rows"]["median_s"]
                                                       / rows[f"(e) read {sizes[0]:,} rows"]["median_s"])
    for what in ("brackets", "blanks"):
        ratios[f"(f) 4096 / 1024 characters of {what}"] = (rows[f"(f) 4096-character header of {what}"]["median_s"]
                                                           / rows[f"(f) 1024-character header of {what}"]["median_s"])
    return {"rows": rows, "ratios": ratios, "refusals": messages}


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    p.add_argument("--json", type=Path)
    args = p.parse_args(argv)
    res = run(args.quick)
    for k, v in res["rows"].items():
        print(f"{k:45s} {1e3 * v['median_s']:9.2f} ms  ({1e3 * v['min_s']:.2f}–{1e3 * v['max_s']:.2f})")
    for k, v in res["ratios"].items():
        print(f"{k:45s} {v:9.3g}")
    for k, v in res["refusals"].items():
        print(f"{k}: {v}")
    if args.json:
        args.json.write_text(json.dumps(res, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
