"""Which of the operating rules' prices matters with a site column: the portfolio's and each site's own.

References, none of them a value of this project's own:

- How the crews work under the rules never depends on a price, and every season cost component is
  a day count times a price (common practice, no single source; the rules are stated in
  ``simulator/rules/operating_rules.py``). So the portfolio's ends, the sites' played seasons priced
  again at one moved price, must give what a full site run with that price moved in the scenario's
  ``[operations]`` gives on the same seed: the same cutoff at every site, the same total saving (to
  the rounding of adding the sites in another order) and the same share of seasons saving.
- Each site chooses its own cutoff alone, so the portfolio's mean saving is the sum of the sites'
  (linearity of the mean; common practice, no single source).
- A site with a row on every date is replayed as it would be alone (tests/test_sites.py), so its
  own table is exactly that of a run of its history alone under the rules
  (:func:`simulator.analysis.rules_sensitivity.of_operations_run`, checked against full runs in
  tests/test_rules_sensitivity.py).

The history is invented: the rules demo's (Ferrowby Stripe Works at Gannetholm,
``scenarios/line_marking_rules.toml``), two depots on the same dates acting on the supplier's
forecast and on its premium forecast.
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import pandas as pd
import pytest

from scenario_text import check_portfolio_end, with_value
from simulator import history_from_frame, run_history, scenario_from_text
from simulator.account.outputs import render_files
from simulator.analysis.sensitivity import VARY
from simulator.analysis.site_prices import NO_VERDICT

RULES = Path(__file__).resolve().parent.parent / "scenarios" / "line_marking_rules.toml"
SOUTH_SPOILAGE = '[sites."South".operations]\nspoilage_cost = 600\n'


def _text() -> str:
    """The rules demo with a site column: its day rate fixed at the range's PERT mean (so a full
    run at a moved price is the exact reference), a fixed run length (as a site run and a run of
    one site alone then draw the same replicates), a coarser grid and fewer seasons (fast)."""
    text = RULES.read_text()
    text = text.replace('path = "line_marking_history.csv"', 'site_column = "site"\n#')
    text = text.replace('validation_from = "2025-01-01"\n', "")
    text = text.replace("day_rate = {low = 720, likely = 790, high = 920}", "day_rate = 800")
    text = text.replace("cutoffs = [0.0, 1.0, 0.01]", "cutoffs = [0.0, 1.0, 0.05]")
    text = text.replace("replicates = 2000", "replicates = 120").replace('block_days = "auto"', "block_days = 7")
    return text


def _moved(text: str, key: str, value: float) -> str:
    """The text with one price of the scenario's [operations] set to ``value``."""
    return with_value(text, "[operations]", key, value)


@pytest.fixture(scope="module")
def frame() -> pd.DataFrame:
    history = pd.read_csv(RULES.parent / "line_marking_history.csv")
    north = history[["date", "rain_probability", "rain"]].assign(site="North")
    south = history[["date", "premium_rain_probability", "rain"]].rename(
        columns={"premium_rain_probability": "rain_probability"}).assign(site="South")
    return pd.concat([north, south], ignore_index=True)


def _run(frame: pd.DataFrame, text: str):
    scenario = scenario_from_text(text, label="scenario.toml")
    return run_history(scenario, history_from_frame(frame, scenario, label="history.csv"))


@pytest.fixture(scope="module")
def sites(frame):
    text = _text() + SOUTH_SPOILAGE
    return text, _run(frame, text)


def test_each_sites_own_rows_equal_a_run_of_that_site_alone_under_the_rules(frame, sites):
    text, result = sites
    for name in ("North", "South"):
        alone_text = text.replace('site_column = "site"\n', "").replace(SOUTH_SPOILAGE, "")
        if name == "South":
            alone_text = _moved(alone_text, "spoilage_cost", 600)
        rows = frame[frame["site"] == name].drop(columns="site").reset_index(drop=True)
        alone = _run(rows, alone_text)
        own = dict(result.sensitivity.sites)[name]
        assert own.moved == "operations" and own.costs
        assert own == alone.sensitivity  # every end, switching value and span, the same floats
        assert result.portfolio.site(name).sensitivity == alone.sensitivity


