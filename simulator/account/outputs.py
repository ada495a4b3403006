"""Files out: ``summary.json``, ``cutoffs.csv`` and the tables beside them (``sites.csv`` with a
site column).

Everything is rendered in memory first (:func:`render_files`), then written as one whole result
set by :func:`simulator.account.result_set.write_files`: staged beside the output folder and swapped in, so
a reader sees the previous set or the new one, never a mix; a folder that already holds files is
only written into with ``force``.
"""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .. import __version__
from .findings import account
from .datapackage import datapackage
from .file_names import table_names
from .cautions import cautions
from ..pricing.decision import distribution
from .portfolio_sensitivity_view import is_portfolio, portfolio_entry, portfolio_frame
from .sensitivity_view import sensitivity_entry, sensitivity_frame
from ..results import RunResult
from ..analysis.calibration import Calibration
from ..analysis.selection import Selection
from ..analysis.stress import StressResult
from ..analysis.winners import wins

__all__ = ["summary", "render_files", "SCHEMA"]

SCHEMA = 1


def _clean(value: Any) -> Any:
    """JSON-safe: numpy scalars to Python, NaN and infinities to null, tuples to lists."""
    if isinstance(value, Mapping):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple | np.ndarray):
        return [_clean(v) for v in value]
    if isinstance(value, np.bool_ | bool):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, float | np.floating):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


def summary(result: RunResult) -> dict[str, Any]:
    """The contents of ``summary.json`` (schema 1).

    Among its keys: ``cautions``, every caution of the run as a list of strings (the hazard's
    first, the general one, the operating rules'); ``verdict`` (:meth:`simulator.analysis.verdict.Verdict.as_dict`); with
    ``[event] hazard = true``, ``events_without_action``: event occasions a season leaves without
    action at the recommended ``cutoff`` (all sites together), mean, p05, p50, p95 over the
    replicate seasons.
    """
    scenario, history, decision = result.scenario, result.history, result.decision
    row = result.recommended_counts
    strategies = {name: d.as_dict() for name, d in result.strategies.items()}
    recommended = {key: row[key] for key in ("hits", "false_alarms", "misses", "correct_negatives",
                                             "hit_rate", "specificity", "miss_rate", "false_alarm_rate",
                                             "false_alarm_ratio", "historical_cost")}
    out = {
        "schema": SCHEMA,
        "tool_version": __version__,
        "scenario": {"name": scenario.name, "sha256": scenario.sha256, "event": scenario.event.name,
                     "action": scenario.decision.action, "flip": scenario.event.flip,
                     "hazard": scenario.event.hazard, "cutoffs": list(scenario.decision.cutoffs),
                     "season_months": list(scenario.season.months)},
        "history": {"file": Path(history.label).name, "sha256": history.sha256, "rows": history.n_rows,
                    "evaluated_rows": history.n_evaluated,
                    "training_rows": int(history.training.sum()),
                    "validation_rows": int(history.validation.sum()),
                    "start": history.start.isoformat(), "end": history.end.isoformat(),
                    "seasons": len(history.seasons), **result.quality},
        "currency": scenario.currency,
        "season_year": result.calendar.year,
        "season_occasions": result.calendar.n_occasions,
        "occasion_unit": "day" if history.frequency.is_daily else "occasion",
        "replicates": result.replicates,
        "seed": result.seed,
        "mean_block_days": result.mean_block_days,
        "reference": result.reference,
        "theoretical_cutoff": result.theoretical_cutoff,
        "objective": decision.objective,
        "recommended_cutoff": decision.recommended_cutoff,
        "recommended_cutoff_interval": decision.recommended_cutoff_interval,
        "near_optimal_band": decision.near_optimal_band,
        "break_even": decision.break_even,
        "confident_break_even": decision.confident_break_even,
        "objectives": _objectives_entry(result),
        "relative_value": row["relative_value"],
        "strategies": strategies,
        "savings": {"mean": decision.savings.mean, "p05": decision.savings.p05,
                    "p95": decision.savings.p95, "prob_saving": decision.prob_saving},
        "recommended": recommended,
        "warnings": [_file_names_only(w, result) for w in result.warnings],
        "cautions": list(cautions(scenario, rules=any(s.scenario.operations is not None for s in result.sites)
                                  or scenario.operations is not None)),
    }
    if result.events_without_action is not None:  # [event] hazard = true
        out["events_without_action"] = {"cutoff": decision.recommended_cutoff,
                                        **distribution(result.events_without_action).as_dict()}
    if result.operations is not None:  # only with [operations]: components, completion, safety stop
        out["operations"] = result.operations.summary(decision.recommended_index)
    if result.stress is not None:  # [[stress]] cases, in scenario order
        out["stress"] = [_stress_entry(case) for case in result.stress]
    if result.calibration is not None:  # [simulation] mode = "calibrated"
        out["calibration"] = _calibration_entry(result.calibration)
    if result.selection is not None:  # a validation split or walk-forward
        out["selection"] = _selection_entry(result.selection)
    if result.portfolio is not None:  # a site column: the run's numbers above are the portfolio's
        out["portfolio"] = _portfolio_entry(result)
    if result.verdict is not None:  # whether to act on the forecast at all (simulator.analysis.verdict)
        out["verdict"] = result.verdict.as_dict(scenario.currency)
    if result.comparison is not None:  # two or more [forecasts]: "forecasts" and "forecast_pairs"
        out.update(result.comparison.summary(scenario.currency, scenario.forecast_prices))
    out.update(_cost_ranges_entry(result))
    if result.sensitivity is not None:  # which cost estimate matters (or why a run has no such table)
        out["sensitivity"] = (portfolio_entry(result.sensitivity) if result.portfolio is not None
                              else sensitivity_entry(result.sensitivity))
    out = _clean(out)
    out["account"] = [finding.as_dict() for finding in account(out).findings]
    return out


