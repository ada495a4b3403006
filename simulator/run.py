"""One path through a run: the Python interface, which the command line calls.

``run(scenario)`` reads the history, draws the replicate seasons, prices every strategy on them, and
returns a :class:`RunResult` holding numbers only (no files are written here; see ``account/outputs.py``).

The pricing is cut into tasks, each a fixed chunk of :data:`CHUNK_BLOCKS` seeded replicate blocks
for a group of sites, and run by an executor of :mod:`simulator.parallel` (this process, local
worker processes or a Dask cluster). A task returns the season costs of its replicates; they are
put together site by site in block order, so the results are the same bytes whatever runs them.

With a site column the history holds many sites, replayed jointly (:class:`Resampler`). Each site
is priced with its own costs and operating rules and gets its own decision (:class:`SiteResult`);
the run's own numbers (``model_cost``, ``decision``, ``table``: what ``summary.json`` and
``cutoffs.csv`` hold) are then those of the portfolio under one common cutoff, the total over all
sites, and :class:`Portfolio` sets each site's own cutoff beside it.
"""

from __future__ import annotations

import dataclasses
import threading
import uuid
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Future
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .notation import decimals
from .replay.blocklength import optimal_block_length
from .pricing.costs import MODEL_AT_MEANS, PricedBlock, SeasonPricer, occasion_costs
from .pricing.draws import CostDrawer
from .analysis.cost_spread import CostSpread, cost_spread
from .pricing.decision import Decision, Distribution, decide, distribution
from .inputs.errors import InputError
from .analysis.forecasts import Comparison, compare_forecasts
from .inputs.history import History, read_history
from .rules.operations import OperationsResult, UserProcess, make_rules
from .rules.operations_fast import OperationsPricer
from .execution.parallel import Executor, InlineExecutor, open_executor, prepare
from .replay.resample import BLOCK, Calendar, Resampler, block_rng, calendar_warnings, n_blocks, season_calendar
from .inputs.scenario import (BASELINES, Scenario, break_even_probability, check_workload, cost_warnings,
                       read_scenario)
from .pricing.scoring import cutoff_slots, relative_value_from_costs
from .analysis.selection import Calibration, Selection, calibrate, select_honestly
from .analysis.stress import ReplicatePricer, StressResult, run_stress
from .pricing.tables import cutoff_table, forecast_quality, forecast_scores, history_table, with_replicates
from .analysis.verdict import RULES, SeasonCosts, Verdict, best_rule, judge, season_costs, together

__all__ = ["run", "run_history", "RunResult", "SiteResult", "Portfolio", "Progress", "CHUNK_BLOCKS"]

Progress = Callable[[str, int, int], None]
"""progress(step, done, total): called as work advances; ``cli.py`` turns it into a bar."""

_INTERVAL_STREAM = 1  # seed stream of the bootstrap histories behind the cutoff interval
CHUNK_BLOCKS = 2  # seeded blocks of replicates per task; results never depend on it
INLINE_BELOW = 20_000  # site-replicate seasons (x10 with operating rules) not worth sharing out
MAX_GROUP = 16  # sites priced together on the same draws in one task
SUM_GROUP = 16  # sites whose costs are added together before the groups' sums (fixes the sum's order)
TASKS_PER_WORKER = 4  # aim for at least this many tasks per worker, for balance


@dataclass(frozen=True)
class SiteResult:
    """One site of a run with many sites: its own costs and rules, decision and cutoff table.

    ``model_cost`` is the site's season cost at its own recommended cutoff and ``baseline_cost``
    that of each baseline, each (n_replicates,), on the replicates every site shares (the joint
    replay); ``table`` has the columns of ``cutoffs.csv`` for this site alone. ``missing_dates``
    counts the joint dates the site has no row on (see :mod:`simulator.resample`). ``operations`` is
    the ``operations`` block of a single-site ``summary.json`` for this site, when it has rules.
    """

    name: str
    scenario: Scenario
    history: History
    theoretical_cutoff: float
    decision: Decision
    table: pd.DataFrame
    quality: dict[str, float]
    model_cost: np.ndarray
    baseline_cost: dict[str, np.ndarray]
    missing_dates: int
    operations: dict | None = None
    warnings: tuple[str, ...] = field(default=())
    # the validation check and walk-forward, and the [[stress]] cases, of this site alone (as a
    # single-site run of its rows makes them)
    selection: Selection | None = None
    stress: tuple[StressResult, ...] | None = None
    # whether this site's forecast is worth using at all (simulator.verdict), on its own seasons,
    # and those seasons' costs (for the portfolio's verdict)
    verdict: Verdict | None = None
    season_costs: SeasonCosts | None = None

    @property
    def reference(self) -> str:
        return self.scenario.simulation.reference

    @property
    def strategies(self) -> dict[str, Distribution]:
        """Season cost distribution of the site at its recommended cutoff (``model``) and of each baseline."""
        out = {"model": distribution(self.model_cost)}
        out.update({name: distribution(cost) for name, cost in self.baseline_cost.items()})
        return out

    @property
    def forecast_value(self) -> float:
        """Mean season cost of the cheaper fixed rule (never act or always act, the best one can do
        knowing only the climate) minus that of acting on the forecast at the recommended cutoff:
        the value of the forecast in money, E_climate - E_forecast of Richardson (2000), "Skill and
        relative economic value of the ECMWF ensemble prediction system", QJRMS 126, 649-667."""
        climate = min(float(self.baseline_cost["never_act"].mean()),
                      float(self.baseline_cost["always_act"].mean()))
        return climate - float(self.model_cost.mean())


