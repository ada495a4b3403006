"""Which forecast wins: several forecasts, each at its own cutoff, on the same replicate seasons.

A :class:`Contest` holds every forecast of ``[forecasts]`` priced on one set of replicate seasons
(the base case's, a ``[[stress]]`` case's tilted ones, or one site's share of the joint replay),
each at its own recommended cutoff of the base case: the cutoff a user of that forecast keeps. The
winner is the forecast whose season costs score lowest by the run's ``[decision] objective`` (the
mean, the 95th percentile or the mean of the worst 10%: the figure each forecast's own cutoff was
chosen by); the runner-up the next one. The saving,
replicate by replicate, is the runner-up's season cost minus the winner's, so its mean is what
the winner is worth a season over the best of the rest, and ``prob_saving`` the share of
replicate seasons in which the winner is strictly cheaper. Paired differences on common random
numbers, as in the forecasts comparison (:mod:`simulator.analysis.forecasts`; Thornes and
Stephenson 2001, "How to judge the quality and value of weather forecast products", Meteorological
Applications 8, 307-314, argue for choosing a provider by value).

Two forecasts whose scores are equal within :func:`~simulator.pricing.decision.money_tolerance`
(the same column listed under two names, for example) tie: the contest then has no winner. The
forecasts are ranked by that score and then by name, never by the order they are listed
in, so the listing order changes no figure.

Pure functions of arrays.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from ..notation.prose import cutoff_text, money, share
from ..pricing.decision import OBJECTIVE_NAMES, cheaper, distribution, money_tolerance, objective_cost

__all__ = ["Contest", "contest", "wins", "ROW_COLUMNS"]

ROW_COLUMNS = ("best_forecast", "runner_up_forecast", "saving_against_runner_up_mean",
               "saving_against_runner_up_p05", "saving_against_runner_up_p95", "saving_against_runner_up_prob")
"""The columns a contest adds to a row of ``stress.csv`` or ``sites.csv`` (:meth:`Contest.row`)."""


@dataclass(frozen=True)
class Contest:
    """Forecasts priced on the same replicate seasons, each at its own cutoff, and the winner.

    ``names``, ``cutoffs`` and ``costs`` are in the order listed: each forecast's name, the cutoff
    it is priced at, and its season cost on every replicate, (n_replicates,). ``cheapest`` is the
    one with the lowest score by ``objective`` (ties: the first by name) and ``runner_up`` the next; ``winner`` is
    ``cheapest``, or None when the two tie.
    ``saving`` (n_replicates,) is the runner-up's season cost minus the cheapest one's, and
    ``prob_saving`` the share of replicates in which the cheapest is strictly cheaper (a tie within
    the money tolerance is no saving). Money per season.
    """

    names: tuple[str, ...]
    cutoffs: tuple[float, ...]
    costs: tuple[np.ndarray, ...] = field(repr=False)
    winner: str | None
    cheapest: str
    runner_up: str
    saving: np.ndarray = field(repr=False)
    prob_saving: float
    objective: str = "mean"

    def saving_summary(self) -> dict[str, float]:
        """Mean, 5th and 95th percentiles of the saving per season, and ``prob_saving``."""
        p05, p95 = np.quantile(self.saving, [0.05, 0.95])
        return {"mean": float(self.saving.mean()), "p05": float(p05), "p95": float(p95),
                "prob_saving": self.prob_saving}

    def as_dict(self) -> dict:
        """The ``forecasts`` entry of a stress case in ``summary.json``: ``winner`` (null on a
        tie), ``runner_up``, ``saving_against_runner_up`` (money per season over the replicate
        seasons: mean, p05, p95, prob_saving), and each forecast's ``cutoff`` and ``season_cost``
        (mean, p05, p50, p95) there (``at_own_cutoff``)."""
        return {"winner": self.winner, "runner_up": None if self.winner is None else self.runner_up,
                "saving_against_runner_up": self.saving_summary(),
                "at_own_cutoff": {name: {"cutoff": cutoff, "season_cost": distribution(cost).as_dict()}
                         for name, cutoff, cost in zip(self.names, self.cutoffs, self.costs)}}

    def sentence(self, currency: str) -> str:
        """Which forecast wins, in one plain sentence for the stress headlines (money per season)."""
        if self.winner is None:
            return (f'"{self.cheapest}" and "{self.runner_up}" cost the same here, each at its own cutoff.')
        at = dict(zip(self.names, self.cutoffs))
        least = ("costs least here" if self.objective == "mean"
                 else f"has the lowest {OBJECTIVE_NAMES[self.objective]} here")
        return (f'Of the forecasts, each at its own cutoff, "{self.winner}" (at {cutoff_text(at[self.winner])}) '
                f"{least}: {money(float(self.saving.mean()), currency)} a season less than "
                f'"{self.runner_up}" (at {cutoff_text(at[self.runner_up])}) on average, and cheaper in '
                f"{share(self.prob_saving)} of seasons.")

    def row(self) -> dict:
        """The columns :data:`ROW_COLUMNS` of a CSV row: the winner (empty on a tie), the
        runner-up (empty on a tie) and the saving per season against it."""
        saving = self.saving_summary()
        return dict(zip(ROW_COLUMNS, (self.winner or "", "" if self.winner is None else self.runner_up,
                                      saving["mean"], saving["p05"], saving["p95"], saving["prob_saving"])))


def contest(names: Sequence[str], cutoffs: Sequence[float], costs: Sequence[np.ndarray],
            objective: str = "mean") -> Contest:
    """Rank forecasts priced on the same replicates by ``objective`` and name the winner.

    Parameters
    ----------
    names : each forecast's display name, in the order listed (two or more).
    cutoffs : the cutoff each is priced at (its own recommended cutoff), in the same order.
    costs : each forecast's season cost at that cutoff, (n_replicates,), on the same replicates.
    objective : the run's ``[decision] objective`` (:func:`~simulator.pricing.decision.objective_cost`).
    """
    if len(names) < 2 or not len(names) == len(cutoffs) == len(costs):
        raise ValueError(f"a contest needs two or more forecasts with a cutoff and costs each, got "
                         f"{len(names)} names, {len(cutoffs)} cutoffs and {len(costs)} cost arrays")
    costs = tuple(np.asarray(c, dtype=np.float64) for c in costs)
    scores = [float(objective_cost(c, objective)) for c in costs]
    first, second = sorted(range(len(names)), key=lambda i: (scores[i], names[i]))[:2]
    tolerance = money_tolerance(costs[first], costs[second])
    winner = names[first] if cheaper(scores[first], scores[second], tolerance) else None
    return Contest(names=tuple(names), cutoffs=tuple(float(c) for c in cutoffs), costs=costs, winner=winner,
                   cheapest=names[first], runner_up=names[second], saving=costs[second] - costs[first],
                   prob_saving=float(cheaper(costs[first], costs[second], tolerance).mean()), objective=objective)


def wins(contests: Sequence[Contest], names: Sequence[str]) -> dict[str, int]:
    """How many of ``contests`` each forecast of ``names`` wins, in the order of ``names`` (ties
    count for none)."""
    counts = dict.fromkeys(names, 0)
    for c in contests:
        if c.winner is not None:
            counts[c.winner] += 1
    return counts
