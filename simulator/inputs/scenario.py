"""The scenario file: TOML read with the standard library, validated with pydantic.

One schema, :class:`Scenario`, is the single source of truth for every key a user can write. Unknown
keys are errors that name the key and the closest valid one; a cost matrix under which one action is
always best produces a warning (returned, never printed: ``cli.py`` prints).

Every number key has a range and every string a length limit in the schema, and NaN and infinity are
refused everywhere, so that nonsense is refused in one line before any work starts. A message says
what values are allowed; it is made from the schema itself (:func:`_allowed`), so the schema stays the
one place that says it. The limits are the project's own choice (no published source): wide enough
that a practitioner never meets them in earnest (money within 1e12 per occasion, factors up to 1000,
years 1900 to 2200), and listed in the README's key table.
"""

from __future__ import annotations

import codecs
import hashlib
import re
import tomllib
import types
import typing
from datetime import date, datetime, time
from pathlib import Path
from typing import Annotated, Any, Literal

import numpy as np
from pydantic import (BaseModel, ConfigDict, Field, ValidationError, create_model, field_validator,
                      model_validator)

from ..notation import decimals
from .errors import InputError, did_you_mean, excerpt, printable, quoted, read_input_file
from .ranges import CostRange, site_ranges, split_ranges

__all__ = ["Scenario", "Costs", "read_scenario", "scenario_from_text", "cutoff_grid",
           "break_even_probability", "cost_warnings", "WEEKDAYS", "BASELINES", "COST_KEYS", "COST_PLACEHOLDER",
           "OperationsSection", "StressCase", "CostChanges", "OperationsChanges", "STRESS_CHANGES",
           "SiteSection", "SiteOperations", "CostFactors", "OperationsFactors", "MAX_MONEY",
           "MAX_FACTOR", "MAX_TEXT", "MAX_SCENARIO_BYTES", "YEARS", "MAX_SEASON_COSTS", "check_workload",
           "CostRange"]

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
COST_KEYS = ("hit", "false_alarm", "miss", "correct_negative")
COST_PLACEHOLDER = "fill in"
"""What ``gonogo init`` writes for each cost: text, so that the schema refuses it until replaced."""
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
    # how the file is written; each found from the file when not given (simulator.sheets)
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


class Costs(_Section):
    """Per-occasion cost of each cell of the classification matrix, in the scenario's currency."""

    hit: Money
    false_alarm: Money
    miss: Money
    correct_negative: Money = 0.0

    @model_validator(mode="before")
    @classmethod
    def _filled_in(cls, data):
        if isinstance(data, dict) and COST_PLACEHOLDER in data.values():
            blank = [k for k, v in data.items() if v == COST_PLACEHOLDER]
            raise ValueError(f"fill in the four costs ({', '.join(COST_KEYS)}: money per occasion in the "
                             f"scenario's currency, negative for income); {', '.join(blank)} "
                             f"{'is' if len(blank) == 1 else 'are'} not a number yet")
        return data

    def as_array(self) -> np.ndarray:
        """(hit, false_alarm, miss, correct_negative) as float64."""
        return np.array([self.hit, self.false_alarm, self.miss, self.correct_negative], dtype=float)


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