def _cost_ranges_entry(result: RunResult) -> dict[str, Any]:
    """With costs given as ranges: ``cost_ranges`` (dotted key -> low, likely, high and PERT mean,
    per occasion in the currency) and, when a cost was drawn, ``cost_spread``: how much of the
    variance of the season cost at the recommended ``cutoff`` comes from the weather and how much
    from the cost ranges (:mod:`simulator.analysis.cost_spread` says the method)."""
    ranges = result.scenario.cost_ranges()
    if not ranges:
        return {}
    out: dict[str, Any] = {"cost_ranges": {key: {**r.model_dump(), "mean": r.mean} for key, r in ranges.items()}}
    if result.cost_spread is not None:
        out["cost_spread"] = {"cutoff": result.decision.recommended_cutoff, **result.cost_spread.as_dict(),
                              "method": "variance of the season cost over the simulated seasons, with every "
                                        "cost (or price of the operating rules) given as a range fixed at its "
                                        "mean (the weather's part) against with them drawn (the whole); the "
                                        "ranges' part is the difference"}
    return out


def _file_names_only(text: str, result: RunResult) -> str:
    """A message with the history's and the scenario's paths cut to their file names (a report and
    its summary are shared: they name files, never a folder of this machine)."""
    for path in (result.history.label, result.scenario.source):
        if path and str(path) != Path(path).name:
            text = text.replace(str(path), Path(path).name)
    return text


def _objectives_entry(result: RunResult) -> dict[str, dict[str, float]]:
    """The cutoff each objective would choose (``decision.choices``), with that cutoff's mean, 95th
    percentile and expected shortfall over the worst 10% of season costs (``cutoffs.csv`` columns),
    so the cost of the risk view on average can be read beside the mean's choice."""
    table = result.table
    return {name: {"cutoff": float(table["cutoff"].iat[index]),
                   **{column: float(table[column].iat[index])
                      for column in ("mean_cost", "p95_cost", "shortfall10_cost")}}
            for name, index in result.decision.choices.items()}


