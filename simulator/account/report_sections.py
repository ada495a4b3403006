"""What each section of the report shows, formatted for the page: the first screen's numbers, the
cutoff explorer's rows, the classification matrices, the stress cases, the operating rules, the
portfolio, the completion curve and the cost chart's zoom.

Every number is formatted here, in Python (:func:`~simulator.notation.prose.format_value` and the
formatters beside it), so the page, ``summary.json`` and ``cutoffs.csv`` cannot disagree in rounding.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from .findings import account
from ..notation.prose import cutoff_text, format_value, money, ranges_text, share, signed_money
from .figure_style import Chart
from ..inputs.scenario_types import BASELINES

__all__ = ["headline_numbers", "recommendation", "FIELD_FORMATS", "RULES_FIELD_FORMATS", "PORTFOLIO_ROWS"]

# how each cutoffs.csv column the explorer shows is written on the page
FIELD_FORMATS = {"cutoff": "cutoff", "hits": "count", "false_alarms": "count", "misses": "count",
                 "correct_negatives": "count", "hit_rate": "rate", "specificity": "rate",
                 "miss_rate": "rate", "false_alarm_rate": "rate", "mean_cost": "money",
                 "p05_cost": "money", "p95_cost": "money", "mean_savings": "money",
                 "prob_saving": "share"}


def _sentence_case(text: str) -> str:
    return text[:1].upper() + text[1:]


def headline_numbers(summary: Mapping[str, Any], decimals: int = 2) -> dict[str, str]:
    """The numbers the recommendation quotes, as they are written on the page."""
    cur = summary["currency"]
    model = summary["strategies"]["model"]
    savings = summary["savings"]
    return {
        "cutoff": cutoff_text(summary["recommended_cutoff"], decimals),
        "mean_cost": money(model["mean"], cur),
        "p05_cost": money(model["p05"], cur),
        "p95_cost": money(model["p95"], cur),
        "saving": money(abs(savings["mean"]), cur),
        "prob_saving": share(savings["prob_saving"]),
        "break_even": ranges_text(summary["break_even"], decimals),
    }


def recommendation(summary: Mapping[str, Any], occasion: str = "day", decimals: int = 2) -> list[str]:
    """The recommendation in plain sentences: the account's first findings (``summary.json`` alone)."""
    return account(summary).sentences


# with [operations]: the lateness each cutoff gives, shown by the explorer too
RULES_FIELD_FORMATS = {"share_late": "share", "mean_days_late": "days"}


def _fields(table) -> dict[str, str]:
    """The explorer's fields of this run's cutoff table (lateness only with operating rules)."""
    return {**FIELD_FORMATS, **{k: v for k, v in RULES_FIELD_FORMATS.items() if k in table.columns}}


def _explorer_rows(table, currency: str, decimals: int) -> list[dict[str, str]]:
    fields = _fields(table)
    columns = {name: table[name].to_numpy() for name in fields}
    return [{name: format_value(kind, columns[name][i], currency, decimals)
             for name, kind in fields.items()} for i in range(len(table))]


def _matrix(row, prefix: str, currency: str) -> dict[str, str]:
    """One period's classification matrix at a cutoff, formatted, with its cost per occasion."""
    out = {name: format_value(kind, row[prefix + name], currency)
           for name, kind in FIELD_FORMATS.items() if kind in ("count", "rate")}
    n = int(sum(row[prefix + k] for k in ("hits", "false_alarms", "misses", "correct_negatives")))
    out["n"] = f"{n:,}"
    if prefix + "historical_cost" in row:
        out["cost"] = money(row[prefix + "historical_cost"] / n if n else None, currency)
    elif "cost_per_occasion" in row:
        out["cost"] = money(row["cost_per_occasion"], currency)
    return out


