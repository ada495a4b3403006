"""Several forecasts of the same event priced on the same replicate seasons, and compared.

A scenario's ``[forecasts]`` table names two or more probability columns of one history. Each
forecast is just another probability array on the same history rows (``History.with_forecast``):
the replicate seasons are drawn once and priced by one pricer per forecast (``run.py``), so every
forecast meets the same weather (common random numbers) and, under ``[operations]``, the same
rules. Each forecast then gets its own decision (its own recommended cutoff, :func:`decide`), its
quality scores on the history, and, with a validation period, its own honest check (cutoff chosen
on the training period, priced on the validation period).

A pair compares two forecasts each at its own recommended cutoff: ``saving`` is, replicate by
replicate, the season cost of the dearer one minus that of the cheaper one. Its mean is the most a
season of the better forecast is worth on average against the other (``worth_up_to``), its 5th
percentile a price that still pays in 95% of seasons (``worth_up_to_confident``). This is the
difference of expected expenses of the cost-loss model (Thompson 1952; Murphy 1977, "The value of
climatological, categorical and probabilistic forecasts in the cost-loss ratio situation", Monthly
Weather Review 105, 803-816), taken on replicate seasons of the user's own history instead of in
closed form; Thornes and Stephenson (2001, "How to judge the quality and value of weather forecast
products", Meteorological Applications 8, 307-314) argue for choosing a forecast provider by value.

Pure functions of arrays; ``run.py`` supplies the pricing, the decision and the honest check.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from itertools import combinations

import numpy as np
import pandas as pd

from ..pricing.decision import Decision, cheaper, distribution, money_tolerance, per_cutoff
from ..inputs.history import History
from .selection import ValidationCheck
from ..pricing.tables import forecast_scores, forecast_value_curve
from .verdict import Verdict
from .winners import Contest, contest

__all__ = ["ForecastResult", "ForecastPair", "Comparison", "compare_forecasts", "SCORES"]

SCORES = ("brier_score", "brier_skill_score", "roc_auc")


@dataclass(frozen=True)
class ForecastResult:
    """One forecast of a comparison, priced on the run's replicate seasons.

    ``model_cost`` is its season cost at every cutoff, (n_replicates, n_cutoffs), on the same
    replicates as every other forecast and the baselines; ``decision`` its own recommended cutoff
    and savings against the reference; ``scores`` its quality on the evaluated history
    (:data:`SCORES` and the event rate); ``value_curve`` its relative economic value across
    cost-loss ratios (Richardson 2000); ``validation`` its honest check, when the history has a
    validation period; ``verdict`` whether acting on it beats the best rule without it, judged on
    held-out seasons (:mod:`simulator.analysis.verdict`; the main forecast's is the run's own verdict).
    """

    name: str
    column: str
    decision: Decision
    model_cost: np.ndarray
    scores: dict[str, float]
    value_curve: pd.DataFrame
    validation: ValidationCheck | None = None
    verdict: Verdict | None = None

    @property
    def cost(self) -> np.ndarray:
        """Season cost at its own recommended cutoff, (n_replicates,)."""
        return self.model_cost[:, self.decision.recommended_index]

    def as_dict(self, currency: str, price: float | None = None) -> dict:
        """This forecast's entry in ``summary.json``'s ``forecasts`` block (``currency`` names the
        money in its verdict's reason; ``price``, its price per season when the scenario gives one,
        is written as ``price``)."""
        d = self.decision
        out = {"column": self.column, **({} if price is None else {"price": float(price)}),
               "recommended_cutoff": d.recommended_cutoff,
               "recommended_cutoff_interval": d.recommended_cutoff_interval,
               "season_cost": distribution(self.cost).as_dict(),
               "savings": {"mean": d.savings.mean, "p05": d.savings.p05, "p95": d.savings.p95,
                           "prob_saving": d.prob_saving}}
        if self.verdict is not None:  # as the run's "verdict" (held-out seasons)
            out["verdict"] = self.verdict.as_dict(currency)
        out.update({key: self.scores[key] for key in SCORES})
        if self.validation is not None:
            v = self.validation
            out["validation"] = {"chosen_on": "training period", "chosen_cutoff": v.chosen_cutoff,
                                 "validation_cost": v.validation.cost,
                                 "validation_cost_per_occasion": v.validation.cost_per_occasion,
                                 "validation_occasions": v.validation.n_occasions,
                                 "reference_cost": v.reference_cost, "optimism": v.optimism,
                                 "flag": v.flag}
        return out


@dataclass(frozen=True)
class ForecastPair:
    """Two forecasts, each at its own recommended cutoff, on the same replicate seasons.

    ``saving`` (n_replicates,) is the other's season cost minus the better's; the better one is
    the one with the lower mean season cost (the first listed when the two are equal within
    :func:`~simulator.pricing.decision.money_tolerance`). In :meth:`as_dict`, ``worth_up_to`` is the mean
    saving (the most a season of the better forecast is worth on average) and
    ``worth_up_to_confident`` its 5th percentile, a price that still pays in 95% of the seasons;
    it is 0 when the 5th percentile is negative (no price pays that often).
    """

    better: str
    other: str
    saving: np.ndarray
    prob_saving: float
    tolerance: float = 0.0  # money taken as equal in the two forecasts' season costs

    def at_prices(self, prices: Mapping[str, float]) -> dict | None:
        """Whether switching to the better forecast pays at the forecasts' prices per season.

        ``net_saving`` is, replicate by replicate, ``saving`` minus the difference of the prices
        (the better's minus the other's; a forecast without a price costs nothing extra), with its
        mean, p05 and p95; ``prob_pays`` the share of replicate seasons in which the saving exceeds
        that difference (a tie is not a gain); ``pays_on_average`` whether the mean net saving is
        above zero. None when neither forecast has a price.
        """
        if self.better not in prices and self.other not in prices:
            return None
        better, other = float(prices.get(self.better, 0.0)), float(prices.get(self.other, 0.0))
        net = self.saving - (better - other)
        p05, p95 = np.quantile(net, [0.05, 0.95])
        return {"better_price": better, "other_price": other,
                "net_saving": {"mean": float(net.mean()), "p05": float(p05), "p95": float(p95)},
                "prob_pays": float(cheaper(better - other, self.saving, self.tolerance).mean()),
                "pays_on_average": bool(net.mean() > self.tolerance)}

    def as_dict(self, prices: Mapping[str, float] | None = None) -> dict:
        """This pair's entry in ``forecast_pairs``; with ``prices`` (per season, by forecast name)
        that name either forecast, also ``at_prices`` (:meth:`at_prices`)."""
        p05, p95 = np.quantile(self.saving, [0.05, 0.95])
        mean = float(self.saving.mean())
        out = {"better": self.better, "other": self.other,
               "saving": {"mean": mean, "p05": float(p05), "p95": float(p95), "prob_saving": self.prob_saving},
               "worth_up_to": mean, "worth_up_to_confident": max(0.0, float(p05))}
        priced = self.at_prices(prices or {})
        if priced is not None:
            out["at_prices"] = priced
        return out


@dataclass(frozen=True)
class Comparison:
    """Every forecast of ``[forecasts]`` in the order listed, and every pair of them (the first
    listed against each later one, and so on)."""

    forecasts: tuple[ForecastResult, ...]
    pairs: tuple[ForecastPair, ...]
    cutoffs: np.ndarray = field(repr=False)
    reference_cost: np.ndarray = field(repr=False)

    def forecast(self, name: str) -> ForecastResult:
        for f in self.forecasts:
            if f.name == name:
                return f
        raise KeyError(name)

    def pair(self, a: str, b: str) -> ForecastPair:
        for p in self.pairs:
            if {p.better, p.other} == {a, b}:
                return p
        raise KeyError((a, b))

    def contest(self, objective: str = "mean") -> Contest:
        """The forecasts on the run's replicate seasons, each at its own recommended cutoff, and
        which one wins by ``objective`` (:mod:`simulator.analysis.winners`): the base case of the
        stress table."""
        return contest([f.name for f in self.forecasts], [f.decision.recommended_cutoff for f in self.forecasts],
                       [f.cost for f in self.forecasts], objective)

    def summary(self, currency: str, prices: Mapping[str, float] | None = None) -> dict:
        """The ``forecasts`` and ``forecast_pairs`` blocks of ``summary.json``; ``prices`` are the
        scenario's ``[forecast_prices]`` (money per season, by forecast name)."""
        prices = prices or {}
        return {"forecasts": {f.name: f.as_dict(currency, prices.get(f.name)) for f in self.forecasts},
                "forecast_pairs": [p.as_dict(prices) for p in self.pairs]}

    def table(self) -> pd.DataFrame:
        """``forecasts.csv``: one row per forecast and cutoff, its season cost distribution and its
        savings against the reference, whether it is the forecast's recommended cutoff, and, on
        every row of a forecast, whether its verdict advises using it (``use_forecast``)."""
        frames = []
        for f in self.forecasts:
            columns = per_cutoff(f.model_cost, self.reference_cost)
            recommended = np.zeros(self.cutoffs.size, dtype=bool)
            recommended[f.decision.recommended_index] = True
            use = {} if f.verdict is None else {"use_forecast": f.verdict.use_forecast}
            frames.append(pd.DataFrame({"forecast": f.name, "cutoff": self.cutoffs, **columns,
                                        "recommended": recommended, **use}))
        return pd.concat(frames, ignore_index=True)


