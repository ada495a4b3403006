"""Honest selection and the calibrated mode: the isotonic fit against scikit-learn and the truth,
calibrated pricing against replay, and the cutoff chosen on the past priced on what came after.

Histories here are invented test data (``tests/conftest.py`` and below); outcomes drawn as
Bernoulli(p) make a forecast calibrated by construction (common practice, no source).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from simulator.cli import app
from simulator.inputs.errors import InputError
from simulator.inputs.history import history_from_frame
from simulator.account.outputs import summary
from simulator.replay.resample import Calendar
from simulator.run import run, run_history
from simulator.inputs.scenario import read_scenario, scenario_from_text
from simulator.analysis.calibration import fit_recalibration
from simulator.analysis.selection import _seasons_on_calendar

SEASON = {"months": [4, 5, 6, 7, 8, 9]}


# ---- the isotonic recalibration ---------------------------------------------------------------

def test_isotonic_fit_equals_scikit_learn_including_ties_and_between_knots():
    # reference library: scikit-learn IsotonicRegression (pool adjacent violators, ties averaged,
    # linear between distinct x, clipped outside), Zadrozny and Elkan (2002) for its use here
    from sklearn.isotonic import IsotonicRegression

    rng = np.random.default_rng(31)
    p = np.round(rng.beta(2, 3, 600), 2)  # rounded, so many ties
    y = (rng.random(600) < p ** 1.5).astype(float)  # miscalibrated on purpose
    ours = fit_recalibration(p, y)
    theirs = IsotonicRegression(out_of_bounds="clip", y_min=0, y_max=1).fit(p, y)
    new = np.concatenate([p, np.linspace(0, 1, 101)])
    np.testing.assert_allclose(ours(new), theirs.predict(new), atol=1e-12)


def test_isotonic_fit_is_within_binomial_error_of_the_truth():
    # calibrated synthetic forecasts: at each forecast value the fit should be the observed
    # frequency, within 4 binomial standard errors sqrt(p(1-p)/n) of p (common practice)
    rng = np.random.default_rng(32)
    levels = np.round(np.linspace(0.1, 0.9, 9), 2)
    n = 800
    p = np.repeat(levels, n)
    y = rng.random(p.size) < p
    fitted = fit_recalibration(p, y)(levels)
    assert np.all(np.abs(fitted - levels) <= 4 * np.sqrt(levels * (1 - levels) / n))
    assert np.all(np.diff(fitted) >= 0)


def test_calibrated_and_replay_agree_within_monte_carlo_error(synthetic, toml_text):
    # on calibrated forecasts, drawing outcomes from the recalibrated probabilities should price a
    # season as the replay does, up to Monte Carlo error: |difference of means| <= 4 standard
    # errors at every cutoff (the two share their replicates, so the bound is conservative).
    # Five forecast values 0.2 apart with ~290 occasions each, and cutoffs between them: the
    # isotonic fit pools no two values, so each value's recalibrated probability is its observed
    # frequency. (When pools form, the fit is flat across them and a cutoff inside a pool prices
    # the two sides alike, a real difference between the modes, not Monte Carlo error.)
    rng = np.random.default_rng(33)
    dates = pd.date_range("2015-01-01", "2022-12-31", freq="D")
    p = rng.choice([0.1, 0.3, 0.5, 0.7, 0.9], dates.size)
    frame = synthetic.calibrated_frame(rng, start="2015-01-01", end="2022-12-31", p=p)
    sim = {"replicates": 500, "seed": 5, "block_days": 2}
    means, errors = {}, {}
    for mode in ("replay", "calibrated"):
        scenario = scenario_from_text(toml_text(season=SEASON, decision={"cutoffs": [0.0, 1.0, 0.2]},
                                                simulation={**sim, "mode": mode}))
        result = run_history(scenario, history_from_frame(frame, scenario, label="history.csv"))
        # not persistence: its replay cost rides on the history's chance serial dependence, which
        # outcomes drawn from p alone do not have (a difference of the history, not of Monte Carlo)
        costs = np.column_stack([result.model_cost, result.baseline_cost["never_act"],
                                 result.baseline_cost["always_act"]])
        means[mode] = costs.mean(axis=0)
        errors[mode] = costs.var(axis=0, ddof=1) / costs.shape[0]
        if mode == "calibrated":
            assert result.calibration is not None and len(result.calibration.table) == 10
            assert "calibration" in summary(result)
    bound = 4 * np.sqrt(errors["replay"] + errors["calibrated"])
    assert np.all(np.abs(means["replay"] - means["calibrated"]) <= bound)


# ---- honest selection -------------------------------------------------------------------------

@pytest.fixture(scope="module")
def shifted():
    """Six seasons; the forecast is calibrated for the first three, then the event becomes more
    common (outcome ~ Bernoulli(sqrt(p)), p unchanged): the world changes under the forecast."""
    rng = np.random.default_rng(34)
    dates = pd.date_range("2015-01-01", "2020-12-31", freq="D")
    p = np.round(rng.beta(2, 4, dates.size), 2)
    later = dates.year >= 2018
    truth = np.where(later, np.sqrt(p), p)
    outcome = (rng.random(dates.size) < truth).astype(int)
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": p, "outcome": outcome})


def _run(frame, toml_text, history=None, walk_forward=None):
    text = toml_text(season=SEASON, history=history,
                     simulation={"replicates": 60, "seed": 9, "block_days": 3, "reference": "never_act"})
    scenario = scenario_from_text(text)
    return run_history(scenario, history_from_frame(frame, scenario, label="history.csv"),
                       walk_forward=walk_forward)


def test_walk_forward_after_a_shift_shows_optimism_and_flags_the_changed_seasons(shifted, toml_text):
    # Atger (2001): value achieved with a cutoff chosen on past data falls short of the potential
    # value when conditions vary in time
    wf = _run(shifted, toml_text, walk_forward=True).selection.walk_forward
    assert [s.season for s in wf.steps] == [2016, 2017, 2018, 2019, 2020]
    assert wf.optimism > 0
    assert wf.optimism == pytest.approx(wf.total_cost - wf.in_sample_cost)
    assert 2018 in wf.flagged_seasons
    assert all(s.flag == (s.priced.cost_per_occasion > s.expected_range[1]) for s in wf.steps)


def test_validation_after_a_shift_is_flagged_and_optimism_is_never_negative(shifted, toml_text):
    v = _run(shifted, toml_text, history={"validation_from": "2018-01-01"}).selection.validation
    assert v.flag
    assert v.validation.cost_per_occasion > v.training.cost_per_occasion
    assert v.optimism >= 0 and v.validation_best_cost <= v.validation.cost
    assert v.training.hits + v.training.misses + v.training.false_alarms + v.training.correct_negatives \
        == v.training.n_occasions


def test_the_cutoff_is_chosen_without_looking_at_the_validation_period(shifted, toml_text):
    flipped = shifted.copy()
    later = pd.to_datetime(flipped["date"]).dt.year >= 2018
    flipped.loc[later, "outcome"] = 1 - flipped.loc[later, "outcome"]
    split = {"validation_from": "2018-01-01"}
    a = _run(shifted, toml_text, history=split).selection.validation
    b = _run(flipped, toml_text, history=split).selection.validation
    assert a.chosen_cutoff == b.chosen_cutoff and a.training == b.training
    assert a.validation != b.validation


def test_walk_forward_needs_two_seasons(synthetic, toml_text):
    frame = synthetic.calibrated_frame(np.random.default_rng(35), start="2021-01-01", end="2021-12-31")
    with pytest.raises(InputError, match="walk-forward needs at least two seasons"):
        _run(frame, toml_text, walk_forward=True)


def test_command_line_walk_forward_prints_the_check_and_writes_selection_csv(tmp_path, shifted, toml_text):
    shifted[pd.to_datetime(shifted["date"]).dt.year >= 2017].to_csv(tmp_path / "history.csv", index=False)
    text = toml_text(season=SEASON, history={"path": "history.csv"},
                     simulation={"replicates": 40, "seed": 3, "block_days": 3})
    (tmp_path / "s.toml").write_text(text)
    result = CliRunner().invoke(app, ["run", str(tmp_path / "s.toml"), "--out", str(tmp_path / "out"),
                                      "--walk-forward"])
    assert result.exit_code == 0, result.output
    assert "Walk-forward" in result.output and "optimism" in result.output
    rows = pd.read_csv(tmp_path / "out" / "selection.csv")
    assert list(rows["period"]) == ["seasons before 2018", "season 2018", "seasons before 2019",
                                    "season 2019", "seasons before 2020", "season 2020"]


# ---- under operating rules ----------------------------------------------------------------------

def test_a_season_laid_on_its_own_calendar_is_itself():
    # common practice, no source: laying a past season on a calendar with exactly its dates must
    # give back its own occasions in order
    dates = np.arange(np.datetime64("2021-04-01"), np.datetime64("2021-05-01"))
    history = type("H", (), {})()
    history.season = np.full(dates.size, 2021)
    history.day_of_season = (dates - dates[0]).astype(np.int64)
    mask = np.ones(dates.size, dtype=bool)
    calendar = Calendar(year=2021, dates=dates, day_of_season=history.day_of_season)
    np.testing.assert_array_equal(_seasons_on_calendar(history, mask, calendar), np.arange(dates.size)[None, :])


def test_the_check_under_operating_rules_is_priced_by_the_rules():
    # The rules demo recommends a cutoff far below the fixed-cost break-even probability 0.72
    # (a stood-down dry day loses progress against a deadline); a check priced by the rules must
    # choose on the training seasons the way the rules do, not the way the fixed costs do.
    root = Path(__file__).resolve().parents[1] / "scenarios"
    result = run(read_scenario(root / "line_marking_rules.toml"), replicates=200)
    check = summary(result)["selection"]["validation"]
    assert check["chosen_cutoff"] < 0.6
    assert abs(check["chosen_cutoff"] - result.decision.recommended_cutoff) <= 0.15
    # a season under the rules costs about 1,700-1,800 EUR per calendar occasion in this demo (the
    # base run's mean season cost over its 183 occasions): the check prices on the same scale
    per_occasion = result.strategies["model"].mean / result.calendar.n_occasions
    assert check["validation"]["cost_per_occasion"] == pytest.approx(per_occasion, rel=0.25)
