"""The scenario file: TOML read with the standard library, validated with pydantic.

One schema, :class:`Scenario`, is the single source of truth for every key a user can write. Unknown
keys are errors that name the key and the closest valid one; a cost matrix under which one action is
always best produces a warning (returned, never printed: ``cli.py`` prints).
"""

from __future__ import annotations

import hashlib
import tomllib
import typing
from datetime import date, datetime, time
from pathlib import Path
from typing import Annotated, Any, Literal

import numpy as np
from pydantic import (BaseModel, ConfigDict, Field, ValidationError, create_model, field_validator,
                      model_validator)

from . import decimals
from .errors import InputError, did_you_mean, read_input_file

__all__ = ["Scenario", "Costs", "read_scenario", "scenario_from_text", "cutoff_grid",
           "break_even_probability", "cost_warnings", "WEEKDAYS", "BASELINES",
           "OperationsSection", "StressCase", "CostChanges", "OperationsChanges", "STRESS_CHANGES",
           "SiteSection", "SiteOperations"]

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
BASELINES = ("never_act", "always_act", "persistence", "seasonal_rate", "perfect")


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class HistorySection(_Section):
    path: str | None = None
    date_column: str = "date"
    site_column: str | None = None  # a column naming each row's site; None: one site
    probability_column: str = "probability"
    outcome_column: str | None = None
    value_column: str | None = None
    threshold: float | None = None
    side: Literal["above", "below"] | None = None
    direction: Literal["up", "down"] | None = None
    validation_from: date | None = None

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
    name: str = "event"
    flip: bool = False
    hazard: bool = False


class DecisionSection(_Section):
    action: str = "act"
    cutoffs: tuple[float, float, float] = (0.0, 1.0, 0.01)
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
        n = decimals.whole_steps(lo, hi, step)
        if n is None:
            raise ValueError(f"the step {step} does not divide {lo} to {hi} into whole steps")
        if n + 1 > 10001:
            raise ValueError(f"{n + 1} cutoffs is too many; use a step of at least 0.0001")
        return value


class Costs(_Section):
    """Per-occasion cost of each cell of the classification matrix, in the scenario's currency."""

    hit: float
    false_alarm: float
    miss: float
    correct_negative: float = 0.0

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
            raise ValueError(f"item {i}, {item!r}, is not a date; write dates as YYYY-MM-DD, "
                             "e.g. holidays = [2027-05-03, 2027-08-30]")
        out.append(item)
    return tuple(out)


class SeasonSection(_Section):
    """The occasions that make a season: dates of the history's own calendar in ``months``, on
    ``weekdays`` (daily data only) and not among ``holidays`` (dates that are not occasions, such
    as market holidays or closed days; the operating rules then have no working day on them)."""

    months: tuple[Annotated[int, Field(ge=1, le=12)], ...] = tuple(range(1, 13))
    weekdays: tuple[str, ...] = WEEKDAYS
    holidays: tuple[date, ...] = ()
    year: int | None = None

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
        value = tuple(str(v).lower()[:3] for v in value)
        for v in value:
            if v not in WEEKDAYS:
                raise ValueError(f'"{v}" is not a weekday{did_you_mean(v, WEEKDAYS)}')
        if not value:
            raise ValueError("list at least one weekday")
        return value

    @property
    def weekday_numbers(self) -> tuple[int, ...]:
        return tuple(WEEKDAYS.index(w) for w in self.weekdays)


