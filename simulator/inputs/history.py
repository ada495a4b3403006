"""Read a forecast history (CSV, Excel .xlsx or Parquet), check it, and derive the binary outcome.

One row per forecast occasion: a date, the forecast probability of the event and the observed
outcome, given directly (0/1, true/false, yes/no) or derived from a numeric column by a threshold
or by the direction of change since the previous occasion. ``flip`` turns the probability and the
outcome into those of the complementary class, so everything downstream speaks of the class the
user named. Every problem is one :class:`InputError` naming file, row (as a spreadsheet counts
rows: the header is row 1) and column.

The checks of each column are in ``history_checks``, the history's calendar (how often rows come,
the season's occasions) in ``history_calendar``, and the warnings about dates without a row in
``history_gaps``.
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
from .errors import InputError, did_you_mean, quoted
from .history_calendar import Frequency, _as_date, _season_labels
from .history_checks import (_check_order, _check_site_tables, _parse_forecasts, _parse_outcome, _parse_sites,
                             _required_columns, _scenario_label, _Where)
from .history_gaps import _every, _frequency_of_sites, _gap_warnings, _missing_site_dates
from .scenario import Scenario
from .scenario_types import WEEKDAYS
from .sheets import read_table

__all__ = ["History", "read_history", "history_from_frame", "MIN_CLASS_COUNT"]

MIN_CLASS_COUNT = 5


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


# ------------------------------------------------------------------------------------------------
# reading files

def read_history(scenario: Scenario, path: str | Path | None = None) -> History:
    """Read and check the history named by ``path`` or by the scenario's ``[history] path``.

    CSV (any common separator, decimal mark and encoding), Excel ``.xlsx`` and Parquet are read by
    :func:`simulator.inputs.sheets.read_table`, with what ``[history]`` says of the file's dialect.
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
