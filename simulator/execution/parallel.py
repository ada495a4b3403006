"""Where the replicate work runs: in this process, in local worker processes, or on a Dask cluster.

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
- :class:`PoolExecutor` runs them in local worker processes (``concurrent.futures``, started with
  ``forkserver`` where there is one, else ``spawn``); the shared inputs are pickled once, their large
  arrays put in one block of shared memory that every worker maps rather than copies;
- :class:`DaskExecutor` sends them to an existing Dask scheduler (``distributed.Client``); the
  shared inputs are scattered to every worker once. Dask is an optional dependency
  (``pip install "dask[distributed]"``); the workers need gonogo installed too.

Each executor keeps a bounded number of tasks in flight, so memory in this process stays bounded
whatever the number of tasks.
"""

from __future__ import annotations

import ctypes
import io
import multiprocessing
import os
import pickle
import select
import signal
import socket
import struct
import sys
import threading
import time
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from contextlib import contextmanager
from multiprocessing.shared_memory import SharedMemory
from typing import Any

import numpy as np

from ..inputs.errors import InputError

__all__ = ["Executor", "InlineExecutor", "PoolExecutor", "DaskExecutor", "open_executor", "prepare",
           "default_workers", "process_running", "CONNECT_TIMEOUT", "CLUSTER_ENV", "IN_FLIGHT_PER_WORKER"]

CONNECT_TIMEOUT = 5.0  # seconds a cluster's scheduler has to answer
_HANDSHAKE_BYTES = 1 << 20  # a Dask handshake is a few hundred bytes; a first message above this is not one
CLUSTER_ENV = "GONOGO_CLUSTER"  # the command line's --cluster, when not given
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


# ------------------------------------------------------------------------------------------------
# local worker processes

_SHARED: Any = None  # in a worker process: the run's shared inputs, installed once per worker


def _install(shared: Any, parent: int | None = None) -> None:
    """A worker's start: ignore Ctrl-C (the run's own process handles it and ends the workers),
    end with the run's process ``parent`` (:func:`_end_with`), then load the shared inputs."""
    global _SHARED
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if parent is not None:
        _end_with(parent)
    _SHARED = shared.load() if isinstance(shared, _InSharedMemory) else shared


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


