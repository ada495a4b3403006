"""What a gonogo task changes in the Dask worker process it runs in: the heap, and quiet while it runs.

A Dask worker runs tasks in a thread of its own, beside the event loop that talks to the scheduler
and watches the worker. gonogo's tasks are long numpy loops, so two of the worker's defaults cost
them time (measured with ``benchmarks/bench_dask_worker.py``; the reasons below are from reading
``distributed`` 2026.8 and glibc's ``man mallopt``):

- the heap: Dask's nanny starts workers with ``MALLOC_TRIM_THRESHOLD_=65536`` (:func:`_roomy_heap`);
- the event loop's wake-ups: the statistical profiler samples the task's thread every 10 ms
  (``distributed.worker.profile.interval``) and the health tick runs every 20 ms
  (``distributed.admin.tick.interval``); each takes the interpreter lock from the task's thread.
  On a machine whose cores are all busy that is about an eighth more processor time than the task's
  own, which the task's thread then lacks. :func:`_quiet_worker` pauses the two while gonogo tasks
  run in the process and starts them again when the last one ends: the worker's profile (the
  dashboard's) then shows nothing for those seconds, and its heartbeats, memory watch and transfers
  go on as before.
"""

from __future__ import annotations

import ctypes
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from .executor import TaskFunction

__all__: list[str] = []

QUIET = ("profile", "profile-cycle", "tick")  # a worker's periodic callbacks paused while tasks run


class _OnDaskWorker:
    """A task function that first gives large arrays back to the heap in the worker's process, and
    keeps the worker's event loop quiet while it runs (:func:`_quiet_worker`).

    Dask's nanny starts workers with ``MALLOC_TRIM_THRESHOLD_=65536`` so that they return memory to
    the system; on glibc that also fixes the threshold above which ``malloc`` maps fresh pages at its
    128 KiB default, so every block-sized numpy temporary is mapped, zeroed and unmapped again and the
    pricing runs up to twice as slowly. Raising the mmap and trim thresholds with ``mallopt``
    (glibc's ``M_MMAP_THRESHOLD`` = -3, ``M_TRIM_THRESHOLD`` = -1; see ``man mallopt``) lets freed
    blocks be reused; elsewhere (no glibc) nothing is changed.
    """

    def __init__(self, fn: TaskFunction):
        self.fn = fn

    def __call__(self, shared: Any, *task: Any) -> Any:
        _roomy_heap()
        with _quiet_worker():
            return self.fn(shared, *task)


_HEAP_TUNED = False


def _roomy_heap() -> None:
    global _HEAP_TUNED
    if _HEAP_TUNED:
        return
    _HEAP_TUNED = True
    try:
        libc = ctypes.CDLL("libc.so.6")
        libc.mallopt(-3, 32 * 2**20)  # M_MMAP_THRESHOLD: glibc's largest allowed value on 64-bit
        libc.mallopt(-1, 256 * 2**20)  # M_TRIM_THRESHOLD
    except (OSError, AttributeError):
        pass


_QUIET_LOCK = threading.Lock()
_QUIET_TASKS = 0  # gonogo tasks running in this process
_PAUSED: dict[int, Any] = {}  # the worker's periodic callbacks that gonogo paused, by id


def _worker() -> Any:
    """The Dask worker this thread runs a task for, or None (not on a Dask worker)."""
    try:
        from distributed import get_worker

        return get_worker()
    except (ImportError, ValueError):
        return None


@contextmanager
def _quiet_worker() -> Iterator[None]:
    """The worker's profiler and health tick (:data:`QUIET`) paused while gonogo tasks run here.

    The first task to start pauses those that run, the last to end starts them again; both are done
    on the worker's event loop (its callbacks are not thread-safe), in the order asked. The tick's
    clock is set to the restart, so that the pause is not reported as an unresponsive event loop.
    """
    global _QUIET_TASKS
    worker = _worker()
    callbacks = getattr(worker, "periodic_callbacks", None)
    if not isinstance(callbacks, dict):
        yield
        return
    with _QUIET_LOCK:
        _QUIET_TASKS += 1
        if _QUIET_TASKS == 1:
            for name in QUIET:
                callback = callbacks.get(name)
                if callback is not None and (callback.is_running() or id(callback) in _PAUSED):
                    _PAUSED[id(callback)] = callback
                    worker.loop.add_callback(callback.stop)
    try:
        yield
    finally:
        with _QUIET_LOCK:
            _QUIET_TASKS -= 1
            if _QUIET_TASKS == 0:
                worker.loop.add_callback(_resume, worker, list(_PAUSED.values()))


def _resume(worker: Any, callbacks: list) -> None:
    """On the worker's event loop: start again the callbacks gonogo paused (those not running)."""
    if hasattr(worker, "_last_tick"):
        worker._last_tick = time.time()  # distributed.core.Server._measure_tick's clock
    for callback in callbacks:
        if not callback.is_running():
            callback.start()
