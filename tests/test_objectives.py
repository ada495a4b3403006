"""Choosing the cutoff by risk: ``[decision] objective`` = "mean", "p95" or "shortfall10".

The hand-made matrix is invented so that every answer can be read off by eye (common practice, no
source). The real history is the WTI big-move record of ``tests/realdata.py`` (arch's bundled
crude oil prices, an honest logistic forecast). Expected shortfall is checked against an
independent computation with ``numpy.sort``: the mean of the worst ceil(0.1 n) of n replicate
season costs, the empirical estimator of Acerbi and Tasche (2002), "On the coherence of expected
shortfall", J. Banking & Finance 26:1487-1503, for the conditional value at risk of Rockafellar and
Uryasev (2000), "Optimization of conditional value-at-risk", J. Risk 2:21-41.
"""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np
import pytest

from realdata import wti_big_move
from simulator.pricing.costs import SeasonPricer
from simulator.pricing.decision import OBJECTIVES, decide, objective_cost, season_cost_columns, shortfall
from simulator.inputs.errors import InputError
from simulator.inputs.history import history_from_frame
from simulator.account.outputs import summary
from simulator.replay.resample import Resampler, season_calendar
from simulator.run import run, run_history
from simulator.inputs.scenario import read_scenario, scenario_from_text
from simulator.analysis.selection import SELECTION_STREAM, select_honestly

CUTOFFS = np.array([0.1, 0.2, 0.3, 0.4])
GOLDEN = Path(__file__).resolve().parent / "golden" / "single_site"


def _worst_tenth_mean(costs: np.ndarray) -> np.ndarray:
    """Independent expected shortfall per column: sort each column, average its top ceil(n/10)."""
    n = costs.shape[0]
    k = math.ceil(n / 10)  # integer arithmetic: no rounding question for whole n
    return np.sort(costs, axis=0)[n - k:].mean(axis=0)


def _first_lowest(values: np.ndarray) -> int:
    """The first index within a billionth (of the largest value) of the minimum."""
    return int(np.flatnonzero(values <= values.min() + 1e-9 * np.abs(values).max())[0])


# ------------------------------------------------------------------------------------------------
# a hand-made matrix


@pytest.fixture
def hand_made():
    """20 replicate seasons x 4 cutoffs, every value read off by eye.

    - 0.1: 100 in every season: mean 100, p95 100, shortfall 100;
    - 0.2: 80 in 18 seasons, 200 in 2: mean 92 (the lowest), p95 200, shortfall (worst 2) 200;
    - 0.3: 95 in 19 seasons, 99 in 1: mean 95.2, p95 95.2 (numpy's linear interpolation between
      the 19th and 20th of 20 sorted values, at 0.95 * 19 = 18.05; numpy.quantile documentation,
      method "linear"), shortfall (95 + 99) / 2 = 97;
    - 0.4: the same seasons as 0.3: every objective ties 0.3 and 0.4, and the tie goes to 0.3.
    The reference costs 98 in every season.
    """
    cost = np.empty((20, 4))
    cost[:, 0] = 100.0
    cost[:, 1] = 80.0
    cost[[3, 11], 1] = 200.0
    cost[:, 2] = 95.0
    cost[7, 2] = 99.0
    cost[:, 3] = cost[:, 2]
    return cost, np.full(20, 98.0)


def test_hand_made_matrix_by_eye(hand_made):
    cost, _ = hand_made
    columns = season_cost_columns(cost)
    np.testing.assert_allclose(columns["mean_cost"], [100, 92, 95.2, 95.2], rtol=1e-12)
    np.testing.assert_allclose(columns["p95_cost"], [100, 200, 95.2, 95.2], rtol=1e-12)
    np.testing.assert_allclose(columns["shortfall10_cost"], [100, 200, 97, 97], rtol=1e-12)


