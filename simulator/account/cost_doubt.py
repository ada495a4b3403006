"""The finding on costs known only as a range: which costs were drawn, and how much of the spread
of the recommended cutoff's season cost comes from the weather and how much from the doubt about
those costs (``summary["cost_ranges"]`` and ``summary["cost_spread"]``;
:mod:`simulator.analysis.cost_spread` says the method)."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from ..notation.prose import money, money_range, share

__all__ = ["cost_doubt", "range_words"]


PRICE_UNITS = {"day_rate": "per crew per working day", "standby_rate": "per crew per standby day",
               "spoilage_cost": "per crew per spoiled day out", "damages_per_day_late": "per calendar day late",
               "unfinished_cost": "per crew-day left unfinished"}
"""What each of the operating rules' prices is paid per (``[operations]``)."""


def range_words(key: str, r: Mapping[str, float], currency: str, unit: str) -> str:
    """One range in words: ``miss: 2,000 to 4,000 EUR a day, most likely 2,500 EUR``, or for a
    rules' price ``day rate: 700 to 1,100 EUR per crew per working day, most likely 800 EUR``; a
    site's cost is named with its site."""
    parts = key.split(".")
    name = parts[-1].replace("_", " ")
    if parts[0] == "sites":
        name += f" at \u201c{'.'.join(parts[1:-2])}\u201d"
    per = PRICE_UNITS[parts[-1]] if parts[-2] == "operations" else f"a {unit}"
    return f"{name}: {money_range(r['low'], r['high'], currency)} {per}, most likely {money(r['likely'], currency)}"


def cost_doubt(s: Mapping[str, Any], cut: Callable[[float], str], unit: str, finding) -> Any | None:
    """The :class:`~simulator.account.findings.Finding` (made by ``finding``) on the cost ranges,
    or None when the scenario gives none."""
    ranges = s.get("cost_ranges") or {}
    if not ranges:
        return None
    cur = s["currency"]
    listed = "; ".join(range_words(k, r, cur, unit) for k, r in ranges.items())
    spread = s.get("cost_spread")
    rules = s.get("operations") is not None  # the rules' prices are the ranges, not the [costs]
    needs = ("one price, such as the honest check and the verdict," if rules
             else "one cost, such as the break-even probability,")
    means = f"figures that need {needs} use each range's PERT mean, (low + 4 x likely + high) / 6"
    if not spread or spread.get("share_from_costs") is None:
        wide = any(r["high"] > r["low"] for r in ranges.values())
        drawn = ("the season cost does not vary" if spread else
                 "each simulated season draws them (the split of the spread between the weather and the "
                 "costs is given for one site at a time only, not yet for many)" if wide else
                 "no range is wider than a point, so the costs are fixed")
        what = "Prices of the operating rules given as ranges" if rules else "Costs given as ranges"
        return finding("cost_doubt", what, f"{listed}; {drawn}", f"{what}: {listed}; {drawn}, and {means}.",
                       "as the scenario gives them" if rules else "per occasion, as the scenario gives them")
    at = cut(spread["cutoff"])
    sd = money(spread["season_cost_sd"], cur)
    weather, costs = share(spread["share_from_weather"]), share(spread["share_from_costs"])
    n = f"{s['replicates']:,}"
    noun = "price" if rules else "cost"
    return finding(
        "cost_doubt", f"Spread of the season cost at {at}",
        f"{weather} from the weather, {costs} from the {noun} ranges  (standard deviation {sd} a season; "
        f"{listed})",
        f"Each simulated season draws its own {noun}s where they are given as ranges ({listed}). At {at}, "
        f"{weather} of the variance of the season cost (standard deviation {sd} a season) comes from the "
        f"weather and {costs} from the doubt about those {noun}s. {means[0].upper()}{means[1:]}.",
        f"variance of the season cost, at cutoff {at}, over {n} simulated seasons ({noun}s fixed at their "
        "means against drawn)")
