"""What runs around the pipeline step in a worker: a parent-death watchdog and the per-file time limit.

:func:`run_step` is what the batch sends to the workers (loky processes, Dask workers, or the client itself with
one job).  It calls the pipeline step and

* starts, once per worker process whose parent is the batch's client, a watchdog thread that ends the process
  (``os._exit``) within a second of the client's death (the parent PID changes when a process is orphaned):
  a killed batch leaves no worker computing for nobody.  A worker of the client's own pool (loky) that was
  orphaned before its first task (the client killed while the worker was still starting) ends as soon as that
  task reaches it, without running it;
* stops the step after ``settings.time_limit`` seconds: an exception is raised in the step's thread
  (``PyThreadState_SetAsyncExc``), which the step cannot catch as an ordinary error, and the file becomes an
  error row.  Python delivers it between two bytecodes, so a single long call into compiled code finishes first;
  in a worker the watchdog ends the process when the step is still running a minute past the limit (the file is
  then a worker death, retried alone and recorded as such).
"""

from __future__ import annotations

import ctypes
import functools
import os
import socket
import threading
import time
from collections.abc import Callable
from typing import Any

from .settings import BatchSettings
from .store import error_files

__all__ = ["TimeLimitExceeded", "run_step", "client_identity", "WATCH_INTERVAL", "GRACE"]

#: Seconds between two looks of the watchdog at the parent process.
WATCH_INTERVAL = 0.5
#: Seconds past the time limit after which the watchdog ends a worker whose step could not be stopped.
GRACE = 60.0

# thread id -> (monotonic start, limit) of the steps running in this process (several threads on Dask)
_RUNNING: dict[int, tuple[float, float]] = {}


class TimeLimitExceeded(BaseException):  # noqa: N818 - not an error of the data: raised into the step's thread
    """Raised into a step's thread when it runs past the per-file time limit."""


#: (host, PID of the batch's client, whether the workers are the client's own child processes)
Client = tuple[str, int, bool]


def client_identity(*, children: bool) -> Client:
    """(host, PID, ``children``) of the batch's client, sent with every task.

    ``children`` is true when the workers are processes the client started itself (the loky pool): such a
    worker has no reason to outlive the client.  Dask workers are the cluster's (its nanny's children).
    """
    return socket.gethostname(), os.getpid(), children


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # another user's process of that PID: it exists
        return True
    return True


def _watch(parent: int) -> None:
    while True:
        time.sleep(WATCH_INTERVAL)
        if os.getppid() != parent:  # orphaned: the batch that started this worker is gone
            os._exit(70)
        now = time.monotonic()
        if any(now - start > limit + GRACE for start, limit in list(_RUNNING.values())):
            os._exit(71)  # a step the time limit could not stop (a long call into compiled code)


@functools.cache
def _watchdog(pid: int, client: Client) -> bool:  # noqa: ARG001 - one per process
    """Start the watchdog in a worker whose parent is the client (not in the client, not on another machine).

    A child of the client that is already orphaned when its first task arrives ends at once (exit status 70).
    """
    host, client_pid, children = client
    if pid == client_pid or host != socket.gethostname():
        return False
    if os.getppid() != client_pid:
        if children and not _alive(client_pid):
            os._exit(70)  # orphaned before its first task: the batch that sent it is gone
        return False
    threading.Thread(target=_watch, args=(client_pid,), name="tauspec-watchdog", daemon=True).start()
    return True


def _raise_in(thread_id: int, exc: type[BaseException] | None) -> None:
    ctypes.pythonapi.PyThreadState_SetAsyncExc(ctypes.c_ulong(thread_id),
                                               None if exc is None else ctypes.py_object(exc))


class _Deadline:
    """Raise :class:`TimeLimitExceeded` in this thread after ``seconds``, unless disarmed first."""

    def __init__(self, seconds: float) -> None:
        self.thread = threading.get_ident()
        self.lock = threading.Lock()
        self.armed, self.fired = True, False
        _RUNNING[self.thread] = (time.monotonic(), seconds)
        self.timer = threading.Timer(seconds, self._fire)
        self.timer.daemon = True
        self.timer.start()

    def _fire(self) -> None:
        with self.lock:
            if self.armed:
                self.fired = True
                _raise_in(self.thread, TimeLimitExceeded)

    def disarm(self) -> None:
        self.timer.cancel()
        with self.lock:
            self.armed = False
            if self.fired:  # not yet delivered: drop it (the caller reports the limit either way)
                _raise_in(self.thread, None)
        _RUNNING.pop(self.thread, None)


def run_step(step: Callable[..., dict[str, Any]], text: str, settings: BatchSettings, *, source: str,
             input_sha256: str | None, client: Client, **options: Any) -> dict[str, Any]:
    """Run ``step(text, settings, source=..., input_sha256=..., **options)`` under the watchdog and time limit.

    Returns the step's result, or for a step stopped at the limit an error result saying so (not retried
    until the limit is raised).
    """
    _watchdog(os.getpid(), client)
    t = time.perf_counter()
    deadline = _Deadline(settings.time_limit)
    try:
        try:
            return step(text, settings, source=source, input_sha256=input_sha256, **options)
        finally:
            deadline.disarm()
    except TimeLimitExceeded:
        deadline.disarm()  # again: the exception may have come while the first call ran
        limit = settings.time_limit
        message = (f"{source}: stopped after {time.perf_counter() - t:.0f} s, past the per-file time limit of "
                   f"{limit:g} s (raise it with time_limit in [batch] of the settings, or --time-limit)")
        result = {"file": source, "status": "error", "error": message}
        return {"result": result, "seconds": {},
                "files": error_files(source, message, input_sha256, settings, False, timed_out_after=limit)}
