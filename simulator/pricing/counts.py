"""Classification counts of replicate seasons: every cutoff and every baseline, per replicate.

A replicate season is given as history row indices (n_rep, n_occasions). Its counts (hits, false
alarms, misses, correct negatives) do not depend on the costs, so they are made here once and
priced by :func:`simulator.pricing.costs.price`, the one place counts become money, with fixed
costs or with costs drawn per replicate (costs known only as a range).

- The model at every cutoff: each history row gets its slot once (how many cutoffs its
  probability reaches, :func:`~simulator.pricing.contingency.cutoff_slots`), so one bincount over a
  block's rows split by event and a reversed cumulative sum over slots give every cutoff at once
  (:func:`~simulator.pricing.contingency.counts_from_slots`).
- The baselines: every history row has one of a few patterns of (event, what each baseline does);
  a replicate's counts follow from how often it holds each pattern (one bincount and a product).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from .contingency import Contingency, counts_from_slots, cutoff_slots

__all__ = ["ReplicateCounts", "SeasonCounter", "as_extras", "from_extras"]


@dataclass(frozen=True)
class ReplicateCounts:
    """Counts of one block of replicates.

    ``model``: a :class:`Contingency` with fields (n_rep, n_cutoffs); ``baselines``: one with fields
    (n_rep, n_baselines) in the order the counter was given them; ``n_events``: (n_rep,). All int64
    as counted; int32 as a run keeps them (:func:`from_extras`, ``RunResult.replicate_counts``).
    """

    model: Contingency
    baselines: Contingency
    n_events: np.ndarray


class SeasonCounter:
    """Counts replicate seasons at every cutoff of one forecast and for the given baselines.

    Parameters
    ----------
    p, event : (n_rows,) the history's probabilities and whether the event happened.
    cutoffs : (n_cutoffs,) ascending.
    actions : name -> bool (n_rows,), whether each baseline acts on each history row; ``order``
        gives the order of the baselines' columns.
    """

    def __init__(self, p: np.ndarray, event: np.ndarray, cutoffs: np.ndarray,
                 actions: Mapping[str, np.ndarray], order: Sequence[str]):
        event = np.asarray(event, dtype=bool)
        self.n_cutoffs = int(np.asarray(cutoffs).size)
        self.slots, self.event = cutoff_slots(p, cutoffs), event  # each history row's slot and outcome
        columns = [event] + [np.asarray(actions[name], dtype=bool) for name in order]
        code = sum(column.astype(np.int64) << bit for bit, column in enumerate(columns))  # one int a row
        codes, pattern = np.unique(code, return_inverse=True)
        patterns = ((codes[:, None] >> np.arange(len(columns))) & 1).astype(bool)  # a column a bit
        self._pattern = pattern.ravel().astype(np.int64)
        self._n_patterns = patterns.shape[0]
        happened, acts = patterns[:, :1], patterns[:, 1:]
        self._pattern_event = patterns[:, 0].astype(np.int64)
        self._pattern_cells = [(acts & happened).astype(np.int64), (acts & ~happened).astype(np.int64),
                               (~acts & happened).astype(np.int64), (~acts & ~happened).astype(np.int64)]

    def __call__(self, rows: np.ndarray) -> ReplicateCounts:
        baselines, n_events = self.baselines(rows)
        return ReplicateCounts(model=self.model(rows), baselines=baselines, n_events=n_events)

    def baselines(self, rows: np.ndarray) -> tuple[Contingency, np.ndarray]:
        """The baselines' counts (fields (n_rep, n_baselines)) and the events of each replicate
        (n_rep,): a :class:`ReplicateCounts` without the model's."""
        held = self._held(rows)
        return Contingency(*(held @ cells for cells in self._pattern_cells)), held @ self._pattern_event

    def model(self, rows: np.ndarray) -> Contingency:
        """Counts (n_rep, n_cutoffs) of acting when the probability reaches each cutoff."""
        return counts_from_slots(self.slots[rows], self.event[rows], self.n_cutoffs)

    def _held(self, rows: np.ndarray) -> np.ndarray:
        """How many occasions of each replicate hold each pattern, (n_rep, n_patterns)."""
        n_rep = rows.shape[0]
        code = self._pattern[rows] + (np.arange(n_rep, dtype=np.int64) * self._n_patterns)[:, None]
        return np.bincount(code.ravel(), minlength=n_rep * self._n_patterns).reshape(n_rep, -1)


# ------------------------------------------------------------------------------------------------
# counts carried through a run's tasks in a priced block's extras (replicates first, int32)

_MODEL_KEY, _BASELINES_KEY = "replicate_counts_model", "replicate_counts_baselines"


def as_extras(counts: ReplicateCounts) -> dict[str, np.ndarray]:
    """A block's counts as arrays with replicates first, for :attr:`PricedBlock.extras`:
    (n_rep, 4, n_cutoffs) and (n_rep, 4, n_baselines), the cells in :class:`Contingency` order.
    int32: a season holds far fewer than 2^31 occasions, and half the memory of int64 travels back."""
    return {_MODEL_KEY: np.stack(list(_cells(counts.model)), axis=1).astype(np.int32),
            _BASELINES_KEY: np.stack(list(_cells(counts.baselines)), axis=1).astype(np.int32)}


def from_extras(extras: Mapping[str, np.ndarray], n_events: np.ndarray
                ) -> tuple[ReplicateCounts | None, dict[str, np.ndarray]]:
    """The counts :func:`as_extras` put in a (joined) block's extras, as :class:`ReplicateCounts`
    of int32 arrays (views, no copy), and the extras without them; None when they were not kept."""
    rest = {key: value for key, value in extras.items() if key not in (_MODEL_KEY, _BASELINES_KEY)}
    if _MODEL_KEY not in extras:
        return None, rest
    model, baselines = extras[_MODEL_KEY], extras[_BASELINES_KEY]
    return ReplicateCounts(model=Contingency(*(model[:, i] for i in range(4))),
                           baselines=Contingency(*(baselines[:, i] for i in range(4))),
                           n_events=np.asarray(n_events).astype(np.int32)), rest


def _cells(counts: Contingency) -> tuple[np.ndarray, ...]:
    return counts.hits, counts.false_alarms, counts.misses, counts.correct_negatives
