"""Which cost estimate matters with a site column: for the whole portfolio, and site by site.

A planner with 40 to 200 sites asks two things of the cost estimates. First, which of the
scenario's estimates (the four ``[costs]``) matters for the whole portfolio; second, for each site,
which of its own does. So a run with a site column gives both:

- **Each site's own sensitivity** (:func:`of_site`), made as
  :func:`simulator.analysis.sensitivity.of_run` makes it, on the site's replicate counts, its own costs
  (``Scenario.for_site``: its ``[sites."<name>".costs]`` and ranges merged over the scenario's), its
  near-optimal band and its verdict on its own past seasons (:mod:`simulator.analysis.verdict`), so
  a site's rows are those a run of that site's history alone gives (a site with a row on every
  date has the same replicates either way).
- **The portfolio's** (:func:`portfolio_sensitivity`): each of the scenario's four costs moved
  alone (a range in ``[costs]`` to its ends, any other :data:`~simulator.analysis.sensitivity.VARY`
  each way), every site that takes that cost from the scenario moved with it (a cost a site
  overrides does not move), every site choosing its own cutoff again. At each end: the portfolio's
  total saving against the reference (mean per season, the sites' totals on each replicate season,
  so the share of seasons it saves in is that of the total, not of the sites one by one) and how
  many sites' cutoffs move. The portfolio's advice has two switching values per cost: where the
  portfolio's verdict changes (one cutoff and one rule for every site on their past seasons added
  together, :func:`~simulator.analysis.verdict.together`, as the run's own verdict; none when the
  sites' past seasons differ), and where the first site's own advice changes (its verdict or its
  cutoff leaving its band: the nearest of the sharing sites' own switching values, with its name).
  The sites whose advice is closest to switching (:data:`CLOSEST`, by the smallest move relative to
  the cost) are named.

Memory and where it is made: a site's counts are (n_replicates, n_cutoffs) x 4 (int32), 8 MB at
5,000 replicates and 101 cutoffs; 200 sites would hold 1.6 GB. They are never gathered. Each site's
replicates are priced whole in one task (:mod:`simulator.tasks.plan`; with few sites its chunks are
joined first), so the site's own sensitivity is made there, exactly (quantiles and shares need every
replicate), and only small results travel back, plus, for the portfolio's ends, the site's season
cost at its cutoff and the reference's on each replicate at today's costs and at each end
(:func:`portfolio_columns`, (n_replicates, 18) float64), which the tasks add up over the sites in a
fixed order like the season costs. The portfolio's mean saving at an end is the sum of the sites'
(exact: each site chooses alone), and its share of seasons saving is that of the added totals.

Time: most of it is each site's verdict, looked for at about 130 costs (eight steps each way per
cost, then bisection), each a held-out-season verdict on the site's past seasons
(:class:`~simulator.analysis.verdict.SeasonTable` counts them once); the ends and the band cost
little under the mean objective (the mean counts per cutoff choose; one column is priced per
replicate). Measured on this shared two-core machine (``benchmarks/bench_site_sensitivity.py``, the
same run with and without, alternately; ``benchmarks/bench_sites.py --sites 40 --rule-sites 0
--replicates 2000 --repeats 1 --no-cluster`` against the code before it): at 40 sites x 10 daily
years x 2,000 replicates it adds about 40% (bench_sites, one or two workers) to 65% (alternate runs)
to the run's time, at 10 sites x 5,000 replicates about 50%; more than the 20% hoped for, and the
machine's load moves each figure by a third from run to run. Memory: the workers' peak is unchanged
(214 MB), the main process holds about 20 MB more.

The portfolio's part runs on any inputs moved (:func:`input_columns`, :func:`portfolio_one_way`):
here the four ``[costs]``; under ``[operations]`` at every site the rules' prices
(:mod:`simulator.analysis.site_prices`). With rules at some sites only there is no sensitivity,
only a note (:data:`simulator.analysis.sensitivity.NOTES`).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Collection, Sequence
from dataclasses import dataclass

import numpy as np

from ..inputs.scenario import Scenario
from ..inputs.scenario_costs import COST_KEYS, Costs
from ..inputs.scenario_tables import PRICE_KEYS
from ..inputs.scenario_types import BASELINES
from ..pricing.contingency import Contingency
from ..pricing.costs import price
from ..pricing.counts import ReplicateCounts
from ..pricing.decision import cheaper
from ..replay.resample import Calendar
from .sensitivity import Moved, Sensitivity, Switch, cost_moves, sensitivity, switching_value
from .verdict import RULES, SeasonTable, together, worth_using

__all__ = ["CLOSEST", "PortfolioEnd", "FirstSite", "PortfolioCost", "Closest", "PortfolioSensitivity", "of_site",
           "portfolio_columns", "portfolio_sensitivity", "portfolio_verdict", "shared_costs", "N_COLUMNS",
           "COST_INPUTS", "input_columns", "portfolio_one_way", "shared_inputs"]

CLOSEST = 3  # sites named as closest to switching (our own choice: a meeting reads a few, sensitivity.csv has all)
COST_INPUTS = tuple(f"costs.{key}" for key in COST_KEYS)  # the inputs moved with fixed costs, as columns
N_COLUMNS = 2 * (1 + 2 * len(COST_KEYS))  # model and reference: today, then each cost's low and high end


@dataclass(frozen=True)
class PortfolioEnd:
    """One end of a scenario cost for the portfolio: the cost, the total saving against the
    reference with every site at its own cutoff chosen again (mean per season, and the share of
    replicate seasons the total saves in), and how many sites' cutoffs move."""

    value: float
    mean_saving: float
    prob_saving: float
    sites_moved: int


