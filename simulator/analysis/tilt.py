"""Moving the replicates' event rate for a stress case: the tilt of the replay towards (or away from)
runs of history that contain events (:func:`tilt_to_rate`), or, in the calibrated mode, the odds
factor that moves the outcome probabilities (:func:`odds_shift_to_rate`).

scipy is imported inside the functions that use it: its modules take about a second to import, at
every start of the command and of every worker, and most runs need none of them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..inputs.history import History
from ..replay.resample import Resampler
from .probability_changes import shift_odds

__all__ = ["run_event_share", "Tilt", "tilt_to_rate", "odds_shift_to_rate", "PILOT_REPLICATES"]

# seed streams (spawn_key prefixes): tasks/work.py 1, tilt.py 41, replicate_pricer.py 42-43,
# selection.py 45
TILT_STREAM = 41  # pilot replicates that set the tilt
PILOT_REPLICATES = 1000
TILT_LIMIT = 200.0  # |theta| searched; weights exp(theta * (share - 0.5)) stay finite and positive


def run_event_share(expected_event: np.ndarray, history: History, mean_block: float) -> np.ndarray:
    """Expected share of events in a run that starts at each history row, (n_rows,) in [0, 1].

    With run lengths geometric of mean m (stopping at the season's end), a run from row r covers
    r + j with probability (1 - 1/m)^j, so the share is sum_j a^j e_{r+j} / sum_j a^j, a = 1 - 1/m,
    over the evaluated rows of r's season. Rows outside the evaluated history get 0.
    """
    from scipy.signal import lfilter  # imported here: see the module docstring

    out = np.zeros(history.n_rows)
    rows = np.flatnonzero(history.evaluated)
    a = 1.0 - 1.0 / mean_block
    season = history.season[rows]
    cuts = np.flatnonzero(np.diff(season)) + 1
    for part in np.split(rows, cuts):
        # backward recursion s_r = e_r + a s_{r+1}: a first-order filter run on the reversed season
        ahead = lfilter([1.0], [1.0, -a], np.asarray(expected_event, dtype=float)[part][::-1])[::-1]
        length = lfilter([1.0], [1.0, -a], np.ones(part.size))[::-1]
        out[part] = ahead / length
    return out


@dataclass(frozen=True)
class Tilt:
    """Start weights that bring the replicates' event rate to ``target`` (when it can be reached).

    ``lowest`` and ``highest`` are the event rates the pilot replicates reach at the strongest tilt
    either way; ``rate`` and ``standard_error`` the pilot's rate at the chosen tilt.
    """

    theta: float
    weights: np.ndarray | None
    target: float
    lowest: float
    highest: float
    reachable: bool
    rate: float
    standard_error: float


def tilt_to_rate(resampler: Resampler, expected_event: np.ndarray, target: float, seed: int,
                 pilot_replicates: int = PILOT_REPLICATES) -> Tilt:
    """Find the tilt of ``resampler`` under which replicates have mean event rate ``target``.

    Runs are started from history rows with weight exp(theta (s_r - 1/2)), s_r the expected event
    share of a run from row r (:func:`run_event_share`): an exponential tilt of the run choice, the
    device of importance sampling (theta > 0 favours runs with events). theta is found by Brent's
    method on the mean event rate of ``pilot_replicates`` replicates drawn on their own seed stream
    with common random numbers across theta. When the target lies outside what the strongest tilt
    reaches, the nearest extreme is returned with ``reachable`` False.

    ``expected_event`` is the event (0/1) of each history row in the replay, or its recalibrated
    probability in the calibrated mode.
    """
    from scipy.optimize import brentq  # imported here: see the module docstring

    expected_event = np.asarray(expected_event, dtype=float)
    share = run_event_share(expected_event, resampler.history, resampler.mean_block) - 0.5

    def weights(theta: float) -> np.ndarray:
        return np.exp(theta * share)

    def pilot(theta: float) -> np.ndarray:
        tilted = resampler.tilted(weights(theta))
        return np.concatenate([expected_event[rows].mean(axis=1)
                               for rows in tilted.blocks(seed, pilot_replicates, TILT_STREAM)])

    def gap(theta: float) -> float:
        return float(pilot(theta).mean() - target)

    lowest, highest = gap(-TILT_LIMIT) + target, gap(TILT_LIMIT) + target
    reachable = lowest <= target <= highest
    if target <= lowest:
        theta = -TILT_LIMIT
    elif target >= highest:
        theta = TILT_LIMIT
    else:
        theta = float(brentq(gap, -TILT_LIMIT, TILT_LIMIT, xtol=1e-4))
    rates = pilot(theta)
    return Tilt(theta=theta, weights=weights(theta), target=float(target), lowest=float(lowest),
                highest=float(highest), reachable=bool(reachable), rate=float(rates.mean()),
                standard_error=float(rates.std(ddof=1) / np.sqrt(rates.size)))



def odds_shift_to_rate(expected: np.ndarray, target: float) -> Tilt:
    """The odds factor that moves outcome probabilities ``expected`` (any shape) to mean ``target``.

    The calibrated mode's event-rate change: outcomes are drawn from the recalibrated probabilities
    with their odds rescaled (a pure change of base rate, the assumption of Saerens et al. 2002), on
    the base replicates themselves. ``theta`` of the returned :class:`Tilt` is the log factor; the
    reachable range runs from the share of occasions certain to have the event to the share that
    may have it.
    """
    from scipy.optimize import brentq  # imported here: see the module docstring

    expected = np.asarray(expected, dtype=float).ravel()
    lowest, highest = float((expected >= 1).mean()), float((expected > 0).mean())
    reachable = lowest < target < highest
    if reachable:
        theta = float(brentq(lambda t: shift_odds(expected, t).mean() - target, -TILT_LIMIT, TILT_LIMIT,
                             xtol=1e-10))
    else:
        theta = TILT_LIMIT if target >= highest else -TILT_LIMIT
    rate = float(shift_odds(expected, theta).mean())
    return Tilt(theta=theta, weights=None, target=float(target), lowest=lowest, highest=highest,
                reachable=bool(reachable), rate=rate, standard_error=0.0)

