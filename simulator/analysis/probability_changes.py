"""Forecast probabilities changed for a stress case: moved to a new event rate (:func:`prior_shift`,
:func:`shift_odds`), stripped of skill (:func:`degrade`), or blurred by noise (:func:`log_odds_noise`); the
probabilities of a case's views (:func:`view_probabilities`).

scipy is imported inside the functions that use it: its modules take about a second to import, at
every start of the command and of every worker, and most runs need none of them.
"""

from __future__ import annotations

import numpy as np

__all__ = ["prior_shift", "degrade", "log_odds_noise", "shift_odds", "view_probabilities"]


def prior_shift(p: np.ndarray, base_rate: float, new_rate: float) -> np.ndarray:
    """Probabilities calibrated at ``base_rate`` moved to a world whose event rate is ``new_rate``.

    p' = b'(p - p b) / (b - p b + b' p - b b'), which is Bayes' rule with the prior odds rescaled
    by [b'/(1-b')] / [b/(1-b)], assuming the class-conditional distributions of the forecast stay
    as they were (Elkan 2001, Theorem 2; Saerens, Latinne and Decaestecker
    2002, section 2; equation numbers from memory, check).
    Returns ``p`` itself when the rates are equal.

    References
    ----------
    Elkan, C. (2001). The foundations of cost-sensitive learning. IJCAI 2001, 973-978.
    Saerens, M., Latinne, P. and Decaestecker, C. (2002). Adjusting the outputs of a classifier to
    new a priori probabilities: a simple procedure. Neural Computation 14(1), 21-41.
    """
    p = np.asarray(p, dtype=float)
    b, b2 = float(base_rate), float(new_rate)
    if not (0 < b < 1 and 0 < b2 < 1):
        raise ValueError(f"base rates must lie strictly between 0 and 1, got {b} and {b2}")
    if b == b2:
        return p
    return b2 * (p - p * b) / (b - p * b + b2 * p - b * b2)


def degrade(p: np.ndarray, base_rate: float, skill: float) -> np.ndarray:
    """Probabilities keeping ``skill`` of their distance from the base rate: b + skill (p - b).

    ``skill = 1`` leaves them as they are, ``skill = 0`` turns them into the base rate (a
    climatological forecast with no discrimination). A linear shrinkage towards climatology;
    common practice, no single source.
    """
    p = np.asarray(p, dtype=float)
    if skill == 1:
        return p
    return base_rate + skill * (p - base_rate)


def log_odds_noise(p: np.ndarray, sd: float, rng: np.random.Generator) -> np.ndarray:
    """``p`` with independent normal noise of standard deviation ``sd`` added to its log-odds.

    Probabilities of exactly 0 or 1 are first moved to 0.001 or 0.999, so noise can reach them.
    """
    from scipy.special import expit, logit  # imported here: see the module docstring

    p = np.clip(np.asarray(p, dtype=float), 1e-3, 1 - 1e-3)
    return expit(logit(p) + sd * rng.standard_normal(p.shape))



def shift_odds(p: np.ndarray, log_factor: float) -> np.ndarray:
    """Probabilities with their odds multiplied by exp(``log_factor``): Bayes' rule for a change of
    base rate (see :func:`prior_shift`, which names the factor by the two base rates)."""
    p = np.asarray(p, dtype=float)
    factor = np.exp(log_factor)
    return factor * p / (factor * p + 1.0 - p)


def view_probabilities(p: np.ndarray, training_rate: float, skill: float | None,
                       rates: tuple[float, float] | None) -> list[tuple[str, np.ndarray]]:
    """The probabilities of each view of a stress case, for one forecast ``p``: ``"as_forecast"``
    (degraded by ``skill`` towards ``training_rate``, :func:`degrade`, when given), and, when the
    case changes the event rate (``rates``: the base rate and the new one), ``"adapted"``: those
    moved to the new rate by Bayes' rule (:func:`prior_shift`, the new rate kept inside
    [1e-6, 1 - 1e-6])."""
    forecast = p if skill is None else degrade(p, training_rate, skill)
    views = [("as_forecast", forecast)]
    if rates is not None:
        base_rate, new_rate = rates
        views.append(("adapted", prior_shift(forecast, base_rate, min(max(new_rate, 1e-6), 1 - 1e-6))))
    return views
