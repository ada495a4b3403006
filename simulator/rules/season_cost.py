"""What a played season costs, shared by the simpy model and its vectorised twin.

:func:`price_outcome` turns a season's day counts into the money of each of the
:data:`~simulator.rules.operating_rules.COMPONENTS` (whole counts times prices, so both players give
bit-identical costs), :func:`days_late` counts the days past the deadline, and :class:`RulesPricer`
lays the lanes (every cutoff, then every baseline) on the replicate seasons and turns their played
outcomes into a :class:`~simulator.pricing.costs.PricedBlock`.

How the crews work never depends on the rules' prices (:class:`~simulator.rules.operating_rules.RulePrices`),
so the day counts a played season keeps (a priced block's extras, ``OperationsResult.extras``) can
be priced again at other prices without playing the season again: :func:`reprice`, through the
same :func:`price_outcome`, gives bit for bit what a run at those prices gives.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..pricing.contingency import cutoff_slots
from ..pricing.costs import PricedBlock, baseline_actions
from ..inputs.errors import InputError
from ..inputs.history import History
from ..inputs.scenario import Scenario
from ..inputs.scenario_types import BASELINES
from ..replay.resample import Calendar
from .operating_rules import COMPONENTS, COUNTS, WORK_UNIT, RulePrices, Rules, make_rules, safety_stops
from .price_draws import PriceDraws

__all__ = ["price_outcome", "season_total", "played_outcome", "reprice", "days_late", "RulesPricer"]


def days_late(rules: Rules, completion_index):
    """Calendar days from the deadline to completion (0 when on time or no deadline).

    Unfinished work (index -1) is late up to the day after the season's last occasion.
    """
    index = np.asarray(completion_index)
    if rules.deadline_day is None:
        return np.zeros(index.shape, dtype=np.int64)
    finished_on = np.where(index >= 0, rules.day[np.maximum(index, 0)], rules.end_day + 1)
    return np.maximum(finished_on - rules.deadline_day, 0)


def price_outcome(rules: Rules, outcome: Mapping[str, np.ndarray | int | float],
                  prices: RulePrices | None = None) -> dict[str, np.ndarray]:
    """Money of each of :data:`COMPONENTS` from a season's counts (scalars or arrays alike), at
    ``prices`` (the rules' own when None; a price drawn per replicate is (n_rep, 1) and broadcasts
    over lanes).

    Day counts times crews are whole numbers, priced by one multiplication each, so the simpy model
    and the fast twin give bit-identical costs from identical counts.
    """
    prices = rules.prices if prices is None else prices
    n = rules.crews
    good = np.asarray(outcome["days_out"]) - outcome["spoiled_days"]
    spoiled_any = np.asarray(outcome["spoiled_days"]) + outcome["spoiled_overtime_days"]
    left = np.asarray(outcome["left_units"])
    unfinished = (left * prices.unfinished_cost / WORK_UNIT if rules.limited
                  else np.zeros(left.shape))
    return {
        "productive_labour": good * n * prices.day_rate,
        "spoiled_labour": np.asarray(outcome["spoiled_days"]) * n * prices.day_rate,
        "spoilage": spoiled_any * n * prices.spoilage_cost,
        "standby": np.asarray(outcome["standby_days"]) * n * prices.standby_rate,
        "overtime": np.asarray(outcome["overtime_days"]) * n * (prices.day_rate * rules.overtime_multiple),
        "late_damages": days_late(rules, outcome["completion_index"]) * prices.damages_per_day_late,
        "unfinished_work": unfinished,
    }


def season_total(components: Mapping[str, np.ndarray], other_cost=None) -> np.ndarray:
    """The season cost: the components added in :data:`COMPONENTS` order (then ``other_cost``, the
    money of user-written processes), the one order every total is added in."""
    total = 0.0
    for name in COMPONENTS:
        total = total + components[name]
    if other_cost is not None:
        total = total + other_cost
    return np.asarray(total, dtype=float)


def played_outcome(rules: Rules, extras: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
    """The counts :func:`price_outcome` prices, from a priced block's extras (the work left is kept
    in crew-days; its whole work units are recovered exactly)."""
    out = {name: extras[name] for name in ("days_out", "spoiled_days", "spoiled_overtime_days", "standby_days",
                                             "overtime_days", "completion_index")}
    left = extras["work_left"]
    out["left_units"] = (np.rint(left * WORK_UNIT).astype(np.int64) if rules.limited
                         else np.zeros(np.shape(left), dtype=np.int64))
    return out


def reprice(rules: Rules, extras: Mapping[str, np.ndarray], prices: RulePrices | None = None
            ) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Played seasons priced again at ``prices``: the season cost (n_rep, n_lanes) and each
    component's money, without playing them again (the play does not depend on the prices).
    ``extras`` are a priced block's (``OperationsResult.extras``); money of user-written processes
    (``other_cost``) is kept as played."""
    components = price_outcome(rules, played_outcome(rules, extras), prices)
    return season_total(components, extras.get("other_cost")), components



