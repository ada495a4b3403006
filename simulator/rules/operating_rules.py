"""The operating rules of ``[operations]`` laid on the priced season: crews, a backlog of work, a
deadline, overtime, crew retention and a safety stop.

A fixed cost per occasion ignores what one day does to the next. Here each replicate season is
played occasion by occasion under one decision rule (a cutoff, or a baseline), and the season's
cost comes out split into components (:data:`COMPONENTS`). This module states the rules and lays
them on the season's calendar (:func:`make_rules`); :mod:`~simulator.rules.simpy_model` plays them
event by event with simpy (the readable statement, and the engine for rules a user writes as simpy
processes), :mod:`~simulator.rules.vectorised_model` plays the same built-in rules for all
replicates and all cutoffs at once and is tested to give identical results, and
:mod:`~simulator.rules.season_cost` prices what either played.

The rules, on each occasion of the priced season (the core's calendar, one occasion a day):

- **Calendar.** An occasion is a regular working day (its weekday is in ``workdays`` and it is no
  holiday), an overtime day (weekday in ``overtime_weekdays``, no holiday) or a day off. The
  replicate seasons carry a forecast and an outcome for every occasion, so overtime weekdays must
  be among the ``[season]`` weekdays; the season's other occasions are days off.
- **Decision.** The decision rule says act or not; the crews go out on acting, or on not acting
  (``crews_out_on``). All crews go out together or all stand by.
- **Retention.** After ``max_standby_days`` consecutive standby days the crews go out on the next
  regular working day whatever the decision rule says.
- **Safety stop.** On an occasion whose probability of the hazard is at least ``safety_stop_at``
  the crews never go out, whatever the decision or the retention rule; such a regular working day
  is a standby day. The days on which the stop overruled a decision to go out are counted.
- **A day out.** Each crew completes one crew-day of work, or ``1 - work_lost_when_spoiled`` of
  one when the outcome is the one that spoils a day out (``spoiled_on``); a spoiled day also costs
  ``spoilage_cost`` per crew. Crews are paid ``day_rate`` on every regular working day, out or on
  standby (``standby_rate`` on standby, when given).
- **Catching up.** An overtime day is worked only when the work left exceeds what the crews can do
  on the regular working days still to come before the target (the deadline, else the season's
  last occasion), fewer than ``max_overtime_days_per_week`` overtime days have been worked that
  week (Monday to Sunday), and the decision rule would send the crews out; it costs
  ``day_rate * overtime_multiple`` per crew, and nothing when not worked.
- **The end.** When the work is done the crews are released and cost nothing more. Each calendar
  day from the deadline to the completion day costs ``damages_per_day_late``; work still unfinished
  after the season's last occasion is late up to the day after it, and costs ``unfinished_cost``
  per crew-day left.

With no ``work`` (no backlog limit), no deadline, no overtime, no retention rule and no safety stop,
every occasion costs a fixed amount by its decision and outcome, and the season cost equals the
core's (:class:`~simulator.pricing.costs.SeasonPricer`) for the matching cost matrix; the tests check it.

Why operating rules move the cost-optimal cutoff away from the break-even probability: Katz,
Murphy and Winkler (1982), "Assessing the value of frost forecasts to orchardists: a dynamic
decision-making approach", J. Appl. Meteor. 21, 518-531; Katz (1993), "Dynamic cost-loss ratio
decision-making model with an autocorrelated climate variable", J. Climate 6, 151-160.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from ..notation import decimals
from ..inputs.errors import InputError
from ..inputs.history import History
from ..inputs.scenario import Scenario
from ..inputs.scenario_tables import PRICE_KEYS, OperationsSection
from ..inputs.scenario_types import WEEKDAYS

__all__ = ["COMPONENTS", "COUNTS", "OFF", "REGULAR", "OVERTIME", "WORK_UNIT", "PRICE_KEYS", "RulePrices", "Rules",
           "make_rules", "safety_stops"]

OFF, REGULAR, OVERTIME = 0, 1, 2
WORK_UNIT = 1000  # work is counted in whole thousandths of a crew-day, so its sums are exact
UNLIMITED = 2**62  # the work, in units, when there is no backlog limit (never used up)

COMPONENTS = ("productive_labour", "spoiled_labour", "spoilage", "standby", "overtime",
              "late_damages", "unfinished_work")
"""Season cost components, in money; they add up to the season cost.

