"""Read a forecast history (CSV, Excel .xlsx or Parquet), check it, and derive the binary outcome.

One row per forecast occasion: a date, the forecast probability of the event and the observed
outcome, given directly (0/1, true/false, yes/no) or derived from a numeric column by a threshold
or by the direction of change since the previous occasion. ``flip`` turns the probability and the
outcome into those of the complementary class, so everything downstream speaks of the class the
user named. Every problem is one :class:`InputError` naming file, row (as a spreadsheet counts
rows: the header is row 1) and column.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd

from ..notation import decimals
from .dates import parse_dates
from .errors import InputError, closest, did_you_mean, excerpt, quoted
from .scenario import WEEKDAYS, HistorySection, Scenario, SeasonSection
from .sheets import read_table

__all__ = ["History", "Frequency", "read_history", "history_from_frame", "history_frequency", "season_mask",
           "season_start_month", "nearest_position", "MIN_CLASS_COUNT", "TRUE_WORDS", "FALSE_WORDS"]

MIN_CLASS_COUNT = 5
TRUE_WORDS = {"1", "1.0", "true", "yes", "y", "t"}
FALSE_WORDS = {"0", "0.0", "false", "no", "n", "f"}


@dataclass(frozen=True)
class History:
    """A checked history, all arrays of shape (n_rows,) in date order.

    ``p`` and ``event`` are those of the class of interest (after ``flip``). ``evaluated`` marks the
    occasions inside the season that have an outcome; ``validation`` the evaluated occasions from
    ``validation_from`` on. ``season`` labels each row with the year its season starts in
    (-1 outside the season) and ``day_of_season`` counts days from the season's first day.
    ``prev_event`` is the outcome of the previous row (False for the first), for persistence.
    ``frequency`` is how often the history has a row, worked out from all its rows
    (:func:`history_frequency`); the priced season is laid on it.

    A history of many sites (``[history] site_column``) holds every site's rows, grouped by site in
    the order of the sites' names (so the order they are listed in changes no figure of a run, not
    even the last bit of a sum over sites) and in date order within each: ``site`` gives each
    row's site as an index into ``site_names``, and ``prev_event`` looks back within the site.
    :meth:`for_site` gives one site's rows as a history of its own. Without a site column ``site``
    is None and ``site_names`` empty.
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
    frequency: "Frequency"
    warnings: tuple[str, ...] = field(default=())
    site: np.ndarray | None = None  # int64 (n_rows,), an index into site_names; None: one site
    site_names: tuple[str, ...] = ()
    read_as: str = ""  # how the file was read ("CSV, semicolon-separated, ..."); empty for a frame
    # with [forecasts] of two or more: every forecast's probabilities (after flip), the main one
    # (``p``) first, each (n_rows,); rows where one is missing hold 0 and are not evaluated
    forecast_p: tuple[np.ndarray, ...] = ()
    forecast_names: tuple[str, ...] = ()

    def with_forecast(self, index: int) -> "History":
        """This history with forecast ``index`` (its position in ``forecast_names``) as ``p``: the
        same rows, outcomes and periods, so every forecast is priced on the same occasions."""
        if index == 0:
            return self
        return dataclasses.replace(self, p=self.forecast_p[index])

    @property
    def n_rows(self) -> int:
        return int(self.dates.size)

    @property
    def has_sites(self) -> bool:
        """Whether the history came with a site column (even if it names one site only)."""
        return self.site is not None

    @property
    def n_sites(self) -> int:
        return max(1, len(self.site_names))

    def for_site(self, index: int) -> "History":
        """Site ``index``'s rows (its position in ``site_names``) as a history of its own.

        The result has no ``site`` array and ``site_names == (name,)``; its arrays are those of
        this history at the site's rows, so it equals the history of a file holding that site only.
        """
        if self.site is None:
            if index != 0:
                raise IndexError(f"a history without sites has site 0 only, not {index}")
            return self
        # rows are grouped by site in site order, so a site's rows are one slice (views, no copies)
        rows = slice(*np.searchsorted(self.site, [index, index + 1]))
        return dataclasses.replace(
            self, dates=self.dates[rows], p=self.p[rows], event=self.event[rows],
            evaluated=self.evaluated[rows], validation=self.validation[rows], season=self.season[rows],
            day_of_season=self.day_of_season[rows], prev_event=self.prev_event[rows], warnings=(),
            site=None, site_names=(self.site_names[index],), forecast_p=tuple(f[rows] for f in self.forecast_p))

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