class OperationsSection(_Section):
    """Operating rules: crews, the work and its deadline, overtime, retention, a safety stop.

    Money is in the scenario's currency; a crew-day is one crew's work for one day. Every key is
    described in ``scenarios/line_marking_rules.toml``; the rules are played by
    :mod:`simulator.operations` (the event-level statement) and :mod:`simulator.operations_fast`.
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


class _Changes(_Section):
    def given(self) -> dict[str, float]:
        """The keys given, with their values."""
        return {k: v for k, v in self.model_dump().items() if v is not None}


class CostChanges(_Changes):
    """Cost keys a stress case replaces; unset keys stay as in [costs]."""

    hit: Money | None = None
    false_alarm: Money | None = None
    miss: Money | None = None
    correct_negative: Money | None = None


class OperationsChanges(_Changes):
    """Operating-rule prices (and the amount of work) a stress case replaces."""

    day_rate: Price | None = None
    standby_rate: Price | None = None
    spoilage_cost: Price | None = None
    damages_per_day_late: Price | None = None
    unfinished_cost: Price | None = None
    overtime_multiple: Annotated[float, Field(ge=1, le=100)] | None = None
    work: Work | None = None


def _factors(changes: type[_Changes]) -> type[_Changes]:
    """The multipliers of the keys of ``changes``: each a factor from 0 to :data:`MAX_FACTOR`."""
    name = changes.__name__.replace("Changes", "Factors")
    return create_model(name, __base__=_Changes, __doc__=f"Factors for the keys of {changes.__name__}.",
                        **{key: (Factor | None, None) for key in changes.model_fields})


CostFactors = _factors(CostChanges)
OperationsFactors = _factors(OperationsChanges)


STRESS_CHANGES = ("event_rate", "costs", "cost_multipliers", "operations", "operations_multipliers",
                  "skill", "noise", "block_days", "worst_seasons")


class StressCase(_Section):
    """One ``[[stress]]`` table: a named change to the world the season is priced in."""

    name: Name
    event_rate: Annotated[float, Field(gt=0, le=MAX_FACTOR)] | None = None
    costs: CostChanges | None = None
    cost_multipliers: CostFactors | None = None  # type: ignore[valid-type]
    operations: OperationsChanges | None = None
    operations_multipliers: OperationsFactors | None = None  # type: ignore[valid-type]
    skill: Annotated[float, Field(ge=0, le=1)] | None = None
    noise: Annotated[float, Field(ge=0, le=10)] | None = None  # sd on the log-odds scale
    block_days: Days | None = None
    worst_seasons: Annotated[int, Field(ge=1, le=1000)] | None = None

    @model_validator(mode="after")
    def _changes_something(self):
        if all(getattr(self, key) is None for key in STRESS_CHANGES):
            raise ValueError("a stress case needs at least one change: " + ", ".join(STRESS_CHANGES))
        new = self.costs.given() if self.costs else {}
        factors = self.cost_multipliers.given() if self.cost_multipliers else {}
        both = sorted(set(new) & set(factors))
        if both:
            raise ValueError(f'"{both[0]}" has both a new value (costs) and a multiplier '
                             "(cost_multipliers); keep one")
        new = self.operations.given() if self.operations else {}
        factors = self.operations_multipliers.given() if self.operations_multipliers else {}
        both = sorted(set(new) & set(factors))
        if both:
            raise ValueError(f'"{both[0]}" has both a new value (operations) and a multiplier '
                             "(operations_multipliers); keep one")
        return self

    def changed_operations(self, base: "OperationsSection") -> "OperationsSection":
        """``base`` with this case's new operating-rule prices and multipliers applied."""
        values = {}
        values.update(self.operations.given() if self.operations else {})
        for key, factor in (self.operations_multipliers.given() if self.operations_multipliers else {}).items():
            current = getattr(base, key)
            if current is None and key == "standby_rate":
                current = base.day_rate
            if current is not None:
                values[key] = current * factor
        return base.model_copy(update=values)

    def changed_costs(self, base: Costs) -> Costs:
        """``base`` with this case's new values and multipliers applied."""
        values = base.model_dump()
        values.update(self.costs.given() if self.costs else {})
        for key, factor in (self.cost_multipliers.given() if self.cost_multipliers else {}).items():
            values[key] = values[key] * factor
        return Costs.model_construct(**values)  # a factor may take a cost past MAX_MONEY: still finite


SiteOperations = create_model(
    "SiteOperations", __base__=_Section, __doc__="Keys of [operations] a site replaces; unset keys "
    "stay as in the scenario's [operations] (the merged rules are checked as a whole).",
    **{key: (typing.Optional[field.rebuild_annotation()], None)
       for key, field in OperationsSection.model_fields.items()})


class SiteSection(_Section):
    """One ``[sites."<name>"]`` table: the costs and operating rules of one site that differ from
    the scenario's. Each given key replaces the scenario's value for that site only; the merged
    section is checked as a whole (:meth:`Scenario.for_site`)."""

    costs: CostChanges | None = None
    operations: SiteOperations | None = None  # type: ignore[valid-type]


