"""How much dearer a run comparing three forecasts is than a run of one, on the same data.

Same synthetic history (10 years of daily forecasts, invented: one forecast calibrated-ish and two
copies with noise added on the logit scale), same season (April to October weekdays), same 101
cutoffs, same replicates. The three forecasts share the drawn replicate rows (one draw, one pricer
per forecast), so the target is a run time under 1.5 times that of one forecast.

Prints the median wall time of each run (seconds, in this process, ``workers=1``) and their ratio.
Run: ``python benchmarks/bench_forecasts.py [replicates]`` (default 5000; the machine may be shared,
so keep it small).
"""

from __future__ import annotations

import statistics
import sys
import time

import numpy as np
import pandas as pd

from simulator.history import history_from_frame
from simulator.run import run_history
from simulator.scenario import scenario_from_text

SCENARIO = """
name = "bench forecasts"
[costs]
hit = 300
false_alarm = 1800
miss = 2500
correct_negative = 0
[season]
months = [4, 5, 6, 7, 8, 9, 10]
weekdays = ["mon", "tue", "wed", "thu", "fri"]
[simulation]
replicates = {replicates}
"""

THREE = """
[forecasts]
"main" = "probability"
"noisy" = "p_noisy"
"noisier" = "p_noisier"
"""


def synthetic_frame(seed: int = 1) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2016-01-01", "2025-12-31", freq="D")
    p = np.clip(rng.beta(1.2, 2.0, dates.size), 0.005, 0.995)
    outcome = (rng.random(dates.size) < p).astype(int)
    logit = np.log(p / (1 - p))

    def noisy(sd: float) -> np.ndarray:
        return np.round(1 / (1 + np.exp(-(logit + rng.normal(0, sd, dates.size)))), 2)

    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": np.round(p, 2),
                         "p_noisy": noisy(0.5), "p_noisier": noisy(1.0), "outcome": outcome})


def timed(scenario_text: str, frame: pd.DataFrame, repeats: int = 3) -> float:
    scenario = scenario_from_text(scenario_text)
    history = history_from_frame(frame, scenario)
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        run_history(scenario, history, workers=1)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> None:
    replicates = int(sys.argv[1]) if len(sys.argv) > 1 else 5000
    frame = synthetic_frame()
    base = SCENARIO.format(replicates=replicates)
    one = timed(base, frame)
    three = timed(base + THREE, frame)
    print(f"replicates: {replicates}; history rows: {len(frame)}; season: April to October weekdays")
    print(f"one forecast:    {one:.3f} s (median of 3 runs)")
    print(f"three forecasts: {three:.3f} s (median of 3 runs)")
    print(f"ratio: {three / one:.2f} (target: below 1.5)")


if __name__ == "__main__":
    main()
