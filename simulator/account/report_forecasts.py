"""The report's section on several forecasts: which to use, what switching saves, each one's
scores and value curve (issue 13). Only with two or more ``[forecasts]``.

The words are the account's (:mod:`simulator.account.forecast_choice`): the choice itself is in
the recommendation, and the section says the rest once, beside the table and the chart.
"""

from __future__ import annotations

from collections.abc import Mapping
from functools import partial
from typing import Any

import numpy as np

from ..notation.prose import cutoff_decimals, cutoff_text
from .figure_style import Words
from .quality_figures import forecasts_value_chart
from .findings import account
from .forecast_choice import SECTION_KEYS, forecast_rows

__all__ = ["forecasts_section"]


def forecasts_section(result, summary: Mapping[str, Any], words: Words) -> tuple[dict[str, Any] | None, dict]:
    """The section's display values and its chart's drawer (``{"forecasts_value": ...}``), or
    ``(None, {})`` for a run with fewer than two forecasts."""
    comparison = getattr(result, "comparison", None)
    if comparison is None or len(summary.get("forecasts") or {}) < 2:
        return None, {}
    decimals = cutoff_decimals(summary["scenario"]["cutoffs"][2])
    told = account(summary)
    sentences = [f.sentence for f in told.findings if f.key in SECTION_KEYS and f.sentence]
    ratios = comparison.forecasts[0].value_curve["cost_loss_ratio"].to_numpy()
    curves = [(f.name, f.value_curve["potential_value"].to_numpy()) for f in comparison.forecasts]
    ratio = summary.get("theoretical_cutoff")
    ratio = float("nan") if ratio is None else float(ratio)
    draw = {"forecasts_value": partial(forecasts_value_chart, ratios, curves, ratio, words)}
    section = {"rows": forecast_rows(summary, lambda v: cutoff_text(v, decimals)),
               "sentences": sentences, "priced": any("price" in e for e in summary["forecasts"].values()),
               "ratio": None if not np.isfinite(ratio) else cutoff_text(ratio, decimals),
               "operations": summary.get("operations") is not None}
    return section, draw
