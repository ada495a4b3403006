"""The report a budget holder reads: ``report.html`` and the figures under ``figures/``.

The page is one self-contained file: figures embedded as base64 PNG, inline CSS and plain inline
JavaScript, no reference to any network resource. Every number the page shows is formatted here, in
Python, by :func:`format_value` and the helpers beside it; the cutoff explorer's JavaScript only
swaps in strings prepared here, so the page, ``summary.json`` and ``cutoffs.csv`` cannot disagree
in rounding. Without JavaScript the page shows everything at the recommended cutoff.

Stress tests and operating rules get their sections only when the run has them (``summary["stress"]``
or ``result.stress``; ``summary["operations"]`` or ``result.operations``), and so does a portfolio of
more than one site (``summary["portfolio"]``).
"""

from __future__ import annotations

import base64
import calendar
import json
import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import jinja2
import numpy as np

from . import __version__, figures
from .decision import OBJECTIVE_NAMES
from .figures import Words
from .scenario import WEEKDAYS

__all__ = ["render_report", "headline_numbers", "recommendation", "format_value", "money", "share",
           "cutoff_text", "strategy_label", "risk_view", "FIELD_FORMATS", "CAUTION", "OBJECTIVE_WORDS"]

CAUTION = ("A cost-optimal cutoff does not replace safety rules, site risk assessments, local regulations "
           "or licensed professional judgement. The numbers price money only; they do not weigh harm "
           "to people.")

# each [decision] objective in words (what it minimises: decision.OBJECTIVE_NAMES): the basis of
# "costs no more than the reference", and its name on the risk chart
OBJECTIVE_WORDS = {
    "mean": {"basis": "on average", "name": "Lowest expected cost"},
    "p95": {"basis": "in its 95th-percentile season", "name": "Lowest 95th percentile"},
    "shortfall10": {"basis": "over the worst 10% of seasons", "name": "Lowest mean of the worst 10%"},
}

# how each cutoffs.csv column the explorer shows is written on the page
FIELD_FORMATS = {"cutoff": "cutoff", "hits": "count", "false_alarms": "count", "misses": "count",
                 "correct_negatives": "count", "hit_rate": "rate", "specificity": "rate",
                 "miss_rate": "rate", "false_alarm_rate": "rate", "mean_cost": "money",
                 "p05_cost": "money", "p95_cost": "money", "mean_savings": "money",
                 "prob_saving": "share"}

_ENV = jinja2.Environment(loader=jinja2.PackageLoader("simulator", "templates"),
                          autoescape=jinja2.select_autoescape(["html", "j2"]),
                          undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)


# ------------------------------------------------------------------------------------------------
# formatting: the one place numbers become text

def money(value: float | None, currency: str) -> str:
    """Whole units with thousands separators: ``391,743 EUR``; a dash when undefined."""
    if value is None or not math.isfinite(value):
        return "\u2013"
    rounded = round(float(value))
    return f"{rounded if rounded else 0:,} {currency}"


def share(value: float | None) -> str:
    """A probability as a whole percentage; never rounds a rare loss away (``over 99%``)."""
    if value is None or not math.isfinite(value):
        return "\u2013"
    if 0.995 <= value < 1.0:
        return "over 99%"
    if 0.0 < value < 0.005:
        return "under 1%"
    return f"{value:.0%}"


def rate(value: float | None) -> str:
    """A rate of the classification matrix, one decimal: ``72.7%``."""
    if value is None or not math.isfinite(value):
        return "n/a"
    return f"{value:.1%}"


def cutoff_text(value: float, decimals: int = 2) -> str:
    return f"{value:.{decimals}f}"


def format_value(kind: str, value: Any, currency: str, decimals: int = 2) -> str:
    """Text of one value by kind: ``money``, ``share``, ``rate``, ``count`` or ``cutoff``."""
    if kind == "money":
        return money(value, currency)
    if kind == "share":
        return share(value)
    if kind == "rate":
        return rate(value)
    if kind == "count":
        return f"{int(value):,}"
    if kind == "cutoff":
        return cutoff_text(value, decimals)
    raise ValueError(f"unknown kind of value {kind!r}")


def _ranges(ranges: list, decimals: int) -> str:
    parts = [f"{cutoff_text(lo, decimals)} to {cutoff_text(hi, decimals)}" for lo, hi in ranges]
    return " and from ".join(parts)


