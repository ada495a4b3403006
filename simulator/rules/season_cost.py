"""What a played season costs, shared by the simpy model and its vectorised twin.

:func:`price_outcome` turns a season's day counts into the money of each of the
:data:`~simulator.rules.operating_rules.COMPONENTS` (whole counts times prices, so both players give
bit-identical costs), :func:`days_late` counts the days past the deadline, and :class:`RulesPricer`
lays the lanes (every cutoff, then every baseline) on the replicate seasons and turns their played
outcomes into a :class:`~simulator.pricing.costs.PricedBlock`.
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
from .operating_rules import COMPONENTS, COUNTS, WORK_UNIT, Rules, make_rules, safety_stops

__all__ = ["price_outcome", "days_late", "RulesPricer"]


def days_late(rules: Rules, completion_index):
    """Calendar days from the deadline to completion (0 when on time or no deadline).

    Unfinished work (index -1) is late up to the day after the season's last occasion.
    """
    index = np.asarray(completion_index)
    if rules.deadline_day is None:
        return np.zeros(index.shape, dtype=np.int64)
    finished_on = np.where(index >= 0, rules.day[np.maximum(index, 0)], rules.end_day + 1)
    return np.maximum(finished_on - rules.deadline_day, 0)


def price_outcome(rules: Rules, outcome: Mapping[str, np.ndarray | int | float]) -> dict[str, np.ndarray]:
    """Money of each of :data:`COMPONENTS` from a season's counts (scalars or arrays alike).

    Day counts times crews are whole numbers, priced by one multiplication each, so the simpy model
    and the fast twin give bit-identical costs from identical counts.
    """
    n = rules.crews
    good = np.asarray(outcome["days_out"]) - outcome["spoiled_days"]
    spoiled_any = np.asarray(outcome["spoiled_days"]) + outcome["spoiled_overtime_days"]
    left = np.asarray(outcome["left_units"])
    unfinished = (left * rules.unfinished_cost / WORK_UNIT if rules.limited
                  else np.zeros(left.shape))
    return {
        "productive_labour": good * n * rules.day_rate,
        "spoiled_labour": np.asarray(outcome["spoiled_days"]) * n * rules.day_rate,
        "spoilage": spoiled_any * n * rules.spoilage_cost,
        "standby": np.asarray(outcome["standby_days"]) * n * rules.standby_rate,
        "overtime": np.asarray(outcome["overtime_days"]) * n * (rules.day_rate * rules.overtime_multiple),
        "late_damages": days_late(rules, outcome["completion_index"]) * rules.damages_per_day_late,
        "unfinished_work": unfinished,
    }



# ------------------------------------------------------------------------------------------------
# pricers: replicate seasons (history row indices) -> PricedBlock, like SeasonPricer

class RulesPricer:
    """What both operations pricers share: the rules, and per history row the decision slots, the
    baselines' actions, the outcomes that spoil a day out and the safety stops.

    Lanes: a replicate season is played once per lane, the ``n_cutoffs`` cutoffs first, then the
    baselines in :data:`~simulator.inputs.scenario_types.BASELINES` order. Extras of the priced blocks are
    (n_rep, n_lanes).
    """

    def __init__(self, history: History, calendar: Calendar, cutoffs: np.ndarray, scenario: Scenario):
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

    def occasion_inputs(self, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Slots (n_rep, n_occ), baseline actions (n_rep, n_occ, 5), spoiled and stopped (n_rep, n_occ)."""
        return self._slots[rows], self._baseline_actions[rows], self._spoiled[rows], self._stopped[rows]

    def wishes(self, rows: np.ndarray) -> np.ndarray:
        """Whether each lane's decision rule sends the crews out, bool (n_rep, n_lanes, n_occ)."""
        slots, base, _, _ = self.occasion_inputs(rows)
        acts = np.concatenate([slots[:, None, :] > np.arange(self.n_cutoffs)[None, :, None],
                               base.transpose(0, 2, 1)], axis=1)
        return acts if self._out_on_acting else ~acts

    def priced_block(self, rows: np.ndarray, outcome: Mapping[str, np.ndarray]) -> PricedBlock:
        """A :class:`PricedBlock` from the lanes' outcomes, each (n_rep, n_lanes)."""
        costs = price_outcome(self.rules, outcome)
        total = np.zeros(np.shape(outcome["days_out"]))
        extras: dict[str, np.ndarray] = {}
        for name in COMPONENTS:
            total = total + costs[name]
            extras[f"{name}_cost"] = costs[name]
        if "other_cost" in outcome:
            total = total + outcome["other_cost"]
            extras["other_cost"] = np.asarray(outcome["other_cost"], dtype=float)
        for name in (*COUNTS, "completion_index", *(("closed_days",) if "closed_days" in outcome else ())):
            extras[name] = np.asarray(outcome[name]).astype(np.int32)
        extras["days_late"] = days_late(self.rules, outcome["completion_index"]).astype(np.int32)
        extras["work_done"] = self.rules.crew_days(outcome["done_units"])
        extras["work_left"] = self.rules.crew_days(outcome["left_units"])
        return PricedBlock(model=total[:, : self.n_cutoffs], baselines=total[:, self.n_cutoffs:],
                           n_events=self._event[rows].sum(axis=1), extras=extras)

