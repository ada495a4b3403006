"""The priced season's calendar (resample.season_calendar) on daily, trading-day, weekly and
monthly histories, and ``[season] holidays``.

The occasions of the priced season come from the season's own calendar (the history's frequency,
filtered by the season's months, weekdays and holidays), never from the spacing of the history's
rows inside the season. Each count is checked against an independent count made here with pandas
(``date_range``/``bdate_range`` filtered in the test: pandas as the reference library). Real
histories come from datasets that ``arch`` and ``vega-datasets`` ship (tests/realdata.py).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from realdata import seattle_rain, sp500_up

from simulator.inputs.errors import InputError
from simulator.inputs.history import history_from_frame
from simulator.inputs.history_calendar import history_frequency
from simulator.replay.resample import season_calendar
from simulator.run import choose_mean_block, run_history

WEEKDAY_SETS = [["mon"], ["mon", "tue"], ["mon", "tue", "wed"], ["mon", "tue", "wed", "thu", "fri"]]
NUMBER = {"mon": 0, "tue": 1, "wed": 2, "thu": 3, "fri": 4, "sat": 5, "sun": 6}


@pytest.fixture(scope="module")
def trading_days():
    """The S&P 500 up/down history: trading days 2001-2018 (Monday to Friday less holidays)."""
    return sp500_up()


@pytest.fixture(scope="module")
def every_day():
    """Seattle's daily weather history: every day of 2014-2015."""
    return seattle_rain()


def _checked(frame: pd.DataFrame, scenario):
    """The history checked as read from history.csv."""
    return history_from_frame(frame, scenario, label="history.csv")


def _days(index) -> np.ndarray:
    """Dates from pandas as numpy days."""
    return pd.DatetimeIndex(index).to_numpy().astype("datetime64[D]")


def _expected(year: int, weekdays: list[str], months=range(1, 13), business_days_only=False,
              holidays=()) -> pd.DatetimeIndex:
    """The season's dates counted independently: pandas' calendar filtered here."""
    days = (pd.bdate_range if business_days_only else pd.date_range)(f"{year}-01-01", f"{year}-12-31")
    keep = days.day_of_week.isin([NUMBER[w] for w in weekdays]) & days.month.isin(list(months))
    keep &= ~days.isin(pd.DatetimeIndex(list(holidays)))
    return days[keep]


# ------------------------------------------------------------------------------------------------
# one, two, three and five weekdays


@pytest.mark.parametrize("weekdays", WEEKDAY_SETS, ids=lambda w: f"{len(w)} weekdays")
def test_weekdays_on_trading_days_price_every_such_weekday(weekdays, trading_days, make_scenario):
    # the history has no weekend rows, so its own calendar is Monday to Friday (pandas bdate_range)
    scenario = make_scenario(season={"weekdays": weekdays}, simulation={"replicates": 40})
    history = _checked(trading_days, scenario)
    assert history.frequency.is_daily and history.frequency.weekdays == (0, 1, 2, 3, 4)
    calendar = season_calendar(history, scenario.season)
    expected = _expected(calendar.year, weekdays, business_days_only=True)
    np.testing.assert_array_equal(calendar.dates, _days(expected))
    if weekdays == ["mon", "tue"]:
        assert calendar.n_occasions == 105  # 2019: 52 Mondays, 53 Tuesdays (it began on a Tuesday)
    result = run_history(scenario, history)
    assert result.model_cost.shape == (40, result.cutoffs.size)
    assert np.isfinite(result.model_cost).all()


@pytest.mark.parametrize("weekdays", WEEKDAY_SETS, ids=lambda w: f"{len(w)} weekdays")
def test_weekdays_on_a_daily_history_price_every_such_weekday(weekdays, every_day, make_scenario):
    scenario = make_scenario(season={"weekdays": weekdays, "months": [4, 5, 6, 7, 8, 9, 10]},
                             simulation={"replicates": 40})
    history = _checked(every_day, scenario)
    assert history.frequency.describe() == "daily"
    calendar = season_calendar(history, scenario.season)
    expected = _expected(calendar.year, weekdays, months=range(4, 11))
    np.testing.assert_array_equal(calendar.dates, _days(expected))
    result = run_history(scenario, history)
    assert np.isfinite(result.model_cost).all()


def test_a_run_of_block_days_spans_that_many_days_of_the_seasons_spacing(every_day, make_scenario):
    # a season of Mondays has its occasions 7 days apart: a 14-day run is 2 occasions; on a season
    # of weekdays the usual spacing is one day (the weekend gap is not the usual one)
    mondays = make_scenario(season={"weekdays": ["mon"]}, simulation={"block_days": 14})
    history = _checked(every_day, mondays)
    calendar = season_calendar(history, mondays.season)
    assert calendar.spacing_days == 7
    assert choose_mean_block(history, [mondays], calendar) == 2
    workdays = make_scenario(season={"weekdays": ["mon", "tue", "wed", "thu", "fri"]},
                             simulation={"block_days": 14})
    calendar = season_calendar(_checked(every_day, workdays), workdays.season)
    assert calendar.spacing_days == 1


