"""The rules' prices of each replicate season, where ``[operations]`` gives some as ranges.

:class:`PriceDraws` turns what :class:`~simulator.pricing.draws.CostDrawer` draws for a block of
replicates into the :class:`~simulator.rules.operating_rules.RulePrices` the rules' pricer prices
the block at (:meth:`~simulator.rules.season_cost.RulesPricer.priced_block`): the prices given as
one number stay floats, those drawn are (n_rep, 1) arrays. A stress case under ``[operations]``
prices the same drawn figures with its own changes laid over them by its drawer (a new value
replaces a draw, a multiplier multiplies it: :meth:`~simulator.inputs.scenario_changes.StressCase.changes_of`,
as the case's costs under ``[costs]`` are), so the case and the base are priced on common random
numbers.

When the scenario gives no ``standby_rate``, the standby rate paid is the day rate, so a standby
day is paid the *drawn* day rate of that replicate season (after a stress case's change to it).
"""

from __future__ import annotations

from typing import Any

from ..inputs.scenario_tables import PRICE_KEYS, OperationsSection
from ..pricing.draws import CostDrawer
from .operating_rules import RulePrices

__all__ = ["PriceDraws"]


class PriceDraws:
    """The prices of the rules for each block of replicate seasons.

    Parameters
    ----------
    section : the scenario's ``[operations]`` (the one the ranges belong to; a range's place holds
        its PERT mean).
    drawer : draws the prices given as ranges (:meth:`CostDrawer.prices`), with a stress case's
        changes laid over them when it has them (``CostDrawer(..., changes=case.changes_of)``).
    """

    def __init__(self, section: OperationsSection, drawer: CostDrawer):
        self.section, self.drawer = section, drawer

    @property
    def draws(self) -> bool:
        """Whether any price is drawn (else every block is priced at the rules' own prices)."""
        return self.drawer.draws_prices

    def __call__(self, block: int, n_rep: int) -> RulePrices | None:
        """The prices of the first ``n_rep`` replicates of block ``block``; None when nothing is
        drawn (the rules' own prices, so the run is the fixed run byte for byte)."""
        if not self.draws:
            return None
        fixed = {key: getattr(self.section, key) for key in PRICE_KEYS}  # standby may be None
        values: dict[str, Any] = self.drawer.prices(block, n_rep, fixed)
        if values["standby_rate"] is None:  # standby paid at the (drawn) day rate
            values["standby_rate"] = values["day_rate"]
        return RulePrices(**values)
