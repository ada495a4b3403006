"""``datapackage.json``: what every column of every CSV a run writes means.

A Frictionless Data Package (the open Data Package and Table Schema specifications of the
Frictionless Data project): one resource per CSV, each with a Table Schema listing its columns
with their type (integer, number, boolean, string, date, inferred from the bytes written), a plain
description and a unit. Table Schema has no standard unit field, so each field carries a custom
``unit`` property (the specifications allow extra properties): the currency per season, per
occasion or over the history, a share, a probability, a count. ``tests/test_datapackage.py``
validates the package against the CSVs with the ``frictionless`` package.
"""

from __future__ import annotations

import io
import json
import re
from collections.abc import Mapping

import pandas as pd

__all__ = ["datapackage", "describe_column"]

_STATS = {"mean": "mean", "p05": "5th percentile", "p50": "median", "p95": "95th percentile",
          "shortfall10": "mean of the worst 10% (expected shortfall)"}
_STRATEGIES = {"model": "acting on the forecast at the base cutoff", "never_act": "never acting",
               "always_act": "always acting", "persistence": "acting when the event happened on the previous occasion",
               "seasonal_rate": "acting in months whose event rate reaches the break-even probability",
               "perfect": "acting exactly when the event happens"}
_PERIODS = {"training_": " over the training period", "validation_": " over the validation period"}

