"""BLAS threads: the library's small linear algebra runs at one thread and gives the caller's setting back."""

from __future__ import annotations

import numpy as np
import pytest
from threadpoolctl import threadpool_info, threadpool_limits

from synthetic import lognormal_sweep, rouse_sweep
from tauspec.analysis.diagnosis.diagnose import diagnose
from tauspec.models import beadspring
from tauspec.modes import fit as modes_fit
from tauspec.spectrum import regularize, threads
from tauspec.spectrum.invert import invert


def _blas_threads() -> list[int]:
    return [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"]


@pytest.fixture
def two_threads():
    with threadpool_limits(limits=2, user_api="blas"):
        if max(_blas_threads()) < 2:
            pytest.skip("BLAS cannot run two threads here")
        yield


def _spy(monkeypatch, module, name):
    seen: list[list[int]] = []
    original = getattr(module, name)

    def spy(*args, **kwargs):
        seen.append(_blas_threads())
        return original(*args, **kwargs)

    monkeypatch.setattr(module, name, spy)
    return seen


def test_invert_runs_at_one_thread_and_restores_the_callers_setting(two_threads, monkeypatch):
    seen = _spy(monkeypatch, regularize, "block_pivoting")
    invert(lognormal_sweep(1))
    assert seen and all(max(t) == 1 for t in seen)
    assert max(_blas_threads()) == 2  # the caller's two threads are back


def test_fits_and_diagnosis_run_at_one_thread(two_threads, monkeypatch):
    in_modes = _spy(monkeypatch, modes_fit, "_run_fit")
    in_chains = _spy(monkeypatch, beadspring, "_refine")
    sweep = rouse_sweep(0, N=30)
    modes_fit.fit_modes(sweep)
    diagnose(sweep, use_spectrum=False)
    assert in_modes and in_chains and all(max(t) == 1 for t in in_modes + in_chains)
    assert max(_blas_threads()) == 2


def test_nested_limits_and_the_crossover(two_threads):
    with threads.one_thread():
        with threads.one_thread():
            assert max(_blas_threads()) == 1
        assert max(_blas_threads()) == 1  # the inner exit does not lift the outer limit
    assert max(_blas_threads()) == 2
    with threads.blas_limit(threads.CROSSOVER):  # a problem at the crossover keeps the caller's threads
        assert max(_blas_threads()) == 2
    with threads.blas_limit(threads.CROSSOVER - 1):
        assert max(_blas_threads()) == 1


def test_results_do_not_depend_on_the_callers_threads():
    sweep = lognormal_sweep(2)
    a = invert(sweep)
    with threadpool_limits(limits=2, user_api="blas"):
        b = invert(sweep)
    np.testing.assert_array_equal(a.H, b.H)