def _stress_cases(summary: Mapping[str, Any], currency: str, decimals: int) -> list[dict[str, Any]]:
    """One display row per stress case and view (``summary["stress"]``), the base case first."""
    if not summary.get("stress"):
        return []
    ref = summary["reference"]
    model = summary["strategies"]["model"]
    rows = [{"name": "As in the history (base case)", "mean": model["mean"], "p05": model["p05"],
             "p95": model["p95"], "best_mean": model["mean"], "extra": "\u2013",
             "reference": money(summary["strategies"][ref]["mean"], currency),
             "reference_mean": summary["strategies"][ref]["mean"],
             "saving": money(summary["savings"]["mean"], currency), "prob_saving": share(summary["savings"]["prob_saving"]),
             "best": cutoff_text(summary["recommended_cutoff"], decimals), "moving": "\u2013", "headline": ""}]
    for case in summary["stress"]:
        views = case.get("views") or []
        for v in views:
            name = _sentence_case(case["name"])
            if len(views) > 1:
                name += (" (forecast adapted to the new rate)" if v["probabilities"] == "adapted"
                         else " (probabilities as forecast)")
            m = v["strategies"]["model"]
            rows.append({"name": name, "mean": m["mean"], "p05": m["p05"], "p95": m["p95"],
                         "best_mean": v["best_cost"]["mean"], "extra": signed_money(v["extra_cost"], currency),
                         "reference": money(v["strategies"][ref]["mean"], currency),
                         "reference_mean": v["strategies"][ref]["mean"],
                         "saving": money(v["savings"]["mean"], currency),
                         "prob_saving": share(v["savings"]["prob_saving"]),
                         "best": cutoff_text(v["best_cutoff"], decimals),
                         "moving": money(v["saved_by_moving"], currency), "headline": v.get("headline", "")})
    for row in rows:
        row["mean_text"] = money(row["mean"], currency)
        row["range_text"] = f"{money(row['p05'], currency)} to {money(row['p95'], currency)}"
    return rows


def _component_name(key: str) -> str:
    return key.removesuffix("_cost").replace("_", " ").capitalize()


def _day_meanings(rules) -> dict[str, str]:
    """What each day count of the operating rules (``operations.COUNTS``) counts, in plain words."""
    standby = getattr(rules, "max_standby_days", None)
    return {
        "days_out": "Regular working days the crews went out.",
        "spoiled_days": "Of those, the days spoiled: the day's work lost (wholly or in part) and spoilage paid.",
        "standby_days": "Regular working days the crews were stood down while work was left.",
        "overtime_days": "Overtime days worked to catch up with the work left.",
        "spoiled_overtime_days": "Of those, the overtime days spoiled.",
        "retention_days": ("Days the crews went out whatever the forecast, only because they had been stood down "
                           + (f"{standby} days in a row" if standby else "too many days in a row")
                           + " (the retention rule, max standby days in the assumptions)."),
        "safety_stop_days": ("Working days the safety stop kept the crews in when the forecast or the retention "
                             "rule would have sent them out."),
    }


def _operations(summary: Mapping[str, Any], currency: str, rules=None) -> dict[str, Any] | None:
    """The operating rules' results at the recommended cutoff (``summary["operations"]``) for display;
    ``rules`` (the scenario's ``[operations]``) words the explanation of each day count."""
    ops = summary.get("operations")
    if not ops:
        return None
    at = ops["at_recommended_cutoff"]
    ref = (ops.get("baselines") or {}).get(summary["reference"], {})
    ref_parts = ref.get("mean_components", {})
    parts = [(key, value) for key, value in at["mean_components"].items() if key != "total_cost"]
    dates = at.get("completion_date") or {}
    late = at.get("days_late") or {}
    meanings = _day_meanings(rules)
    days = [(k.replace("_", " ").capitalize(), f"{v:,.1f}", meanings.get(k, ""))
            for k, v in (at.get("mean_days") or {}).items()]
    return {
        "components": [(_component_name(k), money(v, currency), money(ref_parts.get(k), currency))
                       for k, v in parts],
        "total": (money(at["mean_components"].get("total_cost"), currency),
                  money(ref_parts.get("total_cost"), currency)),
        "names": [_component_name(k) for k, _ in parts], "values": [v for _, v in parts],
        "reference_values": [ref_parts.get(k, float("nan")) for k, _ in parts] if ref_parts else None,
        "dates": {k: dates.get(k) or "not finished" for k in ("p05", "p50", "p95")},
        "share_completed": share(at.get("share_completed")), "share_late": share(at.get("share_late")),
        "reference_share_late": share(ref.get("share_late")),
        "late_mean": f"{late.get('mean', float('nan')):.1f}", "late_p95": f"{late.get('p95', float('nan')):.0f}",
        "deadline": ops.get("deadline"), "crews": ops.get("crews"), "work": ops.get("work_crew_days"),
        "working_days": ops.get("working_days"), "overtime_days": ops.get("overtime_days_available"),
        "days": days,
    }


