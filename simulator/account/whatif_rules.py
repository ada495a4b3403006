"""The meeting what-if under ``[operations]``: what the report's page needs to price a run's played
seasons again at rules' prices a reader types.

How the crews work (days out, standby, overtime, lateness, work left) never depends on the rules'
prices, and a season's cost is a sum of counts times prices
(:mod:`~simulator.rules.price_terms`, the same sum as
:func:`~simulator.rules.season_cost.price_outcome`). So the page computes:

- **exactly** the expected season cost of every cutoff and of the reference rule, from the mean of
  each priced count over all replicates (linearity of expectation), and so the cutoff with the
  lowest expected cost and the expected saving: those a run with the typed prices gives on the same
  seeds, up to floating-point rounding;
- **approximately** the 90% range, the 95th percentile, the worst 10% and how often a season
  saves, from the counts of the first :data:`SAMPLE` replicates (a random sample: replicates are
  independent draws), per lane (the cutoffs, then the reference rule), written compactly
  (:func:`~simulator.account.page_codec.encode_counts`).

There is no break-even probability under the rules: one day's decision changes what the next days
cost (work pushed later, overtime, days late), so no single probability splits acting from not
acting (Katz, Murphy and Winkler 1982, J. Appl. Meteor. 21, 518-531); the page says so instead.

:func:`page_figures` computes from the embedded data what the page's script computes, so the
arithmetic can be checked without a browser.
"""

from __future__ import annotations

import numpy as np

from ..inputs.scenario_types import BASELINES, MAX_MONEY
from ..pricing.decision import SAME_MONEY, SHORTFALL_SHARE, cheaper, lowest, objective_cost
from ..rules.operating_rules import RulePrices, _iso
from ..rules.price_terms import moving_prices, price_counts, price_terms, priced_by_terms
from .page_codec import decode_counts, decode_float64, encode_counts, encode_float64, start_value, typed_number

__all__ = ["SAMPLE", "rules_fields", "rules_whatif_data", "page_figures"]

SAMPLE = 1000  # replicate seasons per lane embedded for ranges and the share saving (demo page: 1.5 MB)

_LABELS = {"day_rate": "Day rate", "standby_rate": "Standby rate", "spoilage_cost": "Spoiled day",
           "damages_per_day_late": "Damages per day late", "unfinished_cost": "Unfinished work"}


def _given(result) -> list[str]:
    """The prices shown as fields: those that play a part, ``standby_rate`` only when the scenario
    gives it (else standby days are paid the day rate)."""
    return moving_prices(result.operations.rules, result.scenario.operations.standby_rate is not None)


def rules_fields(result) -> list[tuple[str, str, str, str]]:
    """(key, label, what it prices, the scenario's value as typed) for each field."""
    rules, section = result.operations.rules, result.scenario.operations
    prices = RulePrices.of(section)  # the scenario's (a range's PERT mean), never a per-season draw
    day = "per crew and working day, out" + (" or on standby" if section.standby_rate is None else "")
    if rules.n_overtime_days:
        day += f"; overtime days at {section.overtime_multiple:g} times it"
    what = {"day_rate": day, "standby_rate": "per crew and working day on standby",
            "spoilage_cost": "per crew and spoiled day out, on top of the pay",
            "damages_per_day_late": ("per calendar day past the deadline"
                                     + (f" ({_iso(rules.dates[0] + rules.deadline_day)})"
                                        if rules.deadline_day is not None else "")),
            "unfinished_cost": "per crew-day of work left when the season ends"}
    return [(key, _LABELS[key], what[key], typed_number(start_value(result.scenario, f"operations.{key}",
                                                                     getattr(prices, key))))
            for key in _given(result)]


