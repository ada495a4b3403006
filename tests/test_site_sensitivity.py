"""Which cost estimate matters with a site column: the portfolio's and each site's own.

References, none of them a value of this project's own:

- A replicate's classification counts do not depend on the costs, and a season's cost is the sum
  over the four cells of count x cost (linearity; common practice, no single source). So the
  portfolio's ends, priced from each site's counts, must equal a full run with the scenario's cost
  moved on the same seed and run length: the same cutoff at every site, the same total saving (to
  the rounding of adding the sites in another order) and the same share of seasons saving.
- Each site chooses its own cutoff alone, so the portfolio's mean saving is the sum of the sites'
  (linearity of the mean; common practice).
- Switching values (the value of an input at which the preferred option changes): common practice
  in decision analysis (Briggs, Claxton and Sculpher 2006, Decision Modelling for Health Economic
  Evaluation, chapter 4; from memory, check); their defining property is checked with full runs.

Histories: the invented correlated sites of tests/test_sites.py, and the real daily Seattle weather
shipped by the vega-datasets package with an honest logistic forecast (tests/realdata.py), each
year a site of its own.
"""

from __future__ import annotations

import io
import json

import pandas as pd
import pytest

from realdata import seattle_rain
from scenario_text import check_portfolio_end, with_value
from simulator import history_from_frame, run_history, scenario_from_text
from simulator.account.outputs import render_files
from simulator.analysis.sensitivity import NOTES, VARY
from test_sites import SITES_TOML, correlated_sites

JUST = 2e-6  # "just past" / "just short": this share of the span searched, wider than the bisection's width
SOUTH_MISS = '[sites."South".costs]\nmiss = 4000\n'


@pytest.fixture(scope="module")
def frame():
    return correlated_sites(20270415)


def _run(frame, text: str, replicates: int | None = None):
    scenario = scenario_from_text(text, label="scenario.toml")
    return scenario, run_history(scenario, history_from_frame(frame, scenario, label="history.csv"),
                                 replicates=replicates)


def _moved(text: str, key: str, value: float) -> str:
    """The text with one cost of [costs] set to ``value``."""
    return with_value(text, "[costs]", key, value)


@pytest.fixture(scope="module", params=["mean", "shortfall10"])
def sites(frame, request):
    text = SITES_TOML + f'[decision]\nobjective = "{request.param}"\n' + SOUTH_MISS
    return (text, *_run(frame, text))


def test_the_portfolios_ends_equal_a_full_site_run_with_that_cost_moved(frame, sites):
    text, scenario, result = sites
    s = result.sensitivity
    assert s.note is None and len(s.costs) == 4
    base_cutoffs = {site.name: site.decision.recommended_cutoff for site in result.sites}
    for entry in s.costs:
        key = entry.key.removeprefix("costs.")
        # South gives its own miss cost: moving the scenario's moves North's only
        assert entry.sharing == (1 if key == "miss" else 2)
        assert (entry.low.value, entry.high.value) == pytest.approx(
            sorted([entry.base * (1 - VARY), entry.base * (1 + VARY)]))
        for end in (entry.low, entry.high):
            _, full = _run(frame, _moved(text, key, end.value))
            check_portfolio_end(end, full, base_cutoffs)
    p = result.portfolio
    assert s.saving == pytest.approx(float((p.reference_cost - p.own_cost).mean()), rel=1e-12)


def test_each_sites_own_rows_equal_a_run_of_that_site_alone(frame, sites):
    text, scenario, result = sites
    for name in ("North", "South"):
        alone_text = text.replace('site_column = "site"\n', "").replace(SOUTH_MISS, "")
        if name == "South":
            alone_text = _moved(alone_text, "miss", 4000)
        rows = frame[frame["site"] == name].drop(columns="site").reset_index(drop=True)
        _, alone = _run(rows, alone_text)
        own = dict(result.sensitivity.sites)[name]
        assert own == alone.sensitivity  # every end, switching value and span, the same floats
        assert result.portfolio.site(name).sensitivity == alone.sensitivity


def test_a_scenario_cost_just_past_its_switching_value_changes_the_portfolios_verdict(frame, sites):
    text, scenario, result = sites
    found = [(entry, side, getattr(entry.verdict_switch, side)) for entry in result.sensitivity.costs
             if entry.verdict_switch is not None for side in ("down", "up")
             if getattr(entry.verdict_switch, side) is not None]
    assert found, "expected a switching value of the portfolio's verdict within the span searched"
    for entry, side, value in found:
        step = JUST * (entry.search[1] - entry.search[0]) * (1 if side == "up" else -1)
        verdict = lambda v: _run(frame, _moved(text, entry.key.removeprefix("costs."), v),  # noqa: E731
                                 replicates=20)[1].verdict.use_forecast
        assert verdict(value + step) != result.verdict.use_forecast, (entry.key, side, value)
        assert verdict(value - step) == result.verdict.use_forecast, (entry.key, side, value)


def test_the_first_sites_switch_is_the_nearest_of_the_sharing_sites_own(sites):
    _, _, result = sites
    own = dict(result.sensitivity.sites)
    for entry in result.sensitivity.costs:
        first = entry.first_site_up
        if first is None:
            continue
        site = next(c for c in own[first.site].costs if c.key == entry.key)
        values = [v for switch in (site.verdict_switch, site.band_switch) if switch is not None
                  for v in [switch.up] if v is not None]
        assert first.value == min(values)
        assert entry.key != "costs.miss" or first.site == "North"  # South keeps its own miss cost


