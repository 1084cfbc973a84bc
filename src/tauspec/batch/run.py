"""Parallel, resumable reprocessing of archives of sweep files.

One pipeline step, :func:`process`, turns the text of one sweep file into a
JSON-ready result (read → invert → discrete modes → diagnosis, as far as those
steps are available).  :func:`run_batch` finds the sweep files, skips those
whose stored result is current, sends the rest to joblib workers (loky on this
machine or a Dask cluster), writes every output itself and rebuilds
``summary.csv`` from the stored results.  See docs/batch.md for the output
layout, the resume rule, fault handling and exit codes.
"""

from __future__ import annotations

import contextlib
import csv
import dataclasses
import functools
import hashlib
import io
import json
import math
import os
import platform
import sys
import tempfile
import time
import warnings
from collections import Counter
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from pathlib import Path
from typing import Any

from .._version import __version__
from ..data.read import decode_text, parse_sweep_text, read_capped_bytes
from ..data.sweep import Sweep
from ..data.write import atomic_write_bytes, atomic_write_text, dumps_json
from ..errors import SettingsError, SweepError, TauspecError

__all__ = [
    "SWEEP_SUFFIXES",
    "SUMMARY_COLUMNS",
    "InvertOptions",
    "ModesOptions",
    "DiagnoseOptions",
    "Settings",
    "load_settings",
    "settings_from_mapping",
    "Input",
    "find_inputs",
    "process",
    "BatchReport",
    "run_batch",
    "write_summary",
    "read_summary",
    "summary_table",
]

#: Suffixes (case-insensitive) of the files a folder is searched for.
SWEEP_SUFFIXES = (".csv", ".tsv", ".txt", ".dat")

#: Columns of ``summary.csv``, in order.
SUMMARY_COLUMNS = ("file", "status", "sample", "verdict", "tau_R", "G0", "alpha", "eta0", "lambda", "eta_s",
                   "residual_rms", "n_modes", "warnings", "error")

SCHEMA = "tauspec.batch/1"


#: Every file the pipeline may write into a result folder (stale ones are removed when a result changes).
RESULT_FILES = ("spectrum.csv", "fit.csv", "modes.csv", "fit.png", "spectrum.png", "lcurve.png", "diagnosis.png")
FIGURES = ("fit.png", "spectrum.png", "lcurve.png")

WORKER_DIED = "the worker process died while processing this file (killed, or out of memory)"


# --------------------------------------------------------------------------- settings


@dataclasses.dataclass(frozen=True, kw_only=True)
class InvertOptions:
    """Options of :func:`tauspec.spectrum.invert` used by the batch (TOML section ``[invert]``)."""

    strength: str | float = "auto"
    select: str = "lcurve"
    grid: int | None = None
    solvent: bool = True
    plateau: bool = False
    eta_s: float | None = None

    def kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :func:`tauspec.spectrum.invert`."""
        return dataclasses.asdict(self)


@dataclasses.dataclass(frozen=True, kw_only=True)
class ModesOptions:
    """Options of :func:`tauspec.modes.fit_modes` (TOML section ``[modes]``); ``run = false`` skips the step.

    ``solvent``, ``plateau`` and ``eta_s`` are those of ``[invert]``: one physical choice for every step.
    """

    run: bool = True
    n_modes: int | None = None
    alpha: float = 0.01
    per_decade: float = 2.0

    def kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :func:`tauspec.modes.fit_modes` (without ``run``)."""
        return {k: v for k, v in dataclasses.asdict(self).items() if k != "run"}


