"""``gonogo init``: from a planner's history file to a commented starter scenario.

:func:`find_layout` reads the file as :func:`simulator.inputs.sheets.read_table` does and finds, by the
contents of the columns, the date column and its format, the probability column(s), the outcome
(or a numeric column to put a threshold on), a site column, and the months and weekdays present.
:func:`starter_scenario` writes TOML that states what was found and marks each choice made. It
never invents money: the costs are written as :data:`~simulator.inputs.scenario_costs.COST_PLACEHOLDER`, which
the schema refuses until the user fills them in.
"""

from __future__ import annotations

import json
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from .dates import ISO, DateProblem, find_date_format, human_format, parse_dates
from .errors import InputError
from .history_calendar import history_frequency
from .history_checks import FALSE_WORDS as _FALSE
from .history_checks import TRUE_WORDS as _TRUE
from .scenario_costs import COST_KEYS, COST_PLACEHOLDER
from .scenario_types import WEEKDAYS
from .sheets import SEPARATORS, Dialect, read_table

__all__ = ["Layout", "find_layout", "starter_scenario", "write_scenario"]

_DATE_SHAPE = re.compile(r"^\s*\d{1,4}[-/.]\d{1,2}[-/.]\d{1,4}")


@dataclass(frozen=True)
class Layout:
    """What :func:`find_layout` found in a history file."""

    path: Path
    dialect: Dialect
    n_rows: int
    columns: tuple[str, ...]
    date_column: str
    date_format: str | None  # ISO, a strftime format, or None when the file leaves it in doubt
    date_doubt: str = ""  # the reason, with two rows, when date_format is None
    probability_columns: tuple[str, ...] = ()
    outcome_column: str | None = None
    value_column: str | None = None
    value_median: float | None = None
    site_column: str | None = None
    months: tuple[int, ...] = ()
    weekdays: tuple[str, ...] = ()
    rare_weekdays: tuple[str, ...] = ()
    start: str = ""
    end: str = ""
    frequency: str = ""  # history.Frequency.describe() of the dates: "daily", "weekly", ...
    event_rate: float | None = None
    notes: tuple[str, ...] = field(default=())


class _Rows:
    """Row numbers as a spreadsheet counts them, for messages about the cells of one column that
    are filled in (``index``: their positions in the file)."""

    def __init__(self, label: str, first_row: int, index: pd.Index):
        self.label, self.first_row, self.index = label, first_row, index

    def row(self, position: int) -> int:
        return int(self.index[position]) + self.first_row

    def error(self, index: int, column: str, message: str) -> InputError:
        return InputError(f'{self.label} row {self.row(index)}, column "{column}": {message}')


def _numbers(values: pd.Series) -> np.ndarray | None:
    """The column as float64 when every cell is a number, else None."""
    numbers = pd.to_numeric(values.str.strip(), errors="coerce").to_numpy(dtype=float)
    return None if np.isnan(numbers).any() else numbers


def _is_outcome(values: pd.Series) -> bool:
    text = set(values.str.strip().str.lower().unique())
    numbers = _numbers(values)
    if numbers is not None:
        return set(np.unique(numbers)) == {0.0, 1.0}
    return len(text) == 2 and bool(text & _TRUE) and bool(text & _FALSE)