# ------------------------------------------------------------------------------------------------
# reading files

def read_history(scenario: Scenario, path: str | Path | None = None) -> History:
    """Read and check the history named by ``path`` or by the scenario's ``[history] path``.

    CSV (any common separator, decimal mark and encoding), Excel ``.xlsx`` and Parquet are read by
    :func:`simulator.sheets.read_table`, with what ``[history]`` says of the file's dialect.
    """
    if path is None:
        path = scenario.history_path()
        if path is None:
            raise InputError(f"{_scenario_label(scenario)} [history]: no path; add path = "
                             '"history.csv" or give --history')
    spec = scenario.history
    table = read_table(Path(path), sheet=spec.sheet, separator=spec.separator, decimal=spec.decimal,
                       encoding=spec.encoding)
    history = history_from_frame(table.frame, scenario, label=str(path), sha256=table.sha256,
                                 first_row=table.first_row)
    return dataclasses.replace(history, read_as=table.dialect.describe())


def _scenario_label(scenario: Scenario) -> str:
    return str(scenario.source) if scenario.source else "scenario"


# ------------------------------------------------------------------------------------------------
# checking a frame

def history_from_frame(frame: pd.DataFrame, scenario: Scenario, *, label: str = "history",
                       sha256: str = "", first_row: int = 2) -> History:
    """Check a frame as read from a file and build a :class:`History`.

    ``first_row`` is the number a user sees for the frame's first row (2 for a CSV with a header).
    With ``[history] site_column`` the rows of each site are checked as a history of their own
    (dates in order, enough events in each period) and grouped by site.
    """
    spec = scenario.history
    if len(frame) == 0:
        raise InputError(f"{label}: has a header but no rows; add one row per forecast occasion")
    frame = frame.reset_index(drop=True)
    columns = [str(c) for c in frame.columns]
    frame.columns = columns
    where = _Where(label, first_row)
    required = _required_columns(spec)
    if len(columns) == 1 and columns[0] not in [name for _, name in required]:
        # not a table: its first line is not quoted back (it may be anything, e.g. a system file)
        raise InputError(f"{label}: has a single column, so it is not a history table; give a file with "
                         "date, probability and outcome columns (in a CSV file, a header row with the "
                         "names separated by commas)")
    for role, name in required:
        if name not in columns:
            if scenario.forecasts and role == "probability":
                continue  # named under [forecasts]: checked below
            raise InputError(f'{label}: no column "{name}" (the {role}){did_you_mean(name, columns)}; '
                             f"name it in the scenario's [history] {role}_column (gonogo init writes a scenario that "
                             "names the columns it finds)")
    for forecast, name in scenario.forecast_columns if scenario.forecasts else ():
        if name not in columns:
            raise InputError(f"{label}: no column {quoted(name)} (the forecast {quoted(forecast)})"
                             f"{did_you_mean(name, columns)}; name it in the scenario's [forecasts]")

    codes, site_names = None, ()
    if spec.site_column is not None:
        codes, site_names = _parse_sites(frame[spec.site_column], where, spec.site_column)
        _check_site_tables(scenario, site_names, label, spec.site_column)
    dates = parse_dates(frame[spec.date_column], spec.date_format, where, spec.date_column)
    _check_order(dates, where, spec.date_column, codes, site_names)
    forecasts, present, dropped = _parse_forecasts(frame, scenario, where)
    p = forecasts[0]
    event, defined = _parse_outcome(frame, spec, where, codes)
    first_of_site = np.zeros(len(frame), dtype=bool)
    first_of_site[0] = True
    if codes is not None:  # group the rows by site, keeping each site's rows in file (= date) order
        order = np.argsort(codes, kind="stable")
        codes, dates, p, event, defined = codes[order], dates[order], p[order], event[order], defined[order]
        forecasts, present = [f[order] for f in forecasts], present[order]
        first_of_site[1:] = codes[1:] != codes[:-1]

    if scenario.event.flip:
        p = decimals.complement(p)  # exact: the complement of 0.56 is 0.44 (see decimals.py)
        forecasts = [decimals.complement(f) for f in forecasts]
        event = ~event

    site_rows = ([np.ones(len(dates), dtype=bool)] if codes is None
                 else [codes == k for k in range(len(site_names))])
    frequency = _frequency_of_sites(dates, site_rows, site_names, label)
    season_rule = scenario.season
    if not frequency.is_daily and set(season_rule.weekdays) != set(WEEKDAYS):
        raise InputError(f"{_scenario_label(scenario)} [season] weekdays: {label} has a row "
                         f"{_every(frequency)}, and weekdays choose the occasions of daily data only; "
                         "leave weekdays out of [season]")
    if frequency.is_daily and not set(season_rule.weekday_numbers) & set(frequency.weekdays):
        raise InputError(f"{_scenario_label(scenario)} [season] weekdays: {label} has rows "
                         f"{frequency.describe()} only, none on {', '.join(season_rule.weekdays)}; "
                         "choose weekdays it has rows on")
    season, day_of_season, in_season = _season_labels(dates, season_rule)
    evaluated = in_season & defined & present
    if not evaluated.any():
        raise InputError(f"{label}: no occasion falls in the season (months {list(season_rule.months)}, "
                         f"weekdays {list(season_rule.weekdays)}); check [season]")
    validation = np.zeros_like(evaluated)
    if spec.validation_from is not None:
        cut = np.datetime64(spec.validation_from, "D")
        first, last = dates[evaluated].min(), dates[evaluated].max()
        if not (first < cut <= last):
            raise InputError(f"{_scenario_label(scenario)} [history] validation_from: "
                             f"{spec.validation_from} is outside the evaluated history "
                             f"({_as_date(first)} to {_as_date(last)}); pick a date inside it")
        validation = evaluated & (dates >= cut)

    site_of = (lambda k: f'{label} site "{site_names[k]}"') if codes is not None else (lambda k: label)
    periods = [("evaluated period", evaluated)]
    if validation.any():
        periods = [("training period", evaluated & ~validation), ("validation period", validation)]
    name = scenario.event.name
    for k, rows in enumerate(site_rows):
        for period, mask in periods:
            n_event = int(event[mask & rows].sum())
            n_non = int((mask & rows).sum()) - n_event
            for count, what in ((n_event, f'"{name}" occasions'), (n_non, f'occasions without "{name}"')):
                if count < MIN_CLASS_COUNT:
                    fix = "; use a longer history or a wider season"
                    if codes is not None:
                        fix += ", or leave the site out"
                    raise InputError(f"{site_of(k)}: the {period} has {count} {what}, fewer than "
                                     f"{MIN_CLASS_COUNT}{fix}")

    prev_event = np.concatenate([[False], event[:-1]]) & ~first_of_site
    union = np.unique(dates[evaluated])  # the dates of the season that any site has
    warnings = _gap_warnings(np.unique(dates[in_season & defined]), season_rule, frequency, label)
    if dropped:
        warnings.insert(0, f'{label}: {dropped} row{"s" if dropped > 1 else ""} left out because a forecast '
                        f'has no probability there ([history] missing_forecast = "drop_row"); every '
                        f"forecast is evaluated on the {int(evaluated.sum())} occasions where all have one")
    if codes is not None:
        warnings += _missing_site_dates(union, [dates[evaluated & rows] for rows in site_rows],
                                        site_names, label)
    several = len(scenario.forecasts) > 1
    return History(label=label, sha256=sha256, dates=dates, p=p, event=event, evaluated=evaluated,
                   validation=validation, season=season, day_of_season=day_of_season,
                   prev_event=prev_event, frequency=frequency, warnings=tuple(warnings),
                   site=codes, site_names=tuple(site_names),
                   forecast_p=tuple(forecasts) if several else (),
                   forecast_names=tuple(scenario.forecasts) if several else ())


