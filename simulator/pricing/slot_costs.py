"""Season costs at every cutoff straight from the decision slots, where the sums are exact.

A forecast whose counts nobody keeps (a later forecast of ``[forecasts]``, or any forecast of a
run that keeps no counts) needs only its season costs at every cutoff. With fixed costs these
follow from each occasion's slot (how many cutoffs its probability reaches,
:func:`~simulator.pricing.contingency.cutoff_slots`) without the four count arrays: at cutoff k a
replicate season costs what not acting on any occasion would, plus the difference acting makes on
each occasion it acts on (slot > k):

    cost_k = sum_i miss_or_correct_negative_i + sum_{i: slot_i > k} delta_i,
    delta_i = hit - miss on an event occasion, false_alarm - correct_negative otherwise,

so one weighted bincount per block (replicate x slot) and one cumulative sum from the top slot
down give every cutoff at once (the same tally as the counts, weighted by money instead of split
by outcome). The weights and the cost of never acting depend only on the rows' outcomes, so
the forecasts priced on the same rows share them (:class:`Shared`). Common practice (a cumulative
sum over sorted scores, as scikit-learn's ``_binary_clf_curve`` counts its cells), no single source.

These are the same bits as :func:`simulator.pricing.costs.price` applied to the counts, the one
place counts become money, where both are exact. Every finite binary64 number is a whole multiple
of a power-of-two fraction 2^-s (a whole number: s = 0; a quarter: s = 2; 0.10 needs s = 55 or
so), and sums, differences and products of whole counts with such multiples are multiples of the
same 2^-s; binary64 holds each of them exactly while its magnitude stays below 2^(53 - s) (a
53-bit significand), and each operation is rounded from its exact result, so one whose exact
result is representable is exact (IEEE 754-2008, Standard for Floating-Point Arithmetic, clause
5.1 and table 3.2 of clause 3.3; clause numbers from memory). Both ways then give the exact sum,
whatever its order. :func:`exact_for` says when (whole numbers, halves or quarters of money and
the like, with seasons far below the bound; not 0.10); otherwise a pricer prices the counts
(``tests/test_counts.py`` checks the bits agree).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..inputs.scenario_costs import Costs

__all__ = ["Shared", "SlotCosts", "exact_for"]

_EXACT = 2 ** 53


def exact_for(costs: Costs, n_occasions: int) -> bool:
    """Whether :class:`SlotCosts` gives exactly :func:`~simulator.pricing.costs.price` of the counts
    for seasons of ``n_occasions`` (see the module's text): with every cost a whole multiple of
    2^-s (s the least that serves all four; ``float.as_integer_ratio`` gives each one's power-of-two
    denominator), 4 x ``n_occasions`` x the largest magnitude in units of 2^-s below 2^53 (a bound
    on every product, partial sum and difference either way makes), and no cost -0.0. A season of
    no occasions is left to the counts (there ``price`` may give -0.0)."""
    values = [float(c) for c in costs.as_array()]
    if n_occasions <= 0 or not all(math.isfinite(v) for v in values):
        return False
    if any(v == 0 and math.copysign(1.0, v) < 0 for v in values):
        return False
    ratios = [v.as_integer_ratio() for v in values]  # (numerator, a power of two)
    unit = max(denominator for _, denominator in ratios)  # 2^s
    largest = max(abs(numerator) * (unit // denominator) for numerator, denominator in ratios)  # in 2^-s
    return 4 * int(n_occasions) * largest < _EXACT  # whole numbers: no float rounding in the test


@dataclass(frozen=True)
class Shared:
    """What every forecast priced on one block of replicate rows at the same costs shares: it
    depends on the rows' outcomes, not on their probabilities (:meth:`SlotCosts.share`).

    ``weights``: the money acting makes on each occasion, (n_rep * n_occasions,) float64;
    ``idle``: each replicate season's cost of never acting, (n_rep,) float64.
    """

    costs: Costs
    weights: np.ndarray
    idle: np.ndarray


class SlotCosts:
    """Season costs (n_rep, n_cutoffs) of acting when the probability reaches each cutoff, made from
    the slots of the history's rows with fixed ``costs`` (call only where :func:`exact_for` holds).

    Parameters
    ----------
    slots : (n_rows,) int, each history row's slot (:func:`~simulator.pricing.contingency.cutoff_slots`).
    event : (n_rows,) bool, whether the event happened on each row.
    n_cutoffs : int
    costs : the fixed costs.
    """

    def __init__(self, slots: np.ndarray, event: np.ndarray, n_cutoffs: int, costs: Costs):
        event = np.asarray(event, dtype=bool)
        self.costs = costs
        self.n_cutoffs = int(n_cutoffs)
        self._slots = np.asarray(slots, dtype=np.int64)
        self._event = event
        # the money acting makes on each row (float64: the weights of a bincount)
        self._delta = np.where(event, float(costs.hit) - float(costs.miss),
                               float(costs.false_alarm) - float(costs.correct_negative))

    def share(self, rows: np.ndarray, n_events: np.ndarray | None = None) -> Shared:
        """What the forecasts priced on ``rows`` at these costs share; ``n_events``, each replicate's
        event occasions, when the caller has counted them already."""
        if n_events is None:
            n_events = self._event[rows].sum(axis=1)
        idle = n_events * float(self.costs.miss) + (rows.shape[1] - n_events) * float(self.costs.correct_negative)
        return Shared(costs=self.costs, weights=self._delta[rows].ravel(), idle=idle)

    def __call__(self, rows: np.ndarray, shared: Shared | None = None) -> np.ndarray:
        """Season costs of the replicate seasons ``rows`` (n_rep, n_occasions) at every cutoff (a
        view, rows apart by n_cutoffs + 1); ``shared`` from :meth:`share` of any forecast of the
        same history at the same costs, on the same rows."""
        if shared is None or shared.costs != self.costs:
            shared = self.share(rows)
        n_rep = rows.shape[0]
        width = self.n_cutoffs + 1
        code = self._slots[rows]
        code += (np.arange(n_rep, dtype=np.int64) * width)[:, None]
        tally = np.bincount(code.ravel(), weights=shared.weights, minlength=n_rep * width).reshape(n_rep, width)
        # never acting's cost rides in the top slot, on which every cutoff acts
        tally[:, -1] += shared.idle
        # acting at cutoff k <=> slot > k: a cumulative sum from the top slot down (in place; numpy
        # gives overlapping operands the result of separate ones), then slots 1 and up
        down = tally[:, ::-1]
        np.cumsum(down, axis=1, out=down)
        return tally[:, 1:]
