"""What a run computed: the result dataclasses that the account renders.

:class:`RunResult` holds a run's numbers (arrays over replicates, tables by cutoff); with a site
column, :class:`Portfolio` holds every site's :class:`SiteResult` and their totals. Numbers only:
no files, no text for a reader (see ``account``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .analysis.cost_spread import CostSpread
from .analysis.forecasts import Comparison
from .analysis.calibration import Calibration
from .analysis.selection import Selection
from .analysis.sensitivity import Sensitivity
from .analysis.site_sensitivity import PortfolioSensitivity
from .analysis.stress import StressResult
from .analysis.verdict import SeasonCosts, SeasonTable, Verdict
from .analysis.winners import Contest
from .inputs.history import History
from .inputs.scenario import Scenario
from .pricing.counts import ReplicateCounts
from .pricing.decision import Decision, Distribution, distribution
from .replay.resample import Calendar
from .rules.operations_result import OperationsResult

__all__ = ["RunResult", "SiteResult", "Portfolio"]


@dataclass(frozen=True)
class SiteResult:
    """One site of a run with many sites: its own costs and rules, decision and cutoff table.

    ``model_cost`` is the site's season cost at its own recommended cutoff and ``baseline_cost``
    that of each baseline, each (n_replicates,), on the replicates every site shares (the joint
    replay); ``table`` has the columns of ``cutoffs.csv`` for this site alone. ``missing_dates``
    counts the joint dates the site has no row on (see :mod:`simulator.replay.resample`). ``operations`` is
    the ``operations`` block of a single-site ``summary.json`` for this site, when it has rules.
    """

    name: str
    scenario: Scenario
    history: History
    theoretical_cutoff: float
    decision: Decision
    table: pd.DataFrame
    quality: dict[str, float]
    model_cost: np.ndarray
    baseline_cost: dict[str, np.ndarray]
    missing_dates: int
    operations: dict | None = None
    warnings: tuple[str, ...] = field(default=())
    # the validation check and walk-forward, and the [[stress]] cases, of this site alone (as a
    # single-site run of its rows makes them)
    selection: Selection | None = None
    stress: tuple[StressResult, ...] | None = None
    # whether this site's forecast is worth using at all (simulator.analysis.verdict), on its own seasons,
    # and those seasons' costs (for the portfolio's verdict)
    verdict: Verdict | None = None
    season_costs: SeasonCosts | None = None
    # several [forecasts]: each one's recommended cutoff index at this site, in the order listed,
    # and which one wins here, each at its own cutoff (simulator.analysis.winners)
    own_cutoffs: tuple[int, ...] = ()
    contest: Contest | None = None
    # which of its cost estimates matters (analysis/site_sensitivity.py; under [operations] its rules'
    # prices, analysis/site_prices.py): its own sensitivity, as a run of it alone gives it; None when
    # only some sites have rules. ``portfolio_columns`` (n_replicates, 18; 22 under [operations]) is
    # what it adds to the portfolio's ends, carried only until the tasks add it up
    sensitivity: Sensitivity | None = None
    portfolio_columns: np.ndarray | None = None
    # with the sensitivity: its past seasons' counts (verdict.SeasonTable), for the portfolio's verdict
    season_table: SeasonTable | None = None

    @property
    def reference(self) -> str:
        return self.scenario.simulation.reference

    @property
    def strategies(self) -> dict[str, Distribution]:
        """Season cost distribution of the site at its recommended cutoff (``model``) and of each baseline."""
        out = {"model": distribution(self.model_cost)}
        out.update({name: distribution(cost) for name, cost in self.baseline_cost.items()})
        return out

    @property
    def forecast_value(self) -> float:
        """Mean season cost of the cheaper fixed rule (never act or always act, the best one can do
        knowing only the climate) minus that of acting on the forecast at the recommended cutoff:
        the value of the forecast in money, E_climate - E_forecast of Richardson (2000), "Skill and
        relative economic value of the ECMWF ensemble prediction system", QJRMS 126, 649-667."""
        climate = min(float(self.baseline_cost["never_act"].mean()),
                      float(self.baseline_cost["always_act"].mean()))
        return climate - float(self.model_cost.mean())


