"""Many sites: throughput, the speed-up from one to two local workers, memory per worker, and a Dask
LocalCluster against the local pool.

Invented data (like every benchmark here): N sites sharing a region's weather (a two-state Markov
chain of regional events; each site has the event on 80% of regional event days and 5% of others),
10 years of daily history each, with a noisy skilful forecast. Two runs are timed, each with 1 and
2 local workers and on a two-worker Dask LocalCluster (one thread per worker process):

  (a) fixed costs: 200 sites x 10 years x 5,000 replicates x 101 cutoffs, the whole year priced;
  (b) operating rules: 50 sites, April to October, crews, a backlog and a deadline.

Timings are of ``simulator.run_history`` (the history is read once, beforehand), from the call to
the finished result, the start of the local worker processes included. As ``simulator.run`` does
while it reads the history, the process that forks local workers is started (and loads gonogo)
before the timings. The Dask cluster runs with Dask's default settings and is brought up for each of
its timings (its workers load gonogo before the clock starts, as on a cluster that is up), so that
its idle processes do not load the machine while the local pool is timed.

A fourth way measures the machine rather than gonogo: the sites cut in two halves, each half run on
one worker in a process of its own, both at once, with nothing shared or sent back. One worker's
time over the halves' time is the speed-up the machine itself allows for this work at that moment
(two busy cores may each run slower than one), and the pool's time over the halves' time is what
sharing out the work costs. This machine's speed drifts from minute to minute, so the four ways are
timed in rounds, each way first in turn, and the medians are compared: same data, same seed, same
results. The speed-up is also printed round by round, with the core time each way used (from
/proc/stat), to tell parallel overhead from drift. Peak memory: each process's own high-water mark (VmHWM), the largest worker's,
and this process's. Processor time: that of the run's own processes (this one, its local workers,
the Dask workers), which the machine's other load does not change as it changes wall time.
Targets from issue 6: speed-up of at least 1.8 from 1 to 2 workers, under 2 GB a worker; from
issue 15: the cluster within 1.15 times the local pool's time.

    .venv/bin/python benchmarks/bench_sites.py                 # the issue's sizes: about 20 minutes
    .venv/bin/python benchmarks/bench_sites.py --sites 40 --rule-sites 10 --replicates 2000
"""

from __future__ import annotations

import argparse
import importlib
import multiprocessing
import os
import threading
import time
from contextlib import contextmanager

import numpy as np
import pandas as pd

from simulator import history_from_frame, run_history, scenario_from_text
from simulator.execution.pool import prepare
from simulator.replay.resample import season_calendar

FIXED = """
name = "bench sites, fixed costs"
[history]
site_column = "site"
[costs]
hit = 300
false_alarm = 1800
miss = 2500
[decision]
cutoffs = [0.0, 1.0, {step}]
[simulation]
replicates = {replicates}
seed = 1
block_days = 5
"""

RULES = FIXED.replace('name = "bench sites, fixed costs"', 'name = "bench sites, operating rules"') + """
[season]
year = 2026
months = [4, 5, 6, 7, 8, 9, 10]
weekdays = ["mon", "tue", "wed", "thu", "fri", "sat"]
[operations]
crews = 3
crews_out_on = "not_acting"
spoiled_on = "event"
day_rate = 800
standby_rate = 400
spoilage_cost = 900
work = 300
deadline = 2026-09-25
damages_per_day_late = 3000
unfinished_cost = 2000
overtime_weekdays = ["sat"]
max_standby_days = 3
"""


def sites_frame(n_sites: int, years: int, seed: int = 1) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2016-01-01", periods=round(365.25 * years), freq="D")
    n = dates.size
    u = rng.random(n)
    regional = np.zeros(n, dtype=bool)
    for t in range(1, n):
        regional[t] = u[t] < (0.7 if regional[t - 1] else 0.15)
    frames = []
    for k in range(n_sites):
        event = np.where(regional, rng.random(n) < 0.8, rng.random(n) < 0.05)
        p = np.clip(np.where(event, 0.6, 0.15) + 0.2 * rng.standard_normal(n), 0.0, 1.0)
        frames.append(pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "site": f"site {k:03d}",
                                    "probability": np.round(p, 2), "outcome": event.astype(int)}))
    return pd.concat(frames, ignore_index=True)


