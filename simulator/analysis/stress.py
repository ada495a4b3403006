"""Stress tests: the coming season priced again in a changed world.

Each ``[[stress]]`` case of the scenario changes one or more things, and the season is priced again
for every strategy and cutoff:

- ``event_rate``: the event happens that many times as often. The replay is tilted towards (or
  away from) runs of history that contain events, so replicates stay real stretches of history
  (:func:`~simulator.analysis.tilt.tilt_to_rate`); selecting runs by their outcomes leaves the
  forecast's distribution given the outcome as it was, a pure change of base rate. In the
  calibrated mode the base replicates are kept and their outcomes drawn with the odds rescaled
  (:func:`~simulator.analysis.tilt.odds_shift_to_rate`), the same kind of change. Two views are
  priced: the forecast's probabilities as issued (it keeps its discrimination but is no longer
  calibrated, as when the world changes under a model), and the probabilities adapted to the new
  rate by Bayes' rule (:func:`~simulator.analysis.probability_changes.prior_shift`).
- ``costs`` / ``cost_multipliers``: new values or factors for cost keys, laid over each replicate
  season's costs: where the base case draws a cost from its range, over that season's draw.
- ``skill``: probabilities pulled towards the base rate
  (:func:`~simulator.analysis.probability_changes.degrade`); ``noise``: normal noise of that
  standard deviation added on the log-odds scale, fresh for every replicate occasion.
- ``block_days``: a longer mean run of consecutive occasions (more persistent weather).
- ``worst_seasons``: replicates built only from the k historical seasons with the highest cost per
  occasion at the base case's recommended cutoff.

Common random numbers: every case draws its replicates from the base case's seeds, and the costs
and prices given as ranges from the base case's streams (the case's replicate k has the base's draw
for replicate k), so a case that changes only costs or the forecast is priced on exactly the base
replicates (its differences from the base are paired), and ``event_rate = 1`` reproduces the base
case exactly. Cases that change how replicates are built (tilt, block length, seasons) reuse the
same random numbers, which keeps them close to the base without making them identical.
"""

from __future__ import annotations

import dataclasses
import hashlib
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..notation import decimals
from ..notation.prose import money
from ..pricing.costs import PricedBlock, occasion_costs
from ..pricing.decision import OBJECTIVE_NAMES, Decision, Distribution, cheaper, decide, distribution, objective_cost
from ..inputs.errors import InputError
from ..inputs.history import History
from ..pricing.draws import CostDrawer
from ..rules.price_draws import PriceDraws
from ..rules.vectorised_model import OperationsPricer
from ..replay.resample import Calendar, Resampler
from ..inputs.scenario import Scenario
from ..inputs.scenario_changes import StressCase
from ..inputs.scenario_costs import Costs, break_even_probability
from ..inputs.scenario_types import BASELINES
from .probability_changes import shift_odds, view_probabilities
from .replicate_pricer import ReplicatePricer
from .tilt import Tilt, odds_shift_to_rate, tilt_to_rate
from .winners import Contest, contest

__all__ = ["EventRateCheck", "StressView", "StressResult", "run_stress"]

REACHED_SE = 3.0  # a target counts as reached within this many standard errors


# ------------------------------------------------------------------------------------------------
# results

@dataclass(frozen=True)
class EventRateCheck:
    """How far the tilt took the replicates' event rate.

    ``base_rate`` is the event rate of the case's untilted replicates (the same seeds), ``target``
    ``multiplier`` times it, ``achieved`` the rate of the case's replicates with its standard error
    over replicates; ``lowest``/``highest`` what the history can supply; ``note`` says in words when
    the target was not reached.
    """

    multiplier: float
    base_rate: float
    target: float
    achieved: float
    standard_error: float
    lowest: float
    highest: float
    reached: bool
    note: str


