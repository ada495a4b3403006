"""Which of the operating rules' prices matters: the sensitivity under ``[operations]``.

Under ``[operations]`` the season costs come from the rules, not from the ``[costs]`` matrix, so
the inputs moved are the rules' prices (:data:`~simulator.rules.operating_rules.PRICE_KEYS`, keyed
``"operations.<price>"`` as the scenario writes them), each alone, the others held: a price given
as a range at the low and high end of its range, any other :data:`~.sensitivity.VARY` below and
above its value. The ends, the choice by objective, the saving against the reference and the
switching values are those of :func:`~simulator.analysis.sensitivity.one_way`, on this pricing:

- the replicate seasons the run played are priced again at the moved prices
  (:meth:`~simulator.rules.operations_result.OperationsResult.season_cost_at`), exactly what a full
  run at those prices gives, since how the crews work never depends on a price;
- the verdict's held-out seasons are played once and priced again the same way
  (:func:`~simulator.analysis.verdict.played_season_pricer`).

A price that plays no part in the run is left out: ``damages_per_day_late`` without a deadline,
``unfinished_cost`` without ``work``, and ``standby_rate`` when the scenario gives none (standby
days are then paid the day rate, so moving ``day_rate`` moves the standby rate paid with it).
Prices cannot be negative, so switching values are looked for from 0 to
:data:`~.sensitivity.REACH` times the price (for a price of 0, times the largest price).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import replace

import numpy as np

from ..inputs.history import History
from ..inputs.scenario import Scenario
from ..inputs.scenario_types import BASELINES
from ..pricing.decision import lowest, objective_cost
from ..replay.resample import Calendar
from ..rules.operating_rules import PRICE_KEYS, RulePrices, Rules
from ..rules.price_terms import moving_prices, price_counts, price_terms, priced_by_terms
from ..rules.operations_result import OperationsResult
from .sensitivity import REACH, VARY, Moved, Pricing, Sensitivity, one_way
from .verdict import judge, played_season_pricer

__all__ = ["price_ends", "rules_pricing", "rules_verdict_at", "operations_pricing", "of_operations_run", "TIED",
           "LEFT_OUT"]

TIED = ("No standby_rate is given, so standby days are paid the day rate: moving the day rate moves the "
        "standby rate paid with it.")
"""The table's remark when ``day_rate`` moves the standby rate paid too."""

LEFT_OUT = {"damages_per_day_late": "damages_per_day_late (no deadline)",
            "unfinished_cost": "unfinished_cost (no work to finish)"}
"""Why a price plays no part in a run, for the table's remark."""


def price_ends(section, rules: Rules, ranges: Mapping[str, object] | None = None) -> tuple[list[Moved], str | None]:
    """The rules' prices to move (:class:`~simulator.analysis.sensitivity.Moved`, in
    :data:`PRICE_KEYS` order: those that play a part under ``rules``,
    :func:`~simulator.rules.price_terms.moving_prices`) and the table's remark (prices left out,
    the day rate moving the standby rate), or None.

    A price given as a range (``ranges``, keyed ``"operations.<price>"``, each with ``low``,
    ``high`` and ``mean``, as ``Scenario.cost_ranges()`` gives them) moves to its ends around its
    mean; any other :data:`~.sensitivity.VARY` below and above its value.
    """
    ranges = ranges or {}
    held = RulePrices.of(section)  # a range's place holds its mean
    keys = moving_prices(rules, section.standby_rate is not None)
    ends = {}
    for key in keys:
        given = ranges.get(f"operations.{key}")
        value = float(getattr(held, key))
        ends[key] = ((float(given.mean), float(given.low), float(given.high), "range") if given is not None
                     else (value, value * (1 - VARY), value * (1 + VARY), "25%"))
    scale = max(base for base, *_ in ends.values()) or 1.0
    moved = [Moved(key=f"operations.{key}", base=base, low=low, high=high, varied=varied,
                   search=(0.0, REACH * (base if base > 0 else scale)))
             for key, (base, low, high, varied) in ends.items()]
    remarks = [TIED] if "standby_rate" not in keys else []
    left_out = [LEFT_OUT[key] for key in PRICE_KEYS if key not in keys and key in LEFT_OUT]
    if left_out:
        remarks.append("Left out, as they play no part in this run: " + "; ".join(left_out) + ".")
    return moved, " ".join(remarks) or None


def _held(section, moved: list[Moved]) -> RulePrices:
    """Today's prices, a price given as a range at its mean (the standby rate paid at the day rate's
    when not given)."""
    prices = RulePrices.of(section).moved(**{m.key.removeprefix("operations."): m.base for m in moved})
    return prices.moved(standby_rate=prices.day_rate) if section.standby_rate is None else prices


