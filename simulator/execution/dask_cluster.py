"""Tasks on an existing Dask cluster: checking the address, scattering the inputs, tasks in flight.

:class:`DaskExecutor` sends tasks to a Dask scheduler (``distributed.Client``), given by address or
as a client; an address is probed first (:func:`_probe`) so that a wrong one fails in one line.
Each task runs wrapped (:mod:`.dask_worker`) so that the worker's process suits it. Dask is an
optional dependency, imported only when a cluster is used.
"""

from __future__ import annotations

import socket
import struct
from typing import Any

from ..inputs.errors import InputError
from .dask_worker import _OnDaskWorker
from .executor import IN_FLIGHT_PER_WORKER, Executor

__all__ = ["DaskExecutor", "CONNECT_TIMEOUT", "CLUSTER_ENV"]

CONNECT_TIMEOUT = 5.0  # seconds a cluster's scheduler has to answer
REACH_TIMEOUT = 1.0  # seconds each worker has to accept a connection from here (_direct)
_HANDSHAKE_BYTES = 1 << 20  # a Dask handshake is a few hundred bytes; a first message above this is not one
CLUSTER_ENV = "GONOGO_CLUSTER"  # the command line's --cluster, when not given


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
        self._direct = _direct(client)
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
                index, result = pending.pop(future), self.client.gather(future, direct=self._direct)
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


def _direct(client: Any) -> bool | None:
    """Whether to fetch each result from the worker that holds it (True) rather than through the
    scheduler, which Dask does for a client outside the cluster (None: Dask's choice).

    Through the scheduler every result is sent twice, and the scheduler's event loop handles every
    byte: with the scheduler on this machine, as on a LocalCluster, that is processor time taken
    from the workers (``benchmarks/bench_dask_worker.py`` shows the figures). Directly is chosen
    only when every worker accepts a tcp connection from here within :data:`REACH_TIMEOUT`, and
    never for a client that says itself (``direct_to_workers``); a result a worker cannot give is
    still asked of the scheduler (``Client.gather``, distributed 2026.8).
    """
    from distributed.comm.addressing import parse_address, parse_host_port

    if getattr(client, "direct_to_workers", None) is not None:
        return None
    addresses = list(client.scheduler_info().get("workers", {}))
    for address in addresses:
        try:
            scheme, location = parse_address(address)
            if scheme != "tcp":
                return None
            socket.create_connection(parse_host_port(location), timeout=REACH_TIMEOUT).close()
        except (OSError, ValueError):
            return None
    return True if addresses else None
