"""Reading a history: the three ways a binary outcome arises, flip, seasons and periods.

The rules checked here are issue 2 section 1's; where a rule is the project's own reading of
common practice it says so. Data are small invented frames.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from simulator.inputs.errors import InputError
from simulator.inputs.history import MIN_CLASS_COUNT, read_history
from simulator.inputs.history_calendar import season_start_month


def _frame(n=40, start="2021-03-01", **columns):
    """n daily rows; probability 0.1, 0.2, ..., 0.9 repeating; outcome alternating 1, 0 unless given."""
    dates = pd.date_range(start, periods=n, freq="D").strftime("%Y-%m-%d")
    frame = pd.DataFrame({"date": dates, "probability": np.round(0.1 + 0.1 * (np.arange(n) % 9), 1),
                          "outcome": np.arange(n) % 2 == 0})
    frame["outcome"] = frame["outcome"].astype(int)
    for name, values in columns.items():
        frame[name] = values
    return frame


# ------------------------------------------------------------------------------------------------
# the outcome given directly


@pytest.mark.parametrize("yes, no", [("1", "0"), ("true", "false"), ("yes", "no"), ("Yes", "No"),
                                     ("TRUE", "FALSE"), ("1.0", "0.0")])
def test_outcome_words_for_yes_and_no_all_read_the_same(yes, no, make_history):
    frame = _frame()
    expected = frame["outcome"].to_numpy() == 1
    frame["outcome"] = np.where(expected, yes, no)
    history = make_history(frame)
    np.testing.assert_array_equal(history.event, expected)
    assert history.evaluated.all()


def test_outcome_column_name_comes_from_the_scenario(make_history):
    frame = _frame().rename(columns={"outcome": "wet", "probability": "p_rain", "date": "day"})
    history = make_history(frame, history={"outcome_column": "wet", "probability_column": "p_rain",
                                           "date_column": "day"})
    assert history.event.sum() == 20
    np.testing.assert_allclose(history.p[:3], [0.1, 0.2, 0.3])


# ------------------------------------------------------------------------------------------------
# the outcome derived from a numeric column


def test_threshold_above_counts_values_reaching_the_threshold(make_history):
    # "rain at least 1.0 mm" (issue 2 section 1): a value equal to the threshold is an event
    rain_mm = np.tile([0.0, 0.4, 1.0, 3.2, 0.99], 8)
    frame = _frame(rain_mm=rain_mm).drop(columns="outcome")
    history = make_history(frame, history={"value_column": "rain_mm", "threshold": 1.0, "side": "above"})
    np.testing.assert_array_equal(history.event, rain_mm >= 1.0)
    assert history.evaluated.all()


def test_threshold_below_is_the_exact_complement_of_above(make_history):
    level = np.tile([2.0, 3.2, 3.5, 1.0, 3.19], 8)
    frame = _frame(level=level).drop(columns="outcome")
    above = make_history(frame, history={"value_column": "level", "threshold": 3.2, "side": "above"})
    below = make_history(frame, history={"value_column": "level", "threshold": 3.2, "side": "below"})
    np.testing.assert_array_equal(below.event, level < 3.2)
    np.testing.assert_array_equal(below.event, ~above.event)


@pytest.mark.parametrize("direction", ["up", "down"])
def test_direction_compares_with_the_previous_occasion_and_drops_the_first(direction, make_history):
    rng = np.random.default_rng(5)
    price = np.round(100 + np.cumsum(rng.normal(size=40)), 1)
    price[10] = price[9]  # no change: neither up nor down
    frame = _frame(price=price).drop(columns="outcome")
    history = make_history(frame, history={"value_column": "price", "direction": direction})
    change = np.diff(price)
    expected = change > 0 if direction == "up" else change < 0
    np.testing.assert_array_equal(history.event[1:], expected)
    assert not history.evaluated[0] and history.evaluated[1:].all()  # the first has no previous
    assert not history.event[10]
    assert history.n_evaluated == 39


def test_missing_value_names_the_value_column(make_history):
    frame = _frame(level=np.linspace(1, 4, 40)).drop(columns="outcome").astype(str)
    frame.loc[6, "level"] = ""
    with pytest.raises(InputError, match=r'row 8, column "level": the value is missing'):
        make_history(frame, history={"value_column": "level", "threshold": 3.2, "side": "above"})


# ------------------------------------------------------------------------------------------------
# flip: the class of interest is the complement


def test_flip_turns_p_into_one_minus_p_and_the_outcome_into_its_complement(make_history):
    frame = _frame()
    plain = make_history(frame)
    flipped = make_history(frame, event={"name": "dry", "flip": True})
    np.testing.assert_allclose(flipped.p, 1.0 - plain.p)
    np.testing.assert_array_equal(flipped.event, ~plain.event)
    np.testing.assert_array_equal(flipped.prev_event[1:], ~plain.event[:-1])  # persistence follows


def test_flip_applies_to_a_derived_outcome_too(make_history):
    rain_mm = np.tile([0.0, 2.5, 0.2, 1.0], 10)
    frame = _frame(rain_mm=rain_mm).drop(columns="outcome")
    dry = make_history(frame, history={"value_column": "rain_mm", "threshold": 1.0, "side": "above"},
                       event={"name": "dry", "flip": True})
    np.testing.assert_array_equal(dry.event, rain_mm < 1.0)


def test_flipped_class_count_is_checked_on_the_named_class(make_history):
    frame = _frame()
    frame["outcome"] = 1
    frame.loc[[3, 9, 27], "outcome"] = 0  # 3 dry days
    with pytest.raises(InputError, match='the evaluated period has 3 "dry" occasions, fewer than 5'):
        make_history(frame, event={"name": "dry", "flip": True})


# ------------------------------------------------------------------------------------------------
# seasons and periods


@pytest.mark.parametrize("months, start", [
    ((4, 5, 6, 7, 8, 9, 10), 4),
    ((10, 11, 12, 1, 2, 3), 10),
    ((1, 2, 3, 10, 11, 12), 10),  # any order
    ((12, 1, 2), 12),
    ((6,), 6),
    (tuple(range(1, 13)), 1),
])
def test_season_starts_after_its_longest_gap_in_the_calendar(months, start):
    assert season_start_month(months) == start


def test_season_wrapping_the_new_year_is_labelled_by_its_starting_year(make_history):
    frame = _frame(n=610, start="2020-09-01")  # 2020-09-01 to 2022-05-03
    history = make_history(frame, season={"months": [10, 11, 12, 1, 2, 3]})
    labels = dict(zip(frame["date"], history.season))
    assert labels["2020-09-30"] == -1 and labels["2020-10-01"] == 2020
    assert labels["2021-01-01"] == 2020 and labels["2021-03-31"] == 2020
    assert labels["2021-04-01"] == -1 and labels["2021-09-30"] == -1
    assert labels["2021-10-01"] == 2021 and labels["2022-02-28"] == 2021
    days = dict(zip(frame["date"], history.day_of_season))
    assert days["2020-10-01"] == 0 and days["2021-01-01"] == 31 + 30 + 31  # Oct, Nov, Dec
    np.testing.assert_array_equal(history.seasons, [2020, 2021])
    assert history.n_evaluated == (31 + 30 + 31 + 31 + 28 + 31) + (31 + 30 + 31 + 31 + 28 + 31)
    assert str(history.start) == "2020-10-01" and str(history.end) == "2022-03-31"


def test_weekdays_limit_the_evaluated_occasions(make_history):
    frame = _frame(n=70, start="2021-03-01")  # a Monday
    history = make_history(frame, season={"weekdays": ["mon", "tue", "wed", "thu", "fri"]})
    weekday = pd.to_datetime(frame["date"]).dt.day_of_week.to_numpy()
    np.testing.assert_array_equal(history.evaluated, weekday < 5)
    assert history.n_evaluated == 50


def test_validation_period_starts_on_validation_from(make_history):
    frame = _frame(n=80)
    history = make_history(frame, history={"validation_from": "2021-04-10"})
    dates = frame["date"].to_numpy()
    np.testing.assert_array_equal(history.validation, dates >= "2021-04-10")
    np.testing.assert_array_equal(history.training, dates < "2021-04-10")
    assert history.has_validation


def test_weekly_history_is_weekly(make_history):
    frame = _frame(n=60)
    frame["date"] = pd.date_range("2019-01-07", periods=60, freq="7D").strftime("%Y-%m-%d")
    history = make_history(frame)
    assert history.frequency.kind == "weekly" and history.frequency.step_days == 7
    assert history.warnings == ()


def test_minimum_class_count_is_five():
    # issue 2 section 1: "a class ... with fewer than 5 occasions in the evaluated period"
    assert MIN_CLASS_COUNT == 5


def test_five_occasions_of_a_class_are_enough(make_history):
    frame = _frame()
    frame["outcome"] = 0
    frame.loc[[1, 8, 15, 22, 29], "outcome"] = 1
    assert make_history(frame).event.sum() == 5


# ------------------------------------------------------------------------------------------------
# files


def test_csv_and_parquet_read_the_same(write_history, make_scenario, history_frame):
    scenario = make_scenario()
    from_csv = read_history(scenario, write_history(history_frame))
    from_parquet = read_history(scenario, write_history(history_frame, "history.parquet"))
    for name in ("dates", "p", "event", "evaluated", "season", "day_of_season"):
        np.testing.assert_array_equal(getattr(from_csv, name), getattr(from_parquet, name))


def test_spaces_after_commas_and_trailing_blank_lines_are_tolerated(write_history, make_scenario,
                                                                      history_frame):
    text = history_frame.head(60).to_csv(index=False, lineterminator="\n").replace(",", ", ")
    history = read_history(make_scenario(), write_history(text + "\n\n"))
    assert history.n_rows == 60


def test_history_path_is_relative_to_the_scenario_file(write_history, write_scenario, history_frame):
    from simulator.inputs.scenario import read_scenario

    write_history(history_frame)
    scenario = read_scenario(write_scenario())
    history = read_history(scenario)
    assert history.n_rows == len(history_frame)
    assert len(history.sha256) == 64