def _at(section, held: RulePrices) -> Callable[[str, float], RulePrices]:
    """Today's prices with one moved; without a ``standby_rate`` the day rate moves the standby rate
    paid with it."""
    def at(key: str, value: float) -> RulePrices:
        name = key.removeprefix("operations.")
        if name == "day_rate" and section.standby_rate is None:
            return held.moved(day_rate=value, standby_rate=value)
        return held.moved(**{name: value})
    return at


def rules_pricing(operations: OperationsResult, section, moved: list[Moved], reference: str,
                  objective: str) -> Pricing:
    """The run's played replicate seasons as a function of the rules' prices
    (:class:`~simulator.analysis.sensitivity.Pricing`): priced again at moved prices by
    :meth:`~simulator.rules.operations_result.OperationsResult.season_cost_at`. The quick choice
    for the switching-value search prices the same seasons; under the mean objective from the mean
    counts per cutoff that each price multiplies (:mod:`~simulator.rules.price_terms`: every
    component is linear in its price, so the mean cost follows from the mean counts), and without
    :func:`~simulator.pricing.decision.money_tolerance`, as the fixed-costs path chooses."""
    n_cut = operations.n_cutoffs
    column = n_cut + BASELINES.index(reference)
    held = _held(section, moved)

    def season_costs(prices: RulePrices) -> tuple[np.ndarray, np.ndarray]:
        total = operations.season_cost_at(prices)
        return total[:, :n_cut], total[:, column]

    if objective == "mean":  # the mean season cost from the mean counts (linearity of expectation)
        terms = price_terms(operations.rules)
        counts = {name: value[:, :n_cut].mean(axis=0, dtype=np.float64)
                  for name, value in price_counts(operations.rules, operations.extras).items()}
        extras = operations.extras
        other = extras["other_cost"][:, :n_cut].mean(axis=0) if "other_cost" in extras else None

        def chosen(prices: RulePrices) -> int:
            paid = {key: getattr(prices, key) for key in terms}
            return int(lowest(priced_by_terms(terms, counts, paid, other)))
    else:
        def chosen(prices: RulePrices) -> int:
            return int(lowest(objective_cost(season_costs(prices)[0], objective, axis=0)))
    return Pricing(held=held, at=_at(section, held), season_costs=season_costs, chosen=chosen)


def rules_verdict_at(history: History, calendar: Calendar, cutoffs: np.ndarray, scenario: Scenario,
                     rule: str) -> Callable[[RulePrices], bool]:
    """The verdict as a function of the rules' prices: whether acting on the forecast beats the best
    rule without it on the held-out seasons (:func:`~simulator.analysis.verdict.judge`), each past
    season played once under the rules and priced at the given prices
    (:func:`~simulator.analysis.verdict.played_season_pricer`); at the scenario's own prices, the
    run's own verdict."""
    priced = played_season_pricer(history, calendar, cutoffs, scenario)

    def use_forecast(prices: RulePrices) -> bool:
        return judge(priced(prices), calendar.n_occasions, rule).use_forecast
    return use_forecast


def operations_pricing(scenario: Scenario, operations: OperationsResult) -> tuple[list[Moved], str | None, Pricing]:
    """The rules' prices a run under ``[operations]`` moves (:func:`price_ends`, a price given as a
    range of some width to its ends; one of zero width is a fixed price, moved by 25%), the table's
    remark, and the run's played seasons as a function of the prices (:func:`rules_pricing`)."""
    section = scenario.operations
    ranges = {key: r for key, r in scenario.cost_ranges().items()
              if key.startswith("operations.") and r.high > r.low}
    moved, remark = price_ends(section, operations.rules, ranges)
    pricing = rules_pricing(operations, section, moved, scenario.simulation.reference, scenario.decision.objective)
    return moved, remark, pricing


def of_operations_run(scenario: Scenario, history: History, calendar: Calendar, operations: OperationsResult,
                      band: tuple[float, float], rule: str | None,
                      priced: tuple[list[Moved], str | None, Pricing] | None = None) -> Sensitivity:
    """The sensitivity of a single-site run under ``[operations]`` to the rules' prices. ``rule`` is
    the verdict's best rule without the forecast (None: no verdict); ``band`` today's near-optimal
    band; ``priced``: :func:`operations_pricing` of the run, when made already."""
    moved, remark, pricing = priced or operations_pricing(scenario, operations)
    objective = scenario.decision.objective
    verdict = None if rule is None else rules_verdict_at(history, calendar, scenario.cutoffs, scenario, rule)
    return replace(one_way(moved, pricing, objective=objective, cutoffs=scenario.cutoffs, band=band,
                           use_forecast=verdict), moved="operations", remark=remark)
