"""Relations that hold whatever the data: a whole run (``run_history``) on small invented histories.

Each property names its source beside it. The histories are invented test data (hypothesis draws
the seed of a calibrated daily forecast, written with two or four decimals, and the costs); the
replicate counts are small, since a relation holds replicate by replicate. The block length is
fixed (``block_days = 3``) where costs change: the automatic one (Politis and White 2004) is
invariant to a shift or scaling of the cost series in exact arithmetic, but a last-bit difference
in it would draw other replicates, which is not what these properties are about.
"""

from __future__ import annotations

import json
import os

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import scenario_toml
from simulator.inputs.history import history_from_frame, read_history
from simulator.account.outputs import summary
from simulator.run import run_history
from simulator.inputs.scenario import scenario_from_text

SETTINGS = settings(max_examples=int(os.environ.get("GONOGO_EXAMPLES", 20)), deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.function_scoped_fixture])
SEASON = {"months": [4, 5, 6, 7, 8, 9]}
SIMULATION = {"replicates": 40, "seed": 3}
MONEY_COLUMNS = ["historical_cost", "mean_cost", "p05_cost", "p50_cost", "p95_cost", "mean_savings"]
REFERENCES = ("never_act", "always_act", "persistence", "seasonal_rate")


def history_text(seed: int, places: int, years: int = 2, sites: tuple[str, ...] = ()) -> pd.DataFrame:
    """Daily rows 2021 on: a probability written with ``places`` decimals (text, as a supplier writes
    it) and an outcome drawn from it; one block of rows per site when ``sites`` are given."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2021-01-01", periods=365 * years, freq="D")
    frames = []
    for site in sites or ("",):
        unit = 10**places
        k = rng.integers(0, unit + 1, dates.size)
        outcome = (rng.random(dates.size) * unit < k).astype(int)
        frame = pd.DataFrame({"date": dates.strftime("%Y-%m-%d"),
                              "probability": [f"{v // unit}.{v % unit:0{places}d}" for v in k],
                              "outcome": outcome})
        if site:
            frame.insert(0, "site", site)
        frames.append(frame)
    return pd.concat(frames, ignore_index=True)


def complemented(frame: pd.DataFrame) -> pd.DataFrame:
    """The complementary class as a user would write it: 1 - p in the same decimals (integer
    arithmetic on the written digits, no float) and the other outcome."""
    def one(text: str) -> str:
        whole, _, fraction = text.partition(".")
        unit = 10 ** len(fraction)
        v = unit - (int(whole) * unit + int(fraction))
        return f"{v // unit}.{v % unit:0{len(fraction)}d}"
    return frame.assign(probability=frame["probability"].map(one), outcome=1 - frame["outcome"])


def scenario(costs: dict, reference: str = "never_act", block_days=3, **sections):
    simulation = {**SIMULATION, "reference": reference, "block_days": block_days}
    return scenario_from_text(scenario_toml(costs=costs, season=SEASON, simulation=simulation, **sections))


def files(result) -> tuple[dict, bytes]:
    """summary.json (as a dict, to compare key by key) and the bytes of cutoffs.csv."""
    return (json.loads(json.dumps(summary(result))),
            result.table.to_csv(index=False, lineterminator="\n").encode())


def cutoffs_of(decision) -> tuple:
    """Every cutoff a decision names."""
    return (decision.recommended_cutoff, decision.recommended_cutoff_interval, decision.break_even,
            decision.confident_break_even)


money_st = st.one_of(st.integers(0, 3000), st.integers(0, 300000).map(lambda cents: cents / 100))
costs_st = st.fixed_dictionaries({"hit": money_st, "false_alarm": money_st, "miss": money_st,
                                  "correct_negative": money_st})


@SETTINGS
@given(seed=st.integers(0, 2**31 - 1), places=st.sampled_from([2, 4]), costs=costs_st,
       reference=st.sampled_from(REFERENCES))
def test_complemented_history_with_flip_gives_the_original_results(seed, places, costs, reference):
    # Derived: the event of "p, outcome" and of "1 - p, not outcome" flipped back are the same
    # occasions with the same probabilities, so every figure is the same (a two-decimal file
    # included: 1 - 0.56 must reach 0.44 as 0.44 does). The automatic block length too, as it
    # prices the history at the break-even probability.
    frame = history_text(seed, places)
    plain = scenario(costs, reference, block_days="auto")
    flipped = scenario(costs, reference, block_days="auto", event={"flip": True})
    a = run_history(plain, history_from_frame(frame, plain))
    b = run_history(flipped, history_from_frame(complemented(frame), flipped))
    (sa, ca), (sb, cb) = files(a), files(b)
    assert ca == cb
    for s in (sa, sb):
        del s["scenario"]  # the flag and the scenario's hash differ, as they should
    assert sa == sb


@SETTINGS
@given(seed=st.integers(0, 2**31 - 1), costs=costs_st, constant=st.one_of(st.integers(-3000, 3000), money_st),
       reference=st.sampled_from(REFERENCES))
def test_a_constant_added_to_every_cost_adds_it_per_occasion_and_moves_no_cutoff(seed, costs, constant,
                                                                               reference):
    # Adding the same amount to all four cells changes no choice between acting and not acting:
    # the break-even probability (C/L of Thompson 1952 and Murphy 1977) depends on differences of
    # costs only, and Elkan (2001), "The foundations of cost-sensitive learning", IJCAI, Theorem 1
    # (from memory, check), shows decisions are unchanged by adding a constant to a column of the
    # cost matrix (here, to both). Each season then costs constant x its occasions more.
    frame = history_text(seed, 2)
    base = scenario(costs, reference)
    shifted = scenario({k: v + constant for k, v in costs.items()}, reference)
    a = run_history(base, history_from_frame(frame, base))
    b = run_history(shifted, history_from_frame(frame, shifted))
    n = a.calendar.n_occasions
    # exact for whole amounts; for cents, to rounding relative to the season's money
    atol = 1e-12 * max(1.0, float(np.abs(b.model_cost).max()), float(np.abs(a.model_cost).max()))
    np.testing.assert_allclose(b.model_cost, a.model_cost + constant * n, rtol=0, atol=atol)
    for name, cost in a.baseline_cost.items():
        np.testing.assert_allclose(b.baseline_cost[name], cost + constant * n, rtol=0, atol=atol)
    assert b.theoretical_cutoff == pytest.approx(a.theoretical_cutoff, rel=1e-12, nan_ok=True)
    assert cutoffs_of(b.decision) == cutoffs_of(a.decision)
    assert b.decision.prob_saving == a.decision.prob_saving
    np.testing.assert_allclose(b.decision.savings.mean, a.decision.savings.mean, rtol=0, atol=atol)


@SETTINGS
@given(seed=st.integers(0, 2**31 - 1), costs=costs_st, k=st.floats(0.01, 100.0),
       reference=st.sampled_from(REFERENCES))
def test_costs_times_k_multiply_every_money_figure_by_k_and_move_no_cutoff(seed, costs, k, reference):
    # Scaling the cost matrix by k > 0 leaves every comparison of expected costs, hence every
    # decision, unchanged (Elkan 2001, as above; the cost-loss ratio C/L of Thompson 1952 and
    # Murphy 1977 is a ratio of costs), and multiplies every amount of money by k.
    frame = history_text(seed, 2)
    base = scenario(costs, reference)
    scaled = scenario({key: v * k for key, v in costs.items()}, reference)
    a = run_history(base, history_from_frame(frame, base))
    b = run_history(scaled, history_from_frame(frame, scaled))
    # equal to rounding: relative to the season's money (a sum that cancels to 0 keeps its noise)
    atol = 1e-12 * max(1.0, float(np.abs(b.model_cost).max()))
    np.testing.assert_allclose(b.model_cost, a.model_cost * k, rtol=1e-12, atol=atol)
    for name, cost in a.baseline_cost.items():
        np.testing.assert_allclose(b.baseline_cost[name], cost * k, rtol=1e-12, atol=atol)
    for column in MONEY_COLUMNS:
        np.testing.assert_allclose(b.table[column], a.table[column] * k, rtol=1e-9, atol=atol * 1000)
    assert cutoffs_of(b.decision) == cutoffs_of(a.decision)
    assert b.decision.near_optimal_band == a.decision.near_optimal_band
    np.testing.assert_array_equal(b.table["prob_saving"], a.table["prob_saving"])
    assert b.decision.prob_saving == a.decision.prob_saving


@SETTINGS
@given(seed=st.integers(0, 2**31 - 1), order=st.permutations(["Aldmere", "Brackwell", "Corsey"]))
def test_listing_sites_in_another_order_changes_no_portfolio_figure(seed, order):
    # Derived: the portfolio is a sum over sites, and the sites are replayed on the same dates
    # whatever their order (invented depots).
    frame = history_text(seed, 2, sites=("Aldmere", "Brackwell", "Corsey"))
    costs = {"hit": 300.1, "false_alarm": 1800.7, "miss": 2500.3}  # decimals: sums depend on order
    sc = scenario(costs, block_days="auto", history={"site_column": "site"})
    reordered = pd.concat([frame[frame["site"] == name] for name in order], ignore_index=True)
    a = run_history(sc, history_from_frame(frame, sc))
    b = run_history(sc, history_from_frame(reordered, sc))
    (sa, ca), (sb, cb) = files(a), files(b)
    assert sa["portfolio"] == sb["portfolio"]
    assert ca == cb
    for key in ("recommended_cutoff", "recommended_cutoff_interval", "break_even", "confident_break_even",
                "strategies", "savings"):
        assert sa[key] == sb[key]
    by_site = {s.name: s for s in b.sites}
    for site in a.sites:
        assert cutoffs_of(site.decision) == cutoffs_of(by_site[site.name].decision)


@SETTINGS
@given(seed=st.integers(0, 2**31 - 1), name=st.sampled_from(["p_rain", "Forecast (supplier)", "prob"]))
def test_the_same_forecast_under_another_column_name_gives_the_same_results(seed, name):
    # Derived: a column's name is only where the numbers are read from.
    frame = history_text(seed, 2)
    costs = {"hit": 300, "false_alarm": 1800, "miss": 2500}
    a_sc = scenario(costs)
    b_sc = scenario(costs, history={"probability_column": name})
    a = run_history(a_sc, history_from_frame(frame, a_sc))
    b = run_history(b_sc, history_from_frame(frame.rename(columns={"probability": name}), b_sc))
    (sa, ca), (sb, cb) = files(a), files(b)
    assert ca == cb
    del sa["scenario"]["sha256"], sb["scenario"]["sha256"]  # the scenario texts differ by the name
    assert sa == sb


def test_a_history_as_csv_and_as_parquet_gives_the_same_bytes_out(tmp_path):
    # Derived: the file format is only how the numbers are stored. Parquet keeps the floats the CSV
    # text parses to; both are read into the same History. Four-decimal and float probabilities.
    frame = history_text(20271204, 4)
    frame["probability"] = frame["probability"].astype(float)
    frame.loc[::7, "probability"] = np.random.default_rng(5).random(len(frame.loc[::7]))  # full floats
    frame.to_csv(tmp_path / "history.csv", index=False, lineterminator="\n")
    frame.to_parquet(tmp_path / "history.parquet", index=False)
    sc = scenario({"hit": 300, "false_alarm": 1800, "miss": 2500}, event={"flip": True})
    out = [files(run_history(sc, read_history(sc, tmp_path / name)))
           for name in ("history.csv", "history.parquet")]
    (sa, ca), (sb, cb) = out
    assert ca == cb
    # the history block names its file and that file's hash, which differ by format
    for s in (sa, sb):
        del s["history"]["file"], s["history"]["sha256"]
    assert json.dumps(sa, indent=2) == json.dumps(sb, indent=2)
