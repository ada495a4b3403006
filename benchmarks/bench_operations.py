"""How fast the operating rules are priced: the vectorised twin against simpy, season by season.

The rules demo (scenarios/line_marking_rules.toml: 3 crews, 150 working days and 31 Saturdays in
the season, 2,000 replicates, cutoffs 0 to 1 by 0.01, the 5 baselines) is priced two ways:

  (a) the straightforward way: every cutoff and every baseline of every replicate season played by
      the simpy model (simulator.rules.simpy_model.SimpyPricer), one season at a time, in one
      process. Too slow to run whole here (about half an hour), it is timed on a random sample of
      replicate seasons, each under all 106 lanes, and scaled up to 2,000 x 106 seasons; ``--full``
      plays them all;
  (b) ours: ``run_history`` end to end (bootstrap draws, the vectorised twin of
      simulator.rules.vectorised_model for all replicates and cutoffs at once, decision, tables).

Both price the same replicate seasons. On the sampled replicates the benchmark checks that the two
give identical costs and the same recommended cutoff and break-even points. It prints both times
and a line starting with ``ratio``. Targets (issue 3): at least 40 times less wall time, and
(b) under 10 s on a 2-core machine.

Run: ``python benchmarks/bench_operations.py [--sample 24] [--full]``.
"""

from __future__ import annotations

import argparse
import os
import time
from pathlib import Path

import numpy as np

from simulator import read_history, read_scenario
from simulator.pricing.decision import decide
from simulator.rules.simpy_model import SimpyPricer
from simulator.rules.vectorised_model import OperationsPricer
from simulator.replay.resample import Resampler, season_calendar
from simulator.run import choose_mean_block, run_history


SCENARIO = Path(__file__).resolve().parent.parent / "scenarios" / "line_marking_rules.toml"
REPLICATES = 2000


def _decision(model_cost, reference_cost, cutoffs):
    d = decide(model_cost, reference_cost, cutoffs, 1, np.random.default_rng(0))
    return d.recommended_cutoff, d.break_even


def _steps(a: float, b: float, step: float) -> int:
    return int(round(abs(a - b) / step))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sample", type=int, default=24, help="replicate seasons played by simpy")
    parser.add_argument("--full", action="store_true", help="play every replicate season with simpy")
    args = parser.parse_args()

    scenario = read_scenario(SCENARIO)
    history = read_history(scenario)
    cutoffs = scenario.cutoffs
    step = scenario.decision.cutoffs[2]
    seed = scenario.simulation.seed
    reference = scenario.simulation.reference
    ref_index = ["never_act", "always_act", "persistence", "seasonal_rate", "perfect"].index(reference)

    # (b) ours, end to end
    start = time.perf_counter()
    result = run_history(scenario, history, replicates=REPLICATES)
    ours = time.perf_counter() - start
    rules = result.operations.rules
    n_lanes = cutoffs.size + 5
    print(f"rules demo: {rules.crews} crews, {rules.n_working_days} working days and "
          f"{rules.n_overtime_days} overtime days ({rules.n_occasions} occasions), {REPLICATES} replicates, "
          f"{cutoffs.size} cutoffs + 5 baselines = {REPLICATES * n_lanes:,} seasons; {os.cpu_count()} cores")
    print(f"ours (run_history end to end, vectorised twin): {ours:.2f} s; recommended cutoff "
          f"{result.decision.recommended_cutoff:.2f}, break-even {result.decision.break_even}")

    # the same replicate seasons, drawn again for the simpy pricer
    calendar = season_calendar(history, scenario.season)
    resampler = Resampler(history, calendar, choose_mean_block(history, [scenario]),
                          scenario.simulation.window_days)
    rows = np.concatenate(list(resampler.blocks(seed, REPLICATES)))
    pick = (np.arange(REPLICATES) if args.full
            else np.sort(np.random.default_rng(1).choice(REPLICATES, args.sample, replace=False)))
    slow_pricer = SimpyPricer(history, calendar, cutoffs, scenario)
    start = time.perf_counter()
    slow = slow_pricer(rows[pick])
    simpy_time = time.perf_counter() - start
    per_season = simpy_time / (pick.size * n_lanes)
    straightforward = per_season * REPLICATES * n_lanes
    how = "played whole" if args.full else (f"estimated: {pick.size} random replicates x {n_lanes} lanes = "
                                           f"{pick.size * n_lanes:,} seasons timed, scaled up")
    print(f"straightforward (simpy, every cutoff x every replicate, one process): {straightforward:,.0f} s "
          f"({how}; {per_season * 1000:.2f} ms a season)")

    # the check: same costs, same decision, on the replicates both played
    fast = OperationsPricer(history, calendar, cutoffs, scenario)(rows[pick])
    assert np.array_equal(fast.model, result.model_cost[pick])
    difference = max(np.abs(fast.model - slow.model).max(), np.abs(fast.baselines - slow.baselines).max())
    cut_slow, be_slow = _decision(slow.model, slow.baselines[:, ref_index], cutoffs)
    cut_fast, be_fast = _decision(fast.model, fast.baselines[:, ref_index], cutoffs)
    same_cut = _steps(cut_slow, cut_fast, step) <= 1
    same_be = len(be_slow) == len(be_fast) and all(
        _steps(a, c, step) <= 2 and _steps(b, d, step) <= 2 for (a, b), (c, d) in zip(be_slow, be_fast))
    print(f"check on the {pick.size} replicates played both ways: largest cost difference {difference:g} "
          f"{scenario.currency}; recommended cutoff simpy {cut_slow:.2f} / ours {cut_fast:.2f} "
          f"({'within one step' if same_cut else 'DIFFERENT'}); break-even simpy {be_slow} / ours {be_fast} "
          f"({'within two steps' if same_be else 'DIFFERENT'})")
    if args.full:
        cut_all, be_all = _decision(slow.model, slow.baselines[:, ref_index], cutoffs)
        print(f"full simpy run: recommended cutoff {cut_all:.2f}, break-even {be_all}")
    ratio = straightforward / ours
    print(f"ratio {ratio:,.0f}x less wall time: straightforward {straightforward:,.0f} s "
          f"({'measured' if args.full else 'estimated from a sample'}) / ours {ours:.2f} s "
          f"[targets: >= 40x {'met' if ratio >= 40 else 'MISSED'}; ours < 10 s "
          f"{'met' if ours < 10 else 'MISSED'}]")


if __name__ == "__main__":
    main()
