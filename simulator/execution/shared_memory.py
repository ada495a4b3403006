"""Shared inputs on their way to local workers: pickled once, their large arrays in one block of shared memory.

Each worker maps the block read-only instead of receiving and holding a copy
(:class:`_InSharedMemory`); where shared memory has no room, the inputs travel as they are.
"""

from __future__ import annotations

import io
import os
import pickle
from multiprocessing.shared_memory import SharedMemory
from typing import Any

import numpy as np

__all__ = ["OUT_OF_BAND_BYTES"]


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
