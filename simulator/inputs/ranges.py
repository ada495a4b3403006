"""Costs known only as a range: ``{low = .., likely = .., high = ..}`` in place of one number.

A cost written as a range is read here, before the scenario's schema sees it: the range is
checked (three finite numbers, low <= likely <= high, within the schema's money limits) and the
schema gets its PERT mean in its place, so everything that needs one fixed number (the break-even
probability, relative value, the theoretical cutoff, the seasonal-rate baseline) uses the mean.
The ranges themselves are kept by dotted key ("costs.miss", "sites.<site>.costs.miss") and drawn
once per replicate season by :mod:`simulator.pricing.draws`.

The PERT distribution: a beta distribution on [low, high] with shape parameters
``1 + 4 (likely - low) / (high - low)`` and ``1 + 4 (high - likely) / (high - low)``, whose mean is
``(low + 4 likely + high) / 6`` (Malcolm, Roseboom, Clark and Fazar 1959, "Application of a
technique for research and development program evaluation", Operations Research 7(5):646-669;
the shape parameters as in Vose 2008, "Risk Analysis", 3rd ed., section on the PERT distribution,
from memory).

Ranges are read in ``[costs]`` and ``[sites."<name>".costs]``. Under ``[operations]`` the rules
price the seasons; ranges there (and in ``[costs]`` beside them) are refused in one line for now.
"""

from __future__ import annotations

import math
from typing import Any

from .errors import InputError, did_you_mean, excerpt, quoted
from .scenario_costs import COST_KEYS
from .scenario_types import MAX_MONEY, Money, _Section

__all__ = ["CostRange", "split_ranges", "RANGE_KEYS", "site_ranges"]

RANGE_KEYS = ("low", "likely", "high")
_OPERATIONS_PRICES = ("day_rate", "standby_rate", "spoilage_cost", "damages_per_day_late", "unfinished_cost")


class CostRange(_Section):
    """A cost known only as a range: lowest, most likely and highest value, per occasion in the
    scenario's currency (frozen; checked as read by :func:`split_ranges`)."""

    low: Money
    likely: Money
    high: Money

    @property
    def mean(self) -> float:
        """The PERT mean (low + 4 likely + high) / 6 (Malcolm et al. 1959); exactly ``likely`` when
        low = high."""
        if self.low == self.high:
            return self.likely
        return (self.low + 4 * self.likely + self.high) / 6

    @property
    def width(self) -> float:
        return self.high - self.low

    @property
    def shapes(self) -> tuple[float, float]:
        """The beta distribution's (alpha, beta) on [low, high]; (1, 1) when low = high (unused)."""
        if self.width == 0:
            return 1.0, 1.0
        return (1 + 4 * (self.likely - self.low) / self.width, 1 + 4 * (self.high - self.likely) / self.width)


def _read_range(value: dict, where: str, money: float) -> CostRange:
    """One written range checked, or an :class:`InputError` naming ``where``."""
    unknown = [k for k in value if k not in RANGE_KEYS]
    if unknown:
        hint = did_you_mean(str(unknown[0]), RANGE_KEYS) or "; write {low = .., likely = .., high = ..}"
        raise InputError(f"{where}: unknown key {quoted(str(unknown[0]))} in the range{hint}")
    missing = [k for k in RANGE_KEYS if k not in value]
    if missing:
        raise InputError(f"{where}: the range has no {missing[0]}; write {{low = .., likely = .., high = ..}}")
    numbers = {}
    for key in RANGE_KEYS:
        v = value[key]
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
            raise InputError(f"{where}: {key} must be a finite number (got {excerpt(v)})")
        if abs(v) > money:
            raise InputError(f"{where}: {key} must be a number from -{money:.0e} to {money:.0e} (got {excerpt(v)})")
        numbers[key] = float(v)
    if not numbers["low"] <= numbers["likely"] <= numbers["high"]:
        raise InputError(f"{where}: a range needs low <= likely <= high (got low {numbers['low']:g}, likely "
                         f"{numbers['likely']:g}, high {numbers['high']:g}); make low the smallest and high the largest")
    return CostRange(**numbers)


def split_ranges(data: dict[str, Any], label: str, money: float = MAX_MONEY
                 ) -> tuple[dict[str, Any], dict[str, CostRange]]:
    """The scenario's raw TOML data with every cost range replaced by its PERT mean, and the ranges
    by dotted key. ``data`` is not changed. Ranges under ``[operations]``, or in ``[costs]`` when
    there are ``[operations]``, are refused (:class:`InputError`, one line)."""
    ranges: dict[str, CostRange] = {}

    def costs_table(table: Any, prefix: str, where: str) -> Any:
        if not isinstance(table, dict):
            return table  # the schema says what it wanted
        out = dict(table)
        for key in COST_KEYS:
            if isinstance(table.get(key), dict):
                r = _read_range(table[key], f"{label} [{where}] {key}", money)
                ranges[f"{prefix}{key}"] = r
                out[key] = r.mean
        return out

    def refuse_in_operations(table: Any, where: str) -> None:
        if isinstance(table, dict):
            for key in _OPERATIONS_PRICES:
                if isinstance(table.get(key), dict):
                    raise InputError(f"{label} [{where}] {key}: prices of the operating rules cannot be ranges "
                                     "yet; give one number (for example the most likely value)")

    out = dict(data)
    if "ranges" in data:
        raise InputError(f"{label} top level: unknown key \"ranges\"; write a cost as a range in its own "
                         "place, for example miss = {low = 2000, likely = 2500, high = 4000} under [costs]")
    refuse_in_operations(data.get("operations"), "operations")
    cases = data.get("stress") if isinstance(data.get("stress"), list) else []
    for i, case in enumerate(cases):
        for table in ("costs", "operations"):
            given = case.get(table) if isinstance(case, dict) else None
            ranged = [k for k, v in given.items() if isinstance(v, dict)] if isinstance(given, dict) else []
            if ranged:
                raise InputError(f"{label} [[stress]] table {i + 1} {table}.{ranged[0]}: a stress case takes one "
                                 "number, not a range; give the changed value")
    if "costs" in data:
        out["costs"] = costs_table(data["costs"], "costs.", "costs")
    sites = data.get("sites")
    if isinstance(sites, dict):
        out["sites"] = {}
        for name, site in sites.items():
            if isinstance(site, dict):
                site = dict(site)
                refuse_in_operations(site.get("operations"), f"sites.{quoted(str(name))}.operations")
                if "costs" in site:
                    site["costs"] = costs_table(site["costs"], f"sites.{name}.costs.",
                                                f"sites.{quoted(str(name))}.costs")
            out["sites"][name] = site
    if ranges and "operations" in data:
        first = next(iter(ranges))
        raise InputError(f"{label} [{first.rsplit('.', 1)[0]}] {first.rsplit('.', 1)[1]}: with [operations] the "
                         "rules price the seasons, so a cost range here would not be drawn; give one number")
    return out, ranges


def site_ranges(ranges: dict[str, CostRange], site: str, overridden: set[str]) -> dict[str, CostRange]:
    """The ranges as they apply to ``site``: the scenario's ``costs.*`` ranges less the costs the
    site gives itself (``overridden``), plus the site's own ranges, keyed ``costs.<cost>``."""
    prefix = f"sites.{site}.costs."
    out = {k: r for k, r in ranges.items() if k.startswith("costs.") and k[len("costs."):] not in overridden}
    out.update({"costs." + k[len(prefix):]: r for k, r in ranges.items() if k.startswith(prefix)})
    return out
