"""Each replicate's classification counts at every cutoff, against scikit-learn.

Reference: scikit-learn's ``confusion_matrix`` (a general-purpose reference library, test
dependency only), built for each replicate and each cutoff on the replicate's own occasions. The
history is real: daily Seattle weather shipped by the vega-datasets package, with an honest
logistic forecast (``tests/realdata.py``). Season costs then come from ``costs.price`` of those
counts: the pricer's costs must equal the counts priced cell by cell (common practice, no source:
a matrix's cost is the sum over its four cells of count x cost).

Costs made straight from the slots (``pricing/slot_costs.py``, without counts) must be the same
bits as the counts priced wherever it is used: costs that are whole multiples of a power-of-two
fraction (whole numbers, quarters), whose sums binary64 holds exactly while below 2^53 such units
(IEEE 754-2008, clause 5.1: each operation rounded from its exact result; clause number from
memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.metrics import confusion_matrix

from realdata import seattle_rain
from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario_types import BASELINES
from simulator.inputs.scenario_costs import Costs
from simulator.pricing.contingency import counts_from_slots
from simulator.pricing.costs import SeasonPricer, baseline_actions, price
from simulator.pricing.slot_costs import SlotCosts, exact_for
from simulator.replay.resample import Resampler, season_calendar


@pytest.fixture(scope="module")
def rain(make_scenario):
    scenario = make_scenario(decision={"cutoffs": [0.0, 1.0, 0.05]},
                             costs={"hit": 120, "false_alarm": 95, "miss": 400, "correct_negative": 0})
    history = history_from_frame(seattle_rain(), scenario, label="seattle.csv")
    resampler = Resampler(history, season_calendar(history, scenario.season), mean_block=4.0, window_days=10)
    rows = np.concatenate([resampler.draw_block(11, b)[:6] for b in (0, 2)])
    return scenario, history, rows


def _cells(event, act):
    (cn, fa), (miss, hit) = confusion_matrix(event, act, labels=[False, True])
    return hit, fa, miss, cn


def test_model_counts_at_every_cutoff_match_confusion_matrix(rain):
    scenario, history, rows = rain
    counts = SeasonPricer(history, scenario.cutoffs, scenario.costs).counts(rows).model
    assert counts.hits.shape == (rows.shape[0], scenario.cutoffs.size)
    assert counts.hits.dtype == np.int64
    for r, own in enumerate(rows):
        p, event = history.p[own], history.event[own]
        for k, cutoff in enumerate(scenario.cutoffs):
            expected = _cells(event, p >= cutoff - 1e-12)  # two-decimal probabilities, exact cutoffs
            got = (counts.hits[r, k], counts.false_alarms[r, k], counts.misses[r, k],
                   counts.correct_negatives[r, k])
            assert got == expected, (r, cutoff)


def test_baseline_counts_match_confusion_matrix(rain):
    scenario, history, rows = rain
    counts = SeasonPricer(history, scenario.cutoffs, scenario.costs).counts(rows)
    actions = baseline_actions(history, scenario.costs)
    for i, name in enumerate(BASELINES):
        for r, own in enumerate(rows):
            got = (counts.baselines.hits[r, i], counts.baselines.false_alarms[r, i],
                   counts.baselines.misses[r, i], counts.baselines.correct_negatives[r, i])
            assert got == _cells(history.event[own], actions[name][own]), (name, r)
    np.testing.assert_array_equal(counts.n_events, history.event[rows].sum(axis=1))


def test_season_costs_are_the_counts_priced_cell_by_cell(rain):
    scenario, history, rows = rain
    pricer = SeasonPricer(history, scenario.cutoffs, scenario.costs)
    counts, block, c = pricer.counts(rows), pricer(rows), scenario.costs
    for got, n in ((block.model, counts.model), (block.baselines, counts.baselines)):
        by_hand = (n.hits * c.hit + n.false_alarms * c.false_alarm + n.misses * c.miss
                   + n.correct_negatives * c.correct_negative)
        np.testing.assert_array_equal(got, by_hand)
    np.testing.assert_array_equal(pricer.model_cost(rows), block.model)


def _bits(values: np.ndarray) -> bytes:
    """The float64 bytes (so -0.0 and 0.0 differ, as they would in a written file)."""
    return np.ascontiguousarray(values, dtype=np.float64).tobytes()


@settings(max_examples=60, deadline=None)
@given(costs=st.lists(st.integers(-20000, 20000), min_size=4, max_size=4), fraction=st.sampled_from([1, 2, 4, 8]),
       n_cutoffs=st.integers(1, 12), n_rows=st.integers(1, 40), n_rep=st.integers(1, 6),
       n_occasions=st.integers(1, 30), seed=st.integers(0, 2**32 - 1))
def test_costs_from_slots_are_the_counts_priced_bit_for_bit(costs, fraction, n_cutoffs, n_rows, n_rep, n_occasions,
                                                             seed):
    costs = [c / fraction for c in costs]  # whole numbers, halves, quarters, eighths of money
    rng = np.random.default_rng(seed)
    slots = rng.integers(0, n_cutoffs + 1, n_rows)
    event = rng.random(n_rows) < rng.random()
    rows = rng.integers(0, n_rows, (n_rep, n_occasions))
    matrix = Costs(**dict(zip(("hit", "false_alarm", "miss", "correct_negative"), costs)))
    assert exact_for(matrix, n_occasions)
    expected = price(counts_from_slots(slots[rows], event[rows], n_cutoffs), matrix)
    got = SlotCosts(slots, event, n_cutoffs, matrix)(rows)
    assert got.shape == expected.shape == (n_rep, n_cutoffs)
    assert _bits(got) == _bits(expected)
    # another forecast of the same outcomes priced with what the first one shares on these rows
    other = rng.integers(0, n_cutoffs + 1, n_rows)
    shared = SlotCosts(slots, event, n_cutoffs, matrix).share(rows)
    expected = price(counts_from_slots(other[rows], event[rows], n_cutoffs), matrix)
    assert _bits(SlotCosts(other, event, n_cutoffs, matrix)(rows, shared)) == _bits(expected)


def test_costs_without_exact_sums_are_left_to_the_counts(rain):
    scenario, history, rows = rain
    whole = {"hit": 120, "false_alarm": 95, "miss": 400, "correct_negative": 0}
    n = rows.shape[1]
    assert exact_for(Costs(**whole), n) and exact_for(Costs(**{**whole, "hit": 120.25}), n)
    for changed in ({"hit": 120.1}, {"correct_negative": -0.0}):  # 0.1 is no short binary fraction
        assert not exact_for(Costs(**{**whole, **changed}), n), changed
    largest = Costs(**{**whole, "miss": 1e12})  # the largest money a scenario takes
    assert exact_for(largest, 2000) and not exact_for(largest, 2300)  # 4 x 2300 x 1e12 > 2^53
    quarters = Costs(**{**whole, "miss": 1e12, "hit": 0.25})  # in quarters: 4 x 560 x 4e12 < 2^53
    assert exact_for(quarters, 560) and not exact_for(quarters, 570)
    assert not exact_for(Costs(**whole), 0)  # no occasions: price may give -0.0
    for matrix in (Costs(hit=120.25, false_alarm=95.1, miss=400.3, correct_negative=0.7),  # the counts
                   Costs(hit=120.25, false_alarm=95.5, miss=400.75, correct_negative=-3)):  # the slots
        pricer = SeasonPricer(history, scenario.cutoffs, matrix)
        expected = price(pricer.counts(rows).model, matrix)
        assert _bits(pricer.model_cost(rows)) == _bits(expected)
        assert _bits(pricer(rows).model) == _bits(expected)


def test_a_pricer_keeping_counts_prices_the_same_bits_as_one_that_does_not(rain):
    scenario, history, rows = rain
    kept = SeasonPricer(history, scenario.cutoffs, scenario.costs, keep_counts=True)(rows)
    plain = SeasonPricer(history, scenario.cutoffs, scenario.costs)(rows)
    assert _bits(kept.model) == _bits(plain.model)
    assert _bits(kept.baselines) == _bits(plain.baselines)
    np.testing.assert_array_equal(kept.n_events, plain.n_events)
