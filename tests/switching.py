"""The defining property of a switching value, checked with full runs (shared by the sensitivity tests).

A switching value is the value of an input at which the preferred option changes (common practice in
decision analysis and health-economic evaluation: Briggs, Claxton and Sculpher 2006, Decision
Modelling for Health Economic Evaluation, chapter 4; from memory, check). So an input just past it
changes the verdict or takes the cutoff out of today's near-optimal band, and just short of it
does not. "Just" is :data:`JUST` of the span searched, wider than the bisection's width
(:func:`simulator.analysis.sensitivity.switching_value`).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator

JUST = 2e-6  # "just past" / "just short": this share of the span searched


def switches(result, kind: str) -> Iterator[tuple[object, str, float]]:
    """Every switching value of a run's sensitivity: (entry, "down" or "up", value); ``kind`` is
    ``"verdict"`` or ``"band"``."""
    for entry in result.sensitivity.costs:
        switch = entry.verdict_switch if kind == "verdict" else entry.band_switch
        for side, value in (("down", switch.down), ("up", switch.up)):
            if value is not None:
                yield entry, side, value


def past_and_short(entry, side: str, value: float) -> tuple[float, float]:
    """The input just past its switching value and just short of it."""
    step = JUST * (entry.search[1] - entry.search[0]) * (1 if side == "up" else -1)
    return value + step, value - step


def check_verdict_switches(result, verdict_at: Callable[[str, float], object]) -> None:
    """Just past each verdict switching value a full run (``verdict_at(key, value)``, its ``Verdict``)
    turns the verdict; just short of it, it does not."""
    found = list(switches(result, "verdict"))
    assert found, "expected at least one verdict switching value within the span searched"
    for entry, side, value in found:
        past, short = past_and_short(entry, side, value)
        assert verdict_at(entry.key, past).use_forecast != result.verdict.use_forecast, (entry.key, side, value)
        assert verdict_at(entry.key, short).use_forecast == result.verdict.use_forecast, (entry.key, side, value)


def check_band_switches(result, cutoff_at: Callable[[str, float], float]) -> None:
    """Just past each band switching value a full run's cutoff (``cutoff_at(key, value)``) leaves
    today's near-optimal band; just short of it, it stays."""
    lo, hi = result.decision.near_optimal_band
    found = list(switches(result, "band"))
    assert found, "expected at least one band switching value within the span searched"
    for entry, side, value in found:
        past, short = past_and_short(entry, side, value)
        assert not lo <= cutoff_at(entry.key, past) <= hi, (entry.key, side, value)
        assert lo <= cutoff_at(entry.key, short) <= hi, (entry.key, side, value)
