"""Running the tasks of a batch on workers: loky processes (through joblib) or a Dask cluster.

Both drivers take the tasks lazily, keep a bounded number in flight, hand each result to ``finish`` as it
completes (in any order) and survive a file that kills its worker: the files that were in flight when a worker
died are run again one at a time, alone, and a file that kills its worker alone becomes an error row
(``retry: true``), while the rest of the archive completes.
"""

from __future__ import annotations

import contextlib
import dataclasses
import logging
import os
from collections.abc import Callable, Iterable, Iterator
from typing import Any

from ..errors import SettingsError
from .inputs import Input
from .settings import BatchSettings
from .store import error_files
from .worker import Client, client_identity, run_step

__all__ = ["WORKER_DIED", "Task", "run_tasks"]


WORKER_DIED = ("the worker process died while processing this file (killed, out of memory, or stuck past the "
               "time limit)")


@dataclasses.dataclass
class Task:
    """One sweep to process: its input (a file, or a block of one) and the file's text, sha256 and notes."""

    inp: Input
    text: str
    input_sha: str
    notes: tuple[str, ...] = ()


#: finish(task, step output) stores one result.
Finish = Callable[[Task, dict[str, Any]], None]


def _died(task: Task, settings: BatchSettings) -> dict[str, Any]:
    message = f"{task.inp.file}: {WORKER_DIED}"
    return {"files": error_files(task.inp.file, message, task.input_sha, settings, True)}


def _failed(task: Task, settings: BatchSettings, exc: BaseException) -> dict[str, Any]:
    message = f"{task.inp.file}: the Dask cluster failed on this file ({type(exc).__name__}: {exc})"
    return {"files": error_files(task.inp.file, message, task.input_sha, settings, True)}


def _arguments(task: Task, step: Callable[..., Any], settings: BatchSettings,
               client: Client) -> tuple[tuple[Any, ...], dict[str, Any]]:
    return (step, task.text, settings), {"source": task.inp.file, "input_sha256": task.input_sha, "client": client,
                                         "block": task.inp.block, "separator": task.inp.separator,
                                         "notes": task.notes}


def run_tasks(tasks: Iterable[Task], finish: Finish, *, settings: BatchSettings, step: Callable[..., Any],
              backend: str, jobs: int, scheduler: str | None) -> int:
    """Run every task and ``finish`` each; return the number of worker deaths seen."""
    if backend == "dask":
        return _run_dask(tasks, finish, settings, step, jobs, scheduler)
    return _run_loky(tasks, finish, settings, step, jobs)


# --------------------------------------------------------------------------- loky (joblib)


def _run_loky(tasks: Iterable[Task], finish: Finish, settings: BatchSettings, step: Callable[..., Any],
              jobs: int) -> int:
    from concurrent.futures.process import BrokenProcessPool  # loky's TerminatedWorkerError is one

    from joblib import Parallel, delayed

    client = client_identity(children=True)
    queue = iter(tasks)
    pending: dict[str, Task] = {}
    deaths = 0

    def call(task: Task) -> Any:
        args, kw = _arguments(task, step, settings, client)
        return delayed(run_step)(*args, **kw)

    def feed() -> Iterator[Any]:
        for task in queue:
            pending[task.inp.file] = task
            yield call(task)

    while True:
        try:
            for res in Parallel(n_jobs=jobs, backend="loky", return_as="generator_unordered")(feed()):
                finish(pending.pop(res["result"]["file"]), res)
            return deaths
        except BrokenProcessPool:
            # a worker died: the files in flight are suspects; run each alone, then go on with the rest
            deaths += 1
            for task in [pending.pop(f) for f in sorted(pending)]:
                try:
                    res = Parallel(n_jobs=jobs, backend="loky")([call(task)])[0]
                except BrokenProcessPool:
                    deaths += 1
                    res = _died(task, settings)
                finish(task, res)


# --------------------------------------------------------------------------- Dask


@contextlib.contextmanager
def _quiet_cluster() -> Iterator[None]:
    """Keep the cluster's own log off the terminal while it runs, unless tauspec logs at DEBUG (``--debug``).

    distributed logs the start and stop of its scheduler, nannies and workers at INFO (about thirty lines per run),
    and a worker may log a failed heartbeat with a traceback while the cluster shuts down.  The results do not
    depend on those messages: a task that fails or a worker that dies reaches the batch through its future.  The
    level of the "distributed" logger here, and the logging configuration that the local workers read when they
    start (``DASK_LOGGING__DISTRIBUTED``), are set for the cluster's lifetime and restored after it.
    """
    if logging.getLogger("tauspec").isEnabledFor(logging.DEBUG):
        yield
        return
    logger = logging.getLogger("distributed")
    level, env = logger.level, os.environ.get(_WORKER_LOGGING)
    logger.setLevel(logging.CRITICAL)
    os.environ[_WORKER_LOGGING] = "critical"
    try:
        yield
    finally:
        logger.setLevel(level)
        if env is None:
            os.environ.pop(_WORKER_LOGGING, None)
        else:
            os.environ[_WORKER_LOGGING] = env


#: The environment variable of dask's configuration that sets the log level of the "distributed" logger.
_WORKER_LOGGING = "DASK_LOGGING__DISTRIBUTED"


@contextlib.contextmanager
def _dask_client(jobs: int, scheduler: str | None) -> Iterator[Any]:
    try:
        import dask
        from distributed import Client, LocalCluster
    except ImportError:
        raise SettingsError("--backend dask needs dask.distributed: pip install 'tauspec[cluster]'") from None
    with _quiet_cluster():
        if scheduler:
            try:
                client = Client(scheduler, timeout=20)
            except (OSError, TimeoutError, ValueError) as exc:
                raise SettingsError(f"cannot reach the Dask scheduler at {scheduler} ({exc})") from None
            with client:
                yield client
            return
        # a task on a worker that dies is lost at once (no retries on other workers: the batch retries it alone)
        with dask.config.set({"distributed.scheduler.allowed-failures": 0}):
            cluster = LocalCluster(n_workers=jobs, threads_per_worker=1, processes=True, host="127.0.0.1",
                                   dashboard_address=":0")
        with cluster, Client(cluster) as client:
            yield client


def _run_dask(tasks: Iterable[Task], finish: Finish, settings: BatchSettings, step: Callable[..., Any],
              jobs: int, scheduler: str | None) -> int:
    from distributed import KilledWorker, as_completed

    identity = client_identity(children=False)
    with _dask_client(jobs, scheduler) as client:
        width = 2 * max(jobs, len(client.scheduler_info().get("workers", {}))) + 2
        queue = iter(tasks)
        pending: dict[Any, Task] = {}
        done = as_completed()

        def submit() -> None:
            task = next(queue, None)
            if task is not None:
                args, kw = _arguments(task, step, settings, identity)
                future = client.submit(run_step, *args, pure=False, **kw)
                pending[future] = task
                done.add(future)

        for _ in range(width):
            submit()
        suspects = []
        for future in done:
            task = pending.pop(future)
            try:
                res = future.result()
            except KilledWorker:  # Dask lost the worker running it: a suspect, run alone below
                suspects.append(task)
            except Exception as exc:  # the cluster failed this task (lost connection ...): tried again next run
                finish(task, _failed(task, settings, exc))
            else:
                finish(task, res)
            future.release()
            submit()
        deaths = len(suspects)
        for task in suspects:
            args, kw = _arguments(task, step, settings, identity)
            try:
                res = client.submit(run_step, *args, pure=False, **kw).result()
            except KilledWorker:
                res = _died(task, settings)
            finish(task, res)
    return deaths
