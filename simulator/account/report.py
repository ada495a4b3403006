"""The report a budget holder reads: ``report.html`` and the figures under ``figures/``.

The page is one self-contained file: figures embedded as base64 PNG, inline CSS and plain inline
JavaScript, no reference to any network resource. Every number the page shows is formatted in
Python (``report_sections``, with the formatters of ``notation.prose``); the cutoff explorer's
JavaScript only swaps in strings prepared there, so the page, ``summary.json`` and ``cutoffs.csv`` cannot disagree
in rounding. Without JavaScript the page shows everything at the recommended cutoff.

Stress tests and operating rules get their sections only when the run has them (``summary["stress"]``
or ``result.stress``; ``summary["operations"]`` or ``result.operations``), and so does a portfolio of
more than one site (``summary["portfolio"]``).

Here the figures are drawn and the page's context assembled; ``report_sections`` builds what each
section shows, ``scenario_words`` reads the scenario back, ``report_page`` renders and embeds.
"""

from __future__ import annotations

from collections.abc import Mapping
from functools import partial
from pathlib import Path
from typing import Any

from .. import __version__
from .findings import OBJECTIVE_WORDS, account, bad_season, season_name, seasons_text, short_label, strategy_label
from ..notation.prose import cutoff_decimals, cutoff_text, money, money_exact, rate, ranges_text, share
from .cautions import GENERAL
from ..pricing.decision import OBJECTIVE_NAMES
from ..analysis.verdict import RULE_WORDS
from .figure_style import Words
from .cost_figures import cost_chart, risk_chart, savings_chart
from .quality_figures import reliability_chart, roc_chart, value_chart
from .stress_figures import stress_chart
from .operations_figures import completion_chart, components_chart
from .report_page import (_CSP_PLACEHOLDER, _ENV, PHONE_MEDIA, _data_uri, _png_size, _with_content_policy,
                          script_json)
from .report_sections import (_completion_by_day, _explorer_rows, _matrix, _operations, _portfolio, _sentence_case,
                              _stress_cases, _zoomed, headline_numbers, recommendation)
from .scenario_words import _months, _occasion_days, _rules_read_back
from .file_names import table_names
from .portfolio_sensitivity_view import is_portfolio, portfolio_report_section
from .sensitivity_view import report_section
from .tornado import tornado_chart
from .report_forecasts import forecasts_section
from .whatif import whatif_context

__all__ = ["render_report", "CAUTION", "FILE_NOTES"]

CAUTION = GENERAL  # the general caution (simulator.account.cautions); summary["cautions"] lists every one of a run

# what each file beside the report holds (the report lists the files actually written)
FILE_NOTES = {"summary.json": " (every headline number, full precision)", "cutoffs.csv": " (one row per cutoff)",
              "value_curve.csv": " (relative value by cost-loss ratio)", "reliability.csv": " (reliability table)",
              "selection.csv": " (the cutoff chosen on earlier periods, priced on later ones)",
              "stress.csv": " (every stress case)", "sites.csv": " (each site at its own cutoff)",
              "calibration.csv": " (the recalibration curve)",
              "forecasts.csv": " (each forecast at every cutoff, on the same replicate seasons)",
              "sensitivity.csv": " (each cost moved alone: its ends and switching values)",
              "datapackage.json": " (what every column of the CSV files means, with its unit)"}


def render_report(result, summary: Mapping[str, Any]) -> dict[str, bytes]:
    """``report.html`` and ``figures/<name>.png``, rendered in memory from a run and its summary."""
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
            cost_chart, result.cutoffs, table["mean_cost"].to_numpy(), table["p05_cost"].to_numpy(),
            table["p95_cost"].to_numpy(), {k: float(v.mean()) for k, v in result.baseline_cost.items()},
            decision.recommended_cutoff, result.theoretical_cutoff, crossings, words,
            focus=(*decision.recommended_cutoff_interval, *decision.near_optimal_band)),
        "savings": partial(savings_chart, savings, ref_label, words),
        "reliability": partial(
            reliability_chart,
            *(result.reliability[c].to_numpy() for c in ("forecast_mean", "observed_frequency", "n",
                                                         "bin_lower", "bin_upper")),
            result.quality["event_rate"], words),
        "roc": partial(roc_chart, table["false_alarm_rate"].to_numpy(), table["hit_rate"].to_numpy(),
                       (row["false_alarm_rate"], row["hit_rate"]), decision.recommended_cutoff,
                       result.quality["roc_auc"], words),
        "relative_value": partial(
            value_chart, result.value_curve["cost_loss_ratio"].to_numpy(),
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
        risk_chart, result.cutoffs, table["mean_cost"].to_numpy(), table[column].to_numpy(),
        OBJECTIVE_NAMES[tail].capitalize(), decision.choices,
        {name: w["name"] for name, w in OBJECTIVE_WORDS.items()}, decision.objective, words)
    stress = _stress_cases(summary, currency, decimals)
    if stress:
        draw["stress"] = partial(stress_chart, [c["name"] for c in stress], [c["mean"] for c in stress],
                                 [c["p05"] for c in stress], [c["p95"] for c in stress],
                                 [c["best_mean"] for c in stress], [c["reference_mean"] for c in stress], words)
    sensitivity = (portfolio_report_section(summary["sensitivity"], currency, occasion)
                   if is_portfolio(summary.get("sensitivity"))
                   else report_section(summary.get("sensitivity"), currency, decimals, occasion))
    if sensitivity and sensitivity["rows"]:
        draw["tornado"] = partial(tornado_chart, sensitivity["labels"], sensitivity["change_low"],
                                  sensitivity["change_high"], words, noun=sensitivity["noun"])
    operations = _operations(summary, currency, getattr(scenario, "operations", None))
    if operations and operations["values"]:
        draw["operations_costs"] = partial(components_chart, operations["names"], operations["values"],
                                           operations["reference_values"], words)
    by_day = _completion_by_day(result) if operations else None
    if by_day is not None:
        draw["completion"] = partial(completion_chart, *by_day, operations["deadline"], words,
                                     reference_label=short_label(result.reference, action, occasion))
    forecasts, forecast_charts = forecasts_section(result, summary, words)  # two or more [forecasts]
    draw.update(forecast_charts)
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
        "risk": risk, "sensitivity": sensitivity, "forecasts": forecasts,
        "whatif": whatif_context(result, action, event, occasion, decimals),
    }
    html = _with_content_policy(_ENV.get_template("report.html.j2").render(context))
    files = {"report.html": html.encode("utf-8")}
    files.update({f"figures/{name}.png": chart.png for name, chart in charts.items()})
    return files