def rules_whatif_data(result, sample: int | None = None) -> dict:
    """The what-if's data under ``[operations]`` (``kind = "rules"``); ``{"reason": ...}`` alone
    when the sample's counts cannot be written.

    Keys: ``keys`` (the fields' prices), ``prices`` (the scenario's value of every price that plays
    a part), ``follows`` (``{"standby_rate": "day_rate"}`` when the scenario gives no standby rate),
    ``terms`` (:func:`~simulator.rules.price_terms.price_terms`), ``min_money``, ``max_money``,
    ``objective``, ``shortfall_share``, ``same_money``, ``cutoffs``, ``replicates``; ``mean`` (per
    priced count, its mean at each cutoff over all replicates), ``reference_mean`` (the reference
    rule's), ``other_mean`` and ``reference_other_mean`` (money of user-written processes, or
    None); ``sample``: ``n``, ``counts`` (per priced count, ``encode_counts`` of (n_cutoffs + 1) x n,
    lane-major, the reference rule last) and ``other`` (float64, same layout, or None). ``sample``
    replicates are embedded (:data:`SAMPLE` when None), or all when there are fewer.
    """
    operations = result.operations
    rules, extras, k = operations.rules, operations.extras, operations.n_cutoffs
    terms = price_terms(rules)
    used = list(dict.fromkeys(count for pairs in terms.values() for count, _ in pairs))
    lanes = [*range(k), k + BASELINES.index(result.reference)]
    counts = {name: value[:, lanes] for name, value in price_counts(rules, extras).items() if name in used}
    n = min(SAMPLE if sample is None else sample, result.replicates)
    packed = {name: encode_counts(value[:n].T) for name, value in counts.items()}
    if any(p is None for p in packed.values()):
        return {"reason": "The seasons' counts are too large for the page's sample: change the prices in the "
                          "scenario and run it again."}
    other = np.asarray(extras["other_cost"], dtype=np.float64)[:, lanes] if "other_cost" in extras else None
    mean = {name: value.mean(axis=0, dtype=np.float64) for name, value in counts.items()}
    section = result.scenario.operations
    return {
        "kind": "rules", "keys": _given(result),
        "prices": {key: start_value(result.scenario, f"operations.{key}", getattr(RulePrices.of(section), key))
                   for key in terms},
        "follows": {"standby_rate": "day_rate"} if section.standby_rate is None else {},
        "terms": {key: [[count, float(factor)] for count, factor in pairs] for key, pairs in terms.items()},
        "min_money": 0.0, "max_money": MAX_MONEY, "objective": result.decision.objective,
        "shortfall_share": SHORTFALL_SHARE, "same_money": SAME_MONEY,
        "cutoffs": [float(c) for c in result.cutoffs], "replicates": int(result.replicates),
        "mean": {name: [float(v) for v in value[:k]] for name, value in mean.items()},
        "reference_mean": {name: float(value[k]) for name, value in mean.items()},
        "other_mean": None if other is None else [float(v) for v in other[:, :k].mean(axis=0)],
        "reference_other_mean": None if other is None else float(other[:, k].mean()),
        "sample": {"n": int(n), "counts": packed, "other": None if other is None else encode_float64(other[:n].T)},
    }


def page_figures(data: dict, typed: dict[str, float] | None = None) -> dict:
    """What the page shows at the prices ``typed`` (the others at the scenario's), computed as its
    script does: ``best`` (cutoff index), ``cutoff``, ``mean`` (its expected season cost),
    ``reference_mean``, ``saving``, ``p05``, ``p95`` (of the sample's season costs at the cutoff)
    and ``prob`` (share of sampled seasons cheaper than the reference's, ties not a saving)."""
    prices = {**data["prices"], **(typed or {})}
    for key, leader in data["follows"].items():
        prices[key] = prices[leader]
    terms = {key: [(count, factor) for count, factor in pairs] for key, pairs in data["terms"].items()}
    k, n = len(data["cutoffs"]), data["sample"]["n"]
    mean = priced_by_terms(terms, data["mean"], prices,
                           None if data["other_mean"] is None else np.asarray(data["other_mean"]))
    reference_mean = float(priced_by_terms(terms, data["reference_mean"], prices, data["reference_other_mean"]))
    sample = {name: decode_counts(packed).reshape(k + 1, n) for name, packed in data["sample"]["counts"].items()}
    other = data["sample"]["other"]
    seasons = priced_by_terms(terms, sample, prices, None if other is None else decode_float64(other).reshape(k + 1, n))
    objective = data["objective"]
    best = int(lowest(mean) if objective == "mean" else lowest(objective_cost(seasons[:k].T, objective)))
    at, reference = seasons[best], seasons[k]
    return {"best": best, "cutoff": data["cutoffs"][best], "mean": float(mean[best]),
            "reference_mean": reference_mean, "saving": reference_mean - float(mean[best]),
            "p05": float(np.quantile(at, 0.05)), "p95": float(np.quantile(at, 0.95)),
            "prob": float(cheaper(at, reference).mean())}
