"""Tables of the history itself: the classification matrix and its rates at every cutoff, and
the forecast's quality (scores, reliability, relative value across cost-loss ratios).

Pure functions of a checked history (or each site's) and the cutoffs; money goes through
:func:`simulator.pricing.costs.price`.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np
import pandas as pd

from ..notation import decimals
from . import scoring
from .costs import price
from .decision import per_cutoff
from ..inputs.history import History
from ..inputs.scenario_costs import Costs
from .contingency import Contingency, count_at_cutoffs
from .rates import rates
from .value import net_benefit, relative_value, relative_value_from_costs, value_curve

__all__ = ["cutoff_table", "history_table", "with_replicates", "forecast_scores", "forecast_quality",
           "forecast_value_curve"]


def cutoff_table(parts: Sequence[tuple[History, Costs]], cutoffs: np.ndarray, p_star: float,
                 model_cost: np.ndarray, reference_cost: np.ndarray) -> pd.DataFrame:
    """One row per cutoff: the classification counts and rates on the history, the historical
    cost, net benefit and relative value (:func:`history_table`), and the replicate seasons' cost
    and savings (:func:`with_replicates`)."""
    return with_replicates(history_table(parts, cutoffs, p_star), model_cost, reference_cost)


def with_replicates(table: pd.DataFrame, model_cost: np.ndarray, reference_cost: np.ndarray) -> pd.DataFrame:
    """A :func:`history_table` with the replicate seasons' cost and savings at each cutoff
    (:func:`simulator.pricing.decision.per_cutoff`) added on the right."""
    return pd.concat([table, pd.DataFrame(per_cutoff(model_cost, reference_cost))], axis=1)


def history_table(parts: Sequence[tuple[History, Costs]], cutoffs: np.ndarray, p_star: float) -> pd.DataFrame:
    """One row per cutoff: the classification counts and rates on the history, the historical
    cost, net benefit and relative value.

    ``parts`` are (history, costs) of each site (one for a single site); counts and costs are
    summed over them, so with many sites the table is the portfolio's under one common cutoff.
    Net benefit needs one break-even probability ``p_star`` (NaN gives NaN).
    """
    periods = {"": lambda h: h.evaluated}
    if parts[0][0].has_validation:
        periods.update({"training_": lambda h: h.training, "validation_": lambda h: h.validation})
    columns: dict[str, np.ndarray] = {"cutoff": cutoffs}
    for prefix, period in periods.items():
        each = [(count_at_cutoffs(h.p[period(h)], h.event[period(h)], cutoffs), costs)
                for h, costs in parts]
        counts = _sum([c for c, _ in each], lambda a, b: Contingency(*(x + y for x, y in zip(
            dataclasses.astuple(a), dataclasses.astuple(b)))))
        r = rates(counts)
        columns.update({
            f"{prefix}hits": counts.hits, f"{prefix}false_alarms": counts.false_alarms,
            f"{prefix}misses": counts.misses, f"{prefix}correct_negatives": counts.correct_negatives,
            f"{prefix}hit_rate": r.hit_rate, f"{prefix}specificity": r.specificity,
            f"{prefix}miss_rate": r.miss_rate, f"{prefix}false_alarm_rate": r.false_alarm_rate,
            f"{prefix}false_alarm_ratio": r.false_alarm_ratio,
            f"{prefix}historical_cost": _sum([price(c, costs) for c, costs in each]),
        })
        if prefix == "":
            n = counts.n_occasions
            expense = _sum([price(c, costs) for c, costs in each]) / n
            never = _sum([price(Contingency(0, 0, c.n_events, c.n_non_events), costs) for c, costs in each]) / n
            always = _sum([price(Contingency(c.n_events, c.n_non_events, 0, 0), costs) for c, costs in each]) / n
            perfect = _sum([price(Contingency(c.n_events, 0, 0, c.n_non_events), costs) for c, costs in each]) / n
            columns["net_benefit"] = (net_benefit(counts.hits, counts.false_alarms, n, p_star)
                                      if not np.isnan(p_star) else np.full(cutoffs.size, np.nan))
            columns["relative_value"] = relative_value_from_costs(expense, never, always, perfect)
    return pd.DataFrame(columns)


def _sum(items: Sequence, add=lambda a, b: a + b):
    """Items added left to right, the first as it is (so one item is returned untouched)."""
    out = items[0]
    for item in items[1:]:
        out = add(out, item)
    return out


def forecast_scores(history: History) -> dict[str, float]:
    """Event rate, Brier score and skill against the base rate, and ROC area of the evaluated
    occasions."""
    p, event = history.p[history.evaluated], history.event[history.evaluated]
    return {"event_rate": float(event.mean()), "brier_score": float(scoring.brier_score(p, event)),
            "brier_skill_score": float(scoring.brier_skill_score(p, event)),
            "roc_auc": float(scoring.roc_auc(p, event))}


def forecast_quality(history: History, cutoffs: np.ndarray) -> tuple[dict[str, float], pd.DataFrame,
                                                                    pd.DataFrame]:
    """:func:`forecast_scores`, the value curve (:func:`forecast_value_curve`) and the reliability table
    (ten equal bins) of the evaluated occasions."""
    p, event = history.p[history.evaluated], history.event[history.evaluated]
    reliability = pd.DataFrame(dataclasses.asdict(scoring.reliability_table(p, event)))
    return forecast_scores(history), forecast_value_curve(history, cutoffs), reliability


def forecast_value_curve(history: History, cutoffs: np.ndarray) -> pd.DataFrame:
    """Relative economic value across cost-loss ratios (Richardson 2000): the potential value (best
    cutoff for each ratio) and the value of acting at a cutoff equal to the ratio."""
    p, event = history.p[history.evaluated], history.event[history.evaluated]
    counts = count_at_cutoffs(p, event, cutoffs)
    ratios = decimals.grid(0.01, 0.99, 0.01)
    base_rate = float(event.mean())
    at_ratio = count_at_cutoffs(p, event, ratios)
    r_at = rates(at_ratio)
    return pd.DataFrame({
        "cost_loss_ratio": ratios,
        "potential_value": value_curve(counts, ratios),
        "value_at_cutoff_equal_to_ratio": relative_value(r_at.hit_rate, r_at.false_alarm_rate,
                                                                 base_rate, ratios),
    })
