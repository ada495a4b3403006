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
import hashlib
import json
import math
import re
from collections.abc import Mapping
from functools import partial
from pathlib import Path
from typing import Any

import jinja2
import numpy as np

from .. import __version__
from . import figures
from .findings import OBJECTIVE_WORDS, account, bad_season, season_name, seasons_text, short_label, strategy_label
from ..notation.prose import (cutoff_decimals, cutoff_text, format_value, money, money_exact, rate, ranges_text, share,
                              signed_money)
from .cautions import GENERAL
from ..pricing.decision import OBJECTIVE_NAMES
from ..analysis.verdict import RULE_WORDS
from .figures import Words
from .sensitivity_view import report_section
from .tornado import tornado_chart
from ..inputs.scenario import BASELINES
from ..inputs.scenario import WEEKDAYS

__all__ = ["render_report", "headline_numbers", "recommendation", "format_value", "money", "share",
           "cutoff_text", "strategy_label", "FIELD_FORMATS", "CAUTION"]

CAUTION = GENERAL  # the general caution (simulator.cautions); summary["cautions"] lists every one of a run

# how each cutoffs.csv column the explorer shows is written on the page
FIELD_FORMATS = {"cutoff": "cutoff", "hits": "count", "false_alarms": "count", "misses": "count",
                 "correct_negatives": "count", "hit_rate": "rate", "specificity": "rate",
                 "miss_rate": "rate", "false_alarm_rate": "rate", "mean_cost": "money",
                 "p05_cost": "money", "p95_cost": "money", "mean_savings": "money",
                 "prob_saving": "share"}

# what each file beside the report holds (the report lists the files actually written)
FILE_NOTES = {"summary.json": " (every headline number, full precision)", "cutoffs.csv": " (one row per cutoff)",
              "value_curve.csv": " (relative value by cost-loss ratio)", "reliability.csv": " (reliability table)",
              "selection.csv": " (the cutoff chosen on earlier periods, priced on later ones)",
              "stress.csv": " (every stress case)", "sites.csv": " (each site at its own cutoff)",
              "calibration.csv": " (the recalibration curve)",
              "forecasts.csv": " (each forecast at every cutoff, on the same replicate seasons)",
              "sensitivity.csv": " (each cost moved alone: its ends and switching values)",
              "datapackage.json": " (what every column of the CSV files means, with its unit)"}

_ENV = jinja2.Environment(loader=jinja2.PackageLoader("simulator.account", "templates"),
                          autoescape=jinja2.select_autoescape(["html", "j2"]),
                          undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)


# ------------------------------------------------------------------------------------------------
# the recommendation: rendered from the run's account (simulator.account), as the terminal is

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


# ------------------------------------------------------------------------------------------------
# the page

# characters that could end or bend a <script> element's content, or a JavaScript string, in JSON
_SCRIPT_UNSAFE = {"<": "\\u003c", ">": "\\u003e", "&": "\\u0026", "\u2028": "\\u2028", "\u2029": "\\u2029"}


def script_json(value: Any) -> str:
    """``value`` as JSON that is safe inside a ``<script>`` element: ``<``, ``>``, ``&``, U+2028 and
    U+2029 written as ``\\u`` escapes, so that no string in it (a user's ``</script>`` or ``<!--``
    followed by ``<script``) can close the element or switch the HTML parser into its
    script-data-escaped state (WHATWG HTML, "Restrictions for contents of script elements"). JSON
    reads the escapes back as the same characters."""
    text = json.dumps(_plain(value), separators=(",", ":"))
    return re.sub("[<>&\u2028\u2029]", lambda m: _SCRIPT_UNSAFE[m.group()], text)


_CSP_PLACEHOLDER = "__gonogo_script_hashes__"
_INLINE_SCRIPT = re.compile(r"<script>(.*?)</script>", re.S)


def _with_content_policy(html: str) -> str:
    """The page with its Content-Security-Policy filled in: nothing from the network
    (``default-src 'none'``), the page's own inline scripts by their SHA-256 hashes, its inline
    style, and ``data:`` images (W3C, Content Security Policy Level 3, sections 6 and 8.3)."""
    hashes = " ".join("'sha256-" + base64.b64encode(hashlib.sha256(body.encode("utf-8")).digest()).decode("ascii") + "'"
                      for body in _INLINE_SCRIPT.findall(html))
    return html.replace(_CSP_PLACEHOLDER, hashes, 1)


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


