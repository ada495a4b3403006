"""From a spreadsheet export to a first answer: ``gonogo init``, then ``check`` and ``run``.

Each export is written here the way an office suite or a supplier's portal writes it (xlsx,
semicolon with decimal comma, Latin-1/cp1252, day-first, month-first, ambiguous, timestamps with
changing offsets). ``init`` writes the starter scenario, the test fills in the four costs, and the
counts of ``run``'s cutoffs.csv at a few cutoffs are compared with counts computed here from the
file as pandas reads it with the options given explicitly: the reference is pandas' own reader
(a general-purpose library), not our loader. Invented frames are demo data; the real series come
from ``tests/realdata.py`` (datasets that ``arch`` and ``vega-datasets`` ship).
"""

from __future__ import annotations

import re
import tomllib

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from realdata import seattle_rain, sp500_up, wti_big_move
from simulator.cli import app

runner = CliRunner()
CUTOFFS = (0.2, 0.5, 0.8)
COSTS = {"hit": 100, "false_alarm": 100, "miss": 400, "correct_negative": 0}  # invented


def gonogo(*args):
    return runner.invoke(app, [str(a) for a in args])


def invented(n_days: int = 900, start: str = "2021-01-01", seed: int = 11) -> pd.DataFrame:
    """Invented daily forecasts (demo data): date (Timestamp), probability (2 decimals), outcome 0/1."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range(start, periods=n_days, freq="D")
    p = np.round(rng.random(n_days), 2)
    return pd.DataFrame({"date": dates, "probability": p, "outcome": (rng.random(n_days) < p).astype(int)})


def fill_in_costs(scenario) -> None:
    text = scenario.read_text(encoding="utf-8")
    for key, value in COSTS.items():
        text = re.sub(rf'^{key} = "fill in"', f"{key} = {value}", text, flags=re.M)
    scenario.write_text(text, encoding="utf-8")


def expected_counts(dates: pd.Series, p: np.ndarray, outcome: np.ndarray, scenario) -> pd.DataFrame:
    """Counts at CUTOFFS over the rows inside the scenario's season, computed here (act when p >= cutoff)."""
    season = tomllib.loads(scenario.read_text(encoding="utf-8"))["season"]
    days = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"]
    stamps = pd.DatetimeIndex(dates)
    inside = (np.isin(stamps.month, season["months"])
              & np.isin(stamps.day_of_week, [days.index(d) for d in season["weekdays"]]))
    p, y = p[inside], outcome[inside].astype(bool)
    rows = [{"cutoff": c, "hits": int((p >= c)[y].sum()), "false_alarms": int((p >= c)[~y].sum()),
             "misses": int((p < c)[y].sum()), "correct_negatives": int((p < c)[~y].sum())} for c in CUTOFFS]
    return pd.DataFrame(rows)


def init_check_run(tmp_path, history, expected_reader):
    """init -> (refused until the costs are filled in) -> check -> run; compare counts at CUTOFFS."""
    scenario = tmp_path / "starter.toml"
    made = gonogo("init", history, scenario)
    assert made.exit_code == 0, made.output
    assert "gonogo run" in made.stdout and "fill in the four costs" in made.stdout
    refused = gonogo("check", history, "--scenario", scenario)
    assert refused.exit_code == 2 and "fill in the four costs" in refused.stderr
    fill_in_costs(scenario)
    checked = gonogo("check", history, "--scenario", scenario)
    assert checked.exit_code == 0, checked.output
    out = tmp_path / "out"
    ran = gonogo("run", scenario, "--replicates", 20, "--out", out, "--quiet")
    assert ran.exit_code == 0, ran.output
    table = pd.read_csv(out / "cutoffs.csv")
    got = table[table["cutoff"].isin(CUTOFFS)][["cutoff", "hits", "false_alarms", "misses",
                                               "correct_negatives"]].reset_index(drop=True)
    dates, p, outcome = expected_reader()
    pd.testing.assert_frame_equal(got, expected_counts(dates, p, outcome, scenario), check_dtype=False)
    return scenario, made


# ------------------------------------------------------------------------------------------------
# each kind of export


