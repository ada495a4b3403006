"""Dates as planners' files write them: ISO, day-first, month-first, with times and offsets.

Without ``[history] date_format`` the format is found from the whole column: ISO dates
(``2025-04-01``, with or without a time and offset), year-first with slashes or dots, and day-first
or month-first dates (``01.04.2025``, ``4/1/2025``) when the column leaves no doubt, that is when
some first field is over 12 (day-first) or some second field is (month-first). A column where
every date reads both ways, differently, is refused, naming two rows that show it and the key to
set. A time after the date is ignored and an offset (``+02:00``, ``Z``) is dropped, so each row is
the date the clock showed where the forecast was made: summer and winter time alike.
"""

from __future__ import annotations

import re
from collections.abc import Callable

import numpy as np
import pandas as pd

from .errors import InputError

__all__ = ["parse_dates", "find_date_format", "human_format", "ISO", "DateProblem"]

ISO = "ISO 8601"
"""What :func:`find_date_format` returns for ISO dates (pandas reads them without a format)."""
_SPLIT = re.compile(r"\s|T(?=\d)")
_OFFSET = re.compile(r"\s*(?:Z|UTC|GMT|[+-]\d{2}(?::?\d{2})?)$", re.IGNORECASE)
_YEAR_FIRST = re.compile(r"^\d{4}([-/.])\d{1,2}\1\d{1,2}$")
_YEAR_LAST = re.compile(r"^(\d{1,2})([-/.])(\d{1,2})\2(\d{2}|\d{4})$")
_SERIAL = re.compile(r"^\d{5}(?:\.\d+)?$")
_MAX_YEARS_APART = 100  # a date further from the median date is a typing slip (the project's own rule)
_FIRST_YEAR, _LAST_YEAR = 1850, 2200

class DateProblem(Exception):
    """A column whose dates cannot be read: ``index`` is the first row it concerns."""

    def __init__(self, index: int, message: str, rows: tuple[int, ...] = ()):
        super().__init__(message)
        self.index = index
        self.rows = rows  # the rows whose numbers fill the message's {0}, {1}

    def worded(self, row: Callable[[int], int]) -> str:
        """The message with row numbers as a spreadsheet counts them (``row(index)``)."""
        if not self.rows:  # the message may quote braces from the file: leave it as it is
            return str(self)
        return str(self).format(*(row(k) for k in self.rows))


def _tokens(values: pd.Series) -> pd.Series:
    """The date part of each cell: the text before a time (and the time's offset)."""
    return values.astype(str).str.strip().str.split(_SPLIT, n=1, regex=True).str[0]


def find_date_format(values: pd.Series) -> str:
    """The strftime format of a column of date text, :data:`ISO`, or a :class:`DateProblem`.

    The column's distinct cells are looked at once each, so a file of many sites costs no more
    than one of its sites; a problem names the first row holding the cell concerned.
    """
    codes, cells = _distinct(values)
    try:
        return _format_of(cells)
    except DateProblem as problem:
        raise _in_rows(problem, _first_rows(codes)) from None


def _distinct(values: pd.Series) -> tuple[np.ndarray, pd.Series]:
    """Each row's code and the distinct cells (stripped text), in order of first appearance."""
    codes, uniques = pd.factorize(values.astype(str).str.strip())
    return codes, pd.Series(np.asarray(uniques, dtype=object), dtype=object)


def _in_rows(problem: DateProblem, first: np.ndarray) -> DateProblem:
    """A problem found among the distinct cells, told by the first rows that hold them."""
    return DateProblem(int(first[problem.index]), str(problem), tuple(int(first[k]) for k in problem.rows))


def _first_rows(codes: np.ndarray) -> np.ndarray:
    """The first row holding each distinct cell (codes count up in order of first appearance)."""
    return np.unique(codes, return_index=True)[1]


def _format_of(values: pd.Series) -> str:
    tokens = _tokens(values)
    year_first = tokens.str.match(_YEAR_FIRST)
    if year_first.all():
        sep = tokens.iloc[0][4]
        return ISO if sep == "-" else f"%Y{sep}%m{sep}%d"
    parts = tokens.str.extract(_YEAR_LAST)
    shaped = parts[0].notna()
    if shaped.all() and parts[1].nunique() == 1 and parts[3].str.len().nunique() == 1:
        sep, year = parts[1].iloc[0], "%Y" if len(parts[3].iloc[0]) == 4 else "%y"
        first, second = parts[0].astype(int), parts[2].astype(int)
        day_first, month_first = f"%d{sep}%m{sep}{year}", f"%m{sep}%d{sep}{year}"
        if (first > 12).any() and (second > 12).any():
            i = int(np.flatnonzero((first > 12).to_numpy())[0])
            j = int(np.flatnonzero((second > 12).to_numpy())[0])
            raise DateProblem(max(i, j), f"{tokens.iloc[i]!r} is day-first but {tokens.iloc[j]!r} is "
                                         "month-first; write every date the same way")
        if (first > 12).any():
            return day_first
        if (second > 12).any():
            return month_first
        differ = np.flatnonzero((first != second).to_numpy())
        if differ.size == 0:
            return day_first  # every date reads the same both ways
        i = int(differ[0])
        j = int(differ[1]) if differ.size > 1 else i
        one = pd.to_datetime(tokens.iloc[i], format=day_first).date()
        other = pd.to_datetime(tokens.iloc[i], format=month_first).date()
        shown = " and ".join(dict.fromkeys(f"{tokens.iloc[k]!r} (row {{{n}}})" for n, k in enumerate((i, j))))
        raise DateProblem(i, f"dates such as {shown} read both day-first ({tokens.iloc[i]} = {one:%d %B %Y}) "
                             f'and month-first ({other:%d %B %Y}); set [history] date_format = "{day_first}" '
                             f'or "{month_first}"', rows=(i, j))
    # neither shape throughout: ISO text (with its variants) or an error at the first odd row
    parsed = pd.to_datetime(tokens, errors="coerce", format="ISO8601")
    bad = parsed.isna().to_numpy()
    if not bad.any():
        return ISO
    i = int(np.flatnonzero(bad)[0])
    odd = ~(year_first | shaped).to_numpy()
    if odd.any() and not odd.all():
        i = int(np.flatnonzero(odd)[0])
        try:
            usual = f" ({human_format(find_date_format(values[~odd]))})"
        except DateProblem:
            usual = ""
        _not_a_date(values, tokens, i, f"; write it as the other rows do{usual}")
    _not_a_date(values, tokens, i, "")


