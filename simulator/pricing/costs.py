"""Price replicate seasons for every strategy and every cutoff.

This is the one place that turns classification counts into money (:func:`price`). A replicate's
counts at every cutoff and for every baseline come from :mod:`simulator.pricing.counts` (one
bincount and one cumulative sum per block), and are priced here. The baselines are fixed
per-occasion action rules priced on the same replicates (common random numbers).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..notation import decimals
from ..inputs.history import History
from ..inputs.scenario_costs import Costs, break_even_probability
from ..inputs.scenario_types import BASELINES
from .contingency import Contingency
from .counts import ReplicateCounts, SeasonCounter, as_extras
from .draws import CostDrawer, DrawnCosts
from .slot_costs import Shared, SlotCosts, exact_for

__all__ = ["price", "occasion_costs", "baseline_actions", "monthly_event_rate", "seasonal_actions", "SeasonPricer",
           "PricedBlock", "MODEL_AT_MEANS"]


def price(counts: Contingency, costs: Costs | DrawnCosts) -> np.ndarray:
    """Cost of each classification matrix: hits*hit + false_alarms*false_alarm + ... (float64).

    ``costs`` fixed, or drawn per replicate (:class:`~simulator.pricing.draws.DrawnCosts`, each
    drawn cost (n_rep, 1) against counts (n_rep, n)).
    """
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
    month, rate = monthly_event_rate(history)
    return {
        "never_act": np.zeros(n, dtype=bool),
        "always_act": np.ones(n, dtype=bool),
        "persistence": history.prev_event.copy(),
        "seasonal_rate": seasonal_actions(month, rate, costs),
        "perfect": history.event.copy(),
    }


def monthly_event_rate(history: History) -> tuple[np.ndarray, np.ndarray]:
    """Each history row's calendar month (0-11, (n_rows,)) and each month's event rate over the
    training period ((12,); a month without training rows gets the overall rate): what the
    seasonal-rate rule learns. It does not depend on the costs."""
    month = (history.dates.astype("datetime64[M]").astype(np.int64) % 12)
    train = history.training
    months_seen = np.bincount(month[train], minlength=12)
    events_seen = np.bincount(month[train], weights=history.event[train], minlength=12)
    overall = history.event[train].mean()
    return month, np.where(months_seen > 0, events_seen / np.maximum(months_seen, 1), overall)


def seasonal_actions(month: np.ndarray, rate: np.ndarray, costs: Costs) -> np.ndarray:
    """Whether the seasonal-rate rule acts on rows of these months (bool, as ``month``): where the
    month's rate reaches the break-even probability of ``costs``."""
    p_star = break_even_probability(costs)
    if np.isnan(p_star):  # one action is always best: the climatological rule takes it
        return np.full(month.shape, costs.false_alarm - costs.correct_negative <= 0)
    return decimals.reaches(rate[month], p_star)


@dataclass(frozen=True)
class PricedBlock:
    """Season costs of one block of replicates: ``model`` (n_rep, n_cutoffs), ``baselines``
    (n_rep, n_baselines) in :data:`~simulator.inputs.scenario_types.BASELINES` order, ``n_events`` (n_rep,)."""

    model: np.ndarray
    baselines: np.ndarray
    n_events: np.ndarray
    # further per-replicate arrays a pricer may add (the operations pricer's cost components and
    # completion days), each with replicates first; concatenated over blocks by ``run.py``
    extras: dict[str, np.ndarray] = field(default_factory=dict)


