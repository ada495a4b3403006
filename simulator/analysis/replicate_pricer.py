"""Replicate seasons priced with the forecast or the outcomes changed: :class:`ReplicatePricer`,
the stress cases' twin of :class:`~simulator.pricing.costs.SeasonPricer`.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..pricing.contingency import Contingency, counts_from_slots, cutoff_slots
from ..pricing.costs import MODEL_AT_MEANS, PricedBlock, SeasonPricer, baseline_actions, price
from ..pricing.draws import CostDrawer
from ..inputs.history import History
from ..inputs.scenario_costs import Costs
from ..inputs.scenario_types import BASELINES
from ..replay.resample import block_rng
from .probability_changes import log_odds_noise

__all__ = ["ReplicatePricer", "OUTCOME_STREAM"]

# seed streams (spawn_key prefixes): tasks/work.py 1, tilt.py 41, replicate_pricer.py 42-43,
# selection.py 45
NOISE_STREAM = 42  # log-odds noise, with a key made from the case's name
OUTCOME_STREAM = 43  # outcomes drawn in the calibrated mode (shared by the base and every case)


class ReplicatePricer:
    """Prices replicate seasons like :class:`~simulator.pricing.costs.SeasonPricer`, with changes.

    Parameters
    ----------
    history, cutoffs, costs : as for ``SeasonPricer``.
    seed : the run's seed; noise and drawn outcomes of block ``b`` come from ``SeedSequence(seed,
        spawn_key=(stream, ..., b))``, so they depend only on the replicate's number.
    forecast : (n_rows,) probabilities to act on instead of the history's.
    outcome_probability : (n_rows,) when given, outcomes are drawn afresh, Bernoulli with these
        probabilities, for every replicate occasion (the calibrated mode); persistence then acts
        on the previous drawn outcome and the perfect forecast knows the drawn outcome.
    noise_sd, noise_key : log-odds noise (:func:`log_odds_noise`), seeded with ``noise_key``.
    drawer : the costs given as ranges, drawn per replicate (as for ``SeasonPricer``; a stress
        case's drawer lays its changes over the draws); then the extras hold ``MODEL_AT_MEANS`` as
        ``SeasonPricer``'s do, unless ``at_means`` is False.

    With none of these changes it is exactly ``SeasonPricer``.
    """

    def __init__(self, history: History, cutoffs: np.ndarray, costs: Costs, *, seed: int,
                 forecast: np.ndarray | None = None, outcome_probability: np.ndarray | None = None,
                 noise_sd: float = 0.0, noise_key: int = 0, drawer: CostDrawer | None = None,
                 at_means: bool = True):
        forecast = history.p if forecast is None else np.asarray(forecast, dtype=float)
        self._season_pricer = SeasonPricer(dataclasses.replace(history, p=forecast), cutoffs, costs, drawer,
                                           at_means=at_means)
        self._simple = outcome_probability is None and noise_sd == 0
        self._history, self._forecast, self._costs = history, forecast, costs
        self._cutoffs = cutoffs
        self._outcome_probability = outcome_probability
        self._noise_sd, self._noise_key, self._seed = float(noise_sd), int(noise_key), int(seed)
        actions = baseline_actions(history, costs)
        self._actions = np.stack([actions[name] for name in BASELINES], axis=1)  # (n_rows, n_baselines)

    def __call__(self, rows: np.ndarray, block: int) -> PricedBlock:
        if self._simple:
            return self._season_pricer(rows, block)
        p = self._forecast[rows]
        if self._noise_sd > 0:
            rng = block_rng(self._seed, block, NOISE_STREAM, self._noise_key)
            p = log_odds_noise(p, self._noise_sd, rng)
        acts = self._actions[rows]  # (n_rep, n_occ, n_baselines)
        if self._outcome_probability is None:
            event = self._history.event[rows]
        else:
            u = block_rng(self._seed, block, OUTCOME_STREAM).random(rows.shape)
            event = u < self._outcome_probability[rows]
            previous = np.concatenate([self._history.prev_event[rows[:, :1]], event[:, :-1]], axis=1)
            acts[..., BASELINES.index("persistence")] = previous
            acts[..., BASELINES.index("perfect")] = event
        counts = counts_from_slots(cutoff_slots(p, self._cutoffs), event, self._cutoffs.size)
        happened = event[..., None]
        held = Contingency(*(cell.sum(axis=1) for cell in (acts & happened, acts & ~happened,
                                                          ~acts & happened, ~acts & ~happened)))
        costs = self._season_pricer.costs_of(block, rows.shape[0])
        at_means = self._season_pricer.at_means and costs is not self._costs
        extras = {MODEL_AT_MEANS: price(counts, self._costs)} if at_means else {}
        return PricedBlock(model=price(counts, costs), baselines=price(held, costs), n_events=event.sum(axis=1),
                           extras=extras)