def render_files(result: RunResult) -> dict[str, bytes]:
    """Every output file's name and bytes, rendered in memory (the report and its figures too)."""
    from .report import render_report  # matplotlib and jinja2 load only when files are rendered

    contents = summary(result)
    render = {
        "summary.json": lambda: (json.dumps(contents, indent=2) + "\n").encode(),
        "cutoffs.csv": lambda: _csv(result.table),
        "value_curve.csv": lambda: _csv(result.value_curve),
        "reliability.csv": lambda: _csv(result.reliability),
        "stress.csv": lambda: _csv(_stress_frame(result)),
        "calibration.csv": lambda: _csv(result.calibration.table),
        "selection.csv": lambda: _csv(_selection_frame(result.selection)),
        "sites.csv": lambda: _csv(result.portfolio.table),
        "forecasts.csv": lambda: _csv(result.comparison.table()),
        "sensitivity.csv": lambda: _csv((portfolio_frame if is_portfolio(contents["sensitivity"])
                                         else sensitivity_frame)(contents["sensitivity"], result.scenario.currency)),
    }
    scenario = result.scenario
    render["datapackage.json"] = lambda: datapackage(files, scenario.slug, scenario.name, scenario.currency)
    files: dict[str, bytes] = {}
    for name in table_names(result):  # the report lists the same names; datapackage.json comes last
        files[name] = render[name]()
    files.update(render_report(result, contents))
    return files


# ------------------------------------------------------------------------------------------------
# stress cases, calibration and honest selection

def _csv(frame: pd.DataFrame) -> bytes:
    return frame.to_csv(index=False, lineterminator="\n").encode()


def _stress_entry(case: StressResult) -> dict[str, Any]:
    views = []
    for v in case.views:
        d = v.decision
        views.append({
            "probabilities": v.probabilities, "headline": v.headline, "base_cutoff": v.base_cutoff,
            "strategies": {name: dist.as_dict() for name, dist in v.strategies.items()},
            "extra_cost": v.extra_cost,
            "savings": {**v.savings.as_dict(), "prob_saving": v.prob_saving},
            "best_cutoff": v.best_cutoff, "best_cutoff_interval": d.recommended_cutoff_interval,
            "best_cost": v.best_cost.as_dict(), "saved_by_moving": v.saved_by_moving,
            "prob_moving_saves": v.prob_moving_saves, "near_optimal_band": d.near_optimal_band,
            "break_even": d.break_even, "confident_break_even": d.confident_break_even,
            "best_savings": {**d.savings.as_dict(), "prob_saving": d.prob_saving},
            # several [forecasts]: each at its own base cutoff in this case, and which one wins
            **({} if v.forecasts is None else {"which_forecast": v.forecasts.as_dict()}),
        })
    return {"name": case.name, "changes": case.changes, "costs": case.costs.model_dump(),
            "theoretical_cutoff": case.theoretical_cutoff, "mean_block_days": case.mean_block_days,
            "seasons_used": case.seasons_used,
            "event_rate": None if case.event_rate is None else dataclasses.asdict(case.event_rate),
            "views": views}


def _stress_frame(result: RunResult) -> pd.DataFrame:
    """One row for the base case, then one per stress case and view; with many sites, those rows
    for each site, with a ``site`` column first."""
    if result.portfolio is None:
        d = result.decision
        savings = result.baseline_cost[result.reference] - result.model_cost[:, d.recommended_index]
        return _stress_rows(result.strategies, d, savings, result.stress,
                            None if result.comparison is None else result.comparison.contest(result.decision.objective))
    frames = [_stress_rows(site.strategies, site.decision, site.baseline_cost[site.reference] - site.model_cost,
                           site.stress, site.contest).assign(site=site.name)
              for site in result.portfolio.sites if site.stress is not None]
    frame = pd.concat(frames, ignore_index=True)
    return frame[["site"] + [c for c in frame.columns if c != "site"]]


