"""Which files a run's result set holds beside the report, in the order they are written.

``outputs`` renders them in this order and the report lists them; neither imports the other for it.
"""

from __future__ import annotations

from ..results import RunResult

__all__ = ["table_names"]


def table_names(result: RunResult) -> list[str]:
    """The files written beside the report (and its figures), in the order they are written."""
    names = ["summary.json", "cutoffs.csv", "value_curve.csv", "reliability.csv"]
    if result.stress is not None or (result.portfolio is not None
                                     and any(site.stress is not None for site in result.portfolio.sites)):
        names.append("stress.csv")
    if result.calibration is not None:
        names.append("calibration.csv")
    if result.selection is not None:
        names.append("selection.csv")
    if result.portfolio is not None:
        names.append("sites.csv")
    if result.comparison is not None:
        names.append("forecasts.csv")
    if result.sensitivity is not None and (result.sensitivity.costs or getattr(result.sensitivity, "sites", ())):
        names.append("sensitivity.csv")  # with a site column, each site's own rows even when the portfolio has none
    names.append("datapackage.json")  # describes the CSV files above, so it comes after them
    return names
