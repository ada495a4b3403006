"""Scores of the probabilities themselves: Brier score and its partition, ROC area and points,
reliability table.

Pure functions of arrays: float64, NaN where a quantity is undefined, no warnings. The counts they
read come from :mod:`~simulator.pricing.contingency`, the rates from :mod:`~simulator.pricing.rates`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from ..notation import decimals
from .contingency import Contingency
from .rates import _ratio, false_alarm_rate, hit_rate

__all__ = ["brier_score", "brier_skill_score", "BrierDecomposition", "brier_decomposition", "roc_auc",
           "mid_ranks", "roc_points", "ReliabilityTable", "reliability_table"]


# --------------------------------------------------------------------------------------------------
# Scores of the probabilities themselves


def _as_probability(p) -> np.ndarray:
    p = np.asarray(p, dtype=np.float64)
    bad = ~((p >= 0.0) & (p <= 1.0))
    if bad.any():
        raise ValueError(f"probability {p[bad].flat[0]!r} is outside [0, 1]")
    return p


def _as_event(event, shape) -> np.ndarray:
    event = np.asarray(event)
    if event.dtype != bool:
        if not np.isin(event, (0, 1)).all():
            raise ValueError("event must be boolean or 0/1")
        event = event.astype(bool)
    if event.shape != tuple(shape):
        raise ValueError(f"event has shape {event.shape}, probabilities {tuple(shape)}")
    return event


def _scalar(x):
    x = np.asarray(x)[()]
    return float(x) if np.ndim(x) == 0 else x


def brier_score(p, event):
    """Brier score BS = mean over occasions of (p - o)^2, in [0, 1]; lower is better.

    Parameters
    ----------
    p : float array, shape (n_occasions,) or (n_replicates, n_occasions)
    event : bool or 0/1 array, same shape

    Returns
    -------
    float, or array of shape (n_replicates,)

    Notes
    -----
    This is the modern one-category form, equal to scikit-learn's ``brier_score_loss`` for 1-D
    input. Brier's original definition sums over both categories and is twice this (range [0, 2]).

    References
    ----------
    Brier, G. W. (1950). Verification of forecasts expressed in terms of probability.
    Mon. Wea. Rev. 78(1), 1-3.
    """
    p = _as_probability(p)
    o = _as_event(event, p.shape)
    return _scalar(np.mean((p - o) ** 2, axis=-1))


def brier_skill_score(p, event, reference=None):
    """Brier skill score BSS = 1 - BS / BS_ref; 1 = perfect, 0 = no better than the reference.

    Parameters
    ----------
    p : float array, shape (n_occasions,) or (n_replicates, n_occasions)
    event : bool or 0/1 array, same shape
    reference : float or float array broadcastable to ``p``, optional
        The reference *probabilities* (for example a seasonal climatology per occasion, or one
        constant). Default: the sample climatology s = mean(event), for which BS_ref = s(1 - s).

    Returns
    -------
    float, or array of shape (n_replicates,); NaN when BS_ref = 0 (one outcome only).

    References
    ----------
    Brier (1950), as for :func:`brier_score`; skill-score form as in Murphy, A. H. (1973). A new
    vector partition of the probability score. J. Appl. Meteor. 12, 595-600.
    """
    p = _as_probability(p)
    o = _as_event(event, p.shape)
    bs = np.mean((p - o) ** 2, axis=-1)
    if reference is None:
        s = np.mean(o, axis=-1)
        bs_ref = s * (1.0 - s)
    else:
        ref = np.broadcast_to(_as_probability(reference), p.shape)
        bs_ref = np.mean((ref - o) ** 2, axis=-1)
    return _scalar(1.0 - _ratio(bs, bs_ref))


class BrierDecomposition(NamedTuple):
    """Murphy's partition BS = reliability - resolution + uncertainty (floats)."""

    reliability: float
    resolution: float
    uncertainty: float


