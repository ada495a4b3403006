"""Which cost estimate matters: each cost moved alone, and how far it must move to change the advice.

The costs per occasion are estimates. For each one, with the others held:

- **one-way sensitivity** (a "tornado"): the cost at the low and high end of its range (a cost
  written as a range), or at :data:`VARY` below and above its value (a fixed cost); at each end
  the cutoff is chosen again by the run's objective, and its saving against the reference (mean
  per season, and the share of seasons it saves in) is priced;
- **switching values**: how far the cost alone must move, down and up, before the verdict changes
  (use the forecast, or keep the best rule without it: :mod:`simulator.analysis.verdict`, its
  held-out seasons priced at the moved cost), or before the recommended cutoff leaves today's
  near-optimal band (:func:`simulator.pricing.decision.decide`). Searched within
  :data:`REACH` times the cost (:func:`search_span`) on a grid, then by bisection.

One-way sensitivity analysis, its tornado diagram (inputs moved one at a time between a low and a
high value, bars sorted by width) and switching values (the value of an input at which the
preferred option changes) are common practice in decision analysis and health-economic
evaluation (for example Briggs, Claxton and Sculpher 2006, Decision Modelling for Health Economic
Evaluation, chapter 4; from memory, check).

No replay is needed: a replicate's classification counts do not depend on the costs
(``RunResult.replicate_counts``), so moved costs reprice them through
:func:`simulator.pricing.costs.price`, the one place counts become money, and the choice is made as
:func:`~simulator.pricing.decision.decide` makes it. One exception: the seasonal-rate rule acts in
the months whose event rate reaches the break-even probability of the costs, so as a reference on
the replicates it keeps the months it acts in at today's costs (the verdict's held-out seasons
learn them again at each moved cost). The replay is held as the run drew it: with
``block_days = "auto"`` the run length is chosen on the series of costs at the break-even
probability, so a run at other costs may draw other replicates; the sensitivity isolates the costs.

The ends, the choice and the switching values (:func:`one_way`) run on any :class:`Pricing` of the
replicates at given inputs: here the counts repriced at given ``[costs]`` (:func:`sensitivity`);
under ``[operations]`` the played seasons priced again at given prices of the rules
(:mod:`simulator.analysis.rules_sensitivity`).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..inputs.history import History
from ..inputs.scenario import Scenario
from ..inputs.scenario_costs import COST_KEYS, Costs
from ..inputs.scenario_types import BASELINES
from ..pricing.costs import price
from ..pricing.counts import ReplicateCounts
from ..pricing.contingency import Contingency
from ..pricing.decision import (OBJECTIVE_COLUMN, cheaper, lowest, money_tolerance, objective_cost,
                                season_cost_columns)
from ..replay.resample import Calendar
from .verdict import season_pricer, worth_using

__all__ = ["VARY", "REACH", "End", "Switch", "CostSensitivity", "Sensitivity", "Moved", "Pricing", "search_span",
           "choose", "choose_priced", "mean_counts", "cost_ends", "cost_moves", "switching_value", "verdict_at", "one_way", "sensitivity", "of_run",
           "NOTES"]

VARY = 0.25  # a cost without a range is moved by this share down and up (the plus and minus 25%)
REACH = 10.0  # switching values are looked for from 0 to this many times the cost (see search_span)
_GRID = 8  # points tried on each side of today's cost before bisecting (our own choice)
_STEPS = 18  # bisection steps: to within the span / 8 / 2^18, two millionths of the span


NOTES = {
    "mixed": ("No sensitivity when some sites play their seasons under [operations] and others are priced by "
              "[costs]: run each kind of site apart to see which estimate matters."),
    "calibrated": ("No sensitivity to the costs in the calibrated mode yet: use mode = \"replay\" to see which "
                   "cost estimate matters."),
}
"""Why a run has no sensitivity: a note in summary.json and the report, not an error."""


@dataclass(frozen=True)
class End:
    """One end of a cost's range: the cost, the cutoff chosen at it, and that cutoff's saving
    against the reference (mean per season, and the share of replicate seasons it saves in)."""

    value: float
    cutoff: float
    mean_saving: float
    prob_saving: float


@dataclass(frozen=True)
class Switch:
    """Where moving one cost alone changes something: the cost at which it changes going down from
    today's value and going up (None: not within the span searched)."""

    down: float | None
    up: float | None


@dataclass(frozen=True)
class CostSensitivity:
    """One cost: ``key`` as the scenario writes it (``"costs.miss"``, ``"operations.day_rate"``), today's ``base`` value,
    ``low`` and ``high`` ends, how they were set (``varied``: ``"range"`` or ``"25%"``), the
    switching values of the verdict (None without one) and of the near-optimal band, and the
    ``search`` span they were looked for in."""

    key: str
    base: float
    varied: str
    low: End
    high: End
    verdict_switch: Switch | None
    band_switch: Switch
    search: tuple[float, float]

    @property
    def width(self) -> float:
        """How far the saving moves between the two ends (money per season): the tornado's bar."""
        return abs(self.high.mean_saving - self.low.mean_saving)


