"""Real histories for tests: open datasets that registry packages ship, turned into forecasts.

Nobody on the team wrote these series, so their calendars and quirks are real: trading days with
holidays, long histories, outcomes that are hard to forecast. Each history gets an *honest*
forecast: a logistic regression (scikit-learn) fitted, for each year, on the earlier years only,
then rounded to two decimals as forecast suppliers publish them. The columns are those a user
writes: ``date`` (ISO text, the occasion the forecast is for), ``probability`` and ``outcome`` (0/1).

Sources (each shipped inside a package on PyPI, read offline):

- ``arch.data.sp500``: daily S&P 500 index prices, 1999-2018, trading days only (the ``arch``
  package, K. Sheppard; data as the package ships it). Event: the index closes up on the day.
- ``arch.data.wti``: daily West Texas Intermediate crude oil spot price, 1986-2019 (``arch``;
  the package credits FRED series DCOILWTICO). Event: a move of 3% or more, either way.
- ``vega_datasets`` "seattle-weather": daily weather at Seattle, 2012-2015 (the vega-datasets
  package). Event: a day with precipitation.

Helpers only: no test asserts a value of these data sets that is not computed from them in the
test itself.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

__all__ = ["sp500_up", "wti_big_move", "seattle_rain", "with_noise_forecast", "to_history_frame"]


def _honest_logistic(frame: pd.DataFrame, features: list[str], outcome: str, first_years: int = 2) -> pd.DataFrame:
    """Probability of ``outcome`` for each row, from a logistic regression fitted on earlier years.

    Rows of the first ``first_years`` years only train the model and are dropped.
    """
    from sklearn.linear_model import LogisticRegression

    years = frame.index.year
    out = []
    for year in sorted(set(years))[first_years:]:
        train = years < year
        model = LogisticRegression(max_iter=1000)
        model.fit(frame.loc[train, features].to_numpy(), frame.loc[train, outcome].to_numpy())
        now = frame.loc[years == year]
        p = model.predict_proba(now[features].to_numpy())[:, 1]
        out.append(pd.DataFrame({"probability": np.round(p, 2), "outcome": now[outcome].astype(int).to_numpy()},
                                index=now.index))
    return pd.concat(out)


def to_history_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """A frame indexed by date as a user's history file: ISO ``date`` text, probability, outcome."""
    return pd.DataFrame({"date": frame.index.strftime("%Y-%m-%d"),
                         "probability": frame["probability"].to_numpy(),
                         "outcome": frame["outcome"].to_numpy()})


def sp500_up() -> pd.DataFrame:
    """Trading days 2001-2018: will the S&P 500 close up? (a forecast with little or no skill)."""
    sp500 = pytest.importorskip("arch.data.sp500")
    close = sp500.load()["Adj Close"]
    ret = np.log(close).diff()
    frame = pd.DataFrame({"up": (ret > 0).astype(int), "r1": ret.shift(1), "r5": ret.rolling(5).sum().shift(1),
                          "r20": ret.rolling(20).sum().shift(1)}).dropna()
    return to_history_frame(_honest_logistic(frame, ["r1", "r5", "r20"], "up"))


def wti_big_move(threshold: float = 0.03) -> pd.DataFrame:
    """Trading days 1988-2019: does the crude oil price move by ``threshold`` or more? (volatility
    clusters, so yesterday's moves give a forecast with real skill)."""
    wti = pytest.importorskip("arch.data.wti")
    price = wti.load()["DCOILWTICO"].dropna()
    price = price[price > 0]
    ret = np.log(price).diff()
    frame = pd.DataFrame({"move": (ret.abs() >= threshold).astype(int), "a1": ret.abs().shift(1),
                          "a5": ret.abs().rolling(5).mean().shift(1),
                          "a20": ret.abs().rolling(20).mean().shift(1)}).dropna()
    return to_history_frame(_honest_logistic(frame, ["a1", "a5", "a20"], "move"))


def seattle_rain() -> pd.DataFrame:
    """Every day 2013-2015: will it rain in Seattle? (yesterday's weather and the season give skill)."""
    local_data = pytest.importorskip("vega_datasets").local_data
    weather = local_data.seattle_weather().set_index("date")
    weather.index = pd.DatetimeIndex(weather.index)
    wet = (weather["precipitation"] > 0).astype(int)
    day = weather.index.dayofyear.to_numpy()
    frame = pd.DataFrame({"wet": wet, "wet1": wet.shift(1), "tmax1": weather["temp_max"].shift(1),
                          "range1": (weather["temp_max"] - weather["temp_min"]).shift(1),
                          "wind1": weather["wind"].shift(1),
                          "s": np.sin(2 * np.pi * day / 365.25), "c": np.cos(2 * np.pi * day / 365.25)},
                         index=weather.index).dropna()
    return to_history_frame(_honest_logistic(frame, ["wet1", "tmax1", "range1", "wind1", "s", "c"], "wet",
                                             first_years=1))


def with_noise_forecast(frame: pd.DataFrame, seed: int) -> pd.DataFrame:
    """The same outcomes with a forecast of pure noise: uniform probabilities, two decimals."""
    rng = np.random.default_rng(seed)
    return frame.assign(probability=np.round(rng.random(len(frame)), 2))
