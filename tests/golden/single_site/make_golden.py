"""Rewrite the golden outputs of single-site runs beside this file.

    .venv/bin/python tests/golden/single_site/make_golden.py

``history.csv`` is invented test data (a seasonal two-state Markov chain of events and its own
calibrated one-step forecast). The ``*.summary.json`` and ``*.cutoffs.csv`` files are what the
simulator wrote for the scenarios here before sites, workers and clusters were added;
tests/test_golden.py checks that it still writes exactly these bytes. Rewrite them only after a
change meant to alter results (a breaking change: see DEVELOPERS.md), and review the diff.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd

from simulator import read_scenario, run
from simulator.account.outputs import summary

HERE = Path(__file__).resolve().parent
SCENARIOS = ("plain", "rules", "calibrated")


def history_frame(seed: int = 20270601) -> pd.DataFrame:
    """Four years of daily rows, 2021-2024: wetter in winter, events persist (invented)."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2021-01-01", "2024-12-31", freq="D")
    wave = np.cos(2 * np.pi * (dates.day_of_year.to_numpy() - 15) / 365.25)
    p01, p11 = 0.22 + 0.08 * wave, 0.58 + 0.1 * wave
    u = rng.random(dates.size)
    event = np.zeros(dates.size, dtype=bool)
    for t in range(1, dates.size):
        event[t] = u[t] < (p11[t] if event[t - 1] else p01[t])
    before = np.r_[False, event[:-1]]
    noise = 0.15 * rng.standard_normal(dates.size)
    p = np.clip(np.where(before, p11, p01) + np.where(event, 0.25, -0.1) + noise, 0.0, 1.0)
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": np.round(p, 2),
                         "outcome": event.astype(int)})


def outputs(name: str) -> dict[str, bytes]:
    result = run(read_scenario(HERE / f"{name}.toml"))
    return {f"{name}.summary.json": (json.dumps(summary(result), indent=2) + "\n").encode(),
            f"{name}.cutoffs.csv": result.table.to_csv(index=False, lineterminator="\n").encode()}


if __name__ == "__main__":
    history_frame().to_csv(HERE / "history.csv", index=False, lineterminator="\n")
    for name in SCENARIOS:
        for file, data in outputs(name).items():
            (HERE / file).write_bytes(data)
            print(HERE / file)