def test_the_portfolios_ends_equal_a_full_site_run_with_that_price_moved(frame, sites):
    text, result = sites
    s = result.sensitivity
    assert s.note is None and s.moved == "operations"
    keys = {entry.key for entry in s.costs}
    # the demo's prices that play a part; the standby rate is given, so the day rate moves alone
    assert keys == {"operations.day_rate", "operations.standby_rate", "operations.spoilage_cost",
                    "operations.damages_per_day_late", "operations.unfinished_cost"}
    base_cutoffs = {site.name: site.decision.recommended_cutoff for site in result.sites}
    for entry in s.costs:
        key = entry.key.removeprefix("operations.")
        # South gives its own spoilage cost: moving the scenario's moves North's only
        assert entry.sharing == (1 if key == "spoilage_cost" else 2)
        assert (entry.low.value, entry.high.value) == pytest.approx((entry.base * (1 - VARY), entry.base * (1 + VARY)))
        assert entry.verdict_switch is None  # left out under the rules, and the remark says so
        for end in (entry.low, entry.high):
            full = _run(frame, _moved(text, key, end.value))
            check_portfolio_end(end, full, base_cutoffs)
    p = result.portfolio
    assert s.saving == pytest.approx(float((p.reference_cost - p.own_cost).mean()), rel=1e-12)
    assert NO_VERDICT in s.remark


def test_summary_csv_report_and_account_name_the_prices_for_the_portfolio_and_each_site(sites):
    _, result = sites
    files = render_files(result)
    block = json.loads(files["summary.json"])["sensitivity"]
    assert block["scope"] == "portfolio" and set(block["sites"]) == {"North", "South"}
    assert block["remark"].startswith(NO_VERDICT) and "rules' prices" in block["basis"]
    assert all(c["key"].startswith("operations.") for c in block["costs"])
    assert all(c["switching"]["verdict"] is None for c in block["costs"])
    table = pd.read_csv(io.BytesIO(files["sensitivity.csv"]), keep_default_na=False)
    assert list(table["site"]) == [""] * 5 + ["North"] * 5 + ["South"] * 5
    units = dict(zip(table["cost_key"][:5], table["value_unit"][:5]))
    assert units["operations.day_rate"] == "EUR per crew per working day"
    assert units["operations.damages_per_day_late"] == "EUR per calendar day late"
    account = json.loads(files["summary.json"])["account"]
    said = next(f for f in account if f["key"] == "sensitivity")["sentence"]
    assert said.startswith("For the portfolio, the ") and " per " in said
    page = files["report.html"].decode()
    assert "Which price of the rules matters" in page and "Day rate" in page and "figures/tornado.png" in files
    assert "verdict is not looked for at other prices" in page  # the remark, escaped as the page writes it



def test_when_every_site_gives_its_own_prices_only_the_sites_own_tables_remain(frame):
    own = "day_rate = 800\nstandby_rate = 400\nspoilage_cost = 700\ndamages_per_day_late = 3000\nunfinished_cost = 2000\n"
    text = _text().replace("replicates = 120", "replicates = 40") + "".join(
        f'[sites."{name}".operations]\n{own}' for name in ("North", "South"))
    result = _run(frame, text)
    s = result.sensitivity
    assert s.costs == () and s.note is None and "Left out, as every site gives its own" in s.remark
    assert [name for name, _ in s.sites] == ["North", "South"] and all(site.costs for _, site in s.sites)
    files = render_files(result)
    table = pd.read_csv(io.BytesIO(files["sensitivity.csv"]), keep_default_na=False)
    assert set(table["site"]) == {"North", "South"}  # each site's own rows, no portfolio's
