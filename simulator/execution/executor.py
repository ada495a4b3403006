"""What every executor is: the interface, the one that runs tasks in this process, and the cores to use.

A run's pricing is cut into tasks (:mod:`simulator.run` makes them): each prices fixed chunks of
seeded replicate blocks for a group of sites and returns season costs, or each site's results made
from them, never the replicate rows. Every (site, block) is computed from its own seed and the results are put
together in a fixed order, so which executor runs the tasks, on how many workers, and in which order
they finish changes nothing in the results.

Three executors, one interface (:meth:`Executor.map_unordered`); an executor may run several maps
one after the other, and keeps its workers (and the shared inputs they hold) while the shared inputs
are the same object:

- :class:`InlineExecutor` runs the tasks one after the other in this process (one worker, or a
  run too small to be worth starting processes for);
- :class:`~simulator.execution.pool.PoolExecutor` runs them in local worker processes
  (``concurrent.futures``, started with ``forkserver`` where there is one, else ``spawn``); the
  shared inputs are pickled once, their large arrays put in one block of shared memory that every
  worker maps rather than copies;
- :class:`~simulator.execution.dask_cluster.DaskExecutor` sends them to an existing Dask scheduler
  (``distributed.Client``); the shared inputs are scattered to every worker once. Dask is an
  optional dependency (``pip install "dask[distributed]"``); the workers need gonogo installed too.

Each executor keeps a bounded number of tasks in flight (:data:`IN_FLIGHT_PER_WORKER`), so memory
in this process stays bounded whatever the number of tasks.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Iterator
from typing import Any

__all__ = ["Executor", "InlineExecutor", "default_workers", "IN_FLIGHT_PER_WORKER", "Task", "TaskFunction"]

IN_FLIGHT_PER_WORKER = 2  # tasks submitted ahead per worker

Task = tuple
TaskFunction = Callable[..., Any]  # fn(shared, *task) -> result


def default_workers() -> int:
    """The cores this process may use (its CPU affinity where the system says, else all)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


class Executor:
    """Runs ``fn(shared, *task)`` for every task and yields ``(task index, result)`` as they finish."""

    workers: int = 1
    where: str = "this process"

    def map_unordered(self, fn: TaskFunction, shared: Any, tasks: Iterable[Task]) -> Iterator[tuple[int, Any]]:
        raise NotImplementedError

    def close(self) -> None:
        pass

    def abort(self) -> None:
        """End at once, without waiting for tasks under way (after a stop or a failure)."""
        self.close()


class InlineExecutor(Executor):
    """Every task in this process, in order."""

    def map_unordered(self, fn, shared, tasks):
        for i, task in enumerate(tasks):
            yield i, fn(shared, *task)
