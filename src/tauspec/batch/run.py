"""Parallel, resumable reprocessing of archives of sweep files.

One pipeline step, :func:`~tauspec.batch.pipeline.process`, turns the text of one sweep file into a JSON-ready
result (read → invert → discrete modes → diagnosis).  :func:`run_batch` goes through the steps of a run:

1. find the inputs (:mod:`~tauspec.batch.inputs`: inputs are inputs, never results or special files);
2. take the output folder's lock (:mod:`~tauspec.batch.lock`: one run per folder);
3. plan the layout (:mod:`~tauspec.batch.layout`: one folder per input, collisions refused before any work)
   and remove the temporary files an interrupted run left;
4. read each file, skip those whose stored result is current, send the rest to the workers
   (:mod:`~tauspec.batch.execute`: loky or Dask) and store each result as it arrives;
5. rebuild ``summary.csv``, the index and ``run.json`` from the stored results.

See docs/batch.md for the output layout, the resume rule, fault handling and exit codes.
"""

from __future__ import annotations

import os
import platform
import sys
import time
from collections import Counter
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any

from .._version import __version__
from ..data.record import field, record
from ..data.write import atomic_write_text, dumps_json
from ..errors import SettingsError, TauspecError
from ..output.results import write_run_index
from .execute import WORKER_DIED, Task, run_tasks
from .inputs import Found, Input, block_inputs, discover, read_input
from .layout import make_folders, plan_refusals
from .lock import run_lock
from .pipeline import process
from .settings import BatchSettings
from .store import (
    LEFT_OUT,
    SCHEMA,
    _is_current,
    _load_json,
    _sha256,
    _store,
    error_files,
    remove_temporary_files,
    stored_owner,
)
from .summary import summary_rows, write_summary

__all__ = ["WORKER_DIED", "BatchReport", "run_batch"]


@record
class BatchReport:
    """What one batch run did (``refused``: inputs refused by the layout; ``notes``: what the walk left out)."""

    out: Path
    inputs: int
    ok: int
    failed: int
    computed: int
    skipped: int
    worker_deaths: int
    seconds: float
    refused: int = 0
    notes: tuple[str, ...] = field(default=())
    #: blocks that are amplitude, time or temperature sweeps beside frequency sweeps (neither ok nor failed)
    left_out: int = 0

    @property
    def status(self) -> int:
        """Exit status: 0 when every file succeeded, 1 when any failed."""
        return 0 if self.failed == 0 else 1

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        d["status"] = self.status
        return d

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        d.pop("status", None)
        if "notes" in d:
            d["notes"] = tuple(d["notes"])
        return d


def _versions(backend: str) -> dict[str, str]:
    from importlib import metadata

    names = ["numpy", "scipy", "cvxpy", "clarabel", "matplotlib", "joblib", "threadpoolctl", "filelock", "tqdm"]
    if backend == "dask":
        names += ["dask", "distributed"]
    out = {"tauspec": __version__, "python": platform.python_version()}
    for n in names:
        try:
            out[n] = metadata.version(n)
        except metadata.PackageNotFoundError:
            out[n] = ""
    return out