def _png_size(png: bytes) -> tuple[int, int]:
    """Width and height in pixels, from the IHDR chunk (PNG specification, W3C/ISO 15948, 11.2.2)."""
    return int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")


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


MONEY_KEYS = frozenset({"hit", "false_alarm", "miss", "correct_negative", "day_rate", "standby_rate",
                        "spoilage_cost", "damages_per_day_late", "unfinished_cost"})
"""Keys of ``[costs]`` and ``[operations]`` whose values are money (every other number is not)."""


def _plain_setting(key: str, value: Any, currency: str, action: str, event: str) -> tuple[str, str]:
    """One scenario setting as a reader says it: (label, value), settings' codes in words."""
    words = {
        "crews_out_on": ("crews go out", {"acting": f"when we {action}",
                                          "not_acting": f"when we do not {action}"}),
        "spoiled_on": ("a day out is spoiled", {"event": f"when \u201c{event}\u201d happens",
                                                "no_event": f"when \u201c{event}\u201d does not happen"}),
        "safety_probability": ("the safety stop reads", {"as_in_file": "the probability as written in the history file",
                                                         "of_event": f"the probability of \u201c{event}\u201d"}),
    }
    if key in words:
        label, choices = words[key]
        return label, choices.get(value, str(value))
    label = key.replace("_", " ")
    if isinstance(value, list | tuple):
        return label, ", ".join(str(v) for v in value) or "none"
    if key in MONEY_KEYS and isinstance(value, int | float):
        return label, money_exact(value, currency)
    if key == "work" and isinstance(value, int | float):
        return label, f"{value:,g} crew-days"
    if key == "event_rate":
        return label, f"{value:g} times as often as in the history"
    if key in ("overtime_multiple",):
        return label, f"{value:g} times the day rate"
    if key == "skill":
        return label, f"{value:.0%} of each probability's distance from the event rate kept"
    if key == "noise":
        return label, f"standard deviation {value:g} on the log-odds scale"
    if key == "block_days":
        return "spells", f"runs of {value:g} days on average"
    if key == "worst_seasons":
        return label, f"only the {value} costliest past seasons"
    if key == "work_lost_when_spoiled":
        return label, f"{value:.0%}"
    return label, str(value)


def _read_back(section, currency: str, action: str, event: str) -> list[tuple[str, str]]:
    """A scenario section's keys as plain (label, value) pairs; money in the currency, factors as such."""
    out = []
    for key, value in section.model_dump(exclude_none=True).items():
        if isinstance(value, Mapping):
            factors = key.endswith("multipliers")
            parts = [(k, v) for k, v in value.items() if v is not None]
            value = ", ".join(f"{k.replace('_', ' ')} \u00d7{v:g}" if factors else
                              " ".join(_plain_setting(k, v, currency, action, event)) for k, v in parts)
            out.append((key.replace("_", " "), value))
            continue
        out.append(_plain_setting(key, value, currency, action, event))
    return out


def _rules_read_back(scenario) -> list[tuple[str, list[tuple[str, str]]]]:
    """The ``[operations]`` rules and every ``[[stress]]`` case, key by key, in plain words."""
    rows = []
    words = (scenario.currency, scenario.decision.action, scenario.event.name)
    rules = getattr(scenario, "operations", None)
    if rules is not None:
        rows.append(("Operating rules", _read_back(rules, *words)))
    for case in getattr(scenario, "stress", None) or ():
        rows.append((f"Stress case \u201c{case.name}\u201d",
                     [(k, v) for k, v in _read_back(case, *words) if k != "name"]))
    return rows


PHONE_MEDIA = "screen and (max-width: 600px)"  # where the page shows the figures' narrow layout


def _zoomed(chart: figures.Chart, cutoffs: np.ndarray, decimals: int) -> dict[str, str] | None:
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


