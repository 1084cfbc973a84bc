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
import os
import platform
import sys
import time
import warnings
from collections import Counter
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any

from .._version import __version__
from ..data.encodings import decode
from ..data.read import count_blocks
from ..data.record import record
from ..data.source import read_bytes
from ..data.write import atomic_write_text, dumps_json
from ..errors import SettingsError, SweepError, TauspecError
from .inputs import Input, find_inputs
from .pipeline import process
from .settings import BatchSettings
from .store import SCHEMA, _error_files, _is_current, _sha256, _store
from .summary import write_summary

__all__ = ["WORKER_DIED", "BatchReport", "run_batch"]


WORKER_DIED = "the worker process died while processing this file (killed, or out of memory)"


# --------------------------------------------------------------------------- running


@record
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

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        d["status"] = self.status
        return d

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        d.pop("status", None)
        return d


@dataclasses.dataclass
class _Task:
    inp: Input
    text: str
    input_sha: str
    notes: tuple[str, ...] = ()

    def run(self, step: Callable[..., dict[str, Any]], settings: BatchSettings) -> Any:
        """The delayed call of the pipeline step on this task."""
        from joblib import delayed

        return delayed(step)(self.text, settings, source=self.inp.file, input_sha256=self.input_sha,
                             block=self.inp.block, notes=self.notes)


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


def _read_input(inp: Input) -> tuple[bytes | None, str | None, str | None, tuple[str, ...]]:
    """Return (bytes, text, error, notes) for one input; the client reads every file itself, with the reader's caps.

    ``notes`` are the reader's warnings (an encoding guessed), recorded in the file's results by the worker.
    """
    try:
        raw = read_bytes(inp.path, inp.file)
    except SweepError as exc:
        return None, None, exc.one_line(), ()
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            text = decode(raw, inp.file)
    except SweepError as exc:
        return raw, None, exc.one_line(), ()
    return raw, text, None, tuple(f"{w.category.__name__}: {w.message}" for w in caught)


def _block_inputs(inp: Input, text: str | None) -> list[Input]:
    """One input per block of a file holding several; a file the reader cannot lay out stays one (its error)."""
    if text is None:
        return [inp]
    try:
        return inp.blocks(count_blocks(text, source=inp.file))
    except SweepError:
        return [inp]


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
) -> BatchReport:
    """Process every sweep file under ``paths`` into ``out``; skip current results; rebuild the summary.

    Parameters
    ----------
    paths : sequence of path-like
        Folders (searched recursively, see :func:`find_inputs`) and files.
    out : path-like
        The output folder (see docs/batch.md for its layout).
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
        The pipeline step (default :func:`process`); same signature.

    Returns
    -------
    BatchReport
    """
    settings = settings or BatchSettings()
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

    samples: list[Input] = []  # the inputs, a file of several blocks as one input per block

    def tasks() -> Iterator[_Task]:
        for file_input in inputs:
            raw, text, error, notes = _read_input(file_input)
            sha = None if raw is None else _sha256(raw)
            parts = _block_inputs(file_input, text)
            samples.extend(parts)
            if bar is not None and len(parts) > 1:
                bar.total += len(parts) - 1
            for inp in parts:
                if sha is not None and not force and _is_current(out / inp.key, sha, settings_sha, settings.plots):
                    counts["skipped"] += 1
                    if bar is not None:
                        bar.update(1)
                    continue
                if error is not None or text is None:
                    _store(out, inp, _error_files(inp, error or "", sha, settings, sha is None))
                    done()
                    continue
                yield _Task(inp, text, sha, notes)

    def finish(task: _Task, res: dict[str, Any]) -> None:
        step_seconds.update(res.get("seconds", {}))
        _store(out, task.inp, res["files"])
        done()

    deaths = _worker_death_errors(backend)
    try:
        with _parallel(backend, jobs, scheduler) as kw:
            from joblib import Parallel

            queue = tasks()
            pending: dict[str, _Task] = {}

            def feed() -> Iterator[Any]:
                for task in queue:
                    pending[task.inp.file] = task
                    yield task.run(step, settings)

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
                            res = Parallel(**kw)([task.run(step, settings)])[0]
                        except deaths:
                            message = f"{task.inp.file}: {WORKER_DIED}"
                            res = {"files": _error_files(task.inp, message, task.input_sha, settings, True)}
                        finish(task, res)
    except OSError as exc:  # disk full, read-only folder ...: the finished results are whole (atomic writes)
        raise _not_written(exc, out, counts["computed"] + counts["skipped"], max(len(samples), len(inputs))) from exc
    finally:
        if bar is not None:
            bar.close()

    try:
        summary = write_summary(out, samples)
    except OSError as exc:
        raise _not_written(exc, out, len(samples), len(samples)) from exc
    ok = failed = 0
    with open(summary, encoding="utf-8", newline="") as fh:
        for row in csv.DictReader(fh):
            ok += row["status"] == "ok"
            failed += row["status"] != "ok"
    report = BatchReport(out=out, inputs=len(samples), ok=ok, failed=failed, computed=counts["computed"],
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
        raise _not_written(exc, out, len(samples), len(samples)) from exc
    return report


def _not_written(exc: OSError, out: Path, done: int, total: int) -> TauspecError:
    """The one-line error for a write that failed: which file, why, and what is left to do."""
    where = exc.filename or out
    left = f"{total - done} of {total} files not done" if done < total else "the summary not written"
    return TauspecError(f"cannot write ({exc.strerror or exc}); {done} of {total} files finished and kept, {left}; "
                        "free space or make the folder writable and run again to complete the rest", str(where))
