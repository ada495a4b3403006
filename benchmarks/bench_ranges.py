"""What costs known only as a range add to a run: a 20,000-replicate run with fixed costs against
the same run with all four costs given as ranges (each drawn once per replicate season).

Same synthetic history as ``bench_core.py`` (10 years of daily forecasts, invented), same season
(April to October weekdays), 101 cutoffs, one worker, no validation split. The ranges' PERT means
are the fixed run's costs. Target (issue 14): the ranges add less than 50%.

Prints both CPU times (best of ``--repeat`` interleaved runs each after a small warm-up
run, default 1: the machine is shared) and their ratio. Run: ``python benchmarks/bench_ranges.py``.
"""

from __future__ import annotations

import argparse
import time

from bench_core import synthetic_frame

from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario import scenario_from_text
from simulator.run import run_history

# PERT means (low + 4 likely + high) / 6: 300, 1800, 2500 and 0, the fixed run's costs
FIXED = "hit = 300\nfalse_alarm = 1800\nmiss = 2500\ncorrect_negative = 0\n"
RANGES = ("hit = {low = 240, likely = 300, high = 360}\n"
          "false_alarm = {low = 1500, likely = 1725, high = 2400}\n"
          "miss = {low = 2000, likely = 2375, high = 3500}\n"
          "correct_negative = {low = -60, likely = 0, high = 60}\n")
SCENARIO = """
name = "bench ranges"
[costs]
{costs}
[season]
months = [4, 5, 6, 7, 8, 9, 10]
weekdays = ["mon", "tue", "wed", "thu", "fri"]
[simulation]
replicates = 20000
seed = 7
"""


def prepared(costs: str, frame):
    scenario = scenario_from_text(SCENARIO.format(costs=costs))
    return scenario, history_from_frame(frame, scenario)


def seconds(scenario, history, replicates: int | None = None) -> float:
    start = time.process_time()  # CPU time: less moved by the other work on a shared machine
    run_history(scenario, history, workers=1, replicates=replicates)
    return time.process_time() - start


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=1)
    args = parser.parse_args()
    frame = synthetic_frame()
    fixed, ranged = prepared(FIXED, frame), prepared(RANGES, frame)
    seconds(*fixed, replicates=500), seconds(*ranged, replicates=500)  # warm up: imports, caches
    times: dict[str, list[float]] = {"fixed": [], "ranged": []}
    for _ in range(args.repeat):  # interleaved, so a drift of the shared machine hits both
        times["fixed"].append(seconds(*fixed))
        times["ranged"].append(seconds(*ranged))
    a, b = min(times["fixed"]), min(times["ranged"])
    print(f"20,000 replicates x 101 cutoffs, one worker, CPU time, best of {args.repeat} interleaved runs each:")
    print(f"  fixed costs:              {a:7.2f} s")
    print(f"  all four costs as ranges: {b:7.2f} s")
    print(f"  ratio ranges / fixed:     {b / a:7.2f}  (target: below 1.50)")


if __name__ == "__main__":
    main()
