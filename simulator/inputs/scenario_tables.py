"""The plain tables of the scenario schema: ``[history]``, ``[event]``, ``[decision]``, ``[season]``,
``[simulation]`` and ``[operations]``.

Each is a frozen pydantic model that refuses unknown keys; ``[costs]`` is in
:mod:`~simulator.inputs.scenario_costs`, the tables that change others (``[[stress]]``,
``[sites."<name>"]``) in :mod:`~simulator.inputs.scenario_changes`, and the scenario as a whole in
:mod:`~simulator.inputs.scenario`.
"""

from __future__ import annotations

import codecs
import re
from datetime import date
from typing import Annotated, Literal

from pydantic import Field, field_validator, model_validator

from ..notation import decimals
from .errors import quoted
from .scenario_types import (MAX_PATH, MAX_SEASON_DAYS, WEEKDAYS, YEARS, Days, Holidays, Money, Name, Price,
                             WeekdayList, Work, _date_list, _Section, _weekdays)

__all__ = ["PRICE_KEYS", "HistorySection", "EventSection", "DecisionSection", "SeasonSection", "SimulationSection",
           "OperationsSection"]


class HistorySection(_Section):
    path: Annotated[str, Field(max_length=MAX_PATH)] | None = None
    date_column: Name = "date"
    site_column: Name | None = None  # a column naming each row's site; None: one site
    probability_column: Name = "probability"
    outcome_column: Name | None = None
    value_column: Name | None = None
    threshold: Money | None = None
    side: Literal["above", "below"] | None = None
    direction: Literal["up", "down"] | None = None
    validation_from: date | None = None
    # how the file is written; each found from the file when not given (simulator.inputs.sheets)
    sheet: Name | None = None  # an .xlsx workbook's sheet; default the first
    separator: Literal[",", ";", "\t"] | None = None
    decimal: Literal[".", ","] | None = None
    encoding: Annotated[str, Field(max_length=40)] | None = None
    date_format: Annotated[str, Field(max_length=40)] | None = None  # strftime codes, e.g. "%d.%m.%Y"; default ISO or found

    @field_validator("separator", mode="before")
    @classmethod
    def _tab_by_name(cls, value):
        return "\t" if isinstance(value, str) and value.lower() in ("tab", "\\t") else value

    @field_validator("encoding")
    @classmethod
    def _known_encoding(cls, value):
        if value is None:
            return value
        try:
            codecs.lookup(value)
        except LookupError:
            raise ValueError(f'{quoted(value)} is not an encoding Python knows; use for example "utf-8" or '
                             '"cp1252"') from None
        return value

    @field_validator("date_format")
    @classmethod
    def _strftime_codes(cls, value):
        if value is None:
            return value
        codes = set(re.findall(r"%(.)", value))
        if not codes & {"d", "j"} or not codes & {"Y", "y"} or not codes & {"m", "b", "B", "j"}:
            raise ValueError(f'{quoted(value)} needs codes for the day, month and year, for example "%d.%m.%Y" '
                             'or "%m/%d/%Y"')
        return value

    @model_validator(mode="after")
    def _distinct_columns(self):
        roles = [("date_column", self.date_column), ("probability_column", self.probability_column),
                 ("value_column" if self.value_column else "outcome_column", self.outcome_source),
                 ("site_column", self.site_column)]
        seen: dict[str, str] = {}
        for key, column in roles:
            if column is None:
                continue
            if column in seen:
                raise ValueError(f'{seen[column]} and {key} both name column "{column}"; the outcome must '
                                 "come from a column of its own (a forecast judged against itself looks perfect)"
                                 if "probability_column" in (seen[column], key) else
                                 f'{seen[column]} and {key} both name column "{column}"; give each its own column')
            seen[column] = key
        return self
    # a row where one of the [forecasts] has no probability: refuse the file, or leave the row out
    # of the evaluation for every forecast (they are compared on the same occasions)
    missing_forecast: Literal["refuse", "drop_row"] = "refuse"

    @model_validator(mode="after")
    def _one_way_to_the_outcome(self):
        numeric = self.value_column is not None
        if self.outcome_column is not None and numeric:
            raise ValueError("give either outcome_column or value_column, not both")
        if numeric:
            by_threshold = self.threshold is not None or self.side is not None
            if by_threshold and self.direction is not None:
                raise ValueError("value_column takes either threshold and side, or direction, not both")
            if by_threshold and (self.threshold is None or self.side is None):
                raise ValueError('value_column with a threshold needs both threshold and side ("above" or "below")')
            if not by_threshold and self.direction is None:
                raise ValueError('value_column needs threshold and side, or direction ("up" or "down")')
        elif self.threshold is not None or self.side is not None or self.direction is not None:
            raise ValueError("threshold, side and direction go with value_column; add value_column")
        return self

    @property
    def outcome_source(self) -> str:
        """Column the outcome comes from (the default "outcome" when nothing is said)."""
        return self.value_column or self.outcome_column or "outcome"


class EventSection(_Section):
    name: Name = "event"
    flip: bool = False
    hazard: bool = False


