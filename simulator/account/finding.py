"""One finding of a run: what it is, the finding with its units, and its basis
(:func:`simulator.account.findings.account` states every finding of a run once)."""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

__all__ = ["Finding"]


@dataclass(frozen=True)
class Finding:
    """One finding of a run.

    ``key`` names it (``verdict``, ``cutoff``, ``season_cost``, ``saving``, ``beats_reference``,
    ``events_without_action``, ``cost_doubt``,
    ``deadline``, ``completion``, ``safety_stop``, ``sites``, ``season``, ``baseline:<name>``,
    ``history``; with several forecasts ``forecast_choice``, ``forecast_switch``, ``forecast_price``,
    ``forecast_skill`` and ``forecast:<name>``, :mod:`simulator.account.forecast_choice`); ``label`` is what it is, ``text`` the finding with its units as a table row
    shows it, ``sentence`` the same in prose, ``basis`` what it is per and at which cutoff.
    ``first`` marks the findings of the recommendation (the headline and the report's first screen).
    """

    key: str
    label: str
    text: str
    sentence: str
    basis: str
    first: bool = True

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)
