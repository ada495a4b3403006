"""Counts and rates of the classification matrix at every cutoff, and forecast-quality scores.

The decision rule everywhere is: act when the probability is at least the cutoff (``p >= cutoff``).
Counting is done once per occasion: each probability is given the number of cutoffs it reaches (its
"slot"), and the counts at every cutoff follow from cumulative sums of per-slot tallies, as in
scikit-learn's ``_binary_clf_curve``. The same function counts one history or many replicate seasons.

Rates of the matrix, scores of the probabilities (Brier, ROC area, reliability) and the value of
acting on them (relative value, net benefit) are pure functions of arrays: elementwise, float64,
NaN where a quantity is undefined, no warnings.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from ..notation import decimals

__all__ = [
    "Contingency",
    "cutoff_slots",
    "counts_from_slots",
    "count_at_cutoffs",
    "Rates",
    "rates",
    "hit_rate",
    "false_alarm_rate",
    "specificity",
    "miss_rate",
    "false_alarm_ratio",
    "proportion_correct",
    "peirce_score",
    "base_rate",
    "brier_score",
    "brier_skill_score",
    "BrierDecomposition",
    "brier_decomposition",
    "roc_auc",
    "mid_ranks",
    "roc_points",
    "ReliabilityTable",
    "reliability_table",
    "relative_value",
    "relative_value_from_costs",
    "net_benefit",
    "net_benefit_treat_all",
    "value_curve",
]


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
    in whole units of 10^-12, :mod:`simulator.decimals`); cutoffs ascending."""
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
    # acted at cutoff k <=> slot > k: reversed cumulative sum over slots, dropping slot 0
    reached = np.cumsum(tally[:, ::-1, :], axis=1)[:, ::-1, :][:, 1:, :]
    totals = tally.sum(axis=1)  # (n_rep, 2): non-events, events
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


