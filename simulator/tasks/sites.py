"""Each site of a run with many sites: its results, its checks, and the portfolio's totals.

:func:`_site_result` makes a site's decision and tables where it was priced; :func:`_checked_sites`
shares out each site's validation check, walk-forward and stress cases; :class:`_Totals` adds the
sites' season costs in a fixed order; :func:`_sites_table` is ``sites.csv``.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np
import pandas as pd

from ..analysis.selection import Selection, select_honestly
from ..analysis.site_prices import of_site_prices
from ..analysis.site_sensitivity import of_site, portfolio_columns
from ..analysis.stress import StressResult, run_stress
from ..analysis.verdict import best_rule, judge, season_costs, season_pricer
from ..analysis.winners import contest
from ..execution.executor import Executor
from ..inputs.scenario_costs import break_even_probability, cost_warnings
from ..inputs.scenario_types import BASELINES
from ..pricing.costs import PricedBlock
from ..pricing.counts import from_extras
from ..pricing.decision import Decision, decide
from ..pricing.tables import cutoff_table, forecast_scores
from ..replay.resample import Resampler, block_rng
from ..results import SiteResult
from ..rules.operations_result import OperationsResult
from .work import _INTERVAL_STREAM, Progress, _forecast_costs, _pricer, _Work

SUM_GROUP = 16  # sites whose costs are added together before the groups' sums (fixes the sum's order)


def _checked_sites(work: "_Work", executor: Executor, sites: tuple[SiteResult, ...], check: bool,
                   walk_forward: bool, label: str, progress: Progress | None) -> tuple[SiteResult, ...]:
    """Each site with its own validation check and walk-forward (when ``check``) and its
    ``[[stress]]`` cases, a task per site, shared out like the pricing."""
    tasks = [(k, site.decision, float(site.model_cost.mean()), check, walk_forward, label, site.own_cutoffs)
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
                walk_forward: bool, label: str,
                own_cutoffs: tuple[int, ...] = ()) -> tuple[Selection | None, tuple[StressResult, ...] | None]:
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
                            interval_rng=lambda: block_rng(work.seed, 0, _INTERVAL_STREAM),
                            own_cutoffs=own_cutoffs)
    return selection, stress


class _Totals:
    """The portfolio's season costs: the sites' costs added in a fixed order, whatever order they
    arrive in, so the floating-point sums are the same bytes every time.

    Each site gives its parts: the model's season costs, the baselines', and, with the sensitivity,
    its :func:`~simulator.analysis.site_sensitivity.portfolio_columns` (else None); each is added
    up (``model``, ``baselines``, ``columns``). The order: sites are added one after the other
    within each group of :data:`SUM_GROUP` consecutive sites (a task that prices a whole group adds
    them itself and sends the group's sum), then the groups' sums one after the other. Only sites
    and groups not yet added are held.
    """

    def __init__(self, n_sites: int):
        self.parts: tuple | None = None
        self._n_sites = n_sites
        self._groups: dict[int, list] = {}  # group -> [next site, sums of the parts, waiting]
        self._next_group = 0
        self._waiting_groups: dict[int, tuple] = {}

    @property
    def model(self) -> np.ndarray:
        return self.parts[0]

    @property
    def baselines(self) -> np.ndarray:
        return self.parts[1]

    @property
    def columns(self) -> np.ndarray | None:
        return self.parts[2] if len(self.parts) > 2 else None

    def add_site(self, k: int, *parts: np.ndarray | None) -> None:
        g = k // SUM_GROUP
        state = self._groups.setdefault(g, [g * SUM_GROUP, None, {}])
        state[2][k] = parts
        while state[0] in state[2]:
            state[1] = _added_parts(state[1], state[2].pop(state[0]))
            state[0] += 1
        if state[0] == min((g + 1) * SUM_GROUP, self._n_sites):
            del self._groups[g]
            self.add_group(g, *state[1])

    def add_group(self, g: int, *parts: np.ndarray | None) -> None:
        self._waiting_groups[g] = parts
        while self._next_group in self._waiting_groups:
            self.parts = _added_parts(self.parts, self._waiting_groups.pop(self._next_group))
            self._next_group += 1


def _added_parts(total: tuple | None, parts: tuple) -> tuple:
    """Each part added to its running total (:func:`_added`); a part that is None stays None."""
    if total is None:
        total = (None,) * len(parts)
    return tuple(None if part is None else _added(t, part) for t, part in zip(total, parts))


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
    block, later = _forecast_costs(block, work.n_forecasts)
    baseline_cost = {name: block.baselines[:, i].copy() for i, name in enumerate(BASELINES)}
    reference = baseline_cost[sim.reference]
    n_occ = work.resampler.calendar.n_occasions

    def decide_one(model: np.ndarray) -> Decision:
        return decide(model, reference, cutoffs, max(1, round(history.n_evaluated / n_occ)),
                      block_rng(work.seed, 0, _INTERVAL_STREAM), scenario.decision.objective)

    decision = decide_one(block.model)
    own, ranked = (), None
    if later:  # several [forecasts]: each at its own cutoff on the site's replicates, and the winner
        own = (decision.recommended_index, *(decide_one(model).recommended_index for model in later))
        ranked = contest(history.forecast_names, [float(cutoffs[i]) for i in own],
                         [model[:, i] for model, i in zip((block.model, *later), own)], scenario.decision.objective)
    table = cutoff_table([(history, costs)], cutoffs, p_star, block.model, reference)
    operations = result = None
    if scenario.operations is not None:
        result = OperationsResult(rules=_pricer(work, k).rules, n_cutoffs=cutoffs.size, extras=block.extras,
                                  section=scenario.operations)
        table = pd.concat([table, pd.DataFrame(result.per_cutoff())], axis=1)
        operations = result.summary(decision.recommended_index)
    name = history.site_names[0]
    warnings = tuple(f'site "{name}" {w}' for w in cost_warnings(costs, scenario.decision.action))
    # with fixed costs each season's counts are kept (verdict.SeasonTable) for the sensitivity to reprice
    past = season_pricer(history, cutoffs) if scenario.operations is None else None
    seasons = season_costs(history, work.resampler.calendar, cutoffs, scenario) if past is None else past(costs)
    rule = best_rule({name: float(cost.mean()) for name, cost in baseline_cost.items()})
    verdict = judge(seasons, n_occ, rule)
    counts, _ = from_extras(block.extras, block.n_events)  # kept with fixed costs (work.keep_counts)
    sensitivity = columns = None
    judged = rule if verdict.n_seasons >= 2 else None
    if counts is not None:  # which of its cost estimates matters, and what it adds to the portfolio's
        sensitivity = of_site(scenario, work.resampler.calendar, counts, decision.near_optimal_band, judged, past)
        columns = portfolio_columns(scenario, counts, sensitivity, work.shared_inputs[k], cutoffs)
    elif result is not None and work.shared_inputs:  # under [operations]: which of its rules' prices matters
        sensitivity, columns = of_site_prices(scenario, history, work.resampler.calendar, result,
                                              decision.near_optimal_band, judged, work.shared_inputs[k])
    own_dates = np.unique(history.dates[history.evaluated]).size
    return SiteResult(name=name, scenario=scenario, history=history, theoretical_cutoff=p_star,
                      decision=decision, table=table, quality=forecast_scores(history),
                      model_cost=block.model[:, decision.recommended_index].copy(),
                      baseline_cost=baseline_cost, missing_dates=work.resampler.n_dates - own_dates,
                      operations=operations, warnings=warnings, verdict=verdict, season_costs=seasons,
                      season_table=past if counts is not None else None,
                      own_cutoffs=own, contest=ranked, sensitivity=sensitivity, portfolio_columns=columns)


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
        if site.contest is not None:  # several [forecasts]: the best one here, against the runner-up
            row.update(site.contest.row())
        if site.verdict is not None:  # simulator.analysis.verdict, on the site's own seasons
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