def _parse_forecasts(frame: pd.DataFrame, scenario: Scenario,
                     where: "_Where") -> tuple[list[np.ndarray], np.ndarray, int]:
    """Every forecast's probabilities (before flip), the main one first; whether all are present on
    each row; and how many rows ``missing_forecast = "drop_row"`` leaves out (they hold 0)."""
    columns = [column for _, column in scenario.forecast_columns]
    present = np.ones(len(frame), dtype=bool)
    if scenario.history.missing_forecast == "drop_row":
        for column in dict.fromkeys(columns):
            present &= ~_blank(frame[column])
    keep = frame if present.all() else frame[present]
    forecasts = []
    for column in columns:
        values = np.zeros(len(frame))
        # rows are named by their place in the file whichever rows are left out
        values[present] = _parse_probability(
            keep[column], dataclasses.replace(where, kept=np.flatnonzero(present)), column,
            ' or set [history] missing_forecast = "drop_row"' if len(columns) > 1 else "")
        forecasts.append(values)
    return forecasts, present, int((~present).sum())


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
(:class:`~simulator.resample.Resampler`); quoted in the warning."""


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


def _parse_sites(values: pd.Series, where: "_Where", column: str) -> tuple[np.ndarray, tuple[str, ...]]:
    """Each row's site as an index into the site names, sorted by name (see :class:`History`)."""
    blank = _blank(values)
    if blank.any():
        raise where.error(np.flatnonzero(blank)[0], column, "the site is missing; name the site on every row")
    codes, names = pd.factorize(values.astype(str).str.strip(), sort=True)
    return codes.astype(np.int64), tuple(str(n) for n in names)


