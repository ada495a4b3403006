"""The calendar of a history: how often its rows come, and which dates are occasions of the season.

:class:`Frequency` (found from the rows by :func:`history_frequency`) lays the history's own calendar
over any span of time; :func:`season_mask` is the one definition of the season's occasions, for the
history's rows and the priced season alike; :func:`season_start_month` and the season labels tie
each date to the season it belongs to. Pure functions of date arrays (datetime64[D]).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from .scenario_tables import SeasonSection
from .scenario_types import WEEKDAYS

__all__ = ["Frequency", "DAILY_COVERAGE", "history_frequency", "season_mask", "season_start_month",
           "nearest_position"]


@dataclass(frozen=True)
class Frequency:
    """How often a history has a row, worked out from all its rows by :func:`history_frequency`.

    ``kind`` is one of

    - ``"daily"``: a row on (nearly) every day of the weekdays in ``weekdays`` (0 = Monday): every
      day, or working days or trading days, with holidays and other gaps missing;
    - ``"weekly"``: a row every 7 days, on the phase of ``anchor`` (the date of one of its rows);
    - ``"monthly"``: a row a month, on day ``day_of_month`` (0: the month's last day);
    - ``"steady"``: a row every ``step_days`` days, on the phase of ``anchor``.

    :meth:`dates_between` lays the same calendar over any span of time: the priced season is that
    calendar filtered by the season's months, weekdays and holidays (:func:`season_mask`).
    """

    kind: str
    step_days: int  # days between rows: 1 daily, 7 weekly, every n days; 0 for monthly
    weekdays: tuple[int, ...] = tuple(range(7))
    anchor: np.datetime64 | None = None
    day_of_month: int = 1

    @property
    def is_daily(self) -> bool:
        return self.kind == "daily"

    def describe(self) -> str:
        """The frequency in words: "daily", "daily on mon, tue, wed, thu, fri", "weekly", ..."""
        if self.kind == "daily":
            if len(self.weekdays) == 7:
                return "daily"
            return "daily on " + ", ".join(WEEKDAYS[w] for w in self.weekdays)
        if self.kind == "steady":
            return f"every {self.step_days} days"
        return self.kind

    def same_spacing(self, other: "Frequency") -> bool:
        """Whether two sites' rows come at the same spacing (daily sites may differ in weekdays)."""
        return (self.kind, self.step_days) == (other.kind, other.step_days)

    def dates_between(self, first: np.datetime64, stop: np.datetime64) -> np.ndarray:
        """The dates of this calendar from ``first`` up to, not including, ``stop`` (datetime64[D])."""
        first, stop = np.datetime64(first, "D"), np.datetime64(stop, "D")
        if self.kind == "daily":
            days = np.arange(first, stop, dtype="datetime64[D]")
            return days[np.isin(_weekday(days), self.weekdays)]
        if self.kind == "monthly":
            months = np.arange(first.astype("datetime64[M]"), stop.astype("datetime64[M]") + 1)
            last = (months + 1).astype("datetime64[D]") - 1
            day = last if self.day_of_month == 0 else np.minimum(
                months.astype("datetime64[D]") + (self.day_of_month - 1), last)
            return day[(day >= first) & (day < stop)]
        step = self.step_days
        offset = -(-int((first - self.anchor).astype(np.int64)) // step)  # whole steps to first
        return np.arange(self.anchor + offset * step, stop, step, dtype="datetime64[D]")


DAILY_COVERAGE = 0.6
"""A history is daily on the weekdays it has rows on when it has a row on at least this share of
those weekdays in the months it covers (trading days: about 0.96; a row every other day: 0.5).
A threshold of our own, no source."""


def history_frequency(dates: np.ndarray) -> Frequency:
    """How often the rows of ``dates`` (datetime64[D], ascending, one site) come.

    Monthly when no two rows share a calendar month and the median gap is 28 to 31 days; daily when
    the rows cover at least :data:`DAILY_COVERAGE` of the days, in the months they cover, of the
    weekdays they fall on (at least two weekdays, each with at least half the rows of the commonest;
    this takes trading days and working days with their holidays), or when the median gap is one
    day; otherwise every n days, n the median gap rounded (weekly when it is 7).
    """
    dates = np.unique(np.asarray(dates, dtype="datetime64[D]"))
    if dates.size < 2:
        return Frequency("daily", 1)
    gaps = np.diff(dates).astype(np.int64)
    typical = float(np.median(gaps))
    month = dates.astype("datetime64[M]")
    if 28 <= typical <= 31 and np.all(np.diff(month).astype(np.int64) > 0):
        last = (month + 1).astype("datetime64[D]") - 1
        if np.all(dates == last):
            return Frequency("monthly", 0, day_of_month=0)
        day = (dates - month.astype("datetime64[D]")).astype(np.int64) + 1
        return Frequency("monthly", 0, day_of_month=int(np.argmax(np.bincount(day))))
    weekday = _weekday(dates)
    per_weekday = np.bincount(weekday, minlength=7)
    weekdays = tuple(int(w) for w in np.flatnonzero(per_weekday >= 0.5 * per_weekday.max()))
    months = np.unique(month)
    span = np.arange(months[0].astype("datetime64[D]"), (months[-1] + 1).astype("datetime64[D]"))
    possible = np.isin(span.astype("datetime64[M]"), months) & np.isin(_weekday(span), weekdays)
    covered = np.isin(weekday, weekdays).sum() / max(1, int(possible.sum()))
    if (len(weekdays) >= 2 and covered >= DAILY_COVERAGE) or typical < 1.5:
        return Frequency("daily", 1, weekdays=weekdays)
    step = int(round(typical))
    return Frequency("weekly" if step == 7 else "steady", step, anchor=dates[-1])


def season_mask(dates: np.ndarray, rule: SeasonSection) -> np.ndarray:
    """Which ``dates`` (datetime64[D]) are occasions of the season: in its months, on its weekdays,
    and not among its holidays. The one definition, for the history's rows and the priced season."""
    dates = np.asarray(dates, dtype="datetime64[D]")
    month = dates.astype("datetime64[M]").astype(np.int64) % 12 + 1
    return (np.isin(month, rule.months) & np.isin(_weekday(dates), rule.weekday_numbers)
            & ~np.isin(dates, np.array(rule.holidays, dtype="datetime64[D]")))


def _weekday(dates: np.ndarray) -> np.ndarray:
    """Weekday of each date, 0 = Monday (1970-01-01 was a Thursday)."""
    return (np.asarray(dates, dtype="datetime64[D]").astype(np.int64) + 3) % 7


def _as_date(value: np.datetime64) -> date:
    return pd.Timestamp(value).date()


def season_start_month(months: tuple[int, ...]) -> int:
    """First month of a season given its months in any order: the month after the longest gap.

    {4..10} starts in April; {10, 11, 12, 1, 2, 3} starts in October (the season wraps the new year
    and is labelled by the year it starts in); all twelve months start in January.
    """
    chosen = sorted(set(months))
    if len(chosen) == 12:
        return 1
    gaps = [((chosen[(i + 1) % len(chosen)] - m) % 12 or 12, chosen[(i + 1) % len(chosen)])
            for i, m in enumerate(chosen)]
    return max(gaps, key=lambda g: (g[0], -g[1]))[1]


def _season_labels(dates: np.ndarray, rule: SeasonSection) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    stamps = pd.DatetimeIndex(dates)
    month = stamps.month.to_numpy()
    year = stamps.year.to_numpy()
    start = season_start_month(rule.months)
    in_season = season_mask(dates, rule)
    season_year = np.where(month >= start, year, year - 1)
    first_day = pd.to_datetime({"year": season_year, "month": start, "day": 1}).to_numpy().astype("datetime64[D]")
    day_of_season = (dates - first_day).astype(np.int64)
    season = np.where(in_season, season_year, -1).astype(np.int64)
    return season, day_of_season, in_season


def nearest_position(sorted_values: np.ndarray, targets: np.ndarray) -> np.ndarray:
    """For each target, the position in ``sorted_values`` (ascending) of the nearest value; ties go
    to the earlier position."""
    right = np.clip(np.searchsorted(sorted_values, targets), 0, sorted_values.size - 1)
    left = np.clip(right - 1, 0, sorted_values.size - 1)
    use_left = np.abs(sorted_values[left] - targets) <= np.abs(sorted_values[right] - targets)
    return np.where(use_left, left, right)
