"""Independent pieces of work spread over the machine's cores.

The planner's per-piece stages (the final fits, the cut programs and their replays) and the
direction search's candidates do not depend on each other. :func:`pmap` runs such a stage in
worker processes started by ``fork``: the children see the parent's target, job and closures
as they are (nothing is pickled on the way in), and only each item's result comes back. The
results are those of the serial loop, in order; a worker's exception is raised in the parent
as it was raised in the child. :func:`forked` keeps such workers for a whole stage whose
questions come one round at a time (the split's width search asks two strips per round).
:func:`background` starts one such job and lets the caller go on with other work until it
asks for the result (the analysis casts its undercut rays while the curvature is fitted).

``WIRECUT_WORKERS`` sets the number of processes (default: the CPUs this process may use, at
most 8); 1, a platform without ``fork``, or a call from inside a worker runs the plain loop.
"""

from __future__ import annotations

import multiprocessing
import os
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from typing import Any, TypeVar

from wirecut.errors import JobError

__all__ = ["pmap", "forked", "background", "threaded", "worker_count"]

T = TypeVar("T")
R = TypeVar("R")

_MAX_WORKERS = 8
_TASK: tuple[Callable[[Any], Any], list[Any]] | None = None
_IN_WORKER = False


def worker_count() -> int:
    """Processes :func:`pmap` uses: ``WIRECUT_WORKERS`` or the usable CPUs (at most 8)."""
    raw = os.environ.get("WIRECUT_WORKERS", "").strip()
    if raw:
        try:
            n = int(raw)
        except ValueError:
            raise JobError(f"WIRECUT_WORKERS must be a whole number, got {raw!r}") from None
        if n < 1:
            raise JobError(f"WIRECUT_WORKERS must be at least 1, got {n}")
        return n
    try:
        cpus = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        cpus = os.cpu_count() or 1
    return max(1, min(cpus, _MAX_WORKERS))


def _mark_worker() -> None:
    global _IN_WORKER
    _IN_WORKER = True


def _run(i: int) -> Any:
    fn, items = _TASK  # type: ignore[misc]
    return fn(items[i])


def _call(arg: Any) -> Any:
    fn, _ = _TASK  # type: ignore[misc]
    return fn(arg)


def _serial() -> bool:
    return (
        worker_count() <= 1
        or _IN_WORKER
        or _TASK is not None
        or "fork" not in multiprocessing.get_all_start_methods()
    )


@contextmanager
def forked(fn: Callable[[T], R]) -> Iterator[Callable[[list[T]], list[R]]]:
    """A pool of forked workers kept for a whole stage: yields ``many(args) -> [fn(a) ...]``.

    ``fn`` (a closure is fine) is inherited by the workers when they start; only the small
    arguments and the results travel. Serial (a plain loop) where :func:`pmap` would be.
    """
    global _TASK
    if _serial():
        yield lambda args: [fn(a) for a in args]
        return
    _TASK = (fn, [])
    ctx = multiprocessing.get_context("fork")
    pool = ProcessPoolExecutor(worker_count(), mp_context=ctx, initializer=_mark_worker)
    try:
        yield lambda args: list(pool.map(_call, list(args)))
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
        _TASK = None


def pmap(
    fn: Callable[[T], R],
    items: Iterable[T],
    done: Callable[[int], None] | None = None,
    meanwhile: Callable[[], None] | None = None,
) -> list[R]:
    """``[fn(x) for x in items]``, spread over worker processes where that can help.

    Parameters
    ----------
    fn : callable
        Any callable, closures included (the workers inherit it by ``fork``); its result
        must be picklable.
    items : iterable
        The inputs; also inherited, never pickled.
    done : callable (int) -> None, optional
        Told how many results are in, in order, as they arrive (for progress bars).
    meanwhile : callable () -> None, optional
        Called in this process while the workers run (after the plain loop when serial):
        work for an otherwise idle parent, such as importing what a later stage needs.
    """
    global _TASK
    items = list(items)
    workers = min(worker_count(), len(items))
    if workers <= 1 or _serial():
        out = []
        for x in items:
            out.append(fn(x))
            if done is not None:
                done(len(out))
        if meanwhile is not None:
            meanwhile()
        return out
    _TASK = (fn, items)
    try:
        ctx = multiprocessing.get_context("fork")
        with ProcessPoolExecutor(workers, mp_context=ctx, initializer=_mark_worker) as pool:
            out = []
            results = pool.map(_run, range(len(items)))  # the workers start here
            if meanwhile is not None:
                meanwhile()
            for result in results:
                out.append(result)
                if done is not None:
                    done(len(out))
            return out
    finally:
        _TASK = None


