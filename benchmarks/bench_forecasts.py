"""How much dearer a run comparing three forecasts is than a run of one, on the same data.

Same synthetic history as ``bench_core.py`` (10 years of daily forecasts, invented), with two
copies of its forecast with noise added on the logit scale; same season (April to October weekdays), same 101
cutoffs, same replicates. The three forecasts share the drawn replicate rows (one draw, one pricer
per forecast), so the target is a run time under 1.5 times that of one forecast.

Prints the median CPU time of each run (seconds, in this process, ``workers=1``) and their ratio.
Run: ``python benchmarks/bench_forecasts.py [replicates ...]`` (default 2000 and 5000; the machine
may be shared, so keep it small).
"""

from __future__ import annotations

import statistics
import sys
import time

import numpy as np
import pandas as pd

from bench_core import SCENARIO, synthetic_frame  # the same history and season as the core's benchmark
from simulator.inputs.history import history_from_frame
from simulator.run import run_history
from simulator.inputs.scenario import scenario_from_text

SIMULATION = """
[simulation]
replicates = {replicates}
"""

THREE = """
[forecasts]
"main" = "probability"
"noisy" = "p_noisy"
"noisier" = "p_noisier"
"""


def with_noisy_copies(frame: pd.DataFrame, seed: int = 2) -> pd.DataFrame:
    """The benchmark history of ``bench_core`` with two copies of its forecast, noise added on the
    logit scale (sd 0.5 and 1.0), two decimals."""
    rng = np.random.default_rng(seed)
    p = np.clip(pd.to_numeric(frame["probability"]).to_numpy(), 0.005, 0.995)
    logit = np.log(p / (1 - p))

    def noisy(sd: float) -> np.ndarray:
        return np.round(1 / (1 + np.exp(-(logit + rng.normal(0, sd, p.size)))), 2)

    return frame.assign(p_noisy=noisy(0.5), p_noisier=noisy(1.0))


def timed(scenario_text: str, frame: pd.DataFrame, repeats: int = 9) -> float:
    """Median CPU time of a run (``time.process_time``: on a shared machine the wall time also
    counts the other users' work), after one run to warm up."""
    scenario = scenario_from_text(scenario_text)
    history = history_from_frame(frame, scenario)
    run_history(scenario, history, workers=1)
    times = []
    for _ in range(repeats):
        start = time.process_time()
        run_history(scenario, history, workers=1)
        times.append(time.process_time() - start)
    return statistics.median(times)


def main() -> None:
    sizes = [int(a) for a in sys.argv[1:]] or [2000, 5000]
    frame = with_noisy_copies(synthetic_frame())
    print(f"history rows: {len(frame)}; season: April to October weekdays; 101 cutoffs")
    # a first run in a process pays for lazy imports and first allocations: warm up both kinds once
    # before timing any size, so the first size is not dearer than the next
    for text in (SCENARIO, SCENARIO + THREE):
        timed(text + SIMULATION.format(replicates=sizes[0]), frame, repeats=1)
    for replicates in sizes:
        base = SCENARIO + SIMULATION.format(replicates=replicates)
        one = timed(base, frame)
        three = timed(base + THREE, frame)
        print(f"{replicates} replicates: one forecast {one:.3f} s CPU, three forecasts {three:.3f} s CPU "
              f"(medians of 9 runs); ratio {three / one:.2f} (target: below 1.5)")


if __name__ == "__main__":
    main()
