"""The operations result of a run: the played seasons' extras, and the ``operations`` block of
``summary.json`` with its caution.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..inputs.scenario_tables import OperationsSection
from ..inputs.scenario_types import BASELINES
from .operating_rules import COMPONENTS, COUNTS, RulePrices, Rules, _iso
from .season_cost import reprice

__all__ = ["CAUTION", "OperationsResult"]

_QUANTILES = (0.05, 0.50, 0.95)
CAUTION = ("The safety stop is a hard rule played outside the cost optimisation; the days it decided "
           "are costed as unavoidable. A cost-optimal cutoff never overrides safety rules, site risk "
           "assessments, local regulations or licensed professional judgement.")


@dataclass(frozen=True)
class OperationsResult:
    """The operations extras of a run, each (n_replicates, n_cutoffs + n_baselines)."""

    rules: Rules
    n_cutoffs: int
    extras: dict[str, np.ndarray] = field(default_factory=dict)
    section: OperationsSection | None = None

    def lane(self, key: str, index: int) -> np.ndarray:
        """``key`` at one lane (a cutoff index, or ``n_cutoffs + i`` for baseline i), (n_rep,)."""
        return self.extras[key][:, index]

    def season_cost_at(self, prices: RulePrices | None = None) -> np.ndarray:
        """Every replicate season's cost in every lane (n_rep, n_cutoffs + n_baselines), priced
        again at ``prices`` without playing the seasons again (:func:`~simulator.rules.season_cost.reprice`);
        at the rules' own prices, bit for bit the run's season costs."""
        return reprice(self.rules, self.extras, prices)[0]

    @property
    def cost_keys(self) -> list[str]:
        return [f"{name}_cost" for name in (*COMPONENTS, "other") if f"{name}_cost" in self.extras]

    def per_cutoff(self) -> dict[str, np.ndarray]:
        """Columns for the cutoff table, each (n_cutoffs,): mean components and lateness."""
        k = self.n_cutoffs
        out = {f"mean_{key}": self.extras[key][:, :k].mean(axis=0) for key in self.cost_keys}
        out["mean_days_late"] = self.extras["days_late"][:, :k].mean(axis=0)
        out["share_late"] = (self.extras["days_late"][:, :k] > 0).mean(axis=0)
        out["share_completed"] = (self.extras["completion_index"][:, :k] >= 0).mean(axis=0)
        out["mean_overtime_days"] = self.extras["overtime_days"][:, :k].mean(axis=0)
        out["mean_safety_stop_days"] = self.extras["safety_stop_days"][:, :k].mean(axis=0)
        return out

    def summary(self, recommended_index: int) -> dict:
        """The ``operations`` block of ``summary.json``.

        Keys: ``crews``, ``work_crew_days`` (null without a backlog limit), ``deadline`` (ISO or
        null), ``working_days`` and ``overtime_days_available`` (in the priced season),
        ``safety_stop_at``, ``safety_probability``; ``at_recommended_cutoff`` with
        ``mean_components`` (each ``<component>_cost`` and ``total_cost``, money per season),
        ``share_completed``, ``share_late``, ``days_late`` (mean, p05, p50, p95 calendar days),
        ``completion_date`` (p05, p50, p95 as ISO dates, null where unfinished),
        ``completion_by_week`` ([Monday, share], then ["unfinished", share]), ``mean_days`` (each
        of :data:`COUNTS`) and ``safety_stop_days`` (mean, p05, p50, p95: days the stop decided);
        ``baselines``: per baseline ``mean_components``, ``share_completed``, ``share_late``,
        ``days_late``; ``caution``.
        """
        rules = self.rules
        at = self._lane_summary(recommended_index, full=True)
        section = self.section
        return {
            "crews": rules.crews,
            "work_crew_days": float(rules.crew_days(rules.work)) if rules.limited else None,
            "deadline": None if rules.deadline_day is None else _iso(rules.dates[0] + rules.deadline_day),
            "working_days": rules.n_working_days,
            "overtime_days_available": rules.n_overtime_days,
            "safety_stop_at": None if section is None else section.safety_stop_at,
            "safety_probability": None if section is None else section.safety_probability,
            "at_recommended_cutoff": at,
            "baselines": {name: self._lane_summary(self.n_cutoffs + i, full=False)
                          for i, name in enumerate(BASELINES)},
            "caution": CAUTION,
        }

    def _lane_summary(self, index: int, full: bool) -> dict:
        x = {key: self.lane(key, index) for key in self.extras}
        components = {key: float(x[key].mean()) for key in self.cost_keys}
        components["total_cost"] = float(sum(components.values()))
        late = x["days_late"]
        out = {"mean_components": components,
               "share_completed": float((x["completion_index"] >= 0).mean()),
               "share_late": float((late > 0).mean()),
               "days_late": _spread(late)}
        if not full:
            return out
        out["completion_date"] = self._completion_dates(x["completion_index"])
        out["completion_by_week"] = self._completion_weeks(x["completion_index"])
        out["mean_days"] = {key: float(x[key].mean()) for key in COUNTS}
        out["safety_stop_days"] = _spread(x["safety_stop_days"])
        return out

    def _completion_dates(self, index: np.ndarray) -> dict:
        """p05/p50/p95 of the completion date (ISO), null where the quantile is unfinished work."""
        order = np.where(index >= 0, index, self.rules.n_occasions)  # unfinished sorts last
        q = np.quantile(order, _QUANTILES, method="inverted_cdf")
        return {name: (_iso(self.rules.dates[int(v)]) if v < self.rules.n_occasions else None)
                for name, v in zip(("p05", "p50", "p95"), q)}

    def _completion_weeks(self, index: np.ndarray) -> list[list]:
        """[[Monday of the week (ISO), share of replicates completing that week], ...]; the last
        entry is ["unfinished", share] when any replicate leaves work undone."""
        done = index >= 0
        weeks = self.rules.week[index[done]]
        labels, counts = np.unique(weeks, return_counts=True)
        n = index.size
        out = [[_iso(np.datetime64(int(w) * 7 - 3, "D")), float(c / n)] for w, c in zip(labels, counts)]
        if (~done).any():
            out.append(["unfinished", float((~done).mean())])
        return out


def _spread(values: np.ndarray) -> dict[str, float]:
    """Mean and 5th, 50th, 95th percentiles of day counts (percentiles are observed counts)."""
    p05, p50, p95 = np.quantile(values, _QUANTILES, method="inverted_cdf")
    return {"mean": float(np.mean(values)), "p05": float(p05), "p50": float(p50), "p95": float(p95)}


