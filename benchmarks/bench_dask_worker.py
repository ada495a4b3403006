"""Where a Dask run's processor time goes beside the tasks: the workers' event loops and this process.

Invented data (like every benchmark here; the many-sites history of ``bench_sites.py``): a
two-worker Dask LocalCluster with Dask's default settings (one thread per worker process; its
scheduler and nannies live in this process) prices the same run again and again, in rounds, three
ways, each first in turn:

- as gonogo runs: the workers' profiler and health tick paused while gonogo's tasks run
  (``simulator.execution.dask_worker.QUIET``), results fetched from the workers that hold them
  (``simulator.execution.dask_cluster._direct``);
- the profiler and tick running, as Dask has them (``QUIET`` emptied in the workers);
- results relayed through the scheduler, as Dask does for a client outside the cluster.

For each way: the run's wall time; the processor time of the workers' task threads, of the
workers' other threads (their event loops: profiler, tick, heartbeats, transfers), and of this
process (the run's own work, the scheduler, the nannies), from each thread's and process's own
counters (psutil, Linux). Medians over the rounds. The machine's other load makes wall times
drift; processor times drift far less.

    .venv/bin/python benchmarks/bench_dask_worker.py                 # about 3 minutes here
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

GONOGO = "as gonogo runs"
WAYS = {GONOGO: (None, True), "profiler and tick running": ((), True),
        "results through the scheduler": (None, False)}  # way: (paused callbacks, fetched directly)


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


def _own_cpu() -> float:
    import psutil

    return sum(psutil.Process().cpu_times()[:2])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sites", type=int, default=40, help="sites with fixed costs (default 40)")
    parser.add_argument("--years", type=int, default=10, help="years of daily history (default 10)")
    parser.add_argument("--replicates", type=int, default=2000, help="replicate seasons (default 2000)")
    parser.add_argument("--rounds", type=int, default=4, help="rounds, each way once a round (default 4)")
    args = parser.parse_args()
    from distributed import Client, LocalCluster

    dask_cluster = importlib.import_module("simulator.execution.dask_cluster")
    direct = dask_cluster._direct
    scenario = scenario_from_text(FIXED.format(replicates=args.replicates, step=0.01))
    history = history_from_frame(sites_frame(args.sites, args.years), scenario, label="invented")
    print(f"bench_dask_worker: {args.sites} sites x {args.years} years x {args.replicates:,} replicates x "
          f"{scenario.cutoffs.size} cutoffs; a two-worker LocalCluster, Dask's default settings")
    results: dict[str, list[tuple[float, float, float, float]]] = {way: [] for way in WAYS}
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, \
            Client(cluster.scheduler_address) as client:
        client.run(importlib.import_module, "simulator.run")
        pids = client.run(os.getpid)
        run_history(scenario, history, cluster=cluster.scheduler_address)  # warm: every import made
        ways = list(WAYS)
        for r in range(args.rounds):
            for way in ways[r % len(ways):] + ways[: r % len(ways)]:
                quiet, fetch_directly = WAYS[way]
                client.run(_set_quiet, quiet)
                dask_cluster._direct = direct if fetch_directly else (lambda client: None)
                before = {w: _cpu_by_thread(pid) for w, pid in pids.items()}
                here = _own_cpu()
                start = time.perf_counter()
                run_history(scenario, history, cluster=cluster.scheduler_address)
                wall = time.perf_counter() - start
                here = _own_cpu() - here
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
                results[way].append((wall, task, other, here))
            print(f"  round {r + 1}: " + ", ".join(f"{way} {results[way][-1][0]:.1f} s" for way in WAYS), flush=True)
        client.run(_set_quiet, None)
        dask_cluster._direct = direct
    print(f"  median of {args.rounds} rounds (processor time of both workers together):")
    for way, rows in results.items():
        wall, task, other, here = (float(np.median([row[i] for row in rows])) for i in range(4))
        total = float(np.median([row[1] + row[2] + row[3] for row in rows]))
        print(f"    {way:30} run {wall:5.1f} s; processor time: task threads {task:5.2f} s, workers' other "
              f"threads {other:4.2f} s, this process {here:4.2f} s, in all {total:5.2f} s")


if __name__ == "__main__":
    main()
