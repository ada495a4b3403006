"""Read a forecast history (CSV or Parquet), check it, and derive the binary outcome.

One row per forecast occasion: a date, the forecast probability of the event and the observed
outcome, given directly (0/1, true/false, yes/no) or derived from a numeric column by a threshold
or by the direction of change since the previous occasion. ``flip`` turns the probability and the
outcome into those of the complementary class, so everything downstream speaks of the class the
user named. Every problem is one :class:`InputError` naming file, row (as a spreadsheet counts
rows: the header is row 1) and column.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd

from .errors import InputError, did_you_mean
from .scenario import HistorySection, Scenario, SeasonSection

__all__ = ["History", "read_history", "history_from_frame", "season_start_month", "MIN_CLASS_COUNT"]

MIN_CLASS_COUNT = 5
_TRUE = {"1", "1.0", "true", "yes", "y", "t"}
_FALSE = {"0", "0.0", "false", "no", "n", "f"}


@dataclass(frozen=True)
class History:
    """A checked history, all arrays of shape (n_rows,) in date order.

    ``p`` and ``event`` are those of the class of interest (after ``flip``). ``evaluated`` marks the
    occasions inside the season that have an outcome; ``validation`` the evaluated occasions from
    ``validation_from`` on. ``season`` labels each row with the year its season starts in
    (-1 outside the season) and ``day_of_season`` counts days from the season's first day.
    ``prev_event`` is the outcome of the previous row (False for the first), for persistence.
    """

    label: str
    sha256: str
    dates: np.ndarray  # datetime64[D]
    p: np.ndarray  # float64
    event: np.ndarray  # bool
    evaluated: np.ndarray  # bool
    validation: np.ndarray  # bool
    season: np.ndarray  # int64
    day_of_season: np.ndarray  # int64
    prev_event: np.ndarray  # bool
    step_days: int
    warnings: tuple[str, ...] = field(default=())

    @property
    def n_rows(self) -> int:
        return int(self.dates.size)

    @property
    def n_evaluated(self) -> int:
        return int(self.evaluated.sum())

    @property
    def has_validation(self) -> bool:
        return bool(self.validation.any())

    @property
    def training(self) -> np.ndarray:
        return self.evaluated & ~self.validation

    @property
    def seasons(self) -> np.ndarray:
        """Season labels present among evaluated occasions, ascending."""
        return np.unique(self.season[self.evaluated])

    @property
    def start(self) -> date:
        return _as_date(self.dates[self.evaluated][0])

    @property
    def end(self) -> date:
        return _as_date(self.dates[self.evaluated][-1])


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


# ------------------------------------------------------------------------------------------------
# reading files

def read_history(scenario: Scenario, path: str | Path | None = None) -> History:
    """Read and check the history named by ``path`` or by the scenario's ``[history] path``."""
    if path is None:
        path = scenario.history_path()
        if path is None:
            raise InputError(f"{_scenario_label(scenario)} [history]: no path; add path = "
                             '"history.csv" or give --history')
    path = Path(path)
    label = str(path)
    if not path.exists():
        raise InputError(f"{label}: no such history file; check the path")
    if path.is_dir():
        raise InputError(f"{label}: is a folder; give the history's CSV or Parquet file")
    raw = path.read_bytes()
    if not raw.strip():
        raise InputError(f"{label}: the file is empty; it needs a header row and one row per occasion")
    suffix = path.suffix.lower()
    try:
        if suffix in (".parquet", ".pq"):
            frame = pd.read_parquet(path)
            first_row = 1
        elif suffix in (".csv", ".txt", ""):
            # blank lines are kept as rows so that row numbers match the spreadsheet's; only
            # blank lines at the end of the file are dropped
            frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True,
                                skip_blank_lines=False)
            filled = frame.apply(lambda column: column.str.strip().ne("")).any(axis=1).to_numpy()
            frame = frame.iloc[: int(np.flatnonzero(filled)[-1]) + 1 if filled.any() else 0]
            first_row = 2
        else:
            raise InputError(f"{label}: unknown format {suffix!r}; give a .csv or .parquet file")
    except InputError:
        raise
    except Exception as exc:  # pandas/pyarrow say many things; the user needs one line
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"{label}: cannot be read as {suffix.lstrip('.') or 'CSV'} ({reason}); "
                         "save it as CSV with a header row, or as Parquet") from None
    return history_from_frame(frame, scenario, label=label, sha256=hashlib.sha256(raw).hexdigest(),
                              first_row=first_row)


def _scenario_label(scenario: Scenario) -> str:
    return str(scenario.source) if scenario.source else "scenario"


# ------------------------------------------------------------------------------------------------
# checking a frame

