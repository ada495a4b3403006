"""Invented demo histories: forecasts and outcomes for two fictional operations.

Both histories are made up, for demonstrations and golden-file tests only; they are not evidence
about any real weather, river or forecaster. The settings are fictional:

- Ferrowby Stripe Works, a road line-marking contractor in the coastal town of Gannetholm, gets a
  daily probability of rain free from the national weather service (a paid supplier offers a
  sharper one) and decides each evening whether to send its three crews out the next day
  (``line_marking_history``).
- The Vantle Vale Water Board keeps mobile pumps at its Pellisford flood-defence depot and gets a
  daily probability that the River Vantle at Pellisford Weir gauge peaks above the 3.2 m warning
  level (``river_history``).
- Skerrick Roads, the winter highway contractor for the same fictional coast, grits the roads from
  five depots and gets each evening, per depot, a road-weather supplier's probability of ice on the
  roads overnight (``gritting_history``: many sites that share their weather).

Functions here are pure: they return data frames and never print. ``write_demo_files`` and
``write_history_csv`` are the only functions that touch files; they write to a temporary name in
the target folder and rename it into place.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pandas as pd
from scipy.signal import lfilter
from scipy.special import expit, logit, ndtr

__all__ = [
    "DEMO_FILES",
    "WARNING_LEVEL_M",
    "line_marking_history",
    "river_history",
    "GRITTING_DEPOTS",
    "gritting_history",
    "history_csv_bytes",
    "write_history_csv",
    "write_demo_files",
]

DATA_FOLDER = Path(__file__).parent / "data"

DEMO_FILES = {
    "scenario": "line_marking.toml",  # copied verbatim from simulator/demo/data/
    "history": "line_marking_history.csv",  # written by line_marking_history()
}

WARNING_LEVEL_M = 3.2  # Pellisford Weir gauge warning level, metres

_YEAR_DAYS = 365.25


def _seasonal_wave(day_of_year: np.ndarray, peak_day: float) -> np.ndarray:
    """cos of the season, +1 on ``peak_day`` of the year and -1 half a year later."""
    return np.cos(2.0 * np.pi * (day_of_year - peak_day) / _YEAR_DAYS)


def _wet_dry_chain(p_dry_to_wet: np.ndarray, p_wet_to_wet: np.ndarray, rng) -> np.ndarray:
    """A two-state (dry/wet) Markov chain with day-varying transition probabilities.

    Day 0 is drawn from the stationary wet share of day 0's transition probabilities,
    p01 / (1 - p11 + p01). Returns a bool array, True on wet days. The loop is the one truly
    sequential step; it is a few thousand cheap iterations.
    """
    n_days = p_dry_to_wet.size
    u = rng.random(n_days)
    wet = np.zeros(n_days, dtype=bool)
    stationary = p_dry_to_wet[0] / (1.0 - p_wet_to_wet[0] + p_dry_to_wet[0])
    state = bool(u[0] < stationary)
    wet[0] = state
    for t in range(1, n_days):
        state = bool(u[t] < (p_wet_to_wet[t] if state else p_dry_to_wet[t]))
        wet[t] = state
    return wet


def line_marking_history(seed: int = 20270101) -> pd.DataFrame:
    """Ten years of invented daily rain forecasts and outcomes, Ferrowby Stripe Works, Gannetholm.

    One row a day, 2017-01-01 to 2026-12-31 (3652 rows). Columns: ``date`` (ISO yyyy-mm-dd),
    ``rain_probability`` (the national weather service's free probability of a wet day on that
    date, 2 decimals), ``premium_rain_probability`` (a paid supplier's sharper one, 2 decimals),
    ``rain`` (1 on a wet day: at least 1.0 mm, else 0) and ``rain_mm`` (1 decimal, 0.0 on dry days).

    Generator, in the order the random numbers are drawn from ``numpy.random.default_rng(seed)``:

    1. Occurrence: a dry/wet Markov chain with, on day of year d and seasonal wave
       s = cos(2 pi (d - 10) / 365.25) (wettest around 10 January), P(wet | dry yesterday)
       p01 = 0.235 + 0.085 s and P(wet | wet yesterday) p11 = 0.56 + 0.10 s. The stationary
       wet share p01/(1 - p11 + p01) is 0.48 in midwinter and 0.22 in midsummer; persistence
       p11 - p01 is 0.34 (winter) and 0.31 (summer), a lag-one correlation in the range usual
       for daily rain occurrence (common practice, no single source).
    2. Amounts on wet days: 1.0 mm plus a gamma excess with shape 0.8 and mean 4.0 + 1.5 s mm,
       rounded to 0.1 mm.
    3. Forecast: the forecaster knows the seasonal chain and yesterday's state, so the prior is
       q = p11 or p01 (the stationary share on day 0), and sees a signal z ~ N(+d/2, 1) on wet days,
       N(-d/2, 1) on dry days, with d = 1.1. The likelihood ratio of z is exp(d z), so the
       calibrated posterior has log-odds logit(q) + d z (Bayes' rule for two equal-variance
       normals). The supplier then overstates its confidence: the log-odds are multiplied by 1.3,
       the probability is clipped to [0.01, 0.99] and rounded to 0.01.
    4. The paid supplier's forecast, on its own stream (:func:`_premium_forecast`).

    With the default seed: ROC area 0.83, Brier skill score 0.28 against the monthly climatology
    (0.31 against the overall wet share), wet share 0.44-0.54 in Nov-Feb and 0.20-0.28 in Jun-Aug;
    forecasts of 0.90 and above (mean 0.94) verify 0.89, those of 0.10 and below (mean 0.05)
    verify 0.09.
    Invented data: these numbers check the design of the demo, nothing else.
    """
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2017-01-01", "2026-12-31", freq="D")
    season = _seasonal_wave(dates.day_of_year.to_numpy(), peak_day=10.0)
    p_dry_to_wet = 0.235 + 0.085 * season
    p_wet_to_wet = 0.56 + 0.10 * season
    wet = _wet_dry_chain(p_dry_to_wet, p_wet_to_wet, rng)

    excess_mean_mm = 4.0 + 1.5 * season
    shape = 0.8
    excess_mm = rng.gamma(shape, excess_mean_mm / shape)
    rain_mm = np.where(wet, np.round(1.0 + excess_mm, 1), 0.0)

    separation = 1.1  # d: distance between the signal means on wet and dry days, in sd units
    overconfidence = 1.3  # factor on the calibrated log-odds
    prior = np.where(np.r_[False, wet[:-1]], p_wet_to_wet, p_dry_to_wet)
    prior[0] = p_dry_to_wet[0] / (1.0 - p_wet_to_wet[0] + p_dry_to_wet[0])
    signal = np.where(wet, separation / 2.0, -separation / 2.0) + rng.standard_normal(wet.size)
    calibrated_log_odds = logit(prior) + separation * signal
    probability = np.clip(expit(overconfidence * calibrated_log_odds), 0.01, 0.99)

    return pd.DataFrame(
        {
            "date": dates.strftime("%Y-%m-%d"),
            "rain_probability": np.round(probability, 2),
            "premium_rain_probability": _premium_forecast(wet, prior, seed),
            "rain": wet.astype(np.int64),
            "rain_mm": rain_mm,
        }
    )


PREMIUM_SEPARATION = 1.6  # d of the premium supplier's signal (the national service's is 1.1)
PREMIUM_STREAM = 3  # spawn key of its random stream (see _premium_forecast)


def _premium_forecast(wet: np.ndarray, prior: np.ndarray, seed: int) -> np.ndarray:
    """The premium supplier's probability of a wet day, rounded to 0.01.

    Drawn on a stream of its own, ``SeedSequence(seed, spawn_key=(PREMIUM_STREAM,))``, so adding it
    changed none of the national service's numbers. Of the streams tried (spawn keys 1 to 3), 3 is
    the one whose series gives the replay an automatic run length no longer than the national
    service's (the replay takes the longest over the forecasts, ``run.choose_mean_block``), so the
    demo's own figures, quoted in the README, stayed as they were; with keys 1 and 2 the run length
    grew from 4.6 to 5.4-5.5 days. The same Bayes construction as the national service's
    (prior from the seasonal chain and yesterday's state, a signal N(+-d/2, 1), posterior log-odds
    logit(q) + d z) with a sharper signal, d = :data:`PREMIUM_SEPARATION`, and no overstatement:
    calibrated up to the clipping to [0.01, 0.99] and the rounding.
    """
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(PREMIUM_STREAM,)))
    d = PREMIUM_SEPARATION
    signal = np.where(wet, d / 2.0, -d / 2.0) + rng.standard_normal(wet.size)
    return np.round(np.clip(expit(logit(prior) + d * signal), 0.01, 0.99), 2)


def river_history(seed: int = 20270202) -> pd.DataFrame:
    """Twelve years of invented daily peak levels and forecasts, River Vantle at Pellisford Weir.

    One row a day, 2014-10-01 to 2026-09-30 (4383 rows; twelve October-March flood seasons,
    2014 to 2025, each named by the year it starts). Columns: ``date`` (ISO yyyy-mm-dd),
    ``prob_above_warning`` (the forecast probability that the day's peak level exceeds the 3.2 m
    warning level, 2 decimals) and ``peak_level_m`` (observed daily peak, metres, 2 decimals).

    Generator, in the order the random numbers are drawn from ``numpy.random.default_rng(seed)``:

    1. Catchment rain: a dry/wet Markov chain, s = cos(2 pi d / 365.25) for day of year d,
       p01 = 0.25 + 0.10 s, p11 = 0.60 + 0.10 s; wet-day amounts 1.0 mm plus a gamma excess
       (shape 0.7, mean 5.0 + 1.5 s mm); on 0 to 3 % of wet days (most in summer, weight
       (1 - s)/2) a thunderstorm adds a gamma(2, 30 mm) burst.
    2. Flow: a share 0.5 + 0.4 s of the rain (wet soils in winter) feeds two linear stores, 70 %
       a quick store that keeps 0.55 of its water each day, 30 % a slow store that keeps 0.975;
       flow = quick + 0.25 slow. Stage: level = 0.45 + 0.43 flow^0.6 m, plus N(0, 0.03 m) gauge
       noise, rounded to 1 cm. The slow store makes the level persistent (lag-one correlation
       about 0.9) and high from December to February.
    3. Forecast: the forecast level is the observed level plus N(0, sigma) error, where sigma =
       0.12 m + 0.3 x (the day's rise, if any): rises are harder to foresee than recessions. The
       probability is Phi((forecast level - 3.2) / 0.22), rounded to 0.01. It ignores how rare high
       water is, so its middle and high probabilities verify below their face value.

    With the default seed: 5.6 % of October-March days exceed 3.2 m (123 days, most in
    December-February), 3 days in April-September; ROC area 0.97 and Brier skill score 0.55
    against the overall exceedance share. Invented data: these
    numbers check the design of the demo, nothing else.
    """
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2014-10-01", "2026-09-30", freq="D")
    season = _seasonal_wave(dates.day_of_year.to_numpy(), peak_day=0.0)
    wet = _wet_dry_chain(0.25 + 0.10 * season, 0.60 + 0.10 * season, rng)

    shape = 0.7
    excess_mm = rng.gamma(shape, (5.0 + 1.5 * season) / shape)
    storm = wet & (rng.random(wet.size) < 0.03 * (1.0 - season) / 2.0)
    storm_mm = rng.gamma(2.0, 30.0, wet.size)
    rain_mm = np.where(wet, 1.0 + excess_mm, 0.0) + np.where(storm, storm_mm, 0.0)

    effective_mm = (0.5 + 0.4 * season) * rain_mm
    quick = lfilter([1.0], [1.0, -0.55], 0.7 * effective_mm)  # q_t = 0.55 q_(t-1) + input_t
    slow = lfilter([1.0], [1.0, -0.975], 0.3 * effective_mm)
    flow = quick + 0.25 * slow
    level = 0.45 + 0.43 * flow**0.6 + 0.03 * rng.standard_normal(wet.size)
    level = np.round(level, 2)

    rise = np.maximum(np.diff(level, prepend=level[0]), 0.0)
    forecast_level = level + (0.12 + 0.3 * rise) * rng.standard_normal(wet.size)
    probability = ndtr((forecast_level - WARNING_LEVEL_M) / 0.22)

    return pd.DataFrame(
        {
            "date": dates.strftime("%Y-%m-%d"),
            "prob_above_warning": np.round(probability, 2),
            "peak_level_m": level,
        }
    )


GRITTING_DEPOTS = {  # depot: (night road temperature offset from the region's, degC; wet share)
    "Gannetholm Harbour": (1.6, 0.50),  # on the coast: the sea keeps the nights milder
    "Ferrowby Moor": (-0.4, 0.45),
    "Pellisford": (0.3, 0.55),  # in the Vantle valley: damp
    "Scarth Top": (-1.8, 0.55),  # the high road over the fell
    "Tarnbeck Lane": (0.0, 0.40),
}
GRITTING_OUTAGE = ("Tarnbeck Lane", "2022-01-10", "2022-01-18")  # the depot's forecast feed was down


def gritting_history(seed: int = 20270303) -> pd.DataFrame:
    """Eight winters of invented nightly ice forecasts and outcomes at five gritting depots.

    Skerrick Roads grits the roads of a fictional coast from the depots of :data:`GRITTING_DEPOTS`.
    One row per depot and night from November to March, winters 2018-19 to 2025-26 (1,210 nights
    a depot), sorted by date then depot, except that Tarnbeck Lane has no rows from 10 to 18
    January 2022 (:data:`GRITTING_OUTAGE`: its forecast feed was down). Columns: ``date`` (ISO, the
    evening the decision is taken), ``depot``, ``ice_probability`` (the supplier's probability of
    ice on the depot's routes overnight, 2 decimals), ``ice`` (1 when ice formed: the lowest road
    surface temperature was below 0 degC on a damp road, else 0) and ``road_temp_c`` (the night's
    lowest road surface temperature, 1 decimal).

    Generator, in the order the random numbers are drawn from ``numpy.random.default_rng(seed)``:

    1. The region's night road temperature: a seasonal mean 3.5 - 3.0 c degC, c =
       cos(2 pi (d - 20) / 365.25) for day of year d (coldest around 20 January), plus an AR(1)
       anomaly with lag-one correlation 0.75 and standard deviation 2.6 degC, one for all depots:
       cold spells strike every depot together. Then one uniform number a night for the region's
       showers.
    2. Each depot: the region's temperature plus its offset, plus its own AR(1) anomaly
       (correlation 0.5, standard deviation 0.9 degC); rounded to 0.1 degC.
    3. Damp roads: on 80% of nights (a draw per depot and night) the depot takes the region's
       shower number, else a number of its own; the road is damp when that number is below the
       depot's wet share. Ice: damp and below 0 degC.
    4. Forecast: the supplier forecasts the depot's temperature with a normal error of 1.1 degC and
       gives P(ice) = P(temperature < 0 | forecast) x the wet share, the first factor being
       Phi(-forecast / 1.1); clipped to [0.01, 0.99] and rounded to 0.01. It is calibrated by
       construction, up to the rounding.

    With the default seed: ice on 30% of nights at Scarth Top and 9% at Gannetholm Harbour; on a
    night with ice at Ferrowby Moor, Pellisford has ice 64% of the time against 18% of all nights
    (correlations of the depots' ice series 0.35 to 0.55); ROC areas 0.79 (Scarth Top) to 0.94
    (Gannetholm Harbour). Invented data: these numbers check the design of the demo, nothing else.
    """
    rng = np.random.default_rng(seed)
    days = pd.date_range("2018-07-01", "2026-06-30", freq="D")
    wave = _seasonal_wave(days.day_of_year.to_numpy(), peak_day=20.0)
    regional = 3.5 - 3.0 * wave + _ar1(rng, days.size, 0.75, 2.6)
    shower = rng.random(days.size)  # the region's showers: one draw a night for every depot
    in_season = np.isin(days.month, [11, 12, 1, 2, 3])
    frames = []
    for depot, (offset, wet_share) in GRITTING_DEPOTS.items():
        temp = np.round(regional + offset + _ar1(rng, days.size, 0.5, 0.9), 1)
        own = rng.random(days.size)
        damp = np.where(rng.random(days.size) < 0.8, shower, own) < wet_share
        ice = damp & (temp < 0.0)
        forecast = temp + 1.1 * rng.standard_normal(days.size)
        probability = np.clip(ndtr(-forecast / 1.1) * wet_share, 0.01, 0.99)
        frames.append(pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "depot": depot,
                                    "ice_probability": np.round(probability, 2),
                                    "ice": ice.astype(np.int64), "road_temp_c": temp})[in_season])
    out = pd.concat(frames, ignore_index=True)
    down, start, end = GRITTING_OUTAGE
    out = out[~((out["depot"] == down) & out["date"].between(start, end))]
    order = np.lexsort((out["depot"].map(list(GRITTING_DEPOTS).index), out["date"]))
    return out.iloc[order].reset_index(drop=True)


def _ar1(rng: np.random.Generator, n: int, rho: float, sd: float) -> np.ndarray:
    """A stationary AR(1) series: x_t = rho x_(t-1) + e_t, standard deviation ``sd``."""
    shocks = rng.standard_normal(n) * sd * np.sqrt(1.0 - rho**2)
    shocks[0] = rng.standard_normal() * sd  # start in the stationary distribution
    return lfilter([1.0], [1.0, -rho], shocks)


def _replace_atomically(path: Path, data: bytes) -> None:
    """Write ``data`` to a temporary file beside ``path``, then rename it onto ``path``."""
    temporary = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        with open(temporary, "wb") as out:  # plain open: permissions follow the umask
            out.write(data)
        os.replace(temporary, path)
    except BaseException:
        temporary.unlink(missing_ok=True)
        raise


def history_csv_bytes(history: pd.DataFrame) -> bytes:
    """The CSV text of a demo history: header row, no index, "\\n" line ends, UTF-8.

    Floats are already rounded by the generators, so pandas' shortest round-trip repr gives
    fixed text (0.3, not 0.30000000000000004) and the files are byte-for-byte reproducible.
    """
    return history.to_csv(index=False, lineterminator="\n").encode("utf-8")


def write_history_csv(history: pd.DataFrame, path: Path) -> Path:
    """Write a demo history as CSV (see ``history_csv_bytes``) to ``path``; return the path."""
    path = Path(path)
    _replace_atomically(path, history_csv_bytes(history))
    return path


def write_demo_files(folder: Path) -> Path:
    """Write the line-marking scenario and its history into ``folder``; return the scenario path.

    The scenario is copied byte for byte from the package's ``data/line_marking.toml``; its
    ``[history] path`` names ``line_marking_history.csv`` beside it, which is generated here by
    ``line_marking_history()``. Existing files of those names are replaced.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    write_history_csv(line_marking_history(), folder / DEMO_FILES["history"])
    scenario = folder / DEMO_FILES["scenario"]
    _replace_atomically(scenario, (DATA_FOLDER / DEMO_FILES["scenario"]).read_bytes())
    return scenario