@dataclass(frozen=True)
class Sensitivity:
    """The sensitivity of a run: every cost, the widest bar first (ties in the order the inputs
    were given: :data:`COST_KEYS`, or the rules' prices), beside today's cutoff, band and saving;
    or only a ``note`` saying why there is none. ``moved``: what was moved, ``"costs"`` (the
    ``[costs]`` matrix) or ``"operations"`` (the rules' prices); ``remark``: what the table's
    reader must know about the inputs (those left out, those moved together), or None."""

    costs: tuple[CostSensitivity, ...]
    base_cutoff: float = math.nan
    base_saving: float = math.nan
    band: tuple[float, float] = (math.nan, math.nan)
    use_forecast: bool | None = None
    note: str | None = None
    moved: str = "costs"
    remark: str | None = None


@dataclass(frozen=True)
class Moved:
    """One input moved alone: its ``key`` as the scenario writes it, today's ``base`` value, its
    ``low`` and ``high`` ends, how they were set (``varied``) and the ``search`` span of its
    switching values."""

    key: str
    base: float
    low: float
    high: float
    varied: str
    search: tuple[float, float]


@dataclass(frozen=True)
class Pricing:
    """The replicate seasons as a function of the inputs, for :func:`one_way`.

    ``held``: today's inputs (a range held at its mean); ``at(key, value)``: them with one moved;
    ``season_costs(inputs)``: every replicate's season cost acting at each cutoff (n_rep,
    n_cutoffs) and under the reference (n_rep,), exactly as a full run at those inputs prices
    them; ``chosen(inputs)``: the index of the cutoff the objective chooses there, quickly (for
    the switching-value search)."""

    held: object
    at: Callable[[str, float], object]
    season_costs: Callable[[object], tuple[np.ndarray, np.ndarray]]
    chosen: Callable[[object], int]
    choice: Callable[[object], tuple[int, float, float]] | None = None
    """The choice at given inputs (index, mean saving, share saving) made a quicker way that gives
    the same figures; None: :func:`choose_priced` on ``season_costs``."""


def search_span(base: float, scale: float) -> tuple[float, float]:
    """Where a switching value is looked for: from 0 to :data:`REACH` times the cost (either sign),
    or, for a cost of 0, within :data:`REACH` times ``scale`` (the largest cost) either way."""
    if base == 0:
        return (-REACH * scale, REACH * scale)
    return (min(0.0, REACH * base), max(0.0, REACH * base))


def cost_ends(costs: Costs, ranges: Mapping[str, object] | None = None) -> dict[str, tuple[float, float, float, str]]:
    """Each cost's (base, low, high, how varied): a cost given as a range (``ranges``, keyed
    ``"costs.<key>"``, each with ``low``, ``high`` and ``mean``) at its ends around its mean;
    any other at :data:`VARY` below and above its value (ordered, so low <= high for negative costs too)."""
    ranges = ranges or {}
    out = {}
    for key in COST_KEYS:
        given = ranges.get(f"costs.{key}")
        if given is not None:
            out[key] = (float(given.mean), float(given.low), float(given.high), "range")
        else:
            value = float(getattr(costs, key))
            a, b = value * (1 - VARY), value * (1 + VARY)
            out[key] = (value, min(a, b), max(a, b), "25%")
    return out


def cost_moves(costs: Costs, ranges: Mapping[str, object] | None = None) -> list[Moved]:
    """Each cost of ``[costs]`` to move (:class:`Moved`, in :data:`COST_KEYS` order, keyed
    ``"costs.<key>"``): its ends (:func:`cost_ends`) and the span its switching values are looked for
    in (:func:`search_span`, a cost of 0 by the largest cost)."""
    ends = cost_ends(costs, ranges)
    scale = max(abs(v[0]) for v in ends.values()) or 1.0
    return [Moved(key=f"costs.{key}", base=base, low=low, high=high, varied=varied, search=search_span(base, scale))
            for key, (base, low, high, varied) in ends.items()]