def test_xlsx_workbook_runs_from_its_first_sheet(tmp_path):
    frame = invented()
    path = tmp_path / "forecasts.xlsx"
    with pd.ExcelWriter(path, engine="openpyxl") as book:
        frame.rename(columns={"date": "Day", "probability": "P(rain)", "outcome": "Rained"}).to_excel(
            book, sheet_name="Log", index=False)
        pd.DataFrame({"note": ["invented"]}).to_excel(book, sheet_name="Notes", index=False)

    def reader():
        read = pd.read_excel(path, sheet_name="Log", engine="openpyxl")
        return read["Day"], read["P(rain)"].to_numpy(), read["Rained"].to_numpy()

    scenario, made = init_check_run(tmp_path, path, reader)
    text = scenario.read_text()
    assert 'sheet = "Log"' in text and 'date_column = "Day"' in text and 'outcome_column = "Rained"' in text


def test_semicolon_decimal_comma_cp1252_export_of_real_rain_runs(tmp_path):
    # Seattle's daily weather (vega-datasets) with an honest forecast, exported as a German-language
    # office suite does: semicolons, decimal commas, day-first dates, cp1252 text
    real = seattle_rain()
    path = tmp_path / "regen.csv"
    pd.DataFrame({"Datum": pd.to_datetime(real["date"]).dt.strftime("%d.%m.%Y"),
                  "Wahrscheinlichkeit": real["probability"], "Niederschlag": real["outcome"],
                  "Bemerkung": "geprüft"}).to_csv(path, sep=";", decimal=",", index=False, encoding="cp1252")

    def reader():
        read = pd.read_csv(path, sep=";", decimal=",", encoding="cp1252")
        return pd.to_datetime(read["Datum"], format="%d.%m.%Y"), read["Wahrscheinlichkeit"].to_numpy(), \
            read["Niederschlag"].to_numpy()

    scenario, made = init_check_run(tmp_path, path, reader)
    text = scenario.read_text(encoding="utf-8")
    for line in ('separator = ";"', 'decimal = ","', 'encoding = "cp1252"', 'date_format = "%d.%m.%Y"'):
        assert line in text


def test_latin1_comma_export_with_accented_headers_runs(tmp_path):
    frame = invented(seed=12)
    path = tmp_path / "prévisions.csv"
    frame.assign(date=frame["date"].dt.strftime("%Y-%m-%d")).rename(
        columns={"probability": "probabilité", "outcome": "gelée"}).to_csv(path, index=False, encoding="latin-1")

    def reader():
        read = pd.read_csv(path, encoding="latin-1")
        return pd.to_datetime(read["date"]), read["probabilité"].to_numpy(), read["gelée"].to_numpy()

    scenario, _ = init_check_run(tmp_path, path, reader)
    assert 'probability_column = "probabilité"' in scenario.read_text(encoding="utf-8")


def test_day_first_dates_are_found_when_a_day_is_over_12(tmp_path):
    frame = invented(seed=13)
    path = tmp_path / "daily.csv"
    frame.assign(date=frame["date"].dt.strftime("%d/%m/%Y")).to_csv(path, index=False)

    def reader():
        read = pd.read_csv(path)
        return pd.to_datetime(read["date"], format="%d/%m/%Y"), read["probability"].to_numpy(), \
            read["outcome"].to_numpy()

    scenario, _ = init_check_run(tmp_path, path, reader)
    assert 'date_format = "%d/%m/%Y"' in scenario.read_text()


def test_month_first_export_of_real_trading_days_runs(tmp_path):
    # S&P 500 trading days (arch), exported month-first as US office settings write dates; the
    # weekend is absent, so init's season keeps Monday to Friday
    real = sp500_up()
    path = tmp_path / "index_up.csv"
    real.assign(date=pd.to_datetime(real["date"]).dt.strftime("%m/%d/%Y")).to_csv(path, index=False)

    def reader():
        read = pd.read_csv(path)
        return pd.to_datetime(read["date"], format="%m/%d/%Y"), read["probability"].to_numpy(), \
            read["outcome"].to_numpy()

    scenario, _ = init_check_run(tmp_path, path, reader)
    text = scenario.read_text()
    assert 'date_format = "%m/%d/%Y"' in text
    assert 'weekdays = ["mon", "tue", "wed", "thu", "fri"]' in text


