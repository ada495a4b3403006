"""A played season's cost written price by price: which whole counts each of the rules' prices
multiplies, and by how much.

Every component of :func:`~simulator.rules.season_cost.price_outcome` is a count times a price
times a constant (the crews, the overtime multiple, a work unit), so the season cost is linear in
the prices (:data:`~simulator.rules.operating_rules.PRICE_KEYS`):

    season cost = sum over prices p of  p x sum over (count, factor) in terms[p] of  count x factor
                  (+ other_cost, the money of user-written processes)

with, for ``crews`` = n and ``overtime_multiple`` = m,

- ``day_rate``: regular days out x n (productive and spoiled labour together), overtime days x n m;
- ``standby_rate``: standby days x n;
- ``spoilage_cost``: spoiled days out, regular and overtime, x n;
- ``damages_per_day_late``: calendar days late x 1 (only with a deadline);
- ``unfinished_cost``: work units left x 1 / WORK_UNIT, crew-days (only with an amount of work).

This is the same sum as ``price_outcome``, grouped by price instead of by component (equal up to
floating-point rounding; ``tests/test_whatif_rules.py`` checks it on played seasons at random
prices). The mean season cost at any prices then follows exactly from the mean counts over the
replicates (linearity of expectation), which is what the report's what-if under ``[operations]``
computes in the page.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from .operating_rules import PRICE_KEYS, WORK_UNIT, Rules
from .season_cost import days_late, played_outcome

__all__ = ["PRICED_COUNTS", "price_terms", "moving_prices", "price_counts", "priced_by_terms"]

PRICED_COUNTS = ("days_out", "overtime_days", "standby_days", "spoiled_days_out", "days_late", "left_units")
"""The whole counts of a played season that the prices multiply (all crews together, except
``days_late``, calendar days, and ``left_units``, thousandths of a crew-day)."""


def price_terms(rules: Rules) -> dict[str, tuple[tuple[str, float], ...]]:
    """Each price that plays a part under ``rules``, with the (count, factor) pairs it multiplies
    (the module's formula); ``damages_per_day_late`` only with a deadline, ``unfinished_cost`` only
    with an amount of work. Keys in :data:`~simulator.rules.operating_rules.PRICE_KEYS` order."""
    n = float(rules.crews)
    terms: dict[str, tuple[tuple[str, float], ...]] = {
        "day_rate": (("days_out", n), ("overtime_days", n * rules.overtime_multiple)),
        "standby_rate": (("standby_days", n),),
        "spoilage_cost": (("spoiled_days_out", n),),
    }
    if rules.deadline_day is not None:
        terms["damages_per_day_late"] = (("days_late", 1.0),)
    if rules.limited:
        terms["unfinished_cost"] = (("left_units", 1.0 / WORK_UNIT),)
    return terms


def moving_prices(rules: Rules, standby_given: bool) -> list[str]:
    """The prices a reader may move, in :data:`~simulator.rules.operating_rules.PRICE_KEYS` order:
    those that play a part under ``rules`` (:func:`price_terms`), ``standby_rate`` only when the
    scenario gives it (``standby_given``; else standby days are paid the day rate, and follow it).
    The report's what-if shows them as fields; the sensitivity moves them."""
    terms = price_terms(rules)
    return [key for key in PRICE_KEYS if key in terms and (key != "standby_rate" or standby_given)]


def price_counts(rules: Rules, extras: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
    """The :data:`PRICED_COUNTS` of played seasons, int64, each shaped like the extras
    (n_rep, n_lanes), from a priced block's extras (``OperationsResult.extras``)."""
    played = played_outcome(rules, extras)
    return {
        "days_out": np.asarray(played["days_out"], dtype=np.int64),
        "overtime_days": np.asarray(played["overtime_days"], dtype=np.int64),
        "standby_days": np.asarray(played["standby_days"], dtype=np.int64),
        "spoiled_days_out": (np.asarray(played["spoiled_days"], dtype=np.int64)
                             + np.asarray(played["spoiled_overtime_days"], dtype=np.int64)),
        "days_late": np.asarray(days_late(rules, played["completion_index"]), dtype=np.int64),
        "left_units": np.asarray(played["left_units"], dtype=np.int64),
    }


def priced_by_terms(terms: Mapping[str, tuple[tuple[str, float], ...]], counts: Mapping[str, np.ndarray],
                    prices: Mapping[str, float], other_cost=None) -> np.ndarray:
    """The season cost from counts (whole counts per season, or their means) at ``prices``, added
    price by price and term by term in the order of ``terms`` (the order the page adds them in),
    then ``other_cost``."""
    total = 0.0
    for key, pairs in terms.items():
        for count, factor in pairs:
            total = total + np.asarray(counts[count], dtype=np.float64) * factor * float(prices[key])
    if other_cost is not None:
        total = total + np.asarray(other_cost, dtype=np.float64)
    return np.asarray(total, dtype=np.float64)
