"""Which executor a run gets: a Dask cluster, local worker processes, or this process."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from ..inputs.errors import InputError
from .dask_cluster import DaskExecutor
from .executor import Executor, InlineExecutor, default_workers
from .pool import PoolExecutor

__all__ = ["open_executor"]


@contextmanager
def open_executor(workers: int | None = 1, cluster: Any = None, *, inline: bool = False) -> Iterator[Executor]:
    """The executor for a run: the Dask cluster when ``cluster`` is given (an address such as
    ``tcp://host:8786``, or a ``distributed.Client``), else ``workers`` local processes (None: all
    cores), else this process (one worker, or ``inline`` for work too small to share out).

    An address that does not answer raises :class:`InputError` within :data:`CONNECT_TIMEOUT`.
    """
    if cluster is not None and not (isinstance(cluster, str) and not cluster.strip()):
        executor: Executor = DaskExecutor(cluster)
    else:
        n = default_workers() if workers is None else int(workers)
        if n < 1:
            raise InputError(f"workers must be at least 1, got {n}")
        executor = InlineExecutor() if n == 1 or inline else PoolExecutor(n)
    try:
        yield executor
    except BaseException:  # a failure, Ctrl-C or SIGTERM: no waiting for the tasks under way
        executor.abort()
        raise
    executor.close()