def brier_decomposition(p, event, n_bins: int | None = None) -> BrierDecomposition:
    """Murphy (1973) partition of the Brier score into reliability, resolution and uncertainty.

    With groups k of n_k occasions, mean forecast f_k and observed frequency obar_k, and
    obar the overall frequency over N occasions:
    REL = (1/N) sum_k n_k (f_k - obar_k)^2, RES = (1/N) sum_k n_k (obar_k - obar)^2,
    UNC = obar (1 - obar).

    Parameters
    ----------
    p : float array, shape (n_occasions,)
    event : bool or 0/1 array, shape (n_occasions,)
    n_bins : int, optional
        None (default) groups occasions by distinct values of ``p``; then BS = REL - RES + UNC
        exactly. An int uses the uniform bins of :func:`reliability_table`; with continuous ``p``
        the partition is then approximate (two within-bin terms are missing; Stephenson et al.
        2008).

    Returns
    -------
    BrierDecomposition
        Named tuple ``(reliability, resolution, uncertainty)``.

    References
    ----------
    Murphy, A. H. (1973). A new vector partition of the probability score. J. Appl. Meteor. 12,
    595-600. Stephenson, D. B., Coelho, C. A. S. & Jolliffe, I. T. (2008). Two extra components
    in the Brier score decomposition. Wea. Forecasting 23(4), 752-757.
    """
    p = _as_probability(p)
    o = _as_event(event, p.shape)
    if p.ndim != 1 or p.size == 0:
        raise ValueError(f"brier_decomposition needs a non-empty 1-D p, got shape {p.shape}")
    if n_bins is None:
        _, group = np.unique(p, return_inverse=True)
    else:
        group = _bin_index(p, n_bins)
    n_k = np.bincount(group)
    keep = n_k > 0
    n_k = n_k[keep]
    f_k = np.bincount(group, weights=p)[keep] / n_k
    obar_k = np.bincount(group, weights=o)[keep] / n_k
    obar = o.mean()
    n = p.size
    return BrierDecomposition(
        reliability=float(np.sum(n_k * (f_k - obar_k) ** 2) / n),
        resolution=float(np.sum(n_k * (obar_k - obar) ** 2) / n),
        uncertainty=float(obar * (1.0 - obar)),
    )


def roc_auc(p, event):
    """Area under the ROC curve: the chance that a random event gets a higher p than a random
    non-event, ties counting 1/2 (Mann-Whitney U / (n_events n_non_events)).

    AUC = (sum of the mid-ranks of the events - n1 (n1 + 1) / 2) / (n1 n0), ranks over all
    occasions with ties given their average rank.

    Parameters
    ----------
    p : float array, shape (n_occasions,) or (n_replicates, n_occasions)
    event : bool or 0/1 array, same shape

    Returns
    -------
    float, or array of shape (n_replicates,); NaN where either class is absent.

    References
    ----------
    Mann, H. B. & Whitney, D. R. (1947). On a test of whether one of two random variables is
    stochastically larger than the other. Ann. Math. Statist. 18, 50-60. The equality of this
    statistic and the trapezoidal ROC area is standard (from memory, check: Bamber 1975).
    """
    p = np.asarray(p, dtype=np.float64)
    o = _as_event(event, p.shape)
    ranks = mid_ranks(p)
    n1 = o.sum(axis=-1).astype(np.float64)
    n0 = o.shape[-1] - n1
    u = np.sum(ranks * o, axis=-1) - n1 * (n1 + 1.0) / 2.0
    return _scalar(_ratio(u, n1 * n0))


def mid_ranks(x) -> np.ndarray:
    """Ranks 1..n along the last axis, tied values sharing the mean of the ranks they span (the
    "average" ranks of ``scipy.stats.rankdata``, made here because importing ``scipy.stats`` takes
    most of a second, at every start of the command and of every worker)."""
    x = np.asarray(x, dtype=np.float64)
    order = np.argsort(x, axis=-1, kind="stable")
    ordered = np.take_along_axis(x, order, axis=-1)
    n = x.shape[-1]
    position = np.broadcast_to(np.arange(n), x.shape)
    new_value = np.ones(x.shape, dtype=bool)  # where a run of equal values starts, in sorted order
    new_value[..., 1:] = ordered[..., 1:] != ordered[..., :-1]
    last_of_run = np.ones(x.shape, dtype=bool)
    last_of_run[..., :-1] = new_value[..., 1:]
    first = np.maximum.accumulate(np.where(new_value, position, 0), axis=-1)  # of each value's run
    last = np.flip(np.minimum.accumulate(np.flip(np.where(last_of_run, position, n), axis=-1), axis=-1),
                   axis=-1)
    ranks = np.empty(x.shape)
    np.put_along_axis(ranks, order, (first + last) / 2.0 + 1.0, axis=-1)
    return ranks


