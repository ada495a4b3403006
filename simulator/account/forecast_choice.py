"""Which forecast to use, in findings: the comparison of ``[forecasts]`` told once.

Reads the ``forecasts`` and ``forecast_pairs`` blocks of ``summary.json`` only (issue 13), so the
terminal, the report and the ``account`` block say the same thing. The rules, in order:

1. A forecast is a candidate only when its own verdict advises using it (it beat the best rule
   without any forecast on held-out seasons, :mod:`simulator.analysis.verdict`) and, when it has
   a price, the 90% interval of that saving per season lies above the price; with no candidate,
   none is recommended.
2. Among the candidates, the cheapest on average, counting its price per season
   (``[forecast_prices]``) when the scenario gives one, is the one to use; ties go to the first
   listed (the main forecast, the one the headline is about).
3. Leaving the main forecast for another is advised only when the switch gains money in at least
   95% of the simulated seasons (the pair's 5th percentile above zero, after the prices when
   given): otherwise the other one "does not beat it with confidence", and that is said plainly.
   The 95% bar is the one of ``worth_up_to_confident`` (a price that pays in 95% of seasons);
   our own choice of bar, common practice for "with confidence", no single source.

Skill scores and money can disagree (a forecast with the better Brier skill score can save less
at the user's costs, because a score weighs every probability while the money turns only on the
decisions near the cutoff; Murphy 1993, "What is a good forecast?", Weather and Forecasting 8,
281-293, on quality against value); when they do, one finding says so.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from ..notation.prose import money, money_exact, money_range, score, share
from .finding import Finding

__all__ = ["forecast_findings", "forecast_rows", "contender", "SECTION_KEYS"]

# findings the report says in its own section on the forecasts, beside the table and the chart,
# rather than in the recommendation (which keeps "forecast_choice"); the terminal shows them all
SECTION_KEYS = ("forecast_switch", "forecast_price", "forecast_skill")


def _name(name: str) -> str:
    return f"\u201c{name}\u201d"


def _verdict_advises(entry: Mapping[str, Any]) -> bool:
    """Whether the forecast's own verdict advises using it, at its price when it has one: the
    verdict's 90% interval of the saving per season against the best rule without a forecast
    (held-out seasons) lies above zero, and above the price when the scenario gives one (the same
    test with the known price taken off every season's saving)."""
    verdict = entry.get("verdict") or {}
    if not verdict.get("use_forecast", True):
        return False
    price = float(entry.get("price") or 0.0)
    return price == 0.0 or (verdict.get("saving_against_best_rule") or {}).get("p05", float("inf")) > price


def _worth_words(entry: Mapping[str, Any]) -> str:
    if _verdict_advises(entry):
        return "yes"
    return "not at its price" if (entry.get("verdict") or {}).get("use_forecast", True) else "no"


def _total(entry: Mapping[str, Any]) -> float:
    """Mean season cost at the forecast's own cutoff plus its price per season (0 without one)."""
    return entry["season_cost"]["mean"] + float(entry.get("price") or 0.0)


def _pair(s: Mapping[str, Any], a: str, b: str) -> Mapping[str, Any]:
    return next(p for p in s["forecast_pairs"] if {p["better"], p["other"]} == {a, b})


def _gain(pair: Mapping[str, Any], winner: str, priced: bool) -> dict[str, float | None]:
    """What ``winner`` gains a season over the other forecast of ``pair``: mean, p05, p95 and the
    share of seasons it gains (None when only the other direction's share is known), after the
    prices when ``priced`` and the pair has them."""
    at_prices = pair.get("at_prices") if priced else None
    block = at_prices["net_saving"] if at_prices else pair["saving"]
    prob = at_prices["prob_pays"] if at_prices else pair["saving"]["prob_saving"]
    if pair["better"] == winner:
        return {"mean": block["mean"], "p05": block["p05"], "p95": block["p95"], "prob": prob}
    return {"mean": -block["mean"], "p05": -block["p95"], "p95": -block["p05"], "prob": None}


def contender(s: Mapping[str, Any]) -> tuple[str, str | None]:
    """The forecast weighed against the main one and the forecast to use (None when none is worth
    using): ``(main, chosen)`` when another than the main one is chosen, else ``(the cheapest
    other, chosen)``; cheapest counts the prices."""
    f = s["forecasts"]
    names = list(f)
    main = names[0]
    advised = [n for n in names if _verdict_advises(f[n])]
    cheapest_other = min(names[1:], key=lambda n: (_total(f[n]), names.index(n)))
    if not advised:
        return cheapest_other, None
    best = min(advised, key=lambda n: (_total(f[n]), names.index(n)))
    return (main, best) if best != main else (cheapest_other, best)


def forecast_rows(s: Mapping[str, Any], cut: Callable[[float], str]) -> list[dict[str, str]]:
    """Each forecast as display cells (cutoff, season cost, price, scores, verdict), in the order
    listed: the report's table and the ``forecast:<name>`` findings use these same cells."""
    cur = s["currency"]
    rows = []
    for name, e in s["forecasts"].items():
        sc = e["season_cost"]
        rows.append({"name": name, "cutoff": cut(e["recommended_cutoff"]),
                     "season_cost": money(sc["mean"], cur), "range": money_range(sc["p05"], sc["p95"], cur),
                     "price": money_exact(e["price"], cur) if "price" in e else "\u2013",
                     "brier_score": score(e.get("brier_score"), 3),
                     "brier_skill_score": score(e.get("brier_skill_score")),
                     "roc_auc": score(e.get("roc_auc")),
                     "worth_using": _worth_words(e)})
    return rows


def forecast_findings(s: Mapping[str, Any], cut: Callable[[float], str], rule_words: Callable[[str], str]) -> list[Finding]:
    """The comparison's findings, from ``summary.json`` alone; none with fewer than two forecasts.

    ``cut`` writes a cutoff; ``rule_words`` a rule without the forecast in plain words.
    """
    f = s.get("forecasts") or {}
    if len(f) < 2 or not s.get("forecast_pairs"):
        return []
    cur = s["currency"]
    n_rep = f"{s['replicates']:,}"
    names = list(f)
    main = names[0]
    other, best = contender(s)
    out: list[Finding] = []
    basis = f"each forecast at its own recommended cutoff, per season, on the same {n_rep} simulated seasons"

    switch_to = best if best is not None and best != main else other
    pair = _pair(s, main, switch_to)
    priced = "at_prices" in pair
    gain = _gain(pair, switch_to, priced)
    confident = gain["p05"] > 0

    # 1. which forecast to use (the verdicts decide who may be chosen)
    if best is None:
        rule = rule_words(((f[main].get("verdict") or {}).get("best_rule_without_forecast")) or s["reference"])
        prices = " (after its price, where it has one)" if any("price" in e for e in f.values()) else ""
        text = (f"none of the {len(f)}: none clearly beats the best rule without a forecast on held-out seasons"
                f"{prices}; keep to that rule ({rule})")
        sentence = (f"None of the {len(f)} forecasts is worth using: none clearly beat the best rule without a "
                    f"forecast ({rule}) on seasons its cutoff was not chosen on{prices}.")
    elif best != main and (confident or not _verdict_advises(f[main])):
        if not _verdict_advises(f[main]):
            why = f"{_name(main)} is not worth using" + ("" if _worth_words(f[main]) == "no" else " at its price")
        else:
            why = (f"it saves money against {_name(main)} in at least 95% of seasons"
                   + (" after the prices" if priced else ""))
        text = f"{_name(best)} at its own cutoff {cut(f[best]['recommended_cutoff'])} ({why})"
        sentence = (f"Use {_name(best)} rather than {_name(main)}, acting when its probability of "
                    f"\u201c{s['scenario']['event']}\u201d is {cut(f[best]['recommended_cutoff'])} or more.")
    elif best != main:
        after = " after the prices" if priced else ""
        text = (f"{_name(main)}, the one in use: no clear case for switching; {_name(best)} is cheaper on "
                f"average{after} but not in 95% of seasons")
        sentence = (f"{_name(best)} does not beat {_name(main)} with confidence: it is cheaper on average{after}, "
                    "but saves money in fewer than 95% of simulated seasons, so there is no clear case for switching.")
    else:
        if not _verdict_advises(f[other]):
            why = ("is not worth using (its own verdict, on held-out seasons)" if _worth_words(f[other]) == "no"
                   else "is not worth its price against the best rule without a forecast (its own verdict)")
        elif priced and pair["better"] == other:
            why = "does not pay at its price"
        else:
            why = "saves nothing against it at these costs"
        text = f"{_name(main)} at its cutoff {cut(f[main]['recommended_cutoff'])}; {_name(other)} {why}"
        sentence = f"Keep {_name(main)}: {_name(other)} {why}."
    out.append(Finding("forecast_choice", "Forecast to use", text, sentence,
                       basis + "; a forecast is chosen only if its own verdict (held-out seasons) advises it"))

    # 2. what switching from the main forecast saves, before any price: the most the better one is worth
    raw = pair["saving"]
    sign = 1 if pair["better"] == switch_to else -1
    mean = sign * raw["mean"]
    lo, hi = (raw["p05"], raw["p95"]) if sign > 0 else (-raw["p95"], -raw["p05"])
    if raw["p05"] == raw["p95"] == 0:  # the same probabilities, or the same decisions, in every season
        text = f"costs the same as {_name(main)} in every simulated season; it is worth nothing against it"
        sentence = (f"{_name(switch_to)} costs the same as {_name(main)} in every simulated season, each at its own "
                    "cutoff: switching saves nothing.")
    elif sign > 0:
        confident_price = (f"a price up to {money(pair['worth_up_to_confident'], cur)} a season pays in 95% of seasons"
                           if pair["worth_up_to_confident"] > 0 else "no price pays in 95% of seasons")
        text = (f"saves {money(mean, cur)} a season on average against {_name(main)}, the most a season of it is "
                f"worth  (90% range {money_range(lo, hi, cur)}; saves money in {share(raw['prob_saving'])} of "
                f"seasons); {confident_price}")
        sentence = (f"Switching from {_name(main)} to {_name(switch_to)} saves {money(mean, cur)} a season on "
                    f"average, each at its own cutoff (90% of seasons {money_range(lo, hi, cur)}), and saves money in "
                    f"{share(raw['prob_saving'])} of simulated seasons. That mean is the most a season of "
                    f"{_name(switch_to)} is worth against {_name(main)}; "
                    + (f"a price up to {money(pair['worth_up_to_confident'], cur)} a season still pays in 95% of "
                       "seasons." if pair["worth_up_to_confident"] > 0 else
                       "as it saves money in fewer than 95% of seasons, no price pays in 95% of them."))
    else:
        text = (f"costs {money(-mean, cur)} more a season than {_name(main)}  (90% range "
                f"{money_range(lo, hi, cur)}); it is worth nothing against {_name(main)}")
        sentence = (f"Switching from {_name(main)} to {_name(switch_to)} would cost {money(-mean, cur)} more a "
                    f"season on average (90% of seasons {money_range(lo, hi, cur)}).")
    out.append(Finding("forecast_switch", f"Switching to {_name(switch_to)}", text, sentence,
                       basis + ", before any price of a forecast"))

    # 3. at the prices the scenario gives
    if priced:
        at = pair["at_prices"]
        price = (at["better_price"] - at["other_price"]) * (1 if pair["better"] == switch_to else -1)
        what = (f"{money_exact(price, cur)} a season more" if price >= 0 else f"{money_exact(-price, cur)} a season less")
        net = gain
        after = (f"saves {money(net['mean'], cur)} a season after the price" if net["mean"] >= 0
                 else f"loses {money(-net['mean'], cur)} a season after the price")
        prob = (f"; the saving exceeds the price in {share(net['prob'])} of seasons" if net["prob"] is not None else "")
        text = (f"{_name(switch_to)} costs {what}: switching {after}  (90% range "
                f"{money_range(net['p05'], net['p95'], cur)}){prob}")
        sentence = (f"{_name(switch_to)} costs {what} than {_name(main)}: switching {after} on average "
                    f"(90% of seasons {money_range(net['p05'], net['p95'], cur)}){prob}.")
        out.append(Finding("forecast_price", "After the prices", text, sentence,
                           basis + ", net of the prices per season in [forecast_prices]"))

    # 4. when skill scores and money disagree
    skill_main, skill_other = f[main].get("brier_skill_score"), f[switch_to].get("brier_skill_score")
    if skill_main is not None and skill_other is not None and skill_main != skill_other and mean != 0:
        sharper, plainer = (switch_to, main) if skill_other > skill_main else (main, switch_to)
        saves_more = switch_to if mean > 0 else main
        if sharper != saves_more:
            hi_s, lo_s = max(skill_main, skill_other), min(skill_main, skill_other)
            said = (f"{_name(sharper)} has the better Brier skill score ({score(hi_s)} against {score(lo_s)}) yet "
                    f"saves {money(abs(mean), cur)} a season less than {_name(plainer)} at these costs: a skill "
                    "score weighs every probability, the money only the decisions near the cutoff.")
            out.append(Finding("forecast_skill", "Skill and money disagree", said, said,
                               "Brier skill score over the history; money per season on the simulated seasons"))

    for row in forecast_rows(s, cut):
        price = f"; price {row['price']} a season" if row["price"] != "\u2013" else ""
        out.append(Finding(
            f"forecast:{row['name']}", _name(row["name"]),
            f"cutoff {row['cutoff']}; {row['season_cost']} a season on average ({row['range']}){price}; "
            f"Brier score {row['brier_score']}, Brier skill score {row['brier_skill_score']}, ROC area "
            f"{row['roc_auc']}; worth using: {row['worth_using']}",
            "", "season cost per season at its own cutoff over the simulated seasons; scores over the history",
            first=False))
    return out
