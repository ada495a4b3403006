""""Act when p >= cutoff" holds as a person reads the numbers, flip or no flip.

The oracle throughout is integer arithmetic on the decimals as written: a two-decimal probability
"0.56" is 56 hundredths, its complement 100 - 56 = 44 hundredths, and it reaches the cutoff k/100
exactly when 44 >= k. No floating point enters the oracle (common practice, no single source).
Floating point gets it wrong: 1 - 0.56 is 0.43999999999999995 in IEEE 754 double precision, which
misses 0.44 (Goldberg, D. (1991). What every computer scientist should know about floating-point
arithmetic. ACM Computing Surveys 23(1), 5-48, on decimal fractions not being representable).
"""

from __future__ import annotations

from decimal import Decimal

import numpy as np
import pandas as pd
import pytest

from realdata import seattle_rain
from simulator.notation import decimals
from simulator.pricing.costs import SeasonPricer, baseline_actions
from simulator.inputs.history import read_history
from simulator.rules.operating_rules import safety_stops
from simulator.run import run_history
from simulator.inputs.scenario import cutoff_grid, read_scenario
from simulator.inputs.scenario_costs import Costs
from simulator.pricing.contingency import cutoff_slots
from simulator.pricing.scoring import reliability_table

GRID = [Decimal(k) / 100 for k in range(101)]  # the default [decision] cutoffs, as written


def hundredths(text: str) -> int:
    """A probability written with at most two decimals, as whole hundredths (no float)."""
    whole, _, fraction = text.strip().partition(".")
    assert len(fraction) <= 2, text
    return int(whole or "0") * 100 + int(fraction.ljust(2, "0"))


def oracle_counts(h: np.ndarray, event: np.ndarray) -> pd.DataFrame:
    """Classification matrix at every cutoff k/100, k = 0..100, by integer comparison h >= k."""
    acted = h[None, :] >= np.arange(101)[:, None]  # (cutoffs, occasions), integers only
    event = event[None, :]
    return pd.DataFrame({"hits": (acted & event).sum(axis=1), "false_alarms": (acted & ~event).sum(axis=1),
                         "misses": (~acted & event).sum(axis=1),
                         "correct_negatives": (~acted & ~event).sum(axis=1)})


def test_the_float_complement_misses_the_cutoff_and_the_decimal_one_reaches_it():
    assert 1 - 0.56 < 0.44  # the bug: IEEE 754 doubles (Goldberg 1991)
    assert decimals.complement(0.56) == 0.44
    assert decimals.reaches(1 - 0.56, 0.44)
    assert not decimals.reaches(0.439999999999, 0.44)  # 12 decimals still count


def test_every_cutoff_of_a_grid_is_the_float_nearest_its_decimal():
    for lo, hi, step in [(0.0, 1.0, 0.01), (0.05, 0.95, 0.05), (0.1, 0.7, 0.1), (0.333, 0.433, 0.001),
                         (0.0, 1.0, 0.0001)]:
        grid = cutoff_grid(lo, hi, step)
        d_lo, d_step = Decimal(repr(lo)), Decimal(repr(step))
        expected = [float(d_lo + k * d_step) for k in range(grid.size)]
        assert grid.tolist() == expected
        assert grid[-1] == hi


@pytest.fixture(scope="module")
def two_decimal_file(tmp_path_factory):
    """Every hundredth from 0.00 to 1.00, many times over, as text in a CSV (invented test data)."""
    rng = np.random.default_rng(20271204)
    dates = pd.date_range("2021-01-01", "2023-12-31", freq="D")
    h = rng.integers(0, 101, dates.size)
    h[:101] = np.arange(101)  # each hundredth at least once
    text = [f"{k // 100}.{k % 100:02d}" for k in h]
    outcome = (rng.random(dates.size) < h / 100).astype(int)
    path = tmp_path_factory.mktemp("decimals") / "history.csv"
    pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": text, "outcome": outcome}).to_csv(
        path, index=False, lineterminator="\n")
    return path


def _scenario(tmp_path, history: str, flip: bool, **extra) -> object:
    lines = ['name = "decimals"', "", "[history]", f'path = "{history}"', "", "[event]",
             f"flip = {'true' if flip else 'false'}", "", "[costs]", "hit = 300", "false_alarm = 1800",
             "miss = 2500", "", "[simulation]", "replicates = 30", "seed = 5"]
    for section, keys in extra.items():
        lines += ["", f"[{section}]"] + [f"{k} = {v}" for k, v in keys.items()]
    path = tmp_path / f"scenario_{'flip' if flip else 'plain'}.toml"
    path.write_text("\n".join(lines) + "\n")
    return read_scenario(path)