@dataclass(frozen=True)
class FirstSite:
    """Where the first site's own advice changes as a scenario cost moves one way: the cost, the
    site, and which advice (``"verdict"`` or ``"band"``)."""

    value: float
    site: str
    advice: str


@dataclass(frozen=True)
class PortfolioCost:
    """One of the scenario's costs moved for every site that shares it (``sharing`` of them)."""

    key: str
    base: float
    varied: str
    sharing: int
    low: PortfolioEnd
    high: PortfolioEnd
    verdict_switch: Switch | None
    first_site_down: FirstSite | None
    first_site_up: FirstSite | None
    search: tuple[float, float]

    @property
    def width(self) -> float:
        """How far the portfolio's saving moves between the two ends (money per season)."""
        return abs(self.high.mean_saving - self.low.mean_saving)


@dataclass(frozen=True)
class Closest:
    """A site's advice nearest to switching: its cost ``key``, today's ``base``, the switching
    ``value``, which ``advice`` and the move relative to the cost (``relative``)."""

    site: str
    key: str
    base: float
    value: float
    advice: str
    relative: float


@dataclass(frozen=True)
class PortfolioSensitivity:
    """The sensitivity of a run with a site column: the portfolio's costs (the widest bar first),
    today's total saving and portfolio verdict, each site's own :class:`Sensitivity` (in the
    history's site order) and the sites closest to switching; or only a ``note``."""

    costs: tuple[PortfolioCost, ...]
    saving: float = math.nan
    prob_saving: float = math.nan
    use_forecast: bool | None = None
    sites: tuple[tuple[str, Sensitivity], ...] = ()
    closest: tuple[Closest, ...] = ()
    note: str | None = None
    moved: str = "costs"
    """What was moved: ``"costs"`` (the scenario's ``[costs]``) or ``"operations"`` (its rules' prices)."""
    remark: str | None = None
    """What the table's reader must know about the inputs (those left out, those moved together), or None."""


def shared_costs(scenario: Scenario, site: str) -> tuple[str, ...]:
    """The cost keys site ``site`` takes from the scenario's ``[costs]`` (not overridden by its own)."""
    override = scenario.sites.get(site)
    own = set(override.costs.given()) if override is not None and override.costs is not None else set()
    return tuple(key for key in COST_KEYS if key not in own)


def shared_inputs(scenario: Scenario, site: str) -> tuple[str, ...]:
    """The inputs site ``site`` takes from the scenario, as the scenario writes them: its ``[costs]``
    not overridden by its own (``"costs.<key>"``, :func:`shared_costs`), or, when it plays its
    seasons under ``[operations]``, the rules' prices of the scenario's ``[operations]`` that its
    ``[sites."<name>".operations]`` does not give (``"operations.<price>"``)."""
    if scenario.for_site(site).operations is None:
        return tuple(f"costs.{key}" for key in shared_costs(scenario, site))
    if scenario.operations is None:
        return ()
    override = scenario.sites.get(site)
    own = (set(override.operations.model_dump(exclude_unset=True))
           if override is not None and override.operations is not None else set())
    return tuple(f"operations.{key}" for key in PRICE_KEYS if key not in own)


