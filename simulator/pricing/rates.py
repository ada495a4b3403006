"""Rates of the classification matrix: hit rate, false alarm rate and ratio, and their kin.

Elementwise on counts of any shape (:class:`~simulator.pricing.contingency.Contingency`), float64,
NaN where a denominator is 0, no warnings.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .contingency import Contingency

__all__ = ["Rates", "rates", "hit_rate", "false_alarm_rate", "specificity", "miss_rate",
           "false_alarm_ratio", "proportion_correct", "peirce_score", "base_rate"]


def _ratio(numerator, denominator) -> np.ndarray:
    """``numerator / denominator`` in float64, NaN where the denominator is 0, no warning."""
    num = np.asarray(numerator, dtype=np.float64)
    den = np.asarray(denominator, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(den == 0, np.nan, num / den)
    return out[()]


def hit_rate(c: Contingency) -> np.ndarray:
    """Hit rate H = hits / (hits + misses): share of events acted on (sensitivity, POD)."""
    return _ratio(c.hits, np.add(c.hits, c.misses))


def false_alarm_rate(c: Contingency) -> np.ndarray:
    """False alarm rate F = false_alarms / (false_alarms + correct_negatives): share of non-events
    acted on (probability of false detection). Not the false alarm *ratio*."""
    return _ratio(c.false_alarms, np.add(c.false_alarms, c.correct_negatives))


def specificity(c: Contingency) -> np.ndarray:
    """Specificity 1 - F = correct_negatives / (false_alarms + correct_negatives)."""
    return _ratio(c.correct_negatives, np.add(c.false_alarms, c.correct_negatives))


def miss_rate(c: Contingency) -> np.ndarray:
    """Miss rate 1 - H = misses / (hits + misses): share of events not acted on."""
    return _ratio(c.misses, np.add(c.hits, c.misses))


def false_alarm_ratio(c: Contingency) -> np.ndarray:
    """False alarm ratio FAR = false_alarms / (hits + false_alarms): share of actions that were
    not needed. Not the false alarm *rate*."""
    return _ratio(c.false_alarms, np.add(c.hits, c.false_alarms))


def proportion_correct(c: Contingency) -> np.ndarray:
    """Proportion correct PC = (hits + correct_negatives) / n."""
    return _ratio(np.add(c.hits, c.correct_negatives), c.n_occasions)


def peirce_score(c: Contingency) -> np.ndarray:
    """Peirce skill score (Hanssen-Kuipers discriminant, true skill statistic) PSS = H - F."""
    return (hit_rate(c) - false_alarm_rate(c))[()]


def base_rate(c: Contingency) -> np.ndarray:
    """Base rate (sample climatology) s = (hits + misses) / n."""
    return _ratio(c.n_events, c.n_occasions)


@dataclass(frozen=True)
class Rates:
    """Rates of a classification matrix, each float64 with the shape of the counts.

    NaN where a denominator is 0 (for example the hit rate of a period with no event).
    See the functions of the same names for the formulas.
    """

    hit_rate: np.ndarray
    false_alarm_rate: np.ndarray
    specificity: np.ndarray
    miss_rate: np.ndarray
    false_alarm_ratio: np.ndarray
    proportion_correct: np.ndarray
    peirce_score: np.ndarray
    base_rate: np.ndarray


def rates(c: Contingency) -> Rates:
    """Every rate of :class:`Rates` for a classification matrix of any shape.

    Parameters
    ----------
    c : Contingency
        Counts of shape ``()``, ``(n_cutoffs,)`` or ``(n_replicates, n_cutoffs)``.

    Returns
    -------
    Rates
        Fields of the same shape as the counts.

    References
    ----------
    Definitions as in the CAWCR verification pages and Murphy, A. H. (1996). The Finley affair:
    a signal event in the history of forecast verification. Wea. Forecasting 11, 3-20.
    """
    return Rates(hit_rate=hit_rate(c), false_alarm_rate=false_alarm_rate(c),
                 specificity=specificity(c), miss_rate=miss_rate(c),
                 false_alarm_ratio=false_alarm_ratio(c), proportion_correct=proportion_correct(c),
                 peirce_score=peirce_score(c), base_rate=base_rate(c))