class PeakMemory:
    """Peak resident set of this process and of the largest worker process, watched by a thread.

    Each process's own high-water mark (``VmHWM`` in /proc/<pid>/status, Linux; else the resident
    set at the time) is read every half second, so a short peak between readings is not missed and
    the watching costs little. Workers are this process's descendants (local worker processes), or
    the given ``pids`` (Dask workers).
    """

    def __init__(self, pids: set[int] | None = None):
        import psutil

        self._me = psutil.Process()
        self._pids = pids
        self.worker = 0
        self.main = 0
        self._stop = threading.Event()

    def __enter__(self):
        self._thread = threading.Thread(target=self._watch, daemon=True)
        self._thread.start()
        return self

    @staticmethod
    def _peak(process) -> int:
        try:
            with open(f"/proc/{process.pid}/status") as status:
                for line in status:
                    if line.startswith("VmHWM:"):
                        return int(line.split()[1]) * 1024
        except (OSError, ValueError):
            pass
        return process.memory_info().rss

    def _read(self) -> None:
        import psutil

        try:
            self.main = max(self.main, self._peak(self._me))
            workers = ([psutil.Process(pid) for pid in self._pids] if self._pids is not None else
                       self._me.children(recursive=True))
            for worker in workers:
                try:
                    self.worker = max(self.worker, self._peak(worker))
                except psutil.Error:
                    pass
        except psutil.Error:
            pass

    def _watch(self):
        while not self._stop.wait(0.5):
            self._read()

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()
        self._read()  # Dask workers live on; local workers have gone (their last reading stands)


def core_seconds() -> tuple[float, float] | None:
    """(busy, idle) seconds of all the machine's cores since it started, from /proc/stat (Linux;
    None elsewhere)."""
    try:
        with open("/proc/stat") as stat:
            ticks = [int(x) for x in stat.readline().split()[1:9]]  # user .. steal
    except (OSError, ValueError):
        return None
    idle = ticks[3] + ticks[4]  # idle, iowait
    return (sum(ticks) - idle) / os.sysconf("SC_CLK_TCK"), idle / os.sysconf("SC_CLK_TCK")


def own_seconds(pids=()) -> float:
    """Processor time (user and system, seconds) used so far by this process, by the local worker
    processes the forkserver has ended (it waits for them, so its children's counters hold their
    time), and by the processes ``pids`` (Dask workers). Unlike wall time it does not depend on what
    else the machine runs; read from psutil (Linux /proc)."""
    import psutil

    total = sum(psutil.Process().cpu_times()[:2])
    from multiprocessing import forkserver

    server = getattr(forkserver._forkserver, "_forkserver_pid", None)
    if server is not None:
        try:
            total += sum(psutil.Process(server).cpu_times()[2:4])
        except psutil.Error:
            pass
    for pid in pids:
        total += sum(psutil.Process(pid).cpu_times()[:2])
    return total


def _workers_ended(timeout: float = 10.0) -> None:
    """Wait until the forkserver has no child left (it has waited for every local worker)."""
    import psutil
    from multiprocessing import forkserver

    server = getattr(forkserver._forkserver, "_forkserver_pid", None)
    deadline = time.monotonic() + timeout
    while server is not None and time.monotonic() < deadline:
        try:
            if not psutil.Process(server).children():
                return
        except psutil.Error:
            return
        time.sleep(0.05)


def timed(scenario, history, memory: PeakMemory, pids=(), **where) -> tuple[float, PeakMemory, tuple | None, float]:
    """Wall time, peak memory, the machine's busy and idle core time meanwhile (seconds), and the
    processor time of the run's own processes (:func:`own_seconds`)."""
    before = core_seconds()
    own = own_seconds(pids)
    with memory:
        start = time.perf_counter()
        run_history(scenario, history, **where)
        elapsed = time.perf_counter() - start
    after = core_seconds()
    _workers_ended()
    own = own_seconds(pids) - own
    cores = None if before is None or after is None else (after[0] - before[0], after[1] - before[1])
    return elapsed, memory, cores, own