def test_timestamps_with_summer_and_winter_offsets_count_on_their_local_date(tmp_path):
    # crude-oil moves (arch) with the forecast issued at 00:30 local time in a zone with summer time:
    # the offset changes twice a year, and the UTC date is the day before the local date
    real = wti_big_move().iloc[-1500:]
    local = pd.to_datetime(real["date"]) + pd.Timedelta(minutes=30)
    stamps = local.dt.tz_localize("Europe/Berlin", nonexistent="shift_forward", ambiguous=False)
    path = tmp_path / "moves.csv"
    real.assign(date=[s.isoformat() for s in stamps]).to_csv(path, index=False)
    assert {"+01:00", "+02:00"} <= {s[-6:] for s in pd.read_csv(path)["date"]}

    def reader():  # the local date is the text before the "T"
        read = pd.read_csv(path)
        return pd.to_datetime(read["date"].str[:10], format="%Y-%m-%d"), read["probability"].to_numpy(), \
            read["outcome"].to_numpy()

    init_check_run(tmp_path, path, reader)


def test_tab_separated_utf8_with_byte_order_mark_runs(tmp_path):
    frame = invented(seed=14)
    path = tmp_path / "export.txt"
    frame.assign(date=frame["date"].dt.strftime("%Y-%m-%d")).to_csv(path, sep="\t", index=False,
                                                                     encoding="utf-8-sig")

    def reader():
        read = pd.read_csv(path, sep="\t", encoding="utf-8-sig")
        return pd.to_datetime(read["date"]), read["probability"].to_numpy(), read["outcome"].to_numpy()

    scenario, _ = init_check_run(tmp_path, path, reader)
    assert 'separator = "\\t"' in scenario.read_text()


def test_ambiguous_dates_are_left_for_the_user_to_choose(tmp_path):
    # the first twelve days of each month: every date reads both day-first and month-first
    frame = invented(n_days=1100, seed=15)
    frame = frame[frame["date"].dt.day <= 12].reset_index(drop=True)
    path = tmp_path / "twelve.csv"
    frame.assign(date=frame["date"].dt.strftime("%d/%m/%Y")).to_csv(path, index=False)
    scenario = tmp_path / "starter.toml"
    made = gonogo("init", path, scenario)
    assert made.exit_code == 0, made.output
    text = scenario.read_text()
    assert '# date_format = "%d/%m/%Y"' in text and '# date_format = "%m/%d/%Y"' in text
    fill_in_costs(scenario)
    refused = gonogo("check", path, "--scenario", scenario)
    assert refused.exit_code == 2
    message = refused.stderr.strip()
    assert len(message.splitlines()) == 1
    # rows 3 and 4 of the file (frame rows 1 and 2): 02/01/2021 and 03/01/2021
    assert "'02/01/2021' (row 3) and '03/01/2021' (row 4)" in message
    assert 'set [history] date_format = "%d/%m/%Y" or "%m/%d/%Y"' in message
    scenario.write_text(text.replace('# date_format = "%d/%m/%Y"', 'date_format = "%d/%m/%Y"'))
    fill_in_costs(scenario)
    assert gonogo("check", path, "--scenario", scenario).exit_code == 0


def test_value_column_gets_a_threshold_marked_as_a_choice(tmp_path):
    frame = invented(seed=16)
    rng = np.random.default_rng(16)
    path = tmp_path / "levels.csv"
    frame.assign(date=frame["date"].dt.strftime("%Y-%m-%d"), level_m=np.round(rng.gamma(2.0, 1.0, len(frame)), 2)
                 ).drop(columns="outcome").to_csv(path, index=False)
    scenario = tmp_path / "starter.toml"
    assert gonogo("init", path, scenario).exit_code == 0
    config = tomllib.loads(scenario.read_text())["history"]
    assert config["value_column"] == "level_m" and config["side"] == "above"
    assert config["threshold"] == pytest.approx(float(pd.read_csv(path)["level_m"].median()))


# ------------------------------------------------------------------------------------------------
# what init refuses


def test_init_never_overwrites_a_scenario_without_force(tmp_path):
    path = tmp_path / "h.csv"
    invented().assign(date=lambda f: f["date"].dt.strftime("%Y-%m-%d")).to_csv(path, index=False)
    scenario = tmp_path / "mine.toml"
    scenario.write_text("# my own work\n")
    refused = gonogo("init", path, scenario)
    assert refused.exit_code == 2 and "already exists; give --force" in refused.stderr
    assert scenario.read_text() == "# my own work\n"
    assert gonogo("init", path, scenario, "--force").exit_code == 0
    assert "fill in" in scenario.read_text()