@dataclass(frozen=True)
class StressView:
    """One way of pricing a case: the strategies' season costs and the cutoff re-optimised.

    ``probabilities`` is "as_forecast" or "adapted" (moved to the new event rate). ``strategies``
    holds the model at the base case's recommended cutoff (``model``) and every baseline.
    ``extra_cost`` is the mean season cost at the base cutoff minus the base case's; ``saved_by_moving``
    what moving to the case's own best cutoff (chosen by the run's ``[decision] objective``, as the
    base case's) saves on average (negative when a risk objective moves to a cutoff dearer on
    average), and ``prob_moving_saves`` in how many replicate seasons it is cheaper. ``savings`` and ``prob_saving`` are against the reference, at the base
    cutoff. ``decision`` is the core's decision for the case (best cutoff, its interval, bands,
    break-even ranges). Arrays are over replicates, ``mean_cost`` over cutoffs.
    """

    probabilities: str
    base_cutoff: float
    strategies: dict[str, Distribution]
    extra_cost: float
    best_cutoff: float
    best_cost: Distribution
    saved_by_moving: float
    prob_moving_saves: float
    savings: Distribution
    prob_saving: float
    decision: Decision
    headline: str
    mean_cost: np.ndarray
    model_cost_at_base: np.ndarray
    model_cost_at_best: np.ndarray
    baseline_cost: dict[str, np.ndarray]
    # several [forecasts]: each at its own recommended cutoff of the base case, and the winner
    forecasts: Contest | None = None


@dataclass(frozen=True)
class StressResult:
    name: str
    changes: dict
    costs: Costs
    theoretical_cutoff: float
    mean_block_days: float
    seasons_used: tuple[int, ...] | None
    event_rate: EventRateCheck | None
    views: tuple[StressView, ...]
    warnings: tuple[str, ...] = field(default=())


# ------------------------------------------------------------------------------------------------
# running the cases

def run_stress(scenario: Scenario, history: History, *, calendar: Calendar, resampler: Resampler,
               cutoffs: np.ndarray, seed: int, replicates: int, decision: Decision,
               base_mean_cost: float, seasons_per_history: int,
               interval_rng: Callable[[], np.random.Generator],
               outcome_probability: np.ndarray | None = None,
               progress: Callable[[str, int, int], None] | None = None,
               own_cutoffs: Sequence[int] = ()) -> tuple[StressResult, ...]:
    """Price every ``[[stress]]`` case of ``scenario``, in order.

    ``resampler``, ``seed``, ``replicates`` and ``decision`` are the base run's, ``base_mean_cost``
    its mean season cost at its recommended cutoff;
    ``interval_rng()`` gives the generator the base run used for the interval of its cutoff (so the
    cases' intervals share its random numbers). ``outcome_probability`` is set in the calibrated mode.

    ``own_cutoffs``: with several ``[forecasts]``, each forecast's recommended cutoff index of the
    base case, in the order listed (``history.forecast_names``). Every forecast is then priced on
    the case's replicates (common random numbers: the same rows, tilt and noise draws) at its own
    cutoff, and each view says which one wins (:attr:`StressView.forecasts`).
    """
    _check_cases(scenario)
    base = _Base(scenario, history, calendar, resampler, cutoffs, seed, replicates, decision,
                 float(base_mean_cost), seasons_per_history,
                 interval_rng, outcome_probability, progress, tuple(int(i) for i in own_cutoffs))
    return tuple(_run_case(case, base) for case in scenario.stress)


def _check_cases(scenario: Scenario) -> None:
    """Refuse the changes a scenario's cases cannot have, naming the case."""
    label = str(scenario.source) if scenario.source else "scenario"
    for case in scenario.stress:
        where = f'{label} [[stress]] "{case.name}"'
        if scenario.operations is None and (case.operations or case.operations_multipliers):
            raise InputError(f"{where}: operations and operations_multipliers change operating-rule "
                             "prices; add an [operations] section or remove them")
        if scenario.operations is not None and case.noise is not None:
            raise InputError(f"{where}: noise is not played under [operations] rules yet; use skill "
                             "to make the forecast poorer")


@dataclass(frozen=True)
class _Base:
    scenario: Scenario
    history: History
    calendar: Calendar
    resampler: Resampler
    cutoffs: np.ndarray
    seed: int
    replicates: int
    decision: Decision
    mean_cost: float  # the base case's mean season cost at its recommended cutoff
    seasons_per_history: int
    interval_rng: Callable[[], np.random.Generator]
    outcome_probability: np.ndarray | None
    progress: Callable[[str, int, int], None] | None
    own_cutoffs: tuple[int, ...] = ()  # several [forecasts]: each one's base cutoff index, main first

    @property
    def forecasts(self) -> list[np.ndarray]:
        """Each forecast's probabilities (after flip), the main one first; one with one forecast."""
        if len(self.own_cutoffs) < 2:
            return [self.history.p]
        return [self.history.with_forecast(j).p for j in range(len(self.own_cutoffs))]

    @property
    def expected_event(self) -> np.ndarray:
        """Each row's event (replay) or its recalibrated probability (calibrated mode)."""
        if self.outcome_probability is None:
            return self.history.event.astype(float)
        return np.asarray(self.outcome_probability, dtype=float)