def _stress_rows(base, d, savings: np.ndarray, stress, contest=None) -> pd.DataFrame:
    """The rows of one history's stress table; with several [forecasts], each row also says which
    forecast wins there (:meth:`simulator.analysis.winners.Contest.row`; ``contest``: the base case's)."""
    rows = [{"case": "base case", "probabilities": "as_forecast", "target_event_rate": None,
             "achieved_event_rate": None, "event_rate_reached": None, "base_cutoff": d.recommended_cutoff,
             **_strategy_columns(base), "extra_cost": 0.0, "best_cutoff": d.recommended_cutoff,
             "best_mean_cost": base["model"].mean, "saved_by_moving": 0.0, "prob_moving_saves": 0.0,
             "mean_savings": float(savings.mean()), "prob_saving": d.prob_saving,
             "break_even": _ranges(d.break_even), **({} if contest is None else contest.row())}]
    for case in stress or ():
        rate = case.event_rate
        for v in case.views:
            rows.append({"case": case.name, "probabilities": v.probabilities,
                         "target_event_rate": None if rate is None else rate.target,
                         "achieved_event_rate": None if rate is None else rate.achieved,
                         "event_rate_reached": None if rate is None else rate.reached,
                         "base_cutoff": v.base_cutoff, **_strategy_columns(v.strategies),
                         "extra_cost": v.extra_cost, "best_cutoff": v.best_cutoff,
                         "best_mean_cost": v.best_cost.mean, "saved_by_moving": v.saved_by_moving,
                         "prob_moving_saves": v.prob_moving_saves, "mean_savings": v.savings.mean,
                         "prob_saving": v.prob_saving, "break_even": _ranges(v.decision.break_even),
                         **({} if v.forecasts is None else v.forecasts.row())})
    return pd.DataFrame(rows)


def _strategy_columns(strategies: Mapping[str, Any]) -> dict[str, float]:
    out = {}
    for name, dist in strategies.items():
        out.update({f"{name}_mean_cost": dist.mean, f"{name}_p05_cost": dist.p05,
                    f"{name}_p50_cost": dist.p50, f"{name}_p95_cost": dist.p95})
    return out


def _ranges(ranges) -> str:
    return "; ".join(f"{lo:g} to {hi:g}" for lo, hi in ranges)


def _calibration_entry(c: Calibration) -> dict[str, Any]:
    return {"mode": "calibrated", "fitted_on": "training period", "training_rows": c.training_rows,
            "training_start": c.training_start, "training_end": c.training_end,
            "brier_training": c.brier_training, "brier_training_recalibrated": c.brier_training_recalibrated,
            "brier_validation": c.brier_validation,
            "brier_validation_recalibrated": c.brier_validation_recalibrated,
            "curve": c.table.to_dict(orient="records")}


def _selection_entry(sel: Selection) -> dict[str, Any]:
    out: dict[str, Any] = {}
    if sel.validation is not None:
        v = sel.validation
        out["validation"] = {
            "chosen_on": "training period", "chosen_cutoff": v.chosen_cutoff,
            "training": dataclasses.asdict(v.training), "validation": dataclasses.asdict(v.validation),
            "validation_best_cutoff": v.validation_best_cutoff, "validation_best_cost": v.validation_best_cost,
            "optimism": v.optimism, "reference_cost": v.reference_cost,
            "expected_range_per_occasion": v.expected_range, "flag": v.flag}
    if sel.walk_forward is not None:
        w = sel.walk_forward
        out["walk_forward"] = {
            "total_cost": w.total_cost, "in_sample_cutoff": w.in_sample_cutoff,
            "in_sample_cost": w.in_sample_cost, "optimism": w.optimism, "reference_cost": w.reference_cost,
            "savings": w.savings, "flagged_seasons": w.flagged_seasons,
            "seasons": [{"season": s.season, "chosen_cutoff": s.priced.cutoff, "cost": s.priced.cost,
                         "cost_per_occasion": s.priced.cost_per_occasion,
                         "training_cost_per_occasion": s.training.cost_per_occasion,
                         "expected_range_per_occasion": s.expected_range, "flag": s.flag,
                         "best_cutoff": s.best_cutoff, "best_cost": s.best_cost,
                         "reference_cost": s.reference_cost,
                         "priced": dataclasses.asdict(s.priced), "training": dataclasses.asdict(s.training)}
                        for s in w.steps]}
    return out