def compare_forecasts(history: History, model_costs: Sequence[np.ndarray], reference_cost: np.ndarray,
                      cutoffs: np.ndarray, columns: Sequence[str],
                      decide_one: Callable[[np.ndarray], Decision],
                      check: Callable[[History], ValidationCheck | None],
                      main_quality: tuple[dict[str, float], pd.DataFrame] | None = None,
                      judge_one: Callable[[History], Verdict | None] | None = None) -> Comparison:
    """Decide for each forecast and compare every pair on the same replicate seasons.

    Parameters
    ----------
    history : the run's history; its ``forecast_names`` and ``forecast_p`` give the forecasts.
    model_costs : each forecast's season costs, (n_replicates, n_cutoffs), in the order listed, all
        priced on the same replicate rows.
    reference_cost : (n_replicates,) the reference rule's season costs on those replicates.
    cutoffs : (n_cutoffs,)
    columns : each forecast's probability column, in the order listed.
    decide_one : the run's decision for one forecast's costs (the same bootstrap draws for each).
    check : the honest check of a history with a validation period (None without one).
    main_quality : the main forecast's scores and value curve, when the run has them already.
    judge_one : the verdict of one forecast's history (held-out seasons, :mod:`simulator.analysis.verdict`).
    """
    results = []
    for j, name in enumerate(history.forecast_names):
        own = history.with_forecast(j)
        if j == 0 and main_quality is not None:
            quality, value_curve = main_quality
        else:
            quality, value_curve = forecast_scores(own), forecast_value_curve(own, cutoffs)
        results.append(ForecastResult(name=name, column=columns[j], decision=decide_one(model_costs[j]),
                                      model_cost=model_costs[j], scores=quality, value_curve=value_curve,
                                      validation=check(own),
                                      verdict=None if judge_one is None else judge_one(own)))
    pairs = []
    for a, b in combinations(results, 2):
        tolerance = money_tolerance(a.cost, b.cost)
        if cheaper(b.cost.mean(), a.cost.mean(), tolerance):
            a, b = b, a
        pairs.append(ForecastPair(better=a.name, other=b.name, saving=b.cost - a.cost,
                                  prob_saving=float(cheaper(a.cost, b.cost, tolerance).mean()),
                                  tolerance=tolerance))
    return Comparison(forecasts=tuple(results), pairs=tuple(pairs), cutoffs=cutoffs,
                      reference_cost=reference_cost)