# (description, unit); "{cur}" is the scenario's currency
_COLUMNS: dict[str, tuple[str, str]] = {
    "cutoff": ("act when the forecast probability is at least this", "probability"),
    "hits": ("occasions acted on when the event happened, over the history", "count"),
    "false_alarms": ("occasions acted on when the event did not happen, over the history", "count"),
    "misses": ("occasions not acted on when the event happened, over the history", "count"),
    "correct_negatives": ("occasions not acted on when the event did not happen, over the history", "count"),
    "hit_rate": ("share of event occasions acted on", "share"),
    "specificity": ("share of non-event occasions not acted on", "share"),
    "miss_rate": ("share of event occasions not acted on", "share"),
    "false_alarm_rate": ("share of non-event occasions acted on", "share"),
    "false_alarm_ratio": ("share of the occasions acted on when the event did not happen", "share"),
    "historical_cost": ("cost of acting at this cutoff on the history as it happened", "{cur} over the history"),
    "net_benefit": ("net benefit (Vickers and Elkin 2006): hits minus weighted false alarms, per occasion",
                    "share"),
    "relative_value": ("relative economic value (Richardson 2000): 1 = perfect forecast, 0 = best fixed action",
                       "share"),
    "mean_savings": ("mean saving against the reference over replicate seasons", "{cur} per season"),
    "p05_savings": ("5th percentile of the saving against the reference over replicate seasons", "{cur} per season"),
    "p95_savings": ("95th percentile of the saving against the reference over replicate seasons", "{cur} per season"),
    "prob_saving": ("share of replicate seasons that cost less than the reference", "share"),
    "bin_lower": ("lower end of the probability bin (included)", "probability"),
    "bin_upper": ("upper end of the probability bin", "probability"),
    "n": ("occasions whose forecast falls in the bin", "count"),
    "forecast_mean": ("mean forecast probability in the bin", "probability"),
    "observed_frequency": ("share of the bin's occasions with the event", "share"),
    "recalibrated_mean": ("mean probability in the bin after isotonic recalibration on the training period",
                          "probability"),
    "cost_loss_ratio": ("cost-loss ratio C/L of a user (Thompson 1952; Murphy 1977)", "share"),
    "potential_value": ("relative value at the best cutoff for this ratio", "share"),
    "value_at_cutoff_equal_to_ratio": ("relative value when the cutoff equals the ratio", "share"),
    "check": ("which check: the validation split or the walk-forward", "none"),
    "period": ("the period the row is priced on", "none"),
    "start": ("first date of the period", "date"),
    "end": ("last date of the period", "date"),
    "n_occasions": ("occasions in the period", "count"),
    "cost": ("cost of acting at the cutoff over the period", "{cur} over the period"),
    "n_priced": ("occasions the period's cost is spread over: its own occasions, or under operating rules "
                 "the days played", "count"),
    "cost_per_occasion": ("cost over the period divided by n_priced", "{cur} per occasion"),
    "flag": ("true when the priced period cost more than the training period leads one to expect", "none"),
    "case": ("the stress case's name (base case: the scenario as it is)", "none"),
    "probabilities": ("as_forecast: probabilities as in the file; adapted: moved to the case's event rate "
                      "by Bayes' rule", "none"),
    "target_event_rate": ("event rate the case asks for", "share"),
    "achieved_event_rate": ("event rate of the case's replicate seasons", "share"),
    "event_rate_reached": ("whether the replicate seasons reach the asked event rate", "none"),
    "base_cutoff": ("the base run's recommended cutoff", "probability"),
    "extra_cost": ("mean season cost at the base cutoff in this case minus the base case's", "{cur} per season"),
    "best_cutoff": ("the cutoff with the lowest mean season cost in this case", "probability"),
    "best_mean_cost": ("mean season cost at the case's best cutoff", "{cur} per season"),
    "saved_by_moving": ("mean saving from moving to the case's best cutoff", "{cur} per season"),
    "prob_moving_saves": ("share of replicate seasons in which moving to the best cutoff saves", "share"),
    "break_even": ("cutoff ranges whose mean season cost beats the reference", "probability"),
    "confident_break_even": ("cutoff ranges that beat the reference in 95% of replicate seasons", "probability"),
    "site": ("the site's name, as the history's site column writes it (in sensitivity.csv empty on the rows of "
             "the whole portfolio)", "none"),
    "rows": ("rows of the site in the history", "count"),
    "evaluated_rows": ("the site's rows inside the season with an outcome", "count"),
    "missing_dates": ("dates other sites have and this site lacks", "count"),
    "event_rate": ("share of evaluated occasions with the event", "share"),
    "brier_score": ("Brier score (Brier 1950): mean squared error of the probability", "probability"),
    "brier_skill_score": ("Brier skill score against the base rate", "share"),
    "roc_auc": ("area under the ROC curve", "share"),
    "hit": ("cost of a hit at this site", "{cur} per occasion"),
    "false_alarm": ("cost of a false alarm at this site", "{cur} per occasion"),
    "miss": ("cost of a miss at this site", "{cur} per occasion"),
    "correct_negative": ("cost of a correct negative at this site", "{cur} per occasion"),
    "theoretical_cutoff": ("break-even probability of the costs", "probability"),
    "recommended_cutoff": ("cutoff with the lowest mean season cost", "probability"),
    "recommended_cutoff_low": ("lower end of the 90% interval of the recommended cutoff", "probability"),
    "recommended_cutoff_high": ("upper end of the 90% interval of the recommended cutoff", "probability"),
    "near_optimal_low": ("lowest cutoff within 1% of the lowest mean season cost", "probability"),
    "near_optimal_high": ("highest cutoff within 1% of the lowest mean season cost", "probability"),
    "reference_mean_cost": ("mean season cost of the reference rule", "{cur} per season"),
    "forecast_value": ("what acting on the forecast saves against the best rule without it", "{cur} per season"),
    "value_rank": ("rank of the site by the value of the forecast (1 = most)", "count"),
    "mean_cost_at_common_cutoff": ("mean season cost with every site at one common cutoff", "{cur} per season"),
    "mean_days_late": ("mean days from the deadline to completion", "days per season"),
    "share_late": ("share of replicate seasons finishing after the deadline", "share"),
    "share_completed": ("share of replicate seasons in which the work is finished", "share"),
    "mean_overtime_days": ("mean overtime days worked", "days per season"),
    "mean_safety_stop_days": ("mean days on which the safety stop decided", "days per season"),
    "validation_chosen_cutoff": ("cutoff chosen on the training period", "probability"),
    "validation_best_cutoff": ("the validation period's best cutoff in hindsight", "probability"),
    "validation_optimism": ("validation cost at the chosen cutoff minus the cost at the best in hindsight",
                            "{cur} over the validation period"),
    "validation_flag": ("true when the validation cost is worse than the training range", "none"),
    "walk_forward_cost": ("total cost of the walk-forward, each season at the cutoff chosen before it",
                          "{cur} over the walk-forward seasons"),
    "walk_forward_optimism": ("walk-forward cost minus the cost at one cutoff chosen in hindsight",
                              "{cur} over the walk-forward seasons"),
    "use_forecast": ("whether acting on the forecast beats the best rule without it on held-out seasons "
                     "(sites.csv: at this site; forecasts.csv: this row's forecast)", "none"),
    "forecast": ("the forecast's name, as listed under [forecasts]", "none"),
    "recommended": ("true on the row of the forecast's recommended cutoff", "none"),
    "best_rule_without_forecast": ("the cheapest rule that ignores the forecast", "none"),
    "saving_against_best_rule_mean": ("mean saving per season against the best rule without the forecast, each "
                                      "past season priced at the cutoff and rule chosen on the others",
                                      "{cur} per season"),
    "saving_against_best_rule_p05": ("lower end of the 90% interval (Student's t over the held-out seasons) of that "
                                     "mean saving", "{cur} per season"),
    "saving_against_best_rule_p95": ("upper end of the 90% interval (Student's t over the held-out seasons) of that "
                                     "mean saving", "{cur} per season"),
    "saving_against_best_rule_prob": ("confidence (Student's t over the held-out seasons) that the mean saving "
                                      "against the best rule without the forecast is above zero", "probability"),
    "walk_forward_flagged_seasons": ("seasons dearer than their training range", "none"),
    # several [forecasts], each at its own recommended cutoff of the base case (stress.csv: in that
    # case and view; sites.csv: at that site); simulator.analysis.winners
    "best_forecast": ("the forecast with the lowest mean season cost, each at its own recommended cutoff of the "
                      "base case, on the same replicate seasons; empty when the two cheapest tie", "none"),
    "runner_up_forecast": ("the forecast with the next lowest mean season cost; empty on a tie", "none"),
    "saving_against_runner_up_mean": ("mean over replicate seasons of the runner-up's season cost minus the best "
                                      "forecast's", "{cur} per season"),
    "saving_against_runner_up_p05": ("5th percentile over replicate seasons of that saving", "{cur} per season"),
    "saving_against_runner_up_p95": ("95th percentile over replicate seasons of that saving", "{cur} per season"),
    "saving_against_runner_up_prob": ("share of replicate seasons in which the best forecast is strictly cheaper "
                                      "than the runner-up", "probability"),
    # sensitivity.csv: each cost (or, under [operations], each of the rules' prices) moved alone, the
    # others held, one row per cost, the widest first
    "cost_key": ("the cost or price moved, as the scenario writes it (costs.miss, operations.day_rate)", "none"),
    "value_unit": ("what the row's values (base, low, high, switching values, search) are paid per: an occasion "
                   "for a cost of [costs], the price's own unit for a rule's price", "none"),
    "varied": ("how its ends were set: range (the low and high of the range given) or 25% (25% below and above "
               "its value)", "none"),
    "base_value": ("the cost as the run priced it (for a range, its mean)", "{cur}, per value_unit"),
    "low_value": ("the cost at its low end", "{cur}, per value_unit"),
    "high_value": ("the cost at its high end", "{cur}, per value_unit"),
    "cutoff_at_low": ("the cutoff chosen again with the cost at its low end (empty on a portfolio's rows: each site "
                      "chooses its own)", "probability"),
    "cutoff_at_high": ("the cutoff chosen again with the cost at its high end", "probability"),
    "mean_saving_at_low": ("mean saving against the reference at cutoff_at_low, cost at its low end (a portfolio's "
                           "row: the sites' total, each at its own cutoff chosen again)",
                           "{cur} per season"),
    "mean_saving_at_high": ("mean saving against the reference at cutoff_at_high, cost at its high end",
                            "{cur} per season"),
    "saving_change_at_low": ("mean_saving_at_low minus today's mean saving (the tornado's bar)", "{cur} per season"),
    "saving_change_at_high": ("mean_saving_at_high minus today's mean saving (the tornado's bar)",
                              "{cur} per season"),
    "prob_saving_at_low": ("share of replicate seasons in which cutoff_at_low saves, cost at its low end", "share"),
    "prob_saving_at_high": ("share of replicate seasons in which cutoff_at_high saves, cost at its high end",
                            "share"),
    "verdict_switch_down": ("the cost below today's at which the verdict (use the forecast or not; a portfolio's row: "
                            "the portfolio's verdict, empty under [operations], where it is not searched) changes; "
                            "empty: not from search_low up", "{cur}, per value_unit"),
    "verdict_switch_up": ("the cost above today's at which the verdict changes; empty: not up to search_high",
                          "{cur}, per value_unit"),
    "band_switch_down": ("the cost below today's at which the chosen cutoff leaves today's near-optimal band; "
                         "empty: not from search_low up", "{cur}, per value_unit"),
    "band_switch_up": ("the cost above today's at which the chosen cutoff leaves today's near-optimal band; "
                       "empty: not up to search_high", "{cur}, per value_unit"),
    "search_low": ("lowest cost the switching values were looked for at (0, or -10 times the largest cost for "
                   "a cost of 0 of [costs]; a rule's price is never below 0)", "{cur}, per value_unit"),
    "search_high": ("highest cost the switching values were looked for at (10 times the cost, or the largest "
                    "cost)", "{cur}, per value_unit"),
    # sensitivity.csv with a site column: the portfolio's rows (site empty)
    "sites_sharing": ("sites that take this cost from the scenario's [costs], or this price from its [operations] "
                      "where it plays a part (a site's own cost or price does not move)",
                      "count of sites"),
    "sites_moved_at_low": ("sites whose own recommended cutoff changes with the cost at its low end", "count of sites"),
    "sites_moved_at_high": ("sites whose own recommended cutoff changes with the cost at its high end",
                            "count of sites"),
    "first_site_switch_down": ("the cost below today's at which the first site's own advice changes (its verdict, or "
                               "its cutoff leaving its near-optimal band); empty: none within the search",
                               "{cur}, per value_unit"),
    "first_site_down": ("the site whose advice changes at first_site_switch_down", "none"),
    "first_site_switch_up": ("the cost above today's at which the first site's own advice changes; empty: none "
                             "within the search", "{cur}, per value_unit"),
    "first_site_up": ("the site whose advice changes at first_site_switch_up", "none"),
}


