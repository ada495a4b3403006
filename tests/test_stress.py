"""Stress cases: Bayes' rule for a changed base rate, common random numbers with the base case, the
identities that hold when a case changes nothing that matters, and how cases reach the outputs.

Histories here are invented test data (``tests/conftest.py``), calibrated by construction.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from conftest import EXAMPLE_COSTS
from simulator.cli import app
from simulator.inputs.errors import InputError
from simulator.account.outputs import summary
from simulator.replay.resample import Resampler, season_calendar
from simulator.run import run, run_history
from simulator.inputs.scenario import read_scenario, scenario_from_text
from simulator.inputs.history import history_from_frame
from simulator.analysis.probability_changes import degrade, prior_shift, shift_odds

REPLICATES = 120  # small: these tests check identities and wiring, not precision

SEASON = {"months": [4, 5, 6, 7, 8, 9]}


def _odds(p):
    return p / (1 - p)


# ---- Bayes' rule for a new base rate ----------------------------------------------------------

def test_prior_shift_matches_the_hand_worked_bayes_example():
    # Elkan (2001), "The foundations of cost-sensitive learning", IJCAI, Theorem 2; Saerens, Latinne
    # and Decaestecker (2002), Neural Computation 14(1), section 2 (from memory). p = 0.5 calibrated at b = 0.3,
    # new base rate b' = 0.1:
    #   p' = b'(p - p b) / (b - p b + b' p - b b')
    #      = 0.1 (0.5 - 0.15) / (0.3 - 0.15 + 0.05 - 0.03) = 0.035 / 0.17 = 0.205882...
    # Equivalently in odds: odds(p') = 1 * (0.1/0.9) / (0.3/0.7) = 0.259259, p' = 0.259259/1.259259.
    assert prior_shift(0.5, 0.3, 0.1) == pytest.approx(0.2059, abs=5e-5)
    assert prior_shift(0.5, 0.3, 0.1) == pytest.approx(0.035 / 0.17, rel=1e-12)


def test_prior_shift_rescales_the_odds_and_keeps_the_order():
    # the odds form of Bayes' rule (Saerens et al. 2002; METHODS.md 1.5): odds(p') = odds(p) * odds(b')/odds(b)
    p = np.linspace(0.01, 0.99, 99)
    shifted = prior_shift(p, 0.3, 0.1)
    np.testing.assert_allclose(_odds(shifted), _odds(p) * _odds(0.1) / _odds(0.3), rtol=1e-12)
    assert np.all(np.diff(shifted) > 0)
    # METHODS.md 2.3 (derived, checked numerically): to act at p* = 0.45 in the rarer year, the
    # cutoff on the old scale rises to 0.7594
    assert prior_shift(0.7594, 0.3, 0.1) == pytest.approx(0.45, abs=1e-4)
    assert np.array_equal(prior_shift(p, 0.3, 0.3), p)
    # the same change written as a factor on the odds (used by the calibrated mode)
    np.testing.assert_allclose(shift_odds(p, np.log(_odds(0.1) / _odds(0.3))), shifted, rtol=1e-12)


def test_degrade_keeps_the_stated_share_of_the_distance_from_the_base_rate():
    # skill = 0.7 keeps 70% of the distance (the definition); linear shrinkage, common practice
    p = np.array([0.1, 0.3, 0.9])
    np.testing.assert_allclose(degrade(p, 0.3, 0.7) - 0.3, 0.7 * (p - 0.3))
    np.testing.assert_allclose(degrade(p, 0.3, 0.0), 0.3)


# ---- a small synthetic world ------------------------------------------------------------------

@pytest.fixture(scope="module")
def world(synthetic):
    """Four seasons (April to September) of calibrated daily forecasts with wet spells."""
    return synthetic.markov_frame(np.random.default_rng(20270501), years=4, p01=0.2, p11=0.6,
                                  start="2019-01-01")


# the four costs known only as ranges, each with the PERT mean (low + 4 likely + high) / 6 of the
# fixed cost it replaces (Malcolm et al. 1959): 300, 1800, 2500 and 0 (benchmarks/bench_ranges.py)
RANGES = {"hit": "{low = 240, likely = 300, high = 360}", "false_alarm": "{low = 1500, likely = 1725, high = 2400}",
          "miss": "{low = 2000, likely = 2375, high = 3500}", "correct_negative": "{low = -60, likely = 0, high = 60}"}


@pytest.fixture(scope="module")
def make(toml_text):
    """``make(stress_text, ranges=(), costs=None)``: the scenario of these tests with ``[[stress]]``
    tables appended, the costs named in ``ranges`` given as the ranges of :data:`RANGES` and the
    fixed costs in ``costs`` replacing the example's."""

    def scenario(stress_text: str = "", ranges=(), costs=None):
        sim = {"replicates": REPLICATES, "seed": 11, "block_days": 3, "reference": "never_act"}
        text = toml_text(season=SEASON, simulation=sim, costs={**EXAMPLE_COSTS, **(costs or {})})
        for key in ranges:
            text, n = re.subn(rf"^{key} = \S+$", f"{key} = {RANGES[key]}", text, flags=re.M)
            assert n == 1
        return scenario_from_text(text + stress_text)

    return scenario


