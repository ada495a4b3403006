"""Replicate seasons: a calendar-aware stationary bootstrap of the history.

A replicate is one synthetic season laid out on the calendar of the season being priced. It is
assembled in calendar order from runs of consecutive historical occasions: each run starts at a
historical occasion of a randomly chosen past season near the same calendar date (within
``window_days``), and continues through that season's following occasions; run lengths are
geometric with mean ``mean_block`` occasions, as in the stationary bootstrap of Politis and Romano
(1994). Drawing runs from the same phase of the year keeps seasonality, in the spirit of the
seasonal block bootstrap of Dudek, Leskow, Paparoditis and Politis (2014); keeping runs whole keeps
spells of wet or dry days. Each occasion carries its historical probability and outcome together.

Where Politis and Romano wrap the series circularly, a run that reaches the end of its season stops
and a new run starts (a season's end is not followed by its start).

Replicates are made in fixed blocks of :data:`BLOCK` seeded from ``SeedSequence(seed,
spawn_key=(block,))``, so a replicate's draws depend only on the seed and its number, never on how
many replicates are asked for or how the work is split between chunks or workers.

Many sites are replayed jointly: the runs are drawn over the calendar of dates that any site has
(the union of their evaluated dates), and each replicate occasion then takes every site's row of
the drawn date, so weather that struck several sites on one day strikes them together in the
replicates too. A site with no row on a drawn date takes its row of the nearest date in the same
season (ties to the earlier), or, when it has no row in that season at all, of the nearest day of
the nearest season it has (:data:`~simulator.inputs.history_gaps.MISSING_DATE_RULE`; the history warns). A site
whose dates are all the dates is replayed exactly as it would be alone.
"""

from __future__ import annotations

import copy
from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import date

import numpy as np

from ..inputs.history import History
from ..inputs.history_calendar import nearest_position, season_mask, season_start_month
from ..inputs.scenario_tables import SeasonSection

__all__ = ["BLOCK", "Calendar", "Resampler", "season_calendar", "calendar_warnings", "block_rng", "n_blocks", "nearest_position"]

BLOCK = 500  # replicates per seeded block; part of the reproducibility contract, never change lightly


@dataclass(frozen=True)
class Calendar:
    """The dates of the season being priced, shape (n_occasions,), and their day of season."""

    year: int
    dates: np.ndarray  # datetime64[D]
    day_of_season: np.ndarray  # int64
    holidays: np.ndarray = field(default_factory=lambda: np.array([], dtype="datetime64[D]"))
    """The ``[season] holidays`` that took a date out of this season (dates it would otherwise hold)."""

    @property
    def n_occasions(self) -> int:
        return int(self.dates.size)

    @property
    def spacing_days(self) -> float:
        """The usual number of days between consecutive occasions: the median gap (1 on a season of
        every day, of working days or of trading days; 7 on Mondays only; about 30 on monthly data).
        Runs of the replay are measured in these days (``block_days``, ``mean_block_days``)."""
        if self.dates.size < 2:
            return 1.0
        return float(np.median(np.diff(self.dates).astype(np.int64)))


def season_calendar(history: History, rule: SeasonSection) -> Calendar:
    """The calendar of the season to price: ``[season] year``, else the one after the history.

    The occasions are the dates of the history's own calendar (:class:`~simulator.inputs.history_calendar.Frequency`:
    every day or the weekdays it has rows on, weekly, monthly, ...) from the season's first day to
    the next season's, that fall in the season's months, on its weekdays and not on its holidays
    (:func:`~simulator.inputs.history_calendar.season_mask`). They never depend on the spacing of the history's rows
    inside the season.
    """
    start_month = season_start_month(rule.months)
    year = rule.year if rule.year is not None else int(history.seasons[-1]) + 1
    first = np.datetime64(date(year, start_month, 1), "D")
    following = np.datetime64(date(year + 1, start_month, 1), "D")
    days = history.frequency.dates_between(first, following)
    keep = season_mask(days, rule)
    dates = days[keep]
    skipped = days[~keep & season_mask(days, rule.model_copy(update={"holidays": ()}))]
    return Calendar(year=year, dates=dates, day_of_season=(dates - first).astype(np.int64), holidays=skipped)