def _zoomed(chart: Chart, cutoffs: np.ndarray, decimals: int) -> dict[str, str] | None:
    """The cutoffs the cost chart shows, when that is not the whole grid, for its caption."""
    g = chart.geometry
    if math.isclose(g["xmin"], float(cutoffs[0])) and math.isclose(g["xmax"], float(cutoffs[-1])):
        return None
    return {"lo": cutoff_text(g["xmin"], decimals), "hi": cutoff_text(g["xmax"], decimals),
            "first": cutoff_text(float(cutoffs[0]), decimals), "last": cutoff_text(float(cutoffs[-1]), decimals)}


PORTFOLIO_ROWS = 25  # sites the report's ranking shows; sites.csv has them all


def _portfolio(summary: Mapping[str, Any], currency: str, decimals: int) -> dict[str, Any] | None:
    """The portfolio of a run with more than one site (``summary["portfolio"]``), for display."""
    p = summary.get("portfolio")
    if not p or p["sites"] < 2:
        return None
    totals, savings = p["total_cost"], p["savings"]
    rows = []
    for label, key in (("Each site at its own cutoff", "own_cutoffs"),
                       (f"One cutoff for all sites, {cutoff_text(p['common_cutoff'], decimals)}", "common_cutoff"),
                       ("The reference rule at every site", "reference")):
        t, sv = totals[key], savings.get(key)
        rows.append({"label": label, "mean": money(t["mean"], currency),
                     "range": f"{money(t['p05'], currency)} to {money(t['p95'], currency)}",
                     "saving": money(sv["mean"], currency) if sv else "\u2013",
                     "prob_saving": share(sv["prob_saving"]) if sv else "\u2013"})
    ranking = [{"rank": r["rank"], "site": r["site"], "cutoff": cutoff_text(r["recommended_cutoff"], decimals),
                "value": money(r["forecast_value"], currency), "saving": money(r["mean_savings"], currency),
                "prob_saving": share(r["prob_saving"])} for r in p["ranking"][:PORTFOLIO_ROWS]]
    spread = p["spread"]
    stress = [{"site": site, "headlines": [v["headline"] for case in cases for v in case["views"]]}
              for site, cases in list((p.get("stress") or {}).items())[:PORTFOLIO_ROWS]]
    checks = [{"site": site, "cutoff": cutoff_text(c["validation"]["chosen_cutoff"], decimals),
               "optimism": money(c["validation"]["optimism"], currency), "flag": c["validation"]["flag"]}
              for site, c in list((p.get("checks") or {}).items())[:PORTFOLIO_ROWS] if "validation" in c]
    return {"n": p["sites"], "column": p["site_column"], "rows": rows, "ranking": ranking,
            "stress": stress, "checks": checks,
            "more": max(0, p["sites"] - PORTFOLIO_ROWS),
            "own_gain": money(p["own_versus_common"]["mean"], currency),
            "own_cheaper": share(p["own_versus_common"]["prob_cheaper"]),
            "sd": money(spread["sd_total_cost"], currency),
            "understated": spread["sd_if_independent"] < spread["sd_total_cost"],
            "sd_independent": money(spread["sd_if_independent"], currency)}


def _completion_by_day(result) -> tuple[list[str], list[float], list[float]] | None:
    """Share of simulated seasons with the work finished by the end of each day of the season, at
    the recommended cutoff and under the reference rule (from the replicates' completion days; None
    without a backlog): dates, shares at the cutoff, shares under the reference."""
    ops = result.operations
    if ops is None or "completion_index" not in ops.extras or not ops.rules.limited:
        return None
    days = ops.rules.n_occasions

    def by_day(lane: int) -> list[float]:
        index = ops.lane("completion_index", lane)
        finished = np.bincount(index[index >= 0], minlength=days)[:days]
        return list(np.cumsum(finished) / index.size)

    reference = ops.n_cutoffs + BASELINES.index(result.reference)
    return ([str(d) for d in ops.rules.dates[:days]], by_day(result.decision.recommended_index),
            by_day(reference))