class SimulationSection(_Section):
    replicates: Annotated[int, Field(ge=20, le=10_000_000)] = 5000
    seed: Annotated[int, Field(ge=0)] = 2027
    block_days: Literal["auto"] | Annotated[float, Field(ge=1)] = "auto"
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
    day_rate: Annotated[float, Field(ge=0)]
    standby_rate: Annotated[float, Field(ge=0)] | None = None
    spoilage_cost: Annotated[float, Field(ge=0)] = 0.0
    work_lost_when_spoiled: Annotated[float, Field(ge=0, le=1)] = 1.0
    work: Annotated[float, Field(gt=0)] | None = None
    deadline: date | None = None
    damages_per_day_late: Annotated[float, Field(ge=0)] = 0.0
    unfinished_cost: Annotated[float, Field(ge=0)] = 0.0
    workdays: tuple[str, ...] | None = None
    holidays: tuple[date, ...] = ()
    overtime_weekdays: tuple[str, ...] = ()
    overtime_multiple: Annotated[float, Field(ge=1)] = 1.5
    max_overtime_days_per_week: Annotated[int, Field(ge=1, le=7)] = 1
    max_standby_days: Annotated[int, Field(ge=1)] | None = None
    safety_stop_at: Annotated[float, Field(gt=0, le=1)] | None = None
    safety_probability: Literal["as_in_file", "of_event"] = "as_in_file"

    _holidays = field_validator("holidays", mode="before")(_date_list)

    @field_validator("workdays", "overtime_weekdays")
    @classmethod
    def _weekday_names(cls, value):
        if value is None:
            return value
        value = tuple(str(v).lower()[:3] for v in value)
        for v in value:
            if v not in WEEKDAYS:
                raise ValueError(f'"{v}" is not a weekday{did_you_mean(v, WEEKDAYS)}')
        if len(set(value)) != len(value):
            raise ValueError("a weekday is listed twice")
        return value

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


class CostChanges(_Section):
    """Cost keys a stress case replaces or multiplies; unset keys stay as in [costs]."""

    hit: float | None = None
    false_alarm: float | None = None
    miss: float | None = None
    correct_negative: float | None = None

    def given(self) -> dict[str, float]:
        return {k: v for k, v in self.model_dump().items() if v is not None}


class OperationsChanges(_Section):
    """Operating-rule prices (and the amount of work) a stress case replaces or multiplies."""

    day_rate: Annotated[float, Field(ge=0)] | None = None
    standby_rate: Annotated[float, Field(ge=0)] | None = None
    spoilage_cost: Annotated[float, Field(ge=0)] | None = None
    damages_per_day_late: Annotated[float, Field(ge=0)] | None = None
    unfinished_cost: Annotated[float, Field(ge=0)] | None = None
    overtime_multiple: Annotated[float, Field(ge=0)] | None = None
    work: Annotated[float, Field(gt=0)] | None = None

    def given(self) -> dict[str, float]:
        return {k: v for k, v in self.model_dump().items() if v is not None}


STRESS_CHANGES = ("event_rate", "costs", "cost_multipliers", "operations", "operations_multipliers",
                  "skill", "noise", "block_days", "worst_seasons")


class StressCase(_Section):
    """One ``[[stress]]`` table: a named change to the world the season is priced in."""

    name: str
    event_rate: Annotated[float, Field(gt=0)] | None = None
    costs: CostChanges | None = None
    cost_multipliers: CostChanges | None = None
    operations: OperationsChanges | None = None
    operations_multipliers: OperationsChanges | None = None
    skill: Annotated[float, Field(ge=0, le=1)] | None = None
    noise: Annotated[float, Field(ge=0)] | None = None
    block_days: Annotated[float, Field(ge=1)] | None = None
    worst_seasons: Annotated[int, Field(ge=1)] | None = None

    @model_validator(mode="after")
    def _changes_something(self):
        if all(getattr(self, key) is None for key in STRESS_CHANGES):
            raise ValueError("a stress case needs at least one change: " + ", ".join(STRESS_CHANGES))
        new = self.costs.given() if self.costs else {}
        factors = self.cost_multipliers.given() if self.cost_multipliers else {}
        if any(v < 0 for v in factors.values()):
            raise ValueError("cost_multipliers must not be negative")
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
        return Costs(**values)


SiteOperations = create_model(
    "SiteOperations", __base__=_Section, __doc__="Keys of [operations] a site replaces; unset keys "
    "stay as in the scenario's [operations] (the merged rules are checked as a whole).",
    **{key: (field.annotation | None, None) for key, field in OperationsSection.model_fields.items()})


class SiteSection(_Section):
    """One ``[sites."<name>"]`` table: the costs and operating rules of one site that differ from
    the scenario's. Each given key replaces the scenario's value for that site only; the merged
    section is checked as a whole (:meth:`Scenario.for_site`)."""

    costs: CostChanges | None = None
    operations: SiteOperations | None = None  # type: ignore[valid-type]