def history_from_frame(frame: pd.DataFrame, scenario: Scenario, *, label: str = "history",
                       sha256: str = "", first_row: int = 2) -> History:
    """Check a frame as read from a file and build a :class:`History`.

    ``first_row`` is the number a user sees for the frame's first row (2 for a CSV with a header).
    """
    spec = scenario.history
    if len(frame) == 0:
        raise InputError(f"{label}: has a header but no rows; add one row per forecast occasion")
    frame = frame.reset_index(drop=True)
    columns = [str(c) for c in frame.columns]
    frame.columns = columns
    where = _Where(label, first_row)
    for role, name in _required_columns(spec):
        if name not in columns:
            raise InputError(f'{label}: no column "{name}" (the {role}){did_you_mean(name, columns)} '
                             f"(the scenario's [history] {role}_column names the column to use)")

    dates = _parse_dates(frame[spec.date_column], where, spec.date_column)
    _check_order(dates, where, spec.date_column)
    p = _parse_probability(frame[spec.probability_column], where, spec.probability_column)
    event, defined = _parse_outcome(frame, spec, where)

    if scenario.event.flip:
        p = 1.0 - p
        event = ~event

    season_rule = scenario.season
    season, day_of_season, in_season = _season_labels(dates, season_rule)
    evaluated = in_season & defined
    if not evaluated.any():
        raise InputError(f"{label}: no occasion falls in the season (months {list(season_rule.months)}, "
                         f"weekdays {list(season_rule.weekdays)}); check [season]")
    validation = np.zeros_like(evaluated)
    if spec.validation_from is not None:
        cut = np.datetime64(spec.validation_from, "D")
        first, last = dates[evaluated][0], dates[evaluated][-1]
        if not (first < cut <= last):
            raise InputError(f"{_scenario_label(scenario)} [history] validation_from: "
                             f"{spec.validation_from} is outside the evaluated history "
                             f"({_as_date(first)} to {_as_date(last)}); pick a date inside it")
        validation = evaluated & (dates >= cut)

    periods = [("evaluated period", evaluated)]
    if validation.any():
        periods = [("training period", evaluated & ~validation), ("validation period", validation)]
    name = scenario.event.name
    for period, mask in periods:
        n_event = int(event[mask].sum())
        n_non = int(mask.sum()) - n_event
        for count, what in ((n_event, f'"{name}" occasions'), (n_non, f'occasions without "{name}"')):
            if count < MIN_CLASS_COUNT:
                raise InputError(f"{label}: the {period} has {count} {what}, fewer than "
                                 f"{MIN_CLASS_COUNT}; use a longer history or a wider season")

    prev_event = np.concatenate([[False], event[:-1]])
    step = _typical_step(dates[evaluated], season[evaluated])
    warnings = _gap_warnings(dates, evaluated, season, season_rule, step, label)
    return History(label=label, sha256=sha256, dates=dates, p=p, event=event, evaluated=evaluated,
                   validation=validation, season=season, day_of_season=day_of_season,
                   prev_event=prev_event, step_days=step, warnings=tuple(warnings))


@dataclass(frozen=True)
class _Where:
    label: str
    first_row: int

    def row(self, index: int) -> int:
        return int(index) + self.first_row

    def error(self, index: int, column: str, message: str) -> InputError:
        return InputError(f'{self.label} row {self.row(index)}, column "{column}": {message}')


def _required_columns(spec: HistorySection) -> list[tuple[str, str]]:
    out = [("date", spec.date_column), ("probability", spec.probability_column)]
    if spec.value_column is not None:
        out.append(("value", spec.value_column))
    else:
        out.append(("outcome", spec.outcome_source))
    return out


def _blank(values: pd.Series) -> np.ndarray:
    as_text = values.astype(str).str.strip()
    return (values.isna() | as_text.eq("") | as_text.str.lower().isin(["nan", "na", "nat", "none"])).to_numpy()


def _parse_dates(values: pd.Series, where: _Where, column: str) -> np.ndarray:
    blank = _blank(values)
    if blank.any():
        raise where.error(np.flatnonzero(blank)[0], column, "the date is missing; fill it in as YYYY-MM-DD")
    if pd.api.types.is_datetime64_any_dtype(values):
        parsed = pd.to_datetime(values)
    else:
        parsed = pd.to_datetime(values.astype(str).str.strip(), errors="coerce", format="ISO8601")
    bad = parsed.isna().to_numpy()
    if bad.any():
        i = np.flatnonzero(bad)[0]
        raise where.error(i, column, f"{values.iloc[i]!r} is not a date; write dates as YYYY-MM-DD")
    if getattr(parsed.dt, "tz", None) is not None:
        parsed = parsed.dt.tz_localize(None)
    return parsed.to_numpy().astype("datetime64[D]")


def _check_order(dates: np.ndarray, where: _Where, column: str) -> None:
    step = np.diff(dates).astype(np.int64)
    if (step == 0).any():
        i = np.flatnonzero(step == 0)[0] + 1
        raise where.error(i, column, f"{_as_date(dates[i])} appears again (first at row {where.row(i - 1)}); "
                          "keep one row per date")
    if (step < 0).any():
        i = np.flatnonzero(step < 0)[0] + 1
        raise where.error(i, column, f"{_as_date(dates[i])} comes after {_as_date(dates[i - 1])}; "
                          "sort the rows by date")