def calendar_warnings(calendar: Calendar, rule: SeasonSection, label: str) -> list[str]:
    """A warning when ``[season] holidays`` are given but none falls on a date of the priced season
    (only past holidays listed, say), so that season is priced with its own holidays as occasions."""
    if not rule.holidays or calendar.holidays.size:
        return []
    return [f"{label} [season] holidays: none of the {len(rule.holidays)} dates is a date of the priced "
            f"{calendar.year} season, which keeps its own holidays as occasions; list them too"]


def n_blocks(n_replicates: int) -> int:
    """Seeded blocks that hold ``n_replicates`` replicates (the last one cut to size)."""
    return -(-int(n_replicates) // BLOCK)


def block_rng(seed: int, block: int, *stream: int) -> np.random.Generator:
    """The generator of one block of replicates; ``stream`` separates independent uses."""
    return np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(*stream, block)))


@dataclass(frozen=True)
class _Dates:
    """The dates runs are drawn over: a single site's history rows, or the joint dates of many."""

    n_rows: int
    evaluated: np.ndarray  # bool
    season: np.ndarray  # int64
    day_of_season: np.ndarray  # int64


def _joint_dates(history: History) -> tuple[_Dates, np.ndarray]:
    """The union of the sites' evaluated dates, and each site's row for each of them.

    Returns the dates (all evaluated) and an int64 array (n_sites, n_dates) of row indices into
    each site's own history (:meth:`History.for_site`), by the rule in the module docstring.
    """
    ev = history.evaluated
    dates, first = np.unique(history.dates[ev], return_index=True)
    season, day = history.season[ev][first], history.day_of_season[ev][first]
    joint = _Dates(n_rows=int(dates.size), evaluated=np.ones(dates.size, dtype=bool), season=season,
                   day_of_season=day)
    site_rows = np.empty((history.n_sites, dates.size), dtype=np.int64)
    span = int(history.day_of_season.max()) + 1  # keys season * span + day order rows by date
    joint_key = season * span + day
    for k in range(history.n_sites):
        own = history.for_site(k)
        rows = np.flatnonzero(own.evaluated)
        own_season, own_day = own.season[rows], own.day_of_season[rows]
        key = own_season * span + own_day
        if np.array_equal(key, joint_key):  # a row on every joint date
            site_rows[k] = rows
            continue
        seasons = own_season[np.r_[True, own_season[1:] != own_season[:-1]]]  # sorted, as the keys are
        j = np.searchsorted(seasons, season)
        left, right = seasons[np.maximum(j - 1, 0)], seasons[np.minimum(j, seasons.size - 1)]
        target = np.where(np.abs(season - left) <= np.abs(right - season), left, right)
        want = target * span + day
        right_i = np.minimum(np.searchsorted(key, want), key.size - 1)
        left_i = np.maximum(right_i - 1, 0)
        left_ok, right_ok = own_season[left_i] == target, own_season[right_i] == target
        take_left = left_ok & (~right_ok | (want - key[left_i] <= key[right_i] - want))
        site_rows[k] = rows[np.where(take_left, left_i, right_i)]
    return joint, site_rows