@pytest.fixture(scope="module")
def run_with(world, make):
    """``run_with(stress_text, ranges=(), costs=None)``: a run of the synthetic world with those
    stress cases (and those costs given as ranges or changed)."""

    def run(stress_text: str = "", ranges=(), costs=None):
        scenario = make(stress_text, ranges, costs)
        return run_history(scenario, history_from_frame(world, scenario, label="history.csv"))

    return run


def test_unit_start_weights_draw_exactly_the_untilted_replicates(world, make):
    # the default path must stay byte-identical: equal weights give the same choice (common practice)
    scenario = make()
    history = history_from_frame(world, scenario, label="history.csv")
    calendar = season_calendar(history, scenario.season)
    plain = Resampler(history, calendar, 3.0, 10)
    equal = plain.tilted(np.ones(history.n_rows))
    np.testing.assert_array_equal(plain.draw_block(5, 0), equal.draw_block(5, 0))


@pytest.mark.parametrize("ranges", [(), tuple(RANGES)], ids=["fixed costs", "cost ranges"])
def test_event_rate_one_reproduces_the_base_case_exactly(run_with, ranges):
    # with costs given as ranges too: the case prices replicate k with the base's draw for
    # replicate k (common random numbers), not at the PERT means
    result = run_with('\n[[stress]]\nname = "as before"\nevent_rate = 1.0\n', ranges)
    assert (result.cost_spread is not None) == bool(ranges)
    case = result.stress[0]
    assert case.event_rate.reached and case.event_rate.achieved == case.event_rate.target
    for view in case.views:  # as forecast, and adapted (to the same rate: unchanged)
        np.testing.assert_array_equal(view.mean_cost, result.model_cost.mean(axis=0))
        np.testing.assert_array_equal(view.model_cost_at_base,
                                      result.model_cost[:, result.decision.recommended_index])
        for name, cost in result.baseline_cost.items():
            np.testing.assert_array_equal(view.baseline_cost[name], cost)
        assert view.extra_cost == 0.0 and view.best_cutoff == result.decision.recommended_cutoff


def test_scaling_every_cost_scales_every_season_cost_on_the_same_replicates(run_with):
    # only the ratio of the cost differences decides (Elkan 2001: multiplying a cost matrix by a positive
    # constant leaves the decisions unchanged; from memory, check): doubling every cost
    # doubles every season cost, replicate by replicate, and leaves the best cutoff where it was
    text = ('\n[[stress]]\nname = "all doubled"\n'
            "cost_multipliers = { hit = 2, false_alarm = 2, miss = 2, correct_negative = 2 }\n")
    result = run_with(text)
    view = result.stress[0].views[0]
    np.testing.assert_allclose(view.model_cost_at_base,
                               2 * result.model_cost[:, result.decision.recommended_index], rtol=1e-12)
    np.testing.assert_allclose(view.baseline_cost["persistence"], 2 * result.baseline_cost["persistence"])
    assert view.best_cutoff == result.decision.recommended_cutoff


def test_doubling_every_drawn_cost_doubles_every_season_cost_exactly(run_with):
    """Costs drawn per replicate season: a season cost is a sum of counts times costs (linearity;
    Elkan 2001, as above), and a product with 2 is exact in binary floating point, so the case's
    costs are exactly twice the base's, replicate by replicate, only if the case priced the base's
    draws (common random numbers) with its multipliers on top, not draws of its own or the PERT
    means. tests/test_price_ranges.py checks the same of the rules' prices."""
    text = ('\n[[stress]]\nname = "all doubled"\n'
            "cost_multipliers = { hit = 2, false_alarm = 2, miss = 2, correct_negative = 2 }\n")
    result = run_with(text, tuple(RANGES))
    view = result.stress[0].views[0]
    assert result.cost_spread is not None  # the costs were drawn
    np.testing.assert_array_equal(view.mean_cost, (2 * result.model_cost).mean(axis=0))
    np.testing.assert_array_equal(view.model_cost_at_base, 2 * result.model_cost[:, result.decision.recommended_index])
    for name, cost in result.baseline_cost.items():
        np.testing.assert_array_equal(view.baseline_cost[name], 2 * cost)
    assert view.best_cutoff == result.decision.recommended_cutoff


