"""The operating rules played event by event with simpy: the readable statement of the rules.

Each replicate season is played occasion by occasion (:func:`play_season`): a works manager's
process sends the crews out or keeps them on standby each morning (:func:`work_the_season`), each
crew works its shift (:func:`crew_shift`), and processes a user writes (:data:`UserProcess`) see the
season through :class:`Site`. :class:`SimpyPricer` plays every replicate season under every lane.
The rules themselves are stated in :mod:`~simulator.rules.operating_rules`; the vectorised twin
(:mod:`~simulator.rules.vectorised_model`) is tested to give identical results.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Generator, Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import simpy

from ..pricing.costs import PricedBlock
from ..inputs.history import History
from ..inputs.scenario import Scenario
from ..replay.resample import Calendar
from .operating_rules import COUNTS, OFF, OVERTIME, WORK_UNIT, Rules
from .price_draws import PriceDraws
from .season_cost import RulesPricer, days_late, price_outcome

__all__ = ["SHIFT_DAYS", "UserProcess", "Site", "DayReport", "work_the_season", "crew_shift",
           "play_season", "SimpyPricer"]

SHIFT_DAYS = 1 / 3  # a crew's shift, in days of simulated time (8 hours)

UserProcess = Callable[[simpy.Environment, "Site"], Generator]
"""A user-written simpy process: ``process(env, site)``, a generator started with the season."""


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



class SimpyPricer(RulesPricer):
    """The straightforward pricer: every replicate season under every lane through the simpy model.

    Slow (milliseconds a season); the engine for ``processes`` written by users, and the reference
    the fast twin is tested and benchmarked against.
    """

    def __init__(self, history: History, calendar: Calendar, cutoffs: np.ndarray, scenario: Scenario,
                 processes: Sequence[UserProcess] = (), prices: PriceDraws | None = None):
        super().__init__(history, calendar, cutoffs, scenario, prices)
        self.processes = tuple(processes)

    def play_pairs(self, rows: np.ndarray, pairs: Iterable[tuple[int, int]]) -> list[dict]:
        """Outcomes of the (replicate, lane) ``pairs`` of the replicate seasons ``rows``."""
        wishes = self.wishes(rows)
        _, _, spoiled, stopped = self.occasion_inputs(rows)
        return [play_season(self.rules, wishes[r, lane], spoiled[r], stopped[r], self.processes)
                for r, lane in pairs]

    def __call__(self, rows: np.ndarray, block: int | None = None) -> PricedBlock:
        n_rep = rows.shape[0]
        pairs = [(r, lane) for r in range(n_rep) for lane in range(self.n_lanes)]
        played = self.play_pairs(rows, pairs)
        keys = (*COUNTS, "completion_index", "closed_days", "done_units", "left_units", "other_cost")
        outcome = {key: np.array([season[key] for season in played]).reshape(n_rep, self.n_lanes)
                   for key in keys}
        return self.priced_block(rows, outcome, self.prices_of(block, n_rep))

