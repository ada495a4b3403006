"""What every task of a run needs: the work sent to each worker once, and what a process keeps.

:class:`_Work` holds the replay, each site's scenario and the seeds; a process makes each site's
pricer once per run (:func:`_pricer`) and draws each seeded block once (:class:`_DrawnBlocks`);
:func:`_join` puts priced blocks of consecutive replicates together. :func:`_events_without_action`
draws the run's replicates again to count the events no action met.
"""

from __future__ import annotations

import dataclasses
import uuid
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..analysis.replicate_pricer import ReplicatePricer
from ..inputs.scenario import Scenario
from ..pricing.contingency import cutoff_slots
from ..pricing.costs import PricedBlock, SeasonPricer
from ..pricing.draws import CostDrawer
from ..replay.resample import Resampler, n_blocks
from ..rules.price_draws import PriceDraws
from ..rules.vectorised_model import OperationsPricer

Progress = Callable[[str, int, int], None]
"""progress(step, done, total): called as work advances; ``cli.py`` turns it into a bar."""

_INTERVAL_STREAM = 1  # seed stream of the bootstrap histories behind the cutoff interval
CHUNK_BLOCKS = 2  # seeded blocks of replicates per task; results never depend on it


# ------------------------------------------------------------------------------------------------
# the work shared out: tasks of (a group of sites, a chunk of seeded blocks)

@dataclass(frozen=True)
class _Work:
    """What every task needs, sent to each worker once. ``scenarios`` holds each site's scenario
    (its own costs and rules merged in); ``outcome_probability`` is set in the calibrated mode."""

    resampler: Resampler
    scenarios: tuple[Scenario, ...]
    cutoffs: np.ndarray
    seed: int
    replicates: int
    processes: tuple = ()
    outcome_probability: np.ndarray | None = None
    n_forecasts: int = 1  # [forecasts] priced on the same rows (History.with_forecast), main first
    # ship each replicate's classification counts back in the blocks' extras (int32; the main
    # forecast's, with fixed costs only): RunResult.replicate_counts
    keep_counts: bool = False
    # with a site column and its sensitivity: the inputs each site takes from the scenario, in site
    # order ("costs.<key>" or "operations.<price>", analysis/site_sensitivity.shared_inputs); empty
    # without the sensitivity
    shared_inputs: tuple[tuple[str, ...], ...] = ()
    token: str = field(default_factory=lambda: uuid.uuid4().hex)  # names this run's cached pricers

    @property
    def chunks(self) -> list[tuple[int, int]]:
        """(first block, number of blocks) of each chunk of :data:`CHUNK_BLOCKS` seeded blocks."""
        total = n_blocks(self.replicates)
        return [(b, min(CHUNK_BLOCKS, total - b)) for b in range(0, total, CHUNK_BLOCKS)]


_PRICERS: dict[tuple[str, int, int], object] = {}  # per process: (run token, site, forecast) -> pricer
_MAX_PRICERS = 512


def _pricer(work: _Work, k: int, forecast: int = 0):
    """Site ``k``'s pricer of forecast ``forecast`` (0: the main one), made once per process and
    run (cheap to make, not free)."""
    key = (work.token, k, forecast)
    pricer = _PRICERS.get(key)
    if pricer is None:
        history = work.resampler.history.for_site(k).with_forecast(forecast)
        scenario = work.scenarios[k]
        drawer = CostDrawer(scenario.costs, scenario.cost_ranges(), work.seed)  # costs/prices given as ranges
        if work.outcome_probability is not None:  # outcomes drawn afresh from recalibrated probabilities
            pricer = ReplicatePricer(history, work.cutoffs, scenario.costs, seed=work.seed,
                                     outcome_probability=work.outcome_probability, drawer=drawer)
        elif scenario.operations is not None:  # the rules played day by day
            pricer = OperationsPricer(history, work.resampler.calendar, work.cutoffs, scenario,
                                      work.processes, PriceDraws(scenario.operations, drawer))
        else:
            pricer = SeasonPricer(history, work.cutoffs, scenario.costs, drawer,
                                  keep_counts=work.keep_counts and forecast == 0)
        if len(_PRICERS) >= _MAX_PRICERS:
            _PRICERS.clear()
        _PRICERS[key] = pricer
    return pricer


def _forget(work: _Work) -> None:
    for key in [key for key in _PRICERS if key[0] == work.token]:
        _PRICERS.pop(key, None)
    _DRAWN.forget(work.token)


_MAX_DRAWN_BYTES = 256 * 2**20  # a task keeps its drawn replicate rows for reuse up to this size


class _DrawnBlocks:
    """The seeded blocks of one run drawn in this process, kept for its later tasks (at most
    :data:`_MAX_DRAWN_BYTES`: a task of all chunks keeps no more); a new run replaces them."""

    def __init__(self):
        self.token: str | None = None
        self.blocks: dict[int, np.ndarray] = {}

    def get(self, work: _Work, b: int, draw: Callable[[int], np.ndarray]) -> np.ndarray:
        if self.token != work.token:
            self.forget()
            self.token = work.token
        rows = self.blocks.get(b)
        if rows is None:
            rows = self.blocks[b] = draw(b)
        return rows

    def forget(self, token: str | None = None) -> None:
        if token is None or token == self.token:
            self.token, self.blocks = None, {}


_DRAWN = _DrawnBlocks()


def _join(blocks: Sequence[PricedBlock]) -> PricedBlock:
    """Priced blocks of consecutive replicates as one (replicates first in every array)."""
    if len(blocks) == 1:
        return blocks[0]
    return PricedBlock(model=np.concatenate([b.model for b in blocks]),
                       baselines=np.concatenate([b.baselines for b in blocks]),
                       n_events=np.concatenate([b.n_events for b in blocks]),
                       extras={key: np.concatenate([b.extras[key] for b in blocks]) for key in blocks[0].extras})


def _events_without_action(work: "_Work", index: int) -> np.ndarray:
    """Event occasions of each replicate season on which the probability does not reach cutoff
    ``index`` (so no action is taken), summed over the sites, (n_replicates,) int64.

    The replicates are drawn again from their seeds (a replicate depends only on the seed and its
    number), so they are those the run priced.
    """
    resampler = work.resampler
    history = resampler.history
    missed = []
    for k in range(resampler.n_sites):
        own = history.for_site(k)
        missed.append(own.event & (cutoff_slots(own.p, work.cutoffs) <= index))  # act when slot > index
    out = []
    for rows in resampler.blocks(work.seed, work.replicates):
        out.append(sum(m[resampler.site_rows(rows, k)].sum(axis=1) for k, m in enumerate(missed)))
    return np.concatenate(out).astype(np.int64)


_FORECAST_KEY = "forecast_model_cost_"  # extras of a priced block: a later forecast's model costs


def _forecast_costs(block: PricedBlock, n_forecasts: int) -> tuple[PricedBlock, list[np.ndarray]]:
    """The main forecast's priced block, and the model costs of each later forecast priced on the
    same replicate rows (carried in the block's extras by :func:`simulator.tasks.plan._price_task`)."""
    if n_forecasts == 1:
        return block, []
    costs = [block.extras[f"{_FORECAST_KEY}{j}"] for j in range(1, n_forecasts)]
    extras = {key: value for key, value in block.extras.items() if not key.startswith(_FORECAST_KEY)}
    return dataclasses.replace(block, extras=extras), costs
