"""The meeting what-if: what the report's page needs to reprice a run at costs a reader types.

A replicate season's classification counts (hits, false alarms, misses, correct negatives) at
every cutoff do not depend on the costs (``RunResult.replicate_counts``), so any other four costs
reprice them without a replay: season cost = hits * hit + false_alarms * false_alarm + misses *
miss + correct_negatives * correct_negative, as :func:`simulator.pricing.costs.price` does. The
page does that sum in plain JavaScript:

- **exactly** for expected (mean) season costs, from the mean counts over all replicates at each
  cutoff (the mean of a linear function is the function of the means: linearity of expectation),
  so the cutoff with the lowest expected cost and the expected saving are those a run with the
  typed costs gives, up to floating-point rounding;
- **approximately** for everything that needs the distribution over seasons (the 90% range, the
  95th percentile, the worst 10%, how often a cutoff saves against the reference): from the first
  :data:`SAMPLE` replicates (a random sample: replicates are independent draws), their counts
  written compactly as base64 of little-endian unsigned integers: one byte a count when a season
  has at most 255 occasions, else two (uint16).

The model's sample holds, per cutoff, the hits and false alarms of each sampled season, and per
season its events and occasions (misses = events - hits, correct negatives = occasions - events
- false alarms); the reference rule's sample holds its four counts per season.

Under ``[operations]`` the fields are the rules' prices instead, and
:mod:`~simulator.account.whatif_rules` makes the data (``kind = "rules"``; this module's is
``kind = "costs"``); the page's script holds one model of each kind behind the same figures.

Nothing here is text from the scenario: names reach the page escaped by the template, and this
data reaches it as JSON in a ``<script type="application/json">`` element (``report_page.script_json``).
"""

from __future__ import annotations

from functools import partial

import numpy as np

from ..inputs.scenario_types import BASELINES, MAX_MONEY
from ..pricing.decision import OBJECTIVE_NAMES, SAME_MONEY, SHORTFALL_SHARE
from .findings import strategy_label
from .page_codec import encode_uint, start_value, typed_number
from .report_page import script_json
from .whatif_rules import rules_fields, rules_whatif_data

__all__ = ["SAMPLE", "COST_KEYS", "whatif_data", "whatif_context", "unavailable"]

SAMPLE = 1000  # replicate seasons per cutoff embedded in the page for ranges and the share saving
COST_KEYS = ("hit", "false_alarm", "miss", "correct_negative")
_CELLS = ("hits", "false_alarms", "misses", "correct_negatives")  # the counts each cost prices
_UINT16_MAX = 65535


def unavailable(result) -> str | None:
    """Why the page cannot reprice this run at typed costs (one line for the reader), or None."""
    if result.portfolio is not None:
        return ("Each site has its own costs here: run one site's history alone to try other costs "
                "in its report.")
    if result.operations is not None:
        return None  # the rules' prices instead of the four costs (whatif_rules)
    if result.scenario.simulation.mode == "calibrated":
        return ("In the calibrated mode outcomes are drawn afresh for each season: change the costs in the "
                "scenario and run it again.")
    if result.replicate_counts is None:
        return "This run did not keep its seasons' counts: change the costs in the scenario and run it again."
    return None


def whatif_data(result) -> dict:
    """The what-if's data for the page's script: the scenario's costs, the schema's bounds, the
    exact mean counts per cutoff, and the sample of replicate counts; ``{"reason": ...}`` alone
    when :func:`unavailable` says why there is none.

    Keys: ``costs`` (the scenario's four, for the fields and their reset), ``max_money`` (the
    schema's bound on a cost's magnitude), ``objective``, ``shortfall_share``, ``same_money``
    (:data:`~simulator.pricing.decision.SAME_MONEY`, the tolerance of equal money), ``cutoffs``,
    ``replicates``; ``mean`` (mean hits, false alarms, misses, correct negatives at each cutoff over
    all replicates) and ``reference_mean`` (the reference rule's four means); ``sample``: ``n``,
    ``hits`` and ``false_alarms`` (n_cutoffs x n, cutoff-major), ``events``, ``occasions`` and the
    reference's ``ref_hits``, ``ref_false_alarms``, ``ref_misses``, ``ref_correct_negatives`` (n each).
    """
    reason = unavailable(result)
    if reason is not None:
        return {"reason": reason}
    if result.operations is not None:
        return rules_whatif_data(result)
    counts = result.replicate_counts
    model, baselines, ref_index = counts.model, counts.baselines, BASELINES.index(result.reference)
    n = min(SAMPLE, result.replicates)
    hits, false_alarms = np.asarray(model.hits)[:n].T, np.asarray(model.false_alarms)[:n].T
    events = np.asarray(counts.n_events)[:n]
    occasions = (np.asarray(model.hits)[:n, 0] + np.asarray(model.false_alarms)[:n, 0]
                 + np.asarray(model.misses)[:n, 0] + np.asarray(model.correct_negatives)[:n, 0])
    reference = [np.asarray(getattr(baselines, key))[:n, ref_index] for key in _CELLS]
    longest = int(occasions.max(initial=0))
    if longest > _UINT16_MAX:
        return {"reason": "The seasons are too long for the page's sample: change the costs in the scenario "
                          "and run it again."}
    width = 1 if longest <= 255 else 2  # a season of up to 255 occasions: one byte a count
    encode = partial(encode_uint, width=width)
    scenario_costs = result.scenario.costs
    return {
        "kind": "costs", "keys": list(COST_KEYS),
        "costs": {key: start_value(result.scenario, f"costs.{key}", getattr(scenario_costs, key)) for key in COST_KEYS},
        "min_money": -MAX_MONEY, "max_money": MAX_MONEY, "objective": result.decision.objective, "shortfall_share": SHORTFALL_SHARE,
        "same_money": SAME_MONEY, "cutoffs": [float(c) for c in result.cutoffs],
        "replicates": int(result.replicates),
        "mean": {key: [float(v) for v in np.asarray(getattr(model, key), dtype=np.float64).mean(axis=0)]
                 for key in _CELLS},
        "reference_mean": {key: float(np.asarray(getattr(baselines, key), dtype=np.float64)[:, ref_index].mean())
                           for key in _CELLS},
        "sample": {"n": int(n), "width": width, "hits": encode(hits), "false_alarms": encode(false_alarms),
                   "events": encode(events), "occasions": encode(occasions),
                   **{f"ref_{key}": encode(cell) for key, cell in zip(_CELLS, reference)}},
    }



