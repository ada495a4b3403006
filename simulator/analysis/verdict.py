"""Is the forecast worth using at all? Acting on it against the best rule that ignores it, judged
on seasons the choice was not made on.

The recommended cutoff is the best of a hundred cutoffs on the same history, so even a forecast of
pure noise shows a saving there: the choice fits the history's chance. This is the gap between the
*potential* value of a forecast (its best cutoff chosen in hindsight) and its *actual* value (a
cutoff chosen on past data and applied to new data), which Richardson (2000) discusses after Atger
(2001). The verdict therefore prices the choice out of sample, by cross-validation over seasons
(leave one season out; common practice in model selection, for example Hastie, Tibshirani and
Friedman 2009, section 7.10, from memory): for each season of the history, the cutoff and the
best rule without the forecast (never act, always act, persistence, seasonal rate) are each
chosen on the *other* seasons (lowest total cost there), and both are priced on the held-out
season. The saving of each held-out season is paired (the same occasions, the same outcomes), so
a forecast with no skill saves nothing on average, whatever its best cutoff in hindsight.

The money basis is one season of the priced calendar. Held-out seasons may hold different
numbers of occasions (the history's first and last seasons are often partial), so the mean saving
is a ratio estimate (total saving over total occasions, times the occasions of a season) and its
variance is the ratio estimator's (Cochran 1977, section 6.3, from memory, check); the 90%
interval of the mean uses Student's t with one degree of freedom fewer than the held-out seasons.
Treating the held-out seasons as independent understates the spread a little, as their training
sets overlap (Bengio and Grandvalet 2004, from memory), so the rule is kept strict: the forecast
is worth using only when the lower end of that interval is above zero.

Without ``[operations]`` each season is priced on its own historical occasions with the
``[costs]`` matrix (:func:`~simulator.pricing.costs.price`); with them, each past season is laid on the
priced season's calendar and played under the rules, as the honest selection does
(:mod:`simulator.analysis.selection`). The rules without the forecast are priced the same way, and the
seasonal rate learns its months from the training seasons only.

References
----------
Atger (2001) and Richardson (2000) on actual against potential value: as cited in
:mod:`simulator.analysis.selection`.
Hastie, T., Tibshirani, R. and Friedman, J. (2009). The Elements of Statistical Learning, 2nd ed.
Springer, section 7.10, cross-validation (from memory).
Cochran, W. G. (1977). Sampling Techniques, 3rd ed. Wiley (ratio estimates; from memory).
Bengio, Y. and Grandvalet, Y. (2004). No unbiased estimator of the variance of k-fold
cross-validation. J. Mach. Learn. Res. 5, 1089-1105 (from memory).
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..pricing.contingency import Contingency, count_at_cutoffs
from ..notation.prose import money  # the one formatter of money in prose (as stress.py uses it)
from ..pricing.costs import baseline_actions, monthly_event_rate, price, seasonal_actions
from ..inputs.history import History
from ..replay.resample import Calendar
from ..inputs.scenario import Scenario
from ..inputs.scenario_costs import Costs
from ..rules.operating_rules import RulePrices
from ..rules.season_cost import reprice

__all__ = ["RULES", "RULE_WORDS", "CONFIDENCE", "SeasonCosts", "Verdict", "season_costs", "season_pricer",
           "played_season_pricer", "SeasonTable", "season_counts", "judge", "worth_using", "best_rule", "together"]

RULES = ("never_act", "always_act", "persistence", "seasonal_rate")
"""The rules that ignore the forecast, in the order ties are broken."""
RULE_WORDS = {"never_act": "never acting", "always_act": "always acting", "persistence": "persistence",
              "seasonal_rate": "acting by calendar month"}
"""Each rule in plain words, for sentences."""
CONFIDENCE = 0.90  # two-sided interval of the mean saving; the forecast is used when its lower end is > 0


@dataclass(frozen=True)
class SeasonCosts:
    """What each season of the history cost, ready to be held out in turn.

    ``model`` (n_seasons, n_cutoffs): each season's cost acting on the forecast at each cutoff.
    ``rules`` (n_seasons, n_seasons, n_rules): ``rules[f, s, r]``, season ``s``'s cost under rule
    ``r`` of :data:`RULES` as learnt without season ``f`` (only the seasonal rate learns).
    ``occasions`` (n_seasons,): occasions priced in each season. ``seasons``: their labels.
    ``cutoffs`` (n_cutoffs,): the cutoffs of ``model``'s columns.
    """

    model: np.ndarray
    rules: np.ndarray
    occasions: np.ndarray
    seasons: np.ndarray
    cutoffs: np.ndarray


@dataclass(frozen=True)
class Verdict:
    """Whether to act on the forecast at all, and the out-of-sample saving behind it.

    ``mean``, ``p05``, ``p95``: the mean saving per season of acting on the forecast against the
    best rule without it, each chosen on the other seasons and priced on the held-out one, and the
    90% interval of that mean; ``prob_saving``: the confidence that the mean saving is above zero
    (Student's t). Money per season of the priced calendar; NaN with fewer than two seasons.
    ``held_out`` lists, per held-out season, its label, the cutoff and the rule chosen on the
    other seasons, and its saving scaled to a season.
    """

    use_forecast: bool
    best_rule: str
    mean: float
    p05: float
    p95: float
    prob_saving: float
    n_seasons: int
    held_out: tuple[tuple[int, float, str, float], ...]

    def as_dict(self, currency: str) -> dict:
        """The ``verdict`` block of ``summary.json``: ``use_forecast``, ``best_rule_without_forecast``,
        ``saving_against_best_rule`` (per season, out of sample: mean, p05 and p95 of its 90%
        interval, prob_saving the confidence that it is above zero) and ``reason``, one plain
        sentence. The run's own verdict and each forecast's under ``[forecasts]`` share it."""
        return {"use_forecast": self.use_forecast, "best_rule_without_forecast": self.best_rule,
                "saving_against_best_rule": {"mean": self.mean, "p05": self.p05, "p95": self.p95,
                                             "prob_saving": self.prob_saving},
                "reason": self.reason(currency)}

    def reason(self, currency: str) -> str:
        """Why the forecast is worth using or not, in one plain sentence, its money per season."""
        rule = RULE_WORDS[self.best_rule]
        if self.n_seasons < 2:
            return (f"The history holds {self.n_seasons} season, so a cutoff cannot be checked on a season it was "
                    f"not chosen on; {rule} is the cheapest rule without the forecast.")
        versus = (f"saved {money(self.mean, currency)} a season on average over the best rule without it ({rule})"
                  if self.mean >= 0 else f"cost {money(-self.mean, currency)} more a season on average than the "
                  f"best rule without it ({rule})")
        found = (f"Priced on each of the {self.n_seasons} past seasons at the cutoff chosen on the others, acting on "
                 f"the forecast {versus} (90% interval {money(self.p05, currency)} to {money(self.p95, currency)})")
        if self.use_forecast or self.mean < 0:
            return found + "."
        return found + ", not clearly more than a forecast of no skill saves by chance."


def best_rule(mean_costs: dict[str, float]) -> str:
    """The rule of :data:`RULES` with the lowest mean season cost (ties: the first)."""
    return min(RULES, key=lambda name: (mean_costs[name], RULES.index(name)))


def judge(costs: SeasonCosts, season_occasions: int, rule: str) -> Verdict:
    """Leave one season out: choose on the others, price on it, and judge the mean saving.

    Parameters
    ----------
    costs : each season's costs (:func:`season_costs`).
    season_occasions : occasions of the priced season (the money basis: one season).
    rule : the best rule without the forecast, named in the verdict (:func:`best_rule`).

    For held-out season f with saving D_f over n_f occasions, the mean saving per occasion is
    R = sum(D) / sum(n) and its variance (sum((D_f - R n_f)^2) / (k - 1)) / (k nbar^2) over k
    seasons (Cochran 1977, ratio estimate, from memory); per season both scale by
    ``season_occasions``. Ties choose the lowest cutoff and the first rule of :data:`RULES`.
    """
    k = costs.seasons.size
    nan = float("nan")
    if k < 2:
        return Verdict(use_forecast=False, best_rule=rule, mean=nan, p05=nan, p95=nan, prob_saving=nan,
                       n_seasons=int(k), held_out=())
    cut, chosen, saving, mean, se = _held_out(costs, season_occasions)
    from scipy.stats import t  # imported here: only the verdict needs Student's t

    if se > 0:
        half = _t_quantile(k) * se
        prob = float(t.cdf(mean / se, k - 1))
    else:  # every held-out season saved the same per occasion
        half, prob = 0.0, float(mean > 0)
    lo, hi = mean - half, mean + half
    held_out = tuple((int(s), float(costs.cutoffs[c]), RULES[int(r)], float(d * season_occasions / max(m, 1)))
                     for s, c, r, d, m in zip(costs.seasons, cut, chosen, saving, costs.occasions))
    return Verdict(use_forecast=bool(lo > 0), best_rule=rule, mean=float(mean), p05=float(lo), p95=float(hi),
                   prob_saving=prob, n_seasons=int(k), held_out=held_out)


def worth_using(costs: SeasonCosts, season_occasions: int) -> bool:
    """``judge(costs, season_occasions, rule).use_forecast``, without the rest of the verdict
    (quick, for the many costs a switching value is looked for at)."""
    if costs.seasons.size < 2:
        return False
    *_, mean, se = _held_out(costs, season_occasions)
    return bool(mean - _t_quantile(costs.seasons.size) * se > 0)


def _held_out(costs: SeasonCosts, season_occasions: int):
    """Each season held out in turn (see :func:`judge`): the cutoff and the rule chosen on the
    others, the held-out season's saving, and the mean saving per season with its standard error."""
    k = costs.seasons.size
    model_training = costs.model.sum(axis=0)[None, :] - costs.model  # (k, n_cutoffs): all but f
    cut = np.argmin(model_training, axis=1)
    fold = np.arange(k)
    rules_training = costs.rules.sum(axis=1) - costs.rules[fold, fold]  # (k, n_rules)
    chosen = np.argmin(rules_training, axis=1)
    saving = costs.rules[fold, fold, chosen] - costs.model[fold, cut]  # over each season's occasions
    n = costs.occasions.astype(float)
    per_occasion = saving.sum() / n.sum()
    spread = np.sum((saving - per_occasion * n) ** 2) / (k - 1)
    se = math.sqrt(spread / (k * n.mean() ** 2)) * season_occasions
    return cut, chosen, saving, per_occasion * season_occasions, se


@functools.lru_cache(maxsize=64)
def _t_quantile(k: int) -> float:
    """Student's t quantile of the two-sided :data:`CONFIDENCE` interval with k - 1 degrees of freedom."""
    from scipy.stats import t

    return float(t.ppf(0.5 + CONFIDENCE / 2, k - 1))


def together(parts: list[SeasonCosts]) -> SeasonCosts | None:
    """The season costs of many sites added together (one cutoff and one rule for all), when every
    site has the same past seasons; None otherwise (a held-out season must be held out everywhere)."""
    first = parts[0]
    if any(not np.array_equal(part.seasons, first.seasons) for part in parts[1:]):
        return None
    return SeasonCosts(model=sum(part.model for part in parts), rules=sum(part.rules for part in parts),
                       occasions=sum(part.occasions for part in parts), seasons=first.seasons,
                       cutoffs=first.cutoffs)


def season_costs(history: History, calendar: Calendar, cutoffs: np.ndarray, scenario: Scenario,
                 rules_of: SeasonCosts | None = None) -> SeasonCosts:
    """Each evaluated season's cost at every cutoff and under each rule of :data:`RULES`.

    Without ``[operations]``: the season's historical occasions priced with ``[costs]``. With them:
    the season laid on ``calendar`` and played under the rules
    (:class:`~simulator.rules.vectorised_model.OperationsPricer`).

    ``rules_of``: the season costs of another forecast of the same history (the same rows,
    outcomes, seasons and costs; ``History.with_forecast``). The rules ignore the forecast, so
    their costs and the occasions are taken from it, and only the model is priced here.
    """
    seasons = history.seasons
    if rules_of is not None and not np.array_equal(rules_of.seasons, seasons):
        raise ValueError("rules_of must come from the same history's seasons")
    if rules_of is not None and scenario.operations is None:
        return dataclasses.replace(rules_of, model=price(season_counts(history, cutoffs), scenario.costs),
                                   cutoffs=cutoffs)
    if scenario.operations is None:
        return season_pricer(history, cutoffs)(scenario.costs)
    return played_season_pricer(history, calendar, cutoffs, scenario, rules_of)(None)


def played_season_pricer(history: History, calendar: Calendar, cutoffs: np.ndarray, scenario: Scenario,
                         rules_of: SeasonCosts | None = None) -> Callable[[RulePrices | None], SeasonCosts]:
    """With ``[operations]``: each evaluated season's costs (:func:`season_costs`) as a function of
    the rules' prices (None: the scenario's own). Each season is laid on ``calendar`` and played
    under the rules once (:class:`~simulator.rules.vectorised_model.OperationsPricer`), and what it
    played is priced at the given prices (:func:`~simulator.rules.season_cost.reprice`, bit for bit
    a play at those prices: how the crews work never depends on a price). The seasonal rate's
    months depend on the ``[costs]`` matrix, not on the rules' prices, so they are learnt once too.
    ``rules_of`` as :func:`season_costs` takes it."""
    from ..rules.vectorised_model import OperationsPricer
    from ..inputs.scenario_types import BASELINES
    from .selection import _seasons_on_calendar  # each past season laid on the priced calendar

    seasons, evaluated, k = history.seasons, history.evaluated, history.seasons.size
    rows = _seasons_on_calendar(history, evaluated, calendar)  # (k, n_occasions), seasons ascending
    n_cut = cutoffs.size
    columns = [n_cut + BASELINES.index(name) for name in RULES]  # lanes: the cutoffs, then BASELINES
    everything = dataclasses.replace(history, validation=np.zeros_like(evaluated))
    pricer = OperationsPricer(everything, calendar, cutoffs, scenario)  # the forecast learns nothing
    played = pricer(rows).extras
    # only the seasonal rate learns: a fold whose months come out otherwise without its season
    # plays the seasons again under its own rules (beside one cutoff, the cheapest to carry)
    folds = {}
    seasonal = baseline_actions(everything, scenario.costs)["seasonal_rate"][evaluated]
    for f, h in enumerate(_learnt(history) if rules_of is None else ()):
        if not np.array_equal(baseline_actions(h, scenario.costs)["seasonal_rate"][evaluated], seasonal):
            fold = OperationsPricer(h, calendar, cutoffs[:1], scenario)
            folds[f] = (fold.rules, fold(rows).extras)

    def at(prices: RulePrices | None = None) -> SeasonCosts:
        total = reprice(pricer.rules, played, prices)[0]  # (k, n_lanes)
        if rules_of is not None:
            return dataclasses.replace(rules_of, model=total[:, :n_cut], cutoffs=cutoffs)
        rules = np.broadcast_to(total[:, columns], (k, k, len(RULES))).copy()
        for f, (own, extras) in folds.items():
            rules[f] = reprice(own, extras, prices)[0][:, [c - n_cut + 1 for c in columns]]
        return SeasonCosts(model=total[:, :n_cut], rules=rules, occasions=np.full(k, calendar.n_occasions,
                                                                                  dtype=np.int64),
                           seasons=seasons, cutoffs=cutoffs)
    return at


def season_pricer(history: History, cutoffs: np.ndarray) -> "SeasonTable":
    """Without ``[operations]``: each evaluated season's costs (:func:`season_costs`) as a function
    of the ``[costs]`` matrix (:class:`SeasonTable`)."""
    return SeasonTable(history, cutoffs)


class SeasonTable:
    """What each evaluated season holds that does not depend on the costs, counted once: its
    classification counts at every cutoff (``model_counts``, (k, n_cutoffs) per cell) and under the
    fixed rules (``fixed_counts``, (k,) per cell), its events and non-events by calendar month
    (``events``, ``others``, (k, 12)), and each fold's monthly event rates (``rates``, (k, 12),
    learnt without its season). Called with costs, it gives :class:`SeasonCosts`: other costs only
    price those counts (:func:`~simulator.pricing.costs.price`; a season's cost is the sum over cells
    of count x cost), so they are priced quickly (:mod:`simulator.analysis.sensitivity` prices many)."""

    FIXED = ("never_act", "always_act", "persistence")  # the rules that learn nothing

    def __init__(self, history: History, cutoffs: np.ndarray):
        seasons = history.seasons
        evaluated = history.evaluated
        k = seasons.size
        index = np.searchsorted(seasons, history.season[evaluated])  # each evaluated row's season
        event = history.event[evaluated]
        self.model_counts = season_counts(history, cutoffs)
        acts = {"never_act": np.zeros(event.size, dtype=bool), "always_act": np.ones(event.size, dtype=bool),
                "persistence": history.prev_event[evaluated]}
        self.fixed_counts = {name: Contingency(*(np.bincount(index, weights=cell, minlength=k)
                                                 for cell in _cells_of(acts[name], event))) for name in self.FIXED}
        month = monthly_event_rate(history)[0][evaluated]
        self.rates = np.stack([monthly_event_rate(h)[1] for h in _learnt(history)])  # (k folds, 12)
        by_month = index * 12 + month
        self.events = np.bincount(by_month, weights=event.astype(np.float64), minlength=k * 12).reshape(k, 12)
        self.others = np.bincount(by_month, weights=(~event).astype(np.float64), minlength=k * 12).reshape(k, 12)
        self.occasions = np.bincount(index, minlength=k)
        self.seasons, self.cutoffs = seasons, cutoffs

    def seasonal(self, costs: Costs) -> np.ndarray:
        """(k folds, k seasons): each season's cost under the seasonal rate learnt without fold f."""
        k = self.seasons.size
        # fold f acts in month m when its rate there reaches the break-even probability
        acts = seasonal_actions(np.arange(k * 12), self.rates.ravel(), costs).reshape(k, 12).astype(np.float64)
        acting = self.events * costs.hit + self.others * costs.false_alarm  # (k seasons, 12): acting all month
        idle = self.events * costs.miss + self.others * costs.correct_negative
        return acts @ acting.T + (1.0 - acts) @ idle.T

    def __call__(self, costs: Costs) -> SeasonCosts:
        k = self.seasons.size
        rules = np.empty((k, k, len(RULES)))
        for name in self.FIXED:  # the same whichever season is held out
            rules[:, :, RULES.index(name)] = price(self.fixed_counts[name], costs)[None, :]
        rules[:, :, RULES.index("seasonal_rate")] = self.seasonal(costs)
        return SeasonCosts(model=price(self.model_counts, costs), rules=rules, occasions=self.occasions,
                           seasons=self.seasons, cutoffs=self.cutoffs)


def _cells_of(act: np.ndarray, event: np.ndarray) -> tuple[np.ndarray, ...]:
    """Each occasion's cell (hit, false alarm, miss, correct negative) as 0/1 weights."""
    return ((act & event).astype(np.float64), (act & ~event).astype(np.float64),
            (~act & event).astype(np.float64), (~act & ~event).astype(np.float64))


_CELLS = ("hits", "false_alarms", "misses", "correct_negatives")


def _learnt(history: History) -> list[History]:
    """The history as each fold learns it: without one season each, and no validation period."""
    evaluated = history.evaluated
    return [dataclasses.replace(history, evaluated=evaluated & (history.season != s),
                                validation=np.zeros_like(evaluated)) for s in history.seasons]


def season_counts(history: History, cutoffs: np.ndarray) -> Contingency:
    """Each evaluated season's classification counts acting on the forecast at every cutoff, on its
    historical occasions: (n_seasons, n_cutoffs) per cell, seasons ascending."""
    seasons, evaluated = history.seasons, history.evaluated
    index = np.searchsorted(seasons, history.season[evaluated])  # each evaluated row's season
    p, event = history.p[evaluated], history.event[evaluated]
    per_season = [count_at_cutoffs(p[index == i], event[index == i], cutoffs) for i in range(seasons.size)]
    return Contingency(*(np.stack([getattr(c, cell) for c in per_season]) for cell in _CELLS))