def test_a_new_cost_in_a_case_replaces_the_draw_of_its_range(run_with):
    """A case that sets the miss cost to 2,600 prices each replicate season with that figure and
    the base's draws of the other three costs: exactly the run whose miss cost is 2,600 and whose
    other ranges are drawn, as each cost's draws have a stream of their own (identity, no source)."""
    ranged = run_with('\n[[stress]]\nname = "miss known"\ncosts = { miss = 2600 }\n', tuple(RANGES))
    known = run_with("", ("hit", "false_alarm", "correct_negative"), {"miss": 2600})
    k = ranged.decision.recommended_index
    view = ranged.stress[0].views[0]
    np.testing.assert_array_equal(view.model_cost_at_base, known.model_cost[:, k])
    np.testing.assert_array_equal(view.mean_cost, known.model_cost.mean(axis=0))
    for name, cost in known.baseline_cost.items():
        np.testing.assert_array_equal(view.baseline_cost[name], cost)


def test_a_forecast_without_skill_costs_what_always_or_never_acting_costs(run_with):
    # skill = 0 turns every probability into the base rate b: at cutoffs up to b the rule always
    # acts, above it never (a climatological forecast; identity, common practice)
    result = run_with('\n[[stress]]\nname = "no skill"\nskill = 0.0\n')
    view = result.stress[0].views[0]
    b = float(result.history.event[result.history.training].mean())
    cutoffs = result.cutoffs
    always, never = view.baseline_cost["always_act"].mean(), view.baseline_cost["never_act"].mean()
    np.testing.assert_allclose(view.mean_cost[cutoffs <= b - 1e-9], always, rtol=1e-12)
    np.testing.assert_allclose(view.mean_cost[cutoffs > b + 1e-9], never, rtol=1e-12)


def test_worst_seasons_draws_only_from_the_dearest_seasons(run_with):
    result = run_with('\n[[stress]]\nname = "worst two"\nworst_seasons = 2\n')
    case = result.stress[0]
    h = result.history
    cutoff = result.decision.recommended_cutoff
    per_season = {}
    for s in h.seasons:
        rows = h.evaluated & (h.season == s)
        act, event = h.p[rows] >= cutoff, h.event[rows]
        cost = (300 * (act & event) + 1800 * (act & ~event) + 2500 * (~act & event)).sum()
        per_season[int(s)] = cost / rows.sum()
    dearest = sorted(sorted(per_season, key=per_season.get)[-2:])
    assert list(case.seasons_used) == dearest


def test_an_unreachable_event_rate_is_said_plainly(run_with):
    # the base rate here is about 1/3 (p01 = 0.2, p11 = 0.6: stationary 0.2/0.6), so 4 times as
    # often would need a rate above 1
    result = run_with('\n[[stress]]\nname = "every day wet"\nevent_rate = 4.0\n')
    check = result.stress[0].event_rate
    assert not check.reached
    assert "cannot be reached" in check.note and "every day wet" in check.note
    assert "aimed at" in result.stress[0].views[0].headline
    assert any("cannot be reached" in w for w in result.warnings)
    assert check.achieved == pytest.approx(check.highest, abs=0.02)


def test_calibrated_mode_reaches_the_event_rate_by_shifting_the_odds(world, make):
    # the calibrated mode keeps the base replicates and draws outcomes at rescaled odds; the drawn
    # rate should sit within Monte Carlo error of the target (4 standard errors; common practice)
    scenario = make('\n[[stress]]\nname = "wetter"\nevent_rate = 1.3\n')
    scenario = scenario.model_copy(update={"simulation": scenario.simulation.model_copy(
        update={"mode": "calibrated"})})
    result = run_history(scenario, history_from_frame(world, scenario, label="history.csv"))
    check = result.stress[0].event_rate
    assert check.reached
    assert abs(check.achieved - check.target) <= 4 * check.standard_error


def test_stress_results_reach_summary_in_scenario_order(run_with):
    text = ('\n[[stress]]\nname = "wetter"\nevent_rate = 1.2\n'
            '\n[[stress]]\nname = "dearer miss"\ncosts = { miss = 4000 }\n'
            '\n[[stress]]\nname = "noisier"\nnoise = 0.5\n')
    result = run_with(text)
    s = summary(result)
    assert [c["name"] for c in s["stress"]] == ["wetter", "dearer miss", "noisier"]
    wetter = s["stress"][0]
    assert [v["probabilities"] for v in wetter["views"]] == ["as_forecast", "adapted"]
    assert set(wetter["views"][0]["strategies"]) == {"model", "never_act", "always_act", "persistence",
                                                     "seasonal_rate", "perfect"}
    assert s["stress"][1]["costs"]["miss"] == 4000
    assert wetter["views"][0]["headline"].startswith("Keep the cutoff at")
    json.dumps(s)  # JSON-safe