def of_site(scenario: Scenario, calendar: Calendar, counts: ReplicateCounts, band: tuple[float, float],
            rule: str | None, table: SeasonTable) -> Sensitivity:
    """One site's own sensitivity, as :func:`~simulator.analysis.sensitivity.of_run` makes it for a
    run of that site alone: its scenario (``Scenario.for_site``), its replicate counts, and its
    verdict on its own past seasons priced from ``table`` (``season_pricer`` of its history, which
    the site's own verdict was priced from; ``rule`` None: no verdict)."""
    ranges = {key: r for key, r in scenario.cost_ranges().items() if r.high > r.low}
    verdict = None if rule is None else (lambda costs: worth_using(table(costs), calendar.n_occasions))
    return sensitivity(counts, scenario.costs, reference=scenario.simulation.reference,
                       objective=scenario.decision.objective, cutoffs=scenario.cutoffs, band=band,
                       use_forecast=verdict, ranges=ranges)


def input_columns(own: Sensitivity, keys: Sequence[str], shared: Collection[str], held: object,
                  at: Callable[[str, float], object],
                  pair: Callable[[object, float], tuple[np.ndarray, np.ndarray]]) -> np.ndarray:
    """What one site adds to the portfolio's ends, (n_replicates, 2 (1 + 2 len(keys))) float64, for
    any inputs moved (the ``[costs]``, or the rules' prices).

    Column pairs (the site's season cost at a cutoff, the reference's; ``pair(inputs, cutoff)``):
    today's inputs ``held`` at its cutoff there, then for each input of ``keys`` (as the scenario
    writes it, ``"costs.miss"``) its low and high end (``at(key, value)``) at the cutoff chosen
    there, when the site takes that input from the scenario (``shared``) and ``own`` (the site's own
    sensitivity, whose ends for a shared input are the portfolio's) moves it, else today's again.
    """
    today = pair(held, own.base_cutoff)
    by_key = {entry.key: entry for entry in own.costs}
    out = [*today]
    for key in keys:
        entry = by_key.get(key) if key in shared else None
        for end in (None, None) if entry is None else (entry.low, entry.high):
            out += today if end is None else pair(at(key, end.value), end.cutoff)
    return np.stack(out, axis=1)


def portfolio_columns(scenario: Scenario, counts: ReplicateCounts, own: Sensitivity, shared: Collection[str],
                      cutoffs: np.ndarray) -> np.ndarray:
    """What one site priced by ``[costs]`` adds to the portfolio's ends, (n_replicates,
    :data:`N_COLUMNS`) float64 (:func:`input_columns` on :data:`COST_INPUTS`): its replicate counts
    priced at today's costs (ranges at their means) and at each end of each cost it shares
    (``shared``, keyed ``"costs.<key>"``)."""
    held = scenario.costs  # a range's mean stands in its place (simulator.inputs.ranges)
    index = {float(c): i for i, c in enumerate(cutoffs)}
    reference = BASELINES.index(scenario.simulation.reference)
    cells = (counts.model.hits, counts.model.false_alarms, counts.model.misses, counts.model.correct_negatives)

    def pair(costs: Costs, cutoff: float) -> tuple[np.ndarray, np.ndarray]:
        i = index[cutoff]
        model = price(Contingency(*(cell[:, i] for cell in cells)), costs)
        return model, price(counts.baselines, costs)[:, reference]

    return input_columns(own, COST_INPUTS, shared, held,
                         lambda key, value: held.model_copy(update={key.removeprefix("costs."): value}), pair)