@dataclass(frozen=True)
class Portfolio:
    """All sites together: the total season cost with each site at its own recommended cutoff,
    beside the run's common cutoff (the one cutoff for all sites with the lowest mean total).

    ``own_cost``, ``common_cost`` and ``reference_cost`` are totals over the sites, each
    (n_replicates,). ``table`` is ``sites.csv``: one row per site in the order of the history (by name).
    """

    site_column: str
    sites: tuple[SiteResult, ...]
    common_cutoff: float
    own_cost: np.ndarray
    common_cost: np.ndarray
    reference_cost: np.ndarray
    table: pd.DataFrame

    @property
    def ranking(self) -> list[SiteResult]:
        """Sites by the value of acting on the forecast (:attr:`SiteResult.forecast_value`), highest first."""
        return sorted(self.sites, key=lambda site: -site.forecast_value)

    def site(self, name: str) -> SiteResult:
        for site in self.sites:
            if site.name == name:
                return site
        raise KeyError(name)


@dataclass(frozen=True)
class RunResult:
    """Everything a run computed. Arrays over replicates are kept for figures and later analysis.

    With many sites the run's numbers are those of the portfolio under one common cutoff (totals
    over the sites; ``table`` pools the sites' classification counts), and ``portfolio`` holds each
    site's own results; ``operations``, ``stress``, ``calibration`` and ``selection`` are then None.
    """

    scenario: Scenario
    history: History
    calendar: Calendar
    cutoffs: np.ndarray
    replicates: int
    seed: int
    mean_block_days: float
    theoretical_cutoff: float
    decision: Decision
    model_cost: np.ndarray  # (n_replicates, n_cutoffs)
    baseline_cost: dict[str, np.ndarray]  # name -> (n_replicates,)
    table: pd.DataFrame  # one row per cutoff
    quality: dict[str, float]
    value_curve: pd.DataFrame
    reliability: pd.DataFrame
    warnings: tuple[str, ...] = field(default=())
    # with [operations]: cost components, completion days and day counts of every replicate
    operations: OperationsResult | None = None
    # [[stress]] cases in scenario order; the calibrated mode's recalibration; honest selection
    stress: tuple[StressResult, ...] | None = None
    calibration: Calibration | None = None
    selection: Selection | None = None
    # with a site column: every site's own results and the portfolio's
    portfolio: Portfolio | None = None
    # whether the forecast is worth using at all, judged on seasons it was not chosen on
    verdict: Verdict | None = None
    # [event] hazard = true: event occasions of each replicate season (all sites) on which the
    # forecast does not reach the recommended cutoff, (n_replicates,); None in the calibrated mode
    events_without_action: np.ndarray | None = None
    # with two or more [forecasts]: each priced on the same replicates, and every pair compared
    comparison: Comparison | None = None
    # with costs given as ranges (one site): the spread of the recommended cutoff's season cost
    # split into the weather's part and the cost ranges' part
    cost_spread: CostSpread | None = None

    @property
    def reference(self) -> str:
        return self.scenario.simulation.reference

    @property
    def strategies(self) -> dict[str, Distribution]:
        """Season cost distribution per strategy; the model at the recommended cutoff is ``model``."""
        out = {"model": distribution(self.model_cost[:, self.decision.recommended_index])}
        out.update({name: distribution(cost) for name, cost in self.baseline_cost.items()})
        return out

    @property
    def recommended_counts(self) -> pd.Series:
        return self.table.iloc[self.decision.recommended_index]

    @property
    def sites(self) -> tuple[SiteResult, ...]:
        """Each site's results (empty without a site column)."""
        return () if self.portfolio is None else self.portfolio.sites