class _Run:
    """The state of one run inside the lock: counts, refusals, notes, the progress bar."""

    def __init__(self, out: Path, found: Found, settings: BatchSettings, force: bool, progress: bool) -> None:
        self.out, self.inputs, self.settings, self.force = out, found.inputs, settings, force
        self.notes = list(found.notes)
        self.counts: Counter[str] = Counter()
        self.seconds: Counter[str] = Counter()
        self.refused: dict[str, str] = {}
        self.samples: dict[str, list[Input]] = {}  # a file of several blocks is one input per block
        self.bar = None
        if progress:
            from tqdm import tqdm

            self.bar = tqdm(total=len(self.inputs), unit="sweep", file=sys.stderr, leave=False)

    def tick(self) -> None:
        if self.bar is not None:
            self.bar.update(1)

    def refuse(self, file: str, reason: str) -> None:
        self.refused[file] = reason
        self.tick()

    def plan(self) -> list[Input]:
        """Refuse what the layout cannot hold; remove leftovers of interrupted writes; the inputs to read."""
        keys = {i.file: i.key for i in self.inputs if i.refusal is None}
        for file, reason in plan_refusals(self.out, keys).items():
            self.refuse(file, reason)
        folders = [self.out, *(self.out / k for f, k in keys.items() if f not in self.refused)]
        removed = remove_temporary_files(folders)
        if removed:
            self.notes.append(f"removed {removed} temporary file{'s' * (removed > 1)} left by an interrupted run")
        return [i for i in self.inputs if i.file not in self.refused]

    def tasks(self, inputs: Sequence[Input]) -> Iterator[Task]:
        """Read each input (lazily, as the workers take them); store errors; skip current results."""
        for file_input in inputs:
            raw, text, error, notes = read_input(file_input)
            sha = None if raw is None else _sha256(raw)
            parts = self.samples[file_input.file] = block_inputs(file_input, text)
            if self.bar is not None and len(parts) > 1:
                self.bar.total += len(parts) - 1
            for inp in parts:
                folder = self.out / inp.key
                stored = _load_json(folder / "result.json")
                owner = stored_owner(folder, stored, inp.file)
                if owner is not None:
                    self.refuse(inp.file, owner)
                elif sha is not None and not self.force and _is_current(folder, sha, self.settings, stored):
                    self.counts["skipped"] += 1
                    self.tick()
                elif error is not None or text is None:
                    self.store(inp, error_files(inp.file, error or "", sha, self.settings, sha is None))
                else:
                    yield Task(inp, text, sha, notes)

    def rows_inputs(self) -> list[Input]:
        """The inputs of the summary in order: a file of several blocks as one input per block."""
        return [part for inp in self.inputs for part in self.samples.get(inp.file, [inp])]

    def store(self, inp: Input, files: dict[str, str | bytes]) -> None:
        _store(self.out, inp, files)
        self.counts["computed"] += 1
        self.tick()

    def finish(self, task: Task, res: dict[str, Any]) -> None:
        self.seconds.update(res.get("seconds", {}))
        self.store(task.inp, res["files"])

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


def _check_arguments(jobs: int, backend: str, scheduler: str | None) -> None:
    if not isinstance(jobs, int) or isinstance(jobs, bool) or jobs < 1:
        raise SettingsError(f"--jobs must be a positive whole number, not {jobs!r}")
    if backend not in ("loky", "dask"):
        raise SettingsError(f"backend must be 'loky' or 'dask', not {backend!r}")
    if scheduler and backend != "dask":
        raise SettingsError("--scheduler needs --backend dask")


