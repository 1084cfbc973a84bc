"""BLAS threads for the library's small dense linear algebra.

The inversion and the fits factorize matrices of a few dozen to a few hundred rows.  At that size a second
BLAS thread costs more in synchronisation than it saves, and on a machine that is busy it costs a great deal
(measured in ``benchmarks/bench_threads.py``, recorded in ``docs/benchmarks.md``).  So the entry points run
their linear algebra with BLAS limited to one thread while the problem is below :data:`CROSSOVER` unknowns,
whatever the caller's setting, and give the caller's setting back afterwards (threadpoolctl saves and
restores it).  Batch workers run every step at one thread (:func:`one_thread`).

No work at import time: threadpoolctl is imported, and its controller made, at the first limited call in a
process (a forked worker makes its own).
"""

from __future__ import annotations

import contextlib
import functools
import os
import threading
from collections.abc import Callable, Iterator
from typing import Any, TypeVar

__all__ = ["CROSSOVER", "blas_limit", "one_thread", "limited"]

#: Unknowns (τ grid points plus η_s, G_e) from which the caller's BLAS threading is left alone: below it the
#: linear algebra runs at one thread.  Measured with benchmarks/bench_threads.py on the 2-core development
#: machine (docs/benchmarks.md): one thread was faster at every grid measured (40 to 1000 points, on a busy
#: machine), so the crossover is put beyond the largest grid the inversion accepts (2000) and every call runs
#: at one thread; re-measure on an idle machine with more cores before lowering it.
CROSSOVER = 2500

_state = threading.local()

F = TypeVar("F", bound=Callable[..., Any])


@functools.lru_cache(maxsize=1)
def _controller(pid: int) -> Any:  # noqa: ARG001 - one per process (a forked worker gets its own)
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


@contextlib.contextmanager
def one_thread() -> Iterator[None]:
    """Run the block with BLAS (and OpenMP) limited to one thread; restore the previous setting after it.

    Nested uses cost nothing: only the outermost one talks to the libraries.
    """
    depth = getattr(_state, "depth", 0)
    if depth:
        _state.depth = depth + 1
        try:
            yield
        finally:
            _state.depth -= 1
        return
    with _controller(os.getpid()).limit(limits=1):
        _state.depth = 1
        try:
            yield
        finally:
            _state.depth = 0


@contextlib.contextmanager
def blas_limit(size: int) -> Iterator[None]:
    """One BLAS thread for a problem of ``size`` unknowns below :data:`CROSSOVER`; the caller's setting above."""
    if size >= CROSSOVER:
        yield
        return
    with one_thread():
        yield


def limited(fn: F) -> F:
    """Decorate a fit or analysis step whose linear algebra is small: it runs under :func:`one_thread`."""

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        with one_thread():
            return fn(*args, **kwargs)

    return wrapper  # type: ignore[return-value]
