"""How fast the core prices replicate seasons at every cutoff, three ways, in one process.

Same synthetic history (10 years of daily forecasts, calibrated-ish, invented), same season
(April to October weekdays: 153 occasions), same 101 cutoffs:

  (a) what a typical analyst writes: per replicate and per cutoff, scikit-learn's confusion_matrix,
      then the four cells priced;
  (b) what a careful analyst writes: per replicate, one numpy comparison of its probabilities
      against all cutoffs at once;
  (c) the engine: 20,000 replicates, bootstrap draws included (Resampler + SeasonPricer).

Prints replicate-seasons x cutoffs priced per second for each, the ratios of (c) to (a) and (b),
and the engine's peak traced memory. Run: ``make bench`` or ``python benchmarks/bench_core.py``.
"""

from __future__ import annotations

import resource
import time
import tracemalloc

import numpy as np
import pandas as pd
from sklearn.metrics import confusion_matrix

from simulator.pricing.costs import SeasonPricer
from simulator.inputs.history import history_from_frame
from simulator.replay.resample import Resampler, season_calendar
from simulator.inputs.scenario import scenario_from_text

SCENARIO = """
name = "bench"
[costs]
hit = 300
false_alarm = 1800
miss = 2500
correct_negative = 0
[season]
months = [4, 5, 6, 7, 8, 9, 10]
weekdays = ["mon", "tue", "wed", "thu", "fri"]
"""


def synthetic_frame(seed: int = 1) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2016-01-01", "2025-12-31", freq="D")
    p = np.round(rng.beta(1.2, 2.0, dates.size), 2)
    outcome = (rng.random(dates.size) < p).astype(int)
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": p.astype(str),
                         "outcome": outcome.astype(str)})


def way_a(rows, history, cutoffs, costs) -> float:
    p, event = history.p, history.event
    start = time.perf_counter()
    total = np.empty((rows.shape[0], cutoffs.size))
    for r in range(rows.shape[0]):
        pr, er = p[rows[r]], event[rows[r]]
        for k, c in enumerate(cutoffs):
            tn, fp, fn, tp = confusion_matrix(er, pr >= c, labels=[False, True]).ravel()
            total[r, k] = tp * costs.hit + fp * costs.false_alarm + fn * costs.miss + tn * costs.correct_negative
    return time.perf_counter() - start, total


def way_b(rows, history, cutoffs, costs) -> float:
    p, event = history.p, history.event
    start = time.perf_counter()
    total = np.empty((rows.shape[0], cutoffs.size))
    for r in range(rows.shape[0]):
        pr, er = p[rows[r]], event[rows[r]]
        act = pr[:, None] >= cutoffs[None, :]
        hits = (act & er[:, None]).sum(axis=0)
        false_alarms = act.sum(axis=0) - hits
        misses = er.sum() - hits
        correct = (~er).sum() - false_alarms
        total[r] = hits * costs.hit + false_alarms * costs.false_alarm + misses * costs.miss + correct * costs.correct_negative
    return time.perf_counter() - start, total


def way_c(resampler, pricer, n_replicates, seed=7):
    start = time.perf_counter()
    parts = [pricer(rows).model for rows in resampler.blocks(seed, n_replicates)]
    model = np.concatenate(parts)
    return time.perf_counter() - start, model


def main() -> None:
    scenario = scenario_from_text(SCENARIO)
    history = history_from_frame(synthetic_frame(), scenario)
    cutoffs = scenario.cutoffs
    calendar = season_calendar(history, scenario.season)
    resampler = Resampler(history, calendar, mean_block=3.0, window_days=10)
    pricer = SeasonPricer(history, cutoffs, scenario.costs)
    n_occ, n_cut = calendar.n_occasions, cutoffs.size
    print(f"history: {history.n_rows} rows, {history.n_evaluated} in season; season {n_occ} occasions; "
          f"{n_cut} cutoffs")

    sample = resampler.draw_block(7, 0)[:60]
    t_a, cost_a = way_a(sample, history, cutoffs, scenario.costs)
    t_b, cost_b = way_b(sample, history, cutoffs, scenario.costs)
    assert np.allclose(cost_a, cost_b) and np.allclose(cost_b, pricer(sample).model), "the three ways disagree"
    rate_a = sample.shape[0] * n_cut / t_a
    wider = np.concatenate([resampler.draw_block(7, b) for b in range(4)])  # 2,000 replicates for (b)
    t_b, _ = way_b(wider, history, cutoffs, scenario.costs)
    rate_b = wider.shape[0] * n_cut / t_b

    n_rep = 20_000
    way_c(resampler, pricer, 1000)  # warm up
    t_c, _ = way_c(resampler, pricer, n_rep)
    rate_c = n_rep * n_cut / t_c
    tracemalloc.start()
    way_c(resampler, pricer, n_rep)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()

    print(f"(a) sklearn confusion_matrix per replicate x cutoff: {rate_a:12,.0f} replicate-cutoffs/s "
          f"({sample.shape[0]} replicates in {t_a:.2f} s)")
    print(f"(b) numpy per replicate, all cutoffs at once:       {rate_b:12,.0f} replicate-cutoffs/s "
          f"({wider.shape[0]} replicates in {t_b:.3f} s)")
    print(f"(c) engine, bootstrap draws included:               {rate_c:12,.0f} replicate-cutoffs/s "
          f"({n_rep} replicates x {n_cut} cutoffs in {t_c:.3f} s)")
    print(f"ratio (c)/(a) = {rate_c / rate_a:,.0f}   (c)/(b) = {rate_c / rate_b:,.1f}   "
          f"engine peak traced memory {peak / 2**20:,.0f} MiB, process peak RSS "
          f"{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**10:,.0f} MiB")


if __name__ == "__main__":
    main()
