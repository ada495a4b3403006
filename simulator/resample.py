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
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from .history import History, season_start_month
from .scenario import SeasonSection

__all__ = ["BLOCK", "Calendar", "Resampler", "season_calendar", "block_rng"]

BLOCK = 500  # replicates per seeded block; part of the reproducibility contract, never change lightly


@dataclass(frozen=True)
class Calendar:
    """The dates of the season being priced, shape (n_occasions,), and their day of season."""

    year: int
    dates: np.ndarray  # datetime64[D]
    day_of_season: np.ndarray  # int64

    @property
    def n_occasions(self) -> int:
        return int(self.dates.size)


def season_calendar(history: History, rule: SeasonSection) -> Calendar:
    """The calendar of the season to price: ``[season] year``, else the one after the history.

    Occasions fall every ``history.step_days`` days (1 for daily data) from the season's first day,
    on the season's months and weekdays.
    """
    start_month = season_start_month(rule.months)
    year = rule.year if rule.year is not None else int(history.seasons[-1]) + 1
    first = np.datetime64(date(year, start_month, 1), "D")
    following = np.datetime64(date(year + 1, start_month, 1), "D")
    days = np.arange(first, following, history.step_days, dtype="datetime64[D]")
    stamps = pd.DatetimeIndex(days)
    keep = np.isin(stamps.month, rule.months) & np.isin(stamps.weekday, rule.weekday_numbers)
    dates = days[keep]
    return Calendar(year=year, dates=dates, day_of_season=(dates - first).astype(np.int64))


def block_rng(seed: int, block: int, *stream: int) -> np.random.Generator:
    """The generator of one block of replicates; ``stream`` separates independent uses."""
    return np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(*stream, block)))


class Resampler:
    """Draws replicate seasons as row indices into the history, shape (n_replicates, n_occasions).

    Parameters
    ----------
    history : History
    calendar : Calendar
        The season being priced; one replicate column per calendar occasion.
    mean_block : float
        Mean run length, in occasions (>= 1).
    window_days : int
        How far, in days, a run may start from the calendar date it fills.
    """

    def __init__(self, history: History, calendar: Calendar, mean_block: float, window_days: int):
        if mean_block < 1:
            raise ValueError(f"mean_block must be at least 1, got {mean_block}")
        self.history = history
        self.calendar = calendar
        self.mean_block = float(mean_block)
        self.window_days = int(window_days)
        rows = np.flatnonzero(history.evaluated)
        self._rows = rows  # compressed position -> history row
        self._season = history.season[rows]
        labels, self._season_k = np.unique(self._season, return_inverse=True)
        day = history.day_of_season[rows]
        n_days = 367 + self.window_days
        tolerance = max(history.step_days, 3)
        n_seasons = labels.size
        nearest = np.zeros((n_seasons, n_days), dtype=np.int64)
        distance = np.zeros((n_seasons, n_days), dtype=np.int64)
        grid = np.arange(n_days)
        for k in range(n_seasons):
            members = np.flatnonzero(self._season_k == k)
            member_day = day[members]
            right = np.clip(np.searchsorted(member_day, grid), 0, members.size - 1)
            left = np.clip(right - 1, 0, members.size - 1)
            use_left = np.abs(member_day[left] - grid) <= np.abs(member_day[right] - grid)
            pick = np.where(use_left, left, right)
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

    @property
    def n_occasions(self) -> int:
        return self.calendar.n_occasions

    def draw_block(self, seed: int, block: int, *stream: int) -> np.ndarray:
        """Row indices of the :data:`BLOCK` replicates of one seeded block, (BLOCK, n_occasions)."""
        return self.draw(block_rng(seed, block, *stream), BLOCK)

    def draw(self, rng: np.random.Generator, n_replicates: int) -> np.ndarray:
        """Row indices of ``n_replicates`` replicate seasons, (n_replicates, n_occasions), int64."""
        n_occ = self.n_occasions
        shape = (n_replicates, n_occ)
        new_run = rng.random(shape) < 1.0 / self.mean_block
        new_run[:, 0] = True
        jitter = rng.integers(-self.window_days, self.window_days + 1, size=shape)
        day = np.clip(self.calendar.day_of_season[None, :] + jitter, 0, self._n_days - 1)
        choice = (rng.random(shape) * self._n_eligible[day]).astype(np.int64)
        season_k = self._eligible[day, choice]
        start = self._nearest[season_k, day]  # compressed position a run would start from
        position = np.arange(n_occ)
        n_rows = self._rows.size
        while True:
            run_start = np.maximum.accumulate(np.where(new_run, position, 0), axis=1)
            first = np.take_along_axis(start, run_start, axis=1)
            at = first + (position - run_start)
            clipped = np.minimum(at, n_rows - 1)
            broken = (at >= n_rows) | (self._season_k[clipped] != self._season_k[first])
            if not broken.any():
                break
            # a run that leaves its season restarts where it first leaves it
            first_break = broken & ~np.concatenate([np.zeros((n_replicates, 1), bool), broken[:, :-1]], axis=1)
            new_run |= first_break
        return self._rows[at]

    def blocks(self, seed: int, n_replicates: int, *stream: int) -> Iterator[np.ndarray]:
        """The replicates 0..n_replicates-1 block by block (the last block cut to size)."""
        n_blocks = -(-n_replicates // BLOCK)
        for b in range(n_blocks):
            rows = self.draw_block(seed, b, *stream)
            yield rows[: min(BLOCK, n_replicates - b * BLOCK)]
