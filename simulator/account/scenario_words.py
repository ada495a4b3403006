"""The scenario read back in plain words for the report: the season's months and occasion days, and
the ``[operations]`` rules and ``[[stress]]`` cases key by key (money in the currency, codes in words).
"""

from __future__ import annotations

import calendar
from collections.abc import Mapping
from typing import Any

from ..notation.prose import money_exact
from ..inputs.scenario_types import WEEKDAYS

__all__ = ["MONEY_KEYS"]


def _months(months: tuple[int, ...]) -> str:
    names = [calendar.month_name[m] for m in months]
    contiguous = all((b - a) % 12 == 1 for a, b in zip(months, months[1:]))
    if len(months) == 12:
        return "all year"
    if contiguous and len(months) > 2:
        return f"{names[0]} to {names[-1]}"
    return ", ".join(names)


def _weekdays(weekdays: tuple[str, ...]) -> str:
    full = {"mon": "Monday", "tue": "Tuesday", "wed": "Wednesday", "thu": "Thursday", "fri": "Friday",
            "sat": "Saturday", "sun": "Sunday"}
    order = list(full)
    days = sorted(weekdays, key=order.index)
    if len(days) == 7:
        return "every day of the week"
    if len(days) > 2 and order.index(days[-1]) - order.index(days[0]) == len(days) - 1:
        return f"{full[days[0]]} to {full[days[-1]]}"
    return ", ".join(full[w] for w in days)


def _occasion_days(result) -> str:
    """Which days of the season are occasions: its weekdays that the history has rows on (daily
    data), or how often the history has a row; and how many of its holidays the season skips."""
    frequency = result.history.frequency
    if frequency.is_daily:
        days = tuple(w for w in result.scenario.season.weekdays if WEEKDAYS.index(w) in frequency.weekdays)
        text = _weekdays(days)
    else:
        text = {"weekly": "one occasion a week", "monthly": "one occasion a month"}.get(
            frequency.kind, f"one occasion every {frequency.step_days} days")
    skipped = result.calendar.holidays.size
    if skipped:
        text += f", less {skipped} holiday{'s' if skipped > 1 else ''}"
    return text


MONEY_KEYS = frozenset({"hit", "false_alarm", "miss", "correct_negative", "day_rate", "standby_rate",
                        "spoilage_cost", "damages_per_day_late", "unfinished_cost"})
"""Keys of ``[costs]`` and ``[operations]`` whose values are money (every other number is not)."""


def _plain_setting(key: str, value: Any, currency: str, action: str, event: str) -> tuple[str, str]:
    """One scenario setting as a reader says it: (label, value), settings' codes in words."""
    words = {
        "crews_out_on": ("crews go out", {"acting": f"when we {action}",
                                          "not_acting": f"when we do not {action}"}),
        "spoiled_on": ("a day out is spoiled", {"event": f"when \u201c{event}\u201d happens",
                                                "no_event": f"when \u201c{event}\u201d does not happen"}),
        "safety_probability": ("the safety stop reads", {"as_in_file": "the probability as written in the history file",
                                                         "of_event": f"the probability of \u201c{event}\u201d"}),
    }
    if key in words:
        label, choices = words[key]
        return label, choices.get(value, str(value))
    label = key.replace("_", " ")
    if isinstance(value, list | tuple):
        return label, ", ".join(str(v) for v in value) or "none"
    if key in MONEY_KEYS and isinstance(value, int | float):
        return label, money_exact(value, currency)
    if key == "work" and isinstance(value, int | float):
        return label, f"{value:,g} crew-days"
    if key == "event_rate":
        return label, f"{value:g} times as often as in the history"
    if key in ("overtime_multiple",):
        return label, f"{value:g} times the day rate"
    if key == "skill":
        return label, f"{value:.0%} of each probability's distance from the event rate kept"
    if key == "noise":
        return label, f"standard deviation {value:g} on the log-odds scale"
    if key == "block_days":
        return "spells", f"runs of {value:g} days on average"
    if key == "worst_seasons":
        return label, f"only the {value} costliest past seasons"
    if key == "work_lost_when_spoiled":
        return label, f"{value:.0%}"
    return label, str(value)


def _read_back(section, currency: str, action: str, event: str) -> list[tuple[str, str]]:
    """A scenario section's keys as plain (label, value) pairs; money in the currency, factors as such."""
    out = []
    for key, value in section.model_dump(exclude_none=True).items():
        if isinstance(value, Mapping):
            factors = key.endswith("multipliers")
            parts = [(k, v) for k, v in value.items() if v is not None]
            value = ", ".join(f"{k.replace('_', ' ')} \u00d7{v:g}" if factors else
                              " ".join(_plain_setting(k, v, currency, action, event)) for k, v in parts)
            out.append((key.replace("_", " "), value))
            continue
        out.append(_plain_setting(key, value, currency, action, event))
    return out


def _rules_read_back(scenario) -> list[tuple[str, list[tuple[str, str]]]]:
    """The ``[operations]`` rules and every ``[[stress]]`` case, key by key, in plain words."""
    rows = []
    words = (scenario.currency, scenario.decision.action, scenario.event.name)
    rules = getattr(scenario, "operations", None)
    if rules is not None:
        ranges = scenario.cost_ranges() if hasattr(scenario, "cost_ranges") else {}
        rows.append(("Operating rules", [_ranged(label, value, ranges, scenario.currency)
                                         for label, value in _read_back(rules, *words)]))
    for case in getattr(scenario, "stress", None) or ():
        rows.append((f"Stress case \u201c{case.name}\u201d",
                     [(k, v) for k, v in _read_back(case, *words) if k != "name"]))
    return rows


def _ranged(label: str, value: str, ranges: Mapping[str, Any], currency: str) -> tuple[str, str]:
    """A rules' price given as a range (``operations.<price>`` in ``Scenario.cost_ranges()``) read
    back as the range, drawn per season, with its PERT mean; any other setting as it is."""
    r = ranges.get("operations." + label.replace(" ", "_"))
    if r is None or r.high <= r.low:
        return label, value
    return label, (f"{money_exact(r.low, currency)} to {money_exact(r.high, currency)}, most likely "
                   f"{money_exact(r.likely, currency)}; drawn for each simulated season (PERT mean "
                   f"{money_exact(r.mean, currency)})")
