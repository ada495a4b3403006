"""Reading and checking the columns of a history, cell by cell: dates in order, probabilities,
outcomes, sites.

Each check ends in one :class:`~simulator.inputs.errors.InputError` naming the file, the row (as a
spreadsheet counts rows: the header is row 1) and the column, and saying what to do
(:class:`_Where` words it). :func:`~simulator.inputs.history.history_from_frame` calls them in turn.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..notation import decimals
from .errors import InputError, closest, excerpt
from .history_calendar import _as_date
from .scenario import Scenario
from .scenario_tables import HistorySection

__all__ = ["TRUE_WORDS", "FALSE_WORDS"]

TRUE_WORDS = {"1", "1.0", "true", "yes", "y", "t"}
FALSE_WORDS = {"0", "0.0", "false", "no", "n", "f"}


def _scenario_label(scenario: Scenario) -> str:
    return str(scenario.source) if scenario.source else "scenario"


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