@contextmanager
def dask_cluster():
    """A two-worker Dask LocalCluster with Dask's default settings (one thread per worker process),
    its workers having loaded gonogo, as on a cluster that is up. Brought up for its own timings
    only, so that its idle processes do not load the machine while the local pool is timed."""
    from distributed import Client, LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        with Client(cluster.scheduler_address) as client:
            client.run(importlib.import_module, "simulator.run")
            workers = set(client.run(os.getpid).values())
            trim = sorted(set(map(str, client.run(os.environ.get, "MALLOC_TRIM_THRESHOLD_").values())))
        yield {"address": cluster.scheduler_address, "workers": workers, "trim": trim}


def _run_half(scenario, history, ready, go, done) -> None:
    ready.put(os.getpid())
    go.wait()
    run_history(scenario, history, workers=1)
    done.put(time.monotonic())


def two_halves(scenario, halves) -> tuple[float, tuple | None]:
    """The machine's own ceiling for this work: the sites cut in two halves, each run on one worker
    in a process of its own, both at once, nothing shared or sent back. Wall time from the start
    signal (the processes are up and hold their half) to the last one finishing, and core time."""
    context = multiprocessing.get_context("forkserver")
    ready, go, done = context.Queue(), context.Event(), context.Queue()
    processes = [context.Process(target=_run_half, args=(scenario, half, ready, go, done)) for half in halves]
    for process in processes:
        process.start()
    for _ in processes:
        ready.get()
    before = core_seconds()
    start = time.monotonic()
    go.set()
    elapsed = max(done.get() for _ in processes) - start
    after = core_seconds()
    for process in processes:
        process.join()
    cores = None if before is None or after is None else (after[0] - before[0], after[1] - before[1])
    return elapsed, cores