@dataclasses.dataclass(frozen=True, kw_only=True)
class DiagnoseOptions:
    """Options of :func:`tauspec.diagnosis.diagnose` (TOML section ``[diagnose]``); ``run = false`` skips it.

    ``solvent`` is that of ``[invert]``; the diagnosis uses the batch's spectrum.
    """

    run: bool = True
    intervals: bool = True
    use_spectrum: bool = True

    def kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :func:`tauspec.diagnosis.diagnose` (without ``run``)."""
        return {k: v for k, v in dataclasses.asdict(self).items() if k != "run"}


#: TOML section -> options class.
_SECTIONS: dict[str, type] = {"invert": InvertOptions, "modes": ModesOptions, "diagnose": DiagnoseOptions}


@dataclasses.dataclass(frozen=True, kw_only=True)
class Settings:
    """Everything that decides a batch result, passed explicitly to every worker.

    ``plots`` only decides whether figures are drawn; it is not part of
    :meth:`digest` (a rerun with ``plots`` draws the missing figures).
    """

    invert: InvertOptions = dataclasses.field(default_factory=InvertOptions)
    modes: ModesOptions = dataclasses.field(default_factory=ModesOptions)
    diagnose: DiagnoseOptions = dataclasses.field(default_factory=DiagnoseOptions)
    plots: bool = False

    @property
    def steps(self) -> tuple[str, ...]:
        """The pipeline steps these settings run, in order."""
        return ("read", "invert") + tuple(name for name in ("modes", "diagnose") if getattr(self, name).run)

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form: one object per section, and the pipeline steps."""
        d: dict[str, Any] = {name: dataclasses.asdict(getattr(self, name)) for name in _SECTIONS}
        d["steps"] = list(self.steps)
        return d

    def digest(self) -> str:
        """Return the sha256 of the settings, the steps and the tauspec version (the resume key)."""
        text = dumps_json({"settings": self.to_dict(), "tauspec": __version__})
        return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _check_value(section: str, key: str, value: Any, source: str) -> Any:
    where = f"[{section}] {key}"
    number = isinstance(value, int | float) and not isinstance(value, bool)
    if key in ("solvent", "plateau", "intervals", "use_spectrum", "run"):
        if not isinstance(value, bool):
            raise SettingsError(f"{where} must be true or false, not {value!r}", source)
    elif key == "strength":
        if not (value == "auto" or (number and value > 0 and math.isfinite(value))):
            raise SettingsError(f"{where} must be \"auto\" or a positive number, not {value!r}", source)
        value = value if value == "auto" else float(value)
    elif key == "select":
        if value not in ("lcurve", "gcv"):
            raise SettingsError(f"{where} must be \"lcurve\" or \"gcv\", not {value!r}", source)
    elif key == "grid":
        if not (isinstance(value, int) and not isinstance(value, bool) and 10 <= value <= 2000):
            raise SettingsError(f"{where} must be a whole number of τ points from 10 to 2000, not {value!r}", source)
    elif key == "n_modes":
        if not (isinstance(value, int) and not isinstance(value, bool) and 0 <= value <= 50):
            raise SettingsError(f"{where} must be a whole number of modes from 0 to 50, not {value!r}", source)
    elif key == "alpha":
        if not (number and 0 < value < 1):
            raise SettingsError(f"{where} must be a significance level between 0 and 1, not {value!r}", source)
        value = float(value)
    elif key == "per_decade":
        if not (number and 0 < value <= 10):
            raise SettingsError(f"{where} must be a number of modes per decade in (0, 10], not {value!r}", source)
        value = float(value)
    elif key == "eta_s":
        if not (number and value >= 0 and math.isfinite(value)):
            raise SettingsError(f"{where} must be a nonnegative viscosity in Pa·s, not {value!r}", source)
        value = float(value)
    return value


def settings_from_mapping(mapping: Mapping[str, Any], *, source: str = "<settings>",
                          plots: bool = False) -> Settings:
    """Build :class:`Settings` from a mapping of sections (as read from TOML); unknown keys are refused.

    Raises
    ------
    SettingsError
        For an unknown section or key, or a value of the wrong kind.
    """
    sections: dict[str, Any] = {}
    for name, table in mapping.items():
        if name not in _SECTIONS:
            raise SettingsError(f"unknown section or key {name!r}; known sections: "
                                f"{', '.join(f'[{s}]' for s in _SECTIONS)}", source)
        if not isinstance(table, Mapping):
            raise SettingsError(f"{name!r} must be a section [{name}] of keys", source)
        cls = _SECTIONS[name]
        known = [f.name for f in dataclasses.fields(cls)]
        unknown = sorted(set(table) - set(known))
        if unknown:
            raise SettingsError(f"unknown key {unknown[0]!r} in [{name}]; known keys: {', '.join(known)}", source)
        sections[name] = cls(**{k: _check_value(name, k, v, source) for k, v in table.items()})
    return Settings(plots=plots, **sections)