class Scenario(_Section):
    name: str
    currency: str = "EUR"
    history: HistorySection = HistorySection()
    event: EventSection = EventSection()
    decision: DecisionSection = DecisionSection()
    costs: Costs
    season: SeasonSection = SeasonSection()
    simulation: SimulationSection = SimulationSection()
    stress: list[StressCase] = []
    operations: OperationsSection | None = None
    # per-site overrides, keyed by the site's name as the history's site column writes it
    sites: dict[str, SiteSection] = {}
    # where the file was read from (not a user key): history paths are relative to it
    source: Path | None = Field(default=None, exclude=True)
    sha256: str = Field(default="", exclude=True)

    @property
    def cutoffs(self) -> np.ndarray:
        return cutoff_grid(*self.decision.cutoffs)

    @property
    def slug(self) -> str:
        safe = "".join(ch.lower() if ch.isalnum() else "-" for ch in self.name)
        return "-".join(part for part in safe.split("-") if part) or "scenario"

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
        update: dict[str, Any] = {"sites": {}}
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
    """Read and validate a scenario file; every problem becomes a one-line :class:`InputError`."""
    path = Path(path)
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
        raise InputError(f"{label}: not valid TOML ({exc}); check the syntax near that line") from None
    try:
        scenario = Scenario.model_validate(data)
    except ValidationError as exc:
        raise InputError(_first_problem(exc, label)) from None
    _check_sites(scenario, label)
    return scenario


def _check_sites(scenario: Scenario, label: str) -> None:
    """Every ``[sites."<name>"]`` table merged over the scenario must make a valid section."""
    if scenario.sites and scenario.history.site_column is None:
        first = next(iter(scenario.sites))
        raise InputError(f'{label} [sites."{first}"]: per-site tables need a site column; add '
                         'site_column = "<column naming each row\'s site>" to [history]')
    for name in scenario.sites:
        try:
            scenario.for_site(name)
        except ValidationError as exc:
            err = exc.errors(include_url=False)[0]
            section = "costs" if exc.title == "Costs" else "operations"
            key = ".".join(str(p) for p in err["loc"])
            where = f'{label} [sites."{name}".{section}]'
            if err["type"] == "missing":
                raise InputError(f"{where}: {key} is required and [{section}] does not give it; add it "
                                 f"here or to [{section}]") from None
            value = err.get("input")
            shown = f" (got {value!r})" if key and not isinstance(value, dict | list) else ""
            message = err["msg"].removeprefix("Value error, ")
            raise InputError(f"{where}{' ' + key if key else ''}: {message}{shown}") from None


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
        valid = [k for k in model.model_fields if k not in ("source", "sha256")]
        return f'{label} {where}: unknown key "{key}"{did_you_mean(key, valid)}'
    section = [p for p in loc if not p.isdigit()]
    if section and section[0] == "stress" and len(loc) > 1 and loc[1].isdigit():
        where = f"[[stress]] table {int(loc[1]) + 1}" + (f" {'.'.join(loc[2:])}" if len(loc) > 2 else "")
    elif loc and loc[0] == "sites" and len(loc) > 2:
        where = f"[{_table(loc[:3])}]" + (f" {'.'.join(loc[3:])}" if len(loc) > 3 else "")
    elif not section:
        where = "top level"
    elif section[0] in _SECTIONS:
        where = f"[{section[0]}]" + (f" {'.'.join(section[1:])}" if len(section) > 1 else "")
    else:
        where = f'"{section[0]}"'  # a top-level key such as name
    if kind == "missing":
        return f"{label} {where}: this key is required; add it"
    message = err["msg"].removeprefix("Value error, ")
    value = err.get("input")
    shown = f" (got {value!r})" if not isinstance(value, dict | list) and value is not None else ""
    return f"{label} {where}: {message}{shown}"


_SECTIONS = ("history", "event", "decision", "costs", "season", "simulation", "operations", "stress",
             "sites")


def _table(loc: list[str]) -> str:
    """A table's name as TOML writes it: ``sites."North depot".costs``."""
    return ".".join(f'"{part}"' if i == 1 and loc[0] == "sites" else part for i, part in enumerate(loc))


def _model_at(loc: list[str]) -> type[BaseModel]:
    model: Any = Scenario
    for i, part in enumerate(loc):
        if part.isdigit() or (i == 1 and loc[0] == "sites"):  # a list entry, or a site's name
            continue
        field = model.model_fields.get(part)
        if field is None:
            break
        annotation = field.annotation
        # an optional section (X | None) names its model among the union's members
        for member in (annotation, *typing.get_args(annotation)):  # also list[Model]
            if isinstance(member, type) and issubclass(member, BaseModel):
                model = member
                break
    return model