@pytest.mark.parametrize("objective, index, band, break_even", [
    ("mean", 1, (0.2, 0.2), [(0.2, 0.4)]),  # 92 is 3% below 95.2: alone within 1%
    ("p95", 2, (0.3, 0.4), [(0.3, 0.4)]),  # 200 > 98: 0.2 does not beat the reference by p95
    ("shortfall10", 2, (0.3, 0.4), [(0.3, 0.4)]),
])
def test_each_objective_chooses_its_own_lowest_and_ties_go_to_the_lower_cutoff(
        hand_made, rng, objective, index, band, break_even):
    decision = decide(*hand_made, CUTOFFS, seasons_per_history=5, rng=rng, objective=objective)
    assert decision.objective == objective
    assert decision.recommended_index == index
    assert decision.near_optimal_band == band
    assert decision.break_even == break_even
    assert decision.choices == {"mean": 1, "p95": 2, "shortfall10": 2}
    # cheaper than 98 in at least 95% of seasons: 0.3 and 0.4 only (0.2 loses in 2 seasons of 20)
    assert decision.confident_break_even == [(0.3, 0.4)]


@pytest.mark.parametrize("objective, cutoff", [("mean", 0.2), ("p95", 0.3), ("shortfall10", 0.3)])
def test_long_bootstrap_histories_choose_by_the_same_objective(hand_made, rng, objective, cutoff):
    # With 2,000 seasons a history, every bootstrap history agrees with the full replicate set:
    # 0.2's mean (92, sd 36 / sqrt(2000) = 0.8) stays below 95.2; its p95 and shortfall stay at 200.
    decision = decide(*hand_made, CUTOFFS, seasons_per_history=2000, rng=rng, objective=objective)
    assert decision.recommended_cutoff_interval == (cutoff, cutoff)


def test_shortfall_averages_the_worst_ceil_tenth():
    # 25 values: ceil(2.5) = 3 worst, 23 + 24 + 25 (common practice for the empirical estimator,
    # Acerbi and Tasche 2002); 30 values: 0.1 * 30 is 3.0000000000000004 in floating point, still 3
    assert shortfall(np.arange(1.0, 26.0)) == pytest.approx(24.0)
    assert shortfall(np.arange(1.0, 31.0)) == pytest.approx(29.0)
    values = np.random.default_rng(5).gamma(2.0, 1000.0, size=(997, 6))
    np.testing.assert_allclose(shortfall(values), _worst_tenth_mean(values), rtol=1e-12)
    np.testing.assert_allclose(objective_cost(values, "p95"), np.quantile(values, 0.95, axis=0), rtol=1e-12)


# ------------------------------------------------------------------------------------------------
# a real history


@pytest.fixture(scope="module")
def wti():
    return wti_big_move()


def _oil_scenario(objective: str, head: str = "", replicates: int = 400):
    """The oil desk's scenario (invented costs per trading day, in the default currency)."""
    return scenario_from_text(f"""name = "oil desk"
{head}[event]
name = "big move"
[decision]
objective = "{objective}"
[costs]
hit = 100
false_alarm = 400
miss = 1000
[simulation]
replicates = {replicates}
seed = 11
""")


def _oil_run(wti, objective: str):
    scenario = _oil_scenario(objective)
    return run_history(scenario, history_from_frame(wti, scenario))


@pytest.mark.parametrize("objective, column", [("p95", "p95_cost"), ("shortfall10", "shortfall10_cost")])
def test_a_risk_objective_picks_the_lowest_value_of_its_cutoffs_csv_column(wti, objective, column):
    result = _oil_run(wti, objective)
    table = result.table  # cutoffs.csv
    assert result.decision.recommended_index == _first_lowest(table[column].to_numpy())
    written = summary(result)
    assert written["objective"] == objective
    assert written["recommended_cutoff"] == written["objectives"][objective]["cutoff"]
    for name, col in (("mean", "mean_cost"), ("p95", "p95_cost"), ("shortfall10", "shortfall10_cost")):
        chosen = _first_lowest(table[col].to_numpy())
        entry = written["objectives"][name]
        assert entry["cutoff"] == table["cutoff"][chosen]
        assert entry == {"cutoff": entry["cutoff"], **{c: table[c][chosen] for c in
                                                       ("mean_cost", "p95_cost", "shortfall10_cost")}}


def test_shortfall10_cost_is_the_mean_of_the_worst_tenth_of_replicate_costs(wti):
    result = _oil_run(wti, "shortfall10")
    expected = _worst_tenth_mean(result.model_cost)  # 400 replicates: the worst 40 of each cutoff
    np.testing.assert_allclose(result.table["shortfall10_cost"].to_numpy(), expected, rtol=1e-12)


