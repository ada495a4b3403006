"""The meeting what-if under [operations] (simulator/account/whatif_rules.py, rules/price_terms.py):
the rules' prices typed, the played seasons priced again without playing them again.

References. Every component of a played season's cost is a whole count times a price
(rules/season_cost.py ``price_outcome``), so the season cost is linear in the prices and the mean
season cost at any prices is the sum of the mean counts times the prices (linearity of expectation,
any probability text, e.g. Feller 1968, An Introduction to Probability Theory, vol. 1, IX.2; from
memory). The reference for each figure is an independent second run (``simulator.run.run``) with the
typed prices written into the scenario, on the same seed and replicates: how the crews work never
depends on the prices, and the automatic run length is chosen on the [costs], so its seasons are
the same ones. Expected costs and the cutoff chosen by them must agree exactly (up to floating-point
rounding, to the cent and within 1e-12 relative); the sample's range and share of seasons saving
must equal the same statistics of that run's first seasons, and lie within the sample's error of
all its seasons (binomial bounds on a sample quantile and share, 4 standard errors; common
practice, e.g. Conover 1999, Practical Nonparametric Statistics, section 3.2, from memory).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from simulator.account import whatif_rules
from simulator.account.whatif import whatif_context, whatif_data
from simulator.account.whatif_rules import page_figures, rules_whatif_data
from simulator.inputs.scenario import read_scenario
from simulator.inputs.scenario_types import BASELINES
from simulator.pricing.decision import cheaper
from simulator.rules.operating_rules import RulePrices
from simulator.rules.price_terms import price_counts, price_terms, priced_by_terms
from simulator.run import run

ROOT = Path(__file__).resolve().parents[1]
RULES = ROOT / "scenarios" / "line_marking_rules.toml"
HISTORY = ROOT / "scenarios" / "line_marking_history.csv"
REPLICATES, SAMPLE = 400, 150
# prices a budget holder might try: dearer crews, cheaper standby, a subcontractor twice as dear
TYPED = {"day_rate": 950.0, "standby_rate": 300.0, "spoilage_cost": 650.0, "damages_per_day_late": 4500.0,
         "unfinished_cost": 4000.0}


FIXED_DAY_RATE = {"day_rate = {low = 720, likely = 790, high = 920}": "day_rate = 800"}
"""The demo gives the day rate as a range; these tests fix it at its PERT mean, (720 + 4 x 790 +
920) / 6 = 800, so a run's figures are exactly the page's at the scenario's prices."""


def _scenario_text(**replace: str) -> str:
    text = RULES.read_text(encoding="utf-8")
    replace = {**FIXED_DAY_RATE, **replace}
    for old, new in replace.items():
        assert old in text, old
        text = text.replace(old, new)
    return text


def _priced_text(prices: dict[str, float], base: str | None = None) -> str:
    """The rules scenario with its [operations] prices set to ``prices`` (one key a line)."""
    text = _scenario_text() if base is None else base
    lines = text.splitlines()
    for key, value in prices.items():
        index = next(i for i, line in enumerate(lines) if line.startswith(f"{key} = ") or line.startswith(f"{key} ="))
        lines[index] = f"{key} = {value!r}"
    return "\n".join(lines) + "\n"


def _run(tmp_path: Path, text: str, name: str):
    path = tmp_path / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return run(read_scenario(path), HISTORY, replicates=REPLICATES)