def _selection_frame(sel: Selection) -> pd.DataFrame:
    """The classification matrix of every period at its chosen cutoff, one row per period."""
    rows = []
    if sel.validation is not None:
        v = sel.validation
        rows += [{"check": "validation split", **dataclasses.asdict(v.training), "flag": None},
                 {"check": "validation split", **dataclasses.asdict(v.validation), "flag": v.flag}]
    if sel.walk_forward is not None:
        for s in sel.walk_forward.steps:
            rows += [{"check": "walk-forward", **dataclasses.asdict(s.training), "flag": None},
                     {"check": "walk-forward", **dataclasses.asdict(s.priced), "flag": s.flag}]
    return pd.DataFrame(rows)


# ------------------------------------------------------------------------------------------------
# many sites

def _portfolio_entry(result: RunResult) -> dict[str, Any]:
    """The ``portfolio`` block of ``summary.json``.

    Keys: ``site_column``, ``sites`` (how many); ``common_cutoff`` (the one cutoff for every site
    with the lowest mean total: the run's ``recommended_cutoff``); ``total_cost`` with each site at
    its own recommended cutoff (``own_cutoffs``), all at the common cutoff (``common_cutoff``) and
    under the reference rule (``reference``), each mean, p05, p50, p95 of the season total;
    ``savings`` of the first two against the reference (mean, p05, p95, prob_saving);
    ``own_versus_common``: what the sites' own cutoffs save against the common one (mean) and in how
    many seasons they are cheaper (prob_cheaper); ``spread``: the standard deviation of the season
    total at the own cutoffs, and what it would be if the sites' seasons were independent (the sum
    of their variances), which understates it when sites suffer the same weather; ``ranking``: the
    sites by the value of acting on the forecast (mean season cost of the cheaper of never and
    always acting minus that at the site's cutoff), highest first; ``checks`` (with a validation
    period or walk-forward): each site's own honest check, as the ``selection`` block of a
    single-site run; ``stress`` (with ``[[stress]]`` cases): each site's cases, as the ``stress``
    list of a single-site run; ``forecast_wins`` (with several ``[forecasts]``): how many sites each
    forecast wins at its own cutoffs there (a tie wins none; ``sites.csv`` names each site's winner).
    """
    from ..pricing.decision import cheaper, distribution

    portfolio = result.portfolio
    reference = portfolio.reference_cost

    def savings(cost: np.ndarray) -> dict[str, float]:
        saved = reference - cost
        p05, p95 = np.quantile(saved, [0.05, 0.95])
        return {"mean": float(saved.mean()), "p05": float(p05), "p95": float(p95),
                "prob_saving": float(cheaper(cost, reference).mean())}

    own, common = portfolio.own_cost, portfolio.common_cost
    # fsum: exactly rounded, so the order the sites are listed in changes no bit of it
    independent = math.sqrt(math.fsum(float(site.model_cost.var(ddof=1)) for site in portfolio.sites))
    return {
        "site_column": portfolio.site_column,
        "sites": len(portfolio.sites),
        "common_cutoff": portfolio.common_cutoff,
        "total_cost": {"own_cutoffs": distribution(own).as_dict(),
                       "common_cutoff": distribution(common).as_dict(),
                       "reference": distribution(reference).as_dict()},
        "savings": {"own_cutoffs": savings(own), "common_cutoff": savings(common)},
        "own_versus_common": {"mean": float((common - own).mean()), "prob_cheaper": float(cheaper(own, common).mean())},
        "spread": {"sd_total_cost": float(own.std(ddof=1)), "sd_if_independent": independent},
        "ranking": [{"rank": i + 1, "site": site.name, "forecast_value": site.forecast_value,
                     "recommended_cutoff": site.decision.recommended_cutoff,
                     "mean_savings": site.decision.savings.mean, "prob_saving": site.decision.prob_saving}
                    for i, site in enumerate(portfolio.ranking)],
        **({"checks": {site.name: _selection_entry(site.selection) for site in portfolio.sites
                       if site.selection is not None}}
           if any(site.selection is not None for site in portfolio.sites) else {}),
        **({"forecast_wins": wins([site.contest for site in portfolio.sites], result.history.forecast_names)}
           if portfolio.sites[0].contest is not None else {}),
        **({"stress": {site.name: [_stress_entry(case) for case in site.stress] for site in portfolio.sites
                       if site.stress is not None}}
           if any(site.stress is not None for site in portfolio.sites) else {}),
    }