def _run_case(case: StressCase, base: _Base) -> StressResult:
    history, seed, replicates = base.history, base.seed, base.replicates
    costs = case.changed_costs(base.scenario.costs)
    warnings: list[str] = []
    sampler, seasons_used = _case_resampler(case, base, warnings)

    tilt, base_rate, new_rate = None, None, None
    outcome_probability = base.outcome_probability
    if case.event_rate is not None:
        expected = np.concatenate([base.expected_event[rows] for rows in sampler.blocks(seed, replicates)])
        base_rate = float(expected.mean())
        new_rate = case.event_rate * base_rate
        if case.event_rate != 1 and outcome_probability is None:  # replay: draw other runs
            tilt = tilt_to_rate(sampler, base.expected_event, min(new_rate, 1.0), seed)
            sampler = sampler.tilted(tilt.weights)
        elif case.event_rate != 1:  # calibrated: the same runs, outcomes drawn at shifted odds
            tilt = odds_shift_to_rate(expected, min(new_rate, 1.0))
            outcome_probability = shift_odds(outcome_probability, tilt.theta)
        if tilt is not None and not tilt.reachable:
            new_rate = tilt.rate

    # the probabilities of each view, for each forecast: as forecast (perhaps degraded), and
    # adapted to the new rate
    training_rate = float(history.event[history.training].mean())
    rates = None if case.event_rate is None else (base_rate, new_rate)
    each = [view_probabilities(p, training_rate, case.skill, rates) for p in base.forecasts]
    views = each[0]
    noise_key = int.from_bytes(hashlib.sha256(case.name.encode()).digest()[:4], "big")
    # the costs and prices the base draws per replicate season from ranges, drawn again on the same
    # streams (common random numbers) with the case's changes laid over them
    drawer = CostDrawer(base.scenario.costs, base.scenario.cost_ranges(), seed, changes=case.changes_of)
    if base.scenario.operations is None:
        pricers = [[ReplicatePricer(history, base.cutoffs, costs, seed=seed, forecast=p,
                                    noise_sd=case.noise or 0.0, noise_key=noise_key,
                                    outcome_probability=outcome_probability, drawer=drawer, at_means=False)
                    for _, p in views_of]
                   for views_of in each]
    else:  # every season played under the rules, with the case's prices and forecast
        section = base.scenario.operations
        rules = base.scenario.model_copy(update={"costs": costs, "operations": case.changed_operations(section)})
        prices = PriceDraws(section, drawer)
        pricers = [[OperationsPricer(dataclasses.replace(history, p=p), base.calendar, base.cutoffs, rules,
                                     prices=prices) for _, p in views_of] for views_of in each]

    parts: list[list[PricedBlock]] = [[] for _ in views]
    later: list[list[list[np.ndarray]]] = [[[] for _ in views] for _ in each[1:]]  # at each own cutoff
    done = 0
    for b, rows in enumerate(sampler.blocks(seed, replicates)):  # drawn once for every forecast
        for pricer, store in zip(pricers[0], parts):
            store.append(pricer(rows, b))
        for j, (own, stores) in enumerate(zip(pricers[1:], later), 1):
            for pricer, store in zip(own, stores):
                store.append(pricer(rows, b).model[:, base.own_cutoffs[j]])
        done += rows.shape[0]
        if base.progress is not None:
            base.progress(f"stress: {case.name}", done, replicates)

    rate_check = None
    if case.event_rate is not None:
        n_events = np.concatenate([blk.n_events for blk in parts[0]])
        rate_check = _rate_check(case, base_rate, tilt, n_events / base.calendar.n_occasions)
        if rate_check.note:
            warnings.append(rate_check.note)

    out_views = []
    for i, ((name, _), store) in enumerate(zip(views, parts)):
        baselines = np.concatenate([blk.baselines for blk in store])
        view = _view(name, case, base, np.concatenate([blk.model for blk in store]),
                     {n: baselines[:, i] for i, n in enumerate(BASELINES)}, rate_check)
        if later:  # several [forecasts]: which one wins this view, each at its own base cutoff
            ranked = contest(base.history.forecast_names, [float(base.cutoffs[k]) for k in base.own_cutoffs],
                             [view.model_cost_at_base] + [np.concatenate(stores[i]) for stores in later],
                             base.scenario.decision.objective)
            view = dataclasses.replace(view, forecasts=ranked,
                                       headline=f"{view.headline} {ranked.sentence(base.scenario.currency)}")
        out_views.append(view)
    return StressResult(name=case.name, changes=case.model_dump(exclude_none=True, exclude={"name"}),
                        costs=costs, theoretical_cutoff=break_even_probability(costs),
                        mean_block_days=sampler.mean_block * base.calendar.spacing_days,
                        seasons_used=seasons_used, event_rate=rate_check, views=tuple(out_views),
                        warnings=tuple(warnings))