def check_against_run(shown: dict, other, n: int, rel: float = 1e-12) -> None:
    """The what-if's figures ``shown`` against ``other``, a run at the typed prices or costs on the
    same seeds: its cutoff and expected season cost and saving exactly (to the cent); the range and
    the share of seasons that save equal to those of its first ``n`` seasons (within ``rel``), and
    within the sample's error of all its seasons (module docstring)."""
    best = other.decision.recommended_index
    assert shown["cutoff"] == pytest.approx(other.decision.recommended_cutoff, abs=1e-12)
    assert shown["mean"] == pytest.approx(other.table["mean_cost"][best], rel=1e-12, abs=0.005)
    reference = other.baseline_cost[other.reference]
    assert shown["saving"] == pytest.approx(reference.mean() - other.model_cost[:, best].mean(), abs=0.005)
    at, ref = other.model_cost[:n, best], reference[:n]
    assert shown["p05"] == pytest.approx(np.quantile(at, 0.05), rel=rel)
    assert shown["p95"] == pytest.approx(np.quantile(at, 0.95), rel=rel)
    assert shown["prob"] == pytest.approx(cheaper(at, ref).mean(), abs=1e-12)
    everything = other.model_cost[:, best]
    spread = 4 * math.sqrt(0.95 * 0.05 / n)
    assert np.quantile(everything, 0.95 - spread) <= shown["p95"] <= np.quantile(everything, min(1.0, 0.95 + spread))
    full = float(cheaper(everything, reference).mean())
    assert abs(shown["prob"] - full) <= 4 * math.sqrt(max(full * (1 - full), 1e-4) / n)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    folder = tmp_path_factory.mktemp("whatif_rules")
    return _run(folder, _scenario_text(), "base"), _run(folder, _priced_text(TYPED), "typed")


def test_price_terms_are_price_outcomes_sum_on_every_played_season(runs):
    base, _ = runs
    operations = base.operations
    terms = price_terms(operations.rules)
    counts = price_counts(operations.rules, operations.extras)
    rng = np.random.default_rng(3)
    for _ in range(3):
        prices = {key: float(rng.uniform(0, 5000)) for key in TYPED}
        expected = operations.season_cost_at(RulePrices(**prices))
        np.testing.assert_allclose(priced_by_terms(terms, counts, prices), expected, rtol=1e-12, atol=1e-6)


def test_typed_prices_give_the_expected_costs_and_cutoff_of_a_run_at_those_prices(runs, monkeypatch):
    base, other = runs
    monkeypatch.setattr(whatif_rules, "SAMPLE", SAMPLE)
    data = whatif_data(base)
    assert data["kind"] == "rules" and data["sample"]["n"] == SAMPLE
    shown = page_figures(data, TYPED)
    assert shown["best"] == other.decision.recommended_index
    check_against_run(shown, other, SAMPLE)


def test_at_the_scenarios_prices_the_page_shows_the_runs_own_figures(runs):
    base, _ = runs
    shown = page_figures(rules_whatif_data(base))
    assert shown["best"] == base.decision.recommended_index
    assert shown["mean"] == pytest.approx(base.strategies["model"].mean, rel=1e-12)
    assert shown["reference_mean"] == pytest.approx(base.baseline_cost[base.reference].mean(), rel=1e-12)


def test_a_price_given_as_a_range_starts_at_its_pert_mean_with_a_note(tmp_path):
    """The rules demo as shipped: its day rate is a range, drawn per season by the run; the field
    starts at the PERT mean (Malcolm et al. 1959: (low + 4 likely + high) / 6) and the page says
    the run's figures drew it."""
    ranged = run(read_scenario(RULES), HISTORY, replicates=REPLICATES)
    assert whatif_data(ranged)["prices"]["day_rate"] == 800.0
    context = whatif_context(ranged, "send the crews out", "dry day", "day", 2)
    assert "PERT mean" in context["ranges_note"]


def test_a_range_whose_mean_has_no_end_starts_its_field_at_the_cent(tmp_path):
    """{low = 250, likely = 300, high = 400} has the PERT mean (250 + 4 x 300 + 400) / 6 =
    308.333... (Malcolm et al. 1959); the field and the page's starting figures use 308.33, what a
    reader would type, not sixteen digits."""
    ranged = _run(tmp_path, _scenario_text(**{"standby_rate = 400 ": "standby_rate = {low = 250, likely = 300, "
                                                                      "high = 400} "}), "standby_range")
    assert whatif_data(ranged)["prices"]["standby_rate"] == 308.33
    context = whatif_context(ranged, "send the crews out", "dry day", "day", 2)
    assert dict((key, typed) for key, _, _, typed in context["fields"])["standby_rate"] == "308.33"