class Scenario(_Section):
    name: Name
    currency: Annotated[str, Field(max_length=MAX_CURRENCY)] = "EUR"
    history: HistorySection = HistorySection()
    event: EventSection = EventSection()
    decision: DecisionSection = DecisionSection()
    costs: Costs
    season: SeasonSection = SeasonSection()
    simulation: SimulationSection = SimulationSection()
    stress: Annotated[list[StressCase], Field(max_length=100, description="at most 100 [[stress]] tables")] = []
    operations: OperationsSection | None = None
    # per-site overrides, keyed by the site's name as the history's site column writes it
    sites: dict[Name, SiteSection] = {}
    # several forecasts of the same event: display name -> probability column, in the order to show
    # them; the first is the main forecast (it becomes [history] probability_column)
    forecasts: Annotated[dict[Name, Name], Field(max_length=MAX_FORECASTS,
                                                 description=f"at most {MAX_FORECASTS} forecasts")] = {}
    # where the file was read from (not a user key): history paths are relative to it
    source: Path | None = Field(default=None, exclude=True)
    sha256: str = Field(default="", exclude=True)
    # the costs written as ranges, by dotted key (not a user key: read by inputs/ranges.py, which
    # puts each range's PERT mean in the cost's place)
    ranges: dict[str, CostRange] = Field(default={}, exclude=True)

    def cost_ranges(self) -> dict[str, CostRange]:
        """The costs written as ranges, by dotted key: ``costs.miss``, ``sites.<site>.costs.miss``
        (a site's own scenario, :meth:`for_site`, has its ranges as ``costs.*``)."""
        return dict(self.ranges)

    @property
    def cutoffs(self) -> np.ndarray:
        return cutoff_grid(*self.decision.cutoffs)

    @property
    def slug(self) -> str:
        safe = "".join(ch.lower() if ch.isalnum() else "-" for ch in self.name)
        return "-".join(part for part in safe.split("-") if part) or "scenario"

    @model_validator(mode="before")
    @classmethod
    def _main_forecast_column(cls, data: Any) -> Any:
        """``[forecasts]`` replaces ``[history] probability_column``: its first column becomes it."""
        if not isinstance(data, dict) or not isinstance(data.get("forecasts"), dict) or not data["forecasts"]:
            return data
        history = data.get("history", {})
        given = (history.model_fields_set if isinstance(history, HistorySection)
                 else set(history) if isinstance(history, dict) else set())
        if "probability_column" in given:
            raise ValueError("[forecasts] replaces [history] probability_column; list the main forecast "
                             "first under [forecasts] and remove probability_column")
        first = next(iter(data["forecasts"].values()))
        if isinstance(history, HistorySection):
            history = history.model_dump(exclude_unset=True)
        if isinstance(history, dict) and isinstance(first, str):
            data = {**data, "history": {**history, "probability_column": first}}
        return data

    @field_validator("forecasts")
    @classmethod
    def _forecast_names(cls, value: dict[str, str]) -> dict[str, str]:
        for name, column in value.items():
            if not name.strip() or not column.strip():
                raise ValueError('each forecast needs a name and a column, as "our model" = "p_ours"')
        return value

    @property
    def forecast_columns(self) -> tuple[tuple[str, str], ...]:
        """(display name, probability column) of every forecast, the main one first: the
        ``[forecasts]`` table, or the one ``[history] probability_column`` (named "forecast")."""
        if self.forecasts:
            return tuple(self.forecasts.items())
        return (("forecast", self.history.probability_column),)

    @model_validator(mode="after")
    def _stress_names_differ(self):
        names = [case.name for case in self.stress]
        twice = sorted({n for n in names if names.count(n) > 1})
        if twice:
            raise ValueError(f'two [[stress]] tables are named "{twice[0]}"; give each its own name')
        return self

    def for_site(self, name: str) -> "Scenario":
        """This scenario as it applies to site ``name``: its ``[sites."<name>"]`` costs and
        operations merged over the scenario's (the scenario itself when the site has none).

        Raises pydantic's ``ValidationError`` when the merged section is invalid; files read with
        :func:`read_scenario` were checked for every site already.
        """
        override = self.sites.get(name)
        if override is None:
            return self
        update: dict[str, Any] = {"sites": {}, "ranges": site_ranges(
            self.ranges, name, set(override.costs.given()) if override.costs is not None else set())}
        if override.costs is not None:
            update["costs"] = Costs(**{**self.costs.model_dump(), **override.costs.given()})
        if override.operations is not None:
            given = override.operations.model_dump(exclude_unset=True)
            base = self.operations.model_dump(exclude_unset=True) if self.operations is not None else {}
            update["operations"] = OperationsSection.model_validate({**base, **given})
        return self.model_copy(update=update)

    def history_path(self) -> Path | None:
        if self.history.path is None:
            return None
        path = Path(self.history.path)
        if not path.is_absolute() and self.source is not None:
            path = self.source.parent / path
        return path