def run(scenario: Scenario | str | Path, history_path: str | Path | None = None, *,
        replicates: int | None = None, seed: int | None = None, progress: Progress | None = None,
        processes: Sequence[UserProcess] = (), walk_forward: bool | None = None,
        workers: int | None = 1, cluster=None) -> RunResult:
    """Replay the history under every cutoff and price each replicate season.

    Parameters
    ----------
    scenario : a validated :class:`~simulator.scenario.Scenario`, or the path of a scenario file.
    history_path : overrides the scenario's ``[history] path``.
    replicates, seed : override ``[simulation]``.
    progress : optional callback ``progress(step, done, total)``.
    processes : user-written simpy processes added to the ``[operations]`` rules (see
        :class:`simulator.operations.Site`); every season is then played by the simpy model (slow)
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
    """As :func:`run`, on a history already read (:func:`~simulator.history.read_history`, or
    :func:`~simulator.history.history_from_frame` for a data frame)."""
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
                 n_forecasts=n_forecasts)
    try:
        rules = _pricer(work, 0).rules if scenario.operations is not None else None  # checks them
        priced: dict[int, PricedBlock] = {}
        with _executor(work, workers, cluster) as executor:
            _price_all(work, executor, lambda k, block: priced.__setitem__(k, block), None, progress)
    finally:
        _forget(work)
    block, forecast_costs = _forecast_costs(priced[0], n_forecasts)
    at_means = block.extras.pop(MODEL_AT_MEANS, None)  # costs drawn per replicate: the model at the means
    model_cost = block.model
    baseline_cost = {name: block.baselines[:, i] for i, name in enumerate(BASELINES)}
    operations = None
    if scenario.operations is not None:
        operations = OperationsResult(rules=rules, n_cutoffs=cutoffs.size, extras=block.extras,
                                      section=scenario.operations)

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
    stress = None
    if scenario.stress:
        stress = run_stress(scenario, history, calendar=calendar, resampler=resampler, cutoffs=cutoffs,
                            seed=seed, replicates=replicates, decision=decision,
                            base_mean_cost=float(model_cost[:, decision.recommended_index].mean()),
                            seasons_per_history=seasons_per_history,
                            interval_rng=lambda: block_rng(seed, 0, _INTERVAL_STREAM),
                            outcome_probability=None if calibration is None else calibration.probability,
                            progress=progress)
        warnings += tuple(w for case in stress for w in case.warnings)
    selection = select_honestly(history, calendar, cutoffs, costs, sim.reference, mean_block,
                                sim.window_days, seed, replicates,
                                sim.walk_forward if walk_forward is None else walk_forward,
                                label=_label(scenario),
                                rules=scenario if scenario.operations is not None else None,
                                objective=scenario.decision.objective)
    rule = best_rule({name: float(baseline_cost[name].mean()) for name in RULES})  # ignores the forecast

    def judge_one(own: History) -> Verdict:
        """Whether acting on ``own``'s forecast beats the best rule without it, on held-out seasons."""
        return judge(season_costs(own, calendar, cutoffs, scenario), calendar.n_occasions, rule)

    verdict = judge_one(history)
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
    unprotected = (_events_without_action(work, decision.recommended_index)
                   if scenario.event.hazard and calibration is None else None)
    return RunResult(scenario=scenario, history=history, calendar=calendar, cutoffs=cutoffs,
                     replicates=replicates, seed=seed, mean_block_days=mean_block * calendar.spacing_days,
                     theoretical_cutoff=p_star, decision=decision, model_cost=model_cost,
                     baseline_cost=baseline_cost, table=table, quality=quality,
                     value_curve=value_curve, reliability=reliability, warnings=warnings,
                     operations=operations, stress=stress, calibration=calibration,
                     selection=selection, comparison=comparison, verdict=verdict,
                     events_without_action=unprotected, cost_spread=spread)


_FORECAST_KEY = "forecast_model_cost_"  # extras of a priced block: a later forecast's model costs


def _forecast_costs(block: PricedBlock, n_forecasts: int) -> tuple[PricedBlock, list[np.ndarray]]:
    """The main forecast's priced block, and the model costs of each later forecast priced on the
    same replicate rows (carried in the block's extras by :func:`_price_task`)."""
    if n_forecasts == 1:
        return block, []
    costs = [block.extras[f"{_FORECAST_KEY}{j}"] for j in range(1, n_forecasts)]
    extras = {key: value for key, value in block.extras.items() if not key.startswith(_FORECAST_KEY)}
    return dataclasses.replace(block, extras=extras), costs


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
    if len(scenario.forecasts) > 1:
        raise InputError(f"{label} [forecasts]: several forecasts cannot be compared over many sites yet; "
                         "compare them site by site (one history per site, without site_column)")
    if sim.mode == "calibrated":
        raise InputError(f'{label} [simulation] mode: "calibrated" draws each site\'s outcomes on its own '
                         'and would break the sites\' joint weather; use mode = "replay" with a site column')
    names = history.site_names
    scenarios = tuple(scenario.for_site(name) for name in names)
    cutoffs = scenario.cutoffs
    calendar = season_calendar(history, scenario.season)
    mean_block = choose_mean_block(history, scenarios, calendar)
    resampler = Resampler(history, calendar, mean_block, sim.window_days)
    work = _Work(resampler=resampler, scenarios=scenarios, cutoffs=cutoffs, seed=seed,
                 replicates=replicates, processes=tuple(processes), outcome_probability=None)
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
                     verdict=verdict)


