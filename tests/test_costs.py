"""The pricing engine against a slow, obvious oracle.

The oracle is what a typical analyst writes (issue 2 section 6, way (a)): for each replicate and
each cutoff, build the classification matrix with scikit-learn's ``confusion_matrix`` (a reference
library, test dependency only) and price it cell by cell. Baselines are priced by hand from their
definitions in issue 2 section 3. Fast code checked against a slow twin, as scikit-learn's
``test_ranking.py::_auc`` does.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.metrics import confusion_matrix

from simulator.pricing.costs import SeasonPricer, price
from simulator.inputs.history import history_from_frame
from simulator.replay.resample import Resampler, season_calendar
from simulator.inputs.scenario_costs import break_even_probability
from simulator.inputs.scenario_types import BASELINES
from simulator.pricing.contingency import Contingency

N_PER_BLOCK = 8  # replicates taken from each seeded block: enough for the oracle, quick to loop
BLOCKS = (0, 1, 3)


def _oracle_cost(p, event, cutoff, costs):
    """Season cost of acting when p >= cutoff, from sklearn's confusion matrix, priced by hand."""
    act = p >= cutoff
    (cn, fa), (miss, hit) = confusion_matrix(event, act, labels=[False, True])
    return hit * costs.hit + fa * costs.false_alarm + miss * costs.miss + cn * costs.correct_negative


@pytest.fixture
def seasonal_frame(rng, synthetic):
    """Four years, daily; the event is likely from November to February (rate about 0.7) and
    unlikely otherwise (about 0.2), so the seasonal_rate baseline acts in some months only."""
    dates = pd.date_range("2019-01-01", "2022-12-31", freq="D")
    wet = np.isin(dates.month, [11, 12, 1, 2])
    p = np.clip(np.where(wet, 0.7, 0.2) + rng.normal(0, 0.15, dates.size), 0, 1)
    return synthetic.calibrated_frame(rng, "2019-01-01", "2022-12-31", p=p)


@pytest.fixture(params=[False, True], ids=["as_given", "flipped"])
def case(request, seasonal_frame, make_scenario):
    """A scenario and its history (the last year held back for validation), flipped or not."""
    scenario = make_scenario(history={"validation_from": "2022-01-01"},
                             event={"name": "event", "flip": request.param},
                             decision={"cutoffs": [0.0, 1.0, 0.05]},
                             costs={"hit": 300, "false_alarm": 1800, "miss": 2500,
                                    "correct_negative": 40})
    return scenario, history_from_frame(seasonal_frame, scenario, label="history.csv")


@pytest.fixture
def replicates(case, run_seed):
    """Row indices of a few replicates from each of a few seeded blocks, (n_rep, n_occasions)."""
    scenario, history = case
    resampler = Resampler(history, season_calendar(history, scenario.season), mean_block=6.0,
                          window_days=10)
    return np.concatenate([resampler.draw_block(run_seed, b)[:N_PER_BLOCK] for b in BLOCKS])


def test_price_weights_each_cell_by_its_cost(make_scenario):
    # common practice, no source: a matrix's cost is the sum over its four cells of count x cost
    costs = make_scenario().costs  # 300, 1800, 2500, 0
    counts = Contingency(hits=np.array([1, 0]), false_alarms=np.array([2, 0]),
                         misses=np.array([3, 1]), correct_negatives=np.array([4, 9]))
    np.testing.assert_array_equal(price(counts, costs), [300 + 3600 + 7500, 2500])


def test_model_costs_match_confusion_matrix_priced_by_hand(case, replicates):
    scenario, history = case
    cutoffs, costs = scenario.cutoffs, scenario.costs
    block = SeasonPricer(history, cutoffs, costs)(replicates)
    assert block.model.shape == (replicates.shape[0], cutoffs.size)
    expected = np.array([[_oracle_cost(history.p[rows], history.event[rows], c, costs) for c in cutoffs]
                         for rows in replicates])
    np.testing.assert_allclose(block.model, expected, rtol=1e-12)
    np.testing.assert_array_equal(block.n_events, history.event[replicates].sum(axis=1))


def test_baseline_costs_match_their_definitions_priced_by_hand(case, replicates, seasonal_frame):
    scenario, history = case
    costs = scenario.costs
    block = SeasonPricer(history, scenario.cutoffs, costs)(replicates)
    assert block.baselines.shape == (replicates.shape[0], len(BASELINES))

    # the outcome of the class of interest, straight from the file
    outcome = seasonal_frame["outcome"].to_numpy() == 1
    if scenario.event.flip:
        outcome = ~outcome
    previous = np.concatenate([[False], outcome[:-1]])  # the previous occasion's outcome
    # seasonal_rate: the calendar month's event rate over the training period (before 2022)
    month = pd.to_datetime(seasonal_frame["date"]).dt.month.to_numpy()
    training = seasonal_frame["date"].lt("2022-01-01").to_numpy()
    rate = pd.Series(outcome[training]).groupby(month[training]).mean()
    p_star = break_even_probability(costs)
    seasonal = rate.reindex(month).to_numpy() >= p_star
    assert 0 < seasonal.mean() < 1  # acts in some months only
    rules = {"never_act": np.zeros_like(outcome), "always_act": np.ones_like(outcome),
             "persistence": previous, "seasonal_rate": seasonal, "perfect": outcome}
    for i, name in enumerate(BASELINES):
        for r, rows in enumerate(replicates):
            act, event = rules[name][rows], outcome[rows]
            (cn, fa), (miss, hit) = confusion_matrix(event, act, labels=[False, True])
            by_hand = (hit * costs.hit + fa * costs.false_alarm + miss * costs.miss
                       + cn * costs.correct_negative)
            assert block.baselines[r, i] == pytest.approx(by_hand, rel=1e-12), (name, r)


def test_model_at_cutoff_zero_costs_the_same_as_always_acting(case, replicates):
    # act when p >= cutoff: at cutoff 0 every occasion is acted on (issue 2 section 3)
    scenario, history = case
    block = SeasonPricer(history, scenario.cutoffs, scenario.costs)(replicates)
    always = BASELINES.index("always_act")
    np.testing.assert_allclose(block.model[:, 0], block.baselines[:, always], rtol=1e-12)


def test_perfect_is_the_floor_of_every_strategy(case, replicates):
    # with c_h <= c_m and c_cn <= c_fa no rule beats acting exactly on the events (Richardson
    # 2000, QJRMS 126:649-667: E_perfect is the least expense)
    scenario, history = case
    block = SeasonPricer(history, scenario.cutoffs, scenario.costs)(replicates)
    perfect = block.baselines[:, BASELINES.index("perfect")]
    assert (block.model >= perfect[:, None] - 1e-9).all()
    assert (block.baselines >= perfect[:, None] - 1e-9).all()
