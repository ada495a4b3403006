"""Which cost estimate matters, as the files and the account say it.

The ``sensitivity`` block of ``summary.json`` (:func:`sensitivity_entry`), ``sensitivity.csv``
(:func:`sensitivity_frame`, its columns described in :mod:`simulator.account.datapackage`) and the
one sentence on which estimate matters most (:func:`sensitivity_sentence`, a finding of the account).
The numbers come from :mod:`simulator.analysis.sensitivity`.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import pandas as pd

from ..analysis.sensitivity import REACH, VARY, Sensitivity
from ..notation.prose import cutoff_text, money, share

__all__ = ["COST_WORDS", "sensitivity_entry", "sensitivity_frame", "sensitivity_sentence", "bar_label", "report_section"]

COST_WORDS = {"costs.hit": "cost of a hit", "costs.false_alarm": "cost of a false alarm",
              "costs.miss": "cost of a miss", "costs.correct_negative": "cost of a correct negative",
              # the rules' prices as [operations] names them
              "operations.day_rate": "day rate", "operations.standby_rate": "standby rate",
              "operations.spoilage_cost": "spoilage cost", "operations.damages_per_day_late": "damages per day late",
              "operations.unfinished_cost": "unfinished cost"}
"""Each cost key in words, mid-sentence."""

PRICE_UNITS = {"operations.day_rate": "per crew per working day", "operations.standby_rate": "per crew per standby day",
               "operations.spoilage_cost": "per crew per spoiled day out",
               "operations.damages_per_day_late": "per calendar day late",
               "operations.unfinished_cost": "per crew-day left unfinished"}
"""What each of the rules' prices is paid per (a cost of ``[costs]`` is per occasion)."""

BASIS = (f"each cost moved alone, the others held (a cost given as a range at its low and high, any other "
         f"{VARY:.0%} below and above); at each end the cutoff is chosen again and its saving against the "
         f"reference priced per season over the simulated seasons; switching values looked for from 0 to "
         f"{REACH:g} times each cost")
PRICES_BASIS = (f"each of the operating rules' prices moved alone, the others held (a price given as a range at its "
                f"low and high, any other {VARY:.0%} below and above); the replicate seasons as the run played them, "
                f"priced again at each end (how the crews work does not depend on a price, so no season is played "
                f"again); at each end the cutoff is chosen again and its saving against the reference priced per "
                f"season over the simulated seasons; switching values looked for from 0 to {REACH:g} times each "
                f"price (for a price of 0, {REACH:g} times the largest)")


def _per(key: str, occasion: str, article: str = "a") -> str:
    """What a cost or price is paid per, after its money: ``per crew per working day`` (a rule's
    price), or ``a day`` (a cost of ``[costs]``, per occasion: ``article`` before the occasion)."""
    return PRICE_UNITS.get(key, f"{article} {occasion}")


def _switch(switch) -> dict[str, float | None] | None:
    return None if switch is None else {"down": switch.down, "up": switch.up}


def _end(end) -> dict[str, float]:
    return {"value": end.value, "cutoff": end.cutoff, "mean_saving": end.mean_saving, "prob_saving": end.prob_saving}


def sensitivity_entry(sensitivity: Sensitivity) -> dict[str, Any]:
    """The ``sensitivity`` block of ``summary.json``: ``costs`` (one entry per cost, the widest
    first: ``key``, ``base``, ``varied``, ``low`` and ``high`` each with the cost ``value``, the
    ``cutoff`` chosen there, its ``mean_saving`` per season and ``prob_saving``, ``saving_change``
    at each end against today's saving, ``switching``: the cost at which the ``verdict`` changes
    and at which the cutoff leaves the ``band``, each ``down`` and ``up``, null when not within
    ``search``), today's ``cutoff``, ``saving``, ``near_optimal_band`` and ``use_forecast``, its
    ``basis``, and ``note``: why there is none, when there is none. Under ``[operations]`` the
    entries are the rules' prices (keys ``operations.<price>``) and ``remark`` says which were left
    out as playing no part in the run, and that the day rate moves the standby rate paid when no
    ``standby_rate`` is given (null when neither)."""
    if sensitivity.note is not None:
        return {"costs": [], "note": sensitivity.note}
    s = sensitivity
    out = {"basis": PRICES_BASIS if s.moved == "operations" else BASIS, "cutoff": s.base_cutoff,
           "saving": s.base_saving, "near_optimal_band": s.band, "use_forecast": s.use_forecast,
           "costs": [{"key": c.key, "base": c.base, "varied": c.varied, "low": _end(c.low), "high": _end(c.high),
                      "saving_change": {"low": c.low.mean_saving - s.base_saving,
                                        "high": c.high.mean_saving - s.base_saving},
                      "switching": {"verdict": _switch(c.verdict_switch), "band": _switch(c.band_switch)},
                      "search": c.search} for c in s.costs],
           "note": None}
    if s.moved == "operations":
        out["remark"] = s.remark
    return out


def _prices(entry: Mapping[str, Any]) -> bool:
    """Whether the block moved the operating rules' prices (rather than the costs of ``[costs]``)."""
    return any(c["key"].startswith("operations.") for c in entry["costs"])