def _events_without_action(work: "_Work", index: int) -> np.ndarray:
    """Event occasions of each replicate season on which the probability does not reach cutoff
    ``index`` (so no action is taken), summed over the sites, (n_replicates,) int64.

    The replicates are drawn again from their seeds (a replicate depends only on the seed and its
    number), so they are those the run priced.
    """
    resampler = work.resampler
    history = resampler.history
    missed = []
    for k in range(resampler.n_sites):
        own = history.for_site(k)
        missed.append(own.event & (cutoff_slots(own.p, work.cutoffs) <= index))  # act when slot > index
    out = []
    for rows in resampler.blocks(work.seed, work.replicates):
        out.append(sum(m[resampler.site_rows(rows, k)].sum(axis=1) for k, m in enumerate(missed)))
    return np.concatenate(out).astype(np.int64)


def _checked_sites(work: "_Work", executor: Executor, sites: tuple[SiteResult, ...], check: bool,
                   walk_forward: bool, label: str, progress: Progress | None) -> tuple[SiteResult, ...]:
    """Each site with its own validation check and walk-forward (when ``check``) and its
    ``[[stress]]`` cases, a task per site, shared out like the pricing."""
    tasks = [(k, site.decision, float(site.model_cost.mean()), check, walk_forward, label)
             for k, site in enumerate(sites)]
    out = list(sites)
    what = ", ".join(w for w, wanted in (("later seasons", check), ("stress cases", work.scenarios[0].stress))
                     if wanted)
    for done, (k, (selection, stress)) in enumerate(executor.map_unordered(_check_task, work, tasks), 1):
        out[k] = dataclasses.replace(out[k], selection=selection, stress=stress)
        if progress is not None:
            progress(f"checking each site ({what})", done, len(out))
    return tuple(out)


def _check_task(work: "_Work", k: int, decision: Decision, base_mean_cost: float, check: bool,
                walk_forward: bool, label: str) -> tuple[Selection | None, tuple[StressResult, ...] | None]:
    """Site ``k``'s validation check and walk-forward, and its ``[[stress]]`` cases, made on its
    history alone exactly as a run of that site alone makes them (with the joint replay's mean run
    length; a site with a row on every date has the same replicates either way)."""
    scenario, history = work.scenarios[k], work.resampler.history.for_site(k)
    calendar, mean_block, sim = work.resampler.calendar, work.resampler.mean_block, scenario.simulation
    selection = stress = None
    if check:
        selection = select_honestly(history, calendar, work.cutoffs, scenario.costs, sim.reference,
                                    mean_block, sim.window_days, work.seed, work.replicates, walk_forward,
                                    label=f'{label} site "{history.site_names[0]}"',
                                    rules=scenario if scenario.operations is not None else None,
                                    objective=scenario.decision.objective)
    if scenario.stress:
        resampler = Resampler(history, calendar, mean_block, sim.window_days)
        stress = run_stress(scenario, history, calendar=calendar, resampler=resampler, cutoffs=work.cutoffs,
                            seed=work.seed, replicates=work.replicates, decision=decision,
                            base_mean_cost=base_mean_cost,
                            seasons_per_history=max(1, round(history.n_evaluated / calendar.n_occasions)),
                            interval_rng=lambda: block_rng(work.seed, 0, _INTERVAL_STREAM))
    return selection, stress


class _Totals:
    """The portfolio's season costs: the sites' costs added in a fixed order, whatever order they
    arrive in, so the floating-point sums are the same bytes every time.

    The order: sites are added one after the other within each group of :data:`SUM_GROUP`
    consecutive sites (a task that prices a whole group adds them itself and sends the group's sum),
    then the groups' sums one after the other. Only sites and groups not yet added are held.
    """

    def __init__(self, n_sites: int):
        self.model: np.ndarray | None = None
        self.baselines: np.ndarray | None = None
        self._n_sites = n_sites
        self._groups: dict[int, list] = {}  # group -> [next site, model sum, baselines sum, waiting]
        self._next_group = 0
        self._waiting_groups: dict[int, tuple[np.ndarray, np.ndarray]] = {}

    def add_site(self, k: int, model: np.ndarray, baselines: np.ndarray) -> None:
        g = k // SUM_GROUP
        state = self._groups.setdefault(g, [g * SUM_GROUP, None, None, {}])
        state[3][k] = (model, baselines)
        while state[0] in state[3]:
            model, baselines = state[3].pop(state[0])
            state[1], state[2] = _added(state[1], model), _added(state[2], baselines)
            state[0] += 1
        if state[0] == min((g + 1) * SUM_GROUP, self._n_sites):
            del self._groups[g]
            self.add_group(g, state[1], state[2])

    def add_group(self, g: int, model: np.ndarray, baselines: np.ndarray) -> None:
        self._waiting_groups[g] = (model, baselines)
        while self._next_group in self._waiting_groups:
            model, baselines = self._waiting_groups.pop(self._next_group)
            self.model, self.baselines = _added(self.model, model), _added(self.baselines, baselines)
            self._next_group += 1