class _Later:
    """The result of :func:`background`: ``result()`` waits for it (or computes it, serial)."""

    def __init__(self, fn: Callable[[], Any], proc: Any = None, recv: Any = None) -> None:
        self._fn, self._proc, self._recv = fn, proc, recv
        self._done = False
        self._value: Any = None

    def wait(self) -> None:
        """Wait until the job has ended, whatever it ended with (nothing is raised)."""
        try:
            self.result()
        except BaseException:  # noqa: BLE001 - the caller is already handling an error
            pass

    def result(self) -> Any:
        if not self._done:
            if self._proc is None:
                self._value = self._fn()
            else:
                try:
                    ok, value = self._recv.recv()
                except EOFError:  # the child died without a word (killed, out of memory)
                    self._proc.join()
                    raise JobError(
                        f"a worker process ended without a result (exit {self._proc.exitcode})"
                    ) from None
                finally:
                    self._recv.close()
                self._proc.join()
                if not ok:
                    raise value
                self._value = value
            self._done = True
        return self._value


class _Threaded:
    """The result of :func:`threaded`: ``result()`` joins the thread and returns (or raises)."""

    def __init__(self, fn: Callable[[], Any]) -> None:
        import threading

        self._out: tuple[bool, Any] | None = None

        def run() -> None:
            try:
                self._out = (True, fn())
            except BaseException as exc:  # noqa: BLE001 - raised again in result()
                self._out = (False, exc)

        self._thread = threading.Thread(target=run, daemon=True)
        self._thread.start()

    def result(self) -> Any:
        self._thread.join()
        ok, value = self._out  # type: ignore[misc]
        if not ok:
            raise value
        return value


def threaded(fn: Callable[[], R]) -> _Threaded:
    """Start ``fn()`` in a thread of this process; ``.result()`` waits for it.

    For compiled work that lets go of the interpreter lock (a scipy KD-tree build, large numpy
    loops) while this thread goes on with other work. The caller asks for the result before it
    forks a worker (a fork copies only the thread that calls it) and ``fn`` must not change
    anything the caller reads meanwhile.
    """
    return _Threaded(fn)


def background(fn: Callable[[], R], min_size: int = 0, size: int = 0) -> _Later:
    """Start ``fn()`` in a forked worker process; ``.result()`` returns (or raises) what it did.

    The parent goes on meanwhile. Serial (``fn`` runs when the result is asked for) where
    :func:`pmap` would be, and when ``size < min_size`` (small jobs do not repay a fork).
    ``fn`` must not change anything the parent needs: the child's memory is its own.
    """
    if _serial() or size < min_size:
        return _Later(fn)
    ctx = multiprocessing.get_context("fork")
    recv, send = ctx.Pipe(duplex=False)

    def run() -> None:
        _mark_worker()
        try:
            out: tuple[bool, Any] = (True, fn())
        except BaseException as exc:  # noqa: BLE001 - handed to the parent as it was raised
            out = (False, exc)
        try:
            send.send(out)
        except Exception:  # a result or an exception that cannot be pickled: say what it was
            send.send((False, JobError(f"a worker's result could not be sent: {out[1]!r}"[:400])))
        send.close()

    proc = ctx.Process(target=run, daemon=True)
    proc.start()
    send.close()
    return _Later(fn, proc, recv)