def load_settings(path: str | os.PathLike[str] | None, *, plots: bool = False) -> Settings:
    """Read a TOML settings file (sections ``[invert]`` ...); ``None`` gives the defaults."""
    if path is None:
        return Settings(plots=plots)
    if sys.version_info >= (3, 11):
        import tomllib
    else:  # pragma: no cover - Python 3.10
        import tomli as tomllib
    source = str(path)
    try:
        with open(path, "rb") as fh:
            mapping = tomllib.load(fh)
    except FileNotFoundError:
        raise SettingsError("no such settings file", source) from None
    except OSError as exc:
        raise SettingsError(f"settings file cannot be read ({exc.strerror or exc})", source) from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise SettingsError(f"not a valid TOML file ({exc})", source) from None
    return settings_from_mapping(mapping, source=source, plots=plots)


# --------------------------------------------------------------------------- inputs


@dataclasses.dataclass(frozen=True)
class Input:
    """One input file: where to read it, its name in the summary and its result folder under ``--out``."""

    path: Path
    file: str
    key: str


def _walk(folder: Path, exclude: Path) -> Iterator[Path]:
    for root, dirs, files in os.walk(folder):
        r = Path(root)
        dirs[:] = sorted(d for d in dirs if not d.startswith(".") and (r / d) != exclude)
        for f in sorted(files):
            if not f.startswith(".") and os.path.splitext(f)[1].lower() in SWEEP_SUFFIXES:
                yield r / f