def cutoff_grid(lo: float, hi: float, step: float) -> np.ndarray:
    """Cutoffs from ``lo`` to ``hi`` by ``step``, both ends included, each the float nearest its
    decimal (:func:`simulator.decimals.grid`)."""
    return decimals.grid(lo, hi, step)


def check_workload(replicates: int, n_cutoffs: int, where: str, n_forecasts: int = 1) -> None:
    """Refuse, before any work, a run whose tables of season costs (replicates x cutoffs, one per
    forecast) would pass :data:`MAX_SEASON_COSTS`; ``where`` names the key or option that set the
    replicates."""
    n_forecasts = max(1, n_forecasts)
    total = replicates * n_cutoffs * n_forecasts
    if total > MAX_SEASON_COSTS:
        each = f" x {n_forecasts} forecasts" if n_forecasts > 1 else ""
        raise InputError(f"{where}: {replicates:,} replicate seasons x {n_cutoffs:,} cutoffs{each} is "
                         f"{total:,} season costs, more than the {MAX_SEASON_COSTS:,} a run may hold; use "
                         f"at most {MAX_SEASON_COSTS // (n_cutoffs * n_forecasts):,} replicates, or a coarser "
                         "cutoff step")


def break_even_probability(costs: Costs) -> float:
    """Probability at which acting and not acting have the same expected cost.

    p* = (false_alarm - correct_negative) / ((false_alarm - correct_negative) + (miss - hit)): the
    cost-loss ratio C/L of Thompson (1952) and Murphy (1977) for a general 2x2 matrix (Elkan 2001,
    "The foundations of cost-sensitive learning", IJCAI). NaN when one action is always best.
    """
    c_prime = costs.false_alarm - costs.correct_negative
    d_prime = costs.miss - costs.hit
    if c_prime <= 0 or d_prime <= 0:
        return float("nan")
    return c_prime / (c_prime + d_prime)


def cost_warnings(costs: Costs, action: str) -> list[str]:
    """Warnings for a cost matrix under which one action is best whatever happens (Elkan 2001)."""
    c_prime = costs.false_alarm - costs.correct_negative
    d_prime = costs.miss - costs.hit
    if c_prime <= 0 and d_prime <= 0:
        return ["[costs]: acting costs no more than not acting when the event fails to happen, and not "
                "acting costs no more when it happens; check the signs of the costs"]
    if c_prime <= 0:
        return [f'[costs]: "{action}" is always at least as cheap (false_alarm <= correct_negative and '
                "hit <= miss), so every cutoff below the lowest forecast is best; check the costs"]
    if d_prime <= 0:
        return ["[costs]: not acting is always at least as cheap (miss <= hit and correct_negative <= "
                "false_alarm), so the best rule never acts; check the costs"]
    return []


# ------------------------------------------------------------------------------------------------
# reading

def read_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario file; every problem becomes a one-line :class:`InputError`.

    A file larger than :data:`MAX_SCENARIO_BYTES` is refused before it is read.
    """
    path = Path(path)
    if path.is_file() and path.stat().st_size > MAX_SCENARIO_BYTES:
        raise InputError(f"{path}: the file is {path.stat().st_size:,} bytes, more than the "
                         f"{MAX_SCENARIO_BYTES:,} bytes a scenario file may have; give the scenario's "
                         ".toml file (the history goes in its own file, named by [history] path)")
    raw = read_input_file(path, "scenario", "the scenario's .toml file")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(f"{path}: is not a text file; give a TOML scenario file") from None
    scenario = scenario_from_text(text, label=str(path))
    return scenario.model_copy(update={"source": path.absolute(),
                                       "sha256": hashlib.sha256(raw).hexdigest()})


def scenario_from_text(text: str, label: str = "scenario") -> Scenario:
    """Validate scenario TOML text; ``label`` names the file in messages."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{label}: not valid TOML ({printable(str(exc))[:120]}); check the syntax "
                         "near that line") from None
    except RecursionError:
        raise InputError(f"{label}: not valid TOML (nested too deeply); check the file") from None
    data, ranges = split_ranges(data, label, MAX_MONEY)
    try:
        scenario = Scenario.model_validate(data)
    except ValidationError as exc:
        raise InputError(_first_problem(exc, label)) from None
    if ranges:
        scenario = scenario.model_copy(update={"ranges": ranges})
    _check_sites(scenario, label)
    check_workload(scenario.simulation.replicates, len(scenario.cutoffs), f"{label} [simulation] replicates",
                   len(scenario.forecasts))
    return scenario


