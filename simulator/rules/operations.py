"""Operating rules played day by day: crews, a backlog of work, a deadline, overtime, crew
retention and a safety stop, as a discrete-event model written with simpy.

A fixed cost per occasion ignores what one day does to the next. Here each replicate season is
played occasion by occasion under one decision rule (a cutoff, or a baseline), and the season's
cost comes out split into components (:data:`COMPONENTS`). This module is the readable,
event-level statement of the rules, and the engine for rules a user writes as simpy processes
(see :class:`Site`); :mod:`simulator.operations_fast` plays the same built-in rules for all
replicates and all cutoffs at once, and is tested to give identical results.

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
core's (:class:`~simulator.costs.SeasonPricer`) for the matching cost matrix; the tests check it.

Why operating rules move the cost-optimal cutoff away from the break-even probability: Katz,
Murphy and Winkler (1982), "Assessing the value of frost forecasts to orchardists: a dynamic
decision-making approach", J. Appl. Meteor. 21, 518-531; Katz (1993), "Dynamic cost-loss ratio
decision-making model with an autocorrelated climate variable", J. Climate 6, 151-160.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Generator, Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import simpy

from ..notation import decimals
from ..pricing.costs import PricedBlock, baseline_actions
from ..inputs.errors import InputError
from ..inputs.history import History
from ..replay.resample import Calendar
from ..inputs.scenario import Scenario
from ..inputs.scenario_tables import OperationsSection
from ..inputs.scenario_types import BASELINES, WEEKDAYS
from ..pricing.scoring import cutoff_slots

__all__ = ["COMPONENTS", "COUNTS", "OFF", "REGULAR", "OVERTIME", "WORK_UNIT", "Rules", "make_rules",
           "safety_stops",
           "Site", "DayReport", "work_the_season", "crew_shift", "play_season", "price_outcome",
           "days_late", "RulesPricer", "SimpyPricer", "OperationsResult", "UserProcess"]

OFF, REGULAR, OVERTIME = 0, 1, 2
SHIFT_DAYS = 1 / 3  # a crew's shift, in days of simulated time (8 hours)
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

UserProcess = Callable[[simpy.Environment, "Site"], Generator]
"""A user-written simpy process: ``process(env, site)``, a generator started with the season."""


# ------------------------------------------------------------------------------------------------
# the rules on the priced season's calendar

@dataclass(frozen=True)
class Rules:
    """The operating rules laid on the priced season's occasions; arrays are (n_occasions,)."""

    crews: int
    day_rate: float
    standby_rate: float
    spoilage_cost: float
    progress_when_spoiled: int  # work units one crew completes on a spoiled day out
    work: int  # work units to do; UNLIMITED when there is no backlog limit
    damages_per_day_late: float
    unfinished_cost: float
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
    return Rules(crews=section.crews, day_rate=section.day_rate, standby_rate=section.standby_day_rate,
                 spoilage_cost=section.spoilage_cost,
                 progress_when_spoiled=round((1.0 - section.work_lost_when_spoiled) * WORK_UNIT),
                 work=UNLIMITED if section.work is None else max(1, round(section.work * WORK_UNIT)),
                 damages_per_day_late=section.damages_per_day_late, unfinished_cost=section.unfinished_cost,
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
    stop compares as decimals too (:mod:`simulator.decimals`), so a file's 0.9 stops at 0.9.
    """
    section = scenario.operations
    if section is None or section.safety_stop_at is None:
        return np.zeros(history.n_rows, dtype=bool)
    p = history.p
    if section.safety_probability == "as_in_file" and scenario.event.flip:
        p = decimals.complement(p)
    return decimals.reaches(p, section.safety_stop_at)


# ------------------------------------------------------------------------------------------------
# the simpy model

@dataclass(frozen=True)
class DayReport:
    """What happened on one working day (regular, or overtime when worked)."""

    index: int  # occasion index in the season
    date: np.datetime64
    overtime: bool
    out: bool
    spoiled: bool
    work_left: float  # crew-days


class Site:
    """One season on one site, as the simpy processes see it.

    This is the extension point for rules written as simpy processes. A process is a generator
    function ``process(env, site)`` (see :data:`UserProcess`) passed to :func:`play_season` (or to
    :class:`SimpyPricer`, ``run(..., processes=[...])``); it starts with the season and may:

    - wait for each working day's outcome: ``report = yield site.day_done`` gives a
      :class:`DayReport` after the day's shifts (SimPy's broadcast-event pattern);
    - charge money to the season: ``site.charge(amount)`` (reported as the ``other`` component);
    - add or remove work: ``yield site.work.put(units)`` / ``yield site.work.get(units)``
      (``site.work`` is a :class:`simpy.Container` holding the work left in :data:`WORK_UNIT`
      units, thousandths of a crew-day: ``site.work.put(10 * WORK_UNIT)`` adds 10 crew-days);
    - keep the crews in on a coming occasion: ``site.closed.add(index)`` (counted in ``closed_days``).

    Example, a machine hire paid on every day out::

        def machine_hire(env, site):
            while True:
                report = yield site.day_done
                if report.out:
                    site.charge(150.0)

    Time runs in days from the season's first occasion; a crew's shift takes :data:`SHIFT_DAYS`.
    """

    def __init__(self, env: simpy.Environment, rules: Rules, wish: np.ndarray, spoiled: np.ndarray,
                 stopped: np.ndarray):
        self.env = env
        self.rules = rules
        self.wish = wish  # (n_occ,) bool: the decision rule would send the crews out
        self.spoiled = spoiled  # (n_occ,) bool: the outcome spoils a day out
        self.stopped = stopped  # (n_occ,) bool: the safety stop closes the occasion
        self.work = simpy.Container(env, capacity=math.inf, init=rules.work)
        self.counts = dict.fromkeys(COUNTS, 0)
        self.closed: set[int] = set()
        self.closed_days = 0
        self.work_done = 0  # work units
        self.other_cost = 0.0
        self.standby_streak = 0
        self.week: int | None = None
        self.overtime_this_week = 0
        self.completion_index = -1
        self.day_done = env.event()

    @property
    def done(self) -> bool:
        return self.completion_index >= 0

    def charge(self, amount: float) -> None:
        """Add ``amount`` (money) to the season's ``other`` cost component."""
        self.other_cost += float(amount)

    def announce(self, report: DayReport) -> None:
        """Wake every process waiting on ``day_done`` with ``report``, and arm the next day's event."""
        event, self.day_done = self.day_done, self.env.event()
        event.succeed(report)


