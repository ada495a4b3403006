"""The building blocks of the scenario schema: its limits, constrained types, the base of every table.

Every number key has a range and every string a length limit, and NaN and infinity are refused
everywhere, so that nonsense is refused in one line before any work starts. The limits are the
project's own choice (no published source): wide enough that a practitioner never meets them in
earnest (money within 1e12 per occasion, factors up to 1000, years 1900 to 2200), and listed in the
README's key table. Also here: the names of weekdays and baseline rules, and the validators that
several tables share (weekday names, lists of dates).
"""

from __future__ import annotations

from datetime import date, datetime, time
from typing import Annotated, Any

from pydantic import BaseModel, ConfigDict, Field

from .errors import did_you_mean, excerpt, quoted

__all__ = ["WEEKDAYS", "BASELINES", "MAX_MONEY", "MAX_FACTOR", "MAX_TEXT", "MAX_PATH", "MAX_CURRENCY",
           "MAX_SCENARIO_BYTES", "MAX_WORK", "MAX_SEASON_DAYS", "MAX_SEASON_COSTS", "YEARS", "MAX_HOLIDAYS",
           "MAX_FORECASTS", "Money", "Price", "Factor", "Name", "Days", "Work", "Holidays", "WeekdayList"]

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
_WEEKDAY_NAMES = ("monday", "tuesday", "wednesday", "thursday", "friday", "saturday", "sunday")
BASELINES = ("never_act", "always_act", "persistence", "seasonal_rate", "perfect")

# limits of the schema (see the module's docstring and the README's key table)
MAX_MONEY = 1e12  # any amount of money, in the scenario's currency
MAX_FACTOR = 1000.0  # a multiplier of a cost, an operating-rule price or the event rate
MAX_TEXT = 200  # characters of a name, a label or a column's name
MAX_PATH = 4096  # characters of a file's path (Linux's PATH_MAX)
MAX_CURRENCY = 40  # characters of the currency's name
MAX_SCENARIO_BYTES = 1_000_000  # bytes of a scenario file
MAX_WORK = 1e7  # crew-days of work in a season (counted in thousandths, well inside int64)
MAX_SEASON_DAYS = 366  # a run length, a streak: at most a year of days
MAX_SEASON_COSTS = 100_000_000  # replicates x cutoffs: the season costs held at once (800 MB as float64)
YEARS = (1900, 2200)  # seasons a calendar may price
MAX_HOLIDAYS = 10_000  # dates in a list of holidays
MAX_FORECASTS = 20  # forecasts compared in one run ([forecasts])

Money = Annotated[float, Field(ge=-MAX_MONEY, le=MAX_MONEY)]  # negative = income
Price = Annotated[float, Field(ge=0, le=MAX_MONEY)]
Factor = Annotated[float, Field(ge=0, le=MAX_FACTOR)]
Name = Annotated[str, Field(max_length=MAX_TEXT)]
Days = Annotated[float, Field(ge=1, le=MAX_SEASON_DAYS)]
Work = Annotated[float, Field(gt=0, le=MAX_WORK)]
Holidays = Annotated[tuple[date, ...], Field(max_length=MAX_HOLIDAYS)]
WeekdayList = Annotated[tuple[str, ...], Field(max_length=7, description='a list of weekdays written '
                                              '"mon" to "sun" or in full ("monday")')]


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)


def _weekdays(value: tuple[str, ...]) -> tuple[str, ...]:
    """Weekday names as the three-letter keys of :data:`WEEKDAYS`: "mon", "Monday" and "tues" are
    read; "monkey" is not (a name must be the start, three letters at least, of a weekday's)."""
    out = []
    for v in value:
        word = str(v).strip().lower()
        day = next((d for d, full in zip(WEEKDAYS, _WEEKDAY_NAMES) if len(word) >= 3 and full.startswith(word)),
                   None)
        if day is None:
            raise ValueError(f"{quoted(str(v))} is not a weekday{did_you_mean(word[:20], WEEKDAYS)}")
        out.append(day)
    if len(set(out)) != len(out):
        raise ValueError("a weekday is listed twice")
    return tuple(out)


def _date_list(value: Any) -> Any:
    """A list of dates as ``[season] holidays`` and ``[operations] holidays`` take them: TOML dates
    or "YYYY-MM-DD" text; anything else is one plain error naming the item."""
    if isinstance(value, str | date):
        raise ValueError("list the dates in brackets, e.g. holidays = [2027-05-03, 2027-08-30]")
    if not isinstance(value, list | tuple):
        return value  # pydantic says what it wanted
    out = []
    for i, item in enumerate(value, 1):
        if isinstance(item, datetime):
            item = item.date() if item.time() == time() else item
        if isinstance(item, str):
            try:
                item = date.fromisoformat(item.strip())
            except ValueError:
                pass
        if type(item) is not date:
            raise ValueError(f"item {i}, {excerpt(item)}, is not a date; write dates as YYYY-MM-DD, "
                             "e.g. holidays = [2027-05-03, 2027-08-30]")
        out.append(item)
    return tuple(out)
