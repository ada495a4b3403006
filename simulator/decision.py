"""From replicate season costs to a decision: the recommended cutoff, how sure it is, and where the
model pays against the reference.

Pure functions of arrays; costs are per replicate season (rows) and cutoff (columns).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Distribution", "Decision", "distribution", "cutoff_ranges", "decide", "per_cutoff",
           "NEAR_OPTIMAL", "CONFIDENT", "N_HISTORIES"]

NEAR_OPTIMAL = 0.01  # a cutoff within 1% of the lowest mean season cost is near-optimal
CONFIDENT = 0.95  # "confident" break-even: the model is cheaper in at least this share of seasons
N_HISTORIES = 1000  # bootstrap histories for the interval of the recommended cutoff
QUANTILES = (0.05, 0.50, 0.95)


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
    return {"mean_cost": model_cost.mean(axis=0), "p05_cost": p05, "p50_cost": p50, "p95_cost": p95,
            "mean_savings": savings.mean(axis=0), "prob_saving": (savings > 0).mean(axis=0)}


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

    Ties go to the lowest cutoff. The near-optimal band is the run of cutoffs around the recommended
    one whose mean cost is within :data:`NEAR_OPTIMAL` of the lowest (relative to its magnitude).
    """
    mean = model_cost.mean(axis=0)
    best = int(np.argmin(mean))
    n_rep = model_cost.shape[0]
    picks = rng.integers(0, n_rep, size=(N_HISTORIES, max(1, seasons_per_history)))
    history_cost = model_cost[picks].sum(axis=1)  # (N_HISTORIES, n_cutoffs)
    chosen = cutoffs[np.argmin(history_cost, axis=1)]
    lo, hi = np.quantile(chosen, [0.05, 0.95], method="inverted_cdf")

    near = mean <= mean[best] + NEAR_OPTIMAL * abs(mean[best])
    band = next(r for r in cutoff_ranges(near, cutoffs) if r[0] <= cutoffs[best] <= r[1])

    reference_mean = reference_cost.mean()
    break_even = cutoff_ranges(mean <= reference_mean, cutoffs)
    cheaper_share = (model_cost < reference_cost[:, None]).mean(axis=0)
    confident = cutoff_ranges(cheaper_share >= CONFIDENT, cutoffs)

    savings = reference_cost - model_cost[:, best]
    return Decision(recommended_index=best, recommended_cutoff=float(cutoffs[best]),
                    recommended_cutoff_interval=(float(lo), float(hi)), near_optimal_band=band,
                    break_even=break_even, confident_break_even=confident,
                    savings=distribution(savings), prob_saving=float((savings > 0).mean()))
