"""Many sites: throughput, the speed-up from one to two local workers, memory per worker, and a Dask
LocalCluster against the local pool.

Invented data (like every benchmark here): N sites sharing a region's weather (a two-state Markov
chain of regional events; each site has the event on 80% of regional event days and 5% of others),
10 years of daily history each, with a noisy skilful forecast. Two runs are timed, each with 1 and
2 local workers and on a two-worker Dask LocalCluster (one thread per worker process):

  (a) fixed costs: 200 sites x 10 years x 5,000 replicates x 101 cutoffs, the whole year priced;
  (b) operating rules: 50 sites, April to October, crews, a backlog and a deadline.

Timings are of ``simulator.run_history`` (the history is read once, beforehand), from the call to
the finished result, the start of the worker processes included. As ``simulator.run`` does while it
reads the history, the process that forks local workers is started (and loads gonogo) before the
timings; the Dask workers likewise load gonogo before they are timed, as on a cluster that is up. Peak memory: the largest resident set of any worker
process (sampled every 0.1 s with psutil), and of this process. Targets from issue 6: speed-up of at
least 1.8 from 1 to 2 workers, under 2 GB a worker, the cluster within 25% of the local pool.

    .venv/bin/python benchmarks/bench_sites.py                 # the issue's sizes: a few minutes
    .venv/bin/python benchmarks/bench_sites.py --sites 40 --rule-sites 10 --replicates 2000
"""

from __future__ import annotations

import argparse
import importlib
import os
import threading
import time

import numpy as np
import pandas as pd

from simulator import history_from_frame, run_history, scenario_from_text
from simulator.parallel import prepare

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
    """Largest resident set of this process and of any of its descendants, sampled in a thread."""

    def __init__(self):
        import psutil

        self._me = psutil.Process()
        self.worker = 0
        self.main = 0
        self._stop = threading.Event()

    def __enter__(self):
        self._thread = threading.Thread(target=self._sample, daemon=True)
        self._thread.start()
        return self

    def _sample(self):
        import psutil

        while not self._stop.is_set():
            try:
                self.main = max(self.main, self._me.memory_info().rss)
                for child in self._me.children(recursive=True):
                    try:
                        self.worker = max(self.worker, child.memory_info().rss)
                    except psutil.Error:
                        pass
            except psutil.Error:
                pass
            self._stop.wait(0.1)

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()


def timed(scenario, history, **where) -> tuple[float, PeakMemory]:
    with PeakMemory() as memory:
        start = time.perf_counter()
        run_history(scenario, history, **where)
        elapsed = time.perf_counter() - start
    return elapsed, memory


def bench(label: str, text: str, n_sites: int, years: int, cluster: bool) -> None:
    scenario = scenario_from_text(text)
    start = time.perf_counter()
    history = history_from_frame(sites_frame(n_sites, years), scenario, label="invented")
    loaded = time.perf_counter() - start
    n_occasions = None
    n_cutoffs = scenario.cutoffs.size
    replicates = scenario.simulation.replicates
    print(f"\n{label}: {n_sites} sites x {years} years daily ({history.n_rows:,} rows, read in "
          f"{loaded:.1f} s) x {replicates:,} replicates x {n_cutoffs} cutoffs")
    times = {}
    for workers in (1, 2):
        times[workers], memory = timed(scenario, history, workers=workers)
        if n_occasions is None:
            from simulator.resample import season_calendar

            n_occasions = season_calendar(history, scenario.season).n_occasions
            print(f"  season of {n_occasions} occasions; "
                  f"{'operating rules played day by day' if scenario.operations else 'fixed costs'}")
        priced = n_sites * replicates * n_cutoffs / times[workers]
        worker = f"{memory.worker / 2**20:,.0f} MB" if workers > 1 else "(no workers)"
        print(f"  {workers} local worker{'s' if workers > 1 else ' '}: {times[workers]:6.1f} s  "
              f"{priced / workers:12,.0f} site-season-cutoffs a second per core   "
              f"peak memory: worker {worker}, this process {memory.main / 2**20:,.0f} MB")
    print(f"  speed-up from 1 to 2 local workers: {times[1] / times[2]:.2f} (target at least 1.8)")
    if not cluster:
        return
    from distributed import Client, LocalCluster

    import dask

    # Dask's nanny starts its workers with MALLOC_TRIM_THRESHOLD_=65536, so that they hand memory
    # back to the system; glibc then maps and zeroes every large array afresh, which slows numpy
    # work with many large temporaries. Timed as Dask starts workers, and without that variable.
    # (unset first: once a nanny has started, this process keeps the variable for later workers)
    environ = dict(dask.config.get("distributed.nanny.pre-spawn-environ"))
    trimmed = environ.pop("MALLOC_TRIM_THRESHOLD_", None)
    os.environ.pop("MALLOC_TRIM_THRESHOLD_", None)
    for label, settings in (("MALLOC_TRIM_THRESHOLD_ unset", {"distributed.nanny.pre-spawn-environ": environ}),
                            (f"Dask's defaults (MALLOC_TRIM_THRESHOLD_={trimmed})", {})):
        with dask.config.set(settings), LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                                     dashboard_address=None) as c:
            with Client(c.scheduler_address) as client:
                client.run(importlib.import_module, "simulator.run")  # a cluster that is up has loaded it
                trim = set(client.run(os.environ.get, "MALLOC_TRIM_THRESHOLD_").values())
            elapsed, memory = timed(scenario, history, cluster=c.scheduler_address)
        label += f" [workers see {', '.join(map(str, sorted(trim, key=str)))}]"
        print(f"  Dask LocalCluster, 2 workers, {label}: {elapsed:6.1f} s, {elapsed / times[2]:.2f} x the "
              f"local pool (target at most 1.25); peak memory: worker {memory.worker / 2**20:,.0f} MB")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sites", type=int, default=200, help="sites with fixed costs (default 200)")
    parser.add_argument("--rule-sites", type=int, default=50, help="sites with operating rules (default 50; 0 skips)")
    parser.add_argument("--years", type=int, default=10, help="years of daily history (default 10)")
    parser.add_argument("--replicates", type=int, default=5000, help="replicate seasons (default 5000)")
    parser.add_argument("--cutoff-step", type=float, default=0.01, help="cutoff step (default 0.01: 101 cutoffs)")
    parser.add_argument("--no-cluster", action="store_true", help="skip the Dask LocalCluster runs")
    args = parser.parse_args()
    print(f"bench_sites: {os.cpu_count()} cores seen; numpy {np.__version__}")
    prepare(workers=2)  # as simulator.run does before it reads the history
    fill = {"replicates": args.replicates, "step": args.cutoff_step}
    if args.sites:
        bench("(a) fixed costs", FIXED.format(**fill), args.sites, args.years, not args.no_cluster)
    if args.rule_sites:
        bench("(b) operating rules", RULES.format(**fill), args.rule_sites, args.years, not args.no_cluster)


if __name__ == "__main__":
    main()
