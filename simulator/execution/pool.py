"""Tasks in local worker processes: the forkserver that starts them, their start-up, the bounded pool.

:class:`PoolExecutor` runs tasks in ``concurrent.futures`` worker processes started with
``forkserver`` where there is one, else ``spawn`` (:func:`_context`); :func:`prepare` starts the
forkserver early. Each worker installs the shared inputs once (:func:`_install`, from
:mod:`.shared_memory`) and ends with the run's process (:mod:`.lifetime`).
"""

from __future__ import annotations

import multiprocessing
import os
import signal
import sys
from collections.abc import Iterator
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from typing import Any

from .executor import IN_FLIGHT_PER_WORKER, Executor, Task, TaskFunction, default_workers
from .lifetime import _end_with, _quiet_tracker, _without_ctrl_c
from .shared_memory import _InSharedMemory

__all__ = ["PoolExecutor", "prepare"]

_SHARED: Any = None  # in a worker process: the run's shared inputs, installed once per worker


def _install(shared: Any, parent: int | None = None) -> None:
    """A worker's start: ignore Ctrl-C (the run's own process handles it and ends the workers),
    end with the run's process ``parent`` (:func:`_end_with`), then load the shared inputs."""
    global _SHARED
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if parent is not None:
        _end_with(parent)
    _SHARED = shared.load() if isinstance(shared, _InSharedMemory) else shared


def _call_installed(fn: TaskFunction, task: Task) -> Any:
    return fn(_SHARED, *task)


def _context() -> multiprocessing.context.BaseContext:
    """``forkserver`` where there is one (no fork of a process holding threads), else ``spawn``.

    The process that forks the workers loads gonogo once, and the command line's libraries when
    the ``gonogo`` command runs (a worker runs the main script again as it starts, and the
    command's script loads them: about 0.6 s a worker otherwise)."""
    if "forkserver" in multiprocessing.get_all_start_methods():
        context = multiprocessing.get_context("forkserver")
        preload = ["simulator.run"]
        if "simulator.cli" in sys.modules:  # the gonogo command is running
            preload.append("simulator.cli")
        context.set_forkserver_preload(preload)
        return context
    return multiprocessing.get_context("spawn")


def prepare(workers: int | None = 1, cluster: Any = None) -> None:
    """Start the process that forks local workers now, in the background, when a run may use
    them, so that it has loaded gonogo by the time the work is shared out (it is kept for later
    runs of this Python process)."""
    if cluster is not None or (default_workers() if workers is None else int(workers)) < 2:
        return
    _start_forkserver(_context())


def _start_forkserver(context: multiprocessing.context.BaseContext) -> None:
    """The resource tracker, then the forkserver where it is the start method, started deaf to Ctrl-C."""
    if os.name != "posix":  # neither exists
        return
    from multiprocessing import resource_tracker

    _quiet_tracker()
    # the tracker first: starting it unblocks Ctrl-C in this thread when done (it blocks it itself)
    resource_tracker.ensure_running()
    if context.get_start_method() == "forkserver":
        from multiprocessing import forkserver

        with _without_ctrl_c():
            forkserver.ensure_running()


class PoolExecutor(Executor):
    """Tasks in ``workers`` local processes; the shared inputs are sent to each worker once."""

    def __init__(self, workers: int):
        self.workers = int(workers)
        self.where = f"{self.workers} local worker processes"
        self._pool: ProcessPoolExecutor | None = None
        self._shared: Any = None
        self._shipped: _InSharedMemory | None = None

    def map_unordered(self, fn, shared, tasks):
        if self._pool is not None and shared is not self._shared:  # the same inputs keep the workers
            self.close()
        if self._pool is None:
            context = _context()
            _start_forkserver(context)  # and the resource tracker, before the shared memory
            self._shipped = _InSharedMemory.make(shared)
            self._pool = ProcessPoolExecutor(max_workers=self.workers, mp_context=context,
                                             initializer=_install,
                                             initargs=(shared if self._shipped is None else self._shipped,
                                                       os.getpid()))
            self._shared = shared

        def submit(task):
            with _without_ctrl_c():  # a worker started under spawn is born deaf to Ctrl-C too
                return self._pool.submit(_call_installed, fn, task)

        yield from _bounded(submit, tasks, IN_FLIGHT_PER_WORKER * self.workers,
                            lambda pending: wait(pending, return_when=FIRST_COMPLETED)[0])

    def close(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None
            self._shared = None
        if self._shipped is not None:
            self._shipped.release()
            self._shipped = None

    def abort(self) -> None:
        """End at once (the run was stopped, or failed): kill the workers rather than let them finish
        their tasks, then free what :meth:`close` frees."""
        if self._pool is not None:
            processes = list((getattr(self._pool, "_processes", None) or {}).values())
            for process in processes:
                process.kill()
            self._pool.shutdown(wait=True, cancel_futures=True)  # sees the workers gone, and ends
            for process in processes:
                process.join(timeout=5)
            self._pool = None
            self._shared = None
        self.close()


def _bounded(submit, tasks, limit, wait_any) -> Iterator[tuple[int, Any]]:
    """Submit tasks in order, at most ``limit`` unfinished at a time; yield results as they come."""
    queue = iter(enumerate(tasks))
    pending: dict[Any, int] = {}
    try:
        while True:
            while len(pending) < limit:
                item = next(queue, None)
                if item is None:
                    break
                pending[submit(item[1])] = item[0]
            if not pending:
                return
            for future in wait_any(list(pending)):
                yield pending.pop(future), future.result()
    finally:
        for future in pending:
            future.cancel()