def _case_resampler(case: StressCase, base: _Base, warnings: list[str]) -> tuple[Resampler, tuple | None]:
    """The base resampler, or one with the case's mean run length and/or its worst seasons only."""
    if case.worst_seasons is None and case.block_days is None:
        return base.resampler, None
    history = base.history
    mean_block = (max(1.0, case.block_days / base.calendar.spacing_days) if case.block_days is not None
                  else base.resampler.mean_block)
    seasons_used = None
    if case.worst_seasons is not None:
        seasons_used = _worst_seasons(history, base.scenario.costs, list(zip(
            base.forecasts, [float(base.cutoffs[k]) for k in base.own_cutoffs or (base.decision.recommended_index,)])),
            case.worst_seasons)
        if len(seasons_used) < case.worst_seasons:
            warnings.append(f'stress "{case.name}": worst_seasons = {case.worst_seasons} but the history '
                            f"has {len(seasons_used)} seasons; all of them are used")
        keep = history.evaluated & np.isin(history.season, seasons_used)
        history = dataclasses.replace(history, evaluated=keep)
    return Resampler(history, base.calendar, mean_block, base.resampler.window_days), seasons_used


def _rate_check(case: StressCase, base_rate: float, tilt: Tilt | None, rates: np.ndarray) -> EventRateCheck:
    """Compare the replicates' event rates, (n_replicates,), with the case's target."""
    target = case.event_rate * base_rate
    achieved = float(rates.mean())
    se = float(rates.std(ddof=1) / np.sqrt(rates.size))
    if tilt is None:  # event_rate = 1: the base replicates themselves
        return EventRateCheck(multiplier=1.0, base_rate=base_rate, target=target, achieved=achieved,
                              standard_error=se, lowest=achieved, highest=achieved, reached=True, note="")
    label = f'stress "{case.name}"'
    tolerance = REACHED_SE * float(np.hypot(se, tilt.standard_error))
    reached = tilt.reachable and abs(achieved - target) <= tolerance
    wanted = (f"an event rate of {target:.3f} ({case.event_rate:g} times the {base_rate:.3f} of the "
              "replicate seasons)")
    note = ""
    if not tilt.reachable:
        limit = f"at most {tilt.highest:.3f}" if target > achieved else f"at least {tilt.lowest:.3f}"
        how = "redrawing runs of the history" if tilt.weights is not None else "shifting the odds"
        note = (f"{label}: {wanted} cannot be reached by {how}, which supplies {limit}; the case is "
                f"priced at {achieved:.3f}")
    elif not reached:
        note = (f"{label}: {wanted} was missed: the replicates reach {achieved:.3f} (Monte Carlo error "
                f"{se:.3f}); use more replicates")
    return EventRateCheck(multiplier=float(case.event_rate), base_rate=base_rate, target=target,
                          achieved=achieved, standard_error=se, lowest=tilt.lowest, highest=tilt.highest,
                          reached=bool(reached), note=note)