@dataclass(frozen=True)
class Portfolio:
    """All sites together: the total season cost with each site at its own recommended cutoff,
    beside the run's common cutoff (the one cutoff for all sites with the lowest mean total).

    ``own_cost``, ``common_cost`` and ``reference_cost`` are totals over the sites, each
    (n_replicates,). ``table`` is ``sites.csv``: one row per site in the order of the history (by name).
    """

    site_column: str
    sites: tuple[SiteResult, ...]
    common_cutoff: float
    own_cost: np.ndarray
    common_cost: np.ndarray
    reference_cost: np.ndarray
    table: pd.DataFrame

    @property
    def ranking(self) -> list[SiteResult]:
        """Sites by the value of acting on the forecast (:attr:`SiteResult.forecast_value`), highest first."""
        return sorted(self.sites, key=lambda site: -site.forecast_value)

    def site(self, name: str) -> SiteResult:
        for site in self.sites:
            if site.name == name:
                return site
        raise KeyError(name)


@dataclass(frozen=True)
class RunResult:
    """Everything a run computed. Arrays over replicates are kept for figures and later analysis.

    With many sites the run's numbers are those of the portfolio under one common cutoff (totals
    over the sites; ``table`` pools the sites' classification counts), and ``portfolio`` holds each
    site's own results; ``operations``, ``stress``, ``calibration`` and ``selection`` are then None.
    """

    scenario: Scenario
    history: History
    calendar: Calendar
    cutoffs: np.ndarray
    replicates: int
    seed: int
    mean_block_days: float
    theoretical_cutoff: float
    decision: Decision
    model_cost: np.ndarray  # (n_replicates, n_cutoffs)
    baseline_cost: dict[str, np.ndarray]  # name -> (n_replicates,)
    table: pd.DataFrame  # one row per cutoff
    quality: dict[str, float]
    value_curve: pd.DataFrame
    reliability: pd.DataFrame
    warnings: tuple[str, ...] = field(default=())
    # with [operations]: cost components, completion days and day counts of every replicate
    operations: OperationsResult | None = None
    # [[stress]] cases in scenario order; the calibrated mode's recalibration; honest selection
    stress: tuple[StressResult, ...] | None = None
    calibration: Calibration | None = None
    selection: Selection | None = None
    # with a site column: every site's own results and the portfolio's
    portfolio: Portfolio | None = None
    # whether the forecast is worth using at all, judged on seasons it was not chosen on
    verdict: Verdict | None = None
    # [event] hazard = true: event occasions of each replicate season (all sites) on which the
    # forecast does not reach the recommended cutoff, (n_replicates,); None in the calibrated mode
    events_without_action: np.ndarray | None = None
    # with two or more [forecasts]: each priced on the same replicates, and every pair compared
    comparison: Comparison | None = None
    # each replicate's classification counts (the main forecast at every cutoff, and the baselines
    # in BASELINES order), all replicates in replicate order, int32; they do not depend on the costs,
    # so any other fixed costs reprice them (costs.price) without a replay. Single-site runs with
    # fixed costs in the replay mode only; None with a site column, [operations] or mode = "calibrated"
    replicate_counts: ReplicateCounts | None = None
    # which cost estimate matters: each cost moved alone, its ends and switching values; or a note
    # saying why a run has none (analysis/sensitivity.py); with a site column the portfolio's and
    # each site's (analysis/site_sensitivity.py)
    sensitivity: Sensitivity | PortfolioSensitivity | None = None
    # with costs given as ranges (one site): the spread of the recommended cutoff's season cost
    # split into the weather's part and the cost ranges' part
    cost_spread: CostSpread | None = None

    @property
    def reference(self) -> str:
        return self.scenario.simulation.reference

    @property
    def strategies(self) -> dict[str, Distribution]:
        """Season cost distribution per strategy; the model at the recommended cutoff is ``model``."""
        out = {"model": distribution(self.model_cost[:, self.decision.recommended_index])}
        out.update({name: distribution(cost) for name, cost in self.baseline_cost.items()})
        return out

    @property
    def recommended_counts(self) -> pd.Series:
        return self.table.iloc[self.decision.recommended_index]

    @property
    def sites(self) -> tuple[SiteResult, ...]:
        """Each site's results (empty without a site column)."""
        return () if self.portfolio is None else self.portfolio.sites
