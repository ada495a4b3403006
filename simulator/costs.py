"""Price replicate seasons for every strategy and every cutoff.

This is the one place that turns classification counts into money (:func:`price`). The model at
every cutoff is priced from per-occasion cutoff slots computed once for the history
(:func:`~simulator.scoring.cutoff_slots`), so a replicate's costs at all cutoffs come from one
bincount and one cumulative sum. The baselines are fixed per-occasion action rules priced on the
same replicates (common random numbers).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .history import History
from .scenario import BASELINES, Costs, break_even_probability
from .scoring import Contingency, counts_from_slots, cutoff_slots

__all__ = ["price", "baseline_actions", "SeasonPricer", "PricedBlock"]


def price(counts: Contingency, costs: Costs) -> np.ndarray:
    """Cost of each classification matrix: hits*hit + false_alarms*false_alarm + ... (float64)."""
    return (counts.hits * costs.hit + counts.false_alarms * costs.false_alarm
            + counts.misses * costs.miss + counts.correct_negatives * costs.correct_negative)


def baseline_actions(history: History, costs: Costs) -> dict[str, np.ndarray]:
    """Whether each baseline acts on each history row, bool (n_rows,) per baseline.

    - ``never_act`` / ``always_act``: the two fixed rules.
    - ``persistence``: act when the event happened on the previous occasion (the naive forecast of
      a binary series; Katz 1993 on the value of persistence).
    - ``seasonal_rate``: act in a calendar month when that month's event rate over the training
      period reaches the break-even probability (a monthly climatology; Hamill and Juras 2006 on
      judging skill against a varying climatology).
    - ``perfect``: act exactly when the event happens (the floor no forecast can beat).
    """
    n = history.n_rows
    p_star = break_even_probability(costs)
    month = (history.dates.astype("datetime64[M]").astype(np.int64) % 12)
    train = history.training
    months_seen = np.bincount(month[train], minlength=12)
    events_seen = np.bincount(month[train], weights=history.event[train], minlength=12)
    overall = history.event[train].mean()
    rate = np.where(months_seen > 0, events_seen / np.maximum(months_seen, 1), overall)
    if np.isnan(p_star):  # one action is always best: the climatological rule takes it
        acts_anyway = costs.false_alarm - costs.correct_negative <= 0
        seasonal = np.full(n, acts_anyway)
    else:
        seasonal = rate[month] >= p_star
    return {
        "never_act": np.zeros(n, dtype=bool),
        "always_act": np.ones(n, dtype=bool),
        "persistence": history.prev_event.copy(),
        "seasonal_rate": seasonal,
        "perfect": history.event.copy(),
    }


@dataclass(frozen=True)
class PricedBlock:
    """Season costs of one block of replicates: ``model`` (n_rep, n_cutoffs), ``baselines``
    (n_rep, n_baselines) in :data:`~simulator.scenario.BASELINES` order, ``n_events`` (n_rep,)."""

    model: np.ndarray
    baselines: np.ndarray
    n_events: np.ndarray


class SeasonPricer:
    """Prices replicate seasons given as history row indices (n_rep, n_occasions)."""

    def __init__(self, history: History, cutoffs: np.ndarray, costs: Costs):
        self.costs = costs
        self.n_cutoffs = int(cutoffs.size)
        self._slots = cutoff_slots(history.p, cutoffs)
        self._event = history.event
        actions = baseline_actions(history, costs)
        self._baseline_actions = np.stack([actions[name] for name in BASELINES])  # (n_baselines, n_rows)

    def __call__(self, rows: np.ndarray) -> PricedBlock:
        event = self._event[rows]
        model = price(counts_from_slots(self._slots[rows], event, self.n_cutoffs), self.costs)
        acts = self._baseline_actions[:, rows]  # (n_baselines, n_rep, n_occ)
        n_occ = rows.shape[1]
        n_events = event.sum(axis=1)
        hits = (acts & event).sum(axis=2)
        false_alarms = acts.sum(axis=2) - hits
        baselines = price(Contingency(hits, false_alarms, n_events - hits,
                                      n_occ - n_events - false_alarms), self.costs)
        return PricedBlock(model=model, baselines=baselines.T, n_events=n_events)