def test_init_refuses_a_file_without_probabilities_in_one_line(tmp_path):
    path = tmp_path / "h.csv"
    invented().assign(date=lambda f: f["date"].dt.strftime("%Y-%m-%d"),
                      probability=lambda f: f["probability"] * 100).to_csv(path, index=False)
    result = gonogo("init", path, tmp_path / "s.toml")
    assert result.exit_code == 2 and "no column holds probabilities" in result.stderr
    assert not (tmp_path / "s.toml").exists()


def test_results_go_to_outputs_named_after_the_scenario_file(tmp_path, monkeypatch):
    path = tmp_path / "h.csv"
    invented().assign(date=lambda f: f["date"].dt.strftime("%Y-%m-%d")).to_csv(path, index=False)
    monkeypatch.chdir(tmp_path)
    assert gonogo("init", "h.csv", "north yard.toml").exit_code == 0
    fill_in_costs(tmp_path / "north yard.toml")
    ran = gonogo("run", "north yard.toml", "--replicates", 20)
    assert ran.exit_code == 0, ran.output
    assert (tmp_path / "outputs" / "north yard" / "summary.json").exists()
    assert ran.stdout.strip().splitlines()[-1].startswith("Wrote ")
    assert "outputs/north yard/" in ran.stdout.strip().splitlines()[-1]


def test_odd_column_names_are_written_as_valid_toml(tmp_path):
    # quotes, a backslash, a control character and console markup in headers stay plain text
    names = {"date": 'day "local"', "probability": "P(rain) \\ supplier\x7f", "outcome": "[bold]wet[/bold]"}
    path = tmp_path / "odd.csv"
    invented().assign(date=lambda f: f["date"].dt.strftime("%Y-%m-%d")).rename(columns=names).to_csv(
        path, index=False)
    scenario = tmp_path / "odd.toml"
    made = gonogo("init", path, scenario)
    assert made.exit_code == 0, made.output
    config = tomllib.loads(scenario.read_text(encoding="utf-8"))["history"]
    assert (config["date_column"], config["probability_column"], config["outcome_column"]) == tuple(names.values())
    assert "[bold]wet[/bold]" in made.stdout
    fill_in_costs(scenario)
    assert gonogo("check", path, "--scenario", scenario).exit_code == 0


def test_weekly_history_gets_no_weekdays_and_runs(tmp_path):
    # a forecast a week (invented): weekdays apply to daily histories only
    frame = invented(n_days=7 * 300, seed=17).iloc[::7].reset_index(drop=True)
    path = tmp_path / "weekly.csv"
    frame.assign(date=frame["date"].dt.strftime("%Y-%m-%d")).to_csv(path, index=False)
    scenario = tmp_path / "weekly.toml"
    made = gonogo("init", path, scenario)
    assert made.exit_code == 0, made.output
    assert "weekdays" not in tomllib.loads(scenario.read_text())["season"]
    assert "a row weekly" in scenario.read_text()
    fill_in_costs(scenario)
    ran = gonogo("run", scenario, "--replicates", 20, "--out", tmp_path / "out", "--quiet")
    assert ran.exit_code == 0, ran.output


def test_newest_forecast_without_an_outcome_yet_is_found_then_named_by_check(tmp_path):
    frame = invented(seed=18).assign(date=lambda f: f["date"].dt.strftime("%Y-%m-%d")).astype(str)
    frame.loc[len(frame) - 1, "outcome"] = ""  # tomorrow's forecast: no outcome yet
    path = tmp_path / "log.csv"
    frame.to_csv(path, index=False)
    scenario = tmp_path / "log.toml"
    assert gonogo("init", path, scenario).exit_code == 0
    assert 'outcome_column = "outcome"' in scenario.read_text()
    fill_in_costs(scenario)
    result = gonogo("check", path, "--scenario", scenario)
    assert result.exit_code == 2
    assert f'row {len(frame) + 1}, column "outcome": the outcome is missing' in result.stderr