def run_batch(
    paths: Sequence[str | os.PathLike[str]],
    out: str | os.PathLike[str],
    *,
    settings: BatchSettings | None = None,
    jobs: int = 1,
    backend: str = "loky",
    scheduler: str | None = None,
    manifest: str | os.PathLike[str] | None = None,
    force: bool = False,
    progress: bool = False,
    step: Callable[..., dict[str, Any]] = process,
    exclude: Sequence[str | os.PathLike[str]] = (),
) -> BatchReport:
    """Process every sweep file under ``paths`` into ``out``; skip current results; rebuild the summary.

    Parameters
    ----------
    paths : sequence of path-like
        Folders (searched recursively, see :func:`~tauspec.batch.inputs.discover`) and files.
    out : path-like
        The output folder (see docs/batch.md for its layout).  One run at a time: a second run into the same
        folder is refused while the first holds its lock.
    settings : BatchSettings, optional
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
        The pipeline step (default :func:`~tauspec.batch.pipeline.process`); same signature.
    exclude : sequence of path-like
        Files never taken as inputs (the settings file of the command line).

    Returns
    -------
    BatchReport
    """
    settings = settings or BatchSettings()
    _check_arguments(jobs, backend, scheduler)
    out = Path(out)
    if os.path.lexists(out) and not out.is_dir():
        raise TauspecError("the output folder is a file (or a link to none), not a folder", str(out))
    started, t0 = time.time(), time.perf_counter()
    found = discover(paths, out, manifest, exclude)
    try:
        make_folders(out)
    except OSError as exc:
        raise _not_written(exc, out, 0, len(found.inputs)) from exc
    with run_lock(out):
        run = _Run(out, found, settings, force, progress)
        try:
            todo = run.plan()
            deaths = run_tasks(run.tasks(todo), run.finish, settings=settings, step=step, backend=backend,
                               jobs=jobs, scheduler=scheduler)
        except OSError as exc:  # disk full, read-only folder ...: the finished results are whole (atomic writes)
            done = run.counts["computed"] + run.counts["skipped"]
            raise _not_written(exc, out, done, len(found.inputs)) from exc
        finally:
            run.close()
        run.counts["worker_deaths"] = deaths
        try:
            return _finish(run, t0, started, {"paths": [str(p) for p in paths],
                                               "manifest": None if manifest is None else str(manifest),
                                               "backend": backend, "jobs": jobs, "scheduler": scheduler,
                                               "force": force})
        except OSError as exc:
            raise _not_written(exc, out, len(found.inputs), len(found.inputs)) from exc


def _finish(run: _Run, t0: float, started: float, arguments: dict[str, Any]) -> BatchReport:
    """Write summary.csv, the index and run.json from the stored results; return the report."""
    out, settings = run.out, run.settings
    inputs = run.rows_inputs()
    rows = summary_rows(out, inputs, run.refused)
    write_summary(out, rows)
    write_run_index(out, ({"file": inp.file, "folder": None if inp.file in run.refused else inp.key,
                           "status": row["status"]} for inp, row in zip(inputs, rows)), run.notes)
    ok = sum(row["status"] == "ok" for row in rows)
    left_out = sum(row["status"] == LEFT_OUT for row in rows)
    report = BatchReport(out=out, inputs=len(rows), ok=ok, failed=len(rows) - ok - left_out,
                         computed=run.counts["computed"], skipped=run.counts["skipped"],
                         worker_deaths=run.counts["worker_deaths"], seconds=time.perf_counter() - t0,
                         refused=len(run.refused), notes=tuple(run.notes), left_out=left_out)
    counts = ("inputs", "ok", "failed", "left_out", "computed", "skipped", "worker_deaths", "refused")
    record_ = {
        "schema": SCHEMA,
        "paths": arguments["paths"],
        "manifest": arguments["manifest"],
        "out": str(out),
        "settings": settings.to_dict(),
        "plots": settings.plots,
        "time_limit": settings.time_limit,
        "settings_sha256": settings.digest(),
        **{k: arguments[k] for k in ("backend", "jobs", "scheduler", "force")},
        "versions": _versions(arguments["backend"]),
        "counts": {k: v for k, v in report.to_dict().items() if k in counts},
        "notes": list(run.notes),
        "timings": {"started_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(started)),
                    "wall_s": report.seconds,
                    "worker_s": dict(sorted(run.seconds.items()))},
        "status": report.status,
    }
    atomic_write_text(out / "run.json", dumps_json(record_, indent=1) + "\n")
    return report


def _not_written(exc: OSError, out: Path, done: int, total: int) -> TauspecError:
    """The one-line error for a write that failed: which file, why, and what is left to do."""
    where = exc.filename or out
    left = f"{total - done} of {total} files not done" if done < total else "the summary not written"
    return TauspecError(f"cannot write ({exc.strerror or exc}); {done} of {total} files finished and kept, {left}; "
                        "free space or make the folder writable and run again to complete the rest", str(where))
