"""The run's tasks planned, shared out on an executor, and their results put together.

:func:`_plan` cuts a run into tasks of (a group of sites, a chunk of seeded blocks);
:func:`_price_task` prices one; :func:`_price_all` runs them all on the executor that
:func:`_executor` chooses and puts their season costs together in block order, so the results are
the same bytes whatever runs them.
"""

from __future__ import annotations

import dataclasses
import threading
from collections.abc import Callable, Iterator
from concurrent.futures import Future
from contextlib import contextmanager
from typing import Any

import numpy as np

from ..execution.choose import open_executor
from ..execution.executor import Executor, InlineExecutor
from ..pricing.costs import PricedBlock, SeasonPricer
from ..pricing.slot_costs import Shared
from ..replay.resample import BLOCK
from ..results import SiteResult
from .sites import SUM_GROUP, _added_parts, _site_result, _Totals
from .work import _FORECAST_KEY, _MAX_DRAWN_BYTES, _DRAWN, Progress, _join, _pricer, _Work

INLINE_BELOW = 20_000  # site-replicate seasons (x10 with operating rules) not worth sharing out
MAX_GROUP = 16  # sites priced together on the same draws in one task
TASKS_PER_WORKER = 4  # aim for at least this many tasks per worker, for balance


def _price_task(work: _Work, first_site: int, last_site: int, chunk: int | None) -> list[tuple]:
    """Season costs of sites ``first_site..last_site - 1``: on the replicates of one chunk, or of
    every chunk when ``chunk`` is None.

    Each seeded block is drawn once and priced for every site of the task (a site's replicate rows
    are the joint rows mapped to its own, ``Resampler.site_rows``). A chunk gives
    ``("chunk", site, chunk, [PricedBlock, ...])`` per site, one block a seeded block, joined once
    with the other chunks' by :func:`_price_all`. All chunks (many sites only) give each site's
    results made here, ``("site", site, SiteResult)``, and its season costs for the portfolio:
    summed here for every whole group of :data:`SUM_GROUP` sites the task holds,
    ``("group", group, model, baselines, columns)``, else ``("costs", site, model, baselines,
    columns)`` (``columns``: the site's columns for the portfolio's sensitivity, or None). So the
    per-site work is shared out too, and little more than reduced results travels back.
    """
    chunks = work.chunks if chunk is None else [work.chunks[chunk]]
    blocks = [b for first, count in chunks for b in range(first, first + count)]
    sites = range(first_site, last_site)

    def drawn(b: int) -> np.ndarray:
        return work.resampler.draw_block(work.seed, b)[: min(BLOCK, work.replicates - b * BLOCK)]

    size = len(blocks) * BLOCK * work.resampler.n_occasions * 8
    rows = None
    if len(sites) > 1 and size <= _MAX_DRAWN_BYTES:
        # every task of a run with many sites draws every block: a process draws each once
        rows = [_DRAWN.get(work, b, drawn) if chunk is None else drawn(b) for b in blocks]
    out: list[tuple] = []
    group: list = [None, None]  # the whole group being summed: number, sums of the parts
    for k in sites:
        pricer = _pricer(work, k)
        others = [(j, _pricer(work, k, j)) for j in range(1, work.n_forecasts)]
        priced = []
        for i, b in enumerate(blocks):
            own = work.resampler.site_rows(drawn(b) if rows is None else rows[i], k)
            block = pricer(own, b)  # the block's number seeds its drawn outcomes, costs and prices
            if others:  # every later forecast on the same rows: common random numbers
                shared = pricer.share(own, b, block.n_events) if isinstance(pricer, SeasonPricer) else None
                block = dataclasses.replace(block, extras={
                    **block.extras, **{f"{_FORECAST_KEY}{j}": _later_forecast(other, own, b, shared)
                                       for j, other in others}})
            priced.append(block)
        if chunk is not None:  # joined once, with the other chunks (a join copies every array)
            out.append(("chunk", k, chunk, priced))
            continue
        block = _join(priced)
        # without its rows, which the caller holds already (a site's rows outweigh its results),
        # nor its columns for the portfolio's sensitivity, which are added up like its costs
        site = _site_result(work, k, block)
        out.append(("site", k, dataclasses.replace(site, history=None, portfolio_columns=None)))
        parts = (block.model, block.baselines, site.portfolio_columns)
        g = k // SUM_GROUP
        whole = first_site <= g * SUM_GROUP and min((g + 1) * SUM_GROUP, len(work.scenarios)) <= last_site
        if not whole:
            out.append(("costs", k, *parts))
            continue
        group = [g, _added_parts(group[1] if group[0] == g else None, parts)]
        if k + 1 == min((g + 1) * SUM_GROUP, len(work.scenarios)):
            out.append(("group", group[0], *group[1]))
    return out


def _later_forecast(pricer, rows: np.ndarray, block: int, shared: Shared | None) -> np.ndarray:
    """A later forecast's season costs at every cutoff on the rows (of seeded block ``block``) the
    main forecast was priced on, with the same drawn costs or prices: the baselines' costs are the
    main's (they do not depend on the forecast), and so are the rows' outcomes priced (``shared``,
    from the main forecast's pricer; None where the counts are priced)."""
    if isinstance(pricer, SeasonPricer):
        return pricer.model_cost(rows, block, shared)
    return pricer(rows, block).model  # the operating rules: every lane played again


