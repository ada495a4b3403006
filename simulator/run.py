"""One path through a run: the Python interface, which the command line calls.

``run(scenario)`` reads the history, draws the replicate seasons, prices every strategy on them, and
returns a :class:`~simulator.results.RunResult` holding numbers only (no files are written here; see
``account/outputs.py``).

The pricing is cut into tasks (``tasks/``), each a fixed chunk of
:data:`~simulator.tasks.work.CHUNK_BLOCKS` seeded replicate blocks for a group of sites, and run by
an executor of :mod:`simulator.execution` (this process, local worker processes or a Dask
cluster). A task returns the season costs of its replicates; they are
put together site by site in block order, so the results are the same bytes whatever runs them.

With a site column the history holds many sites, replayed jointly (:class:`Resampler`). Each site
is priced with its own costs and operating rules and gets its own decision (:class:`SiteResult`);
the run's own numbers (``model_cost``, ``decision``, ``table``: what ``summary.json`` and
``cutoffs.csv`` hold) are then those of the portfolio under one common cutoff, the total over all
sites, and :class:`Portfolio` sets each site's own cutoff beside it.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from .analysis.forecasts import compare_forecasts
from .analysis.calibration import calibrate
from .analysis.selection import select_honestly
from .analysis.rules_sensitivity import of_operations_run
from .analysis.sensitivity import NOTES, of_run
from .analysis.site_prices import portfolio_prices
from .analysis.site_sensitivity import (PortfolioSensitivity, portfolio_sensitivity, portfolio_verdict,
                                        shared_inputs)
from .analysis.stress import run_stress
from .analysis.verdict import RULES, Verdict, best_rule, judge, season_costs, together
from .execution.pool import prepare
from .inputs.errors import InputError
from .inputs.history import History, read_history
from .inputs.scenario import Scenario, check_workload, read_scenario
from .inputs.scenario_costs import break_even_probability, cost_warnings
from .inputs.scenario_types import BASELINES
from .notation import decimals
from .analysis.cost_spread import cost_spread
from .pricing.costs import MODEL_AT_MEANS, PricedBlock, occasion_costs
from .pricing.counts import from_extras
from .pricing.decision import decide
from .pricing.tables import cutoff_table, forecast_quality, history_table, with_replicates
from .pricing.value import relative_value_from_costs
from .replay.blocklength import optimal_block_length
from .replay.resample import Calendar, Resampler, block_rng, calendar_warnings, season_calendar
from .results import Portfolio, RunResult, SiteResult
from .rules.operating_rules import make_rules
from .rules.operations_result import OperationsResult
from .rules.simpy_model import UserProcess
from .tasks.plan import _alongside, _executor, _price_all
from .tasks.sites import _checked_sites, _sites_table, _Totals
from .tasks.work import (_INTERVAL_STREAM, Progress, _events_without_action, _forecast_costs, _forget, _pricer,
                         _Work)

__all__ = ["run", "run_history"]


def run(scenario: Scenario | str | Path, history_path: str | Path | None = None, *,
        replicates: int | None = None, seed: int | None = None, progress: Progress | None = None,
        processes: Sequence[UserProcess] = (), walk_forward: bool | None = None,
        workers: int | None = 1, cluster=None) -> RunResult:
    """Replay the history under every cutoff and price each replicate season.

    Parameters
    ----------
    scenario : a validated :class:`~simulator.inputs.scenario.Scenario`, or the path of a scenario file.
    history_path : overrides the scenario's ``[history] path``.
    replicates, seed : override ``[simulation]``.
    progress : optional callback ``progress(step, done, total)``.
    processes : user-written simpy processes added to the ``[operations]`` rules (see
        :class:`simulator.rules.simpy_model.Site`); every season is then played by the simpy model (slow)
        in this process, or on the cluster when one is given.
    walk_forward : choose the cutoff season by season on earlier seasons and price the next
        (default: the scenario's ``[simulation] walk_forward``).
    workers : local worker processes for the replicate seasons (None: every core; the command line's
        default). Runs too small to be worth it stay in this process. Results never depend on it.
    cluster : the address of an existing Dask scheduler (``"tcp://host:8786"``) or a
        ``distributed.Client``; the replicate seasons are then priced there.
    """
    if not isinstance(scenario, Scenario):
        scenario = read_scenario(scenario)
    if replicates is not None:
        check_workload(int(replicates), len(scenario.cutoffs), "--replicates", len(scenario.forecasts))
    prepare(workers, cluster)  # worker processes get ready while the history is read
    history = read_history(scenario, history_path)
    return run_history(scenario, history, replicates=replicates, seed=seed, progress=progress,
                       processes=processes, walk_forward=walk_forward, workers=workers, cluster=cluster)


def run_history(scenario: Scenario, history: History, *, replicates: int | None = None,
                seed: int | None = None, progress: Progress | None = None,
                processes: Sequence[UserProcess] = (), walk_forward: bool | None = None,
                workers: int | None = 1, cluster=None) -> RunResult:
    """As :func:`run`, on a history already read (:func:`~simulator.inputs.history.read_history`, or
    :func:`~simulator.inputs.history.history_from_frame` for a data frame)."""
    sim = scenario.simulation
    replicates = sim.replicates if replicates is None else int(replicates)
    seed = sim.seed if seed is None else int(seed)
    if history.has_sites:
        return _run_sites(scenario, history, replicates=replicates, seed=seed, progress=progress,
                          processes=processes, walk_forward=walk_forward, workers=workers, cluster=cluster)
    costs = scenario.costs
    cutoffs = scenario.cutoffs
    p_star = break_even_probability(costs)
    calendar = season_calendar(history, scenario.season)
    n_forecasts = max(1, len(history.forecast_names))
    if n_forecasts > 1 and sim.mode == "calibrated":
        raise InputError(f'{_label(scenario)} [simulation] mode: "calibrated" draws the outcomes from one '
                         'forecast and cannot compare several; use mode = "replay" with [forecasts]')

    mean_block = choose_mean_block(history, [scenario], calendar)
    resampler = Resampler(history, calendar, mean_block, sim.window_days)
    calibration = calibrate(history) if sim.mode == "calibrated" else None
    if calibration is not None and scenario.operations is not None:
        raise InputError(f"{_label(scenario)} [simulation] mode: \"calibrated\" does not work with "
                         '[operations] yet; use mode = "replay"')
    work = _Work(resampler=resampler, scenarios=(scenario,), cutoffs=cutoffs, seed=seed,
                 replicates=replicates, processes=tuple(processes),
                 outcome_probability=None if calibration is None else calibration.probability,
                 n_forecasts=n_forecasts, keep_counts=scenario.operations is None and calibration is None)
    try:
        rules_pricer = _pricer(work, 0) if scenario.operations is not None else None  # checks the rules
        priced: dict[int, PricedBlock] = {}
        with _executor(work, workers, cluster) as executor:
            _price_all(work, executor, lambda k, block: priced.__setitem__(k, block), None, progress)
    finally:
        _forget(work)
    block, forecast_costs = _forecast_costs(priced[0], n_forecasts)
    at_means = block.extras.pop(MODEL_AT_MEANS, None)  # costs drawn per replicate: the model at the means
    counts, extras = from_extras(block.extras, block.n_events)
    model_cost = block.model
    baseline_cost = {name: block.baselines[:, i] for i, name in enumerate(BASELINES)}
    operations = None
    if scenario.operations is not None:
        operations = OperationsResult(rules=rules_pricer.rules, n_cutoffs=cutoffs.size, extras=extras,
                                      section=scenario.operations)
        if rules_pricer.draws_prices:  # prices drawn per replicate: the same seasons at the mean prices
            at_means = operations.season_cost_at()[:, : cutoffs.size]

    seasons_per_history = max(1, round(history.n_evaluated / calendar.n_occasions))
    decision = decide(model_cost, baseline_cost[sim.reference], cutoffs, seasons_per_history,
                      block_rng(seed, 0, _INTERVAL_STREAM), scenario.decision.objective)
    spread = (None if at_means is None else
              cost_spread(model_cost[:, decision.recommended_index], at_means[:, decision.recommended_index]))
    table = cutoff_table([(history, costs)], cutoffs, p_star, model_cost, baseline_cost[sim.reference])
    if operations is not None:
        table = _priced_by_rules(pd.concat([table, pd.DataFrame(operations.per_cutoff())], axis=1), baseline_cost)
    quality, value_curve, reliability = forecast_quality(history, cutoffs)
    warnings = (tuple(history.warnings) + tuple(calendar_warnings(calendar, scenario.season, _label(scenario)))
                + tuple(cost_warnings(costs, scenario.decision.action)))
    selection = select_honestly(history, calendar, cutoffs, costs, sim.reference, mean_block,
                                sim.window_days, seed, replicates,
                                sim.walk_forward if walk_forward is None else walk_forward,
                                label=_label(scenario),
                                rules=scenario if scenario.operations is not None else None,
                                objective=scenario.decision.objective)
    rule = best_rule({name: float(baseline_cost[name].mean()) for name in RULES})  # ignores the forecast

    main_seasons = season_costs(history, calendar, cutoffs, scenario)

    def judge_one(own: History) -> Verdict:
        """Whether acting on ``own``'s forecast beats the best rule without it, on held-out seasons
        (the rules' costs, which ignore the forecast, taken from the main forecast's)."""
        return judge(season_costs(own, calendar, cutoffs, scenario, rules_of=main_seasons), calendar.n_occasions,
                     rule)

    verdict = judge(main_seasons, calendar.n_occasions, rule)
    comparison = None
    if n_forecasts > 1:
        def check(own: History):
            if own is history:  # the main forecast's check is the run's own
                return None if selection is None else selection.validation
            if not own.has_validation:
                return None
            return select_honestly(own, calendar, cutoffs, costs, sim.reference, mean_block, sim.window_days,
                                   seed, replicates, False, label=_label(scenario),
                                   rules=scenario if scenario.operations is not None else None,
                                   objective=scenario.decision.objective).validation

        comparison = compare_forecasts(
            history, [model_cost, *forecast_costs], baseline_cost[sim.reference], cutoffs,
            [column for _, column in scenario.forecast_columns],
            lambda cost: (decision if cost is model_cost else
                          decide(cost, baseline_cost[sim.reference], cutoffs, seasons_per_history,
                                 block_rng(seed, 0, _INTERVAL_STREAM), scenario.decision.objective)),
            check, main_quality=(quality, value_curve),
            judge_one=lambda own: verdict if own is history else judge_one(own))
    stress = None
    if scenario.stress:  # with several [forecasts], each priced at its own cutoff in every case
        stress = run_stress(scenario, history, calendar=calendar, resampler=resampler, cutoffs=cutoffs,
                            seed=seed, replicates=replicates, decision=decision,
                            base_mean_cost=float(model_cost[:, decision.recommended_index].mean()),
                            seasons_per_history=seasons_per_history,
                            interval_rng=lambda: block_rng(seed, 0, _INTERVAL_STREAM),
                            outcome_probability=None if calibration is None else calibration.probability,
                            progress=progress, own_cutoffs=() if comparison is None else [
                                f.decision.recommended_index for f in comparison.forecasts])
        warnings += tuple(w for case in stress for w in case.warnings)
    unprotected = (_events_without_action(work, decision.recommended_index)
                   if scenario.event.hazard and calibration is None else None)
    judged = rule if verdict.n_seasons >= 2 else None
    sensitivity = (of_run(scenario, history, calendar, counts, decision.near_optimal_band, judged)
                   if operations is None else  # the rules' prices moved instead of the [costs]
                   of_operations_run(scenario, history, calendar, operations, decision.near_optimal_band, judged))
    return RunResult(scenario=scenario, history=history, calendar=calendar, cutoffs=cutoffs,
                     replicates=replicates, seed=seed, mean_block_days=mean_block * calendar.spacing_days,
                     theoretical_cutoff=p_star, decision=decision, model_cost=model_cost,
                     baseline_cost=baseline_cost, table=table, quality=quality,
                     value_curve=value_curve, reliability=reliability, warnings=warnings,
                     operations=operations, stress=stress, calibration=calibration,
                     selection=selection, comparison=comparison, verdict=verdict,
                     events_without_action=unprotected, replicate_counts=counts, sensitivity=sensitivity,
                     cost_spread=spread)


def _priced_by_rules(table: pd.DataFrame, baseline_cost: dict[str, np.ndarray]) -> pd.DataFrame:
    """The cutoff table of a run under ``[operations]``: every money figure from the rules.

    The rules replace the fixed cost per occasion, so the columns priced by the ``[costs]`` matrix
    on the history (``*historical_cost``, ``net_benefit``) are left empty, and the relative value is
    that of the rules' own mean season costs: V = (min(E_never, E_always) - E_model) /
    (min(E_never, E_always) - E_perfect) (Richardson 2000, "Skill and relative economic value of the
    ECMWF ensemble prediction system", QJRMS 126, 649-667), on the simulated seasons.
    """
    table = table.copy()
    for column in table.columns:
        if column.endswith("historical_cost") or column == "net_benefit":
            table[column] = np.nan
    means = {name: float(cost.mean()) for name, cost in baseline_cost.items()}
    table["relative_value"] = relative_value_from_costs(table["mean_cost"].to_numpy(), means["never_act"],
                                                        means["always_act"], means["perfect"])
    return table


# ------------------------------------------------------------------------------------------------
# many sites

def _run_sites(scenario: Scenario, history: History, *, replicates: int, seed: int,
               progress: Progress | None, processes: Sequence[UserProcess], walk_forward: bool | None,
               workers: int | None, cluster) -> RunResult:
    """A run with a site column: every site priced on the joint replicates, then the portfolio."""
    sim = scenario.simulation
    label = _label(scenario)
    if sim.mode == "calibrated":
        raise InputError(f'{label} [simulation] mode: "calibrated" draws each site\'s outcomes on its own '
                         'and would break the sites\' joint weather; use mode = "replay" with a site column')
    names = history.site_names
    scenarios = tuple(scenario.for_site(name) for name in names)
    cutoffs = scenario.cutoffs
    calendar = season_calendar(history, scenario.season)
    mean_block = choose_mean_block(history, scenarios, calendar)
    resampler = Resampler(history, calendar, mean_block, sim.window_days)
    moved = _with_sensitivity(scenarios)  # with fixed costs each site's sensitivity needs its counts
    work = _Work(resampler=resampler, scenarios=scenarios, cutoffs=cutoffs, seed=seed,
                 replicates=replicates, processes=tuple(processes), outcome_probability=None,
                 n_forecasts=max(1, len(history.forecast_names)), keep_counts=moved == "costs",
                 shared_inputs=tuple(shared_inputs(scenario, name) for name in names) if moved else ())
    total = _Totals(len(names))
    results: dict[int, SiteResult] = {}
    forward = sim.walk_forward if walk_forward is None else walk_forward
    check = history.has_validation or forward
    stars = {break_even_probability(s.costs) for s in scenarios}
    p_star = stars.pop() if len(stars) == 1 else float("nan")

    def tables_of_history():  # the portfolio's, from all sites' rows
        parts = [(history.for_site(k), s.costs) for k, s in enumerate(scenarios)]
        return forecast_quality(history, cutoffs), history_table(parts, cutoffs, p_star)

    try:
        checked = False
        for k, site_scenario in enumerate(scenarios):  # the rules of every site, checked before work
            if site_scenario.operations is not None:
                if not checked:  # what every site's rules need of the history
                    _pricer(work, k)
                    checked = True
                make_rules(site_scenario.operations, calendar.dates, site_scenario.season.weekdays,
                           f'{label} [sites."{names[k]}"]')
        with _executor(work, workers, cluster, walk_forward=forward) as executor:
            scored = _alongside(executor, tables_of_history)
            _price_all(work, executor, None, (results, total), progress)
            sites = tuple(results[k] for k in range(len(names)))
            if check or scenario.stress:
                sites = _checked_sites(work, executor, sites, check, forward, label, progress)
    finally:
        _forget(work)
    joint_dates = resampler.n_dates

    reference = sim.reference
    model_cost, baseline_matrix = total.model, total.baselines
    baseline_cost = {name: baseline_matrix[:, i] for i, name in enumerate(BASELINES)}
    seasons_per_history = max(1, round(joint_dates / calendar.n_occasions))
    decision = decide(model_cost, baseline_cost[reference], cutoffs, seasons_per_history,
                      block_rng(seed, 0, _INTERVAL_STREAM), scenario.decision.objective)
    (quality, value_curve, reliability), table = scored()
    table = with_replicates(table, model_cost, baseline_cost[reference])
    own_cost = sites[0].model_cost.copy()
    for site in sites[1:]:
        own_cost += site.model_cost
    common = decision.recommended_index
    portfolio = Portfolio(site_column=str(scenario.history.site_column), sites=sites,
                          common_cutoff=float(cutoffs[common]), own_cost=own_cost,
                          common_cost=model_cost[:, common], reference_cost=baseline_cost[reference],
                          table=_sites_table(sites, common))

    warnings = list(history.warnings) + calendar_warnings(calendar, scenario.season, label)
    if any(site.scenario.costs == scenario.costs for site in sites):
        warnings += cost_warnings(scenario.costs, scenario.decision.action)
    for site in sites:  # the warnings of sites with costs of their own
        if site.scenario.costs != scenario.costs:
            warnings += site.warnings
    for site in sites:
        warnings += tuple(f'site "{site.name}": {w}' for case in site.stress or () for w in case.warnings)
    unprotected = _events_without_action(work, common) if scenario.event.hazard else None
    joint = together([site.season_costs for site in sites])  # one cutoff and one rule for every site
    verdict = None if joint is None else judge(joint, calendar.n_occasions * len(sites),
                                               best_rule({name: float(baseline_cost[name].mean()) for name in RULES}))
    return RunResult(scenario=scenario, history=history, calendar=calendar, cutoffs=cutoffs,
                     replicates=replicates, seed=seed, mean_block_days=mean_block * calendar.spacing_days,
                     theoretical_cutoff=p_star, decision=decision, model_cost=model_cost,
                     baseline_cost=baseline_cost, table=table, quality=quality,
                     value_curve=value_curve, reliability=reliability,
                     warnings=tuple(warnings), portfolio=portfolio, events_without_action=unprotected,
                     verdict=verdict, sensitivity=_portfolio_sensitivity(scenario, sites, total.columns, calendar,
                                                                         work.shared_inputs, verdict))


def _with_sensitivity(scenarios: Sequence[Scenario]) -> str | None:
    """What a run with a site column moves to see which estimate matters: ``"costs"`` with fixed
    costs at every site (its sites then keep their replicate counts), ``"operations"`` with
    ``[operations]`` at every site (the rules' prices, on the played seasons); None when some sites
    have rules and others not (the note ``NOTES["mixed"]``)."""
    if all(s.operations is None for s in scenarios):
        return "costs"
    return "operations" if all(s.operations is not None for s in scenarios) else None


def _portfolio_sensitivity(scenario: Scenario, sites: Sequence[SiteResult], columns: np.ndarray | None,
                           calendar: Calendar, shared: Sequence[Sequence[str]],
                           verdict: Verdict | None) -> PortfolioSensitivity:
    """Which estimate matters for the portfolio and at each site: the scenario's costs, or under
    ``[operations]`` its rules' prices; a note when only some sites have rules."""
    if columns is None:
        return PortfolioSensitivity(costs=(), note=NOTES["mixed"])
    names, own = [site.name for site in sites], [site.sensitivity for site in sites]
    if sites[0].scenario.operations is not None:
        return portfolio_prices(scenario, names, own, shared, columns,
                                None if verdict is None or verdict.n_seasons < 2 else verdict.use_forecast)
    moved_verdict = portfolio_verdict(scenario, [(site.name, site.scenario, site.season_table) for site in sites],
                                      calendar)
    return portfolio_sensitivity(scenario, names, own, columns, moved_verdict)


def _label(scenario: Scenario) -> str:
    return str(scenario.source) if scenario.source else "scenario"


def choose_mean_block(history: History, scenarios: Sequence[Scenario], calendar: Calendar) -> float:
    """Mean run length of the replay, in occasions: fixed by ``block_days`` (days of the priced
    season's usual spacing, :attr:`Calendar.spacing_days`), or by Politis and White (2004).

    The automatic choice targets the variance of a season's total cost, so it is applied to the
    series of the cost per date: each site (``scenarios`` holds one per site, in site order; one for
    a history without sites) acting at its break-even probability, or, when its costs have none, its
    outcome series, summed over the sites with a row on that date. One run length serves every site,
    as the runs of dates are shared. With several ``[forecasts]`` it is the longest of the lengths
    each forecast's series gives, so the order they are listed in changes no replicate.
    """
    block_days = scenarios[0].simulation.block_days
    if block_days != "auto":
        return max(1.0, float(block_days) / calendar.spacing_days)
    evaluated = history.evaluated
    dates, index = np.unique(history.dates[evaluated], return_inverse=True)
    site = history.site[evaluated] if history.has_sites else np.zeros(index.size, dtype=np.int64)
    event = history.event[evaluated]
    lengths = []
    for j in range(max(1, len(history.forecast_names))):
        p = history.with_forecast(j).p[evaluated]
        total = np.zeros(dates.size)
        for k, scenario in enumerate(scenarios):
            own = site == k
            p_star = break_even_probability(scenario.costs)
            series = (event[own].astype(float) if np.isnan(p_star)
                      else occasion_costs(decimals.reaches(p[own], p_star), event[own], scenario.costs))
            total += np.bincount(index[own], weights=series, minlength=dates.size)
        lengths.append(float(optimal_block_length(total)))
    return max(1.0, max(lengths))
