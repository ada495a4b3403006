"""How a history's rows sit on its calendar: one spacing for every site, and the dates that have no row.

Sites must come at the same spacing (an error otherwise); dates of the history's own calendar inside
the season that have no row, and sites that lack dates other sites have, each give one warning
(returned, never printed), saying how the replay treats them.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .errors import InputError
from .history_calendar import Frequency, _as_date, history_frequency, nearest_position, season_mask, \
    season_start_month
from .scenario_tables import SeasonSection

__all__ = ["MISSING_DATE_RULE", "HOLIDAY_LIKE_PER_SEASON"]


def _frequency_of_sites(dates: np.ndarray, site_rows: list[np.ndarray], names: tuple[str, ...],
                        label: str) -> Frequency:
    """The frequency of every site's rows, which must agree; daily sites may differ in weekdays,
    and the history is then daily on the weekdays of any of them."""
    found = [history_frequency(dates[rows]) for rows in site_rows]
    first = found[0]
    for k, other in enumerate(found[1:], 1):
        if not other.same_spacing(first):
            raise InputError(f'{label}: site "{names[0]}" has a row {_every(first)} and site "{names[k]}" '
                             f"{_every(other)}; give every site forecasts at the same spacing")
    if first.is_daily and len(found) > 1:
        weekdays = tuple(sorted({w for f in found for w in f.weekdays}))
        first = dataclasses.replace(first, weekdays=weekdays)
    return first


def _every(frequency: Frequency) -> str:
    """"every day", "every week", "every month", "every 3 days": how often a history has a row."""
    return {"daily": "every day", "weekly": "every week", "monthly": "every month"}.get(
        frequency.kind, f"every {frequency.step_days} days")


MISSING_DATE_RULE = ("on such a date a replicate season gives the site its row of the nearest date in "
                     "the same season (else of the same day in the nearest season it has)")
"""How the joint replay treats a site without a row on a date that other sites have
(:class:`~simulator.replay.resample.Resampler`); quoted in the warning."""


def _missing_site_dates(union: np.ndarray, site_dates: list[np.ndarray], names: tuple[str, ...],
                        label: str) -> list[str]:
    """One warning naming the sites that lack some of the dates other sites have."""
    short = [(name, np.setdiff1d(union, own)) for name, own in zip(names, site_dates)]
    short = [(name, missing) for name, missing in short if missing.size]
    if not short:
        return []
    shown = "; ".join(f'"{name}" {missing.size} (from {_as_date(missing[0])})' for name, missing in short[:4])
    more = f"; and {len(short) - 4} more sites" if len(short) > 4 else ""
    return [f"{label}: {len(short)} of {len(names)} sites have no row on some of the {union.size} dates "
            f"inside the season that other sites have ({shown}{more}); {MISSING_DATE_RULE}"]


HOLIDAY_LIKE_PER_SEASON = 15
"""Missing dates of daily data look like holidays when at least nine in ten are single days or
pairs, at least half the seasons miss some, and there are at most this many a season on average
(market and public holidays: about 9 to 11 a year). A rule of thumb of our own, no source."""


def _gap_warnings(dates: np.ndarray, rule: SeasonSection, frequency: Frequency, label: str) -> list[str]:
    """One warning when dates of the history's own calendar inside the season have no row.

    ``dates`` are the evaluated dates, ascending and unique. On daily data a date is missing when
    no row has it; on sparser data, when no row lies within half a spacing of it. Missing days
    that look like holidays (:data:`HOLIDAY_LIKE_PER_SEASON`) point to ``[season] holidays``.
    """
    expected = frequency.dates_between(dates[0], dates[-1] + 1)
    expected = expected[season_mask(expected, rule)]
    if frequency.is_daily:
        missing = ~np.isin(expected, dates)
    else:
        half = (frequency.step_days or 30) / 2
        nearest = dates[nearest_position(dates, expected)]
        missing = np.abs((nearest - expected).astype(np.int64)) >= half
    n_missing = int(missing.sum())
    if n_missing == 0:
        return []
    shown = ", ".join(str(_as_date(d)) for d in expected[missing][:3]) + (", ..." if n_missing > 3 else "")
    if not frequency.is_daily:
        return [f"{label}: {n_missing} dates of its {frequency.describe()} calendar inside the season have "
                f"no row ({shown}); the replay joins across the gaps"]
    head = f"{label}: {n_missing} dates inside the season have no row ({shown})"
    per_season = _holiday_like(expected, missing, rule)
    if per_season is None:
        return [head + "; the replay joins across the gaps"]
    return [head + f"; they look like holidays (about {per_season:.0f} a season, mostly single "
            "days): list the priced season's holidays in [season] holidays, so that it skips them as the "
            "history does (listing these too silences this warning)"]


def _holiday_like(expected: np.ndarray, missing: np.ndarray, rule: SeasonSection) -> float | None:
    """Missing days a season on average when they look like holidays, else None."""
    edges = np.diff(np.r_[0, missing.astype(np.int8), 0])
    runs = np.flatnonzero(edges == -1) - np.flatnonzero(edges == 1)  # lengths of runs of missing days
    start = season_start_month(rule.months)
    month = expected.astype("datetime64[M]").astype(np.int64)
    season = (month - (start - 1)) // 12  # the same label for every date of one season
    seasons = np.unique(season)
    hit = np.unique(season[missing])
    per_season = missing.sum() / seasons.size
    in_long_runs = runs[runs > 2].sum()  # a closure of a week now and then is no pattern
    if (in_long_runs > 0.1 * missing.sum() or hit.size < max(2, seasons.size / 2)
            or per_season > HOLIDAY_LIKE_PER_SEASON):
        return None
    return float(per_season)
