"""Which cost estimate matters: repricing from the run's counts, ends and switching values.

References, none of them a value of this project's own:

- A replicate's classification counts do not depend on the costs, and its cost is the sum over the
  four cells of count x cost (linearity; common practice, no single source). So repricing the
  run's own counts with one cost changed must give exactly what a full run with that cost gives on
  the same seed and the same replay: the same cutoff, the same mean saving and share of seasons
  saved (the same floats, as the same counts are priced by the same function). The replay's run
  length is held at the run's own (``block_days = "auto"`` chooses it on the series of costs, so a
  full run at other costs would draw other replicates).
- Switching values (the value of an input at which the preferred option changes) are common practice
  in decision analysis and health-economic evaluation (Briggs, Claxton and Sculpher 2006, Decision
  Modelling for Health Economic Evaluation, chapter 4; from memory, check). Their defining property
  is checked here with full runs: a cost just past its switching value changes the verdict or takes
  the cutoff out of today's near-optimal band, and just short of it does not (``tests/switching.py``).

The demo history is invented (Ferrowby Stripe Works); the real one is the daily Seattle weather
shipped by the vega-datasets package with an honest logistic forecast (``tests/realdata.py``).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from realdata import seattle_rain
from simulator.analysis.sensitivity import REACH, VARY, cost_ends, search_span, switching_value
from simulator.demo.generator import write_demo_files
from simulator.inputs.history import history_from_frame, read_history
from simulator.inputs.scenario import read_scenario, scenario_from_text
from simulator.inputs.scenario_types import BASELINES
from simulator.pricing.costs import price
from simulator.run import run_history
from switching import check_band_switches, check_verdict_switches

REPLICATES = 600  # two seeded blocks, the second partial: enough for the checks, fast


def _with_cost(scenario, key: str, value: float, block_days: float | None = None):
    """The scenario with one cost changed (and the replay's run length fixed, when given)."""
    update = {"costs": scenario.costs.model_copy(update={key: value})}
    if block_days is not None:
        update["simulation"] = scenario.simulation.model_copy(update={"block_days": block_days})
    return scenario.model_copy(update=update)


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    scenario = read_scenario(write_demo_files(tmp_path_factory.mktemp("demo")))
    history = read_history(scenario)
    return scenario, history, run_history(scenario, history, replicates=REPLICATES)


@pytest.fixture(scope="module")
def rain():
    # invented costs on the real Seattle series: C/L = 0.3 (Thompson 1952; Murphy 1977)
    scenario = scenario_from_text('name = "rain"\n[costs]\nhit = 300\nfalse_alarm = 300\nmiss = 1000\n'
                                  '[simulation]\nreference = "never_act"\n')
    history = history_from_frame(seattle_rain(), scenario)
    return scenario, history, run_history(scenario, history, replicates=REPLICATES)


# ---- the counts the run keeps -------------------------------------------------------------------

@pytest.mark.parametrize("case", ["demo", "rain"])
def test_run_keeps_every_replicates_counts_which_price_to_its_season_costs(case, request):
    scenario, _, result = request.getfixturevalue(case)
    counts = result.replicate_counts
    assert counts.model.hits.dtype == np.int32 and counts.baselines.misses.dtype == np.int32
    assert counts.model.hits.shape == (REPLICATES, scenario.cutoffs.size)
    assert np.array_equal(price(counts.model, scenario.costs), result.model_cost)
    baselines = price(counts.baselines, scenario.costs)
    for i, name in enumerate(BASELINES):
        assert np.array_equal(baselines[:, i], result.baseline_cost[name])


def test_operating_rules_keep_no_counts_and_move_the_rules_prices_instead():
    # under [operations] the [costs] matrix prices no season: tests/test_rules_sensitivity.py
    result = run_history(*_rules(), replicates=40)
    assert result.replicate_counts is None
    assert result.sensitivity.moved == "operations" and result.sensitivity.note is None
    assert all(c.key.startswith("operations.") for c in result.sensitivity.costs)


def _rules():
    scenario = read_scenario("tests/golden/single_site/rules.toml")
    return scenario, read_history(scenario)


# ---- the ends: repricing equals a full run -----------------------------------------------------

@pytest.mark.parametrize("case", ["demo", "rain"])
def test_each_end_repriced_from_counts_equals_a_full_run_with_that_cost(case, request):
    scenario, history, result = request.getfixturevalue(case)
    for entry in result.sensitivity.costs:
        key = entry.key.removeprefix("costs.")
        assert entry.varied == "25%"
        assert (entry.low.value, entry.high.value) == pytest.approx(
            sorted([entry.base * (1 - VARY), entry.base * (1 + VARY)]))
        for end in (entry.low, entry.high):
            full = run_history(_with_cost(scenario, key, end.value, result.mean_block_days), history,
                               replicates=REPLICATES)
            assert end.cutoff == full.decision.recommended_cutoff
            assert end.mean_saving == full.decision.savings.mean  # exact: the same counts, the same pricing
            assert end.prob_saving == full.decision.prob_saving


def test_bars_are_sorted_widest_first(demo):
    widths = [entry.width for entry in demo[2].sensitivity.costs]
    assert widths == sorted(widths, reverse=True) and len(widths) == 4


# ---- switching values ---------------------------------------------------------------------------

@pytest.mark.parametrize("case", ["demo", "rain"])
def test_a_cost_just_past_its_switching_value_changes_the_verdict_and_just_short_does_not(case, request):
    scenario, history, result = request.getfixturevalue(case)
    check_verdict_switches(result, lambda key, v: run_history(
        _with_cost(scenario, key.removeprefix("costs."), v), history, replicates=20).verdict)


@pytest.mark.parametrize("case", ["demo", "rain"])
def test_a_cost_just_past_its_switching_value_leaves_the_near_optimal_band_and_just_short_does_not(case, request):
    scenario, history, result = request.getfixturevalue(case)
    check_band_switches(result, lambda key, v: run_history(
        _with_cost(scenario, key.removeprefix("costs."), v, result.mean_block_days), history,
        replicates=REPLICATES).decision.recommended_cutoff)


def test_switching_value_is_none_when_nothing_changes_within_the_span():
    assert switching_value(lambda v: False, 10.0, 100.0) is None
    # a step at 37.5: found to within the grid step / 2^18 (the bisection's width)
    found = switching_value(lambda v: v >= 37.5, 10.0, 100.0)
    assert 37.5 <= found <= 37.5 + 90 / 8 / 2**18


def test_search_runs_from_zero_to_ten_times_the_cost():
    assert search_span(3800.0, 7400.0) == (0.0, REACH * 3800.0)
    assert search_span(-50.0, 7400.0) == (REACH * -50.0, 0.0)  # income: 0 down to ten times it
    assert search_span(0.0, 7400.0) == (-REACH * 7400.0, REACH * 7400.0)


def test_a_cost_given_as_a_range_is_moved_to_its_ends_around_its_mean():
    # the interface of issue 14 item 2 (Scenario.cost_ranges(): low, likely, high, mean); the PERT
    # mean (low + 4 likely + high) / 6 of Malcolm et al. (1959)
    class Range:
        low, likely, high = 3000.0, 3800.0, 5200.0
        mean = (low + 4 * likely + high) / 6

    costs = scenario_from_text('name = "x"\n[costs]\nhit = 1\nfalse_alarm = 2\nmiss = 3800\n').costs
    ends = cost_ends(costs, {"costs.miss": Range()})
    assert ends["miss"] == (Range.mean, 3000.0, 5200.0, "range")
    assert ends["hit"] == (1.0, 0.75, 1.25, "25%")


# ---- the files ----------------------------------------------------------------------------------

def test_summary_csv_and_account_say_which_cost_matters(demo, tmp_path):
    from simulator.account.outputs import render_files

    files = render_files(demo[2])
    s = json.loads(files["summary.json"])
    block = s["sensitivity"]
    assert [c["key"] for c in block["costs"]] == [c.key for c in demo[2].sensitivity.costs]
    first = block["costs"][0]
    assert set(first) == {"key", "base", "varied", "low", "high", "saving_change", "switching", "search"}
    assert set(first["switching"]) == {"verdict", "band"}
    csv = files["sensitivity.csv"].decode().splitlines()
    assert len(csv) == 5 and csv[1].startswith(first["key"] + ",")
    finding = next(f for f in s["account"] if f["key"] == "sensitivity")
    assert "matters most" in finding["sentence"]
    assert "figures/tornado.png" in files
    described = json.loads(files["datapackage.json"])
    table = next(r for r in described["resources"] if r["path"] == "sensitivity.csv")
    assert all(f["description"] != f["name"].replace("_", " ") for f in table["schema"]["fields"])
