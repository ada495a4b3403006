"""The operating rules' prices known only as a range (issue 14 item 2 under [operations]).

Sources:
- PERT mean (low + 4 likely + high) / 6: Malcolm, Roseboom, Clark and Fazar 1959, "Application of
  a technique for research and development program evaluation", Operations Research 7(5):646-669.
- PERT as a beta distribution on [low, high] with alpha = 1 + 4 (likely - low) / (high - low) and
  beta = 1 + 4 (high - likely) / (high - low) (Vose 2008, "Risk Analysis", 3rd ed., from memory);
  the drawn day rates are checked against ``scipy.stats.beta`` with these shapes by a
  Kolmogorov-Smirnov test (``scipy.stats.kstest``), as tests/test_cost_draws.py does for the costs.
- Linearity of expectation: a played season's day counts do not depend on the prices, and every
  season cost component is a day count times a price, so the mean season cost with prices drawn
  independently of the weather equals the season cost at the mean prices, within the Monte Carlo
  error of the draws (common practice, no single source).
- Law of total variance, Var(C) = Var(E[C | W]) + E[Var(C | W)] (e.g. Ross 2010, "A First Course
  in Probability", 8th ed., the conditional variance formula, from memory).
- A zero-width range reproduces the fixed run byte for byte: the golden files of
  tests/golden/single_site/ (invented test data).
The run-level history is real: Seattle's daily weather 2013-2015 shipped by ``vega_datasets`` with
an honest logistic forecast (tests/realdata.py); the scenario, its rules and prices are invented.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from typer.testing import CliRunner

from realdata import seattle_rain
from simulator import read_scenario, run
from simulator.account.findings import account
from simulator.account.outputs import summary
from simulator.cli import app
from simulator.inputs.errors import InputError
from simulator.inputs.history import history_from_frame
from simulator.inputs.ranges import CostRange, split_ranges
from simulator.inputs.scenario import scenario_from_text
from simulator.inputs.scenario_costs import Costs
from simulator.pricing.draws import CostDrawer
from simulator.replay.resample import BLOCK
from simulator.rules.operating_rules import RulePrices
from simulator.rules.price_draws import PriceDraws
from simulator.run import run_history

GOLDEN = Path(__file__).resolve().parent / "golden" / "single_site"
DAY = CostRange(low=700, likely=800, high=1100)


# ------------------------------------------------------------------------------------------------
# reading

def test_a_price_range_puts_its_pert_mean_in_place_and_is_kept_by_key():
    data = {"costs": {"hit": 1, "false_alarm": 2, "miss": 3},
            "operations": {"day_rate": {"low": 700, "likely": 800, "high": 1100}, "standby_rate": 400},
            "sites": {"North": {"operations": {"unfinished_cost": {"low": 1000, "likely": 1500, "high": 3000}}}}}
    out, ranges = split_ranges(data, "s.toml")
    assert out["operations"]["day_rate"] == pytest.approx((700 + 3200 + 1100) / 6)  # Malcolm et al. 1959
    assert out["operations"]["standby_rate"] == 400
    assert out["sites"]["North"]["operations"]["unfinished_cost"] == pytest.approx((1000 + 6000 + 3000) / 6)
    assert set(ranges) == {"operations.day_rate", "sites.North.operations.unfinished_cost"}
    assert isinstance(data["operations"]["day_rate"], dict)  # the input is left as it was


def test_a_site_sees_the_scenarios_price_ranges_its_own_overriding():
    text = RULES_TOML.format(day_rate="{low = 700, likely = 800, high = 1100}", extra="") + (
        '[sites."North".operations]\nday_rate = {low = 900, likely = 1000, high = 1200}\n'
        '[sites."South".operations]\nspoilage_cost = 500\n'
        '[sites."East".operations]\nday_rate = 850\n')
    text = text.replace("[history]\n", '[history]\nsite_column = "site"\n')
    scenario = scenario_from_text(text)
    assert set(scenario.cost_ranges()) == {"operations.day_rate", "sites.North.operations.day_rate"}
    assert scenario.for_site("North").cost_ranges() == {"operations.day_rate": CostRange(low=900, likely=1000, high=1200)}
    assert scenario.for_site("South").cost_ranges() == {"operations.day_rate": DAY}
    assert scenario.for_site("East").cost_ranges() == {}  # its own fixed day rate: nothing drawn
    assert scenario.for_site("North").operations.day_rate == pytest.approx((900 + 4000 + 1200) / 6)


@pytest.mark.parametrize("written, words", [
    ({"low": -5, "likely": 800, "high": 1100}, "[operations] day_rate: low must be a number from 0 to"),
    ({"low": 900, "likely": 800, "high": 1100}, "[operations] day_rate: a range needs low <= likely <= high"),
    ({"low": 700, "likely": 800}, "[operations] day_rate: the range has no high"),
])
def test_a_wrong_price_range_is_one_line_naming_its_key(written, words):
    data = {"costs": {"hit": 1, "false_alarm": 2, "miss": 3}, "operations": {"day_rate": written}}
    with pytest.raises(InputError) as caught:
        split_ranges(data, "s.toml")
    message = str(caught.value)
    assert message.startswith("s.toml ") and words in message and "\n" not in message


def test_a_price_range_in_a_stress_case_is_refused_in_one_line():
    data = {"costs": {"hit": 1, "false_alarm": 2, "miss": 3}, "operations": {"day_rate": 800},
            "stress": [{"name": "x", "operations": {"day_rate": {"low": 1, "likely": 2, "high": 3}}}]}
    with pytest.raises(InputError, match=r"^s\.toml \[\[stress\]\] table 1 operations\.day_rate: a stress case "
                                         "takes one number"):
        split_ranges(data, "s.toml")


# ------------------------------------------------------------------------------------------------
# drawing

COSTS = Costs(hit=1, false_alarm=2, miss=3)


def test_drawn_day_rates_follow_scipys_beta_on_the_range():
    drawer = CostDrawer(COSTS, {"operations.day_rate": DAY}, seed=7)
    assert drawer.draws_prices and not drawer.draws  # no cost is drawn, a price is
    draws = np.concatenate([drawer.prices(b, BLOCK)["day_rate"].ravel() for b in range(20)])
    a, b = DAY.shapes
    assert (a, b) == pytest.approx((1 + 4 * 100 / 400, 1 + 4 * 300 / 400))  # Vose 2008 (from memory)
    reference = stats.beta(a, b, loc=DAY.low, scale=DAY.high - DAY.low)
    assert stats.kstest(draws, reference.cdf).pvalue > 0.001
    assert reference.mean() == pytest.approx(DAY.mean, rel=1e-12)  # the PERT mean, Malcolm et al. 1959
    assert abs(draws.mean() - DAY.mean) < 4 * reference.std() / np.sqrt(draws.size)
    assert draws.min() >= DAY.low and draws.max() <= DAY.high


def test_each_price_has_a_stream_apart_from_the_costs_and_the_other_prices():
    alone = CostDrawer(COSTS, {"operations.day_rate": DAY}, seed=3).prices(4, BLOCK)["day_rate"]
    crowded = CostDrawer(COSTS, {"operations.day_rate": DAY, "operations.spoilage_cost": DAY, "costs.hit": DAY,
                                 "costs.miss": DAY}, seed=3)
    np.testing.assert_array_equal(crowded.prices(4, BLOCK)["day_rate"], alone)
    drawn = [crowded(4, BLOCK).hit, crowded(4, BLOCK).miss, crowded.prices(4, BLOCK)["spoilage_cost"]]
    assert all(not np.array_equal(other, alone) for other in drawn)  # same range, other streams
    np.testing.assert_array_equal(crowded.prices(4, 100)["day_rate"], alone[:100])  # by the replicate's number


def _section(standby: str = ""):
    text = RULES_TOML.format(day_rate="{low = 700, likely = 800, high = 1100}", extra="").replace(
        "standby_rate = 400\n", standby)
    return scenario_from_text(text)


def test_without_a_standby_rate_standby_is_paid_the_drawn_day_rate():
    scenario = _section()
    assert scenario.operations.standby_rate is None
    drawer = CostDrawer(scenario.costs, scenario.cost_ranges(), seed=1)
    prices = PriceDraws(scenario.operations, drawer)(2, 50)
    np.testing.assert_array_equal(prices.standby_rate, prices.day_rate)
    assert prices.day_rate.shape == (50, 1) and np.unique(prices.day_rate).size == 50
    given = _section("standby_rate = 400\n")
    prices = PriceDraws(given.operations, CostDrawer(given.costs, given.cost_ranges(), seed=1))(2, 50)
    assert prices.standby_rate == 400
    ranged = _section("standby_rate = {low = 300, likely = 400, high = 600}\n")
    prices = PriceDraws(ranged.operations, CostDrawer(ranged.costs, ranged.cost_ranges(), seed=1))(2, 50)
    assert prices.standby_rate.shape == (50, 1) and (prices.standby_rate <= 600).all()
    assert not np.array_equal(prices.standby_rate, prices.day_rate)


def test_a_site_with_the_scenarios_range_draws_what_every_such_site_draws():
    text = RULES_TOML.format(day_rate="{low = 700, likely = 800, high = 1100}", extra="").replace(
        "[history]\n", '[history]\nsite_column = "site"\n') + (
        '[sites."North".operations]\nspoilage_cost = 500\n'
        '[sites."South".operations]\ncrews = 4\n'
        '[sites."West".operations]\nday_rate = {low = 900, likely = 1000, high = 1200}\n')
    scenario = scenario_from_text(text)

    def day_rates(site: str) -> np.ndarray:
        own = scenario.for_site(site)
        return PriceDraws(own.operations, CostDrawer(own.costs, own.cost_ranges(), seed=9))(0, BLOCK).day_rate

    np.testing.assert_array_equal(day_rates("North"), day_rates("South"))
    west = day_rates("West")
    assert west.min() >= 900 and not np.array_equal(west, day_rates("North"))


# ------------------------------------------------------------------------------------------------
# runs

def test_price_ranges_of_zero_width_give_the_fixed_run_byte_for_byte(tmp_path):
    text = (GOLDEN / "rules.toml").read_text()
    text, n = re.subn(r"^(day_rate|standby_rate|spoilage_cost|damages_per_day_late|unfinished_cost) = (\S+)$",
                      r"\1 = {low = \2, likely = \2, high = \2}", text, flags=re.M)
    assert n == 5
    (tmp_path / "rules.toml").write_text(text)
    (tmp_path / "history.csv").write_bytes((GOLDEN / "history.csv").read_bytes())
    result = run(read_scenario(tmp_path / "rules.toml"))
    assert result.table.to_csv(index=False, lineterminator="\n").encode() == (GOLDEN / "rules.cutoffs.csv").read_bytes()
    written = summary(result)
    golden = json.loads((GOLDEN / "rules.summary.json").read_text())
    assert len(written.pop("cost_ranges")) == n and "cost_spread" not in written
    for contents in (written, golden):
        contents["scenario"].pop("sha256")
    written["account"] = [f for f in written["account"] if f["key"] != "cost_doubt"]
    assert written == golden


RULES_TOML = """name = "Harbourside resurfacing"
currency = "EUR"
[history]
[event]
name = "wet day"
[decision]
action = "stand the crews down"
cutoffs = [0.0, 1.0, 0.05]
[costs]
hit = 1600
false_alarm = 1600
miss = 2800
correct_negative = 2400
[season]
year = 2015
months = [4, 5, 6, 7, 8, 9]
weekdays = ["mon", "tue", "wed", "thu", "fri", "sat"]
[simulation]
replicates = 600
seed = 31
block_days = 4
reference = "never_act"
{extra}
[operations]
crews = 2
crews_out_on = "not_acting"
spoiled_on = "event"
day_rate = {day_rate}
standby_rate = 400
spoilage_cost = 600
work = 180
deadline = 2015-09-18
damages_per_day_late = 1500
unfinished_cost = 2000
overtime_weekdays = ["sat"]
max_standby_days = 3
"""

PRICES = {"day_rate": "{low = 700, likely = 800, high = 1100}"}


@pytest.fixture(scope="module")
def seattle_runs():
    frame = seattle_rain()

    def one(day_rate: str, extra: str = ""):
        scenario = scenario_from_text(RULES_TOML.format(day_rate=day_rate, extra=extra)
                                      .replace("spoilage_cost = 600", "spoilage_cost = {low = 300, likely = 600, high = 1500}"
                                               if "low" in day_rate else "spoilage_cost = 600"))
        return scenario, run_history(scenario, history_from_frame(frame, scenario, label="seattle.csv"))

    scenario, drawn = one(PRICES["day_rate"])
    means = scenario.operations
    fixed_text = RULES_TOML.format(day_rate=repr(means.day_rate), extra="").replace(
        "spoilage_cost = 600", f"spoilage_cost = {means.spoilage_cost!r}")
    fixed_scenario = scenario_from_text(fixed_text)
    fixed = run_history(fixed_scenario, history_from_frame(frame, fixed_scenario, label="seattle.csv"))
    return scenario, drawn, fixed


def test_every_strategys_mean_cost_matches_the_run_at_the_pert_means(seattle_runs):
    scenario, drawn, fixed = seattle_runs
    assert scenario.operations.day_rate == pytest.approx((700 + 3200 + 1100) / 6)  # Malcolm et al. 1959
    assert scenario.operations.spoilage_cost == pytest.approx((300 + 2400 + 1500) / 6)
    pairs = [(drawn.model_cost, fixed.model_cost)] + [
        (drawn.baseline_cost[name][:, None], fixed.baseline_cost[name][:, None]) for name in drawn.baseline_cost]
    for a, b in pairs:
        difference = a - b  # the same seasons played alike: only the drawn prices differ
        se = difference.std(axis=0, ddof=1) / np.sqrt(difference.shape[0])
        assert (np.abs(difference.mean(axis=0)) <= 4.5 * se + 1e-9).all()
        assert not np.array_equal(a, b)
    # the played seasons priced again at the mean prices are the fixed run, bit for bit
    again = drawn.operations.season_cost_at()
    np.testing.assert_array_equal(again[:, : drawn.cutoffs.size], fixed.model_cost)
    np.testing.assert_array_equal(again[:, drawn.cutoffs.size:], np.stack(list(fixed.baseline_cost.values()), axis=1))


def test_the_spread_is_split_between_weather_and_prices(seattle_runs):
    _, drawn, fixed = seattle_runs
    spread, k = drawn.cost_spread, drawn.decision.recommended_index
    assert spread.total_variance == pytest.approx(np.var(drawn.model_cost[:, k], ddof=1))
    assert spread.weather_variance == pytest.approx(np.var(fixed.model_cost[:, k], ddof=1))
    assert 0 < spread.share_costs < 1 and spread.share_weather + spread.share_costs == pytest.approx(1)
    written = summary(drawn)
    assert written["cost_spread"]["cutoff"] == drawn.decision.recommended_cutoff
    assert written["cost_ranges"]["operations.day_rate"] == {"low": 700.0, "likely": 800.0, "high": 1100.0,
                                                             "mean": pytest.approx(5000 / 6)}
    said = account(written).get("cost_doubt")
    assert "from the weather" in said.sentence and "price ranges" in said.text
    assert "day rate: 700 to 1,100 EUR per crew per working day, most likely 800 EUR" in said.sentence


def test_a_stress_case_prices_the_same_drawn_prices_times_its_multipliers():
    """Every price doubled: every component of every season doubles exactly (a product with 2 is
    exact in binary floating point), so the case's costs are twice the base's only if the case
    priced the base's drawn prices (common random numbers), not draws of its own."""
    frame = seattle_rain()
    doubled = ("[[stress]]\nname = \"all prices doubled\"\noperations_multipliers = {day_rate = 2, standby_rate = 2, "
               "spoilage_cost = 2, damages_per_day_late = 2, unfinished_cost = 2}\n"
               "[[stress]]\nname = \"day rate fixed\"\noperations = {day_rate = 833.25}\n")
    text = RULES_TOML.format(day_rate=PRICES["day_rate"], extra=doubled).replace("replicates = 600", "replicates = 200")
    text = text.replace("standby_rate = 400\n", "")  # standby paid the drawn day rate, doubled with it
    scenario = scenario_from_text(text)
    result = run_history(scenario, history_from_frame(frame, scenario, label="seattle.csv"))
    k = result.decision.recommended_index
    case, fixed_day = result.stress
    view = case.views[0]
    np.testing.assert_array_equal(view.model_cost_at_base, 2 * result.model_cost[:, k])
    for name, cost in result.baseline_cost.items():
        np.testing.assert_array_equal(view.baseline_cost[name], 2 * cost)
    # a new value replaces the draw: the case is the base's seasons priced at that day rate
    prices = RulePrices.of(scenario.operations).moved(day_rate=833.25, standby_rate=833.25)
    np.testing.assert_array_equal(fixed_day.views[0].model_cost_at_base,
                                  result.operations.season_cost_at(prices)[:, k])


