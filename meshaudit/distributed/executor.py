"""Where the parts' tasks run: a Dask cluster (an existing one, or a local one started
for the audit), a local process pool when Dask is not installed, or the calling process.

Dask is an optional extra (``pip install 'meshaudit[distributed]'``), imported only here
and only when a partitioned mesh is audited.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Callable, Iterator
from typing import Any, Protocol

from ..engine.pool import default_workers
from ..errors import MeshAuditError


class Executor(Protocol):
    def map(self, fn: Callable[..., Any], *iterables: list[Any]) -> list[Any]: ...


class InProcess:
    """Every task in the calling process, in order."""

    def map(self, fn: Callable[..., Any], *iterables: list[Any]) -> list[Any]:
        return [fn(*args) for args in zip(*iterables)]


class OnDask:
    """Tasks on a Dask cluster through a connected ``distributed.Client``."""

    def __init__(self, client: Any) -> None:
        self.client = client

    def map(self, fn: Callable[..., Any], *iterables: list[Any]) -> list[Any]:
        from distributed import wait

        futures = self.client.map(fn, *iterables, pure=False)
        try:
            # every task ends before an error is raised, so that nothing a task writes
            # comes after the caller has cleaned up
            wait(futures)
            return self.client.gather(futures)
        except BaseException:
            self.client.cancel(futures)
            raise


class InPool:
    """Tasks on a local pool of processes (no Dask installed)."""

    def __init__(self, pool: Any) -> None:
        self.pool = pool

    def map(self, fn: Callable[..., Any], *iterables: list[Any]) -> list[Any]:
        from concurrent.futures import wait

        futures = [self.pool.submit(fn, *args) for args in zip(*iterables)]
        wait(futures)  # every task ends before an error is raised (see OnDask.map)
        return [f.result() for f in futures]


def _dask() -> Any:
    try:
        import distributed
    except ImportError:
        return None
    return distributed


@contextlib.contextmanager
def executor_for(cluster: Any, workers: int | None, n_parts: int) -> Iterator[Executor]:
    """The executor for ``cluster`` (see :func:`meshaudit.distributed.audit_parts`);
    a cluster or pool started here is stopped on leaving."""
    if cluster is not None and not isinstance(cluster, (str, os.PathLike)):
        yield OnDask(cluster)  # a client the caller connected and will close
        return
    size = max(1, min(workers or default_workers(), n_parts))
    if cluster is None and size == 1:
        yield InProcess()
        return
    distributed = _dask()
    if cluster is not None:
        if distributed is None:
            raise MeshAuditError("--cluster needs Dask: pip install 'meshaudit[distributed]'")
        try:
            client = distributed.Client(str(cluster), timeout="10s")
        except (OSError, TimeoutError, ValueError) as exc:  # unreachable, or a bad address
            raise MeshAuditError(f"cannot reach the Dask scheduler at {cluster}: {exc}") from None
        with client:
            yield OnDask(client)
        return
    if distributed is None:
        from concurrent.futures import ProcessPoolExecutor

        with ProcessPoolExecutor(max_workers=size) as pool:
            yield InPool(pool)
        return
    with (
        distributed.LocalCluster(
            n_workers=size,
            threads_per_worker=1,
            processes=True,
            dashboard_address=":0",  # any free port: never a clash with another run
            silence_logs=50,
        ) as local,
        distributed.Client(local) as client,
    ):
        yield OnDask(client)