productive_labour  day_rate x crews on regular days out that were not spoiled
spoiled_labour     day_rate x crews on regular days out that were spoiled (rained off)
spoilage           spoilage_cost x crews on every spoiled day out, regular or overtime
standby            standby rate x crews on regular working days on standby
overtime           day_rate x overtime_multiple x crews on overtime days worked
late_damages       damages_per_day_late x calendar days late
unfinished_work    unfinished_cost x crew-days left when the season ends
"""

COUNTS = ("days_out", "spoiled_days", "standby_days", "overtime_days", "spoiled_overtime_days",
          "retention_days", "safety_stop_days")
"""Day counts of one season (all crews together).

days_out               regular working days the crews went out
spoiled_days           of those, the days spoiled by the outcome
standby_days           regular working days on standby (before the work was done)
overtime_days          overtime days worked
spoiled_overtime_days  of those, the days spoiled
retention_days         regular days out only because of the retention rule
safety_stop_days       working days the safety stop kept the crews in when the decision rule or the
                       retention rule would have sent them out
"""


# PRICE_KEYS (said once, in inputs/scenario_tables.py): the money of the rules, what a played
# season's day counts are priced at. How the crews work (who goes out, overtime, retention) never
# depends on these, so a played season can be priced again at other prices without playing it again.


@dataclass(frozen=True)
class RulePrices:
    """The rules' prices (:data:`PRICE_KEYS`), per crew and day except ``damages_per_day_late``
    (per calendar day late) and ``unfinished_cost`` (per crew-day left). Each is a float, or a
    (n_rep, 1) float64 array for a price drawn per replicate season, so prices of day counts
    (n_rep, n_lanes) broadcast. ``standby_rate`` is the rate paid: ``day_rate`` when the scenario
    gives none."""

    day_rate: float | np.ndarray
    standby_rate: float | np.ndarray
    spoilage_cost: float | np.ndarray
    damages_per_day_late: float | np.ndarray
    unfinished_cost: float | np.ndarray

    @classmethod
    def of(cls, section: OperationsSection) -> "RulePrices":
        """The prices the scenario's ``[operations]`` gives (a range's place holds its mean)."""
        return cls(day_rate=section.day_rate, standby_rate=section.standby_day_rate,
                   spoilage_cost=section.spoilage_cost, damages_per_day_late=section.damages_per_day_late,
                   unfinished_cost=section.unfinished_cost)

    def moved(self, **prices) -> "RulePrices":
        """These prices with some replaced (keys of :data:`PRICE_KEYS`)."""
        return replace(self, **prices)


# ------------------------------------------------------------------------------------------------
# the rules on the priced season's calendar

@dataclass(frozen=True)
class Rules:
    """The operating rules laid on the priced season's occasions; arrays are (n_occasions,)."""

    crews: int
    prices: RulePrices  # the money; the rest is how the crews work
    progress_when_spoiled: int  # work units one crew completes on a spoiled day out
    work: int  # work units to do; UNLIMITED when there is no backlog limit
    overtime_multiple: float
    max_overtime_days_per_week: int
    max_standby_days: int | None
    dates: np.ndarray  # datetime64[D]
    kind: np.ndarray  # int8: OFF, REGULAR or OVERTIME
    day: np.ndarray  # int64, days since the first occasion
    week: np.ndarray  # int64, Monday-to-Sunday week number
    regular_after: np.ndarray  # int64, regular working days after this occasion, up to the target
    deadline_day: int | None  # the deadline in days since the first occasion
    end_day: int  # the last occasion in days since the first occasion

    @property
    def n_occasions(self) -> int:
        return int(self.kind.size)

    @property
    def limited(self) -> bool:
        """Whether there is a backlog limit (an amount of work to finish)."""
        return self.work != UNLIMITED

    def crew_days(self, units) -> np.ndarray:
        """Work units as crew-days (float64); the work left is inf without a backlog limit."""
        units = np.asarray(units)
        if self.limited:
            return units / WORK_UNIT
        return np.where(units >= UNLIMITED // 2, math.inf, units / WORK_UNIT)

    @property
    def n_working_days(self) -> int:
        return int((self.kind == REGULAR).sum())

    @property
    def n_overtime_days(self) -> int:
        return int((self.kind == OVERTIME).sum())


def _weekday(dates: np.ndarray) -> np.ndarray:
    """Monday = 0 ... Sunday = 6 (1970-01-01, day 0 of datetime64, was a Thursday)."""
    return (dates.astype("datetime64[D]").astype(np.int64) + 3) % 7


def make_rules(section: OperationsSection, dates: np.ndarray, season_weekdays: Sequence[str] = WEEKDAYS,
               label: str = "scenario") -> Rules:
    """Lay the ``[operations]`` rules on the occasions ``dates`` of the priced season.

    Raises :class:`InputError` when a workday or overtime weekday has no occasion in the season
    (the replicates would have no forecast for it), when no occasion is a working day, or when the
    deadline falls outside the season.
    """
    dates = np.asarray(dates, dtype="datetime64[D]")
    overtime = tuple(section.overtime_weekdays)
    workdays = section.workdays or tuple(w for w in season_weekdays if w not in overtime)
    for key, names in (("workdays", workdays), ("overtime_weekdays", overtime)):
        for name in names:
            if name not in season_weekdays:
                raise InputError(f'{label} [operations] {key}: "{name}" is not among the [season] '
                                 "weekdays, so the replicate seasons have no forecast for it; add it to "
                                 "[season] weekdays")
    weekday = _weekday(dates)
    holiday = np.isin(dates, np.array(section.holidays, dtype="datetime64[D]"))
    kind = np.full(dates.size, OFF, dtype=np.int8)
    kind[np.isin(weekday, [WEEKDAYS.index(w) for w in overtime]) & ~holiday] = OVERTIME
    kind[np.isin(weekday, [WEEKDAYS.index(w) for w in workdays]) & ~holiday] = REGULAR
    if not (kind == REGULAR).any():
        raise InputError(f"{label} [operations]: no occasion of the season is a working day; check "
                         "workdays, holidays and [season]")
    day = (dates - dates[0]).astype(np.int64)
    deadline_day = None
    if section.deadline is not None:
        deadline = np.datetime64(section.deadline, "D")
        if not (dates[0] <= deadline <= dates[-1]):
            raise InputError(f"{label} [operations] deadline: {section.deadline} is outside the priced "
                             f"season ({_iso(dates[0])} to {_iso(dates[-1])}); move it, or set [season] year")
        deadline_day = int((deadline - dates[0]).astype(np.int64))
    target = deadline_day if deadline_day is not None else int(day[-1])
    counted = (kind == REGULAR) & (day <= target)
    # regular working days strictly after each occasion, up to the target
    regular_after = (np.cumsum(counted[::-1])[::-1] - counted).astype(np.int64)
    return Rules(crews=section.crews, prices=RulePrices.of(section),
                 progress_when_spoiled=round((1.0 - section.work_lost_when_spoiled) * WORK_UNIT),
                 work=UNLIMITED if section.work is None else max(1, round(section.work * WORK_UNIT)),
                 overtime_multiple=section.overtime_multiple,
                 max_overtime_days_per_week=section.max_overtime_days_per_week,
                 max_standby_days=section.max_standby_days, dates=dates, kind=kind, day=day,
                 week=(dates.astype(np.int64) + 3) // 7, regular_after=regular_after,
                 deadline_day=deadline_day, end_day=int(day[-1]))


def _iso(value: np.datetime64) -> str:
    return str(np.datetime64(value, "D"))


def safety_stops(history: History, scenario: Scenario) -> np.ndarray:
    """Whether the safety stop closes each history row, bool (n_rows,).

    The hazard's probability is the history's probability column as written in the file
    (``safety_probability = "as_in_file"``, the default: undone from ``flip``) or that of the
    scenario's event (``"of_event"``). Both the flip and its undoing are exact decimals, and the
    stop compares as decimals too (:mod:`simulator.notation.decimals`), so a file's 0.9 stops at 0.9.
    """
    section = scenario.operations
    if section is None or section.safety_stop_at is None:
        return np.zeros(history.n_rows, dtype=bool)
    p = history.p
    if section.safety_probability == "as_in_file" and scenario.event.flip:
        p = decimals.complement(p)
    return decimals.reaches(p, section.safety_stop_at)

