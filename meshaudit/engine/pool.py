"""Where an audit's work runs: a pool of threads, or the calling thread alone.

Both runners take the same calls, so the engine has one path: :meth:`each` maps a
function over the chunks (results in completion order), :meth:`later` starts a job whose
result is asked for later. The serial runner does each job when its result is asked for,
in the calling thread; ``parallel`` says whether jobs really run beside the caller (the
engine only hands extra work ahead to a pool that can do it meanwhile).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import ThreadPoolExecutor, as_completed
from typing import Any, Protocol

#: Most threads :func:`default_workers` suggests (measured on 2 cores only; beyond a
#: few threads the interpreter lock held between numpy calls would limit the gain).
MAX_WORKERS = 4


def default_workers() -> int:
    """Threads an audit uses by default: the CPUs this process may run on, at most
    :data:`MAX_WORKERS`."""
    try:
        cpus = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cpus = os.cpu_count() or 1
    return max(1, min(cpus, MAX_WORKERS))


class Pending(Protocol):
    def result(self) -> Any: ...


class _Deferred:
    """A job of the serial runner: done when its result is first asked for."""

    def __init__(self, fn: Callable[..., Any], args: tuple[Any, ...]) -> None:
        self._fn, self._args = fn, args
        self._done = False
        self._value: Any = None

    def result(self) -> Any:
        if not self._done:
            self._value = self._fn(*self._args)
            self._done = True
        return self._value


class SerialRunner:
    """Everything in the calling thread, in the order results are asked for."""

    parallel = False

    def later(self, fn: Callable[..., Any], *args: Any) -> Pending:
        return _Deferred(fn, args)

    def each(self, fn: Callable[..., Any], items: Iterable[tuple[Any, ...]]) -> Iterator[Any]:
        return (fn(*item) for item in items)

    def shutdown(self) -> None:
        pass


class ThreadRunner:
    """A pool of ``workers`` threads (numpy releases the interpreter lock in its loops)."""

    parallel = True

    def __init__(self, workers: int) -> None:
        self._pool = ThreadPoolExecutor(max_workers=workers, thread_name_prefix="meshaudit")

    def later(self, fn: Callable[..., Any], *args: Any) -> Pending:
        return self._pool.submit(fn, *args)

    def each(self, fn: Callable[..., Any], items: Iterable[tuple[Any, ...]]) -> Iterator[Any]:
        futures = [self._pool.submit(fn, *item) for item in items]
        return (future.result() for future in as_completed(futures))

    def shutdown(self) -> None:
        self._pool.shutdown(wait=True, cancel_futures=True)


def runner(workers: int | None, n_chunks: int) -> SerialRunner | ThreadRunner:
    """Threads when more than one is asked for (default :func:`default_workers`) and there
    is more than one chunk; else the calling thread."""
    workers = default_workers() if workers is None else max(1, int(workers))
    if workers > 1 and n_chunks > 1:
        return ThreadRunner(workers)
    return SerialRunner()
