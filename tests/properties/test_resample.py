"""Properties of the calendar-aware stationary bootstrap (simulator.replay.resample), with hypothesis.

What a replicate season must keep from the history (issue 2 sections 3 and 7): the event rate, the
requested mean run length, the spells of consecutive events when runs are long, and the seasonal
cycle; and the same seed must give the same replicates however the work is cut into chunks.

Method: Politis, D. N. and Romano, J. P. (1994), "The stationary bootstrap", JASA 89:1303-1313
(runs start as Bernoulli(1/b) trials, so run lengths are geometric with mean b). Histories are
invented two-state Markov chains; "Monte Carlo error" is the standard error over replicates, and a
tolerance of 4 standard errors is common practice, no source.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from simulator.replay.resample import BLOCK, Resampler, season_calendar
from simulator.run import run_history

FEW = settings(max_examples=8, deadline=None, database=None)
N_REPLICATES = 200


def _history(make_history, synthetic, seed, years=8, p01=0.1, p11=0.8, **sections):
    frame = synthetic.markov_frame(np.random.default_rng(seed), years, p01, p11)
    return make_history(frame, **sections)


def _resampler(history, mean_block, make_scenario, window_days=10, **sections):
    rule = make_scenario(**sections).season
    return Resampler(history, season_calendar(history, rule), mean_block, window_days)


def _mean_spell(event: np.ndarray) -> float:
    """Mean length of runs of consecutive events along the last axis, pooled over rows."""
    event = np.atleast_2d(event)
    before = np.concatenate([np.zeros((event.shape[0], 1), bool), event[:, :-1]], axis=1)
    return event.sum() / (event & ~before).sum()


def _breaks(history, rows):
    """Where a replicate's next occasion is not the next history row: (all breaks, those forced
    because the run reached the end of its season), each (n_rep, n_occasions - 1)."""
    following = rows[:, :-1] + 1
    broken = rows[:, 1:] != following
    inside = np.minimum(following, history.n_rows - 1)
    season_ended = (following >= history.n_rows) | (history.season[inside] != history.season[rows[:, :-1]])
    return broken, broken & season_ended


# ------------------------------------------------------------------------------------------------
# what a replicate keeps


@FEW
@given(seed=st.integers(0, 2**32 - 1), p01=st.floats(0.05, 0.4), p11=st.floats(0.2, 0.9),
       mean_block=st.floats(1.0, 40.0))
def test_replicate_event_rate_matches_the_history(seed, p01, p11, mean_block, make_history, synthetic,
                                                  make_scenario):
    history = _history(make_history, synthetic, seed, p01=p01, p11=p11)
    rows = _resampler(history, mean_block, make_scenario).draw(np.random.default_rng(seed), N_REPLICATES)
    rate = history.event[rows].mean(axis=1)
    error = rate.std(ddof=1) / np.sqrt(N_REPLICATES)
    # 0.01 allows for the pile-up of draws on a season's first and last days (measured up to
    # 0.007 at mean_block 1; see test_every_day_of_the_season_is_drawn_about_equally_often)
    assert abs(rate.mean() - history.event.mean()) <= 4 * error + 0.01


@FEW
@given(seed=st.integers(0, 2**32 - 1), mean_block=st.floats(2.0, 60.0))
def test_runs_start_at_the_rate_the_mean_block_asks(seed, mean_block, make_history, synthetic,
                                                    make_scenario):
    # Politis and Romano (1994): a new run starts at each occasion with probability 1/b. Restarts
    # forced by the end of a history season are set apart; a new run that happens to start at the
    # very next row cannot be seen (about 1/(21 x 8) of starts here), hence the 2% allowance.
    history = _history(make_history, synthetic, seed)
    rows = _resampler(history, mean_block, make_scenario).draw(np.random.default_rng(seed), N_REPLICATES)
    broken, forced = _breaks(history, rows)
    trials = rows.shape[0] * (rows.shape[1] - 1) - forced.sum()
    starts = (broken & ~forced).sum()
    q = 1.0 / mean_block
    error = np.sqrt(q * (1 - q) / trials)
    assert abs(starts / trials - q) <= 4 * error + 0.02 * q


@FEW
@given(seed=st.integers(0, 2**32 - 1), mean_block=st.floats(2.0, 10.0))
def test_mean_run_length_is_the_mean_block_when_seasons_are_long(seed, mean_block, make_history,
                                                                 synthetic, make_scenario):
    # a run is consecutive occasions taken from consecutive history rows. In a season of L
    # occasions the first occasion always starts a run and each other one with probability 1/b,
    # so the mean run is L / (1 + (L - 1)/b), within 4% of b for L = 366 and b <= 10 (Politis and
    # Romano 1994; the censoring by the season's end is common practice, no source)
    history = _history(make_history, synthetic, seed)
    rows = _resampler(history, mean_block, make_scenario).draw(np.random.default_rng(seed), N_REPLICATES)
    broken, _ = _breaks(history, rows)
    n_runs = rows.shape[0] + broken.sum()
    length = rows.shape[1]
    expected = length / (1 + (length - 1) / mean_block)
    assert rows.size / n_runs == pytest.approx(expected, rel=4 / np.sqrt(n_runs) + 0.03)
    assert rows.size / n_runs == pytest.approx(mean_block, rel=0.1)


@FEW
@given(seed=st.integers(0, 2**32 - 1), p01=st.floats(0.05, 0.2), p11=st.floats(0.6, 0.85),
       mean_block=st.floats(40.0, 80.0))
def test_long_runs_keep_the_spells_of_a_persistent_chain(seed, p01, p11, mean_block, make_history,
                                                         synthetic, make_scenario):
    # a Markov chain's event spells have mean 1 / (1 - p11) (geometric; common practice, no
    # source); a join between runs cuts a spell, so with mean spell s <= 6.7 and runs of b >= 40
    # the bootstrap shortens spells by at most about s / b: 15% is allowed
    history = _history(make_history, synthetic, seed, p01=p01, p11=p11)
    rows = _resampler(history, mean_block, make_scenario).draw(np.random.default_rng(seed), N_REPLICATES)
    assert _mean_spell(history.event[rows]) == pytest.approx(_mean_spell(history.event), rel=0.15)


def test_single_occasion_runs_lose_the_spells(make_history, synthetic, make_scenario, seed):
    # the contrast that gives the test above its teeth: drawn one occasion at a time (b = 1, an
    # i.i.d. bootstrap) spells shrink to about 1 / (1 - rate), as Kunsch (1989), "The jackknife and
    # the bootstrap for general stationary observations", Ann. Stat. 17:1217-1241, motivates blocks
    history = _history(make_history, synthetic, seed, p01=0.1, p11=0.8)
    rows = _resampler(history, 1.0, make_scenario).draw(np.random.default_rng(seed), N_REPLICATES)
    rate = history.event.mean()
    assert _mean_spell(history.event) > 4.0
    assert _mean_spell(history.event[rows]) == pytest.approx(1 / (1 - rate), rel=0.1)


@FEW
@given(seed=st.integers(0, 2**32 - 1), mean_block=st.floats(1.0, 30.0))
def test_replicates_follow_the_seasonal_cycle(seed, mean_block, make_history, synthetic, make_scenario):
    # a smooth cycle of the chance of an event: p01 from 0.05 in July to 0.45 in January
    def p01(month):
        return 0.25 + 0.2 * np.cos(2 * np.pi * (month - 1) / 12)

    history = _history(make_history, synthetic, seed, years=20, p01=p01, p11=0.5)
    resampler = _resampler(history, mean_block, make_scenario)
    rows = resampler.draw(np.random.default_rng(seed), 2 * N_REPLICATES)
    month = resampler.calendar.dates.astype("datetime64[M]").astype(int) % 12
    history_month = history.dates.astype("datetime64[M]").astype(int) % 12
    history_rate = np.bincount(history_month, history.event) / np.bincount(history_month)
    replicate_rate = np.bincount(month, history.event[rows].mean(axis=0)) / np.bincount(month)
    assert history_rate.max() - history_rate.min() > 0.2  # a real cycle to follow
    # runs start within 10 days of their calendar date, so a month borrows a little from its
    # neighbours; 0.05 allows for that and the Monte Carlo error (our own run over 150 seeds and
    # mean blocks from 1 to 30: largest gap 0.032)
    np.testing.assert_allclose(replicate_rate, history_rate, atol=0.05)
    assert np.corrcoef(replicate_rate, history_rate)[0, 1] > 0.9


def test_every_day_of_the_season_is_drawn_about_equally_often(make_history, synthetic, make_scenario,
                                                             seed):
    # a stationary bootstrap draws every position equally often (Politis and Romano 1994); the
    # window of +-10 days is reflected at the season's ends (a symmetric kernel), so no day of the
    # season should be drawn much more or less often than another (bounds: common practice, no
    # source; 2000 replicates give each day about 2000 draws, a relative error near 0.03)
    sections = {"season": {"months": [4, 5, 6, 7, 8, 9]}}
    history = _history(make_history, synthetic, seed, **sections)
    rows = _resampler(history, 1.0, make_scenario, **sections).draw(np.random.default_rng(seed), 2000)
    weight = np.bincount(rows.ravel(), minlength=history.n_rows)[history.evaluated]
    day = history.day_of_season[history.evaluated]
    per_day = np.bincount(day, weight) / np.bincount(day)
    per_day /= per_day[30:150].mean()
    assert per_day.min() > 0.8 and per_day.max() < 1.25, (per_day[:3], per_day[-3:])


# ------------------------------------------------------------------------------------------------
# the same seed, whatever the chunking


@pytest.fixture(scope="module")
def short_season(make_history, synthetic, make_scenario):
    """Six years, a June-July season (61 occasions): cheap to draw many replicates of."""
    sections = {"season": {"months": [6, 7]}}
    history = _history(make_history, synthetic, 11, years=6, **sections)
    return _resampler(history, 5.0, make_scenario, **sections)


@FEW
@given(seed=st.integers(0, 2**63), n=st.integers(1, 3 * BLOCK + 7))
def test_blocks_are_the_seeded_blocks_cut_to_size(seed, n, short_season):
    chunks = list(short_season.blocks(seed, n))
    assert [c.shape[0] for c in chunks[:-1]] == [BLOCK] * (len(chunks) - 1)
    together = np.concatenate(chunks)
    assert together.shape == (n, short_season.n_occasions)
    by_block = np.concatenate([short_season.draw_block(seed, b) for b in range(len(chunks))])
    np.testing.assert_array_equal(together, by_block[:n])


@FEW
@given(seed=st.integers(0, 2**63), n=st.integers(1, 2 * BLOCK), more=st.integers(1, 2 * BLOCK))
def test_asking_for_more_replicates_keeps_the_first_ones(seed, n, more, short_season):
    fewer = np.concatenate(list(short_season.blocks(seed, n)))
    larger = np.concatenate(list(short_season.blocks(seed, n + more)))
    np.testing.assert_array_equal(larger[:n], fewer)


def test_a_block_is_drawn_the_same_whatever_came_before(short_season, run_seed):
    later_first = [short_season.draw_block(run_seed, b) for b in (3, 0, 2)]
    in_order = [short_season.draw_block(run_seed, b) for b in (0, 2, 3)]
    np.testing.assert_array_equal(later_first[1], in_order[0])
    np.testing.assert_array_equal(later_first[0], in_order[2])
    assert not np.array_equal(in_order[0], in_order[1])  # blocks differ from one another


@settings(max_examples=3, deadline=None, database=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_run_gives_the_same_first_replicates_whatever_the_count(seed, make_history, synthetic,
                                                                make_scenario):
    scenario = make_scenario(season={"months": [6, 7, 8]}, decision={"cutoffs": [0.0, 1.0, 0.05]})
    history = _history(make_history, synthetic, 5, years=5, season={"months": [6, 7, 8]})
    small = run_history(scenario, history, replicates=30, seed=seed)
    large = run_history(scenario, history, replicates=BLOCK + 40, seed=seed)
    np.testing.assert_array_equal(large.model_cost[:30], small.model_cost)
    for name, cost in small.baseline_cost.items():
        np.testing.assert_array_equal(large.baseline_cost[name][:30], cost)
