"""Which of the operating rules' prices matters: the sensitivity under ``[operations]``.

References, none of them a value of this project's own:

- How the crews work under the rules never depends on a price, and every season cost component is
  a day count times a price (common practice, no single source; the rules are stated in
  ``simulator/rules/operating_rules.py``). So the seasons a run played, priced again at one moved
  price, must give exactly what a full run with that price moved gives on the same seed: the same
  cutoff, the same mean saving and share of seasons saved (the same floats, as the same day counts
  are priced by the same function). The same holds for the verdict's held-out seasons.
- Switching values (the value of an input at which the preferred option changes) are common practice
  in decision analysis and health-economic evaluation (Briggs, Claxton and Sculpher 2006, Decision
  Modelling for Health Economic Evaluation, chapter 4; from memory, check). Their defining property
  is checked with full runs (``tests/switching.py``): a price just past its switching value changes
  the verdict or takes the cutoff out of today's near-optimal band, and just short of it does not.
- The PERT mean (low + 4 likely + high) / 6 of a range (Malcolm, Roseboom, Clark and Fazar 1959,
  "Application of a technique for research and development program evaluation", Operations
  Research 7, 646-669).

The histories are invented: the rules demo (Ferrowby Stripe Works at Gannetholm,
``scenarios/line_marking_rules.toml``) and the golden test history.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from simulator.analysis.rules_sensitivity import TIED, price_ends, rules_verdict_at
from simulator.analysis.sensitivity import REACH, VARY
from simulator.analysis.verdict import judge, played_season_pricer, season_costs
from simulator.inputs.history import read_history
from simulator.inputs.scenario import read_scenario
from simulator.rules.operating_rules import PRICE_KEYS, RulePrices
from simulator.run import run_history
from switching import check_band_switches, check_verdict_switches

REPLICATES = 300  # one seeded block: enough for the checks, fast


def _with_price(scenario, name: str, value: float):
    """The scenario with one of the rules' prices changed, as a user would write it."""
    return scenario.model_copy(update={"operations": scenario.operations.model_copy(update={name: value})})


def _case(path: str, objective: str = "mean", ranged: bool = False, **operations):
    """A scenario, its history and a run. The rules demo gives its day rate as a range; unless
    ``ranged``, every range is fixed at its PERT mean (the value the schema holds in its place), so
    a full run at a moved price is the exact reference for the sensitivity's ends."""
    scenario = read_scenario(path)
    if not ranged:
        scenario = scenario.model_copy(update={"ranges": {}})
    scenario = scenario.model_copy(update={"decision": scenario.decision.model_copy(update={"objective": objective})})
    if operations:
        scenario = scenario.model_copy(update={"operations": scenario.operations.model_copy(update=operations)})
    history = read_history(scenario)
    return scenario, history, run_history(scenario, history, replicates=REPLICATES)


@pytest.fixture(scope="module")
def rules_demo():
    return _case("scenarios/line_marking_rules.toml")


@pytest.fixture(scope="module")
def golden():
    return _case("tests/golden/single_site/rules.toml")


@pytest.fixture(scope="module")
def golden_p95():
    # chosen by the 95th percentile of the season cost (issue 14 item 1), not by the mean
    return _case("tests/golden/single_site/rules.toml", objective="p95")


@pytest.fixture(scope="module")
def plain_rules():
    # the rules demo without a standby rate, a deadline or a backlog of work: the day rate is paid
    # on standby days, and neither damages nor unfinished work can arise
    return _case("scenarios/line_marking_rules.toml", standby_rate=None, deadline=None, damages_per_day_late=0.0,
                 work=None, unfinished_cost=0.0, overtime_weekdays=())


# ---- which prices, and their ends -----------------------------------------------------------------

def test_every_price_that_plays_a_part_is_moved_by_a_quarter_and_searched_from_zero(rules_demo):
    scenario, _, result = rules_demo
    s = result.sensitivity
    assert s.moved == "operations" and s.note is None and s.remark is None
    assert sorted(c.key for c in s.costs) == sorted(f"operations.{key}" for key in PRICE_KEYS)
    for c in s.costs:
        base = getattr(scenario.operations, c.key.removeprefix("operations."))
        assert (c.base, c.varied, c.search) == (base, "25%", (0.0, REACH * base))
        assert (c.low.value, c.high.value) == pytest.approx((base * (1 - VARY), base * (1 + VARY)))
    widths = [c.width for c in s.costs]
    assert widths == sorted(widths, reverse=True)


def test_a_price_that_plays_no_part_is_left_out_and_the_day_rate_moves_the_standby_rate_paid(plain_rules):
    s = plain_rules[2].sensitivity
    assert sorted(c.key for c in s.costs) == ["operations.day_rate", "operations.spoilage_cost"]
    assert s.remark == (TIED + " Left out, as they play no part in this run: damages_per_day_late (no deadline); "
                        "unfinished_cost (no work to finish).")


def test_a_price_given_as_a_range_is_moved_to_its_ends_around_its_mean(rules_demo):
    # read by key, "operations.<price>" (Scenario.cost_ranges()); the PERT mean of Malcolm et al. (1959)
    class Range:
        low, likely, high = 600.0, 800.0, 1200.0
        mean = (low + 4 * likely + high) / 6

    moved, _ = price_ends(rules_demo[0].operations, rules_demo[2].operations.rules, {"operations.day_rate": Range()})
    day = next(m for m in moved if m.key == "operations.day_rate")
    assert (day.base, day.low, day.high, day.varied) == (Range.mean, 600.0, 1200.0, "range")
    assert day.search == (0.0, REACH * Range.mean)