def crew_shift(env: simpy.Environment, site: Site, spoiled: bool):
    """One crew's day out: work the shift, then take the day's progress from the work left."""
    yield env.timeout(SHIFT_DAYS)
    progress = site.rules.progress_when_spoiled if spoiled else WORK_UNIT
    take = min(progress, site.work.level)
    if take > 0:
        yield site.work.get(take)
        site.work_done += take


def work_the_season(env: simpy.Environment, site: Site):
    """The works manager's season: each morning, send the crews out or keep them on standby."""
    rules, counts = site.rules, site.counts
    for t in np.flatnonzero(rules.kind != OFF):
        yield env.timeout(int(rules.day[t]) - env.now)
        if site.done:
            return
        if rules.week[t] != site.week:
            site.week, site.overtime_this_week = int(rules.week[t]), 0
        wish, spoiled = bool(site.wish[t]), bool(site.spoiled[t])
        overtime = rules.kind[t] == OVERTIME
        if overtime:
            behind = site.work.level > rules.crews * int(rules.regular_after[t]) * WORK_UNIT
            retained = False
            want = wish and behind and site.overtime_this_week < rules.max_overtime_days_per_week
        else:
            retained = rules.max_standby_days is not None and site.standby_streak >= rules.max_standby_days
            want = wish or retained
        out = want
        if want and site.stopped[t]:
            counts["safety_stop_days"] += 1
            out = False
        elif want and int(t) in site.closed:
            site.closed_days += 1
            out = False
        if overtime and not out:
            continue  # an overtime day not worked is no working day at all
        if out:
            shifts = [env.process(crew_shift(env, site, spoiled)) for _ in range(rules.crews)]
            yield env.all_of(shifts)
            site.standby_streak = 0
            if overtime:
                site.overtime_this_week += 1
                counts["overtime_days"] += 1
                counts["spoiled_overtime_days"] += spoiled
            else:
                counts["days_out"] += 1
                counts["spoiled_days"] += spoiled
                counts["retention_days"] += retained and not wish
        else:
            counts["standby_days"] += 1
            site.standby_streak += 1
        if site.work.level <= 0:
            site.completion_index = int(t)
        site.announce(DayReport(index=int(t), date=rules.dates[t], overtime=bool(overtime), out=out,
                                spoiled=spoiled, work_left=float(rules.crew_days(site.work.level))))


