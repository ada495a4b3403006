"""The scenario file: TOML read with the standard library, validated with pydantic.

One schema, :class:`Scenario`, is the single source of truth for every key a user can write; its
tables are in ``scenario_tables``, ``scenario_costs`` and ``scenario_changes``, their limits and
types in ``scenario_types``. Unknown keys are errors that name the key and the closest valid one;
every problem is one line naming the file and the key, with what values are allowed
(``allowed_values``). A run too large to hold is refused here too, before any work
(:func:`check_workload`).
"""

from __future__ import annotations

import hashlib
import tomllib
from pathlib import Path
from typing import Annotated, Any

import numpy as np
from pydantic import BaseModel, Field, ValidationError, field_validator, model_validator

from ..notation import decimals
from .errors import InputError, did_you_mean, excerpt, printable, quoted, read_input_file
from .ranges import CostRange, site_ranges, split_ranges
from .scenario_changes import SiteSection, StressCase
from .scenario_costs import Costs
from .scenario_tables import (DecisionSection, EventSection, HistorySection, OperationsSection, SeasonSection,
                              SimulationSection)
from .scenario_types import (MAX_CURRENCY, MAX_FORECASTS, MAX_SCENARIO_BYTES, MAX_SEASON_COSTS, MAX_TEXT, Name, Price,
                             _Section)
from .allowed_values import _allowed, _submodel

__all__ = ["Scenario", "read_scenario", "scenario_from_text", "cutoff_grid", "check_workload", "CostRange"]


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
    forecasts: Annotated[dict[Name, Name], Field(
        max_length=MAX_FORECASTS, description=f"a probability column's name (text) for each of at most "
                                              f"{MAX_FORECASTS} forecasts")] = {}
    # the price of a forecast per season, by its name in [forecasts]: whether switching pays at it
    forecast_prices: Annotated[dict[Name, Price], Field(
        max_length=MAX_FORECASTS, description="money per season, a number from 0 to 1e12")] = {}
    # where the file was read from (not a user key): history paths are relative to it
    source: Path | None = Field(default=None, exclude=True)
    sha256: str = Field(default="", exclude=True)
    # the costs written as ranges, by dotted key (not a user key: read by inputs/ranges.py, which
    # puts each range's PERT mean in the cost's place)
    ranges: dict[str, CostRange] = Field(default={}, exclude=True)

    def cost_ranges(self) -> dict[str, CostRange]:
        """The costs and the rules' prices written as ranges, by dotted key: ``costs.miss``,
        ``sites.<site>.costs.miss``, ``operations.day_rate``, ``sites.<site>.operations.day_rate``
        (a site's own scenario, :meth:`for_site`, has its ranges as ``costs.*`` and
        ``operations.*``, its own overriding the scenario's)."""
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

    @field_validator("forecast_prices")
    @classmethod
    def _prices_name_forecasts(cls, value: dict[str, float], info) -> dict[str, float]:
        """Every ``[forecast_prices]`` key names a forecast of ``[forecasts]``."""
        forecasts = info.data.get("forecasts") or {}
        for name in value:
            if not forecasts:
                raise ValueError(f"{quoted(name)}: a price compares several forecasts; list them under "
                                 "[forecasts] first")
            if name not in forecasts:
                raise ValueError(f"{quoted(name)} is not a forecast of [forecasts]{did_you_mean(name, list(forecasts))}")
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
        overridden = {f"costs.{key}" for key in (override.costs.given() if override.costs is not None else {})}
        overridden |= {f"operations.{key}" for key in (override.operations.model_dump(exclude_unset=True)
                                                       if override.operations is not None else {})}
        update: dict[str, Any] = {"sites": {}, "ranges": site_ranges(self.ranges, name, overridden)}
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
    decimal (:func:`simulator.notation.decimals.grid`)."""
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
    data, ranges = split_ranges(data, label)  # costs written as ranges: their PERT means in place
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
    entry = loc[1] if loc[:1] in (["forecasts"], ["forecast_prices"]) and inside else None  # one forecast's
    loc = loc[:depth]
    section = [p for p in loc if not p.isdigit()]
    if section and section[0] == "stress" and len(loc) > 1 and loc[1].isdigit():
        where = f"[[stress]] table {int(loc[1]) + 1}" + (f" {'.'.join(loc[2:])}" if len(loc) > 2 else "")
    elif loc and loc[0] == "sites" and len(loc) > 1:
        where = f"[{_table(loc[:3])}]" + (f" {'.'.join(loc[3:])}" if len(loc) > 3 else "")
    elif entry is not None:
        where = f"[{loc[0]}] {quoted(entry)}"
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
             "sites", "forecasts", "forecast_prices")


def _table(loc: list[str]) -> str:
    """A table's name as TOML writes it: ``sites."North depot".costs``."""
    return ".".join(quoted(part) if i == 1 and loc[0] == "sites" else part for i, part in enumerate(loc))


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