def _sentence_case(text: str) -> str:
    return text[:1].upper() + text[1:]


def strategy_label(name: str, action: str, event: str, occasion: str = "day") -> str:
    """A strategy in plain words, in the scenario's terms (lower case, for mid-sentence use)."""
    return {
        "model": f"{action} when the probability of \u201c{event}\u201d reaches the cutoff",
        "never_act": f"never {action}",
        "always_act": f"always {action}",
        "persistence": f"{action} if \u201c{event}\u201d happened on the previous {occasion}",
        "seasonal_rate": f"{action} in the months when \u201c{event}\u201d was common enough to pay",
        "perfect": "act exactly when it pays: the lowest cost possible",
    }.get(name, name.replace("_", " "))


_LEGEND = {"never_act": "Never {a}", "always_act": "Always {a}", "persistence": "Persistence (act as the previous {o} needed)",
           "seasonal_rate": "By calendar month", "perfect": "Perfect foresight"}


# ------------------------------------------------------------------------------------------------
# the recommendation

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
        "break_even": _ranges(summary["break_even"], decimals),
    }


def recommendation(summary: Mapping[str, Any], occasion: str = "day", decimals: int = 2) -> list[str]:
    """The recommendation in three plain sentences, from ``summary.json`` alone."""
    n = headline_numbers(summary, decimals)
    s = summary["scenario"]
    action, event = s["action"], s["event"]
    ref = strategy_label(summary["reference"], action, event, occasion)
    first = (f"{_sentence_case(action)} when the forecast probability of \u201c{event}\u201d is "
             f"{n['cutoff']} or more: a season then costs {n['mean_cost']} on average, and between "
             f"{n['p05_cost']} and {n['p95_cost']} in 90% of simulated seasons.")
    more_or_less = "less" if summary["savings"]["mean"] >= 0 else "more"
    second = (f"That is {n['saving']} a season {more_or_less} than the reference rule ({ref}), and "
              f"following the forecast saves money in {n['prob_saving']} of simulated seasons.")
    basis = OBJECTIVE_WORDS[summary.get("objective", "mean")]["basis"]
    if summary["break_even"]:
        third = (f"Any cutoff from {n['break_even']} costs no more than the reference rule {basis}.")
    else:
        third = f"No cutoff costs less than the reference rule {basis}: keep to the reference rule."
    return [first, second, third]


def risk_view(summary: Mapping[str, Any], decimals: int = 2) -> dict[str, str]:
    """The trade-off between the average and the bad season, in words, from ``summary.json``.

    ``tail`` is the bad-season measure the report draws (the 95th percentile when the objective is
    ``p95``, else the mean of the worst 10% of seasons); ``paragraph`` compares the recommended
    cutoff with the one the other view chooses (the mean's, or the tail's when the objective is the
    mean), each difference once, per season.
    """
    cur = summary["currency"]
    objective = summary.get("objective", "mean")
    choices = summary["objectives"]
    tail = "p95" if objective == "p95" else "shortfall10"
    column = {"p95": "p95_cost", "shortfall10": "shortfall10_cost"}[tail]
    tail_what = OBJECTIVE_NAMES[tail]
    other = tail if objective == "mean" else "mean"
    chosen, alternative = choices[objective], choices[other]
    here = cutoff_text(chosen["cutoff"], decimals)
    if alternative["cutoff"] == chosen["cutoff"]:
        paragraph = (f"Here the lowest expected season cost and the lowest {tail_what} come at the same cutoff, "
                     f"{here}: the average season and the bad season ask for the same choice.")
    else:
        mean_gap = alternative["mean_cost"] - chosen["mean_cost"]
        tail_gap = alternative[column] - chosen[column]
        there = cutoff_text(alternative["cutoff"], decimals)
        reason = "the lowest " + ("expected season cost" if other == "mean" else tail_what)
        paragraph = (f"Choosing for {reason} instead would move the cutoff from {here} to {there}: a season would "
                     f"cost {money(abs(mean_gap), cur)} {'more' if mean_gap > 0 else 'less'} on average, and the "
                     f"{tail_what} would be {money(abs(tail_gap), cur)} {'higher' if tail_gap > 0 else 'lower'} "
                     f"(each per season, over {summary['replicates']:,} simulated seasons).")
    return {"tail": tail, "tail_what": tail_what, "column": column, "paragraph": paragraph,
            "objective_what": OBJECTIVE_NAMES[objective]}