def test_on_this_history_the_risk_view_gives_up_some_mean_for_a_lighter_tail(wti):
    # what the objectives block is for: the risk choice costs more on average, less in bad seasons
    objectives = summary(_oil_run(wti, "shortfall10"))["objectives"]
    mean, tail = objectives["mean"], objectives["shortfall10"]
    assert tail["cutoff"] != mean["cutoff"]
    assert tail["mean_cost"] >= mean["mean_cost"] and tail["shortfall10_cost"] <= mean["shortfall10_cost"]


# ------------------------------------------------------------------------------------------------
# the mean is today's behaviour; the honest check follows the objective


def test_objective_mean_written_out_gives_the_golden_numbers(tmp_path):
    text = (GOLDEN / "plain.toml").read_text().replace('name = "wet day"\n',
                                                        'name = "wet day"\n\n[decision]\nobjective = "mean"\n')
    (tmp_path / "plain.toml").write_text(text)
    (tmp_path / "history.csv").write_bytes((GOLDEN / "history.csv").read_bytes())
    written = summary(run(read_scenario(tmp_path / "plain.toml")))
    golden = json.loads((GOLDEN / "plain.summary.json").read_text())
    for contents in (written, golden):
        contents["scenario"].pop("sha256")
    assert written == golden


@pytest.mark.parametrize("objective", OBJECTIVES)
def test_the_validation_check_chooses_on_training_replicates_by_the_objective(wti, objective):
    scenario = _oil_scenario(objective, head='[history]\nvalidation_from = "2016-01-01"\n')
    history = history_from_frame(wti, scenario)
    calendar = season_calendar(history, scenario.season)
    selection = select_honestly(history, calendar, scenario.cutoffs, scenario.costs, "never_act",
                                mean_block=5.0, window_days=10, seed=3, replicates=200,
                                walk_forward=False, objective=objective)
    # the training replicates, drawn and priced as the check draws them
    train = dataclasses.replace(history, evaluated=history.training,
                                validation=np.zeros_like(history.training))
    resampler = Resampler(train, calendar, 5.0, 10)
    pricer = SeasonPricer(train, scenario.cutoffs, scenario.costs)
    model = np.concatenate([pricer(rows).model for rows in resampler.blocks(3, 200, SELECTION_STREAM, 0)])
    value = {"mean": model.mean(axis=0), "p95": np.quantile(model, 0.95, axis=0),
             "shortfall10": _worst_tenth_mean(model)}[objective]
    assert selection.validation.chosen_cutoff == scenario.cutoffs[_first_lowest(value)]


def test_an_unknown_objective_is_one_line_naming_the_key(toml_text):
    text = toml_text(decision={"objective": "p90"})
    with pytest.raises(InputError) as caught:
        scenario_from_text(text, "risk.toml")
    message = str(caught.value)
    assert "\n" not in message
    assert message.startswith("risk.toml [decision] objective:")
    assert '"mean", "p95", "shortfall10"' in message and "'p90'" in message


# ------------------------------------------------------------------------------------------------
# what the reader sees


def _printed_headline(result) -> str:
    from rich.console import Console

    from simulator.account.terminal import _headline

    console = Console(width=200, record=True, file=open("/dev/null", "w"))
    console.print(_headline(result))
    return " ".join(console.export_text().replace("\u2502", " ").split())  # without the table's rules


def test_the_report_draws_the_trade_off_and_the_headline_names_a_risk_objective(wti):
    from simulator.account.report import render_report

    result = _oil_run(wti, "shortfall10")
    written = summary(result)
    files = render_report(result, written)
    assert files["figures/risk.png"].startswith(b"\x89PNG")
    page = files["report.html"].decode()
    mean, tail = written["objectives"]["mean"]["cutoff"], written["objectives"]["shortfall10"]["cutoff"]
    moved = f"would move the cutoff from {tail:.2f} to {mean:.2f}"
    assert '<section id="risk">' in page and moved in page
    printed = _printed_headline(result)
    assert "Chosen by the lowest mean cost of the worst 10% of seasons" in printed and moved in printed
    # cutoffs that beat the reference by the objective (said when none beat it in 95% of seasons)
    from simulator.account.findings import account

    beats = account({**written, "confident_break_even": []}).get("beats_reference")
    assert beats.text.endswith("(over the worst 10% of seasons; none in 95% of simulated seasons)")
    assert "Chosen by" not in _printed_headline(_oil_run(wti, "mean"))
