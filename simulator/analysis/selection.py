"""What was learnt on the past, checked on what came after it.

Two things are fitted on a training period and then used forward:

- the cutoff. Chosen and priced on the same history it looks better than it will be. With a
  validation split the cutoff is chosen on the training period only and priced on the validation
  period, beside the validation period's own (in-sample) optimum; walk-forward does the same season
  by season, each chosen on all earlier seasons. The gap between the two is the optimism of choosing
  on the past: actual against potential value (Atger 2001, as discussed by Richardson 2000).
- the probabilities' calibration, for the ``calibrated`` pricing mode: see ``calibration.py``.

A cutoff is chosen as the core chooses it (:func:`~simulator.pricing.decision.decide`): by the scenario's
objective (the lowest mean season cost, by default) over replicate seasons drawn
(:class:`~simulator.replay.resample.Resampler`) from the training period alone. The same replicates give the
spread of the cost per occasion over a period as long as the one checked, so a period that does much
worse than its training can be flagged.

References
----------
Atger, F. (2001). Verification of intense precipitation forecasts from single models and ensemble
prediction systems. Nonlin. Processes Geophys. 8, 401-417.
Richardson, D. S. (2000). Skill and relative economic value of the ECMWF ensemble prediction system.
Q. J. R. Meteorol. Soc. 126, 649-667.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from ..pricing import contingency, rates
from ..pricing.costs import SeasonPricer, baseline_actions, occasion_costs, price
from ..pricing.decision import OBJECTIVE_COLUMN, lowest, season_cost_columns
from ..inputs.errors import InputError
from ..inputs.history import History
from ..rules.vectorised_model import OperationsPricer
from ..replay.resample import Calendar, Resampler, nearest_position
from ..inputs.scenario import Scenario
from ..inputs.scenario_costs import Costs
from ..inputs.scenario_types import BASELINES

__all__ = ["PeriodRecord", "ValidationCheck", "WalkForwardStep", "WalkForward", "Selection", "select_honestly",
           "SELECTION_REPLICATES", "SELECTION_STREAM"]

SELECTION_REPLICATES = 1000  # replicate seasons per training period (choice and spread)
SELECTION_STREAM = 45  # seed stream of those replicates (other streams: resample.py, run.py, stress.py)
FLAG_QUANTILE = 0.95  # flag a period dearer than this quantile of its training's spread (90% range)


@dataclass(frozen=True)
class PeriodRecord:
    """A period's classification matrix and cost at one cutoff.

    ``miss_rate`` and ``false_alarm_rate`` are the error rates of each class (events not acted on,
    non-events acted on); ``cost`` is the period's total, in the scenario's currency, over
    ``n_priced`` occasions: the period's own ``n_occasions`` when priced by the ``[costs]`` matrix;
    with ``[operations]``, the days played (each season of the period laid on the calendar of the
    season priced, so each season counts that calendar's days). ``cost_per_occasion`` is
    ``cost / n_priced``.
    """

    period: str
    start: str
    end: str
    n_occasions: int
    cutoff: float
    hits: int
    false_alarms: int
    misses: int
    correct_negatives: int
    hit_rate: float
    specificity: float
    miss_rate: float
    false_alarm_rate: float
    cost: float
    cost_per_occasion: float
    n_priced: int


@dataclass(frozen=True)
class ValidationCheck:
    """Cutoff chosen on the training period, priced on the validation period.

    ``expected_range`` is the 5th to 95th percentile of the cost per occasion, at the chosen cutoff,
    of a period as long as the validation period built from training replicate seasons; ``flag`` is
    set when the validation period's cost per occasion lies above it. ``optimism`` is the validation
    cost at the chosen cutoff minus the validation period's own lowest cost (never negative).
    """

    chosen_cutoff: float
    training: PeriodRecord
    validation: PeriodRecord
    validation_best_cutoff: float
    validation_best_cost: float
    optimism: float
    reference_cost: float
    expected_range: tuple[float, float]
    flag: bool


@dataclass(frozen=True)
class WalkForwardStep:
    """One season priced at the cutoff chosen on all seasons before it."""

    season: int
    training: PeriodRecord  # the earlier seasons, at the chosen cutoff
    priced: PeriodRecord  # this season, at the chosen cutoff
    best_cutoff: float  # this season's own lowest-cost cutoff (hindsight)
    best_cost: float
    reference_cost: float
    expected_range: tuple[float, float]
    flag: bool


@dataclass(frozen=True)
class WalkForward:
    """The walk-forward procedure over seasons 2..n against hindsight and the reference.

    ``in_sample_cutoff`` is the single cutoff with the lowest total cost over the same seasons,
    chosen knowing them (the potential value); ``optimism`` = ``total_cost - in_sample_cost``.
    """

    steps: tuple[WalkForwardStep, ...]
    total_cost: float
    in_sample_cutoff: float
    in_sample_cost: float
    optimism: float
    reference_cost: float
    savings: float
    flagged_seasons: tuple[int, ...]


@dataclass(frozen=True)
class Selection:
    validation: ValidationCheck | None
    walk_forward: WalkForward | None


def select_honestly(history: History, calendar: Calendar, cutoffs: np.ndarray, costs: Costs,
                    reference: str, mean_block: float, window_days: int, seed: int,
                    replicates: int, walk_forward: bool, label: str = "scenario",
                    rules: Scenario | None = None, objective: str = "mean") -> Selection | None:
    """The validation check (when the history has a validation period) and the walk-forward.

    Parameters
    ----------
    history, calendar, cutoffs, costs, reference : as in the base run.
    mean_block, window_days : the resampling of the base run, reused for each training period.
    seed : replicates for training period ``key`` come from ``SeedSequence(seed, spawn_key=
        (SELECTION_STREAM, key, block))``; key 0 is the validation split, a season's label its step.
    replicates : how many replicate seasons per training period (at most
        :data:`SELECTION_REPLICATES`).
    walk_forward : run the walk-forward; needs at least two seasons.

    rules : the scenario, when it has ``[operations]``: replicates are then played under the rules,
        and a past period is priced by playing each of its seasons, laid on the calendar of the
        season being priced (each calendar day takes the season's occasion nearest to it in day of
        season), under the rules. Without rules, periods are priced with the ``[costs]`` matrix on
        their historical occasions.
    objective : what the cutoff is chosen by on each training period's replicates, as in the base
        run (:data:`simulator.pricing.decision.OBJECTIVES`). A priced period's own best cutoff (hindsight)
        is its cheapest: one period has one cost, not a spread.
    """
    n_rep = max(20, min(int(replicates), SELECTION_REPLICATES))
    context = _Context(history, calendar, cutoffs, costs, reference, mean_block, window_days, seed, n_rep,
                       rules, objective)
    validation = _validation_check(context) if history.has_validation else None
    forward = None
    if walk_forward:
        if history.seasons.size < 2:
            raise InputError(f"{label}: walk-forward needs at least two seasons in the history, which "
                             f"has {history.seasons.size}; use a longer history or leave walk-forward off")
        forward = _walk_forward(context)
    if validation is None and forward is None:
        return None
    return Selection(validation=validation, walk_forward=forward)


@dataclass(frozen=True)
class _Context:
    history: History
    calendar: Calendar
    cutoffs: np.ndarray
    costs: Costs
    reference: str
    mean_block: float
    window_days: int
    seed: int
    n_rep: int
    rules: Scenario | None = None
    objective: str = "mean"

    def pricer(self, history: History):
        """The pricer of replicate seasons: the rules engine with ``[operations]``, else the core's."""
        if self.rules is None:
            return SeasonPricer(history, self.cutoffs, self.costs)
        return OperationsPricer(history, self.calendar, self.cutoffs, self.rules)


def _validation_check(c: _Context) -> ValidationCheck:
    h = c.history
    train, val = h.training, h.validation
    index, spread = _choose_on(c, train, key=0, target_occasions=int(val.sum()))
    cutoff = float(c.cutoffs[index])
    val_costs, reference_cost, _ = _period_costs(c, val, train)
    best = int(lowest(val_costs))
    training = _record(c, "training", train, train, index)
    validation = _record(c, "validation", val, train, index)
    return ValidationCheck(chosen_cutoff=cutoff, training=training, validation=validation,
                           validation_best_cutoff=float(c.cutoffs[best]),
                           validation_best_cost=float(val_costs[best]),
                           optimism=float(validation.cost - val_costs[best]),
                           reference_cost=reference_cost, expected_range=spread,
                           flag=bool(validation.cost_per_occasion > spread[1]))


def _walk_forward(c: _Context) -> WalkForward:
    h = c.history
    steps = []
    for season in h.seasons[1:]:
        train = h.evaluated & (h.season < season) & (h.season >= 0)
        priced = h.evaluated & (h.season == season)
        index, spread = _choose_on(c, train, key=int(season), target_occasions=int(priced.sum()))
        # the reference knows only the earlier seasons too (it matters for seasonal_rate)
        season_costs, reference_cost, _ = _period_costs(c, priced, train)
        best = int(lowest(season_costs))
        record = _record(c, f"season {season}", priced, train, index)
        steps.append(WalkForwardStep(
            season=int(season), training=_record(c, f"seasons before {season}", train, train, index),
            priced=record, best_cutoff=float(c.cutoffs[best]), best_cost=float(season_costs[best]),
            reference_cost=reference_cost, expected_range=spread,
            flag=bool(record.cost_per_occasion > spread[1])))
    later = h.evaluated & (h.season > h.seasons[0])
    pooled, _, _ = _period_costs(c, later, h.training)
    best = int(lowest(pooled))
    total = float(sum(s.priced.cost for s in steps))
    reference = float(sum(s.reference_cost for s in steps))
    return WalkForward(steps=tuple(steps), total_cost=total, in_sample_cutoff=float(c.cutoffs[best]),
                       in_sample_cost=float(pooled[best]), optimism=total - float(pooled[best]),
                       reference_cost=reference, savings=reference - total,
                       flagged_seasons=tuple(s.season for s in steps if s.flag))


def _choose_on(c: _Context, mask: np.ndarray, key: int,
               target_occasions: int) -> tuple[int, tuple[float, float]]:
    """Cutoff index chosen by the objective (the lowest mean season cost, by default) over replicates
    of the ``mask`` period, and
    the 90% range of the cost per occasion at it over a period of ``target_occasions`` occasions.

    For a period longer than a season, whole replicate seasons are joined (the nearest whole
    number of them); for a shorter one the spread of one season about its mean is widened by
    sqrt(season length / period length), as for the mean of independent blocks (an approximation).
    """
    h = dataclasses.replace(c.history, evaluated=mask, validation=np.zeros_like(mask))
    resampler = Resampler(h, c.calendar, c.mean_block, c.window_days)
    pricer = c.pricer(h)
    model = np.concatenate([pricer(rows).model
                            for rows in resampler.blocks(c.seed, c.n_rep, SELECTION_STREAM, key)])
    # as the core chooses (decision.decide)
    index = int(lowest(season_cost_columns(model)[OBJECTIVE_COLUMN[c.objective]]))
    per_occasion = model[:, index] / c.calendar.n_occasions
    ratio = target_occasions / c.calendar.n_occasions
    if ratio >= 1:
        k = int(round(ratio))
        groups = per_occasion[: per_occasion.size // k * k].reshape(-1, k).mean(axis=1)
        lo, hi = np.quantile(groups, [1 - FLAG_QUANTILE, FLAG_QUANTILE])
    else:
        centre = per_occasion.mean()
        spread = np.quantile(per_occasion, [1 - FLAG_QUANTILE, FLAG_QUANTILE]) - centre
        lo, hi = centre + spread / np.sqrt(ratio)
    return index, (float(lo), float(hi))


def _period_costs(c: _Context, mask: np.ndarray, known: np.ndarray) -> tuple[np.ndarray, float, int]:
    """What the ``mask`` period cost: at every cutoff (n_cutoffs,), under the reference rule, and
    over how many occasions.

    ``known`` is the period the reference rule may learn from (the seasonal rate's months). Without
    rules, the period's historical occasions are priced with the ``[costs]`` matrix; with rules,
    each season of the period is laid on the priced calendar and played (see :func:`select_honestly`).
    """
    h = c.history
    learnt = dataclasses.replace(h, evaluated=known, validation=np.zeros_like(known))
    if c.rules is None:
        counts = contingency.count_at_cutoffs(h.p[mask], h.event[mask], c.cutoffs)
        actions = baseline_actions(learnt, c.costs)[c.reference]
        reference = float(occasion_costs(actions[mask], h.event[mask], c.costs).sum())
        return price(counts, c.costs), reference, int(mask.sum())
    rows = _seasons_on_calendar(h, mask, c.calendar)
    block = c.pricer(learnt)(rows)
    reference = float(block.baselines[:, BASELINES.index(c.reference)].sum())
    return block.model.sum(axis=0), reference, int(rows.size)


def _seasons_on_calendar(history: History, mask: np.ndarray, calendar: Calendar) -> np.ndarray:
    """Each season of the ``mask`` period laid on the calendar: (n_seasons, n_occasions) history
    rows, each calendar day taking the season's ``mask`` occasion nearest to it in day of season."""
    out = []
    for season in np.unique(history.season[mask]):
        rows = np.flatnonzero(mask & (history.season == season))
        out.append(rows[nearest_position(history.day_of_season[rows], calendar.day_of_season)])
    return np.stack(out)


def _record(c: _Context, period: str, mask: np.ndarray, known: np.ndarray, index: int) -> PeriodRecord:
    """The period's classification matrix and rates at the chosen cutoff, and what it cost."""
    history, cutoff = c.history, float(c.cutoffs[index])
    counts = contingency.count_at_cutoffs(history.p[mask], history.event[mask], np.array([cutoff]))[0]
    r = rates.rates(counts)
    costs, _, n_priced = _period_costs(c, mask, known)
    cost = float(costs[index])
    n = int(mask.sum())
    dates = history.dates[mask]
    return PeriodRecord(period=period, start=str(dates[0]), end=str(dates[-1]), n_occasions=n,
                        cutoff=cutoff, hits=int(counts.hits), false_alarms=int(counts.false_alarms),
                        misses=int(counts.misses), correct_negatives=int(counts.correct_negatives),
                        hit_rate=float(r.hit_rate), specificity=float(r.specificity),
                        miss_rate=float(r.miss_rate), false_alarm_rate=float(r.false_alarm_rate),
                        cost=cost, cost_per_occasion=cost / n_priced, n_priced=n_priced)