def _added(total: np.ndarray | None, part: np.ndarray) -> np.ndarray:
    """``total + part`` in place, or a copy of ``part`` to start with."""
    if total is None:
        return part.copy()
    total += part
    return total


def _site_result(work: "_Work", k: int, block: PricedBlock) -> SiteResult:
    """One site's decision, cutoff table and costs from its replicates' season costs (made where
    the site was priced, so only its results travel back)."""
    scenario = work.scenarios[k]
    history = work.resampler.history.for_site(k)
    cutoffs, sim = work.cutoffs, scenario.simulation
    costs = scenario.costs
    p_star = break_even_probability(costs)
    baseline_cost = {name: block.baselines[:, i].copy() for i, name in enumerate(BASELINES)}
    reference = baseline_cost[sim.reference]
    n_occ = work.resampler.calendar.n_occasions
    decision = decide(block.model, reference, cutoffs, max(1, round(history.n_evaluated / n_occ)),
                      block_rng(work.seed, 0, _INTERVAL_STREAM), scenario.decision.objective)
    table = cutoff_table([(history, costs)], cutoffs, p_star, block.model, reference)
    operations = None
    if scenario.operations is not None:
        result = OperationsResult(rules=_pricer(work, k).rules, n_cutoffs=cutoffs.size, extras=block.extras,
                                  section=scenario.operations)
        table = pd.concat([table, pd.DataFrame(result.per_cutoff())], axis=1)
        operations = result.summary(decision.recommended_index)
    name = history.site_names[0]
    warnings = tuple(f'site "{name}" {w}' for w in cost_warnings(costs, scenario.decision.action))
    seasons = season_costs(history, work.resampler.calendar, cutoffs, scenario)
    verdict = judge(seasons, n_occ, best_rule({name: float(cost.mean()) for name, cost in baseline_cost.items()}))
    own_dates = np.unique(history.dates[history.evaluated]).size
    return SiteResult(name=name, scenario=scenario, history=history, theoretical_cutoff=p_star,
                      decision=decision, table=table, quality=forecast_scores(history),
                      model_cost=block.model[:, decision.recommended_index].copy(),
                      baseline_cost=baseline_cost, missing_dates=work.resampler.n_dates - own_dates,
                      operations=operations, warnings=warnings, verdict=verdict, season_costs=seasons)


def _sites_table(sites: Sequence[SiteResult], common: int) -> pd.DataFrame:
    """``sites.csv``: one row per site, in the order of the history (by name)."""
    values = [site.forecast_value for site in sites]
    order = sorted(range(len(sites)), key=lambda i: -values[i])
    rank = np.empty(len(sites), dtype=np.int64)
    rank[order] = np.arange(1, len(sites) + 1)
    rows = []
    for site, value, r in zip(sites, values, rank):
        d = site.decision
        # the percentiles of its season cost, made with its table
        percentiles = {key: _cell(site.table, d.recommended_index, key)
                       for key in ("p05_cost", "p50_cost", "p95_cost")}
        row = {"site": site.name, "rows": site.history.n_rows, "evaluated_rows": site.history.n_evaluated,
               "missing_dates": site.missing_dates, **site.quality,
               **{key: getattr(site.scenario.costs, key) for key in ("hit", "false_alarm", "miss",
                                                                     "correct_negative")},
               "theoretical_cutoff": site.theoretical_cutoff, "recommended_cutoff": d.recommended_cutoff,
               "recommended_cutoff_low": d.recommended_cutoff_interval[0],
               "recommended_cutoff_high": d.recommended_cutoff_interval[1],
               "near_optimal_low": d.near_optimal_band[0], "near_optimal_high": d.near_optimal_band[1],
               "break_even": _ranges(d.break_even), "confident_break_even": _ranges(d.confident_break_even),
               "mean_cost": float(site.model_cost.mean()), **percentiles,
               "reference_mean_cost": float(site.baseline_cost[site.reference].mean()),
               "mean_savings": d.savings.mean, "p05_savings": d.savings.p05, "p95_savings": d.savings.p95,
               "prob_saving": d.prob_saving, "forecast_value": value, "value_rank": int(r),
               "mean_cost_at_common_cutoff": _cell(site.table, common, "mean_cost")}
        if site.verdict is not None:  # simulator.verdict, on the site's own seasons
            v = site.verdict
            row.update({"use_forecast": v.use_forecast, "best_rule_without_forecast": v.best_rule,
                        "saving_against_best_rule_mean": v.mean, "saving_against_best_rule_p05": v.p05,
                        "saving_against_best_rule_p95": v.p95, "saving_against_best_rule_prob": v.prob_saving})
        check = site.selection.validation if site.selection is not None else None
        if check is not None:
            row.update({"validation_chosen_cutoff": check.chosen_cutoff,
                        "validation_cost": check.validation.cost,
                        "validation_best_cutoff": check.validation_best_cutoff,
                        "validation_optimism": check.optimism, "validation_flag": check.flag})
        forward = site.selection.walk_forward if site.selection is not None else None
        if forward is not None:
            row.update({"walk_forward_cost": forward.total_cost, "walk_forward_optimism": forward.optimism,
                        "walk_forward_flagged_seasons": " ".join(str(x) for x in forward.flagged_seasons)})
        if site.operations is not None:
            at = site.operations["at_recommended_cutoff"]
            row.update({"share_completed": at["share_completed"], "share_late": at["share_late"],
                        "mean_days_late": at["days_late"]["mean"]})
        rows.append(row)
    return pd.DataFrame(rows)