def _view(name: str, case: StressCase, base: _Base, model: np.ndarray, baseline_cost: dict[str, np.ndarray],
          rate_check: EventRateCheck | None) -> StressView:
    reference = baseline_cost[base.scenario.simulation.reference]
    cutoffs = base.cutoffs
    objective = base.decision.objective  # the case's cutoff is re-chosen as the base case's was
    decision = decide(model, reference, cutoffs, base.seasons_per_history, base.interval_rng(), objective)
    base_index, best = base.decision.recommended_index, decision.recommended_index
    at_base, at_best = model[:, base_index], model[:, best]
    strategies = {"model": distribution(at_base)}
    strategies.update({n: distribution(c) for n, c in baseline_cost.items()})
    extra = float(at_base.mean() - base.mean_cost)
    saved = float(at_base.mean() - at_best.mean())
    moving = float(cheaper(at_best, at_base).mean())
    savings = reference - at_base
    lowered = (0.0 if objective == "mean"
               else float(objective_cost(at_base, objective) - objective_cost(at_best, objective)))
    headline = _headline(case.name, name, float(cutoffs[base_index]), float(cutoffs[best]), extra, saved,
                         moving, decision.near_optimal_band, base.scenario.currency, objective, lowered)
    if rate_check is not None and not rate_check.reached:
        headline += f" (Event rate aimed at {rate_check.target:.3f}, reached {rate_check.achieved:.3f}.)"
    return StressView(probabilities=name, base_cutoff=float(cutoffs[base_index]), strategies=strategies,
                      extra_cost=extra, best_cutoff=float(cutoffs[best]), best_cost=distribution(at_best),
                      saved_by_moving=saved, prob_moving_saves=moving, savings=distribution(savings),
                      prob_saving=float(cheaper(at_base, reference).mean()), decision=decision, headline=headline,
                      mean_cost=model.mean(axis=0), model_cost_at_base=at_base,
                      model_cost_at_best=at_best, baseline_cost=baseline_cost)


def _headline(case: str, view: str, base: float, best: float, extra: float, saved: float,
              moving: float, band: tuple[float, float], currency: str, objective: str = "mean",
              lowered: float = 0.0) -> str:
    """The sentence a budget holder needs, for one view of one case. With a risk objective the
    case's best cutoff is the one with the lowest value of it, and ``lowered`` is how much moving
    there lowers that value."""
    what = f'"{case}"' + (" (forecast adapted to the new event rate)" if view == "adapted" else "")
    direction = "more" if extra >= 0 else "less"
    text = (f"Keep the cutoff at {base:.2f} and {what} costs {money(abs(extra), currency)} {direction} "
            f"a season on average")
    if objective != "mean":
        measure = OBJECTIVE_NAMES[objective]
        if best == base:
            return text + f"; {base:.2f} keeps the lowest {measure}."
        change = f"{money(abs(saved), currency)} {'less' if saved >= 0 else 'more'} on average"
        if band[0] <= base <= band[1]:
            return text + (f"; {base:.2f} stays within 1% of the lowest {measure} (moving to {best:.2f} "
                           f"would lower it by only {money(lowered, currency)}, at {change}).")
        return text + (f"; moving to {best:.2f} would lower the {measure} by {money(lowered, currency)} "
                       f"a season, at {change}.")
    if best == base:
        return text + f"; {base:.2f} stays the cheapest cutoff."
    if band[0] <= base <= band[1]:
        return text + (f"; {base:.2f} stays within 1% of the lowest cost (moving to {best:.2f} would "
                       f"save only {money(saved, currency)}).")
    share = "of that" if 0 < saved <= extra else "a season"
    return text + (f"; moving to {best:.2f} would save {money(saved, currency)} {share} "
                   f"(cheaper in {moving:.0%} of seasons).")


def _worst_seasons(history: History, costs: Costs, forecasts: Sequence[tuple[np.ndarray, float]],
                   k: int) -> tuple[int, ...]:
    """The k seasons with the highest historical cost per occasion when acting on each forecast of
    ``forecasts`` (probabilities, cutoff) at its cutoff: with several, the sum of their costs per
    occasion, added in ascending order so that the order they are listed in changes nothing."""
    rows = history.evaluated
    labels, index = np.unique(history.season[rows], return_inverse=True)
    each = [np.bincount(index, weights=occasion_costs(decimals.reaches(p[rows], cutoff), history.event[rows], costs))
            / np.bincount(index) for p, cutoff in forecasts]
    per_occasion = each[0] if len(each) == 1 else np.sort(np.stack(each), axis=0).sum(axis=0)
    order = np.argsort(-per_occasion, kind="stable")[:k]
    return tuple(int(s) for s in np.sort(labels[order]))