def _check_sites(scenario: Scenario, label: str) -> None:
    """Every ``[sites."<name>"]`` table merged over the scenario must make a valid section."""
    if scenario.sites and scenario.history.site_column is None:
        first = next(iter(scenario.sites))
        raise InputError(f"{label} [sites.{quoted(first)}]: per-site tables need a site column; add "
                         'site_column = "<column naming each row\'s site>" to [history]')
    for name in scenario.sites:
        try:
            scenario.for_site(name)
        except ValidationError as exc:
            err = exc.errors(include_url=False)[0]
            section, model = ("costs", Costs) if exc.title == "Costs" else ("operations", OperationsSection)
            field, depth = _field_at(model, [str(p) for p in err["loc"]])
            key = ".".join(str(p) for p in err["loc"][:depth])
            where = f"{label} [sites.{quoted(name)}.{section}]"
            if err["type"] == "missing" and len(err["loc"]) == depth:
                raise InputError(f"{where}: {key} is required and [{section}] does not give it; add it "
                                 f"here or to [{section}]") from None
            raise InputError(f"{where}{' ' + key if key else ''}: {_what_is_wrong(err, field)}") from None


def _first_problem(exc: ValidationError, label: str) -> str:
    errors = exc.errors(include_url=False)
    # a misspelt key also makes its correct spelling "missing": report the misspelling first
    err = min(errors, key=lambda e: e["type"] != "extra_forbidden")
    loc = [str(part) for part in err["loc"]]
    kind = err["type"]
    if kind == "extra_forbidden":
        key = loc[-1]
        model = _model_at(loc[:-1])
        where = f"[{_table(loc[:-1])}]" if len(loc) > 1 else "top level"
        if loc[0] == "stress" and len(loc) > 2:
            where = f"[[stress]] table {int(loc[1]) + 1}" + (f" {'.'.join(loc[2:-1])}" if len(loc) > 3 else "")
        valid = [k for k in model.model_fields if k not in ("source", "sha256", "ranges")]
        return f"{label} {where}: unknown key {quoted(key)}{did_you_mean(key, valid)}"
    field, depth = _field_at(Scenario, loc)
    inside = len(loc) > depth  # the problem is inside the key's value (a list entry, a dict's key)
    loc = loc[:depth]
    section = [p for p in loc if not p.isdigit()]
    if section and section[0] == "stress" and len(loc) > 1 and loc[1].isdigit():
        where = f"[[stress]] table {int(loc[1]) + 1}" + (f" {'.'.join(loc[2:])}" if len(loc) > 2 else "")
    elif loc and loc[0] == "sites" and len(loc) > 1:
        where = f"[{_table(loc[:3])}]" + (f" {'.'.join(loc[3:])}" if len(loc) > 3 else "")
    elif not section:
        where = "top level"
    elif section[0] in _SECTIONS:
        where = f"[{section[0]}]" + (f" {'.'.join(section[1:])}" if len(section) > 1 else "")
    else:
        where = f'"{section[0]}"'  # a top-level key such as name
    if kind == "missing" and not inside:
        return f"{label} {where}: this key is required; add it"
    if loc[:1] == ["sites"] and len(loc) == 2 and inside:  # a site's name: a [sites."<name>"] key
        return f"{label} [sites]: a site's name must be text of at most {MAX_TEXT} characters"
    return f"{label} {where}: {_what_is_wrong(err, field)}"


def _what_is_wrong(err: dict, field: Any) -> str:
    """The message for one pydantic error at ``field``: our own validators' words as they are; for
    a value of the wrong type or out of range, what values the schema allows, then what was given."""
    kind = err["type"]
    if kind == "value_error" or field is None:
        message = err["msg"].removeprefix("Value error, ")
    else:
        allowed = _allowed(field)
        message = f"must be {allowed}" if allowed else err["msg"]
    value = err.get("input")
    if kind != "missing" and value is not None and not isinstance(value, dict | list | tuple):
        message += f" (got {excerpt(value)})"
    return message


_SECTIONS = ("history", "event", "decision", "costs", "season", "simulation", "operations", "stress",
             "sites", "forecasts")


