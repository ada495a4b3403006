"""Which cost estimate matters with a site column, as the files and the account say it.

The portfolio form of the ``sensitivity`` block of ``summary.json`` (:func:`portfolio_entry`, with
``scope = "portfolio"``), ``sensitivity.csv`` with a ``site`` column (:func:`portfolio_frame`: the
portfolio's rows, ``site`` empty, then each site's own), the account's sentence and the report's
section. The numbers come from :mod:`simulator.analysis.site_sensitivity`; each site's own block
is the single-site form (:func:`simulator.account.sensitivity_view.sensitivity_entry`).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import pandas as pd

from ..analysis.sensitivity import REACH, VARY
from ..analysis.site_sensitivity import PortfolioSensitivity
from ..notation.prose import money, share
from .sensitivity_view import (COST_WORDS, PRICE_UNITS, _per, _prices, _switch, bar_label, sensitivity_entry,
                               sensitivity_frame)

__all__ = ["PORTFOLIO_BASIS", "PORTFOLIO_PRICES_BASIS", "is_portfolio", "portfolio_entry", "portfolio_frame", "portfolio_sentence",
           "portfolio_report_section"]

PORTFOLIO_BASIS = (f"each of the scenario's costs moved alone for every site that takes it from [costs] (a site's "
                   f"own cost does not move), the others held (a cost given as a range at its low and high, any "
                   f"other {VARY:.0%} below and above); at each end every site chooses its own cutoff again, and "
                   f"the portfolio's total saving against the reference is priced per season over the simulated "
                   f"seasons; switching values looked for from 0 to {REACH:g} times each cost")
PORTFOLIO_PRICES_BASIS = (f"each of the operating rules' prices in the scenario's [operations] moved alone for every site "
                          f"that takes it from there (a site's own price does not move), the others held (a price given "
                          f"as a range at its low and high, any other {VARY:.0%} below and above); each site's replicate "
                          f"seasons as the run played them, priced again at each end; at each end every site chooses "
                          f"its own cutoff again, and the portfolio's total saving against the reference is priced per "
                          f"season over the simulated seasons; switching values of a site's advice looked for from 0 to "
                          f"{REACH:g} times each price")


def is_portfolio(entry: Mapping[str, Any] | None) -> bool:
    """Whether a ``sensitivity`` block is the portfolio's (a run with a site column)."""
    return bool(entry) and entry.get("scope") == "portfolio"


def _end(end) -> dict[str, float]:
    return {"value": end.value, "mean_saving": end.mean_saving, "prob_saving": end.prob_saving,
            "sites_moved": end.sites_moved}


def _first(first) -> dict[str, Any] | None:
    return None if first is None else {"value": first.value, "site": first.site, "advice": first.advice}


def portfolio_entry(sensitivity: PortfolioSensitivity) -> dict[str, Any]:
    """The ``sensitivity`` block of a run with a site column: ``scope`` ("portfolio"), ``basis``,
    today's total ``saving`` (per season, each site at its own cutoff, against the reference) and
    ``prob_saving``, the portfolio's ``use_forecast`` (null without a portfolio verdict); ``costs``,
    one entry per scenario cost, the widest first: ``key``, ``base``, ``varied``, ``sharing`` (sites
    that take it from the scenario), ``low`` and ``high`` each with the cost ``value``, the total
    ``mean_saving`` per season, ``prob_saving`` and ``sites_moved`` (sites whose cutoff changes),
    ``saving_change`` at each end, ``switching``: ``verdict`` (the portfolio's verdict changes,
    ``down`` and ``up``, null when not within ``search``) and ``first_site`` (where the first site's
    own advice changes, each way: ``value``, ``site``, ``advice`` "verdict" or "band"), ``search``;
    ``closest_sites``: the sites whose advice switches after the smallest move (``site``, ``key``,
    ``base``, ``value``, ``advice``, ``relative``: the move over the cost); ``sites``: each site's own
    block in the single-site form, by name; ``note``: why there is none, when there is none. Under
    ``[operations]`` the entries are the rules' prices (keys ``operations.<price>``), ``verdict`` is
    null (the portfolio's verdict is not searched at other prices) and ``remark`` says so, and which
    prices were left out or move together."""
    if sensitivity.note is not None:
        return {"scope": "portfolio", "costs": [], "note": sensitivity.note}
    s = sensitivity
    out = {"scope": "portfolio", "basis": PORTFOLIO_PRICES_BASIS if s.moved == "operations" else PORTFOLIO_BASIS,
            "saving": s.saving, "prob_saving": s.prob_saving,
            "use_forecast": s.use_forecast,
            "costs": [{"key": c.key, "base": c.base, "varied": c.varied, "sharing": c.sharing,
                       "low": _end(c.low), "high": _end(c.high),
                       "saving_change": {"low": c.low.mean_saving - s.saving, "high": c.high.mean_saving - s.saving},
                       "switching": {"verdict": _switch(c.verdict_switch),
                                     "first_site": {"down": _first(c.first_site_down), "up": _first(c.first_site_up)}},
                       "search": c.search} for c in s.costs],
            "closest_sites": [{"site": c.site, "key": c.key, "base": c.base, "value": c.value, "advice": c.advice,
                               "relative": c.relative} for c in s.closest],
            "sites": {name: sensitivity_entry(own) for name, own in s.sites},
            "note": None}
    if s.moved == "operations":
        out["remark"] = s.remark
    return out


