"""Costs and the operating rules' prices drawn once per replicate season, for those known only
as a range.

Each range (:class:`~simulator.inputs.ranges.CostRange`) is drawn from its PERT distribution: a
beta distribution on [low, high] (``scipy.stats.beta`` with the range's shapes, scaled; Malcolm et
al. 1959). The draws of block ``b`` of a run come from ``SeedSequence(seed, spawn_key=(COST_STREAM,
index, b))``, a stream of their own for each of the four costs (index 0 to 3, in
:data:`~simulator.inputs.scenario_costs.COST_KEYS` order) and each of the rules' prices (index 4
to 8, in :data:`~simulator.inputs.scenario_tables.PRICE_KEYS` order): they do not touch the streams
of the bootstrap, the stress cases or the interval, so every strategy, cutoff and forecast is
priced on the same replicate seasons with the same drawn costs (common random numbers), and a site
whose range is the scenario's draws the same figures as every other such site (one figure, in
doubt). A range with low = high draws nothing: the cost is fixed, and the run is the fixed run
byte for byte.

A stress case prices the same draws with its own changes laid over them (a new value replaces a
draw, a multiplier multiplies it: :meth:`~simulator.inputs.scenario_changes.StressCase.changes_of`,
given to the drawer as ``changes``), so the case's replicate k is priced with the draw of the base
case's replicate k: the costs of :meth:`CostDrawer.__call__` under ``[costs]``, the rules' prices
of :meth:`CostDrawer.prices` under ``[operations]``.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import stats

from ..inputs.ranges import CostRange
from ..inputs.scenario_costs import COST_KEYS, Costs
from ..inputs.scenario_tables import PRICE_KEYS
from ..replay.resample import BLOCK, block_rng

__all__ = ["COST_STREAM", "PRICE_INDEX", "pert", "DrawnCosts", "CostDrawer", "Changes"]

COST_STREAM = 46  # seed stream of the cost draws (other streams: resample.py, run.py, stress.py, selection.py)
PRICE_INDEX = {name: len(COST_KEYS) + i for i, name in enumerate(PRICE_KEYS)}  # the prices' streams: 4 to 8

Changes = Callable[[Mapping[str, Any]], Mapping[str, Any]]
"""changes(values) -> the keys of ``values`` a stress case changes, with their new values (floats
or per-replicate arrays): :meth:`~simulator.inputs.scenario_changes.StressCase.changes_of`."""


def pert(cost_range: CostRange):
    """The PERT distribution of a range with low < high, as a frozen ``scipy.stats.beta``."""
    a, b = cost_range.shapes
    return stats.beta(a, b, loc=cost_range.low, scale=cost_range.width)


@dataclass(frozen=True)
class DrawnCosts:
    """The four costs of a block of replicate seasons: each a float, or (n_rep, 1) float64 for a
    drawn cost, so :func:`~simulator.pricing.costs.price` of counts (n_rep, n) broadcasts."""

    hit: float | np.ndarray
    false_alarm: float | np.ndarray
    miss: float | np.ndarray
    correct_negative: float | np.ndarray


class CostDrawer:
    """Draws the costs and the rules' prices given as ranges, block by block of replicates.

    Parameters
    ----------
    costs : the fixed costs (a range's place holds its PERT mean).
    ranges : dotted key -> range, as :meth:`Scenario.cost_ranges` of the scenario (or the site's
        scenario) gives them; only ``costs.<cost>`` and ``operations.<price>`` keys are drawn here
        (a site's own scenario has its ranges under these keys).
    seed : the run's seed.
    changes : a stress case's changes, laid over each block's costs and prices after the draws
        (the fixed ones too); None for the base case.
    """

    def __init__(self, costs: Costs, ranges: Mapping[str, CostRange], seed: int, changes: Changes | None = None):
        self.costs, self.seed, self.changes = costs, int(seed), changes
        self._drawn = {name: pert(r) for name in COST_KEYS
                       if (r := ranges.get(f"costs.{name}")) is not None and r.width > 0}
        self._prices = {name: pert(r) for name in PRICE_KEYS
                        if (r := ranges.get(f"operations.{name}")) is not None and r.width > 0}

    @property
    def draws(self) -> bool:
        """Whether any cost is drawn (else :meth:`__call__` gives the fixed costs)."""
        return bool(self._drawn)

    @property
    def draws_prices(self) -> bool:
        """Whether any of the rules' prices is drawn (else :meth:`prices` gives none)."""
        return bool(self._prices)

    def _changed(self, values: dict[str, Any]) -> dict[str, Any]:
        """``values`` with the stress case's changes laid over them (as they are for the base)."""
        if self.changes is not None:
            values.update(self.changes(values))
        return values

    def prices(self, block: int, n_rep: int, fixed: Mapping[str, Any] | None = None) -> dict[str, Any]:
        """The rules' prices drawn for the first ``n_rep`` replicates of block ``block``, each
        (n_rep, 1) float64, by name (:data:`PRICE_KEYS`), over the ``fixed`` prices (the prices not
        drawn: none by default), with the case's changes laid over them all."""
        values = dict(fixed or {})
        values.update({name: dist.rvs(size=BLOCK, random_state=block_rng(self.seed, block, COST_STREAM,
                                                                         PRICE_INDEX[name]))[:n_rep, None]
                       for name, dist in self._prices.items()})
        return self._changed(values)

    def __call__(self, block: int, n_rep: int) -> Costs | DrawnCosts:
        """The costs of the first ``n_rep`` replicates of block ``block`` (a replicate's draw
        depends on its number only: the whole block is drawn, then cut), with the case's changes
        laid over them."""
        values = {name: getattr(self.costs, name) for name in COST_KEYS}
        if not self._drawn:
            return self.costs if self.changes is None else Costs.model_construct(**self._changed(values))
        for name, dist in self._drawn.items():
            rng = block_rng(self.seed, block, COST_STREAM, COST_KEYS.index(name))
            values[name] = dist.rvs(size=BLOCK, random_state=rng)[:n_rep, None]
        return DrawnCosts(**self._changed(values))