def test_the_demos_day_rate_range_is_moved_to_its_ends_and_held_at_its_mean(tmp_path):
    """The rules demo as shipped: day_rate = {low = 720, likely = 790, high = 920}, PERT mean
    (720 + 4 x 790 + 920) / 6 = 800 (Malcolm et al. 1959); the other prices by a quarter."""
    scenario, _, result = _case("scenarios/line_marking_rules.toml", ranged=True)
    day = next(c for c in result.sensitivity.costs if c.key == "operations.day_rate")
    assert (day.base, day.low.value, day.high.value, day.varied) == (pytest.approx(800.0), 720.0, 920.0, "range")
    assert {c.varied for c in result.sensitivity.costs if c.key != "operations.day_rate"} == {"25%"}


# ---- the ends: repricing equals a full run ---------------------------------------------------------

@pytest.mark.parametrize("case", ["rules_demo", "plain_rules", "golden_p95"])
def test_each_end_priced_again_equals_a_full_run_with_that_price_moved(case, request):
    scenario, history, result = request.getfixturevalue(case)
    for entry in result.sensitivity.costs:
        name = entry.key.removeprefix("operations.")
        for end in (entry.low, entry.high):
            full = run_history(_with_price(scenario, name, end.value), history, replicates=REPLICATES)
            assert full.mean_block_days == result.mean_block_days  # the rules' prices leave the replay as drawn
            assert end.cutoff == full.decision.recommended_cutoff, (entry.key, end.value)
            assert end.mean_saving == full.decision.savings.mean  # exact: the same day counts, the same pricing
            assert end.prob_saving == full.decision.prob_saving


# ---- the verdict: played once, priced again ---------------------------------------------------------

@pytest.mark.parametrize("case", ["rules_demo", "golden"])
def test_the_verdict_at_todays_prices_is_the_runs_own(case, request):
    scenario, history, result = request.getfixturevalue(case)
    priced = played_season_pricer(history, result.calendar, scenario.cutoffs, scenario)
    own = season_costs(history, result.calendar, scenario.cutoffs, scenario)
    today = priced(RulePrices.of(scenario.operations))
    assert np.array_equal(today.model, own.model) and np.array_equal(today.rules, own.rules)
    assert judge(today, result.calendar.n_occasions, result.verdict.best_rule) == result.verdict
    verdict_at = rules_verdict_at(history, result.calendar, scenario.cutoffs, scenario, result.verdict.best_rule)
    assert verdict_at(RulePrices.of(scenario.operations)) == result.verdict.use_forecast


def test_past_seasons_priced_again_equal_past_seasons_played_at_those_prices(golden):
    scenario, history, result = golden
    priced = played_season_pricer(history, result.calendar, scenario.cutoffs, scenario)
    moved = _with_price(_with_price(scenario, "spoilage_cost", 1300.0), "damages_per_day_late", 150.0)
    played = season_costs(history, result.calendar, scenario.cutoffs, moved)
    again = priced(RulePrices.of(moved.operations))
    assert np.array_equal(again.model, played.model) and np.array_equal(again.rules, played.rules)


# ---- switching values (tests/switching.py: Briggs, Claxton and Sculpher 2006) ------------------------

@pytest.mark.parametrize("case", ["rules_demo", "golden"])
def test_a_price_just_past_its_switching_value_changes_the_verdict_and_just_short_does_not(case, request):
    scenario, history, result = request.getfixturevalue(case)
    check_verdict_switches(result, lambda key, v: run_history(
        _with_price(scenario, key.removeprefix("operations."), v), history, replicates=20).verdict)


@pytest.mark.parametrize("case", ["rules_demo", "golden", "golden_p95"])
def test_a_price_just_past_its_switching_value_leaves_the_near_optimal_band_and_just_short_does_not(case, request):
    scenario, history, result = request.getfixturevalue(case)
    check_band_switches(result, lambda key, v: run_history(
        _with_price(scenario, key.removeprefix("operations."), v), history,
        replicates=REPLICATES).decision.recommended_cutoff)


# ---- the files ----------------------------------------------------------------------------------

def test_summary_csv_report_and_account_name_the_prices_as_the_scenario_writes_them(plain_rules):
    from simulator.account.outputs import render_files

    result = plain_rules[2]
    files = render_files(result)
    block = json.loads(files["summary.json"])["sensitivity"]
    assert [c["key"] for c in block["costs"]] == [c.key for c in result.sensitivity.costs]
    assert block["remark"] == result.sensitivity.remark and "priced again" in block["basis"]
    csv = files["sensitivity.csv"].decode().splitlines()
    assert csv[0].startswith("cost_key,value_unit,")
    assert any(line.startswith("operations.day_rate,EUR per crew per working day,") for line in csv)
    finding = next(f for f in json.loads(files["summary.json"])["account"] if f["key"] == "sensitivity")
    assert finding["sentence"].startswith("Of the 2 prices of the operating rules, the ")
    report = files["report.html"].decode()
    assert "Which price of the rules matters" in report and "Day rate" in report and TIED in report
    assert "figures/tornado.png" in files