def _table(loc: list[str]) -> str:
    """A table's name as TOML writes it: ``sites."North depot".costs``."""
    return ".".join(quoted(part) if i == 1 and loc[0] == "sites" else part for i, part in enumerate(loc))


def _submodel(annotation: Any) -> type[BaseModel] | None:
    """The model an annotation holds: the model itself, X | None, list[X] or dict[str, X]."""
    for member in (annotation, *typing.get_args(annotation)):
        if isinstance(member, type) and issubclass(member, BaseModel):
            return member
    return None


def _model_at(loc: list[str]) -> type[BaseModel]:
    model: Any = Scenario
    for i, part in enumerate(loc):
        if part.isdigit() or (i == 1 and loc[0] == "sites"):  # a list entry, or a site's name
            continue
        field = model.model_fields.get(part)
        if field is None:
            break
        model = _submodel(field.annotation) or model
    return model


def _field_at(root: type[BaseModel], loc: list[str]) -> tuple[Any, int]:
    """The deepest schema field that ``loc`` (a pydantic error's location) names, and how many of
    ``loc``'s parts lead to it (what follows is inside the field's value: a list entry, a union's
    member). ``(None, 0)`` when ``loc`` names no field."""
    model: Any = root
    found, depth = None, 0
    for i, part in enumerate(loc):
        if model is None:
            break
        if part.isdigit() or (i == 1 and loc[0] == "sites" and root is Scenario):
            depth = i + 1  # a [[stress]] table, or a site's table: part of the place
            continue
        field = model.model_fields.get(part)
        if field is None:
            break
        found, depth = field, i + 1
        model = _submodel(field.annotation)
    return found, depth


def _allowed(field: Any) -> str | None:
    """What values a schema field allows, in words, from its type and constraints (or its
    ``description``, for fields whose rule is more than a type and a range)."""
    if field.description:
        return field.description
    return _describe(field.annotation, field.metadata)


def _describe(annotation: Any, metadata: list) -> str | None:
    origin = typing.get_origin(annotation)
    if origin is Annotated:
        base, *extras = typing.get_args(annotation)
        said = next((extra.description for extra in extras if getattr(extra, "description", None)), None)
        if said:
            return said
        inner = [m for extra in extras for m in getattr(extra, "metadata", [extra])]
        return _describe(base, [*metadata, *inner])
    if origin in (typing.Union, types.UnionType):
        parts = [_describe(member, metadata) for member in typing.get_args(annotation) if member is not type(None)]
        return " or ".join(p for p in parts if p) or None
    if origin is Literal:
        values = [f'"{v}"' for v in typing.get_args(annotation)]
        return values[0] if len(values) == 1 else "one of " + ", ".join(values)
    if annotation is bool:
        return "true or false"
    if annotation is date:
        return "a date written YYYY-MM-DD"
    if annotation is str:
        longest = next((m.max_length for m in metadata if getattr(m, "max_length", None)), None)
        return "text" + (f" of at most {longest:,} characters" if longest else "")
    if annotation in (int, float):
        what = "a whole number" if annotation is int else "a number"
        bound = {k: getattr(m, k) for m in metadata for k in ("ge", "gt", "le", "lt") if getattr(m, k, None) is not None}
        low = (f"from {_number(bound['ge'])}" if "ge" in bound else
               f"above {_number(bound['gt'])}" if "gt" in bound else "")
        high = (f"to {_number(bound['le'])}" if "le" in bound else
                f"below {_number(bound['lt'])}" if "lt" in bound else "")
        if low and high:
            return f"{what} {low} {high}" if low.startswith("from") else f"{what} {low}, at most {high[3:]}"
        return " ".join(part for part in (what, low or ("up " + high if high else "")) if part)
    if origin in (tuple, list):
        item = _describe(typing.get_args(annotation)[0], [])
        longest = next((m.max_length for m in metadata if getattr(m, "max_length", None)), None)
        return ("a list" + (f" of at most {longest:,} entries" if longest else "")
                + (f", each {item}" if item else ""))
    return None


def _number(value: float) -> str:
    """A limit as a person writes it: 366, 0.5, -1e12."""
    if value == int(value) and abs(value) < 1e10:
        return f"{int(value):,}"
    if abs(value) >= 1e6:
        mantissa, exponent = f"{value:.3g}".split("e")
        return f"{mantissa}e{int(exponent)}"
    return f"{value:g}"
