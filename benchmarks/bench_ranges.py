"""What costs known only as a range add to a run: a 20,000-replicate run with fixed costs against
the same run with all four costs given as ranges (each drawn once per replicate season).

Same synthetic history as ``bench_core.py`` (10 years of daily forecasts, invented), same season
(April to October weekdays), 101 cutoffs, one worker, no validation split. The ranges' PERT means
are the fixed run's costs. Target (issue 14): the ranges add less than 50%.

Prints both CPU times (best of ``--repeat`` interleaved runs each after a small warm-up
run, default 1: the machine is shared) and their ratio. Run: ``python benchmarks/bench_ranges.py``.

``--rules``: the same comparison under ``[operations]``, on the rules demo
(``scenarios/line_marking_rules.toml``, invented; 2,000 replicates by default) with its five prices
fixed at their PERT means against all five given as ranges (drawn per replicate season; the days
are played once either way, only the pricing of the played block changes).

``--stress``: both runs with three ``[[stress]]`` cases (every cost doubled, one cost replaced, a
poorer forecast), which price the base case's drawn costs with their changes on top (with ranges)
or the fixed costs with them (fixed). ``--replicates N`` runs N replicates instead of 20,000 (the
rules comparison's default is 2,000).
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
STRESS = """
[[stress]]
name = "every cost doubled"
cost_multipliers = {hit = 2, false_alarm = 2, miss = 2, correct_negative = 2}
[[stress]]
name = "a dearer miss"
costs = {miss = 3000}
[[stress]]
name = "a poorer forecast"
skill = 0.7
"""


def prepared(costs: str, frame, stress: bool = False):
    scenario = scenario_from_text(SCENARIO.format(costs=costs) + (STRESS if stress else ""))
    return scenario, history_from_frame(frame, scenario)


def seconds(scenario, history, replicates: int | None = None) -> float:
    start = time.process_time()  # CPU time: less moved by the other work on a shared machine
    run_history(scenario, history, workers=1, replicates=replicates)
    return time.process_time() - start


# the rules demo's five prices: PERT means 800, 400, 800, 3,000 and 2,000 EUR, the fixed run's
PRICES = {"day_rate": "{low = 720, likely = 790, high = 920}", "standby_rate": "{low = 340, likely = 400, high = 460}",
          "spoilage_cost": "{low = 500, likely = 800, high = 1100}",
          "damages_per_day_late": "{low = 2400, likely = 2850, high = 4200}",
          "unfinished_cost": "{low = 1600, likely = 1950, high = 2600}"}


def rules_demo(ranged: bool):
    """The rules demo's scenario and history, its prices fixed (at the ranges' PERT means) or ranges."""
    import re
    from pathlib import Path

    from simulator.inputs.history import read_history

    path = Path(__file__).resolve().parent.parent / "scenarios" / "line_marking_rules.toml"
    text = re.sub(r"^day_rate = \{[^}]*\}", "day_rate = 800", path.read_text(), flags=re.M)
    if ranged:
        for key, value in PRICES.items():
            text = re.sub(rf"^{key} = \S+", f"{key} = {value}", text, flags=re.M)
    text = text.replace('path = "line_marking_history.csv"', f'path = "{path.parent / "line_marking_history.csv"}"')
    scenario = scenario_from_text(text, label=path.name)
    return scenario, read_history(scenario)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=1)
    parser.add_argument("--rules", action="store_true", help="the rules demo, its five prices fixed or ranges")
    parser.add_argument("--replicates", type=int, default=None,
                        help="replicates per run (default 20,000; with --rules 2,000)")
    parser.add_argument("--stress", action="store_true", help="three [[stress]] cases in both runs")
    args = parser.parse_args()
    if args.rules:
        args.replicates = args.replicates or 2000
        fixed, ranged = rules_demo(False), rules_demo(True)
        seconds(*fixed, replicates=100), seconds(*ranged, replicates=100)  # warm up
        times = {"fixed": [], "ranged": []}
        for _ in range(args.repeat):
            times["fixed"].append(seconds(*fixed, replicates=args.replicates))
            times["ranged"].append(seconds(*ranged, replicates=args.replicates))
        a, b = min(times["fixed"]), min(times["ranged"])
        print(f"rules demo, {args.replicates:,} replicates x 101 cutoffs, one worker, CPU time, best of "
              f"{args.repeat} interleaved runs each:")
        print(f"  five prices fixed:        {a:7.2f} s")
        print(f"  five prices as ranges:    {b:7.2f} s")
        print(f"  ratio ranges / fixed:     {b / a:7.2f}")
        return
    frame = synthetic_frame()
    fixed, ranged = prepared(FIXED, frame, args.stress), prepared(RANGES, frame, args.stress)
    n = args.replicates or 20000
    seconds(*fixed, replicates=500), seconds(*ranged, replicates=500)  # warm up: imports, caches
    times: dict[str, list[float]] = {"fixed": [], "ranged": []}
    for _ in range(args.repeat):  # interleaved, so a drift of the shared machine hits both
        times["fixed"].append(seconds(*fixed, replicates=n))
        times["ranged"].append(seconds(*ranged, replicates=n))
    a, b = min(times["fixed"]), min(times["ranged"])
    cases = ", three stress cases" if args.stress else ""
    print(f"{n:,} replicates x 101 cutoffs{cases}, one worker, CPU time, best of {args.repeat} interleaved "
          "runs each:")
    print(f"  fixed costs:              {a:7.2f} s")
    print(f"  all four costs as ranges: {b:7.2f} s")
    print(f"  ratio ranges / fixed:     {b / a:7.2f}  (target: below 1.50)")


if __name__ == "__main__":
    main()
