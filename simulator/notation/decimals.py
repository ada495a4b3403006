"""Probabilities and cutoffs as the decimals people write: the one place they are compared.

"Act when p >= cutoff" must hold as a person reads the numbers in the history and the scenario. In
binary floating point it does not: with ``flip = true`` the file's 0.56 becomes
1 - 0.56 = 0.43999999999999995, which misses the cutoff 0.44. So every probability, cutoff, threshold
and bin edge is compared here, in whole units of 10^-12 (:data:`PLACES` decimals): each number is
first rounded to the nearest unit, an exact int64, and the comparison is made on those integers.

- A number written with up to 12 decimals (every probability a supplier publishes, every cutoff and
  threshold of a scenario) is its own unit count exactly, and so is its complement: 0.56 is 560...0
  units, 1 - 0.56 is 440...0, and 0.44 reaches 0.44.
- A number with more decimals counts as its nearest 12-decimal value (0.43999999999999995 counts
  as 0.44): a difference of at most 5e-13, far below any forecast's meaning.
- Computed probabilities (the stress cases' adapted or degraded ones, a month's event rate, the
  break-even probability of the costs) stay floats and go through the same comparison.

Probabilities read from a history are kept on the grid (:func:`snap`) and complemented on it
(:func:`complement`), so a file and its complement read with ``flip = true`` give the same floats.
Cutoff grids are built in units too (:func:`grid`): each cutoff is the float nearest its decimal.
The approach (fixed-point decimals for comparisons) is common practice, with no single source.
"""

from __future__ import annotations

import numpy as np

__all__ = ["PLACES", "units", "snap", "complement", "reaches", "slots", "grid", "whole_steps", "bins"]

PLACES = 12  # decimals of the unit in which probabilities are compared
_SCALE = 10**PLACES


def units(x) -> np.ndarray:
    """Each number in whole units of 10^-12, rounded to the nearest (int64, the shape of ``x``).

    For x in [0, 1] the product x * 10^12 is within 10^-3 units of the true product of a 12-decimal
    number, so the rounding gives its exact unit count.
    """
    return np.rint(np.asarray(x, dtype=np.float64) * _SCALE).astype(np.int64)


def _from_units(u: np.ndarray) -> np.ndarray:
    # one correctly rounded division: the float nearest the decimal u / 10^12
    return np.asarray(u, dtype=np.float64) / _SCALE


def snap(p) -> np.ndarray:
    """Each probability as the float nearest its 12-decimal value (a no-op for numbers written with
    up to 12 decimals)."""
    return _from_units(units(p))


def complement(p) -> np.ndarray:
    """1 - p, exact on the 12-decimal grid: the complement of 0.56 is 0.44, not 0.43999999999999995."""
    return _from_units(_SCALE - units(p))


def reaches(p, threshold) -> np.ndarray:
    """Whether ``p >= threshold`` as decimals (both broadcast; bool array)."""
    return units(p) >= units(threshold)


def slots(p, cutoffs) -> np.ndarray:
    """How many cutoffs each probability reaches, ``#{k : p >= cutoffs[k]}`` as decimals (int64, the
    shape of ``p``); ``cutoffs`` ascending."""
    return np.searchsorted(units(cutoffs), units(p), side="right").astype(np.int64)


def whole_steps(lo: float, hi: float, step: float) -> int | None:
    """How many steps of ``step`` lead from ``lo`` to ``hi`` as decimals, or None when they do not
    divide it into whole steps (or the step has more than 12 decimals)."""
    lo_u, hi_u, step_u = (int(u) for u in units([lo, hi, step]))
    if step_u <= 0 or (hi_u - lo_u) % step_u:
        return None
    return (hi_u - lo_u) // step_u


def grid(lo: float, hi: float, step: float) -> np.ndarray:
    """Cutoffs from ``lo`` to ``hi`` by ``step``, both ends included, as exact decimals.

    Built as integers of 10^-12 and divided once, so each cutoff is the float nearest its decimal
    (never ``arange`` with a float step, whose 0.3 is 0.30000000000000004).
    """
    n = whole_steps(lo, hi, step)
    if n is None:
        raise ValueError(f"the step {step} does not divide {lo} to {hi} into whole steps")
    lo_u, step_u = int(units(lo)), int(units(step))
    return _from_units(lo_u + step_u * np.arange(n + 1, dtype=np.int64))


def bins(p, n_bins: int) -> np.ndarray:
    """Uniform bin of each probability as decimals: [k/n, (k+1)/n), the last closed at 1 (int64)."""
    return np.minimum(units(p) * int(n_bins) // _SCALE, int(n_bins) - 1)
