"""The classification (contingency) matrix at every cutoff, counted once per occasion.

The decision rule everywhere is: act when the probability is at least the cutoff (``p >= cutoff``).
Counting is done once per occasion: each probability is given the number of cutoffs it reaches (its
"slot"), and the counts at every cutoff follow from cumulative sums of per-slot tallies, as in
scikit-learn's ``_binary_clf_curve``. The same function counts one history or many replicate seasons.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..notation import decimals

__all__ = ["Contingency", "cutoff_slots", "counts_from_slots", "count_at_cutoffs"]


@dataclass(frozen=True)
class Contingency:
    """The classification (contingency) matrix, each field an int64 array of the same shape.

    Shapes are ``(n_cutoffs,)`` for one history or ``(n_replicates, n_cutoffs)`` for replicates.
    """

    hits: np.ndarray
    false_alarms: np.ndarray
    misses: np.ndarray
    correct_negatives: np.ndarray

    @property
    def n_events(self) -> np.ndarray:
        return self.hits + self.misses

    @property
    def n_non_events(self) -> np.ndarray:
        return self.false_alarms + self.correct_negatives

    @property
    def n_occasions(self) -> np.ndarray:
        return self.n_events + self.n_non_events

    def __getitem__(self, key) -> "Contingency":
        """Select cutoffs (or replicates) from every field at once."""
        return Contingency(self.hits[key], self.false_alarms[key], self.misses[key],
                           self.correct_negatives[key])


def cutoff_slots(p: np.ndarray, cutoffs: np.ndarray) -> np.ndarray:
    """How many cutoffs each probability reaches: ``#{k : p >= cutoffs[k]}`` as decimals (compared
    in whole units of 10^-12, :mod:`simulator.notation.decimals`); cutoffs ascending."""
    return decimals.slots(p, cutoffs)


def counts_from_slots(slots: np.ndarray, event: np.ndarray, n_cutoffs: int) -> Contingency:
    """Classification matrix at every cutoff from per-occasion slots.

    Parameters
    ----------
    slots : int array, shape (n_occasions,) or (n_replicates, n_occasions)
        From :func:`cutoff_slots`; an occasion with slot ``s`` is acted on at cutoffs ``k < s``.
    event : bool array, same shape
        Whether the event of interest happened.
    n_cutoffs : int

    Returns
    -------
    Contingency with fields of shape (n_cutoffs,) or (n_replicates, n_cutoffs).
    """
    slots = np.asarray(slots, dtype=np.int64)
    event = np.asarray(event, dtype=bool)
    one = slots.ndim == 1
    slots2 = slots[None, :] if one else slots
    event2 = event[None, :] if one else event
    n_rep = slots2.shape[0]
    width = 2 * (n_cutoffs + 1)
    # one bincount for all replicates: code = replicate * width + 2 * slot + event
    code = (np.arange(n_rep, dtype=np.int64)[:, None] * width + 2 * slots2 + event2).ravel()
    tally = np.bincount(code, minlength=n_rep * width).reshape(n_rep, n_cutoffs + 1, 2)
    # acted at cutoff k <=> slot > k: reversed cumulative sum over slots, whose slot 0 holds every
    # occasion (the totals: a sum over the middle axis of the tally costs more than the whole cumsum)
    reached = np.cumsum(tally[:, ::-1, :], axis=1)[:, ::-1, :]
    totals = reached[:, 0, :]  # (n_rep, 2): non-events, events
    reached = reached[:, 1:, :]
    hits = reached[:, :, 1]
    false_alarms = reached[:, :, 0]
    misses = totals[:, 1:2] - hits
    correct_negatives = totals[:, 0:1] - false_alarms
    out = Contingency(hits, false_alarms, misses, correct_negatives)
    return out[0] if one else out


def count_at_cutoffs(p: np.ndarray, event: np.ndarray, cutoffs: np.ndarray) -> Contingency:
    """Classification matrix at every cutoff (act when ``p >= cutoff``)."""
    cutoffs = np.asarray(cutoffs, dtype=float)
    return counts_from_slots(cutoff_slots(p, cutoffs), event, cutoffs.size)
