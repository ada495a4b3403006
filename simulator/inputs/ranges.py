"""Costs known only as a range: ``{low = .., likely = .., high = ..}`` in place of one number.

A cost written as a range is read here, before the scenario's schema sees it: the range is
checked (three finite numbers, low <= likely <= high, within the schema's money limits) and the
schema gets its PERT mean in its place, so everything that needs one fixed number (the break-even
probability, relative value, the theoretical cutoff, the seasonal-rate baseline) uses the mean.
The ranges themselves are kept by dotted key ("costs.miss", "sites.<site>.costs.miss",
"operations.day_rate", "sites.<site>.operations.day_rate") and drawn once per replicate season by
:mod:`simulator.pricing.draws`.

The PERT distribution: a beta distribution on [low, high] with shape parameters
``1 + 4 (likely - low) / (high - low)`` and ``1 + 4 (high - likely) / (high - low)``, whose mean is
``(low + 4 likely + high) / 6`` (Malcolm, Roseboom, Clark and Fazar 1959, "Application of a
technique for research and development program evaluation", Operations Research 7(5):646-669;
the shape parameters as in Vose 2008, "Risk Analysis", 3rd ed., section on the PERT distribution,
from memory).

Ranges are read in ``[costs]`` and ``[sites."<name>".costs]`` for the four costs, and in
``[operations]`` and ``[sites."<name>".operations]`` for the rules' prices
(:data:`~simulator.inputs.scenario_tables.PRICE_KEYS`; a price's range must not go below 0). With
``[operations]`` the rules price the seasons, so a range in ``[costs]`` beside them is refused in
one line (it would never be drawn); so is a range in a ``[[stress]]`` case, which takes one number.
"""

from __future__ import annotations

import math
from typing import Any

from .errors import InputError, did_you_mean, excerpt, quoted
from .scenario_costs import COST_KEYS
from .scenario_tables import PRICE_KEYS
from .scenario_types import MAX_MONEY, Money, _Section

__all__ = ["CostRange", "split_ranges", "RANGE_KEYS", "site_ranges"]

RANGE_KEYS = ("low", "likely", "high")


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


def _read_range(value: dict, where: str, money: float, least: float | None = None) -> CostRange:
    """One written range checked, or an :class:`InputError` naming ``where``; ``least`` is the
    lowest value allowed (0 for a price), else ``-money``."""
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
        if abs(v) > money or (least is not None and v < least):
            lowest = f"-{money:.0e}" if least is None else f"{least:g}"
            raise InputError(f"{where}: {key} must be a number from {lowest} to {money:.0e} (got {excerpt(v)})")
        numbers[key] = float(v)
    if not numbers["low"] <= numbers["likely"] <= numbers["high"]:
        raise InputError(f"{where}: a range needs low <= likely <= high (got low {numbers['low']:g}, likely "
                         f"{numbers['likely']:g}, high {numbers['high']:g}); make low the smallest and high the largest")
    return CostRange(**numbers)


def split_ranges(data: dict[str, Any], label: str, money: float = MAX_MONEY
                 ) -> tuple[dict[str, Any], dict[str, CostRange]]:
    """The scenario's raw TOML data with every range (a cost's or a rules' price's) replaced by its
    PERT mean, and the ranges by dotted key. ``data`` is not changed. Ranges in ``[[stress]]``
    cases, or in ``[costs]`` when there are ``[operations]``, are refused (:class:`InputError`,
    one line)."""
    ranges: dict[str, CostRange] = {}
    written: dict[str, str] = {}  # dotted key -> where the file has it, for messages

    def means_of(table: Any, keys: tuple[str, ...], prefix: str, where: str, least: float | None) -> Any:
        if not isinstance(table, dict):
            return table  # the schema says what it wanted
        out = dict(table)
        for key in keys:
            if isinstance(table.get(key), dict):
                written[f"{prefix}{key}"] = f"{label} [{where}] {key}"
                r = _read_range(table[key], written[f"{prefix}{key}"], money, least)
                ranges[f"{prefix}{key}"] = r
                out[key] = r.mean
        return out

    def read(table: dict, prefix: str, where: str) -> dict:
        """A table holding ``costs`` and ``operations`` (the scenario, or one site's)."""
        out = dict(table)
        if "costs" in table:
            out["costs"] = means_of(table["costs"], COST_KEYS, f"{prefix}costs.", f"{where}costs", None)
        if "operations" in table:
            out["operations"] = means_of(table["operations"], PRICE_KEYS, f"{prefix}operations.",
                                         f"{where}operations", 0.0)
        return out

    if "ranges" in data:
        raise InputError(f"{label} top level: unknown key \"ranges\"; write a cost as a range in its own "
                         "place, for example miss = {low = 2000, likely = 2500, high = 4000} under [costs]")
    cases = data.get("stress") if isinstance(data.get("stress"), list) else []
    for i, case in enumerate(cases):
        for table in ("costs", "operations"):
            given = case.get(table) if isinstance(case, dict) else None
            ranged = [k for k, v in given.items() if isinstance(v, dict)] if isinstance(given, dict) else []
            if ranged:
                raise InputError(f"{label} [[stress]] table {i + 1} {table}.{ranged[0]}: a stress case takes one "
                                 "number, not a range; give the changed value")
    out = read(data, "", "")
    sites = data.get("sites")
    if isinstance(sites, dict):
        out["sites"] = {name: read(site, f"sites.{name}.", f"sites.{quoted(str(name))}.")
                        if isinstance(site, dict) else site for name, site in sites.items()}
    costs = [key for key in ranges if key.rsplit(".", 2)[-2] == "costs"]
    if costs and "operations" in data:
        raise InputError(f"{written[costs[0]]}: with [operations] the rules price the seasons, so a cost "
                         "range here would not be drawn; give one number")
    return out, ranges


def site_ranges(ranges: dict[str, CostRange], site: str, overridden: set[str]) -> dict[str, CostRange]:
    """The ranges as they apply to ``site``: the scenario's ``costs.*`` and ``operations.*`` ranges
    less the keys the site gives itself (``overridden``, dotted: ``costs.hit``,
    ``operations.day_rate``), plus the site's own ranges, keyed as the scenario's
    (``costs.<cost>``, ``operations.<price>``)."""
    prefix = f"sites.{site}."
    out = {k: r for k, r in ranges.items() if not k.startswith("sites.") and k not in overridden}
    out.update({k[len(prefix):]: r for k, r in ranges.items() if k.startswith(prefix)})
    return out