def render_report(result, summary: Mapping[str, Any]) -> dict[str, bytes]:
    """``report.html`` and ``figures/<name>.png``, rendered in memory from a run and its summary."""
    from .outputs import table_names
    scenario, history, decision, table = result.scenario, result.history, result.decision, result.table
    currency = scenario.currency
    action, event = scenario.decision.action, scenario.event.name
    occasion = "day" if history.frequency.is_daily else "occasion"
    decimals = cutoff_decimals(scenario.decision.cutoffs[2])
    # the lowest-cost cutoff is "recommended" only when the verdict advises acting on the forecast
    advised = bool((summary.get("verdict") or {}).get("use_forecast", True))
    best_word = "recommended" if advised else "cheapest"
    words = Words(event=event, action=action, currency=currency, occasion=occasion,
                  reference=result.reference, decimals=decimals, best=best_word,
                  labels={k: short_label(k, action, occasion) for k in result.baseline_cost})
    best = decision.recommended_index
    row = table.iloc[best]
    ref_label = strategy_label(result.reference, action, event, occasion)
    savings = result.baseline_cost[result.reference] - result.model_cost[:, best]

    crossings = sorted({x for lo, hi in decision.break_even for x in (lo, hi)
                        if x not in (float(result.cutoffs[0]), float(result.cutoffs[-1]))})
    draw = {
        "season_cost": partial(
            figures.cost_chart, result.cutoffs, table["mean_cost"].to_numpy(), table["p05_cost"].to_numpy(),
            table["p95_cost"].to_numpy(), {k: float(v.mean()) for k, v in result.baseline_cost.items()},
            decision.recommended_cutoff, result.theoretical_cutoff, crossings, words,
            focus=(*decision.recommended_cutoff_interval, *decision.near_optimal_band)),
        "savings": partial(figures.savings_chart, savings, ref_label, words),
        "reliability": partial(
            figures.reliability_chart,
            *(result.reliability[c].to_numpy() for c in ("forecast_mean", "observed_frequency", "n",
                                                         "bin_lower", "bin_upper")),
            result.quality["event_rate"], words),
        "roc": partial(figures.roc_chart, table["false_alarm_rate"].to_numpy(), table["hit_rate"].to_numpy(),
                       (row["false_alarm_rate"], row["hit_rate"]), decision.recommended_cutoff,
                       result.quality["roc_auc"], words),
        "relative_value": partial(
            figures.value_chart, result.value_curve["cost_loss_ratio"].to_numpy(),
            result.value_curve["potential_value"].to_numpy(),
            result.value_curve["value_at_cutoff_equal_to_ratio"].to_numpy(), result.theoretical_cutoff,
            float(row["relative_value"]), words),
    }
    tail, column = bad_season(decision.objective)
    chosen_by = account(summary).get("objective")
    risk = {"tail_what": OBJECTIVE_NAMES[tail], "objective_what": OBJECTIVE_NAMES[decision.objective],
            # said once: in the recommendation when a risk objective chose, else here
            "paragraph": chosen_by.sentence if chosen_by is not None and not chosen_by.first else ""}
    draw["risk"] = partial(
        figures.risk_chart, result.cutoffs, table["mean_cost"].to_numpy(), table[column].to_numpy(),
        OBJECTIVE_NAMES[tail].capitalize(), decision.choices,
        {name: w["name"] for name, w in OBJECTIVE_WORDS.items()}, decision.objective, words)
    stress = _stress_cases(summary, currency, decimals)
    if stress:
        draw["stress"] = partial(figures.stress_chart, [c["name"] for c in stress], [c["mean"] for c in stress],
                                 [c["p05"] for c in stress], [c["p95"] for c in stress],
                                 [c["best_mean"] for c in stress], [c["reference_mean"] for c in stress], words)
    sensitivity = report_section(summary.get("sensitivity"), currency, decimals, occasion)
    if sensitivity and sensitivity["rows"]:
        draw["tornado"] = partial(tornado_chart, sensitivity["labels"], sensitivity["change_low"],
                                  sensitivity["change_high"], words)
    operations = _operations(summary, currency, getattr(scenario, "operations", None))
    if operations and operations["values"]:
        draw["operations_costs"] = partial(figures.components_chart, operations["names"], operations["values"],
                                           operations["reference_values"], words)
    by_day = _completion_by_day(result) if operations else None
    if by_day is not None:
        draw["completion"] = partial(figures.completion_chart, *by_day, operations["deadline"], words,
                                     reference_label=short_label(result.reference, action, occasion))
    charts = {name: chart() for name, chart in draw.items()}
    phone = {name: chart(narrow=True) for name, chart in draw.items()}

    months = list(scenario.season.months)
    honest = (summary.get("selection") or {}).get("validation")
    periods = []
    if honest:  # the validation check's own cutoff, as the terminal shows it
        periods = [(f"{label} {seasons_text(r['start'], r['end'], months)}", _matrix(r, "", currency))
                   for label, r in (("Training", honest["training"]), ("Validation", honest["validation"]))]
    short = dict(words.labels, model=f"Follow the forecast at {cutoff_text(decision.recommended_cutoff, decimals)}")
    strategies = [{"label": short.get(name, name),
                   "what": "" if name in ("never_act", "always_act")
                   else _sentence_case(strategy_label(name, action, event, occasion)) + ".",
                   "reference": name == result.reference, "model": name == "model",
                   **{k: money(v, currency) for k, v in d.items()},
                   "versus": money(summary["strategies"][result.reference]["mean"] - d["mean"], currency)}
                  for name, d in summary["strategies"].items()]
    explorer = {"recommended": best, "best_title": f"At the {best_word} cutoff", "cutoff": [float(c) for c in result.cutoffs],
                "mean_cost": [float(c) for c in table["mean_cost"]],
                "geometry": {"wide": charts["season_cost"].geometry, "narrow": phone["season_cost"].geometry},
                "phone": PHONE_MEDIA,
                "rows": _explorer_rows(table, currency, decimals)}
    context = {
        "s": summary, "best_word": best_word, "scenario": scenario, "history": history, "words": words, "version": __version__,
        "recommendation": recommendation(summary, occasion, decimals), "numbers": headline_numbers(summary, decimals),
        "caution": CAUTION, "cautions": summary["cautions"], "hazard": scenario.event.hazard, "occasion": occasion,
        "verdict": summary.get("verdict"), "missed": summary.get("events_without_action"),
        "rule_label": lambda name: _sentence_case(RULE_WORDS[name]),
        "ref_label": ref_label, "Action": _sentence_case(action), "decimals": decimals,
        "cut": lambda v: cutoff_text(v, decimals), "money": lambda v: money(v, currency), "share": share,
        "rate": rate, "ranges": lambda r: ranges_text(r, decimals) or "none",
        "season_name": lambda y: season_name(y, months), "account": account(summary),
        "money_exact": lambda v: money_exact(v, currency), "file_notes": FILE_NOTES,
        "history_occasion": f"site-{occasion}" if summary.get("portfolio") else occasion,
        "beside": table_names(result),
        "images": {name: {"wide": _data_uri(chart.png), "narrow": _data_uri(phone[name].png),
                          "wide_size": _png_size(chart.png), "narrow_size": _png_size(phone[name].png)}
                   for name, chart in charts.items()},
        "phone": PHONE_MEDIA, "zoomed": _zoomed(charts["season_cost"], result.cutoffs, decimals),
        "now": explorer["rows"][best], "periods": periods,
        "explorer_json": script_json(explorer), "script_hashes": _CSP_PLACEHOLDER,
        "strategies": strategies, "losing": share(float((savings < 0).mean())),
        "stress": stress, "operations": operations,
        "rules": _rules_read_back(scenario),
        "months": _months(scenario.season.months), "weekdays": _occasion_days(result),
        "scenario_file": Path(scenario.source).name if scenario.source else "(given in code)",
        "auto_block": scenario.simulation.block_days == "auto",
        "n_cutoffs": len(table), "recommended_index": best,
        "honest": honest,
        "forward": (summary.get("selection") or {}).get("walk_forward"),
        "calibration": summary.get("calibration"),
        "portfolio": _portfolio(summary, currency, decimals),
        "risk": risk, "sensitivity": sensitivity,
    }
    html = _with_content_policy(_ENV.get_template("report.html.j2").render(context))
    files = {"report.html": html.encode("utf-8")}
    files.update({f"figures/{name}.png": chart.png for name, chart in charts.items()})
    return files