def _check_site_tables(scenario: Scenario, names: tuple[str, ...], label: str, column: str) -> None:
    """Every ``[sites."<name>"]`` table must name a site of the history."""
    for key in scenario.sites:
        if key in names:
            continue
        best = closest(key, names)
        hint = (f'; did you mean "{best}"?' if best is not None else
                "; its sites are " + ", ".join(f'"{n}"' for n in names[:5]) + (", ..." if len(names) > 5 else ""))
        raise InputError(f'{_scenario_label(scenario)} [sites."{key}"]: {label} has no site of that name '
                         f'(column "{column}"){hint}')


@dataclass(frozen=True)
class _Where:
    label: str
    first_row: int
    kept: np.ndarray | None = None  # positions in the frame of the rows being read, when not all

    def row(self, index: int) -> int:
        return int(index if self.kept is None else self.kept[index]) + self.first_row

    def error(self, index: int, column: str, message: str) -> InputError:
        return InputError(f'{self.label} row {self.row(index)}, column "{column}": {message}')


def _required_columns(spec: HistorySection) -> list[tuple[str, str]]:
    out = [("date", spec.date_column), ("probability", spec.probability_column)]
    if spec.site_column is not None:
        out.append(("site", spec.site_column))
    if spec.value_column is not None:
        out.append(("value", spec.value_column))
    else:
        out.append(("outcome", spec.outcome_source))
    return out


def _blank(values: pd.Series) -> np.ndarray:
    as_text = values.astype(str).str.strip()
    return (values.isna() | as_text.eq("") | as_text.str.lower().isin(["nan", "na", "nat", "none"])).to_numpy()


def _check_order(dates: np.ndarray, where: _Where, column: str, codes: np.ndarray | None = None,
                 names: tuple[str, ...] = ()) -> None:
    if codes is not None:
        order = np.argsort(codes, kind="stable")  # each site's rows, in file order
        same = codes[order][1:] == codes[order][:-1]
        step = np.diff(dates[order]).astype(np.int64)
        bad = same & (step <= 0)
        if bad.any():
            offenders = order[1:][bad]
            j = int(np.argmin(offenders))
            i, before = int(offenders[j]), int(order[:-1][bad][j])
            site = f'site "{names[codes[i]]}"'
            if dates[i] == dates[before]:
                raise where.error(i, column, f"{_as_date(dates[i])} appears again for {site} (first at row "
                                  f"{where.row(before)}); keep one row per site and date")
            raise where.error(i, column, f"{_as_date(dates[i])} comes after {_as_date(dates[before])} for "
                              f"{site}; sort each site's rows by date")
        return
    step = np.diff(dates).astype(np.int64)
    if (step == 0).any():
        i = np.flatnonzero(step == 0)[0] + 1
        raise where.error(i, column, f"{_as_date(dates[i])} appears again (first at row {where.row(i - 1)}); "
                          "keep one row per date (a file of many sites needs [history] site_column)")
    if (step < 0).any():
        i = np.flatnonzero(step < 0)[0] + 1
        raise where.error(i, column, f"{_as_date(dates[i])} comes after {_as_date(dates[i - 1])}; "
                          "sort the rows by date")


