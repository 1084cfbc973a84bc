"""Separator detection on our test files: the standard library's ``csv.Sniffer`` against clevercsv.

    python benchmarks/bench_dialect.py [--quick] [--json FILE]

Each detector sees what the reader gives it — the first 60 lines that are not blank or ``#`` comments, at most
1,024 characters of each and 8,192 in all — and must name the separator written (comma, semicolon, tab or
blank) among those four.  The files: every fixture of tests/data, every layout of tests/test_reader.py, and
exports written by the property test's generator (tests/test_reader_property.py, a fixed seed) in random shapes.
Reported: files right, wrong and without an answer per detector, the median time per file, and which files
each got wrong.  docs/reader.md records the result and the choice.
"""

from __future__ import annotations

import argparse
import csv
import importlib.util
import json
import random
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from tauspec.data.blocks import sample_lines  # noqa: E402
from tauspec.data.dialect import CANDIDATES, SAMPLE_CHARS, SAMPLE_LINE_CHARS, SAMPLE_LINES  # noqa: E402
from tauspec.data.encodings import decode  # noqa: E402

#: The separator each fixture file is written with (tests/data/make_fixtures.py).
FIXTURES = {"cp1252_units.csv": ";", "gstar_phase_deg.csv": ",", "gstar_phase_nounit.csv": ",",
            "gstar_phase_rad.csv": ",", "hz_and_rads.csv": ",", "hz_rads_disagree.csv": ",", "in_kpa.csv": ";",
            "missing_cells.csv": ",", "preamble_semicolon.csv": ";", "preamble_text.csv": ",", "quoted_hz.csv": ",",
            "quoted_kpa.csv": ",", "quoted_mpa.csv": ",", "temperature_column.csv": ",",
            "temperature_drift.csv": ",", "three_blocks.txt": "\t", "time_column.csv": ",", "units_row.tsv": "\t",
            "utf16_bom.txt": "\t", "whitespace_aligned.dat": " ", "utf8_bom_semicolon.csv": ";",
            "verbose_columns.csv": ","}
#: The separator of each layout of tests/test_reader.py.
LAYOUTS = {"comma, SI": ",", "comma, Hz and kPa": ",", "tab, bare names": "\t", "semicolon, decimal comma": ";",
           "tab, decimal comma": "\t", "whitespace": " ", "whitespace, single spaces": " ",
           "descriptive names": ",", "MPa": ",", "units row": ";", "ω symbol": ",", "comments and metadata": ",",
           "extra column": ","}


def _module(name: str, path: Path):
    spec = importlib.util.spec_from_file_location(name, path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def _generated(count: int, seed: int = 20261202):
    """(name, text, separator) of exports in random shapes from the property test's generator."""
    prop = _module("reader_property", ROOT / "tests" / "test_reader_property.py")
    rng = random.Random(seed)
    seps = [",", ";", "\t", "  "]
    out = []
    for k in range(count):
        n = rng.randint(6, 12)
        omega = np.geomspace(10 ** rng.uniform(-2, -1), 10 ** rng.uniform(1, 2), n)
        storage = 10 ** np.array([rng.uniform(-1, 6) for _ in range(n)])
        loss = storage * 10 ** np.array([rng.uniform(-3, 3) for _ in range(n)])
        sep = rng.choice(seps)
        shape = {"form": rng.choice(["pair", "polar"]), "freq": rng.choice(["angular", "cyclic", "both"]),
                 "style": rng.choice(["()", "[]", " in ", "units row"]), "sep": sep,
                 "quote": "none" if sep == "  " else rng.choice(["none", "all", "header"]), "encoding": "utf-8",
                 "preamble": rng.choice(["none", "hash", "key: value", "title"]),
                 "modulus_unit": rng.choice(["Pa", "kPa", "MPa"]), "angular_unit": rng.choice(["rad/s", None]),
                 "cyclic_unit": "Hz", "angle_unit": rng.choice(["deg", "rad"]),
                 "extras": rng.sample(range(9), rng.randint(0, 3)), "names": rng.randint(0, 10**6),
                 "decimal_comma": sep != "," and rng.random() < 0.5, "order": rng.sample(range(8), 8)}
        text, _ = prop.write_export(shape, omega, storage, loss)
        out.append((f"generated {k}", text, " " if sep == "  " else sep))
    return out


def test_files(quick: bool):
    files = [(name, decode((ROOT / "tests" / "data" / name).read_bytes(), name), sep)
             for name, sep in FIXTURES.items()]
    layouts = _module("reader_layouts", ROOT / "tests" / "test_reader.py").LAYOUTS
    files += [(f"layout: {name}", text, LAYOUTS[name]) for name, text, *_ in layouts]
    return files + _generated(20 if quick else 200)


def _sample(text: str) -> str:
    lines = sample_lines(text, SAMPLE_LINES, source="x", max_line_chars=10**6)
    return "\n".join(line[:SAMPLE_LINE_CHARS] for line in lines)[:SAMPLE_CHARS]


def _sniffer(sample: str) -> str | None:
    try:
        return csv.Sniffer().sniff(sample, delimiters="".join(CANDIDATES)).delimiter
    except csv.Error:
        return None


def _clevercsv(sample: str) -> str | None:
    import clevercsv

    dialect = clevercsv.Detector().detect(sample, delimiters=list(CANDIDATES))
    return dialect.delimiter if dialect is not None and dialect.delimiter else None


def run(quick: bool = False) -> dict:
    """Score both detectors on every test file."""
    import clevercsv  # noqa: F401 - imported once before timing (the import itself takes ~0.3 s)

    files = test_files(quick)
    rows, counts, wrong = {}, {}, {}
    for label, detect in (("csv.Sniffer", _sniffer), ("clevercsv", _clevercsv)):
        times, right, none, bad = [], 0, 0, []
        for name, text, truth in files:
            sample = _sample(text)
            t = time.perf_counter()
            found = detect(sample)
            times.append(time.perf_counter() - t)
            if found == truth:
                right += 1
            elif found is None:
                none += 1
                bad.append(f"{name}: none")
            else:
                bad.append(f"{name}: {found!r} for {truth!r}")
        rows[f"{label} per file"] = {"median_s": statistics.median(times), "min_s": min(times), "max_s": max(times)}
        counts[label] = {"files": len(files), "right": right, "wrong": len(files) - right - none, "no answer": none}
        wrong[label] = bad
    return {"rows": rows, "counts": counts, "missed": wrong}


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    p.add_argument("--json", type=Path)
    args = p.parse_args(argv)
    res = run(args.quick)
    for label, c in res["counts"].items():
        r = res["rows"][f"{label} per file"]
        print(f"{label:12s} {c['right']}/{c['files']} right, {c['wrong']} wrong, {c['no answer']} no answer; "
              f"median {1e3 * r['median_s']:.2f} ms per file (max {1e3 * r['max_s']:.1f} ms)")
    for label, bad in res["missed"].items():
        by_kind: dict[str, int] = {}
        for b in bad:
            kind = "generated" if b.startswith("generated") else b
            by_kind[kind] = by_kind.get(kind, 0) + 1
        print(f"{label} missed: {by_kind}")
    if args.json:
        args.json.write_text(json.dumps(res, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
