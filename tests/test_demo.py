"""The invented demo data: golden files, the scenario symlink, and the design of the generators.

The skill and seasonality checks below test that the demo data look the way
``simulator/demo.py`` says they were designed to look. The data are invented; passing these
tests says nothing about any real forecast. Reference values for the scores come from
scikit-learn (``roc_auc_score``, ``brier_score_loss``), not from our own code.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from sklearn.metrics import brier_score_loss, roc_auc_score

from simulator.demo import generator as demo

REPO = Path(__file__).resolve().parent.parent
SCENARIOS = REPO / "scenarios"
PACKAGE_DATA = REPO / "simulator" / "demo" / "data"

WET_MONTHS = [11, 12, 1, 2]
DRY_MONTHS = [6, 7, 8]
FLOOD_SEASON = [10, 11, 12, 1, 2, 3]


@pytest.fixture(scope="module")
def line_marking():
    return demo.line_marking_history()


@pytest.fixture(scope="module")
def river():
    return demo.river_history()


def _month(history: pd.DataFrame) -> np.ndarray:
    return pd.to_datetime(history["date"], format="%Y-%m-%d").dt.month.to_numpy()


def _brier_skill(y: np.ndarray, p: np.ndarray, reference: np.ndarray) -> float:
    # BSS = 1 - BS / BS_reference (Wilks, Statistical Methods in the Atmospheric Sciences,
    # ch. "Forecast verification", skill scores; from memory, check edition and section)
    return 1.0 - brier_score_loss(y, p) / brier_score_loss(y, reference)


# ---- golden files and package data --------------------------------------------------------


@pytest.mark.parametrize(
    ("file_name", "generator"),
    [
        ("line_marking_history.csv", demo.line_marking_history),
        ("river_pumps_history.csv", demo.river_history),
        ("gritting_depots_history.csv", demo.gritting_history),
    ],
)
def test_committed_history_equals_generator_byte_for_byte(file_name, generator):
    committed = (SCENARIOS / file_name).read_bytes()
    assert committed == demo.history_csv_bytes(generator()), (
        f"scenarios/{file_name} differs from simulator.demo.generator; if the change is intended, run "
        "scenarios/regenerate.py and review the diff"
    )


def test_generators_are_deterministic_and_seed_dependent():
    first = demo.line_marking_history()
    assert first.equals(demo.line_marking_history())
    assert not first.equals(demo.line_marking_history(seed=1))
    assert demo.river_history().equals(demo.river_history())


def test_scenario_symlink_is_relative_and_resolves_to_package_data():
    link = SCENARIOS / "line_marking.toml"
    assert link.is_symlink()
    assert not Path(link.readlink()).is_absolute()
    assert link.resolve() == (PACKAGE_DATA / "line_marking.toml").resolve()


def test_write_demo_files_writes_scenario_and_history_it_names(tmp_path, line_marking):
    scenario_path = demo.write_demo_files(tmp_path / "demo")
    assert scenario_path.read_bytes() == (PACKAGE_DATA / "line_marking.toml").read_bytes()
    scenario = tomllib.loads(scenario_path.read_text(encoding="utf-8"))
    history_path = scenario_path.parent / scenario["history"]["path"]
    assert history_path.read_bytes() == demo.history_csv_bytes(line_marking)
    expected = sorted(demo.DEMO_FILES.values())
    assert sorted(p.name for p in scenario_path.parent.iterdir()) == expected
    demo.write_demo_files(tmp_path / "demo")  # writing again replaces, leaves no temporary files
    assert sorted(p.name for p in scenario_path.parent.iterdir()) == expected


@pytest.mark.parametrize("file_name", ["line_marking.toml", "river_pumps.toml", "gritting_depots.toml"])
def test_scenario_names_existing_columns_and_stated_break_even(file_name):
    scenario_path = SCENARIOS / file_name
    scenario = tomllib.loads(scenario_path.read_text(encoding="utf-8"))
    history = pd.read_csv(scenario_path.parent / scenario["history"]["path"], nrows=5)
    section = scenario["history"]
    named = [section[k] for k in ("date_column", "probability_column", "outcome_column",
                                  "value_column", "site_column") if k in section]
    assert set(named) <= set(history.columns)
    c = scenario["costs"]
    # break-even p* = (c_fa - c_cn) / ((c_fa - c_cn) + (c_m - c_h)): Elkan (2001), "The
    # Foundations of Cost-Sensitive Learning", IJCAI-01; the comment in each file states it.
    cost = c["false_alarm"] - c["correct_negative"]
    loss = c["miss"] - c["hit"]
    assert cost > 0 and loss > 0  # Elkan's "reasonableness": neither action always best
    p_star = cost / (cost + loss)
    assert f"= {p_star:.2f}" in scenario_path.read_text(encoding="utf-8") or (
        f"= {p_star:.3f}" in scenario_path.read_text(encoding="utf-8")
    )


# ---- the line-marking design: seasonality, skill, overconfidence ---------------------------


def test_line_marking_covers_ten_years_daily_with_consistent_amounts(line_marking):
    assert list(line_marking.columns) == ["date", "rain_probability", "premium_rain_probability", "rain", "rain_mm"]
    assert line_marking["date"].iloc[0] == "2017-01-01"
    assert line_marking["date"].iloc[-1] == "2026-12-31"
    assert len(line_marking) == 3652  # 365 x 10 + two leap days (2020, 2024)
    wet = line_marking["rain"] == 1
    assert (line_marking.loc[wet, "rain_mm"] >= 1.0).all()  # wet day = at least 1.0 mm
    assert (line_marking.loc[~wet, "rain_mm"] == 0.0).all()
    p = line_marking["rain_probability"]
    assert p.between(0.01, 0.99).all()


def test_line_marking_is_wetter_in_winter_than_in_summer(line_marking):
    rate = line_marking.groupby(_month(line_marking))["rain"].mean()
    assert 0.40 <= rate[WET_MONTHS].mean() <= 0.56  # designed ~0.45-0.55 in winter
    assert 0.18 <= rate[DRY_MONTHS].mean() <= 0.30  # designed ~0.20-0.30 in summer
    assert rate[WET_MONTHS].min() > rate[DRY_MONTHS].max()


def test_line_marking_wet_days_persist(line_marking):
    y = line_marking["rain"].to_numpy()
    wet_after_wet = y[1:][y[:-1] == 1].mean()
    wet_after_dry = y[1:][y[:-1] == 0].mean()
    assert 0.2 <= wet_after_wet - wet_after_dry <= 0.45  # designed p11 - p01 ~ 0.31-0.34


def test_line_marking_forecast_has_designed_skill(line_marking):
    y = line_marking["rain"].to_numpy()
    p = line_marking["rain_probability"].to_numpy()
    monthly_climate = line_marking.groupby(_month(line_marking))["rain"].transform("mean")
    assert 0.80 <= roc_auc_score(y, p) <= 0.88
    assert 0.20 <= _brier_skill(y, p, monthly_climate.to_numpy()) <= 0.35


def test_line_marking_forecast_is_overconfident_at_both_ends(line_marking):
    # Reliability-diagram reading (Wilks, Statistical Methods in the Atmospheric Sciences,
    # reliability diagrams; from memory): overconfident forecasts verify below their face value
    # at the top and above it at the bottom.
    y = line_marking["rain"].to_numpy()
    p = line_marking["rain_probability"].to_numpy()
    top, bottom = p >= 0.9, p <= 0.1
    assert top.sum() > 100 and bottom.sum() > 100
    assert y[top].mean() < p[top].mean() - 0.02
    assert y[bottom].mean() > p[bottom].mean() + 0.02


def test_line_marking_premium_forecast_is_sharper_and_calibrated(line_marking):
    # the paid supplier's forecast (simulator.demo.generator._premium_forecast): a sharper signal
    # than the national service's, and no overstatement, so it verifies at its face value at both
    # ends (reliability-diagram reading as above; scores by scikit-learn)
    y = line_marking["rain"].to_numpy()
    national = line_marking["rain_probability"].to_numpy()
    premium = line_marking["premium_rain_probability"].to_numpy()
    monthly_climate = line_marking.groupby(_month(line_marking))["rain"].transform("mean").to_numpy()
    assert roc_auc_score(y, premium) >= roc_auc_score(y, national) + 0.05
    assert brier_score_loss(y, premium) < brier_score_loss(y, national) - 0.03
    assert 0.40 <= _brier_skill(y, premium, monthly_climate) <= 0.52
    top, bottom = premium >= 0.9, premium <= 0.1
    assert top.sum() > 100 and bottom.sum() > 100
    assert abs(y[top].mean() - premium[top].mean()) < 0.02
    assert abs(y[bottom].mean() - premium[bottom].mean()) < 0.02


def test_line_marking_premium_forecast_is_drawn_on_its_own_stream(line_marking, monkeypatch):
    # adding the paid forecast changed none of the national service's numbers: without it (its
    # drawing replaced by a constant) the other columns come out the same
    monkeypatch.setattr(demo, "_premium_forecast", lambda wet, prior, seed: np.zeros(wet.size))
    without = demo.line_marking_history()
    columns = ["date", "rain_probability", "rain", "rain_mm"]
    pd.testing.assert_frame_equal(without[columns], line_marking[columns])


# ---- the river design: seasonal, persistent, rare exceedances, skilful forecast -------------


def test_river_covers_twelve_flood_seasons(river):
    assert list(river.columns) == ["date", "prob_above_warning", "peak_level_m"]
    assert river["date"].iloc[0] == "2014-10-01"
    assert river["date"].iloc[-1] == "2026-09-30"
    assert river["prob_above_warning"].between(0.0, 1.0).all()


def test_river_exceedances_are_rare_and_in_the_flood_season(river):
    above = (river["peak_level_m"] > demo.WARNING_LEVEL_M).to_numpy()
    in_season = np.isin(_month(river), FLOOD_SEASON)
    assert above[in_season].sum() >= 40
    assert 0.03 <= above[in_season].mean() <= 0.08
    assert 1 <= above[~in_season].sum() <= 15  # near zero outside the season, but a few


def test_river_level_is_persistent_and_high_in_winter(river):
    level = river["peak_level_m"].to_numpy()
    assert np.corrcoef(level[1:], level[:-1])[0, 1] > 0.8
    mean_by_month = river.groupby(_month(river))["peak_level_m"].mean()
    assert mean_by_month[[12, 1, 2]].mean() > mean_by_month[[6, 7, 8]].mean() + 0.5


def test_river_forecast_is_skilful_but_imperfect(river):
    y = (river["peak_level_m"] > demo.WARNING_LEVEL_M).to_numpy().astype(int)
    p = river["prob_above_warning"].to_numpy()
    climate = np.full(y.size, y.mean())
    assert 0.90 <= roc_auc_score(y, p) < 0.99
    assert 0.35 <= _brier_skill(y, p, climate) <= 0.75
    high = p >= 0.7
    assert y[high].mean() < p[high].mean()  # high probabilities verify below face value


# ---- the gritting depots: many sites that share their weather -------------------------------


@pytest.fixture(scope="module")
def gritting():
    return demo.gritting_history()


def test_gritting_has_five_depots_nightly_in_winter_with_one_outage(gritting):
    assert list(gritting.columns) == ["date", "depot", "ice_probability", "ice", "road_temp_c"]
    assert list(gritting["depot"].unique()) == list(demo.GRITTING_DEPOTS)
    nights = gritting.groupby("depot").size()
    assert (nights.drop("Tarnbeck Lane") == 1210).all()  # 8 x 151 nights + 2 leap days
    assert nights["Tarnbeck Lane"] == 1201  # the feed was down for nine nights
    assert set(_month(gritting)) == {11, 12, 1, 2, 3}
    assert (gritting.loc[gritting["ice"] == 1, "road_temp_c"] < 0).all()  # ice needs a frozen road


def test_gritting_ice_is_commonest_on_the_fell_and_rarest_on_the_coast(gritting):
    rate = gritting.groupby("depot")["ice"].mean()
    assert rate.idxmax() == "Scarth Top" and rate.idxmin() == "Gannetholm Harbour"
    assert 0.25 <= rate["Scarth Top"] <= 0.36 and 0.06 <= rate["Gannetholm Harbour"] <= 0.12


def test_gritting_depots_have_ice_on_the_same_nights(gritting):
    # designed shared cold spells and showers: the depots' ice series correlate at 0.35-0.55
    wide = gritting.pivot(index="date", columns="depot", values="ice")
    correlation = wide.corr().to_numpy()
    off_diagonal = correlation[~np.eye(len(wide.columns), dtype=bool)]
    assert off_diagonal.min() > 0.3 and off_diagonal.max() < 0.65
    both = wide["Pellisford"][wide["Ferrowby Moor"] == 1].mean()
    assert both > 2.5 * wide["Pellisford"].mean()


def test_gritting_forecasts_are_skilful_and_about_calibrated(gritting):
    for depot, rows in gritting.groupby("depot"):
        y, p = rows["ice"].to_numpy(), rows["ice_probability"].to_numpy()
        assert 0.75 <= roc_auc_score(y, p) <= 0.96, depot
        assert abs(p.mean() - y.mean()) < 0.03, depot  # calibrated by construction