def bench(label: str, text: str, n_sites: int, years: int, cluster: bool, repeats: int) -> None:
    scenario = scenario_from_text(text)
    start = time.perf_counter()
    frame = sites_frame(n_sites, years)
    history = history_from_frame(frame, scenario, label="invented")
    loaded = time.perf_counter() - start
    names = list(history.site_names)
    halves = [history_from_frame(frame[frame["site"].isin(part)], scenario, label="invented")
              for part in (names[: n_sites // 2], names[n_sites // 2:])]
    n_cutoffs = scenario.cutoffs.size
    replicates = scenario.simulation.replicates
    n_occasions = season_calendar(history, scenario.season).n_occasions
    print(f"\n{label}: {n_sites} sites x {years} years daily ({history.n_rows:,} rows, read in "
          f"{loaded:.1f} s) x {replicates:,} replicates x {n_cutoffs} cutoffs; season of {n_occasions} "
          f"occasions; {'operating rules played day by day' if scenario.operations else 'fixed costs'}")
    ways = ["1 worker", "2 workers", "2 halves"] + (["Dask"] if cluster else [])
    times = {way: [] for way in ways}
    processor = {way: [] for way in ways}  # the run's own processes (own_seconds)
    busy = {way: [] for way in ways}
    worker_memory = {way: 0 for way in ways}
    main_memory = 0
    for r in range(repeats):
        order = ways[r % len(ways):] + ways[: r % len(ways)]  # each way first in turn
        for way in order:
            if way == "Dask":
                with dask_cluster() as dask:
                    if r == 0:
                        print(f"  Dask LocalCluster: 2 worker processes of 1 thread, Dask's default settings "
                              f"(workers see MALLOC_TRIM_THRESHOLD_={', '.join(dask['trim'])})")
                    elapsed, memory, cores, own = timed(scenario, history, PeakMemory(pids=dask["workers"]),
                                                        pids=dask["workers"], cluster=dask["address"])
            elif way == "2 halves":
                elapsed, cores = two_halves(scenario, halves)
                memory, own = None, None
            else:
                elapsed, memory, cores, own = timed(scenario, history, PeakMemory(),
                                                    workers=1 if way == "1 worker" else 2)
            times[way].append(elapsed)
            if own is not None:
                processor[way].append(own)
            if cores is not None:
                busy[way].append(cores)
            if memory is not None:
                if way != "1 worker":
                    worker_memory[way] = max(worker_memory[way], memory.worker)
                main_memory = max(main_memory, memory.main)
        print(f"  round {r + 1} ({', '.join(order)}): "
              + ", ".join(f"{way} {times[way][-1]:.1f} s" for way in ways), flush=True)
    median = {way: float(np.median(t)) for way, t in times.items()}
    print(f"  median of {repeats} rounds:")
    for way, t in median.items():
        cores = 1 if way == "1 worker" else 2
        priced = n_sites * replicates * n_cutoffs / t
        memory = f", peak memory per worker {worker_memory[way] / 2**20:,.0f} MB" if worker_memory[way] else ""
        print(f"    {way:9} {t:6.1f} s  {priced / cores:12,.0f} site-season-cutoffs a second per core{memory}")
    print(f"    this process: peak memory {main_memory / 2**20:,.0f} MB")
    print(f"  speed-up from 1 to 2 local workers: {median['1 worker'] / median['2 workers']:.2f} "
          f"(target at least 1.8); round by round "
          + ", ".join(f"{a / b:.2f}" for a, b in zip(times["1 worker"], times["2 workers"])))
    ceiling = [a / b for a, b in zip(times["1 worker"], times["2 halves"])]
    reached = [b / a for a, b in zip(times["2 workers"], times["2 halves"])]
    print(f"  the machine's own ceiling (1 worker against 2 halves at once, nothing shared): "
          f"{float(np.median(ceiling)):.2f}; round by round {', '.join(f'{x:.2f}' for x in ceiling)}; the local "
          f"pool took {float(np.median([1 / x for x in reached])):.2f} times the halves' time (median of rounds)")
    if all(busy.values()):
        # where a shortfall comes from: extra work on two workers, cores left idle, or the machine's
        # speed drifting between rounds (the same work taking more or less core time)
        used = ", ".join(f"{way} {np.median([b for b, _ in busy[way]]):.1f} s" for way in ways)
        idle = np.median([i / (b + i) for b, i in busy["2 workers"]])
        print(f"  core time used (median, whole machine): {used}; idle on 2 local workers: {idle:.0%} of "
              f"the {os.cpu_count()} cores' time; one worker took {min(times['1 worker']):.1f}-"
              f"{max(times['1 worker']):.1f} s for the same work over the rounds")
    if "Dask" in median:
        ratio = median["Dask"] / median["2 workers"]
        print(f"  Dask LocalCluster against the local pool: {ratio:.2f} x its time (target at most 1.15); round by "
              "round " + ", ".join(f"{a / b:.2f}" for a, b in zip(times["Dask"], times["2 workers"])))
        used = {way: float(np.median(processor[way])) for way in ("1 worker", "2 workers", "Dask")}
        print(f"  processor time of the run's own processes (median; the Dask way counts this process, which "
              f"holds the LocalCluster's scheduler and nannies, and the Dask workers): 1 worker {used['1 worker']:.1f} s, "
              f"2 workers {used['2 workers']:.1f} s, Dask {used['Dask']:.1f} s ({used['Dask'] / used['2 workers']:.2f} x "
              "the local pool's)")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sites", type=int, default=200, help="sites with fixed costs (default 200)")
    parser.add_argument("--rule-sites", type=int, default=50, help="sites with operating rules (default 50; 0 skips)")
    parser.add_argument("--years", type=int, default=10, help="years of daily history (default 10)")
    parser.add_argument("--replicates", type=int, default=5000, help="replicate seasons (default 5000)")
    parser.add_argument("--cutoff-step", type=float, default=0.01, help="cutoff step (default 0.01: 101 cutoffs)")
    parser.add_argument("--repeats", type=int, default=5,
                        help="rounds of timings with fixed costs; medians are reported (default 5)")
    parser.add_argument("--rule-repeats", type=int, default=3,
                        help="rounds of timings with operating rules (default 3: each takes minutes)")
    parser.add_argument("--no-cluster", action="store_true", help="skip the Dask LocalCluster runs")
    args = parser.parse_args()
    print(f"bench_sites: {os.cpu_count()} cores seen; numpy {np.__version__}")
    prepare(workers=2)  # as simulator.run does before it reads the history
    fill = {"replicates": args.replicates, "step": args.cutoff_step}
    if args.sites:
        bench("(a) fixed costs", FIXED.format(**fill), args.sites, args.years, not args.no_cluster, args.repeats)
    if args.rule_sites:
        bench("(b) operating rules", RULES.format(**fill), args.rule_sites, args.years, not args.no_cluster,
              args.rule_repeats)


if __name__ == "__main__":
    main()
