"""Numbers for the report's script, written compactly: whole counts as base64 of little-endian
unsigned integers (one, two or four bytes each, the fewest that hold the largest), money as base64
of little-endian float64; and :func:`decode_counts`, their reading back (for tests and
:mod:`~simulator.account.whatif_rules`' mirror of the page).

The page reads them with ``atob``: byte ``i`` of a count of ``width`` bytes weighs ``256 ** i``.
"""

from __future__ import annotations

import base64
import math

import numpy as np

__all__ = ["UINT_MAX", "encode_uint", "encode_counts", "encode_float64", "decode_counts", "decode_float64",
           "typed_number", "start_value"]

UINT_MAX = {1: 255, 2: 65535, 4: 4294967295}


def encode_uint(values: np.ndarray, width: int) -> str:
    """Whole counts as base64 of unsigned integers of ``width`` bytes, little-endian, row-major."""
    return base64.b64encode(np.ascontiguousarray(values, dtype=f"<u{width}").tobytes()).decode("ascii")


def encode_counts(values: np.ndarray) -> dict | None:
    """Whole counts (0 or more) as ``{"width", "step", "data"}``: divided by ``step``, the greatest
    common divisor of them all (1 when all are 0), and written at the fewest bytes that hold the
    largest quotient; None when even four bytes do not hold it."""
    values = np.asarray(values, dtype=np.int64)
    step = int(np.gcd.reduce(values.ravel())) if values.size else 0
    step = step or 1
    quotient = values // step
    largest = int(quotient.max(initial=0))
    width = next((w for w in (1, 2, 4) if largest <= UINT_MAX[w]), None)
    if width is None:
        return None
    return {"width": width, "step": step, "data": encode_uint(quotient, width)}


def encode_float64(values: np.ndarray) -> str:
    """Money as base64 of little-endian float64, row-major."""
    return base64.b64encode(np.ascontiguousarray(values, dtype="<f8").tobytes()).decode("ascii")


def decode_counts(packed: dict) -> np.ndarray:
    """The counts :func:`encode_counts` wrote, flat, int64."""
    quotient = np.frombuffer(base64.b64decode(packed["data"]), dtype=f"<u{packed['width']}")
    return quotient.astype(np.int64) * int(packed["step"])


def decode_float64(text: str) -> np.ndarray:
    return np.frombuffer(base64.b64decode(text), dtype="<f8").copy()


def typed_number(value: float) -> str:
    """An amount as a reader would type it: ``2400``, ``-150.5``."""
    value = float(value)
    return str(int(value)) if value.is_integer() and math.isfinite(value) else repr(value)


def start_value(scenario, key: str, value: float) -> float:
    """A what-if field's starting value for the scenario's ``key`` (``"costs.miss"``,
    ``"operations.day_rate"``): a range's PERT mean to the cent, as a reader would type it (308.33,
    not 308.3333333333333), any other value as the scenario writes it."""
    given = scenario.cost_ranges().get(key)
    return round(float(value), 2) if given is not None and given.high > given.low else float(value)