class _InSharedMemory:
    """Shared inputs on their way to local workers: pickled once, their arrays of at least
    :data:`OUT_OF_BAND_BYTES` kept out of the pickle (protocol 5's out-of-band buffers) and copied
    into one block of shared memory, which each worker maps read-only instead of receiving and
    holding a copy. The pickle that travels is then small, so workers start at once.

    The process that made it owns the block: :meth:`release` frees it once the workers have ended.
    :meth:`make` gives None where shared memory cannot take the arrays (too little room, or none);
    the inputs then travel as they are.
    """

    ALIGN = 64  # bytes: each array starts on a cache line

    def __init__(self, pickled: bytes, name: str, spans: list[tuple[int, int]], memory: SharedMemory | None):
        self.pickled, self.name, self.spans, self._memory = pickled, name, spans, memory

    @classmethod
    def make(cls, shared: Any) -> "_InSharedMemory | None":
        large: list[memoryview] = []

        def out_of_band(buffer: pickle.PickleBuffer) -> bool:
            raw = buffer.raw()
            if raw.nbytes < OUT_OF_BAND_BYTES:
                return True  # small: pickled in band
            large.append(raw)
            return False

        out = io.BytesIO()
        _Pickler(out, protocol=5, buffer_callback=out_of_band).dump(shared)
        pickled = out.getvalue()
        spans, size = [], 0
        for raw in large:
            spans.append((size, raw.nbytes))
            size += -(-raw.nbytes // cls.ALIGN) * cls.ALIGN
        if not large or not _room_for(size):
            return None
        try:
            memory = SharedMemory(create=True, size=size)
        except OSError:
            return None
        for (offset, nbytes), raw in zip(spans, large):
            memory.buf[offset: offset + nbytes] = raw
        return cls(pickled, memory.name, spans, memory)

    def __getstate__(self) -> dict:
        return {"pickled": self.pickled, "name": self.name, "spans": self.spans, "_memory": None}

    def load(self) -> Any:
        """In a worker: the shared inputs, their large arrays read-only views of the block."""
        view = _Attached(name=self.name).buf.toreadonly()
        return pickle.loads(self.pickled, buffers=[view[offset: offset + n] for offset, n in self.spans])

    def release(self) -> None:
        """In the process that made it, once no worker uses it: free the block."""
        if self._memory is not None:
            self._memory.close()
            self._memory.unlink()
            self._memory = None


OUT_OF_BAND_BYTES = 1 << 16  # arrays at least this large go to shared memory


class _Pickler(pickle.Pickler):
    """Pickles dates and times (numpy's datetime64 and timedelta64, which numpy keeps in band) as
    their int64 values, so that they go out of band too."""

    def reducer_override(self, obj):
        if isinstance(obj, np.ndarray) and obj.dtype.kind in "mM" and obj.flags.c_contiguous:
            return _viewed, (obj.view(np.int64), obj.dtype.str)
        return NotImplemented


def _viewed(values, dtype: str):
    return values.view(dtype)


class _Attached(SharedMemory):
    """A worker's mapping of the block, never closed by hand: it stays mapped while any array
    points into it, and the system unmaps it when the worker ends (closing it while arrays use it
    would fail, noisily, when Python tidies up)."""

    def __del__(self) -> None:
        pass


def _room_for(size: int) -> bool:
    """Whether the shared-memory file system has room for ``size`` bytes (Linux's /dev/shm, often
    small in containers: a full one kills a worker with SIGBUS when it touches the pages). Elsewhere
    the system is trusted to say so when the block is made."""
    try:
        stat = os.statvfs("/dev/shm")
    except OSError:
        return True
    return stat.f_bavail * stat.f_frsize >= 1.1 * size


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


# ------------------------------------------------------------------------------------------------
# a Dask cluster

def _probe(address: str) -> None:
    """Fail fast, in one line, when nothing listens at a tcp address, or something that is not a
    Dask scheduler does (before Dask retries, or reads a stranger's bytes as a message length).

    A Dask scheduler writes its handshake as soon as it accepts a connection, as one message that
    starts with its length in bytes (an unsigned 64-bit little-endian integer; ``distributed.comm.tcp``,
    ``TCP.write``, as read from the 2026.8 source). The probe reads those 8 bytes: a server that
    closes at once, stays silent, or sends a length no handshake has is not a Dask scheduler.
    """
    from distributed.comm.addressing import parse_address, parse_host_port

    try:
        scheme, location = parse_address(address)
    except ValueError:
        raise InputError(f"cluster {address!r}: not a scheduler address; write it as "
                         "tcp://host:8786") from None
    if scheme not in ("tcp", "tls"):
        return
    try:
        host, port = parse_host_port(location)
    except ValueError:
        raise InputError(f"cluster {address}: no port; write the address as tcp://host:8786") from None
    try:
        connection = socket.create_connection((host, port), timeout=CONNECT_TIMEOUT)
    except OSError as exc:
        reason = exc.strerror or type(exc).__name__
        raise InputError(f"cluster {address}: no answer within {CONNECT_TIMEOUT:g} s ({reason.lower()}); "
                         "check the address and that the Dask scheduler is running, or leave out "
                         f"--cluster and {CLUSTER_ENV} to run on this machine") from None
    if scheme != "tcp":
        connection.close()
        return
    first, silent = b"", False
    with connection:
        try:
            while len(first) < 8:
                more = connection.recv(8 - len(first))
                if not more:
                    break
                first += more
        except TimeoutError:
            silent = True
        except OSError:  # reset
            pass
    if len(first) < 8:
        what = (f"sent nothing within {CONNECT_TIMEOUT:g} s" if silent and not first else
                "closed the connection" if not first else "sent a few bytes and stopped")
        raise InputError(f"cluster {address}: the server there {what}, which a Dask scheduler does not; "
                         "check the address and port (a scheduler listens on 8786 by default), or leave "
                         f"out --cluster and {CLUSTER_ENV} to run on this machine")
    length = struct.unpack("<Q", first)[0]
    if not 0 < length <= _HANDSHAKE_BYTES:
        raise InputError(f"cluster {address}: the server there does not speak Dask's protocol (its first "
                         "message is not a Dask handshake); check the address and port (a scheduler "
                         f"listens on 8786 by default), or leave out --cluster and {CLUSTER_ENV} to run on "
                         "this machine")


class DaskExecutor(Executor):
    """Tasks on an existing Dask scheduler, given by address or as a ``distributed.Client``."""

    def __init__(self, cluster: Any):
        try:
            import distributed
        except ImportError:
            raise InputError('running on a cluster needs Dask; install it with pip install '
                             '"dask[distributed]" (or pip install ".[cluster]" in the gonogo source '
                             "folder)") from None
        self._own = not hasattr(cluster, "submit")
        if self._own:
            address = str(cluster).strip()
            _probe(address)
            try:
                client = distributed.Client(address, timeout=CONNECT_TIMEOUT, set_as_default=False)
            except Exception as exc:  # noqa: BLE001 - whatever went wrong, the user needs one line
                reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
                raise InputError(f"cluster {address}: did not answer as a Dask scheduler ({reason}); "
                                 f"check the address, or leave out --cluster and {CLUSTER_ENV} to run on "
                                 "this machine") from None
        else:
            client = cluster
        self.client = client
        self.workers = max(1, sum(w.get("nthreads", 1) for w in
                                  client.scheduler_info().get("workers", {}).values()))
        self.where = f"the Dask cluster at {client.scheduler.address} ({self.workers} threads)"
        self._distributed = distributed
        self._scattered: tuple[Any, Any] | None = None  # (shared inputs, their future on the cluster)

    def map_unordered(self, fn, shared, tasks):
        fn = _OnDaskWorker(fn)
        if self._scattered is None or shared is not self._scattered[0]:  # sent once for every map
            self._forget_shared()
            self._scattered = (shared, self.client.scatter(shared, broadcast=True, hash=False))
        shared_future = self._scattered[1]
        queue = iter(enumerate(tasks))
        finished = self._distributed.as_completed(loop=self.client.loop)
        pending: dict[Any, int] = {}

        def submit_next() -> None:
            item = next(queue, None)
            if item is not None:
                future = self.client.submit(fn, shared_future, *item[1], pure=False)
                pending[future] = item[0]
                finished.add(future)

        try:
            for _ in range(IN_FLIGHT_PER_WORKER * self.workers):
                submit_next()
            for future in finished:
                index, result = pending.pop(future), future.result()
                submit_next()
                yield index, result
        finally:
            if pending:
                self.client.cancel(list(pending))

    def _forget_shared(self) -> None:
        if self._scattered is not None:
            self.client.cancel([self._scattered[1]])
            self._scattered = None

    def close(self) -> None:
        self._forget_shared()
        if self._own:
            self.client.close()


class _OnDaskWorker:
    """A task function that first gives large arrays back to the heap in the worker's process.

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