def describe_column(name: str, currency: str) -> tuple[str, str]:
    """A column's plain description and unit, from the table above or the pattern of its name."""
    described = _COLUMNS.get(name)
    if described is None:
        for prefix, period in _PERIODS.items():
            if name.startswith(prefix) and name[len(prefix):] in _COLUMNS:
                text, unit = _COLUMNS[name[len(prefix):]]
                described = (text.replace(", over the history", "") + period,
                             unit.replace("over the history", f"over the {prefix[:-1]} period"))
                break
    if described is None:
        match = re.fullmatch(r"(?:(\w+?)_)?(mean|p05|p50|p95|shortfall10)_cost", name)
        if match and (match.group(1) is None or match.group(1) in _STRATEGIES):
            who = f" of {_STRATEGIES[match.group(1)]}" if match.group(1) else " at this cutoff"
            described = (f"{_STATS[match.group(2)]} of the season cost{who}, over replicate seasons",
                         "{cur} per season")
    if described is None:
        match = re.fullmatch(r"mean_(\w+)_cost", name)
        if match:
            described = (f"mean season cost of {match.group(1).replace('_', ' ')} under the operating rules",
                         "{cur} per season")
    if described is None:
        described = (name.replace("_", " "), "none")
    text, unit = described
    return text, unit.replace("{cur}", currency)