# --------------------------------------------------------------------------------------------------
# Rates of the classification matrix (elementwise; NaN where a denominator is 0)


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
    decimals (:func:`simulator.decimals.bins`)."""
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


# --------------------------------------------------------------------------------------------------
# Value of acting on the forecast


def relative_value(hit_rate, false_alarm_rate, base_rate, cost_loss_ratio):
    """Relative economic value of acting on the forecast: 1 = perfect, 0 = climate.

    V = (E_climate - E_forecast) / (E_climate - E_perfect); expenses per occasion in units
    of the loss, a = cost_loss_ratio, s = base_rate, H and F the rates:
    E_climate = min(a, s), E_perfect = s*a, E_forecast = F*a*(1-s) - H*s*(1-a) + s.
    At a = s it reduces to V = H - F, the greatest value over a.

    Parameters
    ----------
    hit_rate, false_alarm_rate, base_rate, cost_loss_ratio : float arrays
        Broadcast against each other, for example H and F of shape (n_cutoffs,) with a ratio of
        shape (n_ratios, 1) give (n_ratios, n_cutoffs).

    Returns
    -------
    float array of the broadcast shape; NaN where E_climate = E_perfect (a or s at 0 or 1).
    V can be negative: acting on the forecast then costs more than the better fixed action.

    References
    ----------
    Richardson, D. S. (2000). Skill and relative economic value of the ECMWF
    ensemble prediction system. Q. J. R. Meteorol. Soc. 126, 649-667.
    """
    h = np.asarray(hit_rate, dtype=np.float64)
    f = np.asarray(false_alarm_rate, dtype=np.float64)
    s = np.asarray(base_rate, dtype=np.float64)
    a = np.asarray(cost_loss_ratio, dtype=np.float64)
    e_climate = np.minimum(a, s)
    e_perfect = s * a
    e_forecast = f * a * (1.0 - s) - h * s * (1.0 - a) + s
    return _ratio(e_climate - e_forecast, e_climate - e_perfect)


def relative_value_from_costs(expense_model, expense_never, expense_always, expense_perfect):
    """Relative value from mean expenses per occasion under any 2x2 cost matrix.

    V = (min(E_never, E_always) - E_model) / (min(E_never, E_always) - E_perfect), with E the
    mean expense per occasion (any currency) of acting on the forecast, never acting, always
    acting and acting exactly on the events. Elementwise with broadcasting; NaN where the
    denominator is 0.

    Adding a constant to the costs of one true class, or scaling all costs, leaves V unchanged;
    in cost-loss units this is :func:`relative_value` with a = C'/(C'+D'), C' = c_fa - c_cn,
    D' = c_m - c_h (derived; METHODS.md 1.1-1.2).

    References
    ----------
    Richardson (2000), as for :func:`relative_value`; general matrix as in Elkan, C. (2001).
    The foundations of cost-sensitive learning. IJCAI-01, 973-978.
    """
    e_model = np.asarray(expense_model, dtype=np.float64)
    e_climate = np.minimum(np.asarray(expense_never, dtype=np.float64),
                           np.asarray(expense_always, dtype=np.float64))
    return _ratio(e_climate - e_model, e_climate - np.asarray(expense_perfect, dtype=np.float64))


def _odds(threshold) -> np.ndarray:
    pt = np.asarray(threshold, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        return pt / (1.0 - pt)


def net_benefit(hits, false_alarms, n, threshold):
    """Net benefit of acting on the forecast at threshold probability pt.

    NB = hits/n - (false_alarms/n) * pt/(1-pt): events acted on per occasion, less the false
    alarms weighted by the threshold odds (the harm:benefit exchange rate). NB of never acting
    is 0. With pt = C'/(C'+D'), NB = (E_never - E_model)/D' per occasion (derived, METHODS 1.3).

    Parameters
    ----------
    hits, false_alarms : int arrays, e.g. shape (n_cutoffs,)
    n : int or int array
        Number of occasions.
    threshold : float array in [0, 1), broadcast against the counts

    Returns
    -------
    float array of the broadcast shape.

    References
    ----------
    Vickers, A. J. & Elkin, E. B. (2006). Decision curve analysis: a novel method for evaluating
    prediction models. Med. Decis. Making 26(6), 565-574.
    """
    n = np.asarray(n, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (np.asarray(hits, dtype=np.float64) / n
               - np.asarray(false_alarms, dtype=np.float64) / n * _odds(threshold))
    return out[()]


def net_benefit_treat_all(prevalence, threshold):
    """Net benefit of always acting: NB_all = s - (1 - s) * pt/(1 - pt), s the prevalence.

    Elementwise with broadcasting. Vickers & Elkin (2006), as for :func:`net_benefit`.
    """
    s = np.asarray(prevalence, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        return (s - (1.0 - s) * _odds(threshold))[()]


def value_curve(c: Contingency, ratios) -> np.ndarray:
    """Potential relative value for each cost-loss ratio: the best V over the cutoffs.

    V_pot(a) = max_k V(H_k, F_k, s, a) (:func:`relative_value`), the upper envelope of the
    value curves of the single cutoffs. It assumes the user picks the best cutoff for his ratio
    with hindsight; value at a cutoff chosen in advance ("actual" value) can be lower (Atger 2001).
    It is not clipped at 0: include cutoffs that mean always acting (0) and never acting (above
    every p) for the envelope to contain climatology.

    Parameters
    ----------
    c : Contingency
        Counts of shape (n_cutoffs,) or (n_replicates, n_cutoffs).
    ratios : float array, shape (n_ratios,)
        Cost-loss ratios a = C/L.

    Returns
    -------
    float array, shape (n_ratios,) or (n_replicates, n_ratios); NaN where V is NaN at every cutoff.

    References
    ----------
    Richardson (2000), as for :func:`relative_value`. Atger, F. (2001). Verification of intense
    precipitation forecasts from single models and ensemble prediction systems. Nonlin.
    Processes Geophys. 8, 401-417.
    """
    ratios = np.asarray(ratios, dtype=np.float64)
    if ratios.ndim != 1:
        raise ValueError(f"ratios must be 1-D, got shape {ratios.shape}")
    r = rates(c)
    h = np.asarray(r.hit_rate, dtype=np.float64)[..., None, :]
    f = np.asarray(r.false_alarm_rate, dtype=np.float64)[..., None, :]
    s = np.asarray(r.base_rate, dtype=np.float64)[..., None, :]
    v = relative_value(h, f, s, ratios[:, None])       # (..., n_ratios, n_cutoffs)
    return np.fmax.reduce(v, axis=-1)                    # NaN-ignoring max, no warning