def portfolio_sensitivity(scenario: Scenario, names: Sequence[str], own: Sequence[Sensitivity],
                          columns: np.ndarray, verdict: Callable[[str, float], bool] | None) -> PortfolioSensitivity:
    """The portfolio's sensitivity to the scenario's ``[costs]`` from each site's own and the added
    :func:`portfolio_columns` (:func:`portfolio_one_way` on the four costs).

    Parameters
    ----------
    scenario : the run's scenario (its ``[costs]`` and ranges are the portfolio's).
    names, own : each site's name and own sensitivity, in the history's site order.
    columns : (n_replicates, :data:`N_COLUMNS`) the sites' :func:`portfolio_columns` added up.
    verdict : the portfolio's verdict with one scenario cost (key, value) moved for the sites sharing
        it (:func:`portfolio_verdict`); None when the run has no portfolio verdict.
    """
    ranges = {key: r for key, r in scenario.cost_ranges().items() if r.high > r.low and key.startswith("costs.")}
    shared = [shared_inputs(scenario, name) for name in names]
    moved_at = None if verdict is None else (lambda key, value: verdict(key.removeprefix("costs."), value))
    return portfolio_one_way(cost_moves(scenario.costs, ranges), COST_INPUTS, names, own, shared, columns,
                             verdict=moved_at)


def portfolio_one_way(moved: Sequence[Moved], keys: Sequence[str], names: Sequence[str], own: Sequence[Sensitivity],
                      shared: Sequence[Collection[str]], columns: np.ndarray,
                      verdict: Callable[[str, float], bool] | None = None,
                      use_forecast: bool | None = None) -> PortfolioSensitivity:
    """Each input of ``moved`` moved alone for every site that shares it, from the sites' own
    sensitivities and their :func:`input_columns` added up, for any inputs (the ``[costs]``, or the
    rules' prices).

    Parameters
    ----------
    moved : the inputs moved (:class:`~simulator.analysis.sensitivity.Moved`), in the order ties of
        width are broken; each is one of ``keys``.
    keys : the inputs in the order of the columns (:func:`input_columns`).
    names, own : each site's name and own sensitivity, in the history's site order.
    shared : the inputs each site takes from the scenario; a site shares an input it takes and its
        own sensitivity moves (one that plays a part there).
    columns : the sites' :func:`input_columns` added up.
    verdict : the portfolio's verdict with one input (key, value) moved for the sites sharing it;
        None: no switching value of the portfolio's verdict, and today's is ``use_forecast``.
    """
    today_saving = float((columns[:, 1] - columns[:, 0]).mean())
    base_verdict = use_forecast if verdict is None else verdict(moved[0].key, moved[0].base)
    out = []
    for m in moved:
        j = list(keys).index(m.key)
        sharing = [i for i, taken in enumerate(shared) if m.key in taken and any(e.key == m.key for e in own[i].costs)]

        def end(value: float, side: int, j: int = j, key: str = m.key, sharing=sharing) -> PortfolioEnd:
            column = 2 + 4 * j + 2 * side
            model, reference = columns[:, column], columns[:, column + 1]
            moves = sum(_site_end(own[i], key, side).cutoff != own[i].base_cutoff for i in sharing)
            return PortfolioEnd(value=value, mean_saving=float((reference - model).mean()),
                                prob_saving=float(cheaper(model, reference).mean()), sites_moved=int(moves))

        verdict_switch = None
        if verdict is not None and sharing:
            def flips(value: float, key: str = m.key) -> bool:
                return verdict(key, value) != base_verdict
            verdict_switch = Switch(switching_value(flips, m.base, m.search[0]),
                                    switching_value(flips, m.base, m.search[1]))
        out.append(PortfolioCost(key=m.key, base=m.base, varied=m.varied, sharing=len(sharing),
                                 low=end(m.low, 0), high=end(m.high, 1), verdict_switch=verdict_switch,
                                 first_site_down=_first_site(names, own, sharing, m.key, "down"),
                                 first_site_up=_first_site(names, own, sharing, m.key, "up"), search=m.search))
    order = sorted(range(len(out)), key=lambda i: (-out[i].width, i))
    return PortfolioSensitivity(costs=tuple(out[i] for i in order), saving=today_saving,
                                prob_saving=float(cheaper(columns[:, 0], columns[:, 1]).mean()),
                                use_forecast=base_verdict, sites=tuple(zip(names, own)),
                                closest=_closest(names, own))


def _site_end(site: Sensitivity, key: str, side: int):
    entry = next(e for e in site.costs if e.key == key)
    return entry.high if side else entry.low