@contextmanager
def _executor(work: _Work, workers: int | None, cluster, walk_forward: bool = False) -> Iterator[Executor]:
    """Where the run's tasks go (:func:`simulator.execution.choose.open_executor`): this process for work
    too small to be worth starting processes for (a walk-forward of many sites is not), or with
    simpy processes of the user's own and no cluster."""
    operations = any(s.operations is not None for s in work.scenarios)
    size = len(work.scenarios) * work.replicates * (10 if operations else 1)
    small = size < INLINE_BELOW and not (walk_forward and len(work.scenarios) > 1)
    with open_executor(workers, cluster, inline=small or (bool(work.processes) and cluster is None)) as executor:
        yield executor


def _alongside(executor: Executor, fn: Callable, *args) -> Callable[[], Any]:
    """``fn(*args)``, made in a thread of this process while workers elsewhere price (this process
    mostly waits on them meanwhile), or when asked for when the pricing runs in this process. Returns
    the function that gives the result."""
    if isinstance(executor, InlineExecutor):
        return lambda: fn(*args)
    future: Future = Future()

    def make() -> None:
        try:
            future.set_result(fn(*args))
        except BaseException as exc:  # noqa: BLE001 - handed to whoever asks for the result
            future.set_exception(exc)

    # a daemon thread: a run stopped meanwhile (Ctrl-C) ends at once rather than after the tables
    threading.Thread(target=make, name="gonogo-tables", daemon=True).start()
    return future.result


def _price_all(work: _Work, executor: Executor, block_done: Callable[[int, PricedBlock], None] | None,
               sites: tuple[dict[int, SiteResult], _Totals] | None, progress: Progress | None) -> None:
    """Run every task. One site: its season costs, in replicate order, go to ``block_done`` once
    all its chunks are in. Many sites: each site's results go into ``sites`` (results by site, and
    the portfolio's totals), made by the task that priced all its replicates, or made here from its
    chunks when there are too few sites to keep every worker busy."""
    n_sites = len(work.scenarios)
    chunks = work.chunks
    waiting: dict[int, dict[int, list[PricedBlock]]] = {k: {} for k in range(n_sites)}
    total, done = n_sites * work.replicates, 0
    step = "replicate seasons" if n_sites == 1 else f"replicate seasons x {n_sites} sites"
    tasks = _plan(n_sites, len(chunks), executor.workers, many=sites is not None)
    for _, results in executor.map_unordered(_price_task, work, tasks):
        for item in results:
            kind, k = item[0], item[1]
            if kind == "site":
                sites[0][k] = dataclasses.replace(item[2], history=work.resampler.history.for_site(k))
                done += work.replicates
            elif kind == "costs":
                sites[1].add_site(k, *item[2:])
            elif kind == "group":
                sites[1].add_group(k, *item[2:])
            else:
                waiting[k][item[2]] = item[3]
                done += sum(block.model.shape[0] for block in item[3])
                if len(waiting[k]) < len(chunks):
                    continue
                parts = waiting.pop(k)
                block = _join([block for c in range(len(chunks)) for block in parts[c]])
                if sites is None:
                    block_done(k, block)
                else:
                    site = _site_result(work, k, block)
                    sites[0][k] = dataclasses.replace(site, portfolio_columns=None)
                    sites[1].add_site(k, block.model, block.baselines, site.portfolio_columns)
        if progress is not None:
            progress(step, done, total)


def _plan(n_sites: int, n_chunks: int, workers: int, many: bool) -> list[tuple[int, int, int | None]]:
    """The tasks: (first site, site after the last, chunk or None for all chunks).

    It changes speed, never results. One site, or fewer sites than twice the workers: tasks by chunk
    of blocks, for groups of sites as large as :data:`MAX_GROUP` allows while leaving
    :data:`TASKS_PER_WORKER` tasks per worker. Otherwise each task prices all the replicates of one
    group of :data:`SUM_GROUP` sites, or of part of one when there would be too few tasks; the groups
    left over after the last round in which every worker takes a whole group are cut in one part per
    worker, so that no worker waits long for the others at the end.
    """
    if not many or (workers > 1 and n_sites < 2 * workers):
        size = max(1, min(MAX_GROUP, (n_sites * n_chunks) // (TASKS_PER_WORKER * max(1, workers))))
        return [(a, min(a + size, n_sites), c) for a in range(0, n_sites, size) for c in range(n_chunks)]
    groups = [(a, min(a + SUM_GROUP, n_sites)) for a in range(0, n_sites, SUM_GROUP)]
    parts = 1 if workers == 1 else -(-TASKS_PER_WORKER * workers // len(groups))
    left_over = len(groups) % workers if parts == 1 else 0
    tasks = []
    for i, (a, b) in enumerate(groups):
        size = max(1, -(-(b - a) // (workers if i >= len(groups) - left_over else parts)))
        tasks += [(first, min(first + size, b), None) for first in range(a, b, size)]
    return tasks