def choose(counts: ReplicateCounts, costs: Costs, reference: str, objective: str,
           means: Contingency | None = None) -> tuple[int, float, float]:
    """The cutoff ``objective`` chooses at ``costs``, with its mean saving against ``reference`` and
    the share of seasons it saves in (:func:`choose_priced` on the counts priced at ``costs``).

    With ``means`` (:func:`mean_counts`) under the mean objective, the cutoff is chosen on the mean
    season cost priced from the mean counts (linear in the counts, so the same cutoff, but for ties
    within the rounding of the two sums) and only its column is priced replicate by replicate: many
    times quicker, and its saving the same floats as a full run's at that cutoff."""
    if objective != "mean" or means is None:
        return choose_priced(*_counts_priced(counts, reference)(costs), objective)
    reference_cost = price(counts.baselines, costs)[:, BASELINES.index(reference)]
    score = price(means, costs)
    tolerance = money_tolerance(score, reference_cost)
    best = int(lowest(score, tolerance))
    model = price(Contingency(*(cell[:, best] for cell in _cells(counts.model))), costs)
    return best, float((reference_cost - model).mean()), float(cheaper(model, reference_cost, tolerance).mean())


def mean_counts(counts: ReplicateCounts) -> Contingency:
    """The mean counts per cutoff over the replicates, (n_cutoffs,) float64 per cell."""
    return Contingency(*(cell.mean(axis=0, dtype=np.float64) for cell in _cells(counts.model)))


def _cells(counts: Contingency) -> tuple[np.ndarray, ...]:
    return counts.hits, counts.false_alarms, counts.misses, counts.correct_negatives


def _counts_priced(counts: ReplicateCounts, reference: str) -> Callable[[Costs], tuple[np.ndarray, np.ndarray]]:
    """The replicate counts priced at given costs (:func:`~simulator.pricing.costs.price`): the
    season costs at each cutoff and under ``reference``."""
    column = BASELINES.index(reference)
    return lambda costs: (price(counts.model, costs), price(counts.baselines, costs)[:, column])


def choose_priced(model: np.ndarray, reference_cost: np.ndarray, objective: str) -> tuple[int, float, float]:
    """The cutoff ``objective`` chooses among season costs ``model`` (n_rep, n_cutoffs), with its
    mean saving against ``reference_cost`` (n_rep,) and the share of seasons it saves in, made as
    :func:`~simulator.pricing.decision.decide` makes them (the same tolerance, columns and ties),
    so a full run at the same inputs gives the same numbers."""
    tolerance = money_tolerance(model, reference_cost)
    # the mean is decide's own column (season_cost_columns' mean_cost) without the quantiles' cost
    score = model.mean(axis=0) if objective == "mean" else season_cost_columns(model)[OBJECTIVE_COLUMN[objective]]
    best = int(lowest(score, tolerance))
    savings = reference_cost - model[:, best]
    return best, float(savings.mean()), float(cheaper(model[:, best], reference_cost, tolerance).mean())


def _chooser(counts: ReplicateCounts, objective: str, means: Contingency) -> Callable[[Costs], int]:
    """The index of the cutoff chosen at given costs, quickly: under the mean objective from the
    mean counts per cutoff (the mean season cost is linear in the counts), else from every replicate."""
    if objective == "mean":
        def chosen(costs: Costs) -> int:
            return int(lowest(price(means, costs)))
        return chosen

    def chosen(costs: Costs) -> int:
        return int(lowest(objective_cost(price(counts.model, costs), objective, axis=0)))
    return chosen


def switching_value(changed: Callable[[float], bool], base: float, limit: float) -> float | None:
    """The first cost between ``base`` and ``limit`` at which ``changed`` holds, or None.

    A grid of :data:`_GRID` steps from ``base`` towards ``limit`` finds the first step at which it
    holds; bisection then narrows the step to within (limit - base) / _GRID / 2^_STEPS, and the
    value returned is the nearest to ``base`` found to hold (so moving just past it changes the
    advice; just short of it, by more than that width, does not, unless a change and its reversal
    both lie within one grid step).
    """
    if limit == base:
        return None
    previous = base
    for i in range(1, _GRID + 1):
        value = base + (limit - base) * i / _GRID
        if changed(value):
            inside, outside = previous, value
            for _ in range(_STEPS):
                middle = (inside + outside) / 2
                if middle in (inside, outside):
                    break
                if changed(middle):
                    outside = middle
                else:
                    inside = middle
            return float(outside)
        previous = value
    return None


