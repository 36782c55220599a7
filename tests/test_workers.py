"""Worker processes: the same results as the plain loop, errors carried back, a serial path."""

from __future__ import annotations

import os

import numpy as np
import pytest

from wirecut import workers
from wirecut.errors import JobError
from wirecut.workers import background, forked, pmap, worker_count


def test_pmap_equals_the_loop_and_sees_closures(monkeypatch) -> None:
    monkeypatch.setenv("WIRECUT_WORKERS", "2")
    big = np.arange(100_000.0)  # inherited by the workers, never pickled
    seen = []
    out = pmap(lambda k: (float(big[k::7].sum()), os.getpid()), range(9), done=seen.append)
    assert [v for v, _ in out] == [float(big[k::7].sum()) for k in range(9)]
    assert seen == list(range(1, 10))  # told in order as results arrive
    if "fork" in __import__("multiprocessing").get_all_start_methods():
        assert any(pid != os.getpid() for _, pid in out)


def test_a_worker_error_is_raised_in_the_parent(monkeypatch) -> None:
    monkeypatch.setenv("WIRECUT_WORKERS", "2")

    def fail(k: int) -> int:
        if k == 3:
            raise JobError("piece 3 cannot be cut")
        return k

    with pytest.raises(JobError, match="piece 3 cannot be cut"):
        pmap(fail, range(6))


def test_nested_calls_run_serially_inside_a_worker(monkeypatch) -> None:
    monkeypatch.setenv("WIRECUT_WORKERS", "2")
    out = pmap(lambda k: pmap(lambda j: j * k, range(3)), range(4))
    assert out == [[0, k, 2 * k] for k in range(4)]


def test_forked_pool_answers_rounds(monkeypatch) -> None:
    monkeypatch.setenv("WIRECUT_WORKERS", "2")
    offset = 10.0
    with forked(lambda ab: ab[0] * ab[1] + offset) as many:
        assert many([(1, 2), (3, 4)]) == [12.0, 22.0]
        assert many([(5, 5)]) == [35.0]
    assert workers._TASK is None


def test_worker_count_from_the_environment(monkeypatch) -> None:
    monkeypatch.setenv("WIRECUT_WORKERS", "1")
    assert worker_count() == 1
    assert pmap(lambda k: os.getpid(), range(3)) == [os.getpid()] * 3
    monkeypatch.setenv("WIRECUT_WORKERS", "two")
    with pytest.raises(JobError, match="WIRECUT_WORKERS"):
        worker_count()
    monkeypatch.setenv("WIRECUT_WORKERS", "0")
    with pytest.raises(JobError, match="at least 1"):
        worker_count()


_FORK = "fork" in __import__("multiprocessing").get_all_start_methods()


def test_background_returns_what_the_call_returns_while_the_caller_goes_on(monkeypatch) -> None:
    monkeypatch.setenv("WIRECUT_WORKERS", "2")
    big = np.arange(50_000.0)
    job = background(lambda: (float(big.sum()), os.getpid()))
    here = float(big[::2].sum())  # the caller's own work meanwhile
    total, pid = job.result()
    assert (total, here) == (float(big.sum()), float(big[::2].sum()))
    assert job.result()[0] == total  # asked twice: the same answer, no second run
    if _FORK:
        assert pid != os.getpid()


def test_background_error_is_raised_when_the_result_is_asked_for(monkeypatch) -> None:
    monkeypatch.setenv("WIRECUT_WORKERS", "2")

    def fail() -> None:
        raise JobError("the rays cannot be cast")

    job = background(fail)
    with pytest.raises(JobError, match="the rays cannot be cast"):
        job.result()


def test_background_runs_here_when_small_serial_or_nested(monkeypatch) -> None:
    monkeypatch.setenv("WIRECUT_WORKERS", "2")
    assert background(os.getpid, min_size=10, size=3).result() == os.getpid()
    monkeypatch.setenv("WIRECUT_WORKERS", "1")
    assert background(os.getpid).result() == os.getpid()
    monkeypatch.setenv("WIRECUT_WORKERS", "2")
    # inside a pmap worker a background job runs in that worker
    out = pmap(lambda k: background(os.getpid).result() == os.getpid(), range(2))
    assert out == [True, True]


def test_threaded_returns_the_value_and_raises_the_error() -> None:
    import threading

    from wirecut.workers import threaded

    big = np.random.default_rng(4).random((20_000, 3))
    from scipy.spatial import cKDTree

    job = threaded(lambda: (cKDTree(big), threading.get_ident()))
    tree, ident = job.result()
    assert ident != threading.get_ident()  # it ran in another thread
    assert tree.query(big[7])[1] == 7

    def fail() -> None:
        raise JobError("no tree today")

    with pytest.raises(JobError, match="no tree today"):
        threaded(fail).result()
