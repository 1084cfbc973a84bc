"""One run per output folder: an exclusive lock on ``DIR/.tauspec.lock`` held for the whole run.

The lock is :class:`filelock.FileLock`, on Unix an ``flock(2)`` lock that the operating system releases when
the holding process ends, however it ends (SIGKILL included): a stale lock of a dead run is simply free, and
the next run takes it over.  The holder writes its PID, host and start time beside it
(``DIR/.tauspec.lock.json``) so that a refused run can say who holds the folder.
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
import time
from collections.abc import Iterator
from pathlib import Path

from ..data.write import atomic_write_text, dumps_json
from ..errors import TauspecError
from .layout import RUN_FILES

__all__ = ["LOCK_NAME", "HOLDER_NAME", "run_lock"]

LOCK_NAME, HOLDER_NAME = RUN_FILES[4], RUN_FILES[5]


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # it exists, owned by someone else
        return True
    return True


def _holder(out: Path) -> str:
    """Who holds the lock, in words, from the holder's note (or "another run" when it cannot be told)."""
    try:
        d = json.loads((out / HOLDER_NAME).read_text(encoding="utf-8"))
        pid, host, started = int(d["pid"]), str(d["host"]), str(d["started_utc"])
    except (OSError, ValueError, KeyError, TypeError):
        return "another tauspec batch run"
    if host == socket.gethostname() and not _alive(pid):  # the note of a run that ended; its successor has
        return "another tauspec batch run"                 # the lock but has not written its own note yet
    return f"another tauspec batch run (PID {pid} on {host}, started {started})"


@contextlib.contextmanager
def run_lock(out: Path) -> Iterator[None]:
    """Hold the output folder's lock while the block runs; refuse at once when another run holds it.

    Raises
    ------
    TauspecError
        One line naming the folder and the holder's PID and start time.
    """
    from filelock import FileLock, Timeout

    lock = FileLock(out / LOCK_NAME)
    try:
        lock.acquire(timeout=0)
    except Timeout:
        raise TauspecError(f"{_holder(out)} is writing into this folder; wait for it to finish or choose "
                           "another --out", str(out)) from None
    try:
        note = {"pid": os.getpid(), "host": socket.gethostname(),
                "started_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())}
        atomic_write_text(out / HOLDER_NAME, dumps_json(note) + "\n")
        yield
    finally:
        lock.release()
