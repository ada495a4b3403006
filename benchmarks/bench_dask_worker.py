"""What a Dask worker's own threads cost gonogo's tasks, with its profiler and tick paused or not.

Invented data (like every benchmark here; the many-sites history of ``bench_sites.py``): a
two-worker Dask LocalCluster with Dask's default settings (one thread per worker process) prices
the same run again and again, in rounds, alternately with the worker's profiler and health tick
paused while gonogo's tasks run (``simulator.execution.dask_worker.QUIET``, as gonogo runs) and
running as Dask has them (``QUIET`` emptied in the workers). For each way: the run's wall time, the
processor time of the workers' task threads, and that of the workers' other threads (their event
loops: profiler, tick, heartbeats, transfers), from each thread's own counters (psutil, Linux), as
a share of the task threads' time. Medians over the rounds. The machine's other load makes wall
times drift; the processor times do not.

    .venv/bin/python benchmarks/bench_dask_worker.py                 # about 2 minutes here
    .venv/bin/python benchmarks/bench_dask_worker.py --sites 80 --rounds 5
"""

from __future__ import annotations

import argparse
import importlib
import os
import threading
import time

import numpy as np

from bench_sites import FIXED, sites_frame
from simulator import history_from_frame, run_history, scenario_from_text

WAYS = {"profiler and tick paused (gonogo)": None, "as Dask has them": ()}


def _thread_names() -> dict[int, str]:
    return {t.native_id: t.name for t in threading.enumerate()}


def _set_quiet(names) -> None:
    module = importlib.import_module("simulator.execution.dask_worker")
    if not hasattr(module, "_DEFAULT_QUIET"):
        module._DEFAULT_QUIET = module.QUIET
    module.QUIET = module._DEFAULT_QUIET if names is None else tuple(names)


def _cpu_by_thread(pid: int) -> dict[int, float]:
    import psutil

    return {t.id: t.user_time + t.system_time for t in psutil.Process(pid).threads()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sites", type=int, default=40, help="sites with fixed costs (default 40)")
    parser.add_argument("--years", type=int, default=10, help="years of daily history (default 10)")
    parser.add_argument("--replicates", type=int, default=2000, help="replicate seasons (default 2000)")
    parser.add_argument("--rounds", type=int, default=4, help="rounds, each way once a round (default 4)")
    args = parser.parse_args()
    from distributed import Client, LocalCluster

    scenario = scenario_from_text(FIXED.format(replicates=args.replicates, step=0.01))
    history = history_from_frame(sites_frame(args.sites, args.years), scenario, label="invented")
    print(f"bench_dask_worker: {args.sites} sites x {args.years} years x {args.replicates:,} replicates x "
          f"{scenario.cutoffs.size} cutoffs; a two-worker LocalCluster, Dask's default settings")
    results: dict[str, list[tuple[float, float, float]]] = {way: [] for way in WAYS}
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, \
            Client(cluster.scheduler_address) as client:
        client.run(importlib.import_module, "simulator.run")
        pids = client.run(os.getpid)
        run_history(scenario, history, cluster=cluster.scheduler_address)  # warm: every import made
        for r in range(args.rounds):
            order = list(WAYS) if r % 2 == 0 else list(WAYS)[::-1]
            for way in order:
                client.run(_set_quiet, WAYS[way])
                before = {w: _cpu_by_thread(pid) for w, pid in pids.items()}
                start = time.perf_counter()
                run_history(scenario, history, cluster=cluster.scheduler_address)
                wall = time.perf_counter() - start
                after = {w: _cpu_by_thread(pid) for w, pid in pids.items()}
                names = client.run(_thread_names)
                task = other = 0.0
                for w in pids:
                    for tid, seconds in after[w].items():
                        used = seconds - before[w].get(tid, 0.0)
                        if "Dask-Default-Threads" in names[w].get(tid, ""):
                            task += used
                        else:
                            other += used
                results[way].append((wall, task, other))
            print(f"  round {r + 1}: " + ", ".join(f"{way} {results[way][-1][0]:.1f} s" for way in WAYS), flush=True)
        client.run(_set_quiet, None)
    print(f"  median of {args.rounds} rounds (processor time summed over both workers):")
    for way, rows in results.items():
        wall, task, other = (float(np.median([row[i] for row in rows])) for i in range(3))
        share = float(np.median([row[2] / row[1] for row in rows]))
        print(f"    {way:34} run {wall:5.1f} s; task threads {task:5.2f} s; other threads {other:4.2f} s "
              f"({share:.0%} of the task threads')")


if __name__ == "__main__":
    main()