# ------------------------------------------------------------------------------------------------
# weekly and monthly histories


def _sparse_frame(dates: pd.DatetimeIndex, seed: int = 11) -> pd.DataFrame:
    """Invented rows on the given dates: probability uniform, outcome drawn from it."""
    rng = np.random.default_rng(seed)
    p = np.round(rng.random(dates.size), 2)
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": p,
                         "outcome": (rng.random(dates.size) < p).astype(int)})


@pytest.mark.parametrize("freq, day", [("MS", 1), ("ME", 0)])  # the first, or the last day of the month
def test_a_monthly_history_is_priced_by_month(freq, day, make_scenario):
    frame = _sparse_frame(pd.date_range("2012-01-01", "2021-12-31", freq=freq))
    scenario = make_scenario(season={"months": [10, 11, 12, 1, 2, 3]}, simulation={"replicates": 40})
    history = _checked(frame, scenario)
    assert history.frequency.kind == "monthly" and history.frequency.day_of_month == day
    calendar = season_calendar(history, scenario.season)
    # the history's last season starts in October 2021 (it has its October to December), so the
    # priced one starts in October 2022; one occasion a month, on the day the history's rows fall on
    expected = pd.date_range("2022-10-01", "2023-03-31", freq=freq)
    np.testing.assert_array_equal(calendar.dates, _days(expected))
    assert calendar.n_occasions == 6
    result = run_history(scenario, history)
    assert np.isfinite(result.model_cost).all()
    assert history.warnings == ()


def test_a_weekly_history_is_priced_on_its_own_weekday(make_scenario):
    frame = _sparse_frame(pd.date_range("2015-01-07", "2022-12-28", freq="7D"))  # Wednesdays
    scenario = make_scenario(season={"months": [4, 5, 6, 7, 8, 9]}, simulation={"replicates": 40})
    history = _checked(frame, scenario)
    assert history.frequency.kind == "weekly"
    calendar = season_calendar(history, scenario.season)
    expected = _expected(2023, ["wed"], months=range(4, 10))
    np.testing.assert_array_equal(calendar.dates, _days(expected))
    assert np.isfinite(run_history(scenario, history).model_cost).all()


def test_twice_a_month_is_not_monthly():
    assert history_frequency(_days(pd.date_range("2012-01-01", "2021-12-31", freq="SMS"))).kind != "monthly"


def test_a_row_every_other_day_is_not_daily():
    dates = _days(pd.date_range("2020-01-01", "2022-12-31", freq="2D"))
    frequency = history_frequency(dates)
    assert (frequency.kind, frequency.step_days) == ("steady", 2)


@pytest.mark.parametrize("freq", ["7D", "MS"])
def test_weekdays_on_a_history_that_is_not_daily_are_refused_in_one_line(freq, make_scenario):
    frame = _sparse_frame(pd.date_range("2012-01-02", "2021-12-31", freq=freq))
    scenario = make_scenario(season={"weekdays": ["mon", "tue"]})
    with pytest.raises(InputError) as caught:
        _checked(frame, scenario)
    message = str(caught.value)
    assert "\n" not in message
    assert "[season] weekdays:" in message and "daily data only; leave weekdays out of [season]" in message


def test_weekdays_the_history_has_no_rows_on_are_refused_in_one_line(trading_days, make_scenario):
    scenario = make_scenario(season={"weekdays": ["sat", "sun"]})
    with pytest.raises(InputError) as caught:
        _checked(trading_days, scenario)
    assert str(caught.value) == ("scenario [season] weekdays: history.csv has rows daily on mon, tue, wed, "
                                 "thu, fri only, none on sat, sun; choose weekdays it has rows on")


# ------------------------------------------------------------------------------------------------
# [season] holidays


def test_season_holidays_are_not_occasions(every_day, make_scenario):
    holidays = ["2016-05-30", "2016-07-04", "2016-12-25"]  # the last is a Sunday: not a weekday
    scenario = make_scenario(season={"weekdays": ["mon", "tue", "wed", "thu", "fri"], "holidays": holidays},
                             simulation={"replicates": 40})
    history = _checked(every_day, scenario)
    calendar = season_calendar(history, scenario.season)
    expected = _expected(2016, ["mon", "tue", "wed", "thu", "fri"], holidays=holidays)
    np.testing.assert_array_equal(calendar.dates, _days(expected))
    assert calendar.n_occasions == _expected(2016, ["mon", "tue", "wed", "thu", "fri"]).size - 2