def one_way(moved: Sequence[Moved], pricing: Pricing, *, objective: str, cutoffs: np.ndarray,
            band: tuple[float, float], use_forecast: Callable[[object], bool] | None = None) -> Sensitivity:
    """Every input of ``moved`` moved alone, the others held: its ends and its switching values (see
    the module's text), from any ``pricing`` of the replicates (:class:`Pricing`).

    Parameters
    ----------
    moved : the inputs, in the order ties of width are broken.
    pricing : the replicates priced at given inputs.
    objective : the run's ``[decision] objective``.
    cutoffs : (n_cutoffs,) the run's grid.
    band : today's near-optimal band of cutoffs, (low, high), both included.
    use_forecast : the verdict at given inputs (whether acting on the forecast beats the best rule
        without it on held-out seasons); None when the run has no verdict.
    """
    held = pricing.held
    choice = pricing.choice or (lambda inputs: choose_priced(*pricing.season_costs(inputs), objective))
    base_index, base_saving, _ = choice(held)
    base_verdict = None if use_forecast is None else use_forecast(held)
    out = []
    for m in moved:
        def end(value: float, key: str = m.key) -> End:
            index, saving, prob = choice(pricing.at(key, value))
            return End(value=value, cutoff=float(cutoffs[index]), mean_saving=saving, prob_saving=prob)

        def leaves_band(value: float, key: str = m.key) -> bool:
            c = cutoffs[pricing.chosen(pricing.at(key, value))]
            return not band[0] <= c <= band[1]

        band_switch = Switch(switching_value(leaves_band, m.base, m.search[0]),
                             switching_value(leaves_band, m.base, m.search[1]))
        verdict_switch = None
        if use_forecast is not None:
            def flips(value: float, key: str = m.key) -> bool:
                return use_forecast(pricing.at(key, value)) != base_verdict
            verdict_switch = Switch(switching_value(flips, m.base, m.search[0]),
                                    switching_value(flips, m.base, m.search[1]))
        out.append(CostSensitivity(key=m.key, base=m.base, varied=m.varied, low=end(m.low), high=end(m.high),
                                   verdict_switch=verdict_switch, band_switch=band_switch, search=m.search))
    order = sorted(range(len(out)), key=lambda i: (-out[i].width, i))
    return Sensitivity(costs=tuple(out[i] for i in order), base_cutoff=float(cutoffs[base_index]),
                       base_saving=base_saving, band=band, use_forecast=base_verdict)


def sensitivity(counts: ReplicateCounts, costs: Costs, *, reference: str, objective: str, cutoffs: np.ndarray,
                band: tuple[float, float], use_forecast: Callable[[Costs], bool] | None = None,
                ranges: Mapping[str, object] | None = None) -> Sensitivity:
    """Every cost of ``[costs]`` moved alone (:func:`one_way`), the replicates' counts repriced at it.

    Parameters
    ----------
    counts : the run's replicate counts (``RunResult.replicate_counts``).
    costs : the scenario's ``[costs]``; a cost given as a range is held at its mean when another moves.
    reference, objective : the run's ``[simulation] reference`` and ``[decision] objective``.
    cutoffs, band, use_forecast : as :func:`one_way` takes them (the verdict at given costs).
    ranges : costs given as a range (``Scenario.cost_ranges()``), keyed ``"costs.<key>"``.
    """
    moved = cost_moves(costs, ranges)
    held = costs.model_copy(update={m.key.removeprefix("costs."): m.base for m in moved})
    means = mean_counts(counts)
    pricing = Pricing(held=held, at=lambda key, value: held.model_copy(update={key.removeprefix("costs."): value}),
                      season_costs=_counts_priced(counts, reference), chosen=_chooser(counts, objective, means),
                      choice=lambda inputs: choose(counts, inputs, reference, objective, means))
    return one_way(moved, pricing, objective=objective, cutoffs=cutoffs, band=band, use_forecast=use_forecast)


def verdict_at(history: History, calendar: Calendar, cutoffs: np.ndarray, rule: str) -> Callable[[Costs], bool]:
    """The verdict as a function of the costs: whether acting on the forecast beats the best rule
    without it on the held-out seasons (:func:`~simulator.analysis.verdict.judge`), each past season
    priced at the given costs (:func:`~simulator.analysis.verdict.season_pricer`, as the run's own
    verdict prices them)."""
    priced = season_pricer(history, cutoffs)

    def use_forecast(costs: Costs) -> bool:
        return worth_using(priced(costs), calendar.n_occasions)
    return use_forecast


def of_run(scenario: Scenario, history: History, calendar: Calendar, counts: ReplicateCounts | None,
           band: tuple[float, float], rule: str | None, why_not: str | None = None) -> Sensitivity:
    """The sensitivity of a single-site run from its replicate counts, or a note (:data:`NOTES`,
    keyed by ``why_not``) saying why there is none. ``rule`` is the verdict's best rule without the
    forecast (None: no verdict); ``band`` today's near-optimal band."""
    if why_not is not None or counts is None:
        return Sensitivity(costs=(), note=NOTES[why_not or "calibrated"])
    # costs given as ranges with some width (one of zero width is the fixed cost, moved by 25%)
    ranges = {key: r for key, r in scenario.cost_ranges().items() if r.high > r.low}
    verdict = None if rule is None else verdict_at(history, calendar, scenario.cutoffs, rule)
    return sensitivity(counts, scenario.costs, reference=scenario.simulation.reference,
                       objective=scenario.decision.objective, cutoffs=scenario.cutoffs, band=band,
                       use_forecast=verdict, ranges=ranges)