# ------------------------------------------------------------------------------------------------
# the page

def _plain(value: Any) -> Any:
    """numpy values as plain Python, NaN as None (JSON for the page's script)."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple | np.ndarray):
        return [_plain(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _data_uri(png: bytes) -> str:
    return "data:image/png;base64," + base64.b64encode(png).decode("ascii")


def _months(months: tuple[int, ...]) -> str:
    names = [calendar.month_name[m] for m in months]
    contiguous = all((b - a) % 12 == 1 for a, b in zip(months, months[1:]))
    if len(months) == 12:
        return "all year"
    if contiguous and len(months) > 2:
        return f"{names[0]} to {names[-1]}"
    return ", ".join(names)


def _weekdays(weekdays: tuple[str, ...]) -> str:
    full = {"mon": "Monday", "tue": "Tuesday", "wed": "Wednesday", "thu": "Thursday", "fri": "Friday",
            "sat": "Saturday", "sun": "Sunday"}
    order = list(full)
    days = sorted(weekdays, key=order.index)
    if len(days) == 7:
        return "every day of the week"
    if len(days) > 2 and order.index(days[-1]) - order.index(days[0]) == len(days) - 1:
        return f"{full[days[0]]} to {full[days[-1]]}"
    return ", ".join(full[w] for w in days)


def _occasion_days(result) -> str:
    """Which days of the season are occasions: its weekdays that the history has rows on (daily
    data), or how often the history has a row; and how many of its holidays the season skips."""
    frequency = result.history.frequency
    if frequency.is_daily:
        days = tuple(w for w in result.scenario.season.weekdays if WEEKDAYS.index(w) in frequency.weekdays)
        text = _weekdays(days)
    else:
        text = {"weekly": "one occasion a week", "monthly": "one occasion a month"}.get(
            frequency.kind, f"one occasion every {frequency.step_days} days")
    skipped = result.calendar.holidays.size
    if skipped:
        text += f", less {skipped} holiday{'s' if skipped > 1 else ''}"
    return text


def _decimals(step: float) -> int:
    """Decimals that write every cutoff of a grid with this step exactly (at least two)."""
    return next((d for d in range(2, 7) if abs(round(step, d) - step) < 1e-12), 6)


def _explorer_rows(table, currency: str, decimals: int) -> list[dict[str, str]]:
    columns = {name: table[name].to_numpy() for name in FIELD_FORMATS}
    return [{name: format_value(kind, columns[name][i], currency, decimals)
             for name, kind in FIELD_FORMATS.items()} for i in range(len(table))]


def _matrix(row, prefix: str, currency: str) -> dict[str, str]:
    """One period's classification matrix at a cutoff, formatted, with its cost per occasion."""
    out = {name: format_value(kind, row[prefix + name], currency)
           for name, kind in FIELD_FORMATS.items() if kind in ("count", "rate")}
    n = int(sum(row[prefix + k] for k in ("hits", "false_alarms", "misses", "correct_negatives")))
    out["n"] = f"{n:,}"
    out["cost"] = money(row[prefix + "historical_cost"] / n if n else None, currency)
    return out


def signed_money(value: float | None, currency: str) -> str:
    text = money(value, currency)
    return "+" + text if value is not None and math.isfinite(value) and round(value) > 0 else text