def test_each_site_draws_its_own_price_ranges_as_a_run_of_that_site_alone_does():
    """Many sites: a site's season costs with the scenario's price range and its own are those of a
    single-site run of its rows with the same ranges (invented correlated sites, tests/test_sites.py)."""

    from test_sites import SITES_TOML, correlated_sites

    frame = correlated_sites(20270415, years=3)
    rules = ('[operations]\ncrews = 2\ncrews_out_on = "not_acting"\nspoiled_on = "event"\n'
             "day_rate = {low = 700, likely = 800, high = 1100}\nspoilage_cost = 300\nwork = 150\n"
             "unfinished_cost = 2000\n")
    text = SITES_TOML.replace("replicates = 400", "replicates = 150") + rules
    own = "spoilage_cost = {low = 200, likely = 300, high = 700}\n"
    scenario = scenario_from_text(text + f'[sites."South".operations]\n{own}')
    assert set(scenario.cost_ranges()) == {"operations.day_rate", "sites.South.operations.spoilage_cost"}
    result = run_history(scenario, history_from_frame(frame, scenario, label="history.csv"))
    for k, name in enumerate(("North", "South")):
        alone_text = text.replace('site_column = "site"\n', "")
        if name == "South":
            alone_text = alone_text.replace("spoilage_cost = 300\n", own)
        alone_scenario = scenario_from_text(alone_text)
        rows = frame[frame["site"] == name].drop(columns="site").reset_index(drop=True)
        alone = run_history(alone_scenario, history_from_frame(rows, alone_scenario, label="history.csv"))
        site = result.sites[k]
        # a site's table leaves the money priced by [costs] on the history as it is (a single-site
        # run under [operations] empties it); the season costs are the same
        priced = [c for c in alone.table.columns if "historical" not in c and c not in ("net_benefit", "relative_value")]
        pd.testing.assert_frame_equal(site.table[priced], alone.table[priced], check_exact=True)
        np.testing.assert_array_equal(site.model_cost, alone.model_cost[:, alone.decision.recommended_index])
        assert alone.cost_spread is not None and 0 < alone.cost_spread.share_costs < 1
    written = summary(result)
    assert set(written["cost_ranges"]) == {"operations.day_rate", "sites.South.operations.spoilage_cost"}
    said = account(written).get("cost_doubt")
    assert "spoilage cost at \u201cSouth\u201d: 200 to 700 EUR per crew per spoiled day out" in said.sentence