@pytest.mark.parametrize("flip", [False, True])
def test_two_decimal_counts_at_every_cutoff_match_integer_arithmetic(two_decimal_file, tmp_path, flip):
    scenario = _scenario(tmp_path, str(two_decimal_file), flip)
    history = read_history(scenario)
    raw = pd.read_csv(two_decimal_file, dtype=str)
    h = np.array([hundredths(t) for t in raw["probability"]])
    event = raw["outcome"].to_numpy() == "1"
    if flip:
        h, event = 100 - h, ~event
    assert np.array_equal(history.event, event)
    expected = oracle_counts(h, event)
    assert scenario.cutoffs.tolist() == [float(c) for c in GRID]
    table = run_history(scenario, history, replicates=20).table
    pd.testing.assert_frame_equal(table[list(expected.columns)].reset_index(drop=True), expected,
                                  check_dtype=False)
    # the pricing engine acts on the same occasions: one replicate that replays the history
    priced = SeasonPricer(history, scenario.cutoffs, scenario.costs)(np.arange(history.n_rows)[None, :])
    money = (expected["hits"] * 300 + expected["false_alarms"] * 1800 + expected["misses"] * 2500).to_numpy()
    assert np.array_equal(priced.model[0], money)  # integer costs: the sums are exact


def test_a_real_history_flipped_counts_as_its_written_decimals(tmp_path):
    # Seattle daily weather as the vega-datasets package ships it (see tests/realdata.py), with an
    # honest logistic forecast of rain rounded to two decimals; flipped to "a dry day".
    frame = seattle_rain()
    path = tmp_path / "seattle.csv"
    frame.to_csv(path, index=False, lineterminator="\n")
    raw = pd.read_csv(path, dtype=str)
    h = 100 - np.array([hundredths(t) for t in raw["probability"]])
    event = raw["outcome"].to_numpy() == "0"
    scenario = _scenario(tmp_path, str(path), flip=True)
    history = read_history(scenario)
    expected = oracle_counts(h, event)
    table = run_history(scenario, history, replicates=20).table
    pd.testing.assert_frame_equal(table[list(expected.columns)].reset_index(drop=True), expected,
                                  check_dtype=False)
    # the slots agree with the oracle too, and float arithmetic would not have
    assert np.array_equal(cutoff_slots(history.p, scenario.cutoffs), h + 1)
    assert not np.array_equal(np.searchsorted(scenario.cutoffs, 1.0 - (100 - h) / 100, side="right"), h + 1)


@pytest.mark.parametrize("flip, as_seen, stop_at", [(True, "as_in_file", 0.9), (True, "of_event", 0.1),
                                                    (False, "as_in_file", 0.9)])
def test_the_safety_stop_holds_at_its_written_probability(two_decimal_file, tmp_path, flip, as_seen, stop_at):
    ops = {"crews_out_on": '"acting"', "spoiled_on": '"event"', "day_rate": 100, "safety_stop_at": stop_at,
           "safety_probability": f'"{as_seen}"'}
    scenario = _scenario(tmp_path, str(two_decimal_file), flip, operations=ops)
    history = read_history(scenario)
    h = np.array([hundredths(t) for t in pd.read_csv(two_decimal_file, dtype=str)["probability"]])
    seen = 100 - h if (flip and as_seen == "of_event") else h
    stop = round(stop_at * 100)
    assert np.array_equal(safety_stops(history, scenario), seen >= stop)
    assert (seen == stop).any()  # the edge itself is in the file


def test_the_seasonal_rate_rule_acts_in_a_month_whose_rate_is_the_break_even_probability(make_history):
    # Costs in tenths: correct negative 0.1, false alarm 0.4, hit 0.2, miss 0.9, so
    # p* = (0.4 - 0.1) / ((0.4 - 0.1) + (0.9 - 0.2)) = 3/10 (Thompson 1952; Murphy 1977) while the
    # float arithmetic gives 0.30000000000000004. Every month holds 3 events in 10 occasions.
    days = pd.date_range("2021-01-01", "2022-12-31", freq="D")
    days = days[days.day <= 10]
    outcome = np.isin(days.day, [2, 5, 8]).astype(int)
    frame = pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "probability": 0.5, "outcome": outcome})
    costs = {"hit": 0.2, "false_alarm": 0.4, "miss": 0.9, "correct_negative": 0.1}
    history = make_history(frame, costs=costs)

    # oracle: events * (C' + D') >= C' * occasions, in tenths: 6 * 10 >= 3 * 20 in every month
    assert baseline_actions(history, Costs(**costs))["seasonal_rate"].all()


def test_reliability_bins_put_a_flipped_edge_in_the_bin_above():
    # 1 - 0.7 as a float is 0.30000000000000004 and 1 - 0.6 is 0.4; as decimals 0.3 opens bin 3
    table = reliability_table(decimals.complement(np.array([0.7, 0.6, 0.65])), np.array([1, 0, 1]), 10)
    assert table.n.tolist() == [0, 0, 0, 2, 1, 0, 0, 0, 0, 0]