def portfolio_frame(entry: Mapping[str, Any], currency: str = "") -> pd.DataFrame:
    """``sensitivity.csv`` with a site column: the portfolio's rows (``site`` empty; no single cutoff,
    so the cutoff and band columns are empty, and ``sites_*`` and ``first_site_*`` say how many
    sites move and where the first site's advice changes), then each site's own rows, the widest
    bar first within each."""
    rows = []
    for c in entry["costs"]:
        verdict = c["switching"]["verdict"] or {"down": None, "up": None}
        first = c["switching"]["first_site"]
        rows.append({"site": "", "cost_key": c["key"], "value_unit": f"{currency} {_per(c['key'], 'occasion', 'per')}".strip(),
                     "varied": c["varied"], "base_value": c["base"],
                     "low_value": c["low"]["value"], "high_value": c["high"]["value"],
                     "cutoff_at_low": None, "cutoff_at_high": None,
                     "mean_saving_at_low": c["low"]["mean_saving"], "mean_saving_at_high": c["high"]["mean_saving"],
                     "saving_change_at_low": c["saving_change"]["low"],
                     "saving_change_at_high": c["saving_change"]["high"],
                     "prob_saving_at_low": c["low"]["prob_saving"], "prob_saving_at_high": c["high"]["prob_saving"],
                     "verdict_switch_down": verdict["down"], "verdict_switch_up": verdict["up"],
                     "band_switch_down": None, "band_switch_up": None,
                     "search_low": c["search"][0], "search_high": c["search"][1],
                     "sites_sharing": c["sharing"], "sites_moved_at_low": c["low"]["sites_moved"],
                     "sites_moved_at_high": c["high"]["sites_moved"],
                     "first_site_switch_down": (first["down"] or {}).get("value"),
                     "first_site_down": (first["down"] or {}).get("site", ""),
                     "first_site_switch_up": (first["up"] or {}).get("value"),
                     "first_site_up": (first["up"] or {}).get("site", "")})
    frames = [pd.DataFrame(rows)]
    for name, own in entry["sites"].items():
        frames.append(sensitivity_frame(own, currency).assign(site=name))
    table = pd.concat(frames, ignore_index=True)
    for column in ("sites_sharing", "sites_moved_at_low", "sites_moved_at_high"):  # counts, empty on a site's rows
        if column in table:
            table[column] = table[column].astype("Int64")
    return table[["site", *[column for column in table.columns if column != "site"]]]


