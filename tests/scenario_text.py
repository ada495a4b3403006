"""Scenario text changed as a user would change it, and a portfolio's end checked against a full
run with it (shared by the sensitivity tests)."""

from __future__ import annotations

import pytest

from simulator.pricing.decision import cheaper


def with_value(text: str, section: str, key: str, value: float) -> str:
    """``text`` with the first ``key = ...`` line after the line ``section`` (``"[costs]"``) set to
    ``value``."""
    lines = text.split("\n")
    start = lines.index(section)
    for i in range(start + 1, len(lines)):
        if lines[i].startswith(f"{key} = "):
            lines[i] = f"{key} = {value!r}"
            return "\n".join(lines)
    raise AssertionError(f"{section} {key}")


def check_portfolio_end(end, full, base_cutoffs: dict[str, float]) -> None:
    """A portfolio's end (``PortfolioEnd``) against ``full``, a full site run with that input moved
    on the same seed: the same total mean saving (to the rounding of adding the sites in another
    order) and share of seasons saving, the same number of sites changing cutoff from
    ``base_cutoffs``, and the mean saving the sum of the sites' (each chooses alone: linearity of
    the mean, common practice)."""
    p = full.portfolio
    assert end.mean_saving == pytest.approx(float((p.reference_cost - p.own_cost).mean()), rel=1e-12)
    assert end.prob_saving == float(cheaper(p.own_cost, p.reference_cost).mean())
    assert end.sites_moved == sum(site.decision.recommended_cutoff != base_cutoffs[site.name] for site in full.sites)
    assert end.mean_saving == pytest.approx(sum(site.decision.savings.mean for site in full.sites), rel=1e-12)