def _cell(table: pd.DataFrame, row: int, column: str) -> float:
    """One number of a table (quicker than a row of mixed types, or a column made a Series)."""
    return float(table.iat[row, table.columns.get_loc(column)])


def _ranges(ranges) -> str:
    return "; ".join(f"{lo:g} to {hi:g}" for lo, hi in ranges)


# ------------------------------------------------------------------------------------------------
# the work shared out: tasks of (a group of sites, a chunk of seeded blocks)

@dataclass(frozen=True)
class _Work:
    """What every task needs, sent to each worker once. ``scenarios`` holds each site's scenario
    (its own costs and rules merged in); ``outcome_probability`` is set in the calibrated mode."""

    resampler: Resampler
    scenarios: tuple[Scenario, ...]
    cutoffs: np.ndarray
    seed: int
    replicates: int
    processes: tuple = ()
    outcome_probability: np.ndarray | None = None
    n_forecasts: int = 1  # [forecasts] priced on the same rows (History.with_forecast), main first
    token: str = field(default_factory=lambda: uuid.uuid4().hex)  # names this run's cached pricers

    @property
    def chunks(self) -> list[tuple[int, int]]:
        """(first block, number of blocks) of each chunk of :data:`CHUNK_BLOCKS` seeded blocks."""
        total = n_blocks(self.replicates)
        return [(b, min(CHUNK_BLOCKS, total - b)) for b in range(0, total, CHUNK_BLOCKS)]


_PRICERS: dict[tuple[str, int, int], object] = {}  # per process: (run token, site, forecast) -> pricer
_MAX_PRICERS = 512


def _pricer(work: _Work, k: int, forecast: int = 0):
    """Site ``k``'s pricer of forecast ``forecast`` (0: the main one), made once per process and
    run (cheap to make, not free)."""
    key = (work.token, k, forecast)
    pricer = _PRICERS.get(key)
    if pricer is None:
        history = work.resampler.history.for_site(k).with_forecast(forecast)
        scenario = work.scenarios[k]
        drawer = CostDrawer(scenario.costs, scenario.cost_ranges(), work.seed)  # costs given as ranges
        if work.outcome_probability is not None:  # outcomes drawn afresh from recalibrated probabilities
            pricer = ReplicatePricer(history, work.cutoffs, scenario.costs, seed=work.seed,
                                     outcome_probability=work.outcome_probability, drawer=drawer)
        elif scenario.operations is not None:  # the rules played day by day
            pricer = OperationsPricer(history, work.resampler.calendar, work.cutoffs, scenario,
                                      work.processes)
        else:
            pricer = SeasonPricer(history, work.cutoffs, scenario.costs, drawer)
        if len(_PRICERS) >= _MAX_PRICERS:
            _PRICERS.clear()
        _PRICERS[key] = pricer
    return pricer


def _forget(work: _Work) -> None:
    for key in [key for key in _PRICERS if key[0] == work.token]:
        _PRICERS.pop(key, None)
    _DRAWN.forget(work.token)