class SeasonPricer:
    """Prices replicate seasons given as history row indices (n_rep, n_occasions).

    The counts of each replicate at every cutoff and for every baseline come from a
    :class:`~simulator.pricing.counts.SeasonCounter` (:meth:`counts`); their season costs from
    :func:`price`, with the fixed costs or, given a ``drawer`` that draws, with each replicate's
    drawn costs (:class:`~simulator.pricing.draws.CostDrawer`; then the block's number is needed,
    and the extras hold ``MODEL_AT_MEANS``: the model's costs with every cost at its fixed value,
    the PERT mean of a range; not with ``at_means`` False, for a stress case, whose figures at the
    means nobody reads). With whole-number costs the costs are exact; with fractional costs
    each is the sum of four products, each correctly rounded. With ``keep_counts`` each priced block
    also carries its counts in its extras (:func:`~simulator.pricing.counts.as_extras`), for a run
    to keep (``RunResult.replicate_counts``). Where no counts are kept and the fixed costs make exact
    sums (whole numbers, halves, quarters and the like: :func:`~simulator.pricing.slot_costs.exact_for`),
    the model's costs come straight from the slots
    (:class:`~simulator.pricing.slot_costs.SlotCosts`: the same bits, with no count arrays).
    """

    def __init__(self, history: History, cutoffs: np.ndarray, costs: Costs, drawer: CostDrawer | None = None,
                 keep_counts: bool = False, at_means: bool = True):
        self.costs = costs
        self.keep_counts, self.at_means = keep_counts, at_means
        self.n_cutoffs = int(cutoffs.size)
        self.drawer = drawer if drawer is not None and drawer.draws else None
        self._counter = SeasonCounter(history.p, history.event, cutoffs, baseline_actions(history, costs),
                                      BASELINES)
        self._by_slots = SlotCosts(self._counter.slots, self._counter.event, self.n_cutoffs, costs)

    def counts(self, rows: np.ndarray) -> ReplicateCounts:
        """Each replicate's classification counts at every cutoff and for every baseline."""
        return self._counter(rows)

    def costs_of(self, block: int | None, n_rep: int) -> Costs | DrawnCosts:
        """The costs of the first ``n_rep`` replicates of block ``block``."""
        if self.drawer is None:
            return self.costs
        if block is None:
            raise ValueError("costs drawn per replicate need the block's number")
        return self.drawer(block, n_rep)

    def __call__(self, rows: np.ndarray, block: int | None = None) -> PricedBlock:
        costs = self.costs_of(block, rows.shape[0])
        if costs is self.costs and not self.keep_counts and exact_for(costs, rows.shape[1]):
            # no counts wanted: the model's costs straight from the slots (the same bits)
            baselines, n_events = self._counter.baselines(rows)
            return PricedBlock(model=self._by_slots(rows, self._by_slots.share(rows, n_events)),
                               baselines=price(baselines, costs), n_events=n_events)
        counts = self._counter(rows)
        extras = {MODEL_AT_MEANS: price(counts.model, self.costs)} if self.at_means and costs is not self.costs else {}
        if self.keep_counts:
            extras.update(as_extras(counts))
        return PricedBlock(model=price(counts.model, costs), baselines=price(counts.baselines, costs),
                           n_events=counts.n_events, extras=extras)

    def share(self, rows: np.ndarray, block: int | None, n_events: np.ndarray) -> Shared | None:
        """What every forecast of this history priced on ``rows`` (of block ``block``, whose
        replicates hold ``n_events`` event occasions each) shares when priced from its slots
        (:meth:`SlotCosts.share <simulator.pricing.slot_costs.SlotCosts.share>`); None where the
        counts are priced instead."""
        if self.drawer is not None or not exact_for(self.costs, rows.shape[1]):
            return None
        return self._by_slots.share(rows, n_events)

    def model_cost(self, rows: np.ndarray, block: int | None = None, shared: Shared | None = None) -> np.ndarray:
        """Season costs (n_rep, n_cutoffs) of acting on this pricer's probabilities at every
        cutoff (a later forecast's, on the rows and drawn costs of block ``block``): with fixed
        costs whose sums are exact straight from the slots (:mod:`~simulator.pricing.slot_costs`, the same
        bits as pricing the counts; ``shared`` from :meth:`share` of the main forecast's pricer on
        the same rows), else the counts priced."""
        costs = self.costs_of(block, rows.shape[0])
        if costs is self.costs and exact_for(costs, rows.shape[1]):
            return self._by_slots(rows, shared)
        return price(self._counter.model(rows), costs)


MODEL_AT_MEANS = "model_cost_at_mean_costs"
"""Key of a priced block's extras: the model's season costs with costs fixed at their means."""