class Resampler:
    """Draws replicate seasons as row indices into the history, shape (n_replicates, n_occasions).

    With a history of many sites the rows drawn index the joint dates, and :meth:`site_rows` turns
    them into each site's rows (see the module docstring); with one site they are history rows.

    Parameters
    ----------
    history : History
    calendar : Calendar
        The season being priced; one replicate column per calendar occasion.
    mean_block : float
        Mean run length, in occasions (>= 1).
    window_days : int
        How far, in days, a run may start from the calendar date it fills.
    start_weights : (n_rows,) positive floats, optional
        Tilts which past season a run starts from: among the seasons eligible on a day, season k is
        chosen with probability proportional to the weight of the history row the run would start
        at (uniformly when None). Stress tests use it to draw more or fewer runs that contain
        events; with all weights equal the draws are exactly the untilted ones.
    """

    def __init__(self, history: History, calendar: Calendar, mean_block: float, window_days: int,
                 start_weights: np.ndarray | None = None):
        if mean_block < 1:
            raise ValueError(f"mean_block must be at least 1, got {mean_block}")
        self.history = history
        self.calendar = calendar
        self.mean_block = float(mean_block)
        self.window_days = int(window_days)
        if history.has_sites:
            dates, self._site_rows = _joint_dates(history)
        else:
            dates = _Dates(history.n_rows, history.evaluated, history.season, history.day_of_season)
            self._site_rows = None
        self._n_rows = dates.n_rows
        rows = np.flatnonzero(dates.evaluated)
        self._rows = rows  # compressed position -> history row (joint date with many sites)
        self._season = dates.season[rows]
        labels, self._season_k = np.unique(self._season, return_inverse=True)
        day = dates.day_of_season[rows]
        n_days = 367 + self.window_days
        # a season has an occasion near a day when one lies within the calendar's usual spacing
        tolerance = max(int(np.ceil(calendar.spacing_days)), 3)
        n_seasons = labels.size
        nearest = np.zeros((n_seasons, n_days), dtype=np.int64)
        distance = np.zeros((n_seasons, n_days), dtype=np.int64)
        grid = np.arange(n_days)
        for k in range(n_seasons):
            members = np.flatnonzero(self._season_k == k)
            member_day = day[members]
            pick = nearest_position(member_day, grid)
            nearest[k] = members[pick]
            distance[k] = np.abs(member_day[pick] - grid)
        # seasons eligible to start a run on each day: those with an occasion within tolerance,
        # else (a date the history never covers) those nearest to it
        limit = np.maximum(tolerance, distance.min(axis=0))
        eligible = distance <= limit[None, :]
        self._n_eligible = eligible.sum(axis=0)
        order = np.argsort(~eligible, axis=0, kind="stable")  # eligible seasons first
        self._eligible = order.T  # (n_days, n_seasons)
        self._nearest = nearest
        self._n_days = n_days
        self._first_day = int(calendar.day_of_season.min())
        self._last_day = int(calendar.day_of_season.max())
        # occasions left in the same season after each compressed position
        last_of_season = np.flatnonzero(np.append(self._season_k[1:] != self._season_k[:-1], True))
        season_last = last_of_season[np.searchsorted(last_of_season, np.arange(rows.size))]
        self._remaining = season_last - np.arange(rows.size)
        self._cum_weight = None if start_weights is None else self._cumulative_weights(start_weights)

    def tilted(self, start_weights: np.ndarray | None) -> "Resampler":
        """This resampler with other start weights (see the class docstring); cheap to make."""
        out = copy.copy(self)
        out._cum_weight = None if start_weights is None else self._cumulative_weights(start_weights)
        return out

    def _cumulative_weights(self, start_weights: np.ndarray) -> np.ndarray:
        """(n_days, n_seasons) running sums of the start weights over each day's eligible seasons."""
        w = np.asarray(start_weights, dtype=np.float64)
        if w.shape != (self._n_rows,) or not (np.all(np.isfinite(w)) and np.all(w > 0)):
            raise ValueError(f"start_weights must be {self._n_rows} positive finite numbers")
        days = np.arange(self._n_days)[:, None]
        start_row = self._rows[self._nearest[self._eligible, days]]  # (n_days, n_seasons)
        in_window = np.arange(self._eligible.shape[1])[None, :] < self._n_eligible[:, None]
        return np.cumsum(np.where(in_window, w[start_row], 0.0), axis=1)

    @property
    def n_occasions(self) -> int:
        return self.calendar.n_occasions

    @property
    def n_sites(self) -> int:
        return 1 if self._site_rows is None else int(self._site_rows.shape[0])

    @property
    def n_dates(self) -> int:
        """How many rows :meth:`draw` indexes: history rows, or joint dates with many sites."""
        return self._n_rows

    def site_rows(self, rows: np.ndarray, site: int) -> np.ndarray:
        """Rows drawn by :meth:`draw` as rows of site ``site``'s own history (``history.for_site``)."""
        if self._site_rows is None:
            if site != 0:
                raise IndexError(f"a history without sites has site 0 only, not {site}")
            return rows
        return self._site_rows[site][rows]

    def draw_block(self, seed: int, block: int, *stream: int) -> np.ndarray:
        """Row indices of the :data:`BLOCK` replicates of one seeded block, (BLOCK, n_occasions)."""
        return self.draw(block_rng(seed, block, *stream), BLOCK)

    def draw(self, rng: np.random.Generator, n_replicates: int) -> np.ndarray:
        """Row indices of ``n_replicates`` replicate seasons, (n_replicates, n_occasions), int64.

        Work is done on the run starts only (about one occasion in ``mean_block``): two uniform
        draws per occasion decide where runs start and, at a start, the day offset within the
        window and the past season to copy.
        """
        n_occ = self.n_occasions
        size = n_replicates * n_occ
        is_start = rng.random(size) < 1.0 / self.mean_block
        is_start[::n_occ] = True  # every replicate starts a run on its first occasion
        u = rng.random(size)
        width = 2 * self.window_days + 1
        starts = np.flatnonzero(is_start)
        value = np.zeros(size, dtype=np.int64)  # at a run start: the compressed position copied
        value[starts] = self._start_values(starts, u, width)
        row_end = np.arange(1, n_replicates + 1, dtype=np.int64) * n_occ
        # a run that would leave its season restarts where it would leave it; only the runs just
        # started need checking again (rarely more than twice)
        check, following = starts, np.append(starts[1:], size)
        while check.size:
            following = np.minimum(following, row_end[check // n_occ])
            allowed = self._remaining[value[check]] + 1
            over = following - check > allowed
            check = check[over] + allowed[over]
            if check.size:
                is_start[check] = True
                value[check] = self._start_values(check, u, width)
                starts = np.flatnonzero(is_start)
                following = starts[np.minimum(np.searchsorted(starts, check, side="right"), starts.size - 1)]
                following = np.where(following > check, following, size)
        length = np.diff(np.append(starts, size))
        at = np.repeat(value[starts] - starts, length) + np.arange(size, dtype=np.int64)
        return self._rows[at].reshape(n_replicates, n_occ)

    def _start_values(self, starts: np.ndarray, u: np.ndarray, width: int) -> np.ndarray:
        """Compressed history position each run starting at flat position ``starts`` copies from.

        One uniform number gives both the day offset (its integer part after scaling by the window
        width) and the past season (its fractional part scaled by the number of eligible seasons).
        """
        scaled = u[starts] * width
        offset = np.floor(scaled)
        fraction = scaled - offset
        day = self.calendar.day_of_season[starts % self.n_occasions] + offset.astype(np.int64) - self.window_days
        # reflect at the season's first and last day, so that every day of the season is drawn
        # equally often (a symmetric kernel); clipping would pile draws on the edge days
        lo, hi = self._first_day, self._last_day
        day = np.where(day < lo, 2 * lo - 1 - day, day)
        day = np.where(day > hi, 2 * hi + 1 - day, day)
        day = np.clip(day, lo, hi)  # only for a window wider than the season
        if self._cum_weight is None:
            choice = (fraction * self._n_eligible[day]).astype(np.int64)
        else:  # the first eligible season whose running weight exceeds fraction * total weight
            cum = self._cum_weight[day]
            choice = (cum <= (fraction * cum[:, -1])[:, None]).sum(axis=1)
        choice = np.minimum(choice, self._n_eligible[day] - 1)
        return self._nearest[self._eligible[day, choice], day]

    def blocks(self, seed: int, n_replicates: int, *stream: int) -> Iterator[np.ndarray]:
        """The replicates 0..n_replicates-1 block by block (the last block cut to size)."""
        for b in range(n_blocks(n_replicates)):
            rows = self.draw_block(seed, b, *stream)
            yield rows[: min(BLOCK, n_replicates - b * BLOCK)]