def _price_task(work: _Work, first_site: int, last_site: int, chunk: int | None) -> list[tuple]:
    """Season costs of sites ``first_site..last_site - 1``: on the replicates of one chunk, or of
    every chunk when ``chunk`` is None.

    Each seeded block is drawn once and priced for every site of the task (a site's replicate rows
    are the joint rows mapped to its own, ``Resampler.site_rows``). A chunk gives
    ``("chunk", site, chunk, PricedBlock)`` per site. All chunks (many sites only) give each site's
    results made here, ``("site", site, SiteResult)``, and its season costs for the portfolio:
    summed here for every whole group of :data:`SUM_GROUP` sites the task holds,
    ``("group", group, model, baselines)``, else ``("costs", site, model, baselines)``. So the
    per-site work is shared out too, and little more than reduced results travels back.
    """
    chunks = work.chunks if chunk is None else [work.chunks[chunk]]
    blocks = [b for first, count in chunks for b in range(first, first + count)]
    sites = range(first_site, last_site)

    def drawn(b: int) -> np.ndarray:
        return work.resampler.draw_block(work.seed, b)[: min(BLOCK, work.replicates - b * BLOCK)]

    size = len(blocks) * BLOCK * work.resampler.n_occasions * 8
    rows = None
    if len(sites) > 1 and size <= _MAX_DRAWN_BYTES:
        # every task of a run with many sites draws every block: a process draws each once
        rows = [_DRAWN.get(work, b, drawn) if chunk is None else drawn(b) for b in blocks]
    out: list[tuple] = []
    group: list = [None, None, None]  # the whole group being summed: number, model, baselines
    for k in sites:
        pricer = _pricer(work, k)
        others = [(j, _pricer(work, k, j)) for j in range(1, work.n_forecasts)]
        priced = []
        for i, b in enumerate(blocks):
            own = work.resampler.site_rows(drawn(b) if rows is None else rows[i], k)
            # the block's number seeds its drawn outcomes and costs; the operating rules draw none
            block = pricer(own) if work.scenarios[k].operations is not None else pricer(own, b)
            if others:  # every later forecast on the same rows: common random numbers
                block = dataclasses.replace(block, extras={
                    **block.extras, **{f"{_FORECAST_KEY}{j}": _later_forecast(other, own, b)
                                       for j, other in others}})
            priced.append(block)
        block = _join(priced)
        if chunk is not None:
            out.append(("chunk", k, chunk, block))
            continue
        # without its rows, which the caller holds already (a site's rows outweigh its results)
        out.append(("site", k, dataclasses.replace(_site_result(work, k, block), history=None)))
        g = k // SUM_GROUP
        whole = first_site <= g * SUM_GROUP and min((g + 1) * SUM_GROUP, len(work.scenarios)) <= last_site
        if not whole:
            out.append(("costs", k, block.model, block.baselines))
            continue
        group = [g, _added(group[1] if group[0] == g else None, block.model),
                 _added(group[2] if group[0] == g else None, block.baselines)]
        if k + 1 == min((g + 1) * SUM_GROUP, len(work.scenarios)):
            out.append(("group", *group))
    return out


def _later_forecast(pricer, rows: np.ndarray, block: int) -> np.ndarray:
    """A later forecast's season costs at every cutoff on the rows (of seeded block ``block``) the
    main forecast was priced on, with the same drawn costs: the baselines' costs are the main's
    (they do not depend on the forecast)."""
    if isinstance(pricer, SeasonPricer):
        return pricer.model_cost(rows, block)
    return pricer(rows).model  # the operating rules: every lane played again


_MAX_DRAWN_BYTES = 256 * 2**20  # a task keeps its drawn replicate rows for reuse up to this size


class _DrawnBlocks:
    """The seeded blocks of one run drawn in this process, kept for its later tasks (at most
    :data:`_MAX_DRAWN_BYTES`: a task of all chunks keeps no more); a new run replaces them."""

    def __init__(self):
        self.token: str | None = None
        self.blocks: dict[int, np.ndarray] = {}

    def get(self, work: _Work, b: int, draw: Callable[[int], np.ndarray]) -> np.ndarray:
        if self.token != work.token:
            self.forget()
            self.token = work.token
        rows = self.blocks.get(b)
        if rows is None:
            rows = self.blocks[b] = draw(b)
        return rows

    def forget(self, token: str | None = None) -> None:
        if token is None or token == self.token:
            self.token, self.blocks = None, {}


_DRAWN = _DrawnBlocks()


def _join(blocks: Sequence[PricedBlock]) -> PricedBlock:
    """Priced blocks of consecutive replicates as one (replicates first in every array)."""
    if len(blocks) == 1:
        return blocks[0]
    return PricedBlock(model=np.concatenate([b.model for b in blocks]),
                       baselines=np.concatenate([b.baselines for b in blocks]),
                       n_events=np.concatenate([b.n_events for b in blocks]),
                       extras={key: np.concatenate([b.extras[key] for b in blocks]) for key in blocks[0].extras})


