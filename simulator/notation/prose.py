"""Numbers as people read them: the one formatter of money, shares, rates and cutoffs in prose.

Money read by people is rounded to three significant figures (503,106 EUR is written 503,000 EUR)
because the spread of a season's cost is far wider than its last digits; inputs read back to the
user (:func:`money_exact`) and the files keep full precision. Rounding to a few significant figures
for presentation is common practice (no single source). Everything that writes a number in a
sentence (the account, the report, the terminal, the verdict's reason, the stress notes) comes here.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

__all__ = ["money", "money_exact", "signed_money", "share", "rate", "cutoff_text", "format_value",
           "ranges_text", "money_range", "cutoff_decimals", "score", "SIGNIFICANT"]

SIGNIFICANT = 3  # significant figures of money written for a reader


def _round_significant(value: float, digits: int = SIGNIFICANT) -> int:
    if value == 0:
        return 0
    places = max(0, math.floor(math.log10(abs(value))) + 1 - digits)
    return int(round(value / 10 ** places) * 10 ** places)


def money(value: float | None, currency: str) -> str:
    """Money for a reader, to three significant figures: ``503,000 EUR``; a dash when undefined."""
    if value is None or not math.isfinite(value):
        return "\u2013"
    rounded = _round_significant(float(value))
    return f"{rounded if rounded else 0:,}" + (f" {currency}" if currency else "")


def money_exact(value: float | None, currency: str) -> str:
    """Money to the whole unit (an input read back as the user wrote it): ``2,400 EUR``."""
    if value is None or not math.isfinite(value):
        return "\u2013"
    rounded = round(float(value))
    return f"{rounded if rounded else 0:,} {currency}"


def signed_money(value: float | None, currency: str) -> str:
    """As :func:`money`, with a plus sign on an increase."""
    text = money(value, currency)
    return "+" + text if value is not None and math.isfinite(value) and _round_significant(value) > 0 else text


def share(value: float | None) -> str:
    """A probability as a whole percentage; never rounds a rare loss away (``over 99%``)."""
    if value is None or not math.isfinite(value):
        return "\u2013"
    if 0.995 <= value < 1.0:
        return "over 99%"
    if 0.0 < value < 0.005:
        return "under 1%"
    return f"{value:.0%}"


def rate(value: float | None) -> str:
    """A rate of the classification matrix, one decimal: ``72.7%``."""
    if value is None or not math.isfinite(value):
        return "n/a"
    return f"{value:.1%}"


def cutoff_text(value: float, decimals: int = 2) -> str:
    return f"{value:.{decimals}f}"


def format_value(kind: str, value: Any, currency: str, decimals: int = 2) -> str:
    """Text of one value by kind: ``money``, ``share``, ``rate``, ``count``, ``days`` or ``cutoff``."""
    if kind == "money":
        return money(value, currency)
    if kind == "share":
        return share(value)
    if kind == "rate":
        return rate(value)
    if kind == "count":
        return f"{int(value):,}"
    if kind == "days":
        return "\u2013" if value is None or not math.isfinite(value) else f"{value:,.1f}"
    if kind == "cutoff":
        return cutoff_text(value, decimals)
    raise ValueError(f"unknown kind of value {kind!r}")


def score(value: float | None, decimals: int = 2) -> str:
    """A quality score (Brier score, Brier skill score, ROC area) to ``decimals`` places: ``0.28``;
    a dash when undefined."""
    if value is None or not math.isfinite(value):
        return "\u2013"
    return f"{value:.{decimals}f}"


def ranges_text(ranges: Sequence, decimals: int = 2) -> str:
    """Cutoff ranges: ``0.08 to 0.96`` (several joined by ``and from``); empty when none."""
    return " and from ".join(f"{cutoff_text(lo, decimals)} to {cutoff_text(hi, decimals)}" for lo, hi in ranges)


def money_range(low: float | None, high: float | None, currency: str) -> str:
    """``477,000 to 531,000 EUR``: a range with the currency once."""
    return f"{money(low, '')} to {money(high, currency)}"


def cutoff_decimals(step: float) -> int:
    """Decimals that write every cutoff of a grid with this step exactly (at least two)."""
    return next((d for d in range(2, 7) if abs(round(step, d) - step) < 1e-12), 6)
