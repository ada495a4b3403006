"""The event-rate tilt reaches its target: over targets and seeds, replicates drawn with the tilt
have a mean event rate within Monte Carlo error of the target.

The tilt (``simulator.analysis.tilt.tilt_to_rate``) is an exponential tilt of which historical run a
replicate copies, the device of importance sampling; that a tilted draw hits a set mean is checked
here by simulation (common practice, no single source). The history is invented test data: a
two-state Markov chain of wet spells (``tests/conftest.py``).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from simulator.inputs.history import history_from_frame
from simulator.replay.resample import Resampler, season_calendar
from simulator.inputs.scenario import scenario_from_text
from simulator.analysis.tilt import tilt_to_rate

N_REPLICATES = 400
PILOT = 500


@pytest.fixture(scope="module")
def resampler(synthetic, toml_text):
    frame = synthetic.markov_frame(np.random.default_rng(20270502), years=5, p01=0.2, p11=0.6,
                                   start="2018-01-01")
    scenario = scenario_from_text(toml_text(season={"months": [4, 5, 6, 7, 8, 9]}))
    history = history_from_frame(frame, scenario, label="history.csv")
    return Resampler(history, season_calendar(history, scenario.season), mean_block=3.0, window_days=10)


def _rates(sampler: Resampler, event: np.ndarray, seed: int) -> np.ndarray:
    return np.concatenate([event[rows].mean(axis=1) for rows in sampler.blocks(seed, N_REPLICATES)])


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(multiplier=st.floats(0.6, 1.5), seed=st.integers(0, 2**31 - 1))
def test_tilted_replicates_hit_the_target_event_rate(resampler, multiplier, seed):
    event = resampler.history.event.astype(float)
    base = _rates(resampler, event, seed).mean()  # about 1/3: stationary share 0.2 / (1 - 0.6 + 0.2)
    target = multiplier * base
    tilt = tilt_to_rate(resampler, event, target, seed, pilot_replicates=PILOT)
    assert tilt.reachable, (target, tilt.lowest, tilt.highest)  # 0.2 to 0.5 is well inside
    rates = _rates(resampler.tilted(tilt.weights), event, seed)
    # Monte Carlo error of the replicates' mean, and of the pilot that set the tilt
    error = np.hypot(rates.std(ddof=1) / np.sqrt(rates.size), tilt.standard_error)
    assert abs(rates.mean() - target) <= 4 * error + 1e-3  # 1e-3: brentq's tolerance on theta


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(seed=st.integers(0, 2**31 - 1))
def test_targets_beyond_the_history_are_reported_unreachable(resampler, seed):
    event = resampler.history.event.astype(float)
    tilt = tilt_to_rate(resampler, event, 0.999, seed, pilot_replicates=PILOT)
    assert not tilt.reachable and tilt.rate <= tilt.highest + 1e-12 < 0.999