class DecisionSection(_Section):
    action: Name = "act"
    cutoffs: Annotated[tuple[float, float, float], Field(
        description="three numbers [from, to, step]: 0 <= from < to <= 1 and a step that divides the "
                    "range into whole steps, e.g. [0.0, 1.0, 0.01]")] = (0.0, 1.0, 0.01)
    # what the cutoff is chosen by: the lowest mean season cost, the lowest 95th percentile, or the
    # lowest mean of the worst 10% of seasons (decision.OBJECTIVES, decision.decide)
    objective: Literal["mean", "p95", "shortfall10"] = "mean"

    @field_validator("cutoffs")
    @classmethod
    def _grid(cls, value):
        lo, hi, step = value
        if not (0.0 <= lo < hi <= 1.0):
            raise ValueError(f"from and to must satisfy 0 <= from < to <= 1, got {lo} and {hi}")
        if step <= 0:
            raise ValueError(f"the step must be positive, got {step}")
        if step > hi - lo:
            raise ValueError(f"the step {step} is wider than the range {lo} to {hi}; use a step of at most "
                             f"{hi - lo:g}, e.g. 0.01")
        n = decimals.whole_steps(lo, hi, step)
        if n is None:
            raise ValueError(f"the step {step} does not divide {lo} to {hi} into whole steps")
        if n + 1 > 10001:
            raise ValueError(f"{n + 1} cutoffs is too many; use a step of at least 0.0001")
        return value


class SeasonSection(_Section):
    """The occasions that make a season: dates of the history's own calendar in ``months``, on
    ``weekdays`` (daily data only) and not among ``holidays`` (dates that are not occasions, such
    as market holidays or closed days; the operating rules then have no working day on them)."""

    months: Annotated[tuple[Annotated[int, Field(ge=1, le=12)], ...], Field(
        max_length=12, description="a list of months, each a whole number from 1 to 12")] = tuple(range(1, 13))
    weekdays: WeekdayList = WEEKDAYS
    holidays: Holidays = ()
    year: Annotated[int, Field(ge=YEARS[0], le=YEARS[1])] | None = None

    @field_validator("months")
    @classmethod
    def _months(cls, value):
        if not value:
            raise ValueError("list at least one month")
        if len(set(value)) != len(value):
            raise ValueError("a month is listed twice")
        return value

    _holidays = field_validator("holidays", mode="before")(_date_list)

    @field_validator("weekdays")
    @classmethod
    def _weekdays(cls, value):
        if not value:
            raise ValueError("list at least one weekday")
        return _weekdays(value)

    @property
    def weekday_numbers(self) -> tuple[int, ...]:
        return tuple(WEEKDAYS.index(w) for w in self.weekdays)


class SimulationSection(_Section):
    replicates: Annotated[int, Field(ge=20, le=10_000_000)] = 5000
    seed: Annotated[int, Field(ge=0, le=2**63 - 1)] = 2027
    block_days: Literal["auto"] | Days = "auto"
    reference: Literal["never_act", "always_act", "persistence", "seasonal_rate"] = "never_act"
    window_days: Annotated[int, Field(ge=0, le=60)] = 10
    mode: Literal["replay", "calibrated"] = "replay"
    walk_forward: bool = False


PRICE_KEYS = ("day_rate", "standby_rate", "spoilage_cost", "damages_per_day_late", "unfinished_cost")
"""The money of the operating rules, as ``[operations]`` names it (each may be written as a range,
:mod:`~simulator.inputs.ranges`); the other keys say how the crews work."""


class OperationsSection(_Section):
    """Operating rules: crews, the work and its deadline, overtime, retention, a safety stop.

    Money is in the scenario's currency; a crew-day is one crew's work for one day. Every key is
    described in ``scenarios/line_marking_rules.toml``; the rules are played by
    :mod:`simulator.rules` (the event-level statement) and :mod:`simulator.rules.vectorised_model`.
    """

    crews: Annotated[int, Field(ge=1, le=1000)] = 1
    crews_out_on: Literal["acting", "not_acting"]
    spoiled_on: Literal["event", "no_event"]
    day_rate: Price
    standby_rate: Price | None = None
    spoilage_cost: Price = 0.0
    work_lost_when_spoiled: Annotated[float, Field(ge=0, le=1)] = 1.0
    work: Work | None = None
    deadline: date | None = None
    damages_per_day_late: Price = 0.0
    unfinished_cost: Price = 0.0
    workdays: WeekdayList | None = None
    holidays: Holidays = ()
    overtime_weekdays: WeekdayList = ()
    overtime_multiple: Annotated[float, Field(ge=1, le=100)] = 1.5
    max_overtime_days_per_week: Annotated[int, Field(ge=1, le=7)] = 1
    max_standby_days: Annotated[int, Field(ge=1, le=MAX_SEASON_DAYS)] | None = None
    safety_stop_at: Annotated[float, Field(gt=0, le=1)] | None = None
    safety_probability: Literal["as_in_file", "of_event"] = "as_in_file"

    _holidays = field_validator("holidays", mode="before")(_date_list)

    @field_validator("workdays", "overtime_weekdays")
    @classmethod
    def _weekday_names(cls, value):
        return value if value is None else _weekdays(value)

    @model_validator(mode="after")
    def _rules_fit_together(self):
        if self.workdays is not None and not self.workdays:
            raise ValueError("workdays lists no weekday; list at least one, or leave it out")
        both = set(self.workdays or ()) & set(self.overtime_weekdays)
        if both:
            raise ValueError(f'"{sorted(both)[0]}" is both a workday and an overtime weekday; keep it in one list')
        if self.work is None:
            needs = [key for key, given in (("deadline", self.deadline is not None),
                                            ("overtime_weekdays", bool(self.overtime_weekdays)),
                                            ("unfinished_cost", self.unfinished_cost > 0)) if given]
            if needs:
                raise ValueError(f"{needs[0]} needs the amount of work; add work = <crew-days>")
        if self.damages_per_day_late > 0 and self.deadline is None:
            raise ValueError("damages_per_day_late needs a deadline; add deadline = YYYY-MM-DD")
        return self

    @property
    def standby_day_rate(self) -> float:
        """Rate per crew on a standby day: ``standby_rate``, else the full ``day_rate``."""
        return self.day_rate if self.standby_rate is None else self.standby_rate