def _stress_cases(summary: Mapping[str, Any], currency: str, decimals: int) -> list[dict[str, Any]]:
    """One display row per stress case and view (``summary["stress"]``), the base case first."""
    if not summary.get("stress"):
        return []
    ref = summary["reference"]
    model = summary["strategies"]["model"]
    rows = [{"name": "As in the history (base case)", "mean": model["mean"], "p05": model["p05"],
             "p95": model["p95"], "best_mean": model["mean"], "extra": "\u2013",
             "reference": money(summary["strategies"][ref]["mean"], currency),
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


def _operations(summary: Mapping[str, Any], currency: str) -> dict[str, Any] | None:
    """The operating rules' results at the recommended cutoff (``summary["operations"]``) for display."""
    ops = summary.get("operations")
    if not ops:
        return None
    at = ops["at_recommended_cutoff"]
    ref = (ops.get("baselines") or {}).get(summary["reference"], {})
    ref_parts = ref.get("mean_components", {})
    parts = [(key, value) for key, value in at["mean_components"].items() if key != "total_cost"]
    dates = at.get("completion_date") or {}
    late = at.get("days_late") or {}
    days = [(k.replace("_", " ").capitalize(), f"{v:,.1f}") for k, v in (at.get("mean_days") or {}).items()]
    return {
        "components": [(_component_name(k), money(v, currency), money(ref_parts.get(k), currency))
                       for k, v in parts],
        "total": (money(at["mean_components"].get("total_cost"), currency),
                  money(ref_parts.get("total_cost"), currency)),
        "names": [_component_name(k) for k, _ in parts], "values": [v for _, v in parts],
        "reference_values": [ref_parts.get(k, float("nan")) for k, _ in parts] if ref_parts else None,
        "dates": {k: dates.get(k) or "not finished" for k in ("p05", "p50", "p95")},
        "share_completed": share(at.get("share_completed")), "share_late": share(at.get("share_late")),
        "late_mean": f"{late.get('mean', float('nan')):.1f}", "late_p95": f"{late.get('p95', float('nan')):.0f}",
        "weeks": [w for w in at.get("completion_by_week") or [] if w[0] != "unfinished"],
        "deadline": ops.get("deadline"), "crews": ops.get("crews"), "work": ops.get("work_crew_days"),
        "working_days": ops.get("working_days"), "overtime_days": ops.get("overtime_days_available"),
        "days": days, "caution": ops.get("caution", ""),
    }


def _read_back(section, currency: str) -> list[tuple[str, str]]:
    """A scenario section's keys as plain (label, value) pairs; money keys in the currency."""
    out = []
    for key, value in section.model_dump(exclude_none=True).items():
        if isinstance(value, Mapping):
            value = ", ".join(f"{k.replace('_', ' ')} {v:g}" for k, v in value.items() if v is not None)
        elif isinstance(value, list | tuple):
            value = ", ".join(str(v) for v in value) or "none"
        elif isinstance(value, float) and any(w in key for w in ("rate", "cost", "damages")):
            value = money(value, currency)
        out.append((key.replace("_", " "), str(value)))
    return out


def _rules_read_back(scenario) -> list[tuple[str, list[tuple[str, str]]]]:
    """The ``[operations]`` rules and every ``[[stress]]`` case, key by key, as the reader wrote them."""
    rows = []
    rules = getattr(scenario, "operations", None)
    if rules is not None:
        rows.append(("Operating rules", _read_back(rules, scenario.currency)))
    for case in getattr(scenario, "stress", None) or ():
        rows.append((f"Stress case \u201c{case.name}\u201d",
                     [(k, v) for k, v in _read_back(case, scenario.currency) if k != "name"]))
    return rows


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


def render_report(result, summary: Mapping[str, Any]) -> dict[str, bytes]:
    """``report.html`` and ``figures/<name>.png``, rendered in memory from a run and its summary."""
    scenario, history, decision, table = result.scenario, result.history, result.decision, result.table
    currency = scenario.currency
    action, event = scenario.decision.action, scenario.event.name
    occasion = "day" if history.frequency.is_daily else "occasion"
    decimals = _decimals(scenario.decision.cutoffs[2])
    words = Words(event=event, action=action, currency=currency, occasion=occasion,
                  reference=result.reference, decimals=decimals,
                  labels={k: v.format(a=action, e=event, o=occasion) for k, v in _LEGEND.items()})
    best = decision.recommended_index
    row = table.iloc[best]
    ref_label = strategy_label(result.reference, action, event, occasion)
    savings = result.baseline_cost[result.reference] - result.model_cost[:, best]

    crossings = sorted({x for lo, hi in decision.break_even for x in (lo, hi)
                        if x not in (float(result.cutoffs[0]), float(result.cutoffs[-1]))})
    charts = {
        "season_cost": figures.cost_chart(
            result.cutoffs, table["mean_cost"].to_numpy(), table["p05_cost"].to_numpy(),
            table["p95_cost"].to_numpy(), {k: float(v.mean()) for k, v in result.baseline_cost.items()},
            decision.recommended_cutoff, result.theoretical_cutoff, crossings, words),
        "savings": figures.savings_chart(savings, ref_label, words),
        "reliability": figures.reliability_chart(
            *(result.reliability[c].to_numpy() for c in ("forecast_mean", "observed_frequency", "n",
                                                         "bin_lower", "bin_upper")),
            result.quality["event_rate"], words),
        "roc": figures.roc_chart(table["false_alarm_rate"].to_numpy(), table["hit_rate"].to_numpy(),
                                 (row["false_alarm_rate"], row["hit_rate"]), decision.recommended_cutoff,
                                 result.quality["roc_auc"], words),
        "relative_value": figures.value_chart(
            result.value_curve["cost_loss_ratio"].to_numpy(), result.value_curve["potential_value"].to_numpy(),
            result.value_curve["value_at_cutoff_equal_to_ratio"].to_numpy(), result.theoretical_cutoff,
            float(row["relative_value"]), words),
    }
    risk = risk_view(summary, decimals)
    charts["risk"] = figures.risk_chart(
        result.cutoffs, table["mean_cost"].to_numpy(), table[risk["column"]].to_numpy(),
        _sentence_case(risk["tail_what"]), decision.choices,
        {name: w["name"] for name, w in OBJECTIVE_WORDS.items()}, decision.objective, words)
    stress = _stress_cases(summary, currency, decimals)
    if stress:
        charts["stress"] = figures.stress_chart([c["name"] for c in stress], [c["mean"] for c in stress],
                                                [c["p05"] for c in stress], [c["p95"] for c in stress],
                                                [c["best_mean"] for c in stress], words)
    operations = _operations(summary, currency)
    if operations and operations["values"]:
        charts["operations_costs"] = figures.components_chart(
            operations["names"], operations["values"], operations["reference_values"], words)
    if operations and operations["weeks"]:
        charts["completion"] = figures.completion_chart(
            [w[0] for w in operations["weeks"]], [w[1] for w in operations["weeks"]], operations["deadline"], words)

    periods = [("Whole history", "")]
    if history.has_validation:
        periods += [("Training period", "training_"), ("Validation period", "validation_")]
    short = dict(words.labels, model=f"Follow the forecast at {cutoff_text(decision.recommended_cutoff, decimals)}")
    strategies = [{"label": short.get(name, name),
                   "what": "" if name in ("never_act", "always_act") else strategy_label(name, action, event, occasion),
                   "reference": name == result.reference, "model": name == "model",
                   **{k: money(v, currency) for k, v in d.items()},
                   "versus": money(summary["strategies"][result.reference]["mean"] - d["mean"], currency)}
                  for name, d in summary["strategies"].items()]
    explorer = {"recommended": best, "cutoff": [float(c) for c in result.cutoffs],
                "mean_cost": [float(c) for c in table["mean_cost"]],
                "geometry": charts["season_cost"].geometry,
                "rows": _explorer_rows(table, currency, decimals)}
    context = {
        "s": summary, "scenario": scenario, "history": history, "words": words, "version": __version__,
        "recommendation": recommendation(summary, occasion, decimals), "numbers": headline_numbers(summary, decimals),
        "caution": CAUTION, "hazard": scenario.event.hazard, "occasion": occasion,
        "ref_label": ref_label, "Action": _sentence_case(action), "decimals": decimals,
        "cut": lambda v: cutoff_text(v, decimals), "money": lambda v: money(v, currency), "share": share,
        "rate": rate, "ranges": lambda r: _ranges(r, decimals) or "none",
        "images": {name: _data_uri(chart.png) for name, chart in charts.items()},
        "now": explorer["rows"][best], "periods": [(label, _matrix(row, p, currency)) for label, p in periods],
        "explorer_json": json.dumps(_plain(explorer), separators=(",", ":")).replace("</", "<\\/"),
        "strategies": strategies, "losing": share(float((savings < 0).mean())),
        "stress": stress, "operations": operations,
        "rules": _rules_read_back(scenario),
        "months": _months(scenario.season.months), "weekdays": _occasion_days(result),
        "scenario_file": Path(scenario.source).name if scenario.source else "(given in code)",
        "auto_block": scenario.simulation.block_days == "auto",
        "n_cutoffs": len(table), "recommended_index": best,
        "honest": (summary.get("selection") or {}).get("validation"),
        "forward": (summary.get("selection") or {}).get("walk_forward"),
        "calibration": summary.get("calibration"),
        "portfolio": _portfolio(summary, currency, decimals),
        "risk": risk,
    }
    html = _ENV.get_template("report.html.j2").render(context)
    files = {"report.html": html.encode("utf-8")}
    files.update({f"figures/{name}.png": chart.png for name, chart in charts.items()})
    return files
