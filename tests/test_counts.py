"""Each replicate's classification counts at every cutoff, against scikit-learn.

Reference: scikit-learn's ``confusion_matrix`` (a general-purpose reference library, test
dependency only), built for each replicate and each cutoff on the replicate's own occasions. The
history is real: daily Seattle weather shipped by the vega-datasets package, with an honest
logistic forecast (``tests/realdata.py``). Season costs then come from ``costs.price`` of those
counts: the pricer's costs must equal the counts priced cell by cell (common practice, no source:
a matrix's cost is the sum over its four cells of count x cost).
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.metrics import confusion_matrix

from realdata import seattle_rain
from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario_types import BASELINES
from simulator.pricing.costs import SeasonPricer, baseline_actions
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