def test_without_a_standby_rate_standby_follows_the_day_rate_typed(tmp_path):
    base_text = _scenario_text(**{"standby_rate = 400 ": "# no standby rate "})
    base = _run(tmp_path, base_text, "base")
    other = _run(tmp_path, _priced_text({"day_rate": 1100.0}, base_text), "dear")
    data = whatif_data(base)
    assert "standby_rate" not in data["keys"] and data["follows"] == {"standby_rate": "day_rate"}
    shown = page_figures(data, {"day_rate": 1100.0})
    best = other.decision.recommended_index
    assert shown["best"] == best
    assert shown["mean"] == pytest.approx(other.table["mean_cost"][best], rel=1e-12)
    context = whatif_context(base, "send the crews out", "dry day", "day", 2)
    assert [key for key, *_ in context["fields"]] == data["keys"]
    assert "paid the day rate typed" in context["standby_note"]


def test_without_work_or_deadline_their_prices_are_no_fields(tmp_path):
    text = _scenario_text(**{"work = 240 ": "# work = 240 ", "deadline = 2027-09-24": "# deadline",
                             "damages_per_day_late = 3000": "# damages", "unfinished_cost = 2000": "# unfinished",
                             'overtime_weekdays = ["sat"]': "# overtime"})
    result = _run(tmp_path, text, "open")
    data = whatif_data(result)
    assert data["keys"] == ["day_rate", "standby_rate", "spoilage_cost"]
    assert set(data["sample"]["counts"]) == {"days_out", "overtime_days", "standby_days", "spoiled_days_out"}
    context = whatif_context(result, "send the crews out", "dry day", "day", 2)
    assert "no deadline" in context["unused_note"] and "no amount of work" in context["unused_note"]
    lane = result.operations.n_cutoffs + BASELINES.index(result.reference)
    prices = {"day_rate": 700.0, "standby_rate": 100.0, "spoilage_cost": 0.0}
    expected = result.operations.season_cost_at(result.operations.rules.prices.moved(**prices))
    shown = page_figures(data, prices)
    assert shown["reference_mean"] == pytest.approx(expected[:, lane].mean(), rel=1e-12)
    assert shown["mean"] == pytest.approx(expected[:, shown["best"]].mean(), rel=1e-12)


def test_money_charged_by_a_user_process_is_kept_as_played(tmp_path):
    """A user-written simpy process's money (``other_cost``) does not move with the prices: the page
    adds its mean as a constant, and each sampled season's own amount."""

    def machine_hire(env, site):  # the example of simulator/rules/simpy_model.py's Site
        while True:
            report = yield site.day_done
            if report.out:
                site.charge(150.0)

    path = tmp_path / "hire.toml"
    path.write_text(_scenario_text(**{"cutoffs = [0.0, 1.0, 0.01]": "cutoffs = [0.0, 1.0, 0.1]"}), encoding="utf-8")
    result = run(read_scenario(path), HISTORY, replicates=12, processes=[machine_hire])
    data = rules_whatif_data(result)
    assert data["other_mean"] is not None and data["sample"]["other"] is not None
    prices = {"day_rate": 950.0, "unfinished_cost": 0.0}
    expected = result.operations.season_cost_at(result.operations.rules.prices.moved(**prices))
    shown = page_figures(data, prices)
    assert shown["mean"] == pytest.approx(expected[:, shown["best"]].mean(), rel=1e-12)
    k = result.operations.n_cutoffs
    lane = k + BASELINES.index(result.reference)
    assert shown["p95"] == pytest.approx(np.quantile(expected[:, shown["best"]], 0.95), rel=1e-12)
    assert shown["reference_mean"] == pytest.approx(expected[:, lane].mean(), rel=1e-12)
