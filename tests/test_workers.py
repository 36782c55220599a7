"""Worker processes: the same results as the plain loop, errors carried back, a serial path."""

from __future__ import annotations

import os

import numpy as np
import pytest

from wirecut import workers
from wirecut.errors import JobError
from wirecut.workers import forked, pmap, worker_count


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