def find_layout(path: Path) -> Layout:
    """Read ``path`` with every dialect setting found from the file, and find its columns' roles."""
    table = read_table(path)
    frame, label = table.frame, str(path)
    if len(frame) == 0:
        raise InputError(f"{label}: has a header but no rows; add one row per forecast occasion")
    if table.dialect.kind == "parquet":  # Parquet keeps types: look at it as text, like the others
        frame = frame.apply(lambda c: c.dt.strftime("%Y-%m-%d") if pd.api.types.is_datetime64_any_dtype(c)
                            else c.astype(str))
    frame.columns = [str(c) for c in frame.columns]
    # a column is looked at in its filled-in cells (the newest forecast may have no outcome yet;
    # check names such rows); one mostly blank has no role
    filled = {}
    for name in frame.columns:
        given = frame[name].str.strip().ne("")
        if given.mean() >= 0.5:
            filled[name] = frame[name][given]

    date_column, date_format, doubt = None, None, ""
    for name, values in filled.items():
        if not values.str.match(_DATE_SHAPE).all():
            continue
        try:
            date_format = find_date_format(values)
        except DateProblem as problem:
            if not problem.rows:  # not an ambiguity: not a date column
                continue
            doubt = problem.worded(_Rows(label, table.first_row, values.index).row)
        date_column = name
        break
    if date_column is None:
        raise InputError(f"{label}: no column holds a date on every row (as YYYY-MM-DD, DD.MM.YYYY or "
                         "MM/DD/YYYY); add one, one row per forecast occasion")

    numeric = {name: _numbers(values) for name, values in filled.items() if name != date_column}
    numeric = {name: v for name, v in numeric.items() if v is not None}
    outcomes = [name for name, values in filled.items() if name != date_column and _is_outcome(values)]
    probabilities = [name for name, v in numeric.items()
                     if name not in outcomes and v.min() >= 0 and v.max() <= 1]
    if not probabilities:
        raise InputError(f"{label}: no column holds probabilities from 0 to 1 on every row (columns: "
                         + ", ".join(f'"{c}"' for c in frame.columns[:10])
                         + "); a column of percentages must be divided by 100")
    outcome = outcomes[0] if outcomes else None
    value = median = None
    if outcome is None:
        others = [n for n in numeric if n not in probabilities]
        if not others:
            raise InputError(f"{label}: no column holds the outcome (1/0, yes/no, true/false) or a measured "
                             "value to put a threshold on; add the observed outcome of each occasion")
        value = others[0]
        median = float(np.median(numeric[value]))

    notes: list[str] = []
    dates = None
    if date_format is not None:
        on = filled[date_column]
        dates = parse_dates(on, None if date_format == ISO else date_format, _Rows(label, table.first_row, on.index),
                            date_column)
    site = None
    if dates is not None and np.unique(dates).size < dates.size:
        used = {date_column, outcome, value, *probabilities}
        for name, values in filled.items():
            if name in used or name in numeric:
                continue
            pairs = pd.DataFrame({"site": values.str.strip(), "date": pd.Series(dates, index=on.index)}).dropna()
            if not pairs.duplicated().any() and values.nunique() < len(values):
                site = name
                break
        if site is None:
            notes.append('some dates appear on more than one row and no column tells the rows apart; if the '
                         'file holds many sites, set [history] site_column')
    months: tuple[int, ...] = ()
    weekdays: tuple[str, ...] = ()
    rare: tuple[str, ...] = ()
    start = end = every = ""
    if dates is not None:
        stamps = pd.DatetimeIndex(dates)
        months = tuple(int(m) for m in np.unique(stamps.month))
        frequency = history_frequency(np.unique(dates))  # the same rule the run uses
        every = frequency.describe()
        if frequency.is_daily:  # weekdays apply to daily histories only
            weekdays = tuple(WEEKDAYS[d] for d in frequency.weekdays)
            present = np.unique(stamps.day_of_week)
            rare = tuple(WEEKDAYS[d] for d in present if d not in frequency.weekdays)
        start, end = str(dates.min()), str(dates.max())
    event_rate = None
    if outcome is not None:
        text = filled[outcome].str.strip().str.lower()
        event_rate = float((text.isin(_TRUE) | (pd.to_numeric(text, errors="coerce") == 1)).mean())
    return Layout(path=path, dialect=table.dialect, n_rows=len(frame), columns=tuple(frame.columns),
                  date_column=date_column, date_format=date_format, date_doubt=doubt,
                  probability_columns=tuple(probabilities), outcome_column=outcome, value_column=value,
                  value_median=median, site_column=site, months=months, weekdays=weekdays,
                  rare_weekdays=rare, start=start, end=end, frequency=every, event_rate=event_rate,
                  notes=tuple(notes))


# ------------------------------------------------------------------------------------------------
# the scenario text


def _s(text: str) -> str:
    """A TOML basic string (JSON's escapes are TOML's)."""
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")  # TOML refuses a raw DEL


def _plain(text: str) -> str:
    """User text fit for a TOML comment: control characters shown escaped, at most 60 characters."""
    shown = "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode() for ch in text)
    return shown[:60] + ("..." if len(shown) > 60 else "")


