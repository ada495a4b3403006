"""How local workers live and end: started deaf to Ctrl-C, ended with the run's process however it ends.

Stops (Ctrl-C, SIGTERM) are held back while worker processes are started (:func:`_without_ctrl_c`);
each worker watches the run's process and ends itself when that ends (:func:`_end_with`); the
resource tracker is kept from warning about what it frees after a kill (:func:`_quiet_tracker`).
"""

from __future__ import annotations

import ctypes
import os
import select
import signal
import sys
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

__all__ = ["process_running"]


_PR_SET_PDEATHSIG = 1  # linux/prctl.h


def _end_with(pid: int) -> None:
    """End this worker process as soon as process ``pid`` (the run's) has ended, however it ended.

    A run's process killed by SIGKILL cannot end its workers, and a worker of
    ``concurrent.futures`` waits for its next task for good (it holds a writing end of its own task
    queue, so never sees the queue close); the process that forks the workers and the resource
    tracker then wait for the workers, and the tracker frees the semaphores and the shared-memory
    block in /dev/shm only once all of them have ended. So each worker watches the run's process:
    a thread waits on a pidfd of it (``pidfd_open``, Linux 5.3 and later), which becomes readable
    when it ends, or elsewhere polls it twice a second, then ends the worker with ``os._exit``.
    ``prctl(PR_SET_PDEATHSIG, SIGKILL)`` also ends the worker with its direct parent (the
    forkserver, or the run's process under ``spawn``) on Linux.
    """
    try:
        ctypes.CDLL(None).prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    except (OSError, AttributeError, TypeError):  # not Linux
        pass
    try:
        pidfd = os.pidfd_open(pid)
    except ProcessLookupError:
        os._exit(1)  # the run has already ended
    except (AttributeError, OSError):
        pidfd = None

    def watch() -> None:
        if pidfd is not None:
            select.select([pidfd], [], [])
        else:
            while process_running(pid):
                time.sleep(0.5)
        os._exit(1)

    threading.Thread(target=watch, name="gonogo-end-with-run", daemon=True).start()


def process_running(pid: int) -> bool:
    """Whether process ``pid`` runs (a process of another user counts: it cannot be signalled)."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


_TRACKER_WARNINGS = "ignore::UserWarning:multiprocessing.resource_tracker"


def _quiet_tracker() -> None:
    """Keep the resource tracker (started after this, with this process's warning options) from
    warning about "leaked" semaphores and shared memory when a run's process was killed: it frees
    them then, as it should, and the warning would be the only thing printed after the kill."""
    if _TRACKER_WARNINGS not in sys.warnoptions:
        sys.warnoptions.append(_TRACKER_WARNINGS)


@contextmanager
def _without_ctrl_c() -> Iterator[None]:
    """Ctrl-C and SIGTERM held back (not lost) while worker processes are started from here.

    A stop in the middle of starting a worker would leave a process started but unknown to the
    pool, half fed with its inputs, to fail noisily later. So in the main thread both signals are
    only noted meanwhile and raised again at the end, where the usual handlers turn them into
    exceptions. Ctrl-C is also blocked in this thread, and a child inherits that: the forkserver
    started here, and every worker it forks, never sees the terminal's Ctrl-C (which reaches the
    whole process group), even while still loading its modules; the run's process ends them.
    (The resource tracker does the same for itself.)
    """
    noted: list[int] = []
    previous: dict[int, Any] = {}
    if threading.current_thread() is threading.main_thread():
        previous = {s: signal.signal(s, lambda signum, frame: noted.append(signum))
                    for s in (signal.SIGINT, signal.SIGTERM) if signal.getsignal(s) is not signal.SIG_IGN}
    mask = (signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT}) if hasattr(signal, "pthread_sigmask")
            else None)
    try:
        yield
    finally:
        if mask is not None:
            signal.pthread_sigmask(signal.SIG_SETMASK, mask)
        for signum, handler in previous.items():
            signal.signal(signum, handler)
        if noted:
            signal.raise_signal(noted[0])
