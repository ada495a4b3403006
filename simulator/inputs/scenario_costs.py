"""The ``[costs]`` table and what a cost matrix implies before any replay.

:class:`Costs` holds the money per occasion of each cell of the classification matrix;
:func:`break_even_probability` is the probability at which acting and not acting cost the same;
:func:`cost_warnings` says when one action is best whatever happens (returned, never printed:
``cli.py`` prints).
"""

from __future__ import annotations

import numpy as np
from pydantic import model_validator

from .scenario_types import Money, _Section

__all__ = ["Costs", "COST_KEYS", "COST_PLACEHOLDER", "break_even_probability", "cost_warnings"]

COST_KEYS = ("hit", "false_alarm", "miss", "correct_negative")
COST_PLACEHOLDER = "fill in"
"""What ``gonogo init`` writes for each cost: text, so that the schema refuses it until replaced."""


class Costs(_Section):
    """Per-occasion cost of each cell of the classification matrix, in the scenario's currency."""

    hit: Money
    false_alarm: Money
    miss: Money
    correct_negative: Money = 0.0

    @model_validator(mode="before")
    @classmethod
    def _filled_in(cls, data):
        if isinstance(data, dict) and COST_PLACEHOLDER in data.values():
            blank = [k for k, v in data.items() if v == COST_PLACEHOLDER]
            raise ValueError(f"fill in the four costs ({', '.join(COST_KEYS)}: money per occasion in the "
                             f"scenario's currency, negative for income); {', '.join(blank)} "
                             f"{'is' if len(blank) == 1 else 'are'} not a number yet")
        return data

    def as_array(self) -> np.ndarray:
        """(hit, false_alarm, miss, correct_negative) as float64."""
        return np.array([self.hit, self.false_alarm, self.miss, self.correct_negative], dtype=float)


def break_even_probability(costs: Costs) -> float:
    """Probability at which acting and not acting have the same expected cost.

    p* = (false_alarm - correct_negative) / ((false_alarm - correct_negative) + (miss - hit)): the
    cost-loss ratio C/L of Thompson (1952) and Murphy (1977) for a general 2x2 matrix (Elkan 2001,
    "The foundations of cost-sensitive learning", IJCAI). NaN when one action is always best.
    """
    c_prime = costs.false_alarm - costs.correct_negative
    d_prime = costs.miss - costs.hit
    if c_prime <= 0 or d_prime <= 0:
        return float("nan")
    return c_prime / (c_prime + d_prime)


def cost_warnings(costs: Costs, action: str) -> list[str]:
    """Warnings for a cost matrix under which one action is best whatever happens (Elkan 2001)."""
    c_prime = costs.false_alarm - costs.correct_negative
    d_prime = costs.miss - costs.hit
    if c_prime <= 0 and d_prime <= 0:
        return ["[costs]: acting costs no more than not acting when the event fails to happen, and not "
                "acting costs no more when it happens; check the signs of the costs"]
    if c_prime <= 0:
        return [f'[costs]: "{action}" is always at least as cheap (false_alarm <= correct_negative and '
                "hit <= miss), so every cutoff below the lowest forecast is best; check the costs"]
    if d_prime <= 0:
        return ["[costs]: not acting is always at least as cheap (miss <= hit and correct_negative <= "
                "false_alarm), so the best rule never acts; check the costs"]
    return []