def _parse_numbers(values: pd.Series, where: _Where, column: str, missing: str, not_number: str) -> np.ndarray:
    """A column of numbers as float64; the first blank or unreadable cell is an InputError."""
    blank = _blank(values)
    if blank.any():
        raise where.error(np.flatnonzero(blank)[0], column, missing)
    numbers = pd.to_numeric(values, errors="coerce").to_numpy(dtype=float)
    bad = np.isnan(numbers)
    if bad.any():
        i = np.flatnonzero(bad)[0]
        raise where.error(i, column, f"{excerpt(values.iloc[i])} is not a number{not_number}")
    return numbers


def _parse_probability(values: pd.Series, where: _Where, column: str, or_else: str = "") -> np.ndarray:
    numbers = _parse_numbers(values, where, column, f"the probability is missing; fill it in (0 to 1){or_else}",
                             "; write a probability from 0 to 1")
    numbers = decimals.snap(numbers)  # kept as 12-decimal values, the grid every comparison uses
    outside = (numbers < 0) | (numbers > 1)
    if outside.any():
        i = np.flatnonzero(outside)[0]
        value = numbers[i]
        hint = (f"the column looks like percentages; divide them by 100 (write {value / 100:g}, not {value:g})"
                if _looks_like_percentages(numbers) else "probabilities run from 0 to 1; check this cell")
        raise where.error(i, column, f"{value:g} is outside [0, 1]; {hint}")
    return numbers


def _looks_like_percentages(numbers: np.ndarray) -> bool:
    """Every value from 0 to 100 and most of those that are not 0 above 1: percentages, not a slip
    in a column of probabilities (the project's own rule)."""
    nonzero = numbers[numbers != 0]
    return bool(((numbers >= 0) & (numbers <= 100)).all() and nonzero.size and (nonzero > 1).mean() > 0.5)


def _parse_outcome(frame: pd.DataFrame, spec: HistorySection, where: _Where,
                   codes: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """The event of what the probability describes (before flip), and where it is defined.

    A direction of change compares each row with the previous row of the same site (``codes``).
    """
    if spec.value_column is None:
        column = spec.outcome_source
        values = frame[column]
        blank = _blank(values)
        if blank.any():
            raise where.error(np.flatnonzero(blank)[0], column, "the outcome is missing; write 1 or 0")
        text = values.astype(str).str.strip().str.lower()
        number = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)  # 1.00 and 0.00 as exported
        is_true = text.isin(TRUE_WORDS).to_numpy() | (number == 1)
        is_false = text.isin(FALSE_WORDS).to_numpy() | (number == 0)
        bad = ~(is_true | is_false)
        if bad.any():
            i = np.flatnonzero(bad)[0]
            raise where.error(i, column, f"{excerpt(values.iloc[i])} is not a yes/no outcome; write 1 or 0 "
                              "(true/false and yes/no also work)")
        return is_true, np.ones(len(frame), dtype=bool)
    column = spec.value_column
    numbers = _parse_numbers(frame[column], where, column, "the value is missing; fill it in", "")
    defined = np.ones(len(frame), dtype=bool)
    if spec.threshold is not None:
        # "above": the value reaches or exceeds the threshold; "below": it stays under it,
        # so the two sides are exact complements of each other.
        event = numbers >= spec.threshold if spec.side == "above" else numbers < spec.threshold
        return event, defined
    if codes is None:
        change = np.diff(numbers, prepend=np.nan)
        defined[0] = False  # the first occasion has no previous one to compare with
    else:
        order = np.argsort(codes, kind="stable")
        change = np.empty_like(numbers)
        change[order] = np.diff(numbers[order], prepend=np.nan)
        first = np.r_[True, codes[order][1:] != codes[order][:-1]]
        defined[order[first]] = False  # each site's first occasion
    event = change > 0 if spec.direction == "up" else change < 0
    return event, defined


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


def nearest_position(sorted_values: np.ndarray, targets: np.ndarray) -> np.ndarray:
    """For each target, the position in ``sorted_values`` (ascending) of the nearest value; ties go
    to the earlier position."""
    right = np.clip(np.searchsorted(sorted_values, targets), 0, sorted_values.size - 1)
    left = np.clip(right - 1, 0, sorted_values.size - 1)
    use_left = np.abs(sorted_values[left] - targets) <= np.abs(sorted_values[right] - targets)
    return np.where(use_left, left, right)