def roc_points(c: Contingency) -> tuple[np.ndarray, np.ndarray]:
    """ROC points (false alarm rate, hit rate) in plotting order, from (0, 0) to (1, 1).

    Parameters
    ----------
    c : Contingency
        Counts of shape (n_cutoffs,) or (n_replicates, n_cutoffs), cutoffs ascending (as from
        :func:`count_at_cutoffs`).

    Returns
    -------
    false_alarm_rate, hit_rate : float arrays, shape (..., n_cutoffs + 2)
        The highest cutoff comes first, after the (0, 0) end of never acting; the (1, 1) end of
        always acting comes last. The area under these points by the trapezoid rule equals
        :func:`roc_auc` when the cutoffs are the distinct values of p.
    """
    f = np.asarray(false_alarm_rate(c), dtype=np.float64)[..., ::-1]
    h = np.asarray(hit_rate(c), dtype=np.float64)[..., ::-1]
    zero = np.zeros(f.shape[:-1] + (1,))
    return (np.concatenate([zero, f, zero + 1.0], axis=-1),
            np.concatenate([zero, h, zero + 1.0], axis=-1))


# --------------------------------------------------------------------------------------------------
# Reliability


def _bin_edges(n_bins: int) -> np.ndarray:
    if int(n_bins) != n_bins or n_bins < 1:
        raise ValueError(f"n_bins must be a positive integer, got {n_bins!r}")
    # rounded so that 0.3 is an edge, not 0.30000000000000004 (STYLE.md section 5)
    return np.round(np.linspace(0.0, 1.0, int(n_bins) + 1), 12)


def _bin_index(p: np.ndarray, n_bins: int) -> np.ndarray:
    """Uniform bin of each p: bins [lower, upper), the last one [lower, 1], edges compared as
    decimals (:func:`simulator.notation.decimals.bins`)."""
    _bin_edges(n_bins)  # checks n_bins
    return decimals.bins(p, n_bins)


@dataclass(frozen=True)
class ReliabilityTable:
    """One row per uniform bin of the forecast probability, each field shape (n_bins,)."""

    bin_lower: np.ndarray
    bin_upper: np.ndarray
    n: np.ndarray
    forecast_mean: np.ndarray
    observed_frequency: np.ndarray


def reliability_table(p, event, n_bins: int = 10) -> ReliabilityTable:
    """Observed frequency against mean forecast in uniform bins of p (a reliability diagram).

    Parameters
    ----------
    p : float array, shape (n_occasions,)
    event : bool or 0/1 array, shape (n_occasions,)
    n_bins : int, default 10
        Bins are [k/n_bins, (k+1)/n_bins), the last closed at 1, so p = 1 falls in the last bin
        and a p on an edge goes to the bin above (as the rule "act when p >= cutoff" does).

    Returns
    -------
    ReliabilityTable
        ``n`` is int64; ``forecast_mean`` and ``observed_frequency`` are NaN for empty bins,
        which stay in the table with n = 0.

    Notes
    -----
    scikit-learn's ``calibration_curve`` (strategy 'uniform') drops empty bins and sends a p on an
    inner edge to the bin below; away from edges the two agree.

    References
    ----------
    Bröcker, J. & Smith, L. A. (2007). Increasing the reliability of reliability diagrams.
    Wea. Forecasting 22, 651-661.
    """
    p = _as_probability(p)
    o = _as_event(event, p.shape)
    if p.ndim != 1:
        raise ValueError(f"reliability_table needs a 1-D p, got shape {p.shape}")
    edges = _bin_edges(n_bins)
    k = _bin_index(p, n_bins)
    n_k = np.bincount(k, minlength=int(n_bins)).astype(np.int64)
    return ReliabilityTable(
        bin_lower=edges[:-1], bin_upper=edges[1:], n=n_k,
        forecast_mean=_ratio(np.bincount(k, weights=p, minlength=int(n_bins)), n_k),
        observed_frequency=_ratio(np.bincount(k, weights=o, minlength=int(n_bins)), n_k),
    )
