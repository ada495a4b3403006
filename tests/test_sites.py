"""Many sites in one run: the joint replay, per-site results, the portfolio, and bad input.

Histories here are invented: a regional two-state Markov chain of "weather" that every site shares,
and each site's events drawn from it with a little local noise, so the sites' events happen together
far more often than their rates alone would say. Monte Carlo tolerances are 4 standard errors over
replicates (common practice, no source).
"""

from __future__ import annotations

import importlib
import io
import json

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from simulator import InputError, history_from_frame, run, run_history, scenario_from_text
from simulator.cli import app
from simulator.inputs.history_gaps import MISSING_DATE_RULE
from simulator.account.outputs import render_files, summary
from simulator.replay.resample import Resampler, season_calendar


def correlated_sites(seed: int, names=("North", "South"), years: int = 6, start: str = "2016-01-01",
                     share: float = 0.85) -> pd.DataFrame:
    """Daily rows of sites that share a region's weather: a Markov chain of regional events (p01 =
    0.12, p11 = 0.7); each site has the event with probability ``share`` on a regional event day and
    0.04 otherwise. The probability column is a noisy, skilful forecast of each site's event."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range(start, pd.Timestamp(start) + pd.DateOffset(years=years) - pd.Timedelta(days=1))
    n = dates.size
    u = rng.random(n)
    regional = np.zeros(n, dtype=bool)
    for t in range(1, n):
        regional[t] = u[t] < (0.7 if regional[t - 1] else 0.12)
    frames = []
    for name in names:
        event = np.where(regional, rng.random(n) < share, rng.random(n) < 0.04)
        p = np.clip(np.where(event, 0.65, 0.15) + 0.18 * rng.standard_normal(n), 0.0, 1.0)
        frames.append(pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "site": name,
                                    "probability": np.round(p, 2), "outcome": event.astype(int)}))
    return pd.concat(frames).sort_values("date", kind="stable").reset_index(drop=True)


SITES_TOML = """name = "two depots"
[history]
site_column = "site"
[costs]
hit = 300
false_alarm = 1800
miss = 2500
correct_negative = 0
[season]
months = [10, 11, 12, 1, 2, 3]
[simulation]
replicates = 400
seed = 9
block_days = 6
"""


@pytest.fixture(scope="module")
def frame():
    return correlated_sites(20270415)


@pytest.fixture(scope="module")
def scenario():
    return scenario_from_text(SITES_TOML + '[sites."South".costs]\nmiss = 4000\n')


@pytest.fixture(scope="module")
def result(frame, scenario):
    return run_history(scenario, history_from_frame(frame, scenario, label="history.csv"))


# ------------------------------------------------------------------------------------------------
# the joint replay


def test_joint_replay_keeps_events_together_and_an_independent_one_does_not(frame, scenario):
    """Co-occurrence of events at two correlated sites in the replicates matches the history;
    resampling each site on its own seed makes it the product of the rates (independence)."""
    history = history_from_frame(frame, scenario, label="history.csv")
    calendar = season_calendar(history, scenario.season)
    joint = Resampler(history, calendar, mean_block=6.0, window_days=10)
    rows = joint.draw(np.random.default_rng(1), 600)
    north, south = history.for_site(0), history.for_site(1)
    both = north.event[joint.site_rows(rows, 0)] & south.event[joint.site_rows(rows, 1)]
    share = both.mean(axis=1)  # per replicate season
    error = share.std(ddof=1) / np.sqrt(share.size)
    in_history = (north.event[north.evaluated] & south.event[south.evaluated]).mean()
    assert abs(share.mean() - in_history) <= 4 * error + 0.005

    alone = [Resampler(site, calendar, 6.0, 10).draw(np.random.default_rng(s), 600)
             for site, s in ((north, 2), (south, 3))]
    independent = (north.event[alone[0]] & south.event[alone[1]]).mean(axis=1)
    rates = north.event[north.evaluated].mean() * south.event[south.evaluated].mean()
    assert independent.mean() == pytest.approx(rates, abs=4 * independent.std(ddof=1) / np.sqrt(600) + 0.005)
    assert in_history - independent.mean() > 10 * error  # independence loses most of the overlap


def test_a_site_whose_dates_are_all_the_dates_is_replayed_as_it_would_be_alone(frame, scenario):
    history = history_from_frame(frame, scenario, label="history.csv")
    alone = history.for_site(1)
    calendar = season_calendar(history, scenario.season)
    joint = Resampler(history, calendar, 6.0, 10).draw_block(5, 0)
    single = Resampler(alone, calendar, 6.0, 10).draw_block(5, 0)
    np.testing.assert_array_equal(Resampler(history, calendar, 6.0, 10).site_rows(joint, 1), single)


def test_a_missing_date_takes_the_nearest_date_of_the_same_season_and_warns(frame, scenario):
    gap = ["2018-01-10", "2018-01-11", "2018-01-12"]
    short = frame[~((frame["site"] == "South") & frame["date"].isin(gap))]
    history = history_from_frame(short, scenario, label="history.csv")
    assert any('"South" 3 (from 2018-01-10)' in w and MISSING_DATE_RULE in w for w in history.warnings)
    resampler = Resampler(history, season_calendar(history, scenario.season), 6.0, 10)
    joint_dates = np.unique(history.dates[history.evaluated])
    south = history.for_site(1)
    mapped = south.dates[resampler.site_rows(np.arange(joint_dates.size), 1)]
    moved = joint_dates != mapped
    # the 10th is nearest to the 9th, the 12th to the 13th, the 11th lies between: the earlier
    assert [str(d) for d in joint_dates[moved]] == gap
    assert [str(d) for d in mapped[moved]] == ["2018-01-09", "2018-01-09", "2018-01-13"]


def test_a_site_without_a_whole_season_takes_the_same_day_of_the_nearest_season(frame, scenario):
    short = frame[~((frame["site"] == "South") & frame["date"].between("2018-10-01", "2019-03-31"))]
    history = history_from_frame(short, scenario, label="history.csv")
    resampler = Resampler(history, season_calendar(history, scenario.season), 6.0, 10)
    joint_dates = np.unique(history.dates[history.evaluated])
    mapped = history.for_site(1).dates[resampler.site_rows(np.arange(joint_dates.size), 1)]
    at = np.flatnonzero(joint_dates == np.datetime64("2018-11-05"))[0]
    assert str(mapped[at]) == "2017-11-05"  # seasons 2017 and 2019 are equally near: the earlier


# ------------------------------------------------------------------------------------------------
# per-site results and the portfolio


def test_each_site_equals_a_run_of_that_site_alone(frame, scenario, result):
    """Same data, seed and run length: a site's decision and cutoff table are those of a
    single-site run of its rows, with its own costs."""
    for k, name in enumerate(("North", "South")):
        alone_scenario = scenario_from_text(SITES_TOML.replace('site_column = "site"\n', ""))
        alone_scenario = alone_scenario.model_copy(update={"costs": scenario.for_site(name).costs})
        rows = frame[frame["site"] == name].drop(columns="site").reset_index(drop=True)
        alone = run_history(alone_scenario, history_from_frame(rows, alone_scenario, label="history.csv"))
        site = result.sites[k]
        assert site.name == name
        pd.testing.assert_frame_equal(site.table, alone.table, check_exact=True)
        assert site.decision == alone.decision
        np.testing.assert_array_equal(site.model_cost, alone.model_cost[:, alone.decision.recommended_index])
        row = result.portfolio.table.iloc[k]
        assert row["recommended_cutoff"] == alone.decision.recommended_cutoff
        assert row["mean_savings"] == alone.decision.savings.mean


def test_portfolio_totals_add_up_and_own_cutoffs_never_cost_more_on_average(result):
    portfolio = result.portfolio
    np.testing.assert_allclose(portfolio.own_cost, sum(site.model_cost for site in result.sites))
    # the portfolio's common cutoff is the argmin of the mean total over cutoffs, and each site's
    # own cutoff the argmin of its mean: a sum of minima is at most the minimum of the sums
    # (common practice, no source)
    assert result.decision.recommended_cutoff == result.cutoffs[np.argmin(result.model_cost.mean(axis=0))]
    assert portfolio.own_cost.mean() <= portfolio.common_cost.mean()
    s = summary(result)["portfolio"]
    assert s["common_cutoff"] == result.decision.recommended_cutoff
    assert s["own_versus_common"]["mean"] >= 0
    assert [r["site"] for r in s["ranking"]] == [site.name for site in portfolio.ranking]
    # correlated sites: the total varies more than independent sites would make it vary
    assert s["spread"]["sd_total_cost"] > s["spread"]["sd_if_independent"]


def test_forecast_value_is_the_cheaper_fixed_rule_minus_the_forecast(result):
    # Richardson (2000), QJRMS 126: E_climate = min(always protect, never protect); value in money
    # is E_climate - E_forecast
    for site in result.sites:
        never, always = site.baseline_cost["never_act"].mean(), site.baseline_cost["always_act"].mean()
        assert site.forecast_value == pytest.approx(min(never, always) - site.model_cost.mean())


def test_pooled_cutoff_table_counts_are_the_sums_of_the_sites(result):
    for column in ("hits", "false_alarms", "misses", "correct_negatives", "historical_cost"):
        np.testing.assert_allclose(result.table[column], sum(site.table[column] for site in result.sites))


def test_a_site_column_with_one_site_gives_a_portfolio_of_that_site(frame, scenario):
    one = frame[frame["site"] == "North"]
    plain = scenario_from_text(SITES_TOML)
    result = run_history(plain, history_from_frame(one, plain, label="history.csv"), replicates=100)
    (site,) = result.sites
    np.testing.assert_array_equal(result.portfolio.own_cost, site.model_cost)
    np.testing.assert_array_equal(result.model_cost[:, result.decision.recommended_index], site.model_cost)


# ------------------------------------------------------------------------------------------------
# bad input


def test_unknown_site_in_the_overrides_names_it_and_the_closest_site(frame):
    scenario = scenario_from_text(SITES_TOML + '[sites."Sout"]\ncosts = { miss = 4000 }\n', label="s.toml")
    with pytest.raises(InputError) as err:
        history_from_frame(frame, scenario, label="history.csv")
    assert str(err.value) == ('scenario [sites."Sout"]: history.csv has no site of that name (column '
                              '"site"); did you mean "South"?')


def test_a_site_with_too_few_events_is_refused_naming_the_site(frame):
    scenario = scenario_from_text(SITES_TOML)
    rare = frame.copy()
    south = rare["site"] == "South"
    rare.loc[south, "outcome"] = 0
    rare.loc[rare.index[south][[5, 40, 90]], "outcome"] = 1
    with pytest.raises(InputError, match=r'^history.csv site "South": the evaluated period has \d "event" '
                                         r"occasions, fewer than 5; .*or leave the site out$"):
        history_from_frame(rare, scenario, label="history.csv")


def _refusal(frame: pd.DataFrame) -> str:
    """The one-line message that refuses ``frame`` as the two-depot history."""
    with pytest.raises(InputError) as err:
        history_from_frame(frame, scenario_from_text(SITES_TOML), label="history.csv")
    return str(err.value)


def test_a_repeated_date_at_one_site_names_the_rows_and_the_site(frame):
    twice = pd.concat([frame.iloc[:3], frame.iloc[[2]], frame.iloc[3:]]).reset_index(drop=True)
    assert _refusal(twice) == ('history.csv row 5, column "date": 2016-01-02 appears again for site '
                               '"North" (first at row 4); keep one row per site and date')


def test_sites_with_rows_at_different_spacings_are_refused(frame):
    dates = pd.to_datetime(frame["date"])
    weekly_south = frame[(frame["site"] == "North") | (dates.dt.day_of_week == 0)]  # South: Mondays only
    assert _refusal(weekly_south) == ('history.csv: site "North" has a row every day and site "South" '
                                      "every week; give every site forecasts at the same spacing")


def test_sites_on_different_weekdays_are_daily_on_all_of_them(frame):
    # North reports on working days, South every day: the joint calendar is every day
    scenario = scenario_from_text(SITES_TOML)
    dates = pd.to_datetime(frame["date"])
    mixed = frame[(frame["site"] == "South") | (dates.dt.day_of_week < 5)]
    history = history_from_frame(mixed, scenario, label="history.csv")
    assert history.frequency.describe() == "daily"
    assert history.for_site(0).frequency.is_daily


@pytest.mark.parametrize("extra, fragment", [
    ('[sites."South"]\ncost = { miss = 1 }\n', '[sites."South"]: unknown key "cost"; did you mean "costs"?'),
    ('[sites."South".costs]\nmis = 1\n', '[sites."South".costs]: unknown key "mis"; did you mean "miss"?'),
    ('[sites."South"]\noperations = { crews = 2 }\n',
     '[sites."South".operations]: crews_out_on is required and [operations] does not give it'),
])
def test_site_tables_are_checked_with_one_line_messages(extra, fragment):
    with pytest.raises(InputError) as err:
        scenario_from_text(SITES_TOML + extra, label="s.toml")
    assert fragment in str(err.value)


def test_site_tables_without_a_site_column_are_refused():
    text = SITES_TOML.replace('site_column = "site"\n', "") + '[sites."South".costs]\nmiss = 1\n'
    with pytest.raises(InputError, match=r'^s.toml \[sites."South"\]: per-site tables need a site column'):
        scenario_from_text(text, label="s.toml")


def test_calibrated_mode_with_sites_is_refused(frame):
    scenario = scenario_from_text(SITES_TOML + 'mode = "calibrated"\n')
    with pytest.raises(InputError, match='mode: "calibrated" draws each site'):
        run_history(scenario, history_from_frame(frame, scenario))


# ------------------------------------------------------------------------------------------------
# the command line and the files


def test_command_line_writes_sites_csv_and_the_portfolio(tmp_path, frame, monkeypatch):
    report = importlib.import_module("simulator.account.report")
    monkeypatch.setattr(report, "render_report", lambda result, contents: {})
    frame.to_csv(tmp_path / "history.csv", index=False)
    (tmp_path / "s.toml").write_text(SITES_TOML.replace("[history]\n", '[history]\npath = "history.csv"\n'))
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["run", str(tmp_path / "s.toml"), "--out", str(out), "--replicates", "60",
                                      "--workers", "1"])
    assert result.exit_code == 0, result.output
    assert "2 sites" in result.output
    sites = pd.read_csv(out / "sites.csv")
    assert list(sites["site"]) == ["North", "South"]
    assert set(json.loads((out / "summary.json").read_text())["portfolio"]) >= {"total_cost", "ranking"}
    # the terminal lists each site at its own cutoff, as sites.csv has it
    lines = {line.split()[0]: line.split() for line in result.output.splitlines() if line.split()[:1] in
             (["North"], ["South"])}
    for row in sites.itertuples():
        assert lines[row.site][1:3] == [f"{row.recommended_cutoff:.2f}",
                                        f"{row.recommended_cutoff_low:.2f}-{row.recommended_cutoff_high:.2f}"]
    assert "later seasons" not in result.output


def test_command_line_shows_each_sites_checks_and_stress_cases(tmp_path, frame, monkeypatch):
    report = importlib.import_module("simulator.account.report")
    monkeypatch.setattr(report, "render_report", lambda result, contents: {})
    frame.to_csv(tmp_path / "history.csv", index=False)
    text = SITES_TOML.replace("[history]\n", '[history]\npath = "history.csv"\nvalidation_from = 2020-10-01\n')
    (tmp_path / "s.toml").write_text(text + '[[stress]]\nname = "dearer misses"\ncost_multipliers = { miss = 2 }\n')
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["run", str(tmp_path / "s.toml"), "--out", str(out), "--replicates", "60",
                                      "--workers", "1", "--walk-forward"])
    assert result.exit_code == 0, result.output
    sites = pd.read_csv(out / "sites.csv", keep_default_na=False)
    assert "priced on later seasons" in result.output
    for row in sites.itertuples():
        line = next(line for line in result.output.splitlines()
                    if line.startswith(row.site) and f"{row.validation_optimism:,.0f}" in line)
        assert f"{row.validation_chosen_cutoff:.2f}" in line and f"{row.walk_forward_optimism:,.0f}" in line
        assert f"- {row.site}: Keep the cutoff at {row.recommended_cutoff:.2f}" in result.output


def test_the_gritting_example_prices_five_depots_and_warns_of_the_missing_nights():
    from pathlib import Path

    from simulator import read_scenario

    path = Path(__file__).resolve().parents[1] / "scenarios" / "gritting_depots.toml"
    result = run(read_scenario(path), replicates=100)
    # sites in the order of their names, whatever the file's order
    assert [site.name for site in result.sites] == ["Ferrowby Moor", "Gannetholm Harbour", "Pellisford",
                                                    "Scarth Top", "Tarnbeck Lane"]
    assert result.portfolio.table.set_index("site").loc["Tarnbeck Lane", "missing_dates"] == 9
    assert any('"Tarnbeck Lane" 9 (from 2022-01-10)' in w for w in result.warnings)
    # the break-even probabilities the scenario's comment works out by hand (Elkan 2001)
    stars = {site.name: round(site.theoretical_cutoff, 3) for site in result.sites}
    assert stars == {"Gannetholm Harbour": 0.132, "Ferrowby Moor": 0.167, "Pellisford": 0.167,
                     "Scarth Top": 0.091, "Tarnbeck Lane": 0.167}


def test_report_has_a_sites_section_whose_numbers_are_those_of_summary_json(result):
    """The page and summary.json cannot disagree: the section is written from the summary, with the
    report's one formatter (report.money)."""
    from simulator.account.report import render_report
    from simulator.notation.prose import money

    s = summary(result)
    html = render_report(result, s)["report.html"].decode()
    assert '<section id="sites">' in html and 'href="#sites"' in html
    own = s["portfolio"]["total_cost"]["own_cutoffs"]
    assert money(own["mean"], s["currency"]) in html
    first = s["portfolio"]["ranking"][0]
    assert f"<td>{first['site']}</td>" in html
    assert money(first["forecast_value"], s["currency"]) in html