# ------------------------------------------------------------------------------------------------
# pricers: replicate seasons (history row indices) -> PricedBlock, like SeasonPricer

class RulesPricer:
    """What both operations pricers share: the rules, and per history row the decision slots, the
    baselines' actions, the outcomes that spoil a day out and the safety stops.

    Lanes: a replicate season is played once per lane, the ``n_cutoffs`` cutoffs first, then the
    baselines in :data:`~simulator.inputs.scenario_types.BASELINES` order. Extras of the priced blocks are
    (n_rep, n_lanes).

    ``prices``: the rules' prices drawn per replicate season where ``[operations]`` gives ranges
    (:class:`~simulator.rules.price_draws.PriceDraws`); a block is then priced at its replicates'
    prices (:meth:`prices_of`, which needs the block's number), else at the rules' own.
    """

    def __init__(self, history: History, calendar: Calendar, cutoffs: np.ndarray, scenario: Scenario,
                 prices: PriceDraws | None = None):
        section = scenario.operations
        if section is None:
            raise ValueError("scenario has no [operations] section")
        label = str(scenario.source) if scenario.source else "scenario"
        if not history.frequency.is_daily:
            raise InputError(f"{label} [operations]: the rules are played day by day, but the history "
                             f"is {history.frequency.describe()}; give daily forecasts")
        self.rules = make_rules(section, calendar.dates, scenario.season.weekdays, label)
        self.n_cutoffs = int(cutoffs.size)
        self.n_lanes = self.n_cutoffs + len(BASELINES)
        self._slots = cutoff_slots(history.p, cutoffs)
        actions = baseline_actions(history, scenario.costs)
        self._baseline_actions = np.stack([actions[name] for name in BASELINES], axis=1)  # (n_rows, 5)
        self._event = history.event
        self._out_on_acting = section.crews_out_on == "acting"
        self._spoiled = history.event.copy() if section.spoiled_on == "event" else ~history.event
        self._stopped = safety_stops(history, scenario)
        self._prices = prices if prices is not None and prices.draws else None

    @property
    def draws_prices(self) -> bool:
        """Whether some of the rules' prices are drawn per replicate season."""
        return self._prices is not None

    def prices_of(self, block: int | None, n_rep: int) -> RulePrices | None:
        """The prices of the first ``n_rep`` replicates of block ``block``: None (the rules' own)
        when none is drawn."""
        if self._prices is None:
            return None
        if block is None:
            raise ValueError("prices drawn per replicate need the block's number")
        return self._prices(block, n_rep)

    def occasion_inputs(self, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Slots (n_rep, n_occ), baseline actions (n_rep, n_occ, 5), spoiled and stopped (n_rep, n_occ)."""
        return self._slots[rows], self._baseline_actions[rows], self._spoiled[rows], self._stopped[rows]

    def wishes(self, rows: np.ndarray) -> np.ndarray:
        """Whether each lane's decision rule sends the crews out, bool (n_rep, n_lanes, n_occ)."""
        slots, base, _, _ = self.occasion_inputs(rows)
        acts = np.concatenate([slots[:, None, :] > np.arange(self.n_cutoffs)[None, :, None],
                               base.transpose(0, 2, 1)], axis=1)
        return acts if self._out_on_acting else ~acts

    def priced_block(self, rows: np.ndarray, outcome: Mapping[str, np.ndarray],
                     prices: RulePrices | None = None) -> PricedBlock:
        """A :class:`PricedBlock` from the lanes' outcomes, each (n_rep, n_lanes), at ``prices``
        (the rules' own when None)."""
        costs = price_outcome(self.rules, outcome, prices)
        shape = np.shape(outcome["days_out"])
        extras: dict[str, np.ndarray] = {f"{name}_cost": np.broadcast_to(costs[name], shape).astype(float)
                                         for name in COMPONENTS}
        if "other_cost" in outcome:
            extras["other_cost"] = np.asarray(outcome["other_cost"], dtype=float)
        total = np.broadcast_to(season_total(costs, outcome.get("other_cost")), shape)
        for name in (*COUNTS, "completion_index", *(("closed_days",) if "closed_days" in outcome else ())):
            extras[name] = np.asarray(outcome[name]).astype(np.int32)
        extras["days_late"] = days_late(self.rules, outcome["completion_index"]).astype(np.int32)
        extras["work_done"] = self.rules.crew_days(outcome["done_units"])
        extras["work_left"] = self.rules.crew_days(outcome["left_units"])
        return PricedBlock(model=total[:, : self.n_cutoffs], baselines=total[:, self.n_cutoffs:],
                           n_events=self._event[rows].sum(axis=1), extras=extras)