@contextmanager
def _executor(work: _Work, workers: int | None, cluster, walk_forward: bool = False) -> Iterator[Executor]:
    """Where the run's tasks go (:func:`simulator.parallel.open_executor`): this process for work
    too small to be worth starting processes for (a walk-forward of many sites is not), or with
    simpy processes of the user's own and no cluster."""
    operations = any(s.operations is not None for s in work.scenarios)
    size = len(work.scenarios) * work.replicates * (10 if operations else 1)
    small = size < INLINE_BELOW and not (walk_forward and len(work.scenarios) > 1)
    with open_executor(workers, cluster, inline=small or (bool(work.processes) and cluster is None)) as executor:
        yield executor


def _alongside(executor: Executor, fn: Callable, *args) -> Callable[[], Any]:
    """``fn(*args)``, made in a thread of this process while workers elsewhere price (this process
    mostly waits on them meanwhile), or when asked for when the pricing runs in this process. Returns
    the function that gives the result."""
    if isinstance(executor, InlineExecutor):
        return lambda: fn(*args)
    future: Future = Future()

    def make() -> None:
        try:
            future.set_result(fn(*args))
        except BaseException as exc:  # noqa: BLE001 - handed to whoever asks for the result
            future.set_exception(exc)

    # a daemon thread: a run stopped meanwhile (Ctrl-C) ends at once rather than after the tables
    threading.Thread(target=make, name="gonogo-tables", daemon=True).start()
    return future.result


def _price_all(work: _Work, executor: Executor, block_done: Callable[[int, PricedBlock], None] | None,
               sites: tuple[dict[int, SiteResult], _Totals] | None, progress: Progress | None) -> None:
    """Run every task. One site: its season costs, in replicate order, go to ``block_done`` once
    all its chunks are in. Many sites: each site's results go into ``sites`` (results by site, and
    the portfolio's totals), made by the task that priced all its replicates, or made here from its
    chunks when there are too few sites to keep every worker busy."""
    n_sites = len(work.scenarios)
    chunks = work.chunks
    waiting: dict[int, dict[int, PricedBlock]] = {k: {} for k in range(n_sites)}
    total, done = n_sites * work.replicates, 0
    step = "replicate seasons" if n_sites == 1 else f"replicate seasons x {n_sites} sites"
    tasks = _plan(n_sites, len(chunks), executor.workers, many=sites is not None)
    for _, results in executor.map_unordered(_price_task, work, tasks):
        for item in results:
            kind, k = item[0], item[1]
            if kind == "site":
                sites[0][k] = dataclasses.replace(item[2], history=work.resampler.history.for_site(k))
                done += work.replicates
            elif kind == "costs":
                sites[1].add_site(k, item[2], item[3])
            elif kind == "group":
                sites[1].add_group(k, item[2], item[3])
            else:
                block = item[3]
                waiting[k][item[2]] = block
                done += block.model.shape[0]
                if len(waiting[k]) < len(chunks):
                    continue
                parts = waiting.pop(k)
                block = _join([parts[c] for c in range(len(chunks))])
                if sites is None:
                    block_done(k, block)
                else:
                    sites[0][k] = _site_result(work, k, block)
                    sites[1].add_site(k, block.model, block.baselines)
        if progress is not None:
            progress(step, done, total)


def _plan(n_sites: int, n_chunks: int, workers: int, many: bool) -> list[tuple[int, int, int | None]]:
    """The tasks: (first site, site after the last, chunk or None for all chunks).

    It changes speed, never results. One site, or fewer sites than twice the workers: tasks by chunk
    of blocks, for groups of sites as large as :data:`MAX_GROUP` allows while leaving
    :data:`TASKS_PER_WORKER` tasks per worker. Otherwise each task prices all the replicates of one
    group of :data:`SUM_GROUP` sites, or of part of one when there would be too few tasks; the groups
    left over after the last round in which every worker takes a whole group are cut in one part per
    worker, so that no worker waits long for the others at the end.
    """
    if not many or (workers > 1 and n_sites < 2 * workers):
        size = max(1, min(MAX_GROUP, (n_sites * n_chunks) // (TASKS_PER_WORKER * max(1, workers))))
        return [(a, min(a + size, n_sites), c) for a in range(0, n_sites, size) for c in range(n_chunks)]
    groups = [(a, min(a + SUM_GROUP, n_sites)) for a in range(0, n_sites, SUM_GROUP)]
    parts = 1 if workers == 1 else -(-TASKS_PER_WORKER * workers // len(groups))
    left_over = len(groups) % workers if parts == 1 else 0
    tasks = []
    for i, (a, b) in enumerate(groups):
        size = max(1, -(-(b - a) // (workers if i >= len(groups) - left_over else parts)))
        tasks += [(first, min(first + size, b), None) for first in range(a, b, size)]
    return tasks


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
