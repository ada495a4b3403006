"""Shared fixtures for the core's tests: small synthetic histories and scenarios, and seeds.

Every history made here is invented test data: dates, probabilities and outcomes drawn from a
fixed seed. Histories drawn with ``outcome ~ Bernoulli(p)`` are calibrated by construction
(common practice, no source). Factories that touch no files are session-scoped, so hypothesis
tests may use them; the writers live in ``tmp_path`` and are function-scoped.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario import scenario_from_text

# the cost matrix of issue 2's example scenario (per occasion, in the currency)
EXAMPLE_COSTS = {"hit": 300, "false_alarm": 1800, "miss": 2500, "correct_negative": 0}


# ------------------------------------------------------------------------------------------------
# seeds


@pytest.fixture
def seed() -> int:
    """The seed of the synthetic data in a test (arch ``test_bootstrap.py`` keeps seeds as fixtures)."""
    return 20270415


@pytest.fixture
def rng(seed) -> np.random.Generator:
    return np.random.default_rng(seed)


@pytest.fixture
def run_seed() -> int:
    """The seed handed to the simulator (``--seed``), kept apart from the data's seed."""
    return 7


# ------------------------------------------------------------------------------------------------
# TOML writing (the standard library reads TOML but does not write it)


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(value)
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    raise TypeError(f"cannot write {value!r} as TOML")


def scenario_toml(*, name: str = "test scenario", top: dict | None = None, **sections) -> str:
    """TOML text of a scenario: ``name``, extra top-level keys, then one table per section.

    A section given as None is left out; ``costs`` defaults to :data:`EXAMPLE_COSTS`.
    """
    sections.setdefault("costs", EXAMPLE_COSTS)
    lines = [f"name = {_toml_value(name)}"]
    lines += [f"{k} = {_toml_value(v)}" for k, v in (top or {}).items()]
    for section, keys in sections.items():
        if keys is None:
            continue
        lines += ["", f"[{section}]"]
        lines += [f"{k} = {_toml_value(v)}" for k, v in keys.items()]
    return "\n".join(lines) + "\n"


@pytest.fixture(scope="session")
def toml_text():
    """:func:`scenario_toml`, for tests that write their own scenario text."""
    return scenario_toml


@pytest.fixture(scope="session")
def make_scenario():
    """``make_scenario(**sections)``: a validated Scenario from section dicts (see scenario_toml)."""

    def make(**sections):
        return scenario_from_text(scenario_toml(**sections))

    return make


# ------------------------------------------------------------------------------------------------
# synthetic histories


def calibrated_frame(rng: np.random.Generator, start: str = "2020-01-01", end: str = "2022-12-31",
                     p: np.ndarray | None = None) -> pd.DataFrame:
    """Daily rows from ``start`` to ``end``: probability p (2 decimals, uniform on [0, 1] unless
    given) and an outcome drawn from it, so the forecast is calibrated. Columns as a user writes
    them: ``date`` (ISO text), ``probability``, ``outcome`` (0/1)."""
    dates = pd.date_range(start, end, freq="D")
    if p is None:
        p = rng.random(dates.size)
    p = np.round(np.asarray(p, dtype=float), 2)
    outcome = (rng.random(dates.size) < p).astype(int)
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": p, "outcome": outcome})


def markov_events(rng: np.random.Generator, p01: np.ndarray, p11: np.ndarray) -> np.ndarray:
    """A two-state Markov chain, True = event; p01 = P(event | none before), p11 = P(event | event
    before), each (n,) (day-varying allowed). The one truly sequential loop of the tests."""
    n = p01.size
    u = rng.random(n)
    out = np.zeros(n, dtype=bool)
    state = bool(u[0] < p01[0] / (1.0 - p11[0] + p01[0]))  # stationary share (common practice)
    out[0] = state
    for t in range(1, n):
        state = bool(u[t] < (p11[t] if state else p01[t]))
        out[t] = state
    return out


def markov_frame(rng: np.random.Generator, years: int, p01, p11, start: str = "2000-01-01") -> pd.DataFrame:
    """Daily rows over ``years`` calendar years of a (possibly seasonal) Markov chain of events.

    ``p01`` and ``p11`` are numbers or functions of the month (1..12) giving arrays. The probability
    column is the chain's own one-step forecast (P(event | yesterday)), which is calibrated.
    """
    end = pd.Timestamp(start) + pd.DateOffset(years=years) - pd.Timedelta(days=1)
    dates = pd.date_range(start, end, freq="D")
    month = dates.month.to_numpy()
    a = np.broadcast_to(p01(month) if callable(p01) else p01, month.shape).astype(float)
    b = np.broadcast_to(p11(month) if callable(p11) else p11, month.shape).astype(float)
    event = markov_events(rng, a, b)
    before = np.concatenate([[False], event[:-1]])
    p = np.where(before, b, a)
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": np.round(p, 4),
                         "outcome": event.astype(int)})


@pytest.fixture(scope="session")
def synthetic():
    """The history generators, for tests that draw their own: ``synthetic.calibrated_frame``,
    ``synthetic.markov_frame``, ``synthetic.markov_events``."""
    from types import SimpleNamespace

    return SimpleNamespace(calibrated_frame=calibrated_frame, markov_frame=markov_frame,
                           markov_events=markov_events)


@pytest.fixture(scope="session")
def make_history(make_scenario):
    """``make_history(frame, **sections)``: a checked History from a frame, without files."""

    def make(frame: pd.DataFrame, **sections):
        scenario = make_scenario(**sections)
        return history_from_frame(frame, scenario, label="history.csv")

    return make


@pytest.fixture
def history_frame(rng) -> pd.DataFrame:
    """Three years of calibrated daily forecasts (2020-2022, 1096 rows)."""
    return calibrated_frame(rng)


# ------------------------------------------------------------------------------------------------
# files in tmp_path


@pytest.fixture
def write_history(tmp_path):
    """``write_history(data, name="history.csv") -> Path``: a DataFrame as CSV (or Parquet when
    the name ends in .parquet), or str/bytes written verbatim."""

    def write(data, name: str = "history.csv") -> Path:
        path = tmp_path / name
        if isinstance(data, pd.DataFrame):
            if path.suffix == ".parquet":
                data.to_parquet(path, index=False)
            else:
                data.to_csv(path, index=False, lineterminator="\n")
        elif isinstance(data, bytes):
            path.write_bytes(data)
        else:
            path.write_text(data)
        return path

    return write


@pytest.fixture
def write_scenario(tmp_path):
    """``write_scenario(text=None, name="scenario.toml", **sections) -> Path``: TOML text written
    verbatim, or built by :func:`scenario_toml` with a small replicate count and the history
    path "history.csv" unless the sections say otherwise."""

    def write(text: str | None = None, name: str = "scenario.toml", **sections) -> Path:
        if text is None:
            history = {"path": "history.csv", **(sections.pop("history", None) or {})}
            simulation = {"replicates": 60, "seed": 11, **(sections.pop("simulation", None) or {})}
            text = scenario_toml(history=history, simulation=simulation, **sections)
        path = tmp_path / name
        path.write_text(text)
        return path

    return write
