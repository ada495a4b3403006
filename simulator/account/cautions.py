"""The cautions every run carries: money is priced, harm to people is not.

One place for their texts, so ``summary.json`` (``cautions``), the report and the terminal say the
same words. A cost-optimal cutoff is a budget figure; where the event is a hazard to people
(storms, flooding, ice, heat) the outputs say so first, and operating rules add their own.
"""

from __future__ import annotations

from ..rules.operations_result import CAUTION as RULES_CAUTION
from ..inputs.scenario import Scenario

__all__ = ["GENERAL", "hazard_caution", "cautions"]

GENERAL = ("A cost-optimal cutoff never overrides safety rules, site risk assessments, local regulations or "
           "licensed professional judgement. The numbers price money only; they do not weigh harm to people.")


def hazard_caution(event: str) -> str:
    """The caution of an event that is a hazard to people (``[event] hazard = true``)."""
    return (f"The event \u201c{event}\u201d is a hazard to people: nobody is sent into danger to save money, "
            "whatever the numbers say; the safety rules of the day decide first.")


def cautions(scenario: Scenario, rules: bool | None = None) -> tuple[str, ...]:
    """Every caution of a run of ``scenario``: the hazard's first (when there is one), then the
    general caution, then the operating rules' (with ``[operations]``, or when ``rules`` says some
    site has them)."""
    out = [hazard_caution(scenario.event.name)] if scenario.event.hazard else []
    out.append(GENERAL)
    if scenario.operations is not None if rules is None else rules:
        out.append(RULES_CAUTION)
    return tuple(out)