def _read_manifest(path: Path) -> list[Path]:
    source = str(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise TauspecError(f"manifest cannot be read ({exc.strerror or exc})", source) from None
    except UnicodeDecodeError:
        raise TauspecError("manifest is not UTF-8 text", source) from None
    reader = csv.DictReader(io.StringIO(text))
    if not reader.fieldnames or "file" not in [f.strip() for f in reader.fieldnames]:
        raise TauspecError("manifest needs a header row with a 'file' column", source, 1)
    out = []
    for row in reader:
        row = {(k or "").strip(): (v or "").strip() for k, v in row.items()}
        if row["file"]:
            f = Path(row["file"])
            out.append(f if f.is_absolute() else path.parent / f)
    return out


def find_inputs(paths: Sequence[str | os.PathLike[str]], out: str | os.PathLike[str],
                manifest: str | os.PathLike[str] | None = None) -> list[Input]:
    """Return the input files, sorted by their path relative to the common folder of ``paths`` (and the manifest).

    Folders are searched recursively for files ending in :data:`SWEEP_SUFFIXES`
    (hidden files and folders, and the output folder, are left out); files
    named explicitly or in the ``file`` column of ``manifest`` are taken
    whatever their suffix.  A file's result folder is its relative path
    without the suffix, or with it when two inputs would share a folder.
    """
    out_abs = Path(os.path.abspath(out))
    found: list[Path] = []
    bases: list[str] = []
    for p in paths:
        a = Path(os.path.abspath(p))
        if a.is_dir():
            bases.append(str(a))
            found.extend(_walk(a, out_abs))
        elif a.exists():
            bases.append(str(a.parent))
            found.append(a)
        else:
            raise TauspecError("no such file or folder", str(p))
    if manifest is not None:
        bases.append(os.path.abspath(Path(manifest).parent))  # its entries are named relative to its folder
        for f in _read_manifest(Path(manifest)):
            a = Path(os.path.abspath(f))
            bases.append(str(a.parent))
            found.append(a)
    if not bases:
        raise TauspecError("no input given")
    root = os.path.commonpath(bases)
    by_file = {Path(os.path.relpath(f, root)).as_posix(): f for f in found}
    if not by_file:
        raise TauspecError(f"no sweep files ({' '.join(SWEEP_SUFFIXES)}) found", ", ".join(map(str, paths)))
    stems = Counter(os.path.splitext(f)[0] for f in by_file)
    inputs = []
    for file in sorted(by_file):
        stem = os.path.splitext(file)[0]
        inputs.append(Input(by_file[file], file, stem if stems[stem] == 1 else file))
    return inputs


# --------------------------------------------------------------------------- the pipeline step


@functools.lru_cache(maxsize=1)
def _blas_controller(pid: int) -> Any:  # noqa: ARG001 - one per process (a forked worker gets its own)
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


def _invert_step(sweep: Sweep, settings: Settings, state: dict[str, Any]) -> tuple[dict[str, Any], dict[str, str]]:
    from ..output.tables import spectrum_tables
    from ..spectrum.invert import invert

    spectrum = invert(sweep, **settings.invert.kwargs())
    state["spectrum"] = spectrum
    return {"spectrum": spectrum.to_dict()}, spectrum_tables(spectrum)


def _modes_step(sweep: Sweep, settings: Settings, state: dict[str, Any]) -> tuple[dict[str, Any], dict[str, str]]:
    from ..modes.fit import fit_modes
    from ..output.results import modes_entries
    from ..output.tables import modes_csv_text

    o = settings.invert
    modes = fit_modes(sweep, state["spectrum"], solvent=o.solvent, plateau=o.plateau, eta_s=o.eta_s,
                      **settings.modes.kwargs())
    return modes_entries(modes, state["spectrum"]), {"modes.csv": modes_csv_text(modes)}


def _diagnose_step(sweep: Sweep, settings: Settings, state: dict[str, Any]) -> tuple[dict[str, Any], dict[str, str]]:
    from ..analysis.diagnosis.diagnose import diagnose

    d = diagnose(sweep, spectrum=state["spectrum"], solvent=settings.invert.solvent, **settings.diagnose.kwargs())
    state["diagnosis"] = d
    return {"diagnosis": d.to_dict()}, {}


#: (name, step) in order; each step takes the sweep, the settings and the state of earlier steps and returns
#: (result entries, {file name: CSV text}).
_PIPELINE: tuple[tuple[str, Callable[..., tuple[dict[str, Any], dict[str, str]]]], ...] = (
    ("invert", _invert_step),
    ("modes", _modes_step),
    ("diagnose", _diagnose_step),
)


def _figures(state: Mapping[str, Any]) -> dict[str, bytes]:
    """PNG bytes of the spectrum's figures (and the diagnosis's), drawn into a scratch folder of the worker."""
    from ..output.figures.spectrum import save_spectrum_figures

    with tempfile.TemporaryDirectory(prefix="tauspec-fig-") as tmp:
        paths = save_spectrum_figures(state["spectrum"], tmp)
        if "diagnosis" in state:
            from ..output.figures.diagnosis import plot_diagnosis

            plot_diagnosis(state["diagnosis"], Path(tmp) / "diagnosis.png")
            paths.append(Path(tmp) / "diagnosis.png")
        return {p.name: p.read_bytes() for p in paths}


def process(sweep_or_text: Sweep | str, settings: Settings, *, source: str | None = None,
            input_sha256: str | None = None) -> dict[str, Any]:
    """Run the pipeline on one sweep: read, invert (then modes and diagnosis as they become available).

    The one function sent to the workers: top level, picklable, no global
    state.  BLAS (numpy's and scipy's OpenBLAS alike) is limited to one thread
    while it runs.  Errors in the data do not raise: they come back as
    ``status="error"`` with the one-line reason.

    Parameters
    ----------
    sweep_or_text : Sweep or str
        A sweep, or the text of a sweep file (see :func:`tauspec.io.parse_sweep_text`).
    settings : Settings
    source : str, optional
        The name of the file, used in messages and results.
    input_sha256 : str, optional
        The sha256 of the file's bytes, recorded in the result (the resume key).

    Returns
    -------
    dict
        ``result`` (JSON-ready; identical for identical input and settings),
        ``files`` (name → text or bytes to write into the result folder, ``result.json``
        among them, serialized here so that the workers do that work) and ``seconds``
        (time per step; kept out of ``result``).
    """
    if isinstance(sweep_or_text, Sweep):
        source = source or sweep_or_text.source or sweep_or_text.name
    source = source or "<text>"
    result = _header(source, input_sha256, settings)
    files: dict[str, str | bytes] = {}
    seconds: dict[str, float] = {}
    caught: list[warnings.WarningMessage] = []
    t = time.perf_counter()
    try:
        with _blas_controller(os.getpid()).limit(limits=1), warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            if isinstance(sweep_or_text, Sweep):
                sweep = sweep_or_text
            else:
                sweep = parse_sweep_text(sweep_or_text, source=source,
                                         default_name=os.path.splitext(os.path.basename(source))[0])
            result["sample"] = sweep.name
            seconds["read"] = time.perf_counter() - t
            state: dict[str, Any] = {}
            for name, step in _PIPELINE:
                if name not in settings.steps:
                    continue
                t = time.perf_counter()
                entries, tables = step(sweep, settings, state)
                result.update(entries)
                files.update(tables)
                seconds[name] = time.perf_counter() - t
            if settings.plots:
                t = time.perf_counter()
                files.update(_figures(state))
                seconds["plots"] = time.perf_counter() - t
    except TauspecError as exc:
        if exc.source is None:
            exc = type(exc)(exc.reason, source, exc.line)
        result.update(status="error", error=exc.one_line())
    except Exception as exc:  # a bug: recorded for this file, retried on the next run
        result.update(status="error", error=f"{source}: internal error: {type(exc).__name__}: {exc}", retry=True)
    notes = list(dict.fromkeys(f"{w.category.__name__}: {w.message}" for w in caught))
    result["notes"] = notes
    t = time.perf_counter()
    result["tables"] = {name: _sha256(text.encode("utf-8")) for name, text in sorted(files.items())
                        if name.endswith(".csv")}
    files["result.json"] = dumps_json(result) + "\n"
    seconds["json"] = time.perf_counter() - t
    return {"result": result, "files": files, "seconds": seconds}


def _header(file: str, input_sha: str | None, settings: Settings, status: str = "ok", error: str | None = None,
            retry: bool = False) -> dict[str, Any]:
    return {"schema": SCHEMA, "file": file, "status": status, "error": error, "retry": retry,
            "input_sha256": input_sha, "settings_sha256": settings.digest()}


# --------------------------------------------------------------------------- storing results


def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _load_json(path: Path) -> dict[str, Any] | None:
    try:
        d = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return d if isinstance(d, dict) else None


def _is_current(folder: Path, input_sha: str, settings_sha: str, plots: bool) -> bool:
    d = _load_json(folder / "result.json")
    if not d or d.get("schema") != SCHEMA or d.get("retry"):
        return False
    if d.get("input_sha256") != input_sha or d.get("settings_sha256") != settings_sha:
        return False
    for name, sha in (d.get("tables") or {}).items():  # written without fsync: check they survived
        try:
            if _sha256((folder / name).read_bytes()) != sha:
                return False
        except OSError:
            return False
    return not (plots and d.get("status") == "ok" and not all((folder / f).exists() for f in FIGURES))


def _store(out: Path, inp: Input, files: Mapping[str, str | bytes]) -> None:
    """Write one result folder; ``result.json`` last, so its presence means the folder is complete.

    Every file is written atomically; only ``result.json`` is flushed to the disk (fsync): it records the
    sha256 of the tables, which the resume check verifies, so a table lost in a crash of the machine is
    recomputed rather than trusted (one fsync per file instead of three).
    """
    folder = out / inp.key
    folder.mkdir(parents=True, exist_ok=True)
    for name in RESULT_FILES:
        if name not in files and (folder / name).exists():
            (folder / name).unlink()
    for name, content in sorted(files.items(), key=lambda item: item[0] == "result.json"):
        data = content if isinstance(content, bytes) else content.encode("utf-8")
        atomic_write_bytes(folder / name, data, fsync=name == "result.json")


def _error_files(inp: Input, message: str, input_sha: str | None, settings: Settings, retry: bool) -> dict[str, str]:
    result = _header(inp.file, input_sha, settings, "error", message, retry)
    result["notes"] = []
    return {"result.json": dumps_json(result) + "\n"}


# --------------------------------------------------------------------------- the summary


def _num(v: Any) -> str:
    if isinstance(v, bool) or v is None:
        return ""
    if isinstance(v, int | float):
        return repr(float(v)) if math.isfinite(v) else ""
    return str(v)


def summary_row(result: Mapping[str, Any] | None, file: str) -> dict[str, str]:
    """One row of ``summary.csv`` from a stored result (blank where a step is not available)."""
    if result is None:
        return {**dict.fromkeys(SUMMARY_COLUMNS, ""), "file": file, "status": "error",
                "error": f"{file}: no result stored (run the batch again)"}
    spectrum = result.get("spectrum") or {}
    diagnosis = result.get("diagnosis") or {}
    derived = result.get("derived") or {}
    modes = result.get("modes") or {}
    warn = list(result.get("notes") or [])  # every warning of every step (the spectrum's are among them)
    row = {
        "file": file,
        "status": str(result.get("status", "error")),
        "sample": str(result.get("sample") or ""),
        "verdict": str(diagnosis.get("verdict") or ""),
        "tau_R": _num(diagnosis.get("tau_R")),
        "G0": _num(diagnosis.get("G0")),
        "alpha": _num(diagnosis.get("alpha")),
        "eta0": _num(derived.get("eta0")),
        "lambda": _num(spectrum.get("lambda")),
        "eta_s": _num(spectrum.get("eta_s")),
        "residual_rms": _num(spectrum.get("residual_rms")),
        "n_modes": str(len(modes["g"])) if "g" in modes else "",
        "warnings": str(len(warn)) if result.get("status") == "ok" else "",
        "error": str(result.get("error") or ""),
    }
    return row


def write_summary(out: str | os.PathLike[str], inputs: Iterable[Input]) -> Path:
    """Rebuild ``summary.csv`` from the stored results, one row per input, in the order given (sorted).

    Results are read one at a time; only the rows are kept.
    """
    out = Path(out)
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=SUMMARY_COLUMNS, lineterminator="\n")
    writer.writeheader()
    for inp in inputs:
        writer.writerow(summary_row(_load_json(out / inp.key / "result.json"), inp.file))
    path = out / "summary.csv"
    atomic_write_text(path, buf.getvalue())
    return path