def play_season(rules: Rules, wish: np.ndarray, spoiled: np.ndarray, stopped: np.ndarray,
                processes: Iterable[UserProcess] = ()) -> dict[str, float | int]:
    """Play one season under the rules with simpy; returns its counts and costs.

    Parameters
    ----------
    rules : Rules
    wish, spoiled, stopped : bool arrays (n_occasions,)
        Whether the decision rule would send the crews out, whether the outcome spoils a day out,
        and whether the safety stop closes the occasion.
    processes : user-written simpy processes (see :class:`Site`).

    Returns
    -------
    dict with the :data:`COUNTS`, ``completion_index`` (-1 when unfinished), ``done_units`` and
    ``left_units`` (work, in :data:`WORK_UNIT`), ``work_done`` and ``work_left`` (crew-days),
    ``days_late``, ``closed_days``, each of :data:`COMPONENTS` + ``_cost``, ``other_cost`` and
    ``total_cost``.
    """
    env = simpy.Environment()
    site = Site(env, rules, np.asarray(wish, bool), np.asarray(spoiled, bool), np.asarray(stopped, bool))
    env.process(work_the_season(env, site))
    for process in processes:
        env.process(process(env, site))
    env.run(until=rules.end_day + 1)
    outcome: dict[str, float | int] = {**site.counts, "completion_index": site.completion_index,
                                       "done_units": site.work_done, "left_units": site.work.level}
    costs = price_outcome(rules, outcome)
    outcome.update({f"{name}_cost": float(value) for name, value in costs.items()})
    outcome["work_done"] = float(rules.crew_days(site.work_done))
    outcome["work_left"] = float(rules.crew_days(site.work.level))
    outcome["days_late"] = int(days_late(rules, site.completion_index))
    outcome["closed_days"] = site.closed_days
    outcome["other_cost"] = site.other_cost
    outcome["total_cost"] = float(sum(costs.values())) + site.other_cost
    return outcome


# ------------------------------------------------------------------------------------------------
# pricing a played season (shared by the simpy model and the fast twin)

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
    baselines in :data:`~simulator.scenario.BASELINES` order. Extras of the priced blocks are
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


class SimpyPricer(RulesPricer):
    """The straightforward pricer: every replicate season under every lane through the simpy model.

    Slow (milliseconds a season); the engine for ``processes`` written by users, and the reference
    the fast twin is tested and benchmarked against.
    """

    def __init__(self, history: History, calendar: Calendar, cutoffs: np.ndarray, scenario: Scenario,
                 processes: Sequence[UserProcess] = ()):
        super().__init__(history, calendar, cutoffs, scenario)
        self.processes = tuple(processes)

    def play_pairs(self, rows: np.ndarray, pairs: Iterable[tuple[int, int]]) -> list[dict]:
        """Outcomes of the (replicate, lane) ``pairs`` of the replicate seasons ``rows``."""
        wishes = self.wishes(rows)
        _, _, spoiled, stopped = self.occasion_inputs(rows)
        return [play_season(self.rules, wishes[r, lane], spoiled[r], stopped[r], self.processes)
                for r, lane in pairs]

    def __call__(self, rows: np.ndarray) -> PricedBlock:
        n_rep = rows.shape[0]
        pairs = [(r, lane) for r in range(n_rep) for lane in range(self.n_lanes)]
        played = self.play_pairs(rows, pairs)
        keys = (*COUNTS, "completion_index", "closed_days", "done_units", "left_units", "other_cost")
        outcome = {key: np.array([season[key] for season in played]).reshape(n_rep, self.n_lanes)
                   for key in keys}
        return self.priced_block(rows, outcome)


# ------------------------------------------------------------------------------------------------
# the run's operations result and its summary

_QUANTILES = (0.05, 0.50, 0.95)
CAUTION = ("The safety stop is a hard rule played outside the cost optimisation; the days it decided "
           "are costed as unavoidable. A cost-optimal cutoff never overrides safety rules, site risk "
           "assessments, local regulations or licensed professional judgement.")