def whatif_context(result, action: str, event: str, occasion: str, decimals: int) -> dict:
    """What the report's template (``whatif.html.j2``) shows of the what-if: the fields (the four
    costs, or under ``[operations]`` the rules' prices) with the scenario's values, the reason it is
    off (or None), its notes, and its data as script-safe JSON."""
    data = whatif_data(result)
    rules = result.operations is not None and "reason" not in data
    reference = result.reference
    if rules:
        fields = rules_fields(result)
        section = result.scenario.operations
        shown = {key for key, *_ in fields}
        ranged = [key for key in result.scenario.cost_ranges() if key.startswith("operations.")]
        # the months of the calendar-month rule come from [costs], which the rules' prices leave as they are
        reference_note = ("The calendar-month rule acts in the months the scenario's [costs] choose; the "
                          "prices typed do not move them." if reference == "seasonal_rate" else "")
        standby_note = ("The scenario gives no standby rate, so standby days are paid the day rate typed."
                        if section.standby_rate is None else "")
        left_out = [name for key, name in (("damages_per_day_late", "damages for days late (no deadline)"),
                                           ("unfinished_cost", "unfinished work (no amount of work)"))
                    if key not in shown]
        unused_note = ("Not priced in this scenario, so no field: " + " and ".join(left_out) + "."
                       if left_out else "")
        ranges_note = ("Prices given as ranges start here at their PERT mean (to the cent), fixed; the run above drew "
                       "them season by season, so its figures differ a little from these." if any(
                           result.scenario.cost_ranges()[key].high > result.scenario.cost_ranges()[key].low
                           for key in ranged) else "")
    else:
        costs = result.scenario.costs
        do = action[:1].upper() + action[1:]
        what = {"hit": f"{do}, and \u201c{event}\u201d happened", "false_alarm": f"{do}, and it did not happen",
                "miss": f"Did not {action}, and \u201c{event}\u201d happened",
                "correct_negative": f"Did not {action}, and it did not happen"}
        labels = {"hit": "Hit", "false_alarm": "False alarm", "miss": "Miss", "correct_negative": "Correct negative"}
        fields = [(key, labels[key], what[key], typed_number(start_value(result.scenario, f"costs.{key}",
                                                                         getattr(costs, key))))
                  for key in COST_KEYS]
        reference_note = ("The calendar-month rule keeps the months it acts in at the scenario's costs "
                          "(their break-even probability)." if reference == "seasonal_rate" else "")
        standby_note = unused_note = ""
        # costs given as ranges are typed in at their PERT mean; the run above drew them per season
        ranges_note = ("Costs given as ranges start here at their PERT mean (to the cent), fixed; the run above drew "
                       "them season by season, so its figures differ a little from these."
                       if any(r.high > r.low for r in result.scenario.cost_ranges().values()) else "")
    return {
        "reason": data.get("reason"), "rules": rules, "fields": fields,
        "objective": result.decision.objective, "objective_what": OBJECTIVE_NAMES[result.decision.objective],
        "reference_label": strategy_label(reference, action, event, occasion),
        "reference_note": reference_note, "ranges_note": ranges_note, "standby_note": standby_note,
        "unused_note": unused_note,
        "n_sample": (data.get("sample") or {}).get("n", 0),
        # the automatic run length is chosen on the [costs], so other rules' prices keep it
        "auto_block": result.scenario.simulation.block_days == "auto" and not rules,
        "json": script_json({**data, "currency": result.scenario.currency, "decimals": decimals}),
    }