def test_the_readme_quotes_the_rules_demos_spread_as_the_run_gives_it():
    root = Path(__file__).resolve().parents[1]
    readme = " ".join((root / "README.md").read_text().split())
    result = run(read_scenario(root / "scenarios" / "line_marking_rules.toml"))
    spread = result.cost_spread
    assert f"{result.decision.recommended_cutoff:.2f}" == "0.38"
    assert (f"at its cutoff of 0.38, **{spread.share_weather:.0%}** of the variance of the season cost comes from "
            f"the weather and **{spread.share_costs:.0%}** from that range") in readme
    assert result.scenario.cost_ranges() == {"operations.day_rate": CostRange(low=720, likely=790, high=920)}
    assert result.scenario.operations.day_rate == 800  # (720 + 4 x 790 + 920) / 6, Malcolm et al. 1959


@pytest.mark.parametrize("old, new, words", [
    ("day_rate = {low = 720,", "day_rate = {low = -20,", "[operations] day_rate: low must be a number from 0 to"),
    ("hit = 2400", "hit = {low = 2000, likely = 2400, high = 2600}",
     "[costs] hit: with [operations] the rules price the seasons"),
])
def test_a_wrong_price_range_stops_the_command_line_in_one_line_writing_nothing(tmp_path, old, new, words):
    root = Path(__file__).resolve().parents[1] / "scenarios"
    text = (root / "line_marking_rules.toml").read_text()
    assert old in text
    text = text.replace(old, new).replace('path = "line_marking_history.csv"',
                                          f'path = "{root / "line_marking_history.csv"}"')
    (tmp_path / "rules.toml").write_text(text)
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["run", str(tmp_path / "rules.toml"), "--out", str(out), "--replicates", "40"])
    assert result.exit_code == 2 and words in result.output and "Traceback" not in result.output
    assert len(result.output.strip().splitlines()) == 1 and not out.exists()