def test_noise_is_reproducible_and_independent_of_the_case_order(run_with):
    one = run_with('\n[[stress]]\nname = "noisier"\nnoise = 0.5\n')
    two = run_with('\n[[stress]]\nname = "first"\nskill = 0.9\n\n[[stress]]\nname = "noisier"\nnoise = 0.5\n')
    np.testing.assert_array_equal(one.stress[0].views[0].mean_cost, two.stress[1].views[0].mean_cost)


# ---- scenario keys ----------------------------------------------------------------------------

@pytest.mark.parametrize(("text", "fragment"), [
    ('[[stress]]\nname = "x"\n', "needs at least one change"),
    ('[[stress]]\nname = "x"\nevnt_rate = 2\n', 'unknown key "evnt_rate"; did you mean "event_rate"?'),
    ('[[stress]]\nname = "x"\ncosts = { mis = 3 }\n', 'unknown key "mis"; did you mean "miss"?'),
    ('[[stress]]\nname = "x"\nskill = 1.5\n', "[[stress]] table 1 skill"),
    ('[[stress]]\nname = "x"\ncosts = { miss = 3 }\ncost_multipliers = { miss = 2 }\n', "keep one"),
    ('[[stress]]\nname = "x"\nnoise = 1\n[[stress]]\nname = "x"\nskill = 0.5\n',
     'two [[stress]] tables are named "x"'),
])
def test_stress_tables_are_checked_with_one_line_messages(text, fragment, toml_text):
    with pytest.raises(InputError) as info:
        scenario_from_text(toml_text() + "\n" + text, label="my.toml")
    assert fragment in str(info.value) and str(info.value).startswith("my.toml")


def test_command_line_prints_the_stress_table_and_writes_stress_csv(tmp_path, world, toml_text):
    (tmp_path / "history.csv").write_text(world.to_csv(index=False, lineterminator="\n"))
    text = toml_text(season=SEASON, history={"path": "history.csv"},
                         simulation={"replicates": 40, "seed": 3, "block_days": 3})
    (tmp_path / "s.toml").write_text(text + '\n[[stress]]\nname = "wetter"\nevent_rate = 1.2\n')
    result = CliRunner().invoke(app, ["run", str(tmp_path / "s.toml"), "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    assert "Stress tests" in result.output and "Keep the cutoff at" in result.output
    table = (tmp_path / "out" / "stress.csv").read_text().splitlines()
    assert table[0].startswith("case,probabilities,target_event_rate")
    assert [line.split(",")[0] for line in table[1:]] == ["base case", "wetter", "wetter"]


# ---- stress cases under [operations] rules -----------------------------------------------------

RULES_CASES = """

[[stress]]
name = "dearer late damages"
operations_multipliers = { damages_per_day_late = 2 }
"""


def test_doubling_late_damages_adds_the_mean_late_damages_at_the_base_cutoff(tmp_path):
    # common practice, no source: a case that only changes a price is played on the same replicates
    # with the same decisions, so doubling one cost component adds exactly its mean at that cutoff
    root = Path(__file__).resolve().parents[1] / "scenarios"
    text = (root / "line_marking_rules.toml").read_text()
    text = text.replace('path = "line_marking_history.csv"', f'path = "{root / "line_marking_history.csv"}"')
    (tmp_path / "rules.toml").write_text(text + RULES_CASES)
    result = run(read_scenario(tmp_path / "rules.toml"), replicates=REPLICATES)
    s = summary(result)
    late = s["operations"]["at_recommended_cutoff"]["mean_components"]["late_damages_cost"]
    case = s["stress"][0]["views"][0]
    assert late > 0
    assert case["strategies"]["model"]["mean"] == pytest.approx(s["strategies"]["model"]["mean"] + late,
                                                                rel=1e-12)


def test_operating_rule_changes_without_operations_are_refused(tmp_path):
    root = Path(__file__).resolve().parents[1] / "scenarios"
    text = (root / "line_marking.toml").read_text()
    text = text.replace('path = "line_marking_history.csv"', f'path = "{root / "line_marking_history.csv"}"')
    (tmp_path / "plain.toml").write_text(text + '\n[[stress]]\nname = "x"\noperations = { day_rate = 900 }\n')
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["run", str(tmp_path / "plain.toml"), "--out", str(out),
                                      "--replicates", "40"])
    assert result.exit_code == 2
    assert '[[stress]] "x": operations and operations_multipliers' in result.output
    assert not out.exists()