def test_each_site_gets_the_validation_check_and_walk_forward_it_would_get_alone(frame):
    """Same data, seed and run length: a site's honest check (training against validation, and the
    walk-forward) is the one a single-site run of its rows makes."""
    text = SITES_TOML.replace('site_column = "site"\n', 'site_column = "site"\nvalidation_from = "2019-10-01"\n')
    scenario = scenario_from_text(text)
    together = run_history(scenario, history_from_frame(frame, scenario, label="history.csv"),
                           replicates=100, walk_forward=True)
    for k, name in enumerate(("North", "South")):
        alone_scenario = scenario_from_text(text.replace('site_column = "site"\n', ""))
        rows = frame[frame["site"] == name].drop(columns="site").reset_index(drop=True)
        alone = run_history(alone_scenario, history_from_frame(rows, alone_scenario, label="history.csv"),
                            replicates=100, walk_forward=True)
        assert together.sites[k].selection == alone.selection
        row = together.portfolio.table.iloc[k]
        assert row["validation_chosen_cutoff"] == alone.selection.validation.chosen_cutoff
        assert row["walk_forward_optimism"] == alone.selection.walk_forward.optimism


def test_each_site_gets_the_stress_cases_it_would_get_alone(frame, tmp_path):
    """Same data, seed and run length: a site's [[stress]] cases are those a single-site run of its
    rows prices; stress.csv then has a row block per site."""
    cases = '\n[[stress]]\nname = "dearer misses"\ncost_multipliers = { miss = 1.5 }\n' \
            '\n[[stress]]\nname = "rarer ice"\nevent_rate = 0.8\n'
    scenario = scenario_from_text(SITES_TOML + cases)
    together = run_history(scenario, history_from_frame(frame, scenario, label="history.csv"), replicates=100)
    alone_scenario = scenario_from_text(SITES_TOML.replace('site_column = "site"\n', "") + cases)
    for k, name in enumerate(("North", "South")):
        rows = frame[frame["site"] == name].drop(columns="site").reset_index(drop=True)
        alone = run_history(alone_scenario, history_from_frame(rows, alone_scenario, label="history.csv"),
                            replicates=100)
        mine = together.sites[k].stress
        assert [c.name for c in mine] == [c.name for c in alone.stress]
        for a, b in zip(mine, alone.stress):
            for va, vb in zip(a.views, b.views):
                assert va.best_cutoff == vb.best_cutoff
                np.testing.assert_array_equal(va.model_cost_at_base, vb.model_cost_at_base)
    files = render_files(together)
    table = pd.read_csv(io.BytesIO(files["stress.csv"]))
    assert list(table["site"].unique()) == ["North", "South"]
    assert set(summary(together)["portfolio"]["stress"]) == {"North", "South"}
    page = files["report.html"].decode()
    assert "site by site" in page and together.sites[0].stress[0].views[0].headline.split(";")[0] \
        .replace('"', "&#34;") in page