def starter_scenario(layout: Layout, scenario_path: Path) -> str:
    """The commented TOML of a starter scenario for ``layout``, to be written at ``scenario_path``."""
    d = layout.dialect
    rel = Path(os.path.relpath(layout.path.resolve(), scenario_path.resolve().parent)).as_posix()
    if rel.startswith("../.."):  # far from the scenario: the full path reads better
        rel = layout.path.resolve().as_posix()
    lines = [
        f"# Starter scenario written by gonogo init from {_plain(layout.path.name)}.",
        "# Each key says what init found in the file (\"found\") or the choice it made (\"CHOSEN\"):",
        "# read them, change what is not right, and fill in the four costs in [costs]. Then:",
        f"#   gonogo check {_plain(str(layout.path))} --scenario {_plain(str(scenario_path))}",
        f"#   gonogo run {_plain(str(scenario_path))}",
        "# A cost-optimal cutoff is a budget figure: it never overrides safety rules, site risk",
        "# assessments, local regulations or licensed professional judgement.",
        "",
        f"name = {_s(scenario_path.stem)}  # CHOSEN: the scenario file's name; it titles the report",
        'currency = "EUR"  # CHOSEN: the currency of every cost below; write yours',
        "",
        "[history]",
        f"path = {_s(rel)}  # found: {layout.n_rows:,} rows, {layout.start} to {layout.end}; a relative path starts from this file's folder",
    ]
    if d.kind == "csv":
        lines += [f"separator = {_s(d.separator)}  # found: {SEPARATORS[d.separator]}-separated",
                  f"decimal = {_s(d.decimal)}  # found: decimal {'comma' if d.decimal == ',' else 'point'}",
                  f"encoding = {_s(d.encoding)}  # found"]
    elif d.kind == "xlsx":
        lines.append(f"sheet = {_s(d.sheet)}  # CHOSEN: the workbook's first sheet")
    lines.append(f"date_column = {_s(layout.date_column)}  # found: a date on every row")
    if layout.date_format is None:
        day_first, month_first = re.findall(r'"(%[^"]+)"', layout.date_doubt)[-2:]
        lines += [f"# The dates read both ways ({_plain(layout.date_doubt.split(';')[0])}).",
                  "# Keep the line that is right (remove the # before it):",
                  f"# date_format = {_s(day_first)}  # day-first ({human_format(day_first)})",
                  f"# date_format = {_s(month_first)}  # month-first ({human_format(month_first)})"]
    elif layout.date_format != ISO:
        lines.append(f"date_format = {_s(layout.date_format)}  # found: {human_format(layout.date_format)}")
    others = layout.probability_columns[1:]
    more = ("; other columns of probabilities: " + ", ".join(_plain(c) for c in others)) if others else ""
    lines.append(f"probability_column = {_s(layout.probability_columns[0])}  # found: numbers from 0 to 1{more}")
    if layout.outcome_column is not None:
        lines.append(f"outcome_column = {_s(layout.outcome_column)}  # found: two values, the event on "
                     f"{layout.event_rate:.1%} of rows")
        event = layout.outcome_column
    else:
        lines += [f"value_column = {_s(layout.value_column)}  # found: a measured value (no 1/0 outcome column)",
                  f"threshold = {layout.value_median:.6g}  # CHOSEN: the column's median; set the level that "
                  "makes the event",
                  'side = "above"  # CHOSEN: the event is the value reaching the threshold; "below" for under it']
        event = f"{layout.value_column} at or above the threshold"
    if layout.site_column is not None:
        lines.append(f"site_column = {_s(layout.site_column)}  # found: names the site of each row")
    for note in layout.notes:
        lines.append(f"# note: {note}")
    lines += [
        "",
        "[event]",
        f"name = {_s(event)}  # CHOSEN: the class the probability is of, in your words",
        "flip = false  # true when the file's probability and outcome are of the other class (P(dry), outcome wet)",
        "hazard = false  # true when the event endangers people (storms, flooding, ice, heat)",
        "",
        "[decision]",
        'action = "act"  # CHOSEN: what is done when the probability reaches the cutoff; say it in your words',
        "cutoffs = [0.0, 1.0, 0.01]  # from, to, step",
        "",
        "[costs]",
        "# Money per occasion, in the currency above, for each of the four outcomes; negative = income.",
        "# init never guesses money: gonogo check and run refuse this file until all four are numbers.",
        "# A cost known only roughly may be a range, drawn for each simulated season:",
        "#   miss = {low = 2000, likely = 2500, high = 4000}",
    ]
    meaning = {"hit": "acted, and the event happened", "false_alarm": "acted, and it did not happen",
               "miss": "did not act, and it happened", "correct_negative": "did not act, and it did not happen"}
    lines += [f"{key} = {_s(COST_PLACEHOLDER)}  # {meaning[key]}" for key in COST_KEYS]
    lines += ["", "[season]"]
    if layout.months:
        lines.append(f"months = {list(layout.months)}  # found: the months with rows")
        if layout.weekdays:
            rare = (f"; left out, with few rows: {', '.join(layout.rare_weekdays)}" if layout.rare_weekdays else "")
            lines.append(f"weekdays = {json.dumps(list(layout.weekdays))}  # found: the weekdays with rows{rare}")
        else:
            lines.append(f"# weekdays: not for this history, which has a row {layout.frequency} (found)")
    else:
        lines.append("# months and weekdays: set them once the dates read one way (default: all)")
    return "\n".join(lines) + "\n"


def write_scenario(path: Path, text: str) -> None:
    """Write the scenario to a temporary name beside ``path``, then rename it: never half a file."""
    temporary = path.with_name(f".{path.name}.tmp-{os.getpid()}")
    try:
        temporary.write_text(text, encoding="utf-8")
        os.replace(temporary, path)
    except OSError as exc:
        temporary.unlink(missing_ok=True)
        raise InputError(f"{path}: cannot be written ({exc.strerror or exc}); choose another place") from None
