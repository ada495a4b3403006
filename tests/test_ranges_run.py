"""Runs with costs known only as a range (issue 14 item 2).

Checks:
- A range whose three numbers are equal gives the fixed run byte for byte (the golden files in
  tests/golden/single_site/, invented test data; only the listed ranges and the scenario's hash
  differ in summary.json).
- On the same seed, every strategy's mean season cost equals, within the Monte Carlo error of the
  cost draws, the run with each cost fixed at its PERT mean: the counts do not depend on the costs,
  so by linearity of expectation E[sum n_i X_i] = sum n_i E[X_i] (common practice, no single
  source), and the PERT mean is (low + 4 likely + high) / 6 (Malcolm et al. 1959).
- The split of the spread: weather's and costs' parts add up to the drawn costs' variance, and a
  wider range gives the costs a larger share.
The history is real: daily crude oil moves shipped by the ``arch`` package with an honest
logistic forecast (tests/realdata.py); the costs are invented.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest

from realdata import wti_big_move
from simulator import read_scenario, run
from simulator.account.findings import account
from simulator.account.outputs import summary
from simulator.inputs.errors import InputError
from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario import CostRange, scenario_from_text
from simulator.run import run_history

GOLDEN = Path(__file__).resolve().parent / "golden" / "single_site"


@pytest.mark.parametrize("name", ["plain", "calibrated"])
def test_ranges_of_zero_width_give_the_fixed_run_byte_for_byte(tmp_path, name):
    text = (GOLDEN / f"{name}.toml").read_text()
    text, n = re.subn(r"^(hit|false_alarm|miss|correct_negative) = (\S+)$",
                      r"\1 = {low = \2, likely = \2, high = \2}", text, flags=re.M)
    assert n >= 3
    (tmp_path / f"{name}.toml").write_text(text)
    (tmp_path / "history.csv").write_bytes((GOLDEN / "history.csv").read_bytes())
    result = run(read_scenario(tmp_path / f"{name}.toml"))
    assert result.table.to_csv(index=False, lineterminator="\n").encode() == \
        (GOLDEN / f"{name}.cutoffs.csv").read_bytes()
    written = summary(result)
    golden = json.loads((GOLDEN / f"{name}.summary.json").read_text())
    assert len(written.pop("cost_ranges")) == n and "cost_spread" not in written
    for contents in (written, golden):
        contents["scenario"].pop("sha256")
    written["account"] = [f for f in written["account"] if f["key"] != "cost_doubt"]
    assert written == golden


def test_the_calibrated_mode_draws_the_ranges_too(tmp_path):
    text = (GOLDEN / "calibrated.toml").read_text().replace("miss = 900", "miss = {low = 700, likely = 800, high = 1500}")
    (tmp_path / "c.toml").write_text(text)
    (tmp_path / "history.csv").write_bytes((GOLDEN / "history.csv").read_bytes())
    result = run(read_scenario(tmp_path / "c.toml"), replicates=200)
    assert result.cost_spread is not None and 0 < result.cost_spread.share_costs < 1


@pytest.fixture(scope="module")
def wti():
    return wti_big_move()


def _oil(wti, costs: str, replicates: int = 1000):
    scenario = scenario_from_text(f"""name = "oil desk"