def _field_type(column: pd.Series) -> str:
    if pd.api.types.is_bool_dtype(column):
        return "boolean"
    if pd.api.types.is_integer_dtype(column):
        return "integer"
    if pd.api.types.is_float_dtype(column):
        return "number"
    values = column.dropna().astype(str)
    if len(values) and values.str.fullmatch(r"\d{4}-\d{2}-\d{2}").all():
        return "date"
    if len(values) and values.isin(["True", "False"]).all():
        return "boolean"
    return "string"


def datapackage(files: Mapping[str, bytes], name: str, title: str, currency: str) -> bytes:
    """The ``datapackage.json`` bytes describing every ``.csv`` among ``files``."""
    resources = []
    for path in sorted(p for p in files if p.endswith(".csv")):
        frame = pd.read_csv(io.BytesIO(files[path]), keep_default_na=False, na_values=[""])
        fields = []
        for column in frame.columns:
            text, unit = describe_column(str(column), currency)
            field = {"name": str(column), "type": _field_type(frame[column]), "description": text}
            fields.append(field if unit == "none" else {**field, "unit": unit})
        resources.append({"name": re.sub(r"[^a-z0-9_.-]", "-", path[:-4].lower()), "path": path,
                          "profile": "tabular-data-resource", "format": "csv", "mediatype": "text/csv",
                          "encoding": "utf-8", "schema": {"fields": fields}})
    package = {"profile": "tabular-data-package", "name": name, "title": title,
               "description": "The tables of one gonogo run. Each column gives its unit; money is in "
                              f"{currency}, per season of the simulated calendar unless the unit says "
                              "otherwise. Probabilities and shares run from 0 to 1.",
               "resources": resources}
    return (json.dumps(package, indent=2, ensure_ascii=False) + "\n").encode()