def read_summary(out: str | os.PathLike[str]) -> list[dict[str, str]]:
    """Read ``summary.csv`` back as a list of rows."""
    with open(Path(out) / "summary.csv", encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def _g(text: str, fmt: str = ".3g") -> str:
    return format(float(text), fmt) if text else "–"


def summary_table(rows: Sequence[Mapping[str, str]]) -> str:
    """Return the summary rows as a plain-text table (errors with their reason)."""
    width = max([len(r["file"]) for r in rows] + [4])
    head = (f"{'file':{width}s}  {'status':6s}  {'verdict':12s}  {'tau_R [s]':>9s}  {'G0 [Pa]':>9s}  "
            f"{'alpha':>6s}  {'eta0 [Pa·s]':>11s}  {'λ':>8s}  {'rms':>6s}")
    lines = [head, "-" * len(head)]
    for r in rows:
        if r["status"] != "ok":
            lines.append(f"{r['file']:{width}s}  {r['status']:6s}  {r['error']}")
            continue
        rms = f"{float(r['residual_rms']):.2%}" if r["residual_rms"] else "–"
        lines.append(f"{r['file']:{width}s}  {r['status']:6s}  {r['verdict'] or '–':12s}  {_g(r['tau_R']):>9s}  "
                     f"{_g(r['G0']):>9s}  {_g(r['alpha'], '.3f'):>6s}  {_g(r['eta0']):>11s}  "
                     f"{_g(r['lambda']):>8s}  {rms:>6s}")
    return "\n".join(lines)


# --------------------------------------------------------------------------- running


@dataclasses.dataclass(frozen=True, kw_only=True)
class BatchReport:
    """What one batch run did."""

    out: Path
    inputs: int
    ok: int
    failed: int
    computed: int
    skipped: int
    worker_deaths: int
    seconds: float

    @property
    def status(self) -> int:
        """Exit status: 0 when every file succeeded, 1 when any failed."""
        return 0 if self.failed == 0 else 1

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form."""
        d = {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}
        d["out"] = str(self.out)
        d["status"] = self.status
        return d


@dataclasses.dataclass
class _Task:
    inp: Input
    text: str
    input_sha: str


def _versions(backend: str) -> dict[str, str]:
    from importlib import metadata

    names = ["numpy", "scipy", "cvxpy", "clarabel", "matplotlib", "joblib", "threadpoolctl"]
    if backend == "dask":
        names += ["dask", "distributed"]
    out = {"tauspec": __version__, "python": platform.python_version()}
    for n in names:
        try:
            out[n] = metadata.version(n)
        except metadata.PackageNotFoundError:
            out[n] = ""
    return out


def _worker_death_errors(backend: str) -> tuple[type[BaseException], ...]:
    from concurrent.futures.process import BrokenProcessPool  # loky's TerminatedWorkerError is one

    errors: list[type[BaseException]] = [BrokenProcessPool]
    if backend == "dask":  # importing distributed costs seconds: only when it is used
        with contextlib.suppress(ImportError):
            from distributed import KilledWorker

            errors.append(KilledWorker)
    return tuple(errors)


@contextlib.contextmanager
def _parallel(backend: str, jobs: int, scheduler: str | None) -> Iterator[dict[str, Any]]:
    """Yield the keyword arguments of :class:`joblib.Parallel` for the chosen backend."""
    if backend == "loky":
        yield {"n_jobs": jobs, "backend": "loky"}
        return
    try:
        import joblib
        from distributed import Client, LocalCluster
    except ImportError:
        raise SettingsError("--backend dask needs dask.distributed: pip install 'tauspec[cluster]'") from None
    cluster = None
    try:
        if scheduler:
            try:
                client = Client(scheduler, timeout=20)
            except (OSError, TimeoutError, ValueError) as exc:
                raise SettingsError(f"cannot reach the Dask scheduler at {scheduler} ({exc})") from None
        else:
            cluster = LocalCluster(n_workers=jobs, threads_per_worker=1, processes=True, host="127.0.0.1",
                                   dashboard_address=None)
            client = Client(cluster)
        try:
            with joblib.parallel_config(backend="dask"):
                yield {"n_jobs": -1}
        finally:
            client.close()
    finally:
        if cluster is not None:
            cluster.close()


def _read_input(inp: Input) -> tuple[bytes | None, str | None, str | None]:
    """Return (bytes, text, error) for one input; the client reads every file itself, with the reader's caps."""
    try:
        raw = read_capped_bytes(inp.path, inp.file)
    except SweepError as exc:
        return None, None, exc.one_line()
    try:
        return raw, decode_text(raw, inp.file), None
    except SweepError as exc:
        return raw, None, exc.one_line()


def run_batch(
    paths: Sequence[str | os.PathLike[str]],
    out: str | os.PathLike[str],
    *,
    settings: Settings | None = None,
    jobs: int = 1,
    backend: str = "loky",
    scheduler: str | None = None,
    manifest: str | os.PathLike[str] | None = None,
    force: bool = False,
    progress: bool = False,
    step: Callable[..., dict[str, Any]] = process,
) -> BatchReport:
    """Process every sweep file under ``paths`` into ``out``; skip current results; rebuild the summary.

    Parameters
    ----------
    paths : sequence of path-like
        Folders (searched recursively, see :func:`find_inputs`) and files.
    out : path-like
        The output folder (see docs/batch.md for its layout).
    settings : Settings, optional
    jobs : int
        Worker processes (loky) or local Dask workers; 1 runs in this process.
    backend : {"loky", "dask"}
    scheduler : str, optional
        Address of a Dask scheduler (``tcp://HOST:PORT``); without it ``backend="dask"`` starts a local cluster.
    manifest : path-like, optional
        A CSV file whose ``file`` column lists more inputs (relative to the manifest's folder).
    force : bool
        Recompute every file, current or not.
    progress : bool
        Show a progress bar (tqdm) on stderr.
    step : callable
        The pipeline step (default :func:`process`); same signature.

    Returns
    -------
    BatchReport
    """
    settings = settings or Settings()
    if not isinstance(jobs, int) or jobs < 1:
        raise SettingsError(f"--jobs must be a positive whole number, not {jobs!r}")
    if backend not in ("loky", "dask"):
        raise SettingsError(f"backend must be 'loky' or 'dask', not {backend!r}")
    if scheduler and backend != "dask":
        raise SettingsError("--scheduler needs --backend dask")
    out = Path(out)
    started = time.time()
    t0 = time.perf_counter()
    inputs = find_inputs(paths, out, manifest)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise _not_written(exc, out, 0, len(inputs)) from exc
    settings_sha = settings.digest()
    counts: Counter[str] = Counter()
    step_seconds: Counter[str] = Counter()

    bar = None
    if progress:
        from tqdm import tqdm

        bar = tqdm(total=len(inputs), unit="sweep", file=sys.stderr, leave=False)

    def done() -> None:
        counts["computed"] += 1
        if bar is not None:
            bar.update(1)

    def tasks() -> Iterator[_Task]:
        for inp in inputs:
            raw, text, error = _read_input(inp)
            sha = None if raw is None else _sha256(raw)
            if sha is not None and not force and _is_current(out / inp.key, sha, settings_sha, settings.plots):
                counts["skipped"] += 1
                if bar is not None:
                    bar.update(1)
                continue
            if error is not None or text is None:
                _store(out, inp, _error_files(inp, error or "", sha, settings, sha is None))
                done()
                continue
            yield _Task(inp, text, sha)

    def finish(task: _Task, res: dict[str, Any]) -> None:
        step_seconds.update(res.get("seconds", {}))
        _store(out, task.inp, res["files"])
        done()

    deaths = _worker_death_errors(backend)
    try:
        with _parallel(backend, jobs, scheduler) as kw:
            from joblib import Parallel, delayed

            queue = tasks()
            pending: dict[str, _Task] = {}

            def feed() -> Iterator[Any]:
                for task in queue:
                    pending[task.inp.file] = task
                    yield delayed(step)(task.text, settings, source=task.inp.file, input_sha256=task.input_sha)

            while True:
                try:
                    for res in Parallel(return_as="generator_unordered", **kw)(feed()):
                        finish(pending.pop(res["result"]["file"]), res)
                    break
                except deaths:
                    # a worker died: the files in flight are suspects; run each alone, then go on with the rest
                    counts["worker_deaths"] += 1
                    suspects = [pending.pop(f) for f in sorted(pending)]
                    for task in suspects:
                        try:
                            res = Parallel(**kw)([delayed(step)(task.text, settings, source=task.inp.file,
                                                                input_sha256=task.input_sha)])[0]
                        except deaths:
                            message = f"{task.inp.file}: {WORKER_DIED}"
                            res = {"files": _error_files(task.inp, message, task.input_sha, settings, True)}
                        finish(task, res)
    except OSError as exc:  # disk full, read-only folder ...: the finished results are whole (atomic writes)
        raise _not_written(exc, out, counts["computed"] + counts["skipped"], len(inputs)) from exc
    finally:
        if bar is not None:
            bar.close()

    try:
        summary = write_summary(out, inputs)
    except OSError as exc:
        raise _not_written(exc, out, len(inputs), len(inputs)) from exc
    ok = failed = 0
    with open(summary, encoding="utf-8", newline="") as fh:
        for row in csv.DictReader(fh):
            ok += row["status"] == "ok"
            failed += row["status"] != "ok"
    report = BatchReport(out=out, inputs=len(inputs), ok=ok, failed=failed, computed=counts["computed"],
                         skipped=counts["skipped"], worker_deaths=counts["worker_deaths"],
                         seconds=time.perf_counter() - t0)
    run = {
        "schema": SCHEMA,
        "paths": [str(p) for p in paths],
        "manifest": None if manifest is None else str(manifest),
        "out": str(out),
        "settings": settings.to_dict(),
        "plots": settings.plots,
        "settings_sha256": settings_sha,
        "backend": backend,
        "jobs": jobs,
        "scheduler": scheduler,
        "force": force,
        "versions": _versions(backend),
        "counts": {k: v for k, v in report.to_dict().items() if k in
                   ("inputs", "ok", "failed", "computed", "skipped", "worker_deaths")},
        "timings": {"started_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(started)),
                    "wall_s": report.seconds,
                    "worker_s": dict(sorted(step_seconds.items()))},
        "status": report.status,
    }
    try:
        atomic_write_text(out / "run.json", dumps_json(run, indent=1) + "\n")
    except OSError as exc:
        raise _not_written(exc, out, len(inputs), len(inputs)) from exc
    return report


def _not_written(exc: OSError, out: Path, done: int, total: int) -> TauspecError:
    """The one-line error for a write that failed: which file, why, and what is left to do."""
    where = exc.filename or out
    left = f"{total - done} of {total} files not done" if done < total else "the summary not written"
    return TauspecError(f"cannot write ({exc.strerror or exc}); {done} of {total} files finished and kept, {left}; "
                        "free space or make the folder writable and run again to complete the rest", str(where))