def sensitivity_frame(entry: Mapping[str, Any], currency: str = "") -> pd.DataFrame:
    """``sensitivity.csv``: one row per cost, the widest bar first, from the summary's block; its
    ``value_unit`` says what the row's money is paid per (an occasion, or a price's own unit)."""
    rows = []
    for c in entry["costs"]:
        verdict = c["switching"]["verdict"] or {"down": None, "up": None}
        rows.append({"cost_key": c["key"], "value_unit": f"{currency} {_per(c['key'], 'occasion', 'per')}".strip(),
                     "varied": c["varied"], "base_value": c["base"],
                     "low_value": c["low"]["value"], "high_value": c["high"]["value"],
                     "cutoff_at_low": c["low"]["cutoff"], "cutoff_at_high": c["high"]["cutoff"],
                     "mean_saving_at_low": c["low"]["mean_saving"], "mean_saving_at_high": c["high"]["mean_saving"],
                     "saving_change_at_low": c["saving_change"]["low"],
                     "saving_change_at_high": c["saving_change"]["high"],
                     "prob_saving_at_low": c["low"]["prob_saving"], "prob_saving_at_high": c["high"]["prob_saving"],
                     "verdict_switch_down": verdict["down"], "verdict_switch_up": verdict["up"],
                     "band_switch_down": c["switching"]["band"]["down"], "band_switch_up": c["switching"]["band"]["up"],
                     "search_low": c["search"][0], "search_high": c["search"][1]})
    return pd.DataFrame(rows)


def bar_label(entry: Mapping[str, Any], currency: str) -> str:
    """A tornado bar's label: the cost in words with its two ends, ``Cost of a miss (2,850 to 4,750 EUR)``."""
    words = COST_WORDS.get(entry["key"], entry["key"])
    low, high = money(entry["low"]["value"], currency), money(entry["high"]["value"], currency)
    return f"{words[:1].upper()}{words[1:]} ({low.removesuffix(' ' + currency)} to {high})"


def _switch_words(switch: Mapping[str, Any] | None, currency: str, what: str) -> str:
    """``what`` (it changes / the cutoff leaves the band) with the cost's switching values, in words."""
    if switch is None:
        return ""
    moves = [f"{'below' if side == 'down' else 'above'} {money(switch[side], currency)}"
             for side in ("down", "up") if switch[side] is not None]
    if not moves:
        return f"{what} for no value from 0 to {REACH:g} times it"
    return f"{what} only {' or '.join(moves)}"


def sensitivity_sentence(entry: Mapping[str, Any], currency: str, decimals: int = 2, occasion: str = "day") -> str:
    """Which estimate matters most, in one plain sentence (money per season and per occasion)."""
    if entry.get("note"):
        return entry["note"]
    top = entry["costs"][0]
    words = COST_WORDS.get(top["key"], top["key"])
    things = "prices of the operating rules" if _prices(entry) else "costs"
    at = lambda end: (f"{money(end['mean_saving'], currency)} a season at cutoff "  # noqa: E731
                      f"{cutoff_text(end['cutoff'], decimals)}")
    varied = "the ends of its range" if top["varied"] == "range" else f"{VARY:.0%} less and more"
    lo, hi = (cutoff_text(v, decimals) for v in entry["near_optimal_band"])
    said = (f"Of the {len(entry['costs'])} {things}, the {words} ({money(top['base'], currency)} "
            f"{_per(top['key'], occasion)}) matters "
            f"most: at {varied} ({money(top['low']['value'], currency)} and {money(top['high']['value'], currency)}) "
            f"the saving against the reference is {at(top['low'])} and {at(top['high'])}")
    verdict = _switch_words(top["switching"]["verdict"], currency, "the verdict on using the forecast changes")
    band = _switch_words(top["switching"]["band"], currency,
                         f"the cutoff leaves today's near-optimal band ({lo} to {hi})")
    return said + "; " + "; ".join(part for part in (verdict, band) if part) + "."


def report_section(entry: Mapping[str, Any] | None, currency: str, decimals: int = 2,
                   occasion: str = "day") -> dict[str, Any] | None:
    """What the report's section on which cost matters shows: the sentence, one row of formatted
    text per cost (the widest bar first), and the tornado's labels and bars; or only the note."""
    if entry is None:
        return None
    if entry.get("note"):
        return {"note": entry["note"], "rows": [], "sentence": "", "prices": False}
    cut = lambda v: cutoff_text(v, decimals)  # noqa: E731

    def at(end: Mapping[str, Any]) -> dict[str, str]:
        return {"value": money(end["value"], currency),
                "what": f"at {cut(end['cutoff'])}: saves {money(end['mean_saving'], currency)} a season, in "
                        f"{share(end['prob_saving'])} of seasons"}

    def switch(pair: Mapping[str, Any] | None) -> list[str]:
        if pair is None:
            return ["–"]
        return [f"{word} {'none' if pair[side] is None else money(pair[side], currency)}"
                for word, side in (("below:", "down"), ("above:", "up"))]

    prices = _prices(entry)
    rows = []
    for c in entry["costs"]:
        verdict = c["switching"]["verdict"]
        rows.append({"name": COST_WORDS.get(c["key"], c["key"]).capitalize(), "unit": PRICE_UNITS.get(c["key"], ""),
                     "base": money(c["base"], currency),
                     "low": at(c["low"]), "high": at(c["high"]),
                     "verdict": switch(verdict), "band": switch(c["switching"]["band"])})
    lo, hi = entry["near_optimal_band"]
    return {"note": "", "rows": rows, "sentence": sensitivity_sentence(entry, currency, decimals, occasion),
            "cutoff": cut(entry["cutoff"]), "saving": money(entry["saving"], currency),
            "band": f"{cut(lo)} to {cut(hi)}", "reach": f"{REACH:g}", "vary": f"{VARY:.0%}",
            "prices": prices, "noun": "price" if prices else "cost", "remark": entry.get("remark") or "",
            "labels": [bar_label(c, currency) for c in entry["costs"]],
            "change_low": [c["saving_change"]["low"] for c in entry["costs"]],
            "change_high": [c["saving_change"]["high"] for c in entry["costs"]]}
