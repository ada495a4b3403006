"""The split of the season cost's variance into the weather's part and the costs' part.

Reference: for independent N (the weather's count) and X (a drawn cost), the variance of the
product is Var(N) E[X]^2 + E[N^2] Var(X) (Goodman 1960, "On the exact variance of products",
JASA 55(292):708-713), whose first term is the variance of the conditional mean E[NX | N] and
whose second is the mean conditional variance (the law of total variance; from memory). The
weather's count is binomial and the cost uniform here, so both parts are known in closed form.
"""

from __future__ import annotations

import numpy as np
import pytest

from simulator.analysis.cost_spread import cost_spread


def test_parts_match_goodmans_variance_of_a_product():
    rng = np.random.default_rng(20270415)
    n_rep, trials, rate = 200_000, 60, 0.3
    count = rng.binomial(trials, rate, n_rep)
    low, high = 2000.0, 4000.0
    cost = rng.uniform(low, high, n_rep)
    mean, var = (low + high) / 2, (high - low) ** 2 / 12
    var_n = trials * rate * (1 - rate)
    mean_n2 = var_n + (trials * rate) ** 2
    spread = cost_spread(count * cost, count * mean)
    assert spread.weather_variance == pytest.approx(var_n * mean**2, rel=0.02)
    assert spread.costs_variance == pytest.approx(mean_n2 * var, rel=0.03)
    assert spread.share_weather + spread.share_costs == pytest.approx(1.0)


def test_fixed_costs_leave_all_the_spread_to_the_weather():
    at_means = np.array([10.0, 14.0, 9.0, 20.0])
    spread = cost_spread(at_means, at_means)
    assert spread.costs_variance == 0 and spread.share_weather == 1.0
    flat = cost_spread(np.full(4, 5.0), np.full(4, 5.0))
    assert np.isnan(flat.share_weather) and np.isnan(flat.share_costs)
