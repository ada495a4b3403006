"""Costs known only as a range: reading a range, and drawing it from its PERT distribution.

Sources:
- PERT mean (low + 4 likely + high) / 6: Malcolm, Roseboom, Clark and Fazar 1959, "Application of
  a technique for research and development program evaluation", Operations Research 7(5):646-669.
- PERT as a beta distribution with alpha = 1 + 4 (likely - low) / (high - low) and
  beta = 1 + 4 (high - likely) / (high - low) on [low, high], and its variance
  (mean - low)(high - mean) / 7 when likely is halfway: Vose 2008, "Risk Analysis", 3rd ed.
  (from memory; the variance is checked here against scipy's beta moments, which do not rely on
  it).
- The draws are checked against ``scipy.stats.beta`` (this scipy has no PERT distribution of its
  own): its mean and variance, and a Kolmogorov-Smirnov test against its distribution function
  (``scipy.stats.kstest``).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from simulator.inputs.errors import InputError
from simulator.inputs.ranges import CostRange, site_ranges, split_ranges
from simulator.inputs.scenario_costs import Costs
from simulator.pricing.draws import CostDrawer, pert
from simulator.replay.resample import BLOCK


def test_pert_mean_is_malcolms_weighted_average():
    # Malcolm et al. 1959: (a + 4m + b) / 6
    assert CostRange(low=2000, likely=2500, high=4000).mean == pytest.approx((2000 + 10000 + 4000) / 6)
    assert CostRange(low=0.1, likely=0.1, high=0.1).mean == 0.1  # exactly likely when low = high


def test_pert_shapes_give_the_pert_mean_as_the_beta_mean():
    r = CostRange(low=2000, likely=2500, high=4000)
    a, b = r.shapes
    assert (a, b) == pytest.approx((1 + 4 * 500 / 2000, 1 + 4 * 1500 / 2000))
    assert pert(r).mean() == pytest.approx(r.mean, rel=1e-12)
    # symmetric range: variance (mean - low)(high - mean) / 7 (Vose 2008, from memory)
    sym = CostRange(low=10, likely=20, high=30)
    assert pert(sym).var() == pytest.approx((20 - 10) * (30 - 20) / 7, rel=1e-12)


def test_drawn_costs_follow_scipys_beta_on_the_range():
    r = CostRange(low=2000, likely=2500, high=4000)
    costs = Costs(hit=300, false_alarm=1800, miss=r.mean, correct_negative=0)
    drawer = CostDrawer(costs, {"costs.miss": r}, seed=7)
    draws = np.concatenate([drawer(b, BLOCK).miss.ravel() for b in range(20)])
    a, b = r.shapes
    reference = stats.beta(a, b, loc=r.low, scale=r.high - r.low)
    assert stats.kstest(draws, reference.cdf).pvalue > 0.001
    se = reference.std() / np.sqrt(draws.size)
    assert abs(draws.mean() - reference.mean()) < 4 * se
    assert draws.var() == pytest.approx(reference.var(), rel=0.05)
    assert draws.min() >= r.low and draws.max() <= r.high


def test_a_replicates_draw_depends_on_its_number_only():
    r = CostRange(low=1, likely=2, high=5)
    drawer = CostDrawer(Costs(hit=0, false_alarm=1, miss=r.mean), {"costs.miss": r}, seed=3)
    whole, part = drawer(4, BLOCK).miss, drawer(4, 120).miss
    np.testing.assert_array_equal(whole[:120], part)
    assert not np.array_equal(drawer(5, BLOCK).miss, whole)
    # another cost's range does not move this one's draws (each cost has a stream of its own)
    other = CostDrawer(Costs(hit=0, false_alarm=1, miss=r.mean),
                       {"costs.miss": r, "costs.hit": CostRange(low=0, likely=1, high=2)}, seed=3)
    np.testing.assert_array_equal(other(4, BLOCK).miss, whole)


def test_a_range_of_zero_width_draws_nothing():
    costs = Costs(hit=300, false_alarm=1800, miss=2500)
    drawer = CostDrawer(costs, {"costs.miss": CostRange(low=2500, likely=2500, high=2500)}, seed=1)
    assert not drawer.draws and drawer(0, BLOCK) is costs


def test_split_ranges_puts_the_mean_in_place_and_keeps_the_range():
    data = {"name": "x", "costs": {"hit": 300, "false_alarm": 1800,
                                   "miss": {"low": 2000, "likely": 2500, "high": 4000}},
            "sites": {"North": {"costs": {"hit": {"low": 100, "likely": 200, "high": 300}}}}}
    out, ranges = split_ranges(data, "s.toml")
    assert out["costs"]["miss"] == pytest.approx(16000 / 6)
    assert out["sites"]["North"]["costs"]["hit"] == 200
    assert set(ranges) == {"costs.miss", "sites.North.costs.hit"}
    assert isinstance(data["costs"]["miss"], dict)  # the input is left as it was
    north = site_ranges(ranges, "North", {"costs.hit"})
    assert north == {"costs.miss": ranges["costs.miss"], "costs.hit": ranges["sites.North.costs.hit"]}
    assert site_ranges(ranges, "North", {"costs.miss"}) == {"costs.hit": ranges["sites.North.costs.hit"]}


@pytest.mark.parametrize("written, words", [
    ({"low": 3, "likely": 2, "high": 5}, "[costs] miss: a range needs low <= likely <= high"),
    ({"low": 1, "likely": 2}, "[costs] miss: the range has no high"),
    ({"low": 1, "likly": 2, "high": 3}, '[costs] miss: unknown key "likly" in the range; did you mean "likely"?'),
    ({"low": 1, "likely": "2", "high": 3}, "[costs] miss: likely must be a finite number"),
    ({"low": 1, "likely": float("inf"), "high": 3}, "[costs] miss: likely must be a finite number"),
    ({"low": 1, "likely": 2, "high": 3e13}, "[costs] miss: high must be a number from"),
])
def test_a_wrong_range_is_one_line_naming_its_key(written, words):
    data = {"costs": {"hit": 1, "false_alarm": 2, "miss": written}}
    with pytest.raises(InputError) as caught:
        split_ranges(data, "s.toml")
    message = str(caught.value)
    assert message.startswith("s.toml ") and words in message and "\n" not in message


def test_cost_ranges_beside_operating_rules_are_refused_in_one_line():
    data = {"costs": {"hit": 1, "false_alarm": 2, "miss": {"low": 1, "likely": 2, "high": 3}},
            "operations": {"day_rate": 5}}
    with pytest.raises(InputError, match=r"^s\.toml \[costs\] miss: with \[operations\] the rules price the seasons"):
        split_ranges(data, "s.toml")
    data = {"costs": {"hit": 1, "false_alarm": 2, "miss": 3}, "operations": {"day_rate": 5},
            "sites": {"North": {"costs": {"miss": {"low": 1, "likely": 2, "high": 3}}}}}
    with pytest.raises(InputError, match=r'^s\.toml \[sites\."North"\.costs\] miss: with \[operations\] the rules'):
        split_ranges(data, "s.toml")


def test_a_range_in_a_stress_case_is_refused_in_one_line():
    data = {"costs": {"hit": 1, "false_alarm": 2, "miss": 3},
            "stress": [{"name": "x", "costs": {"miss": {"low": 1, "likely": 2, "high": 3}}}]}
    with pytest.raises(InputError, match=r"^s\.toml \[\[stress\]\] table 1 costs\.miss: a stress case takes one number"):
        split_ranges(data, "s.toml")