def human_format(fmt: str) -> str:
    """A date format as people write it: "%d.%m.%Y" -> "DD.MM.YYYY"; :data:`ISO` -> "YYYY-MM-DD"."""
    if fmt == ISO:
        return "YYYY-MM-DD"
    for code, shown in (("%Y", "YYYY"), ("%y", "YY"), ("%m", "MM"), ("%d", "DD")):
        fmt = fmt.replace(code, shown)
    return fmt


def _not_a_date(values: pd.Series, tokens: pd.Series, i: int, fix: str) -> None:
    shown = str(values.iloc[i])[:40]
    hint = fix or ('; this looks like a spreadsheet day number: format the column as dates'
                   if _SERIAL.match(tokens.iloc[i]) else
                   '; write dates as YYYY-MM-DD or set [history] date_format (for example "%d.%m.%Y")')
    raise DateProblem(i, f"{shown!r} is not a date{hint}")


def parse_dates(values: pd.Series, date_format: str | None, where, column: str) -> np.ndarray:
    """A column of dates as datetime64[D], each the local date written.

    ``where.error(index, column, message)`` builds the :class:`InputError` naming the row and
    ``where.row(index)`` gives a row's number as a spreadsheet counts it.
    """
    error = where.error
    if pd.api.types.is_datetime64_any_dtype(values):
        blank = values.isna().to_numpy()
        if blank.any():
            raise error(int(np.flatnonzero(blank)[0]), column, "the date is missing; fill it in")
        parsed = pd.to_datetime(values)
        if getattr(parsed.dt, "tz", None) is not None:
            parsed = parsed.dt.tz_localize(None)  # the wall-clock time where it was written
        dates = parsed.to_numpy().astype("datetime64[D]")
        _check_years(dates, error, column)
        return dates
    codes, cells = _distinct(values)  # each distinct cell is read once
    first = _first_rows(codes)
    blank = (values.isna().to_numpy()
             | cells.isin(["", "nan", "NaT", "None", "<NA>"]).to_numpy()[codes])
    if blank.any():
        raise error(int(np.flatnonzero(blank)[0]), column, "the date is missing; fill it in")
    if date_format is not None:
        fmt, text = date_format, cells
        if "%z" in fmt or "%Z" in fmt:  # the local date: drop the offset, whatever it is on each row
            fmt = re.sub(r"\s*%[zZ]", "", fmt)
            text = text.str.replace(_OFFSET, "", regex=True)
        parsed = pd.to_datetime(text, format=fmt, errors="coerce")
        bad = parsed.isna().to_numpy()
        if bad.any():
            k = int(np.flatnonzero(bad)[0])
            raise error(int(first[k]), column, f"{cells.iloc[k][:40]!r} does not match date_format "
                                               f'"{date_format}"; fix the date or the format')
    else:
        try:
            fmt = _format_of(cells)
        except DateProblem as problem:
            problem = _in_rows(problem, first)
            raise error(problem.index, column, problem.worded(where.row)) from None
        parsed = pd.to_datetime(_tokens(cells), format="ISO8601" if fmt == ISO else fmt, errors="coerce")
        bad = parsed.isna().to_numpy()
        if bad.any():  # e.g. 31.02.2025: the shape fits but the day does not exist
            k = int(np.flatnonzero(bad)[0])
            raise error(int(first[k]), column, f"{cells.iloc[k][:40]!r} is not a date of the calendar; fix it")
    dates = parsed.to_numpy().astype("datetime64[D]")[codes]
    _check_years(dates, error, column)
    return dates


def _check_years(dates: np.ndarray, error: Callable[[int, str, str], InputError], column: str) -> None:
    """A date far outside the others (a slip of the year) is refused, naming its row."""
    years = dates.astype("datetime64[Y]").astype(np.int64) + 1970
    median = int(np.median(years))
    apart = np.abs(years - median)
    far = (apart > _MAX_YEARS_APART) | (years < _FIRST_YEAR) | (years > _LAST_YEAR)
    if far.any():
        i = int(np.flatnonzero(far)[0])
        when = pd.Timestamp(dates[i]).date() if _FIRST_YEAR - 500 < years[i] < _LAST_YEAR + 500 else years[i]
        raise error(i, column, f"{when} is {abs(years[i] - median)} years from the history's other dates "
                               f"(middle year {median}); check the year")
