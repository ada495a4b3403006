"""What the sensitivity to the costs adds to a run with a site column: time and memory.

Invented data, the sites of ``bench_sites.py`` (a region's shared weather, 10 years of daily
history per site, a noisy skilful forecast) with fixed costs. The same run is timed with the
sensitivity (each site's own, made in its task, and the portfolio's) and without it (the sites keep
no replicate counts: ``simulator.run._with_sensitivity`` patched to say no), alternately, in this
process (one worker, so that the machine's other load is shared evenly), and the medians compared.
Peak memory is this process's high-water mark (VmHWM), read after each way has run (the first way
run sets it for both, so the order is printed). Issue 14 sets no figure for this; our own aim is
that the sensitivity add no more than about 20% to a site run's time, which it does not yet meet.

    .venv/bin/python benchmarks/bench_site_sensitivity.py                    # 40 sites, 2,000 replicates
    .venv/bin/python benchmarks/bench_site_sensitivity.py --sites 10 --replicates 500
"""

from __future__ import annotations

import argparse
import statistics
import time

import importlib
from bench_sites import FIXED, sites_frame
from simulator import history_from_frame, run_history, scenario_from_text

run_module = importlib.import_module("simulator.run")  # the module, not the function simulator.run


def _peak_mb() -> float:
    with open("/proc/self/status") as status:
        for line in status:
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024
    return float("nan")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sites", type=int, default=40)
    parser.add_argument("--years", type=int, default=10)
    parser.add_argument("--replicates", type=int, default=2000)
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    scenario = scenario_from_text(FIXED.format(step=0.01, replicates=args.replicates))
    history = history_from_frame(sites_frame(args.sites, args.years), scenario)
    keep = run_module._with_sensitivity
    times: dict[str, list[float]] = {"without": [], "with": []}
    peaks = {}
    for r in range(args.rounds):
        for way in (("without", "with") if r % 2 == 0 else ("with", "without")):
            run_module._with_sensitivity = keep if way == "with" else (lambda scenarios: False)
            start = time.perf_counter()
            result = run_history(scenario, history, workers=1)
            times[way].append(time.perf_counter() - start)
            peaks.setdefault(way, _peak_mb())
            if way == "with":
                assert result.sensitivity.note is None and len(result.sensitivity.sites) == args.sites
    run_module._with_sensitivity = keep
    without, with_ = statistics.median(times["without"]), statistics.median(times["with"])
    print(f"{args.sites} sites x {args.years} years daily x {args.replicates:,} replicates x 101 cutoffs, "
          f"one worker, median of {args.rounds} rounds")
    print(f"  without the sensitivity: {without:.2f} s  (rounds: {', '.join(f'{t:.2f}' for t in times['without'])})")
    print(f"  with the sensitivity:    {with_:.2f} s  (rounds: {', '.join(f'{t:.2f}' for t in times['with'])})")
    print(f"  the sensitivity adds {with_ / without - 1:.0%} to the run's time (our own aim: about 20% at most)")
    print(f"  peak memory of this process: {peaks['without']:.0f} MB after the first run without, "
          f"{peaks['with']:.0f} MB after the first with")


if __name__ == "__main__":
    main()
