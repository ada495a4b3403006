"""One path through a run: the Python interface, which the command line calls.

``run(scenario)`` reads the history, draws the replicate seasons, prices every strategy on them, and
returns a :class:`RunResult` holding numbers only (no files are written here; see ``outputs.py``).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from . import scoring
from .blocklength import optimal_block_length
from .costs import SeasonPricer, occasion_costs, price
from .decision import Decision, Distribution, decide, distribution, per_cutoff
from .errors import InputError
from .history import History, read_history
from .operations import OperationsResult, UserProcess
from .operations_fast import OperationsPricer
from .resample import Calendar, Resampler, block_rng, season_calendar
from .scenario import BASELINES, Scenario, break_even_probability, cost_warnings
from .scoring import Contingency
from .selection import Calibration, Selection, calibrate, select_honestly
from .stress import ReplicatePricer, StressResult, run_stress

__all__ = ["run", "RunResult", "Progress"]

Progress = Callable[[str, int, int], None]
"""progress(step, done, total): called as work advances; ``cli.py`` turns it into a bar."""

_INTERVAL_STREAM = 1  # seed stream of the bootstrap histories behind the cutoff interval


@dataclass(frozen=True)
class RunResult:
    """Everything a run computed. Arrays over replicates are kept for figures and later analysis."""

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


def run(scenario: Scenario, history_path: str | Path | None = None, *, replicates: int | None = None,
        seed: int | None = None, progress: Progress | None = None,
        processes: Sequence[UserProcess] = (), walk_forward: bool | None = None) -> RunResult:
    """Replay the history under every cutoff and price each replicate season.

    Parameters
    ----------
    scenario : a validated :class:`~simulator.scenario.Scenario`.
    history_path : overrides the scenario's ``[history] path``.
    replicates, seed : override ``[simulation]``.
    progress : optional callback ``progress(step, done, total)``.
    processes : user-written simpy processes added to the ``[operations]`` rules (see
        :class:`simulator.operations.Site`); every season is then played by the simpy model (slow).
    walk_forward : choose the cutoff season by season on earlier seasons and price the next
        (default: the scenario's ``[simulation] walk_forward``).
    """
    history = read_history(scenario, history_path)
    return run_history(scenario, history, replicates=replicates, seed=seed, progress=progress,
                       processes=processes, walk_forward=walk_forward)


def run_history(scenario: Scenario, history: History, *, replicates: int | None = None,
                seed: int | None = None, progress: Progress | None = None,
                processes: Sequence[UserProcess] = (), walk_forward: bool | None = None) -> RunResult:
    """As :func:`run`, on a history already read."""
    sim = scenario.simulation
    replicates = sim.replicates if replicates is None else int(replicates)
    seed = sim.seed if seed is None else int(seed)
    costs = scenario.costs
    cutoffs = scenario.cutoffs
    p_star = break_even_probability(costs)
    calendar = season_calendar(history, scenario.season)

    mean_block = _mean_block(history, scenario, p_star)
    resampler = Resampler(history, calendar, mean_block, sim.window_days)
    calibration = calibrate(history) if sim.mode == "calibrated" else None
    if calibration is not None and scenario.operations is not None:
        raise InputError(f"{_label(scenario)} [simulation] mode: \"calibrated\" does not work with "
                         '[operations] yet; use mode = "replay"')
    if calibration is not None:  # outcomes drawn afresh from the recalibrated probabilities
        pricer = ReplicatePricer(history, cutoffs, costs, seed=seed,
                                 outcome_probability=calibration.probability)
    elif scenario.operations is not None:  # the rules played day by day
        pricer = OperationsPricer(history, calendar, cutoffs, scenario, processes)
    else:
        pricer = SeasonPricer(history, cutoffs, costs)
    model_parts, baseline_parts, extras_parts = [], [], []
    done = 0
    for b, rows in enumerate(resampler.blocks(seed, replicates)):
        block = pricer(rows, b) if calibration is not None else pricer(rows)
        model_parts.append(block.model)
        baseline_parts.append(block.baselines)
        extras_parts.append(block.extras)
        done += rows.shape[0]
        if progress is not None:
            progress("replicate seasons", done, replicates)
    model_cost = np.concatenate(model_parts)
    baseline_matrix = np.concatenate(baseline_parts)
    baseline_cost = {name: baseline_matrix[:, i] for i, name in enumerate(BASELINES)}
    extras = {key: np.concatenate([part[key] for part in extras_parts]) for key in extras_parts[0]}
    operations = None
    if scenario.operations is not None:
        operations = OperationsResult(rules=pricer.rules, n_cutoffs=cutoffs.size, extras=extras,
                                      section=scenario.operations)

    seasons_per_history = max(1, round(history.n_evaluated / calendar.n_occasions))
    decision = decide(model_cost, baseline_cost[sim.reference], cutoffs, seasons_per_history,
                      block_rng(seed, 0, _INTERVAL_STREAM))
    table = _cutoff_table(history, scenario, cutoffs, p_star, model_cost, baseline_cost[sim.reference])
    if operations is not None:
        table = pd.concat([table, pd.DataFrame(operations.per_cutoff())], axis=1)
    quality = _quality(history)
    value_curve = _value_curve(history, cutoffs)
    reliability = _frame(scoring.reliability_table(history.p[history.evaluated],
                                                   history.event[history.evaluated]))
    warnings = tuple(history.warnings) + tuple(cost_warnings(costs, scenario.decision.action))
    stress = None
    if scenario.stress:
        stress = run_stress(scenario, history, calendar=calendar, resampler=resampler, cutoffs=cutoffs,
                            seed=seed, replicates=replicates, decision=decision, model_cost=model_cost,
                            seasons_per_history=seasons_per_history,
                            interval_rng=lambda: block_rng(seed, 0, _INTERVAL_STREAM),
                            outcome_probability=None if calibration is None else calibration.probability,
                            progress=progress)
        warnings += tuple(w for case in stress for w in case.warnings)
    selection = select_honestly(history, calendar, cutoffs, costs, sim.reference, mean_block,
                                sim.window_days, seed, replicates,
                                sim.walk_forward if walk_forward is None else walk_forward,
                                label=_label(scenario))
    return RunResult(scenario=scenario, history=history, calendar=calendar, cutoffs=cutoffs,
                     replicates=replicates, seed=seed, mean_block_days=mean_block * history.step_days,
                     theoretical_cutoff=p_star, decision=decision, model_cost=model_cost,
                     baseline_cost=baseline_cost, table=table, quality=quality,
                     value_curve=value_curve, reliability=reliability, warnings=warnings,
                     operations=operations, stress=stress, calibration=calibration,
                     selection=selection)


def _label(scenario: Scenario) -> str:
    return str(scenario.source) if scenario.source else "scenario"


def _mean_block(history: History, scenario: Scenario, p_star: float) -> float:
    """Mean run length in occasions: fixed by ``block_days``, or by Politis and White (2004).

    The automatic choice targets the variance of a season's total cost, so it is applied to the
    series of per-occasion costs of acting at the break-even probability (the outcome series when
    the cost matrix has no break-even probability), over the evaluated occasions in date order.
    """
    block_days = scenario.simulation.block_days
    if block_days != "auto":
        return max(1.0, float(block_days) / history.step_days)
    if np.isnan(p_star):
        series = history.event[history.evaluated].astype(float)
    else:
        rows = history.evaluated
        series = occasion_costs(history.p[rows] >= p_star, history.event[rows], scenario.costs)
    return max(1.0, float(optimal_block_length(series)))


def _cutoff_table(history: History, scenario: Scenario, cutoffs: np.ndarray, p_star: float,
                  model_cost: np.ndarray, reference_cost: np.ndarray) -> pd.DataFrame:
    costs = scenario.costs
    periods = {"": history.evaluated}
    if history.has_validation:
        periods.update({"training_": history.training, "validation_": history.validation})
    columns: dict[str, np.ndarray] = {"cutoff": cutoffs}
    for prefix, mask in periods.items():
        counts = scoring.count_at_cutoffs(history.p[mask], history.event[mask], cutoffs)
        r = scoring.rates(counts)
        columns.update({
            f"{prefix}hits": counts.hits, f"{prefix}false_alarms": counts.false_alarms,
            f"{prefix}misses": counts.misses, f"{prefix}correct_negatives": counts.correct_negatives,
            f"{prefix}hit_rate": r.hit_rate, f"{prefix}specificity": r.specificity,
            f"{prefix}miss_rate": r.miss_rate, f"{prefix}false_alarm_rate": r.false_alarm_rate,
            f"{prefix}false_alarm_ratio": r.false_alarm_ratio,
            f"{prefix}historical_cost": price(counts, costs),
        })
        if prefix == "":
            n = counts.n_occasions
            expense = price(counts, costs) / n
            never = price(Contingency(0, 0, counts.n_events, counts.n_non_events), costs) / n
            always = price(Contingency(counts.n_events, counts.n_non_events, 0, 0), costs) / n
            perfect = price(Contingency(counts.n_events, 0, 0, counts.n_non_events), costs) / n
            columns["net_benefit"] = (scoring.net_benefit(counts.hits, counts.false_alarms, n, p_star)
                                      if not np.isnan(p_star) else np.full(cutoffs.size, np.nan))
            columns["relative_value"] = scoring.relative_value_from_costs(expense, never, always, perfect)
    columns.update(per_cutoff(model_cost, reference_cost))
    return pd.DataFrame(columns)


def _quality(history: History) -> dict[str, float]:
    p, event = history.p[history.evaluated], history.event[history.evaluated]
    return {"event_rate": float(event.mean()), "brier_score": float(scoring.brier_score(p, event)),
            "brier_skill_score": float(scoring.brier_skill_score(p, event)),
            "roc_auc": float(scoring.roc_auc(p, event))}


def _value_curve(history: History, cutoffs: np.ndarray) -> pd.DataFrame:
    """Relative economic value across cost-loss ratios (Richardson 2000): the potential value (best
    cutoff for each ratio) and the value of acting at a cutoff equal to the ratio."""
    p, event = history.p[history.evaluated], history.event[history.evaluated]
    counts = scoring.count_at_cutoffs(p, event, cutoffs)
    ratios = np.round(np.linspace(0.01, 0.99, 99), 2)
    base_rate = float(event.mean())
    at_ratio = scoring.count_at_cutoffs(p, event, ratios)
    r_at = scoring.rates(at_ratio)
    return pd.DataFrame({
        "cost_loss_ratio": ratios,
        "potential_value": scoring.value_curve(counts, ratios),
        "value_at_cutoff_equal_to_ratio": scoring.relative_value(r_at.hit_rate, r_at.false_alarm_rate,
                                                                 base_rate, ratios),
    })


def _frame(table) -> pd.DataFrame:
    """A table given as a dict of arrays or a dataclass of arrays, as a DataFrame."""
    return pd.DataFrame(dataclasses.asdict(table) if dataclasses.is_dataclass(table) else table)
