"""Price replicate seasons for every strategy and every cutoff.

This is the one place that turns classification counts into money (:func:`price`). The model at
every cutoff is priced from per-occasion cutoff slots computed once for the history
(:func:`~simulator.scoring.cutoff_slots`), so a replicate's costs at all cutoffs come from one
bincount and one cumulative sum. The baselines are fixed per-occasion action rules priced on the
same replicates (common random numbers).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..notation import decimals
from ..inputs.history import History
from ..inputs.scenario import BASELINES, Costs, break_even_probability
from .contingency import Contingency, cutoff_slots

__all__ = ["price", "occasion_costs", "baseline_actions", "SeasonPricer", "PricedBlock"]


def price(counts: Contingency, costs: Costs) -> np.ndarray:
    """Cost of each classification matrix: hits*hit + false_alarms*false_alarm + ... (float64)."""
    return (counts.hits * costs.hit + counts.false_alarms * costs.false_alarm
            + counts.misses * costs.miss + counts.correct_negatives * costs.correct_negative)


def occasion_costs(act: np.ndarray, event: np.ndarray, costs: Costs) -> np.ndarray:
    """Cost of each occasion given whether one acted and whether the event happened (float64)."""
    act, event = np.asarray(act, dtype=bool), np.asarray(event, dtype=bool)
    cells = Contingency(hits=(act & event).astype(np.int64), false_alarms=(act & ~event).astype(np.int64),
                        misses=(~act & event).astype(np.int64),
                        correct_negatives=(~act & ~event).astype(np.int64))
    return price(cells, costs)


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
        seasonal = decimals.reaches(rate[month], p_star)
    return {
        "never_act": np.zeros(n, dtype=bool),
        "always_act": np.ones(n, dtype=bool),
        "persistence": history.prev_event.copy(),
        "seasonal_rate": seasonal,
        "perfect": history.event.copy(),
    }


_NEVER = BASELINES.index("never_act")


@dataclass(frozen=True)
class PricedBlock:
    """Season costs of one block of replicates: ``model`` (n_rep, n_cutoffs), ``baselines``
    (n_rep, n_baselines) in :data:`~simulator.scenario.BASELINES` order, ``n_events`` (n_rep,)."""

    model: np.ndarray
    baselines: np.ndarray
    n_events: np.ndarray
    # further per-replicate arrays a pricer may add (the operations pricer's cost components and
    # completion days), each with replicates first; concatenated over blocks by ``run.py``
    extras: dict[str, np.ndarray] = field(default_factory=dict)


class SeasonPricer:
    """Prices replicate seasons given as history row indices (n_rep, n_occasions).

    A season's cost at cutoff k is its cost when never acting plus, for every occasion whose
    probability reaches the cutoff, the difference acting makes on that occasion
    (``occasion_costs(act=True) - occasion_costs(act=False)``). Each history row is given its slot
    (how many cutoffs it reaches) once, so one weighted bincount per block of replicates and a
    reversed cumulative sum over slots give every cutoff at once.
    """

    def __init__(self, history: History, cutoffs: np.ndarray, costs: Costs):
        self.costs = costs
        self.n_cutoffs = int(cutoffs.size)
        self._slots = cutoff_slots(history.p, cutoffs)
        self._event = history.event
        n = history.n_rows
        self._acting_difference = (occasion_costs(np.ones(n, bool), history.event, costs)
                                   - occasion_costs(np.zeros(n, bool), history.event, costs))
        actions = baseline_actions(history, costs)
        # every history row has one of a few patterns of (event, what each baseline does); a
        # replicate's baseline counts follow from how often it holds each pattern
        columns = [history.event] + [actions[name] for name in BASELINES]
        code = sum(column.astype(np.int64) << bit for bit, column in enumerate(columns))  # one int a row
        codes, pattern = np.unique(code, return_inverse=True)
        patterns = ((codes[:, None] >> np.arange(len(columns))) & 1).astype(bool)  # a column a bit
        self._pattern = pattern.ravel().astype(np.int64)
        self._n_patterns = patterns.shape[0]
        event, acts = patterns[:, :1], patterns[:, 1:]
        self._pattern_event = patterns[:, 0].astype(np.int64)
        self._pattern_cells = [(acts & event).astype(np.int64), (acts & ~event).astype(np.int64),
                               (~acts & event).astype(np.int64), (~acts & ~event).astype(np.int64)]

    def __call__(self, rows: np.ndarray) -> PricedBlock:
        n_rep = rows.shape[0]
        code = self._pattern[rows] + (np.arange(n_rep, dtype=np.int64) * self._n_patterns)[:, None]
        held = np.bincount(code.ravel(), minlength=n_rep * self._n_patterns).reshape(n_rep, -1)
        baselines = price(Contingency(*(held @ cells for cells in self._pattern_cells)), self.costs)
        return PricedBlock(model=self.model_cost(rows, baselines), baselines=baselines,
                           n_events=held @ self._pattern_event)

    def model_cost(self, rows: np.ndarray, baselines: np.ndarray) -> np.ndarray:
        """Season costs (n_rep, n_cutoffs) of acting on this pricer's probabilities at every
        cutoff, given the baselines' costs on the same rows (n_rep, n_baselines), which depend on
        the outcomes and costs only: so another forecast of the same history reuses them."""
        n_rep, width = rows.shape[0], self.n_cutoffs + 1
        code = self._slots[rows] + (np.arange(n_rep, dtype=np.int64) * width)[:, None]
        tally = np.bincount(code.ravel(), weights=self._acting_difference[rows].ravel(),
                            minlength=n_rep * width).reshape(n_rep, width)
        acting = np.cumsum(tally[:, ::-1], axis=1)[:, -2::-1]  # [r, k]: occasions with slot > k
        return baselines[:, _NEVER, None] + acting