def _parse_probability(values: pd.Series, where: _Where, column: str) -> np.ndarray:
    blank = _blank(values)
    if blank.any():
        raise where.error(np.flatnonzero(blank)[0], column, "the probability is missing; fill it in (0 to 1)")
    numbers = pd.to_numeric(values, errors="coerce").to_numpy(dtype=float)
    bad = np.isnan(numbers)
    if bad.any():
        i = np.flatnonzero(bad)[0]
        raise where.error(i, column, f"{values.iloc[i]!r} is not a number; write a probability from 0 to 1")
    outside = (numbers < 0) | (numbers > 1)
    if outside.any():
        i = np.flatnonzero(outside)[0]
        value = numbers[i]
        hint = (f"write {value / 100:g}, not {value:g}" if 1 < value <= 100
                else "probabilities run from 0 to 1")
        raise where.error(i, column, f"{value:g} is outside [0, 1]; {hint}")
    return numbers


def _parse_outcome(frame: pd.DataFrame, spec: HistorySection, where: _Where) -> tuple[np.ndarray, np.ndarray]:
    """The event of what the probability describes (before flip), and where it is defined."""
    if spec.value_column is None:
        column = spec.outcome_source
        values = frame[column]
        blank = _blank(values)
        if blank.any():
            raise where.error(np.flatnonzero(blank)[0], column, "the outcome is missing; write 1 or 0")
        text = values.astype(str).str.strip().str.lower()
        is_true = text.isin(_TRUE).to_numpy()
        is_false = text.isin(_FALSE).to_numpy()
        bad = ~(is_true | is_false)
        if bad.any():
            i = np.flatnonzero(bad)[0]
            raise where.error(i, column, f"{values.iloc[i]!r} is not a yes/no outcome; write 1 or 0 "
                              "(true/false and yes/no also work)")
        return is_true, np.ones(len(frame), dtype=bool)
    column = spec.value_column
    values = frame[column]
    blank = _blank(values)
    if blank.any():
        raise where.error(np.flatnonzero(blank)[0], column, "the value is missing; fill it in")
    numbers = pd.to_numeric(values, errors="coerce").to_numpy(dtype=float)
    bad = np.isnan(numbers)
    if bad.any():
        i = np.flatnonzero(bad)[0]
        raise where.error(i, column, f"{values.iloc[i]!r} is not a number")
    defined = np.ones(len(frame), dtype=bool)
    if spec.threshold is not None:
        # "above": the value reaches or exceeds the threshold; "below": it stays under it,
        # so the two sides are exact complements of each other.
        event = numbers >= spec.threshold if spec.side == "above" else numbers < spec.threshold
        return event, defined
    change = np.diff(numbers, prepend=np.nan)
    event = change > 0 if spec.direction == "up" else change < 0
    defined[0] = False  # the first occasion has no previous one to compare with
    return event, defined


def _season_labels(dates: np.ndarray, rule: SeasonSection) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    stamps = pd.DatetimeIndex(dates)
    month = stamps.month.to_numpy()
    year = stamps.year.to_numpy()
    weekday = stamps.day_of_week.to_numpy()
    start = season_start_month(rule.months)
    in_season = np.isin(month, rule.months) & np.isin(weekday, rule.weekday_numbers)
    season_year = np.where(month >= start, year, year - 1)
    first_day = pd.to_datetime({"year": season_year, "month": start, "day": 1}).to_numpy().astype("datetime64[D]")
    day_of_season = (dates - first_day).astype(np.int64)
    season = np.where(in_season, season_year, -1).astype(np.int64)
    return season, day_of_season, in_season


def _typical_step(dates: np.ndarray, season: np.ndarray) -> int:
    """The usual number of days between consecutive occasions of one season (1 for daily data)."""
    same = season[1:] == season[:-1]
    gaps = np.diff(dates).astype(np.int64)[same]
    return int(np.median(gaps)) if gaps.size else 1


def _gap_warnings(dates, evaluated, season, rule, step, label) -> list[str]:
    if step != 1:
        same = season[evaluated][1:] == season[evaluated][:-1]
        wide = (np.diff(dates[evaluated]).astype(np.int64) > 1.5 * step) & same
        if wide.any():
            return [f"{label}: {int(wide.sum())} gaps longer than the usual {step} days between occasions "
                    "inside a season; the replay joins across them"]
        return []
    first, last = dates[evaluated][0], dates[evaluated][-1]
    calendar = np.arange(first, last + 1, dtype="datetime64[D]")
    stamps = pd.DatetimeIndex(calendar)
    in_season = np.isin(stamps.month, rule.months) & np.isin(stamps.day_of_week, rule.weekday_numbers)
    expected = calendar[in_season]
    missing = np.setdiff1d(expected, dates[evaluated])
    if missing.size == 0:
        return []
    shown = ", ".join(str(_as_date(d)) for d in missing[:3]) + (", ..." if missing.size > 3 else "")
    return [f"{label}: {missing.size} dates inside the season have no row ({shown}); "
            "the replay joins across the gaps"]
