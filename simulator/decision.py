"""From replicate season costs to a decision: the recommended cutoff, how sure it is, and where the
model pays against the reference.

Pure functions of arrays; costs are per replicate season (rows) and cutoff (columns).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Distribution", "Decision", "distribution", "cutoff_ranges", "decide", "per_cutoff",
           "money_tolerance", "cheaper", "lowest", "NEAR_OPTIMAL", "CONFIDENT", "N_HISTORIES",
           "SAME_MONEY"]

NEAR_OPTIMAL = 0.01  # a cutoff within 1% of the lowest mean season cost is near-optimal
CONFIDENT = 0.95  # "confident" break-even: the model is cheaper in at least this share of seasons
N_HISTORIES = 1000  # bootstrap histories for the interval of the recommended cutoff
QUANTILES = (0.05, 0.50, 0.95)
SAME_MONEY = 1e-9  # sums of money closer than this share of the largest figure compared are equal


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
    largest = max((float(np.max(np.abs(c))) for c in costs if np.size(c)), default=0.0)
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


def cutoff_ranges(mask: np.ndarray, cutoffs: np.ndarray) -> list[tuple[float, float]]:
    """Contiguous runs of cutoffs where ``mask`` holds, as [(lo, hi), ...] with both ends included."""
    mask = np.asarray(mask, dtype=bool)
    edges = np.diff(np.concatenate([[0], mask.view(np.int8), [0]]))
    starts, stops = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1
    return [(float(cutoffs[a]), float(cutoffs[b])) for a, b in zip(starts, stops)]


def per_cutoff(model_cost: np.ndarray, reference_cost: np.ndarray) -> dict[str, np.ndarray]:
    """Per-cutoff season cost distribution and savings against the reference, each (n_cutoffs,)."""
    # quantiles along contiguous rows: the same values, faster than down the columns
    p05, p50, p95 = np.quantile(np.ascontiguousarray(model_cost.T), QUANTILES, axis=1)
    savings = reference_cost[:, None] - model_cost
    saves = cheaper(model_cost, reference_cost[:, None])
    return {"mean_cost": model_cost.mean(axis=0), "p05_cost": p05, "p50_cost": p50, "p95_cost": p95,
            "mean_savings": savings.mean(axis=0), "prob_saving": saves.mean(axis=0)}


def decide(model_cost: np.ndarray, reference_cost: np.ndarray, cutoffs: np.ndarray,
           seasons_per_history: int, rng: np.random.Generator) -> Decision:
    """Choose the cutoff with the lowest mean season cost and describe how sure that choice is.

    Parameters
    ----------
    model_cost : (n_replicates, n_cutoffs) season costs of acting on the model at each cutoff.
    reference_cost : (n_replicates,) season costs of the reference strategy on the same replicates.
    cutoffs : (n_cutoffs,) ascending.
    seasons_per_history : how many seasons the evaluated history holds; the interval of the
        recommended cutoff is the 5th to 95th percentile of the cost-minimising cutoff over
        :data:`N_HISTORIES` bootstrap histories of that many replicate seasons (drawn with
        replacement from the replicates).
    rng : generator for the bootstrap histories.

    Money is compared with :func:`cheaper` and :func:`lowest`: sums closer than
    :func:`money_tolerance` are equal. So ties go to the lowest cutoff, and a cutoff that acts as
    the reference rule does (0.00 under ``always_act``, cutoffs above every probability under
    ``never_act``) is no saving. ``break_even`` holds the cutoffs strictly cheaper than the reference
    on average, ``confident_break_even`` those strictly cheaper in at least :data:`CONFIDENT` of the
    seasons. The near-optimal band is the run of cutoffs around the recommended one whose mean cost
    is within :data:`NEAR_OPTIMAL` of the lowest (relative to its magnitude).
    """
    tolerance = money_tolerance(model_cost, reference_cost)
    mean = model_cost.mean(axis=0)
    best = int(lowest(mean, tolerance))
    n_rep = model_cost.shape[0]
    n_seasons = max(1, seasons_per_history)
    picks = rng.integers(0, n_rep, size=(N_HISTORIES, n_seasons))
    history_cost = model_cost[picks].sum(axis=1)  # (N_HISTORIES, n_cutoffs)
    chosen = cutoffs[lowest(history_cost, tolerance * n_seasons)]
    lo, hi = np.quantile(chosen, [0.05, 0.95], method="inverted_cdf")

    near = mean <= mean[best] + NEAR_OPTIMAL * abs(mean[best])
    band = next(r for r in cutoff_ranges(near, cutoffs) if r[0] <= cutoffs[best] <= r[1])

    break_even = cutoff_ranges(cheaper(mean, reference_cost.mean(), tolerance), cutoffs)
    cheaper_share = cheaper(model_cost, reference_cost[:, None], tolerance).mean(axis=0)
    confident = cutoff_ranges(cheaper_share >= CONFIDENT, cutoffs)

    savings = reference_cost - model_cost[:, best]
    saves = cheaper(model_cost[:, best], reference_cost, tolerance)
    return Decision(recommended_index=best, recommended_cutoff=float(cutoffs[best]),
                    recommended_cutoff_interval=(float(lo), float(hi)), near_optimal_band=band,
                    break_even=break_even, confident_break_even=confident,
                    savings=distribution(savings), prob_saving=float(saves.mean()))