[event]
name = "big move"
[costs]
{costs}
[simulation]
replicates = {replicates}
seed = 11
""")
    return scenario, run_history(scenario, history_from_frame(wti, scenario))


RANGES = ("hit = {low = 50, likely = 100, high = 250}\n"
          "false_alarm = {low = 300, likely = 400, high = 800}\n"
          "miss = {low = 600, likely = 1000, high = 2200}\n")


@pytest.fixture(scope="module")
def oil_runs(wti):
    scenario, drawn = _oil(wti, RANGES)
    means = {k.split(".")[1]: r.mean for k, r in scenario.cost_ranges().items()}
    fixed_text = "".join(f"{k} = {v!r}\n" for k, v in means.items())
    _, fixed = _oil(wti, fixed_text)
    return scenario, drawn, fixed


def test_every_strategys_mean_cost_matches_the_run_at_the_pert_means(oil_runs):
    scenario, drawn, fixed = oil_runs
    assert scenario.cost_ranges()["costs.miss"] == CostRange(low=600, likely=1000, high=2200)
    assert scenario.costs.miss == pytest.approx((600 + 4000 + 2200) / 6)
    assert drawn.theoretical_cutoff == fixed.theoretical_cutoff  # one figure: the PERT means
    pairs = [(drawn.model_cost, fixed.model_cost)] + [
        (drawn.baseline_cost[name][:, None], fixed.baseline_cost[name][:, None]) for name in drawn.baseline_cost]
    for a, b in pairs:
        difference = a - b  # the same seasons: only the drawn costs differ
        n = difference.shape[0]
        se = difference.std(axis=0, ddof=1) / np.sqrt(n)
        moved = np.abs(difference.mean(axis=0))
        assert (moved <= 4.5 * se + 1e-9).all()
        assert not np.array_equal(a, b)


def test_the_spread_is_split_between_weather_and_costs(oil_runs):
    _, drawn, fixed = oil_runs
    spread = drawn.cost_spread
    k = drawn.decision.recommended_index
    assert spread.total_variance == pytest.approx(np.var(drawn.model_cost[:, k], ddof=1))
    assert spread.weather_variance == pytest.approx(np.var(fixed.model_cost[:, k], ddof=1))
    assert 0 < spread.share_costs < 1
    assert spread.share_weather + spread.share_costs == pytest.approx(1)
    written = summary(drawn)
    assert written["cost_spread"]["cutoff"] == drawn.decision.recommended_cutoff
    assert written["cost_ranges"]["costs.miss"] == {"low": 600.0, "likely": 1000.0, "high": 2200.0,
                                                    "mean": pytest.approx(6800 / 6)}
    said = account(written).get("cost_doubt")
    assert said is not None and "from the weather" in said.sentence and "miss: 600 to 2,200 EUR a day, most likely 1,000 EUR" in said.sentence


def test_a_wrong_range_in_a_scenario_is_one_line(toml_text):
    text = toml_text(costs={"hit": 1, "false_alarm": 2, "miss": 3}).replace(
        "miss = 3", "miss = {low = 5, likely = 3, high = 9}")
    with pytest.raises(InputError, match=r"^s\.toml \[costs\] miss: a range needs low <= likely <= high"):
        scenario_from_text(text, label="s.toml")


def test_each_site_draws_its_own_ranges_as_a_run_of_that_site_alone_does():
    """Many sites: a site's season costs with the scenario's range and its own are those of a
    single-site run of its rows with the same ranges (invented correlated sites, tests/test_sites.py),
    and so are its stress case's, priced with the site's draws."""
    import pandas as pd

    from test_sites import SITES_TOML, correlated_sites

    frame = correlated_sites(20270415)
    ranged = SITES_TOML.replace("miss = 2500", "miss = {low = 2000, likely = 2400, high = 3400}")
    ranged += '[[stress]]\nname = "dearer false alarms"\ncost_multipliers = {false_alarm = 1.5}\n'
    scenario = scenario_from_text(ranged + '[sites."South".costs]\nhit = {low = 200, likely = 300, high = 500}\n')
    assert set(scenario.cost_ranges()) == {"costs.miss", "sites.South.costs.hit"}
    assert set(scenario.for_site("South").cost_ranges()) == {"costs.miss", "costs.hit"}
    result = run_history(scenario, history_from_frame(frame, scenario, label="history.csv"))
    alone_text = ranged.replace('site_column = "site"\n', "")
    for k, name in enumerate(("North", "South")):
        if name == "South":
            alone_text = alone_text.replace("hit = 300", "hit = {low = 200, likely = 300, high = 500}")
        alone_scenario = scenario_from_text(alone_text)
        rows = frame[frame["site"] == name].drop(columns="site").reset_index(drop=True)
        alone = run_history(alone_scenario, history_from_frame(rows, alone_scenario, label="history.csv"))
        site = result.sites[k]
        pd.testing.assert_frame_equal(site.table, alone.table, check_exact=True)
        np.testing.assert_array_equal(site.model_cost, alone.model_cost[:, alone.decision.recommended_index])
        assert alone.cost_spread is not None
        np.testing.assert_array_equal(site.stress[0].views[0].mean_cost, alone.stress[0].views[0].mean_cost)
    written = summary(result)
    assert set(written["cost_ranges"]) == {"costs.miss", "sites.South.costs.hit"} and "cost_spread" not in written
    said = account(written).get("cost_doubt")
    assert "for one site at a time only" in said.sentence and "hit at \u201cSouth\u201d: 200 to 500" in said.sentence