def test_history_rows_on_season_holidays_are_not_evaluated(every_day, make_scenario):
    scenario = make_scenario(season={"holidays": ["2014-12-25", "2015-01-01"]})
    history = _checked(every_day, scenario)
    dates = pd.to_datetime(every_day["date"])
    skipped = dates.isin(pd.to_datetime(["2014-12-25", "2015-01-01"])).to_numpy()
    np.testing.assert_array_equal(history.evaluated, ~skipped)


def test_a_priced_trading_year_with_its_holidays_has_the_historys_number_of_rows(trading_days,
                                                                                  make_scenario):
    # price 2018 itself, listing as holidays the weekdays of 2018 on which the market did not trade
    # (those without a row in the file): the priced season then has exactly the file's 2018 rows
    dates = pd.to_datetime(trading_days["date"])
    rows_2018 = dates[dates.dt.year == 2018]
    closed = pd.bdate_range("2018-01-01", "2018-12-31").difference(pd.DatetimeIndex(rows_2018))
    assert 8 <= closed.size <= 11  # US market holidays are about nine a year (from memory)
    scenario = make_scenario(season={"year": 2018, "holidays": list(closed.strftime("%Y-%m-%d"))})
    calendar = season_calendar(_checked(trading_days, scenario), scenario.season)
    np.testing.assert_array_equal(calendar.dates, _days(rows_2018))


def test_missing_trading_days_point_to_season_holidays(trading_days, make_scenario):
    history = _checked(trading_days, make_scenario())
    (warning,) = history.warnings
    assert "dates inside the season have no row" in warning
    assert "they look like holidays" in warning and "[season] holidays" in warning


def test_listing_the_historys_holidays_silences_the_gap_warning(trading_days, make_scenario):
    dates = pd.DatetimeIndex(pd.to_datetime(trading_days["date"]))
    closed = pd.bdate_range(dates[0], dates[-1]).difference(dates)
    scenario = make_scenario(season={"holidays": list(closed.strftime("%Y-%m-%d"))})
    assert _checked(trading_days, scenario).warnings == ()


def test_a_gap_of_many_days_is_not_taken_for_holidays(every_day, make_scenario):
    frame = every_day.drop(index=range(100, 130))  # a month without rows
    (warning,) = _checked(frame, make_scenario()).warnings
    assert warning.endswith("the replay joins across the gaps")
    assert "holidays" not in warning


def test_the_report_names_the_days_priced_and_the_holidays_skipped(trading_days, make_scenario):
    from types import SimpleNamespace

    from simulator.account.scenario_words import _occasion_days

    # 2019-01-01 (a Tuesday) and 2019-01-21 (a Monday) are occasions of a Monday-Tuesday season;
    # 2019-07-04 (a Thursday) is not, so it takes nothing out
    scenario = make_scenario(season={"holidays": ["2019-01-01", "2019-01-21", "2019-07-04"],
                                     "weekdays": ["mon", "tue", "sat"]})
    history = _checked(trading_days, scenario)
    calendar = season_calendar(history, scenario.season)
    np.testing.assert_array_equal(calendar.holidays, _days(pd.to_datetime(["2019-01-01", "2019-01-21"])))
    shown = _occasion_days(SimpleNamespace(history=history, scenario=scenario, calendar=calendar))
    assert shown == "Monday, Tuesday, less 2 holidays"  # no Saturday: the market has no Saturday rows


def test_a_weekly_history_missing_weeks_names_them_on_its_own_calendar(make_scenario):
    dates = pd.date_range("2015-01-07", "2022-12-28", freq="7D")  # Wednesdays
    frame = _sparse_frame(dates).drop(index=[30, 31])
    (warning,) = _checked(frame, make_scenario()).warnings
    assert warning == (f"history.csv: 2 dates of its weekly calendar inside the season have no row "
                       f"({dates[30].date()}, {dates[31].date()}); the replay joins across the gaps")


def test_listing_only_past_holidays_warns_that_the_priced_season_keeps_its_own(every_day, make_scenario):
    scenario = make_scenario(season={"holidays": ["2014-12-25", "2015-12-25"]}, simulation={"replicates": 20})
    result = run_history(scenario, _checked(every_day, scenario))
    assert ("scenario [season] holidays: none of the 2 dates is a date of the priced 2016 season, which keeps "
            "its own holidays as occasions; list them too") in result.warnings
    listed = make_scenario(season={"holidays": ["2015-12-25", "2016-12-25"]}, simulation={"replicates": 20})
    assert not any("[season] holidays" in w for w in run_history(listed, _checked(every_day, listed)).warnings)
