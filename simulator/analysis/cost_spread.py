"""How much of the spread of season costs comes from the weather, and how much from doubt about
the costs, when some costs are known only as a range.

Method (law of total variance; e.g. Ross 2010, "A First Course in Probability", 8th ed., the
conditional variance formula, from memory): a replicate season's cost C depends on its weather W
(the replayed occasions, hence its classification counts) and on the costs drawn for it. Given the
weather, the season cost is linear in the costs and the costs are drawn independently of the
weather, so E[C | W] is the season cost with every cost fixed at its mean (the PERT mean of a
range). Then

    Var(C) = Var(E[C | W]) + E[Var(C | W)],

the first part from the weather, the second from the doubt about the costs. Both are estimated on
the same replicate seasons: Var(E[C | W]) as the variance of the season costs with costs fixed at
their means, Var(C) as the variance of the season costs with the costs drawn, and the costs' part
as their difference (at least 0: with a narrow range the two estimates can cross by Monte Carlo
error).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["CostSpread", "cost_spread"]


@dataclass(frozen=True)
class CostSpread:
    """Variances (money squared, per season) of the season cost at one cutoff, and the shares of
    the total each part makes up (0 to 1; NaN when the season cost does not vary)."""

    total_variance: float
    weather_variance: float
    costs_variance: float

    @property
    def share_weather(self) -> float:
        return self.weather_variance / self.total_variance if self.total_variance > 0 else float("nan")

    @property
    def share_costs(self) -> float:
        return self.costs_variance / self.total_variance if self.total_variance > 0 else float("nan")

    def as_dict(self) -> dict[str, float]:
        return {"season_cost_sd": float(np.sqrt(self.total_variance)),
                "variance_from_weather": self.weather_variance, "variance_from_costs": self.costs_variance,
                "share_from_weather": self.share_weather, "share_from_costs": self.share_costs}


def cost_spread(drawn: np.ndarray, at_means: np.ndarray) -> CostSpread:
    """The split of the variance of season costs (see the module's docstring).

    Parameters
    ----------
    drawn : (n_rep,) season costs with the costs drawn per replicate season.
    at_means : (n_rep,) the same replicate seasons' costs with every cost at its mean.
    """
    drawn, at_means = np.asarray(drawn, dtype=float), np.asarray(at_means, dtype=float)
    total = float(np.var(drawn, ddof=1))
    weather = min(float(np.var(at_means, ddof=1)), total)
    return CostSpread(total_variance=total, weather_variance=weather, costs_variance=total - weather)