def portfolio_sentence(entry: Mapping[str, Any], currency: str, occasion: str = "day") -> str:
    """Which of the scenario's estimates matters most for the portfolio, in one plain sentence."""
    if entry.get("note"):
        return entry["note"]
    if not entry["costs"]:  # every site gives its own prices: only the sites' own tables
        return entry.get("remark") or ""
    top = entry["costs"][0]
    words = COST_WORDS.get(top["key"], top["key"])
    varied = "the ends of its range" if top["varied"] == "range" else f"{VARY:.0%} less and more"
    n = top["sharing"]
    said = (f"For the portfolio, the {words} ({money(top['base'], currency)} {_per(top['key'], occasion)}"
            f"{',' if top['key'] in PRICE_UNITS else ''} at {n} "
            f"site{'' if n == 1 else 's'}) matters most: at {varied} ({money(top['low']['value'], currency)} and "
            f"{money(top['high']['value'], currency)}) the sites together, each at its own cutoff, save "
            f"{money(top['low']['mean_saving'], currency)} and {money(top['high']['mean_saving'], currency)} a season "
            f"against the reference ({top['low']['sites_moved']} and {top['high']['sites_moved']} of those {n} "
            f"change cutoff)")
    parts = []
    first = top["switching"]["first_site"]
    moves = [f"{'below' if side == 'down' else 'above'} {money(first[side]['value'], currency)} (site "
             f"\u201c{first[side]['site']}\u201d, its {'verdict' if first[side]['advice'] == 'verdict' else 'cutoff band'})"
             for side in ("down", "up") if first[side] is not None]
    if moves:
        parts.append("the first site's advice changes " + " or ".join(moves))
    verdict = top["switching"]["verdict"]
    if verdict is not None:
        flips = [f"{'below' if side == 'down' else 'above'} {money(verdict[side], currency)}"
                 for side in ("down", "up") if verdict[side] is not None]
        parts.append("the portfolio's verdict changes " + (" or ".join(flips) if flips else
                                                            f"for no value from 0 to {REACH:g} times it"))
    return said + ("; " + "; ".join(parts) if parts else "") + "."


def portfolio_report_section(entry: Mapping[str, Any], currency: str, occasion: str = "day") -> dict[str, Any]:
    """What the report's section shows for a portfolio: the sentence, one row per scenario cost,
    the tornado's labels and bars, and the sites closest to switching; or only the note."""
    if entry.get("note"):
        return {"note": entry["note"], "rows": [], "sentence": "", "portfolio": True, "prices": False}
    prices = _prices(entry) or entry.get("remark") is not None

    def at(end: Mapping[str, Any], sharing: int) -> dict[str, str]:
        return {"value": money(end["value"], currency),
                "what": f"saves {money(end['mean_saving'], currency)} a season, in {share(end['prob_saving'])} of "
                        f"seasons; {end['sites_moved']} of {sharing} sites change cutoff"}

    def first(side: str, found: Mapping[str, Any] | None) -> str:
        word = "below:" if side == "down" else "above:"
        if found is None:
            return f"{word} none"
        return f"{word} {money(found['value'], currency)} (\u201c{found['site']}\u201d, {found['advice']})"

    rows = []
    for c in entry["costs"]:
        verdict = c["switching"]["verdict"]
        rows.append({"name": COST_WORDS.get(c["key"], c["key"]).capitalize(), "unit": PRICE_UNITS.get(c["key"], ""),
                     "base": money(c["base"], currency),
                     "sharing": c["sharing"], "low": at(c["low"], c["sharing"]), "high": at(c["high"], c["sharing"]),
                     "verdict": (["–"] if verdict is None else
                                 [f"{w} {'none' if verdict[side] is None else money(verdict[side], currency)}"
                                  for w, side in (("below:", "down"), ("above:", "up"))]),
                     "first": [first(side, c["switching"]["first_site"][side]) for side in ("down", "up")]})
    closest = [f"\u201c{c['site']}\u201d: its {COST_WORDS.get(c['key'], c['key'])} "
               f"({money(c['base'], currency)} {_per(c['key'], occasion)}) moved to {money(c['value'], currency)} "
               f"(a move of {share(c['relative'])}) changes its {'verdict' if c['advice'] == 'verdict' else 'cutoff band'}"
               for c in entry["closest_sites"]]
    return {"note": "", "portfolio": True, "rows": rows,
            "sentence": portfolio_sentence(entry, currency, occasion), "saving": money(entry["saving"], currency),
            "sites": len(entry["sites"]), "closest": closest, "reach": f"{REACH:g}", "vary": f"{VARY:.0%}",
            "noun": "price" if prices else "cost", "prices": prices,
            "remark": (entry.get("remark") or "") if entry["costs"] else "",  # else the sentence says it
            "labels": [bar_label(c, currency) for c in entry["costs"]],
            "change_low": [c["saving_change"]["low"] for c in entry["costs"]],
            "change_high": [c["saving_change"]["high"] for c in entry["costs"]]}
