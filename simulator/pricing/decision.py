"""From replicate season costs to a decision: the recommended cutoff, how sure it is, and where the
model pays against the reference.

Pure functions of arrays; costs are per replicate season (rows) and cutoff (columns).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

__all__ = ["Distribution", "Decision", "distribution", "cutoff_ranges", "decide", "per_cutoff",
           "season_cost_columns", "quantiles_of_rows", "shortfall", "objective_cost", "money_tolerance", "cheaper", "lowest",
           "NEAR_OPTIMAL", "CONFIDENT", "N_HISTORIES", "SAME_MONEY", "OBJECTIVES", "OBJECTIVE_COLUMN",
           "OBJECTIVE_NAMES", "SHORTFALL_SHARE"]

NEAR_OPTIMAL = 0.01  # a cutoff within 1% of the lowest mean season cost is near-optimal
CONFIDENT = 0.95  # "confident" break-even: the model is cheaper in at least this share of seasons
N_HISTORIES = 1000  # bootstrap histories for the interval of the recommended cutoff
QUANTILES = (0.05, 0.50, 0.95)
SAME_MONEY = 1e-9  # sums of money closer than this share of the largest figure compared are equal
SHORTFALL_SHARE = 0.10  # expected shortfall over the worst 10% of seasons
# what a cutoff is chosen by ([decision] objective), and the cutoffs.csv column that holds it
OBJECTIVES = ("mean", "p95", "shortfall10")
OBJECTIVE_COLUMN = {"mean": "mean_cost", "p95": "p95_cost", "shortfall10": "shortfall10_cost"}
OBJECTIVE_NAMES = {"mean": "expected season cost", "p95": "95th percentile of season cost",
                   "shortfall10": "mean cost of the worst 10% of seasons"}  # what each one minimises
_HISTORY_CHUNK = 100  # bootstrap histories judged at once by a risk objective (bounds memory)


def money_tolerance(*costs) -> float:
    """The difference below which two sums of money compared together are taken as equal.

    :data:`SAME_MONEY` (a billionth) of the largest magnitude among ``costs``. A cutoff that acts
    exactly as the reference rule costs the same money, but its season cost is summed in another
    order (the never-acting cost plus the differences acting makes, against the reference's own
    cells), so the two floats can differ in the last bits: about n * 2^-53 of the season's money
    for n occasions (Higham 2002, Accuracy and Stability of Numerical Algorithms, section 4.2, the
    error bound of recursive summation; from memory, check). A billionth is far above that for any
    season and far below any saving worth reporting. Common practice, no single source.
    """
    # the largest magnitude is that of the largest or of the smallest value (NaN if any is NaN),
    # without a copy of each array's magnitudes
    largest = max((max(abs(float(np.max(c))), abs(float(np.min(c)))) for c in costs if np.size(c)), default=0.0)
    return SAME_MONEY * largest


def cheaper(cost, than, tolerance: float | None = None) -> np.ndarray:
    """Whether ``cost`` is strictly cheaper than ``than`` (broadcast), beyond
    :func:`money_tolerance` of the two: a tie is not a saving."""
    cost, than = np.asarray(cost, dtype=np.float64), np.asarray(than, dtype=np.float64)
    if tolerance is None:
        tolerance = money_tolerance(cost, than)
    return cost < than - tolerance


def lowest(costs: np.ndarray, tolerance: float | None = None) -> np.ndarray:
    """Index of the lowest cost along the last axis, ties (within ``tolerance``, by default
    :func:`money_tolerance`) going to the first index, that is to the lowest cutoff."""
    costs = np.asarray(costs, dtype=np.float64)
    if tolerance is None:
        tolerance = money_tolerance(costs)
    floor = costs.min(axis=-1, keepdims=True)
    return np.argmax(costs <= floor + tolerance, axis=-1)


@dataclass(frozen=True)
class Distribution:
    """Mean and 5th, 50th, 95th percentiles of a quantity over replicate seasons."""

    mean: float
    p05: float
    p50: float
    p95: float

    def as_dict(self) -> dict[str, float]:
        return {"mean": self.mean, "p05": self.p05, "p50": self.p50, "p95": self.p95}


def distribution(values: np.ndarray) -> Distribution:
    p05, p50, p95 = np.quantile(values, QUANTILES)
    return Distribution(float(np.mean(values)), float(p05), float(p50), float(p95))


@dataclass(frozen=True)
class Decision:
    recommended_index: int
    recommended_cutoff: float
    recommended_cutoff_interval: tuple[float, float]
    near_optimal_band: tuple[float, float]
    break_even: list[tuple[float, float]]
    confident_break_even: list[tuple[float, float]]
    savings: Distribution
    prob_saving: float
    # what chose the recommended cutoff (one of OBJECTIVES), and the index each objective would choose
    objective: str = "mean"
    choices: dict[str, int] = field(default_factory=dict)


def cutoff_ranges(mask: np.ndarray, cutoffs: np.ndarray) -> list[tuple[float, float]]:
    """Contiguous runs of cutoffs where ``mask`` holds, as [(lo, hi), ...] with both ends included."""
    mask = np.asarray(mask, dtype=bool)
    edges = np.diff(np.concatenate([[0], mask.view(np.int8), [0]]))
    starts, stops = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1
    return [(float(cutoffs[a]), float(cutoffs[b])) for a, b in zip(starts, stops)]


def shortfall(values: np.ndarray, share: float = SHORTFALL_SHARE, axis: int = 0) -> np.ndarray:
    """Expected shortfall of costs: the mean of the worst (highest) ``ceil(share * n)`` of the ``n``
    values along ``axis``.

    Expected shortfall, also called conditional value at risk, is the mean of the worst ``share`` of
    outcomes (Rockafellar, R. T. and Uryasev, S. (2000). Optimization of conditional value-at-risk.
    J. Risk 2, 21-41). This is its empirical estimator, the average of the ``ceil(share * n)`` worst
    of ``n`` draws (Acerbi, C. and Tasche, D. (2002). On the coherence of expected shortfall.
    J. Banking & Finance 26, 1487-1503; the ceiling as given in METHODS.md section 6.2). Unlike a
    quantile it is coherent: it sees how bad the bad seasons are, not only where they begin.
    """
    values = np.asarray(values, dtype=np.float64)
    n = values.shape[axis]
    k = max(1, math.ceil(round(share * n, 9)))  # round: 0.1 * 30 is 3.0000000000000004
    worst = np.partition(values, n - k, axis=axis)
    return np.take(worst, np.arange(n - k, n), axis=axis).mean(axis=axis)


def objective_cost(values: np.ndarray, objective: str, axis: int = 0) -> np.ndarray:
    """What ``objective`` makes of season costs along ``axis``: their mean (``"mean"``), 95th
    percentile (``"p95"``, numpy's default linear interpolation, as :func:`distribution`) or
    expected shortfall over the worst 10% (``"shortfall10"``, :func:`shortfall`)."""
    values = np.asarray(values, dtype=np.float64)
    if objective == "mean":
        return values.mean(axis=axis)
    if objective == "p95":
        return np.quantile(values, QUANTILES[2], axis=axis)
    if objective == "shortfall10":
        return shortfall(values, axis=axis)
    raise ValueError(f"unknown objective {objective!r}; expected one of {OBJECTIVES}")


def season_cost_columns(model_cost: np.ndarray) -> dict[str, np.ndarray]:
    """Per-cutoff season cost over the replicates, each (n_cutoffs,): ``mean_cost``, ``p05_cost``,
    ``p50_cost``, ``p95_cost`` and ``shortfall10_cost`` (:func:`shortfall`). These are the columns
    of ``cutoffs.csv`` and the numbers every objective chooses by (:data:`OBJECTIVE_COLUMN`)."""
    # along contiguous rows: the same values, faster than down the columns
    by_cutoff = np.ascontiguousarray(model_cost.T)
    p05, p50, p95 = quantiles_of_rows(by_cutoff, QUANTILES)
    return {"mean_cost": model_cost.mean(axis=0), "p05_cost": p05, "p50_cost": p50, "p95_cost": p95,
            "shortfall10_cost": shortfall(by_cutoff, axis=1)}


def quantiles_of_rows(values: np.ndarray, quantiles) -> list[np.ndarray]:
    """Each quantile of every row of ``values`` (n_rows, n), the same numbers as
    ``np.quantile(values, quantiles, axis=1)`` (its default linear interpolation, method 7 of
    Hyndman, R. J. and Fan, Y. (1996). Sample quantiles in statistical packages. The American
    Statistician 50, 361-365), made from one sort of the rows.

    numpy's quantile partitions along the first axis after moving it there, which is slow for many
    rows; a sort of contiguous rows is several times quicker. The interpolation repeats numpy's own
    (``numpy/lib/_function_base_impl.py``: virtual index (n - 1) q, its floor j and g = (n - 1) q - j;
    a + (b - a) g, or b - (b - a)(1 - g) when g >= 0.5; the largest value at or past the last
    index), so the floats are the same bits; ``tests/test_decision.py`` checks that against numpy.
    A row holding NaN gives NaN, as numpy does.
    """
    ordered = np.sort(values, axis=1)
    n = ordered.shape[1]
    nan = np.isnan(ordered[:, -1])
    out = []
    for q in quantiles:
        virtual = (n - 1) * float(q)
        j = math.floor(virtual)
        if virtual >= n - 1:
            value = ordered[:, -1].copy()
        else:
            g = virtual - j
            a, b = ordered[:, j], ordered[:, j + 1]
            diff = b - a
            value = a + diff * g if g < 0.5 else b - diff * (1 - g)
        value[nan] = np.nan
        out.append(value)
    return out


def per_cutoff(model_cost: np.ndarray, reference_cost: np.ndarray) -> dict[str, np.ndarray]:
    """Per-cutoff season cost distribution (:func:`season_cost_columns`) and savings against the
    reference, each (n_cutoffs,)."""
    savings = reference_cost[:, None] - model_cost
    saves = cheaper(model_cost, reference_cost[:, None])
    return {**season_cost_columns(model_cost), "mean_savings": savings.mean(axis=0),
            "prob_saving": saves.mean(axis=0)}


def decide(model_cost: np.ndarray, reference_cost: np.ndarray, cutoffs: np.ndarray,
           seasons_per_history: int, rng: np.random.Generator, objective: str = "mean") -> Decision:
    """Choose the cutoff by ``objective`` (the lowest mean season cost by default) and describe how
    sure that choice is.

    Parameters
    ----------
    model_cost : (n_replicates, n_cutoffs) season costs of acting on the model at each cutoff.
    reference_cost : (n_replicates,) season costs of the reference strategy on the same replicates.
    cutoffs : (n_cutoffs,) ascending.
    seasons_per_history : how many seasons the evaluated history holds; the interval of the
        recommended cutoff is the 5th to 95th percentile of the cutoff the objective chooses over
        :data:`N_HISTORIES` bootstrap histories of that many replicate seasons (drawn with
        replacement from the replicates).
    rng : generator for the bootstrap histories.
    objective : one of :data:`OBJECTIVES`: the lowest ``"mean"`` season cost, the lowest 95th
        percentile (``"p95"``: a budget that holds in 19 seasons of 20), or the lowest expected
        shortfall over the worst 10% of seasons (``"shortfall10"``, :func:`shortfall`).

    Money is compared with :func:`cheaper` and :func:`lowest`: sums closer than
    :func:`money_tolerance` are equal. So ties go to the lowest cutoff, and a cutoff that acts as
    the reference rule does (0.00 under ``always_act``, cutoffs above every probability under
    ``never_act``) is no saving. Everything below follows the objective, with its value in place of
    the mean: ``break_even`` holds the cutoffs strictly cheaper than the reference by it (on
    average, for the mean), the near-optimal band is the run of cutoffs around the recommended one
    whose value is within :data:`NEAR_OPTIMAL` of the lowest (relative to its magnitude), and a
    bootstrap history chooses by the objective over its own seasons. ``confident_break_even``
    holds the cutoffs strictly cheaper than the reference in at least :data:`CONFIDENT` of the
    seasons, whatever the objective. ``choices`` gives the cutoff index every objective would choose.
    """
    if objective not in OBJECTIVES:
        raise ValueError(f"unknown objective {objective!r}; expected one of {OBJECTIVES}")
    tolerance = money_tolerance(model_cost, reference_cost)
    columns = season_cost_columns(model_cost)
    choices = {name: int(lowest(columns[OBJECTIVE_COLUMN[name]], tolerance)) for name in OBJECTIVES}
    score = columns[OBJECTIVE_COLUMN[objective]]
    best = choices[objective]
    n_rep = model_cost.shape[0]
    n_seasons = max(1, seasons_per_history)
    picks = rng.integers(0, n_rep, size=(N_HISTORIES, n_seasons))
    if objective == "mean":
        # (N_HISTORIES, n_cutoffs): each history's seasons added one after the other, the same sums
        # as model_cost[picks].sum(axis=1) without its (N_HISTORIES, n_seasons, n_cutoffs) copy
        history_cost = model_cost[picks[:, 0]]
        for j in range(1, n_seasons):
            history_cost += model_cost[picks[:, j]]
        chosen = cutoffs[lowest(history_cost, tolerance * n_seasons)]
    else:  # the objective over each history's own seasons, a chunk of histories at a time
        chosen = np.concatenate([
            cutoffs[lowest(objective_cost(model_cost[picks[i:i + _HISTORY_CHUNK]], objective, axis=1),
                           tolerance)]
            for i in range(0, N_HISTORIES, _HISTORY_CHUNK)])
    lo, hi = np.quantile(chosen, [0.05, 0.95], method="inverted_cdf")

    near = score <= score[best] + NEAR_OPTIMAL * abs(score[best])
    band = next(r for r in cutoff_ranges(near, cutoffs) if r[0] <= cutoffs[best] <= r[1])

    break_even = cutoff_ranges(cheaper(score, objective_cost(reference_cost, objective), tolerance), cutoffs)
    cheaper_share = cheaper(model_cost, reference_cost[:, None], tolerance).mean(axis=0)
    confident = cutoff_ranges(cheaper_share >= CONFIDENT, cutoffs)

    savings = reference_cost - model_cost[:, best]
    saves = cheaper(model_cost[:, best], reference_cost, tolerance)
    return Decision(recommended_index=best, recommended_cutoff=float(cutoffs[best]),
                    recommended_cutoff_interval=(float(lo), float(hi)), near_optimal_band=band,
                    break_even=break_even, confident_break_even=confident,
                    savings=distribution(savings), prob_saving=float(saves.mean()),
                    objective=objective, choices=choices)
