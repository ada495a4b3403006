"""The tables of the scenario schema that change other tables: ``[[stress]]`` and ``[sites."<name>"]``.

A stress case replaces or multiplies costs and operating-rule prices (or changes the event rate,
the skill, the noise, the block length); a site's table replaces the scenario's costs and operating
rules for that site only. Both name keys of :class:`~simulator.inputs.scenario_costs.Costs` and
:class:`~simulator.inputs.scenario_tables.OperationsSection`, so the keys are said once, there.
"""

from __future__ import annotations

import typing
from collections.abc import Mapping
from typing import Annotated, Any

from pydantic import Field, create_model, model_validator

from .scenario_costs import Costs
from .scenario_tables import OperationsSection
from .scenario_types import MAX_FACTOR, Days, Factor, Money, Name, Price, Work, _Section

__all__ = ["CostChanges", "OperationsChanges", "CostFactors", "OperationsFactors", "STRESS_CHANGES",
           "StressCase", "SiteOperations", "SiteSection"]


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
        for table, factors in (("costs", "cost_multipliers"), ("operations", "operations_multipliers")):
            both = sorted(set(_given(getattr(self, table))) & set(_given(getattr(self, factors))))
            if both:
                raise ValueError(f'"{both[0]}" has both a new value ({table}) and a multiplier '
                                 f"({factors}); keep one")
        return self

    def changes_of(self, values: Mapping[str, Any]) -> dict[str, Any]:
        """The keys of ``values`` (``[costs]`` keys, ``[operations]`` keys or both) this case
        changes, with their new values: a new value replaces, a multiplier multiplies
        (``standby_rate`` None is the day rate). A value may be a float or an array drawn per
        replicate season (the multiplier then multiplies each replicate's draw). The one place a
        case's changes are laid over costs and prices, fixed (:meth:`changed_costs`,
        :meth:`changed_operations`) or drawn (:class:`~simulator.pricing.draws.CostDrawer`)."""
        new = {**_given(self.costs), **_given(self.operations)}  # the two tables' keys are disjoint
        out = {k: v for k, v in new.items() if k in values}
        for key, factor in {**_given(self.cost_multipliers), **_given(self.operations_multipliers)}.items():
            current = values.get(key)
            if current is None and key == "standby_rate":
                current = values.get("day_rate")
            if current is not None:
                out[key] = current * factor
        return out

    def changed_operations(self, base: "OperationsSection") -> "OperationsSection":
        """``base`` with this case's new operating-rule prices and multipliers applied."""
        return base.model_copy(update=self.changes_of(base.model_dump()))

    def changed_costs(self, base: Costs) -> Costs:
        """``base`` with this case's new values and multipliers applied."""
        values = base.model_dump()
        values.update(self.changes_of(values))
        return Costs.model_construct(**values)  # a factor may take a cost past MAX_MONEY: still finite


def _given(changes: _Changes | None) -> dict[str, float]:
    return {} if changes is None else changes.given()


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
