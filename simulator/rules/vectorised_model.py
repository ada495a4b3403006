"""The built-in operating rules, played for all replicates and all cutoffs at once.

A vectorised twin of the simpy model in :mod:`~simulator.rules.simpy_model`: one state per lane (a
replicate season under one cutoff or one baseline), all lanes of a block of replicates held in
(n_rep, n_lanes) arrays and advanced together, one occasion at a time. The loop over occasions is
the one truly sequential step (the work left, the standby streak and the week's overtime carry
from one day to the next); it lives in :func:`play_seasons`, whose slow, readable twin is
:func:`simulator.rules.simpy_model.play_season`. The tests check that the two give identical counts and
costs on randomised seasons, so the simpy model stays the statement of the rules.

Work is counted in whole units (thousandths of a crew-day) and taken crew by crew, each crew
taking ``min(progress, work left)`` as the simpy shifts do, and money comes from whole day counts
through the shared :func:`~simulator.rules.season_cost.price_outcome`, so results agree bit for bit.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np

from ..pricing.costs import PricedBlock
from ..inputs.history import History
from .operating_rules import COUNTS, OFF, REGULAR, WORK_UNIT, Rules
from .price_draws import PriceDraws
from .season_cost import RulesPricer
from .simpy_model import SimpyPricer, UserProcess
from ..replay.resample import Calendar
from ..inputs.scenario import Scenario

__all__ = ["play_seasons", "OperationsPricer"]


def play_seasons(rules: Rules, wish_at: Callable[[int], np.ndarray], spoiled: np.ndarray,
                 stopped: np.ndarray, n_lanes: int) -> dict[str, np.ndarray]:
    """Play every lane of a block of replicate seasons under the rules, occasion by occasion.

    Parameters
    ----------
    rules : Rules
    wish_at : function of the occasion index t returning bool (n_rep, n_lanes)
        Whether each lane's decision rule would send the crews out on occasion t.
    spoiled, stopped : bool (n_rep, n_occasions)
        Whether the outcome spoils a day out, and whether the safety stop closes the occasion.
    n_lanes : int

    Returns
    -------
    dict of (n_rep, n_lanes) arrays: the :data:`~simulator.rules.operating_rules.COUNTS` (int64),
    ``completion_index`` (-1 when unfinished), ``done_units`` and ``left_units`` (work, in
    :data:`~simulator.rules.operating_rules.WORK_UNIT`), exactly as
    :func:`~simulator.rules.simpy_model.play_season` gives them lane by lane.
    """
    n_rep = spoiled.shape[0]
    shape = (n_rep, n_lanes)
    left = np.full(shape, rules.work, dtype=np.int64)
    work_done = np.zeros(shape, dtype=np.int64)
    active = np.ones(shape, dtype=bool)  # work not yet done
    streak = np.zeros(shape, dtype=np.int64)  # consecutive standby days
    week_overtime = np.zeros(shape, dtype=np.int64)
    completion = np.full(shape, -1, dtype=np.int64)
    counts = {name: np.zeros(shape, dtype=np.int64) for name in COUNTS}
    finite = rules.limited
    retention = rules.max_standby_days
    week = None
    for t in np.flatnonzero(rules.kind != OFF):
        if finite and not active.any():
            break
        if rules.week[t] != week:
            week = rules.week[t]
            week_overtime[:] = 0
        wish = wish_at(t)
        stop = stopped[:, t, None]
        spoil = spoiled[:, t, None]
        if rules.kind[t] == REGULAR:
            if retention is not None:
                retained = streak >= retention
                want = (wish | retained) & active
                counts["retention_days"] += want & ~stop & retained & ~wish
            else:
                want = wish & active
            out = want & ~stop
            standby = active & ~out
            counts["days_out"] += out
            counts["spoiled_days"] += out & spoil
            counts["standby_days"] += standby
            streak = np.where(out, 0, streak + standby)
        else:  # OVERTIME: worked only when behind, within the week's limit, and the rule says go
            behind = left > rules.crews * int(rules.regular_after[t]) * WORK_UNIT
            want = wish & active & behind & (week_overtime < rules.max_overtime_days_per_week)
            out = want & ~stop
            counts["overtime_days"] += out
            counts["spoiled_overtime_days"] += out & spoil
            week_overtime += out
            streak = np.where(out, 0, streak)
        counts["safety_stop_days"] += want & stop
        if not out.any():
            continue
        progress = np.where(spoil, rules.progress_when_spoiled, WORK_UNIT)  # (n_rep, 1)
        for _ in range(rules.crews):  # crew by crew, as the simpy shifts take their work
            take = np.where(out, np.minimum(progress, left), 0)
            left -= take
            work_done += take
        finished = out & (left <= 0)
        completion[finished] = t
        active &= ~finished
    return {**counts, "completion_index": completion, "done_units": work_done, "left_units": left}


class OperationsPricer(RulesPricer):
    """Prices replicate seasons under the ``[operations]`` rules: rows (n_rep, n_occ) -> PricedBlock.

    Callable like :class:`~simulator.pricing.costs.SeasonPricer`: ``model`` holds the season costs at every
    cutoff, ``baselines`` those of the five baselines played under the same rules on the same
    replicates, and ``extras`` the cost components and day counts of every lane,
    (n_rep, n_cutoffs + n_baselines). With user-written ``processes`` every season is played by the
    simpy model instead (slow: milliseconds a season). ``prices``: the rules' prices drawn per
    replicate (:class:`~simulator.rules.season_cost.RulesPricer`); the block's number ``block``
    is then needed.
    """

    def __init__(self, history: History, calendar: Calendar, cutoffs: np.ndarray, scenario: Scenario,
                 processes: Sequence[UserProcess] = (), prices: PriceDraws | None = None):
        super().__init__(history, calendar, cutoffs, scenario, prices)
        self._simpy = SimpyPricer(history, calendar, cutoffs, scenario, processes, prices) if processes else None

    def __call__(self, rows: np.ndarray, block: int | None = None) -> PricedBlock:
        if self._simpy is not None:
            return self._simpy(rows, block)
        slots, base, spoiled, stopped = self.occasion_inputs(rows)
        n_cut = self.n_cutoffs
        below = np.arange(n_cut)
        wish = np.empty((rows.shape[0], self.n_lanes), dtype=bool)
        slots_t = np.ascontiguousarray(slots.T)  # (n_occ, n_rep): one occasion's slots contiguous
        base_t = np.ascontiguousarray(base.transpose(1, 0, 2))  # (n_occ, n_rep, 5)

        def wish_at(t: int) -> np.ndarray:
            np.greater(slots_t[t][:, None], below[None, :], out=wish[:, :n_cut])  # acts at cutoff k
            wish[:, n_cut:] = base_t[t]
            if not self._out_on_acting:
                np.logical_not(wish, out=wish)
            return wish

        outcome = play_seasons(self.rules, wish_at, spoiled, stopped, self.n_lanes)
        return self.priced_block(rows, outcome, self.prices_of(block, rows.shape[0]))
