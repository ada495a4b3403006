"""Which forecast wins a set of replicate seasons (simulator.analysis.winners), checked on arrays.

The reference values are identities of paired comparisons on common random numbers (the mean of
the differences is the difference of the means; a forecast compared with itself saves exactly
nothing): common practice, no single source. The cost arrays are invented test data.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from simulator.analysis.winners import ROW_COLUMNS, contest, wins


@pytest.fixture
def costs(rng) -> list[np.ndarray]:
    """Season costs of three invented forecasts on the same 400 replicates: "b" cheapest on average."""
    weather = rng.normal(10_000, 1_500, 400)  # what every forecast pays on a replicate
    return [weather + rng.normal(600, 400, 400), weather + rng.normal(0, 400, 400),
            weather + rng.normal(250, 400, 400)]


def test_the_cheapest_on_average_wins_and_its_saving_is_paired_against_the_runner_up(costs):
    c = contest(["a", "b", "c"], [0.3, 0.4, 0.5], costs)
    assert (c.winner, c.runner_up) == ("b", "c")
    np.testing.assert_array_equal(c.saving, costs[2] - costs[1])
    summary = c.saving_summary()
    # mean of paired differences = difference of means (linearity of the mean)
    assert summary["mean"] == pytest.approx(costs[2].mean() - costs[1].mean())
    assert summary["prob_saving"] == pytest.approx(np.mean(costs[1] < costs[2]))
    assert summary["p05"] == pytest.approx(np.quantile(costs[2] - costs[1], 0.05))


def test_the_same_costs_under_two_names_win_nothing_and_save_exactly_nothing(costs):
    c = contest(["ours", "ours again"], [0.4, 0.4], [costs[0], costs[0].copy()])
    assert c.winner is None
    assert (c.saving == 0).all() and c.prob_saving == 0
    row = c.row()
    assert row["best_forecast"] == "" and row["runner_up_forecast"] == ""
    assert row["saving_against_runner_up_mean"] == 0 and row["saving_against_runner_up_prob"] == 0
    assert c.as_dict()["winner"] is None


def test_a_tie_for_first_place_behind_no_one_is_still_no_winner(costs):
    # two equal best forecasts and a dearer third: nobody wins, whatever the order listed
    for names in itertools.permutations(["x", "x copy", "dear"]):
        arrays = {"x": costs[1], "x copy": costs[1].copy(), "dear": costs[0]}
        c = contest(list(names), [0.5] * 3, [arrays[n] for n in names])
        assert c.winner is None and (c.saving == 0).all()


def test_the_order_of_listing_changes_no_figure(costs):
    names, cutoffs = ["a", "b", "c"], [0.3, 0.4, 0.5]
    first = contest(names, cutoffs, costs)
    for order in itertools.permutations(range(3)):
        other = contest([names[i] for i in order], [cutoffs[i] for i in order], [costs[i] for i in order])
        assert other.row() == first.row()
        a, b = first.as_dict(), other.as_dict()
        assert a["at_own_cutoff"] == {name: b["at_own_cutoff"][name] for name in names}
        assert {k: v for k, v in a.items() if k != "at_own_cutoff"} == {
            k: v for k, v in b.items() if k != "at_own_cutoff"}


def test_rows_carry_the_named_columns_and_wins_are_counted_per_forecast(costs):
    c = contest(["a", "b", "c"], [0.3, 0.4, 0.5], costs)
    assert tuple(c.row()) == ROW_COLUMNS
    tie = contest(["a", "b"], [0.3, 0.3], [costs[0], costs[0]])
    assert wins([c, c, tie], ["a", "b", "c"]) == {"a": 0, "b": 2, "c": 0}


def test_a_contest_needs_two_forecasts_with_costs_each(costs):
    with pytest.raises(ValueError, match="two or more forecasts"):
        contest(["a"], [0.3], costs[:1])
    with pytest.raises(ValueError, match="two or more forecasts"):
        contest(["a", "b"], [0.3], costs[:2])
