"""Which of the operating rules' prices matters with a site column: for the portfolio, and site by site.

The counterpart under ``[operations]`` of :mod:`simulator.analysis.site_sensitivity`, on its
machinery (:func:`~simulator.analysis.site_sensitivity.input_columns`,
:func:`~simulator.analysis.site_sensitivity.portfolio_one_way`):

- **Each site's own** (:func:`of_site_prices`): :func:`~simulator.analysis.rules_sensitivity.of_operations_run`
  on the site's played replicate seasons (its ``OperationsResult``, made where the site was priced),
  its own scenario (``Scenario.for_site``: its ``[sites."<name>".operations]`` merged over the
  scenario's), its near-optimal band and its verdict on its own past seasons: so a site's rows are
  those a run of that site's history alone gives (a site with a row on every date has the same
  replicates either way).
- **The portfolio's** (:func:`portfolio_prices`): each of the scenario's ``[operations]`` prices
  moved alone (a range to its ends, any other :data:`~simulator.analysis.sensitivity.VARY` each
  way) for every site that takes it from the scenario (a price a site gives in
  ``[sites."<name>".operations]`` holds, and so does one that plays no part there); every site
  chooses its own cutoff again; at each end the sites' total saving against the reference (mean
  per season, and the share of seasons the total saves in) and how many sites' cutoffs move, and
  where the first site's own advice changes. The played seasons are priced again
  (:meth:`~simulator.rules.operations_result.OperationsResult.season_cost_at`), so each end is what
  a full run with that price moved gives on the same seed.

The portfolio's verdict is not searched at other prices: it would need every site's past seasons
played under its rules and priced at each price tried, gathered from the tasks; its switching
value is left out and the table's remark says so (each site's own verdict switch is in its rows).
"""

from __future__ import annotations

from collections.abc import Collection, Sequence
from dataclasses import replace

import numpy as np

from ..inputs.history import History
from ..inputs.scenario import Scenario
from ..inputs.scenario_tables import PRICE_KEYS
from ..pricing.decision import cheaper
from ..replay.resample import Calendar
from ..rules.operations_result import OperationsResult
from .rules_sensitivity import TIED, of_operations_run, operations_pricing
from .sensitivity import Moved, Sensitivity
from .site_sensitivity import PortfolioSensitivity, input_columns, portfolio_one_way

__all__ = ["PRICE_INPUTS", "N_PRICE_COLUMNS", "NO_VERDICT", "of_site_prices", "portfolio_prices"]

PRICE_INPUTS = tuple(f"operations.{key}" for key in PRICE_KEYS)  # the rules' prices, in the columns' order
N_PRICE_COLUMNS = 2 * (1 + 2 * len(PRICE_INPUTS))  # model and reference: today, then each price's two ends

NO_VERDICT = ("The portfolio's verdict is not looked for at other prices (each site's past seasons would be played "
              "again at every price tried); each site's own verdict switch is in its rows of sensitivity.csv.")
"""The portfolio's remark: why it has no switching value of its verdict."""


def of_site_prices(scenario: Scenario, history: History, calendar: Calendar, operations: OperationsResult,
                   band: tuple[float, float], rule: str | None,
                   shared: Collection[str]) -> tuple[Sensitivity, np.ndarray]:
    """One site's own sensitivity to its rules' prices, exactly as a run of its history alone gives
    it, and what it adds to the portfolio's ends (:func:`~simulator.analysis.site_sensitivity.input_columns`
    on :data:`PRICE_INPUTS`, (n_replicates, :data:`N_PRICE_COLUMNS`) float64): its played seasons
    priced again at today's prices and at each end of each price it takes from the scenario
    (``shared``, keyed ``"operations.<price>"``). ``rule``: the verdict's best rule without the
    forecast (None: no verdict)."""
    priced = operations_pricing(scenario, operations)
    own = of_operations_run(scenario, history, calendar, operations, band, rule, priced)
    pricing = priced[2]
    index = {float(c): i for i, c in enumerate(scenario.cutoffs)}

    def pair(prices, cutoff: float) -> tuple[np.ndarray, np.ndarray]:
        model, reference = pricing.season_costs(prices)
        return model[:, index[cutoff]], reference

    return own, input_columns(own, PRICE_INPUTS, shared, pricing.held, pricing.at, pair)


def portfolio_prices(scenario: Scenario, names: Sequence[str], own: Sequence[Sensitivity],
                     shared: Sequence[Collection[str]], columns: np.ndarray,
                     use_forecast: bool | None) -> PortfolioSensitivity:
    """The portfolio's sensitivity to the scenario's ``[operations]`` prices.

    Parameters
    ----------
    scenario : the run's scenario.
    names, own : each site's name and own sensitivity (:func:`of_site_prices`), in the history's site order.
    shared : the prices each site takes from the scenario (``"operations.<price>"``).
    columns : (n_replicates, :data:`N_PRICE_COLUMNS`) the sites' columns added up.
    use_forecast : the run's own (portfolio's) verdict today, or None.

    A price is moved when at least one site takes it from the scenario and it plays a part there; its
    ends and search span are those of that site's own table (the same for every site sharing it).
    """
    moved = []
    for key in PRICE_INPUTS:
        entry = next((e for taken, site in zip(shared, own) if key in taken for e in site.costs if e.key == key), None)
        if entry is not None:
            moved.append(Moved(key=key, base=entry.base, low=entry.low.value, high=entry.high.value,
                               varied=entry.varied, search=entry.search))
    section = scenario.operations
    remarks = [NO_VERDICT]
    if any(m.key == "operations.day_rate" for m in moved) and section is not None and section.standby_rate is None:
        remarks.append(TIED)
    keys = {m.key for m in moved}
    left_out = [key.removeprefix("operations.") for key in PRICE_INPUTS if key not in keys
                and not (key == "operations.standby_rate" and section is not None and section.standby_rate is None)]
    if left_out:
        remarks.append("Left out, as every site gives its own or they play no part at any site: "
                       + "; ".join(left_out) + ".")
    if not moved:  # every site gives its own prices: only the sites' own tables
        return PortfolioSensitivity(costs=(), saving=float((columns[:, 1] - columns[:, 0]).mean()),
                                    prob_saving=float(cheaper(columns[:, 0], columns[:, 1]).mean()),
                                    use_forecast=use_forecast, sites=tuple(zip(names, own)), moved="operations",
                                    remark=" ".join(remarks))
    found = portfolio_one_way(moved, PRICE_INPUTS, names, own, shared, columns, use_forecast=use_forecast)
    return replace(found, moved="operations", remark=" ".join(remarks))