# ---- real data: each year of the Seattle series a site ------------------------------------------

RAIN = ('name = "rain years"\n[history]\nsite_column = "site"\n[costs]\nhit = 300\nfalse_alarm = 300\n'
        'miss = 1000\n[simulation]\nreplicates = 300\nblock_days = 3\nreference = "never_act"\n')


@pytest.fixture(scope="module")
def rain_years() -> pd.DataFrame:
    """Each year of the real series as a site of its own, laid on the same dates (2015): three sites
    with a row on every date, so each site's replicates are those of a run of it alone."""
    frame = seattle_rain()
    dates = pd.to_datetime(frame["date"])
    return frame.assign(site=dates.dt.year.astype(str),
                        date=dates.map(lambda d: d.replace(year=2015)).dt.strftime("%Y-%m-%d"))


def test_on_real_rain_each_year_as_a_site_has_the_sensitivity_of_a_run_of_it_alone(rain_years):
    text = RAIN + '[sites."2014".costs]\nfalse_alarm = {low = 150, likely = 250, high = 400}\n'
    _, result = _run(rain_years, text)
    for name in ("2013", "2014", "2015"):
        alone_text = text.replace('site_column = "site"\n', "").split('[sites."2014"')[0]
        if name == "2014":
            alone_text = alone_text.replace("false_alarm = 300", "false_alarm = {low = 150, likely = 250, high = 400}")
        rows = rain_years[rain_years["site"] == name].drop(columns="site")
        _, alone = _run(rows, alone_text)
        assert dict(result.sensitivity.sites)[name] == alone.sensitivity, name
    by_key = {entry.key: entry for entry in result.sensitivity.costs}
    assert by_key["costs.false_alarm"].sharing == 2  # 2014 gives its own, as a range
    own_2014 = dict(result.sensitivity.sites)["2014"]
    assert next(c for c in own_2014.costs if c.key == "costs.false_alarm").varied == "range"
    # each site's past is one season: no verdict to switch, for the sites or the portfolio
    assert all(c.verdict_switch is None for c in result.sensitivity.costs)


# ---- the files ----------------------------------------------------------------------------------

def test_summary_csv_report_and_account_carry_the_portfolio_and_each_site(frame):
    _, result = _run(frame, SITES_TOML + SOUTH_MISS)
    files = render_files(result)
    block = json.loads(files["summary.json"])["sensitivity"]
    assert block["scope"] == "portfolio" and set(block["sites"]) == {"North", "South"}
    first = block["costs"][0]
    assert set(first) == {"key", "base", "varied", "sharing", "low", "high", "saving_change", "switching", "search"}
    assert set(first["low"]) == {"value", "mean_saving", "prob_saving", "sites_moved"}
    assert set(first["switching"]) == {"verdict", "first_site"}
    assert block["closest_sites"] and block["closest_sites"][0]["site"] in ("North", "South")
    table = pd.read_csv(io.BytesIO(files["sensitivity.csv"]), keep_default_na=False)
    assert table.columns[0] == "site"
    assert list(table["site"]) == [""] * 4 + ["North"] * 4 + ["South"] * 4
    assert table["cost_key"].iloc[0] == first["key"]
    described = json.loads(files["datapackage.json"])
    fields = next(r for r in described["resources"] if r["path"] == "sensitivity.csv")["schema"]["fields"]
    assert all(f["description"] != f["name"].replace("_", " ") for f in fields)
    account = json.loads(files["summary.json"])["account"]
    said = next(f for f in account if f["key"] == "sensitivity")["sentence"]
    assert said.startswith("For the portfolio, the ") and "matters most" in said
    page = files["report.html"].decode()
    assert "Sites whose advice is closest to switching" in page and "figures/tornado.png" in files


def test_sites_with_rules_beside_sites_without_keep_a_note(frame):
    # South plays its seasons under [operations], North is priced by [costs]: no common inputs to move
    text = SITES_TOML + ('[season]\n' if "[season]" not in SITES_TOML else "")
    text += ('[sites."South".operations]\ncrews_out_on = "acting"\nspoiled_on = "no_event"\n'
             "day_rate = 900\nwork = 60\n")
    _, result = _run(frame, text, replicates=40)
    assert result.sensitivity.costs == () and result.sensitivity.note == NOTES["mixed"]
    assert all(site.sensitivity is None for site in result.sites)


def test_a_hostile_site_name_is_plain_text_in_the_report_and_the_files(frame):
    # a site's name is untrusted text: escaped in the page (jinja2's autoescape), kept as written in the files
    name = '<img src=x onerror="alert(1)">'
    hostile = frame.assign(site=frame["site"].replace({"North": name}))
    _, result = _run(hostile, SITES_TOML + SOUTH_MISS, replicates=100)
    files = render_files(result)
    page = files["report.html"].decode()
    assert name not in page and "&lt;img src=x" in page
    table = pd.read_csv(io.BytesIO(files["sensitivity.csv"]), keep_default_na=False)
    assert name in set(table["site"])