def _switches(site: Sensitivity, key: str | None = None):
    """Each switching value of a site: (cost key, base, value, advice, direction)."""
    for entry in site.costs:
        if key is not None and entry.key != key:
            continue
        for advice, switch in (("verdict", entry.verdict_switch), ("band", entry.band_switch)):
            if switch is None:
                continue
            for direction in ("down", "up"):
                value = getattr(switch, direction)
                if value is not None:
                    yield entry.key, entry.base, value, advice, direction


def _first_site(names: Sequence[str], own: Sequence[Sensitivity], sharing: Sequence[int], key: str,
                direction: str) -> FirstSite | None:
    """The sharing site whose advice changes nearest today's cost, going ``direction``."""
    found = [(abs(value - base), names[i], value, advice) for i in sharing
             for _, base, value, advice, way in _switches(own[i], key) if way == direction]
    if not found:
        return None
    _, site, value, advice = min(found, key=lambda f: (f[0], f[1]))
    return FirstSite(value=value, site=site, advice=advice)


def _closest(names: Sequence[str], own: Sequence[Sensitivity]) -> tuple[Closest, ...]:
    """The :data:`CLOSEST` sites whose advice switches after the smallest move relative to the cost
    (each site once, at its nearest switching value)."""
    nearest = []
    for name, site in zip(names, own):
        moves = [(abs(value - base) / max(abs(base), 1e-12), key, base, value, advice)
                 for key, base, value, advice, _ in _switches(site)]
        if moves:
            relative, key, base, value, advice = min(moves)
            nearest.append(Closest(site=name, key=key, base=base, value=value, advice=advice, relative=relative))
    return tuple(sorted(nearest, key=lambda c: (c.relative, c.site))[:CLOSEST])


def portfolio_verdict(scenario: Scenario, sites: Sequence[tuple[str, Scenario, SeasonTable]],
                      calendar: Calendar) -> Callable[[str, float], bool] | None:
    """The portfolio's verdict (one cutoff and one rule for every site, on their past seasons added
    together: :func:`~simulator.analysis.verdict.together`) with one of the scenario's costs moved
    for the sites that share it, others held (ranges at their means); None when the sites' past
    seasons differ or are fewer than two, as the run then has no portfolio verdict.

    Quick for many sites: a season's cost is linear in the costs for the model and the fixed rules,
    so moving cost X by d adds d times the sharing sites' X counts to today's totals; only the
    seasonal rate (its months depend on the break-even probability) is priced again, site by site.
    """
    tables = [table for _, _, table in sites]  # each site's past seasons (SiteResult.season_table)
    held = [site.costs for _, site, _ in sites]  # a range's mean stands in its place
    shared = [shared_costs(scenario, name) for name, _, _ in sites]
    today = [table(costs) for table, costs in zip(tables, held)]
    joint = together(today)
    if joint is None or joint.seasons.size < 2:
        return None
    occasions = calendar.n_occasions * len(sites)
    seasonal, fixed = RULES.index("seasonal_rate"), [RULES.index(name) for name in SeasonTable.FIXED]
    moved = {}  # per cost: the sharing sites, and their counts of that cell added up

    def sums(key: str):
        if key not in moved:
            sharing = [i for i, keys in enumerate(shared) if key in keys]
            cell = _CELL[key]
            moved[key] = (sharing, sum(getattr(tables[i].model_counts, cell).astype(np.float64) for i in sharing),
                          np.stack([sum(getattr(tables[i].fixed_counts[name], cell) for i in sharing)
                                    for name in SeasonTable.FIXED], axis=-1),
                          sum(today[i].rules[:, :, seasonal] for i in sharing))
        return moved[key]

    def at(key: str, value: float) -> bool:
        sharing, model_cells, fixed_cells, seasonal_today = sums(key)
        if not sharing:
            return worth_using(joint, occasions)
        delta = value - float(getattr(scenario.costs, key))
        rules = joint.rules.copy()
        rules[:, :, fixed] += delta * fixed_cells[None, :, :]
        rules[:, :, seasonal] += sum(tables[i].seasonal(held[i].model_copy(update={key: value})) for i in sharing) \
            - seasonal_today
        return worth_using(dataclasses.replace(joint, model=joint.model + delta * model_cells, rules=rules), occasions)
    return at


_CELL = {"hit": "hits", "false_alarm": "false_alarms", "miss": "misses", "correct_negative": "correct_negatives"}