@dataclass(frozen=True)
class OperationsResult:
    """The operations extras of a run, each (n_replicates, n_cutoffs + n_baselines)."""

    rules: Rules
    n_cutoffs: int
    extras: dict[str, np.ndarray] = field(default_factory=dict)
    section: OperationsSection | None = None

    def lane(self, key: str, index: int) -> np.ndarray:
        """``key`` at one lane (a cutoff index, or ``n_cutoffs + i`` for baseline i), (n_rep,)."""
        return self.extras[key][:, index]

    @property
    def cost_keys(self) -> list[str]:
        return [f"{name}_cost" for name in (*COMPONENTS, "other") if f"{name}_cost" in self.extras]

    def per_cutoff(self) -> dict[str, np.ndarray]:
        """Columns for the cutoff table, each (n_cutoffs,): mean components and lateness."""
        k = self.n_cutoffs
        out = {f"mean_{key}": self.extras[key][:, :k].mean(axis=0) for key in self.cost_keys}
        out["mean_days_late"] = self.extras["days_late"][:, :k].mean(axis=0)
        out["share_late"] = (self.extras["days_late"][:, :k] > 0).mean(axis=0)
        out["share_completed"] = (self.extras["completion_index"][:, :k] >= 0).mean(axis=0)
        out["mean_overtime_days"] = self.extras["overtime_days"][:, :k].mean(axis=0)
        out["mean_safety_stop_days"] = self.extras["safety_stop_days"][:, :k].mean(axis=0)
        return out

    def summary(self, recommended_index: int) -> dict:
        """The ``operations`` block of ``summary.json``.

        Keys: ``crews``, ``work_crew_days`` (null without a backlog limit), ``deadline`` (ISO or
        null), ``working_days`` and ``overtime_days_available`` (in the priced season),
        ``safety_stop_at``, ``safety_probability``; ``at_recommended_cutoff`` with
        ``mean_components`` (each ``<component>_cost`` and ``total_cost``, money per season),
        ``share_completed``, ``share_late``, ``days_late`` (mean, p05, p50, p95 calendar days),
        ``completion_date`` (p05, p50, p95 as ISO dates, null where unfinished),
        ``completion_by_week`` ([Monday, share], then ["unfinished", share]), ``mean_days`` (each
        of :data:`COUNTS`) and ``safety_stop_days`` (mean, p05, p50, p95: days the stop decided);
        ``baselines``: per baseline ``mean_components``, ``share_completed``, ``share_late``,
        ``days_late``; ``caution``.
        """
        rules = self.rules
        at = self._lane_summary(recommended_index, full=True)
        section = self.section
        return {
            "crews": rules.crews,
            "work_crew_days": float(rules.crew_days(rules.work)) if rules.limited else None,
            "deadline": None if rules.deadline_day is None else _iso(rules.dates[0] + rules.deadline_day),
            "working_days": rules.n_working_days,
            "overtime_days_available": rules.n_overtime_days,
            "safety_stop_at": None if section is None else section.safety_stop_at,
            "safety_probability": None if section is None else section.safety_probability,
            "at_recommended_cutoff": at,
            "baselines": {name: self._lane_summary(self.n_cutoffs + i, full=False)
                          for i, name in enumerate(BASELINES)},
            "caution": CAUTION,
        }

    def _lane_summary(self, index: int, full: bool) -> dict:
        x = {key: self.lane(key, index) for key in self.extras}
        components = {key: float(x[key].mean()) for key in self.cost_keys}
        components["total_cost"] = float(sum(components.values()))
        late = x["days_late"]
        out = {"mean_components": components,
               "share_completed": float((x["completion_index"] >= 0).mean()),
               "share_late": float((late > 0).mean()),
               "days_late": _spread(late)}
        if not full:
            return out
        out["completion_date"] = self._completion_dates(x["completion_index"])
        out["completion_by_week"] = self._completion_weeks(x["completion_index"])
        out["mean_days"] = {key: float(x[key].mean()) for key in COUNTS}
        out["safety_stop_days"] = _spread(x["safety_stop_days"])
        return out

    def _completion_dates(self, index: np.ndarray) -> dict:
        """p05/p50/p95 of the completion date (ISO), null where the quantile is unfinished work."""
        order = np.where(index >= 0, index, self.rules.n_occasions)  # unfinished sorts last
        q = np.quantile(order, _QUANTILES, method="inverted_cdf")
        return {name: (_iso(self.rules.dates[int(v)]) if v < self.rules.n_occasions else None)
                for name, v in zip(("p05", "p50", "p95"), q)}

    def _completion_weeks(self, index: np.ndarray) -> list[list]:
        """[[Monday of the week (ISO), share of replicates completing that week], ...]; the last
        entry is ["unfinished", share] when any replicate leaves work undone."""
        done = index >= 0
        weeks = self.rules.week[index[done]]
        labels, counts = np.unique(weeks, return_counts=True)
        n = index.size
        out = [[_iso(np.datetime64(int(w) * 7 - 3, "D")), float(c / n)] for w, c in zip(labels, counts)]
        if (~done).any():
            out.append(["unfinished", float((~done).mean())])
        return out


def _spread(values: np.ndarray) -> dict[str, float]:
    """Mean and 5th, 50th, 95th percentiles of day counts (percentiles are observed counts)."""
    p05, p50, p95 = np.quantile(values, _QUANTILES, method="inverted_cdf")
    return {"mean": float(np.mean(values)), "p05": float(p05), "p50": float(p50), "p95": float(p95)}


