"""How long reading a planner's export takes: found dialect, day-first dates, many sites.

An invented history of 100 sites x 3,000 days (300,000 rows) is written as a semicolon-separated
CSV with decimal commas and DD.MM.YYYY dates, as office suites in much of Europe export it, and
read three ways: pandas with every option given (the floor), ``sheets.read_table`` finding the
dialect itself, and ``history.read_history`` (reading plus every check). Prints the median of
three rounds of each. Run: ``python benchmarks/bench_reading.py [--rows N]``.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from simulator.inputs.history import read_history
from simulator.inputs.scenario import scenario_from_text
from simulator.inputs.sheets import read_table


def _median_seconds(call, rounds: int = 3) -> float:
    times = []
    for _ in range(rounds):
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return float(np.median(times))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=300_000, help="rows to write (a multiple of 100)")
    args = parser.parse_args()
    sites = 100
    rng = np.random.default_rng(2027)
    days = pd.date_range("1990-01-01", periods=args.rows // sites, freq="D")
    p = np.round(rng.random(days.size * sites), 2)
    frame = pd.DataFrame({"Datum": np.repeat(days.strftime("%d.%m.%Y"), sites),
                          "Standort": np.tile([f"Depot {k}" for k in range(sites)], days.size),
                          "Wahrscheinlichkeit": p, "Ereignis": (rng.random(p.size) < p).astype(int)})
    scenario = scenario_from_text('name = "bench"\n[history]\ndate_column = "Datum"\nsite_column = "Standort"\n'
                                  'probability_column = "Wahrscheinlichkeit"\noutcome_column = "Ereignis"\n'
                                  "[costs]\nhit = 1\nfalse_alarm = 1\nmiss = 3\n")
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "export.csv"
        frame.to_csv(path, sep=";", decimal=",", index=False, encoding="cp1252")
        size = path.stat().st_size
        floor = _median_seconds(lambda: pd.read_csv(path, sep=";", decimal=",", encoding="cp1252", dtype=str))
        found = _median_seconds(lambda: read_table(path))
        checked = _median_seconds(lambda: read_history(scenario, path))
    print(f"{len(frame):,} rows, {size / 2**20:.1f} MiB, {sites} sites (median of 3 rounds)")
    print(f"  pandas, every option given, cells as text: {floor:6.2f} s")
    print(f"  read_table, dialect found:                 {found:6.2f} s")
    print(f"  read_history, read and checked:            {checked:6.2f} s")


if __name__ == "__main__":
    main()
