"""The command line: every bad input of issue 2 section 1 is refused cleanly, output folders are
protected, and a run is reproducible and writes the promised files.

A refusal is: exit status 2 (as Click's usage errors), one line on standard error naming the file,
the row as a spreadsheet counts it (header = row 1), the column or key, and what to do; no
traceback; nothing written to --out. The rule is the project's own (STYLE.md section 4), modelled
on Click's usage errors; common practice, no single source.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from simulator.cli import app

runner = CliRunner()


def gonogo(*args):
    return runner.invoke(app, [str(a) for a in args])


def assert_refused(result, out, *fragments):
    """Exit 2, one line starting "error:", every fragment in it, no traceback, nothing in ``out``."""
    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit), result.exception  # not an uncaught error
    assert "Traceback" not in result.output
    message = result.stderr.strip()
    assert len(message.splitlines()) == 1, message
    assert message.startswith("error: ")
    for fragment in fragments:
        assert fragment in message, f"{fragment!r} not in {message!r}"
    assert not out.exists() or not any(out.iterdir())
    return message


@pytest.fixture
def out(tmp_path):
    return tmp_path / "out"


@pytest.fixture
def without_report(monkeypatch):
    """Skip drawing the HTML report's figures (seconds a run; the report has its own tests in
    test_report.py). Only the tests that need a finished run, not the report, use this."""
    report = pytest.importorskip("simulator.account.report")
    monkeypatch.setattr(report, "render_report", lambda result, contents: {}, raising=False)


@pytest.fixture
def text_frame(history_frame):
    """The default history as text cells, ready to be spoilt."""
    return history_frame.astype(str)


@pytest.fixture
def good(write_history, write_scenario, history_frame):
    """A valid scenario next to a valid history (1096 daily rows)."""
    write_history(history_frame)
    return write_scenario()


# ------------------------------------------------------------------------------------------------
# the history file


def test_missing_history_file_is_refused(good, tmp_path, out):
    result = gonogo("run", good, "--history", tmp_path / "nothere.csv", "--out", out)
    assert_refused(result, out, "nothere.csv: no such history file; check the path")


def test_missing_scenario_file_is_refused(tmp_path, out):
    result = gonogo("run", tmp_path / "nothere.toml", "--out", out)
    assert_refused(result, out, "nothere.toml: no such scenario file; check the path")


def test_binary_garbage_in_a_csv_is_refused(good, write_history, out):
    garbage = b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 8
    write_history(garbage, "garbage.csv")
    result = gonogo("run", good, "--history", good.parent / "garbage.csv", "--out", out)
    assert_refused(result, out, "garbage.csv: cannot be read", "save it as CSV")


def test_broken_workbook_is_refused_in_one_line(good, write_history, out):
    write_history(b"PK\x03\x04" + bytes(200), "forecasts.xlsx")  # the zip header of an .xlsx, no more
    result = gonogo("run", good, "--history", good.parent / "forecasts.xlsx", "--out", out)
    assert_refused(result, out, "forecasts.xlsx: cannot be read as an Excel workbook", "save it again")


def test_empty_file_is_refused(good, write_history, out):
    write_history(b"")
    assert_refused(gonogo("run", good, "--out", out), out, "history.csv: the file is empty",
                   "needs a header row")


def test_header_without_rows_is_refused(good, write_history, out):
    write_history("date,probability,outcome\n")
    assert_refused(gonogo("run", good, "--out", out), out, "history.csv: has a header but no rows",
                   "add one row per forecast occasion")


def test_missing_column_is_refused_and_named(good, write_history, history_frame, out):
    write_history(history_frame.drop(columns="outcome"))
    assert_refused(gonogo("run", good, "--out", out), out, 'history.csv: no column "outcome"',
                   "[history] outcome_column")


def test_misspelt_column_in_the_file_suggests_closest_name(good, write_history, history_frame, out):
    write_history(history_frame.rename(columns={"probability": "probabilty"}))
    assert_refused(gonogo("run", good, "--out", out), out, 'no column "probability"',
                   'did you mean "probabilty"')


def test_misspelt_column_in_the_scenario_suggests_closest_name(write_history, write_scenario,
                                                               history_frame, out):
    write_history(history_frame)
    scenario = write_scenario(history={"probability_column": "probabilty"})
    assert_refused(gonogo("run", scenario, "--out", out), out, 'no column "probabilty"',
                   'did you mean "probability"')


# (row index in the frame, column, bad text, fragments of the message); the header is row 1, so
# frame index i is spreadsheet row i + 2
BAD_CELLS = {
    "unparseable date": (4, "date", "5th Jan 2020",
                         ['row 6, column "date"', "'5th Jan 2020' is not a date", "YYYY-MM-DD"]),
    "missing date": (9, "date", "", ['row 11, column "date"', "the date is missing"]),
    # one 17 among probabilities is a slip, not a percentage: advice about percentages is kept for a
    # column that looks like percentages (test_history.py)
    "probability out of range": (12, "probability", "17",
                                 ['history.csv row 14, column "probability": 17 is outside [0, 1]; '
                                  "probabilities run from 0 to 1; check this cell"]),
    "negative probability": (3, "probability", "-0.2",
                             ['row 5, column "probability": -0.2 is outside [0, 1]',
                              "probabilities run from 0 to 1"]),
    "missing probability": (7, "probability", "", ['row 9, column "probability"',
                                                   "the probability is missing; fill it in"]),
    "text probability": (7, "probability", "high", ['row 9, column "probability"',
                                                    "'high' is not a number"]),
    "outcome not binary": (20, "outcome", "2", ['row 22, column "outcome"',
                                                "'2' is not a yes/no outcome; write 1 or 0"]),
    "outcome a word": (21, "outcome", "maybe", ['row 23, column "outcome"', "'maybe'"]),
    "missing outcome": (30, "outcome", "", ['row 32, column "outcome"',
                                            "the outcome is missing; write 1 or 0"]),
}


@pytest.mark.parametrize("case", BAD_CELLS, ids=list(BAD_CELLS))
def test_bad_cell_is_refused_naming_row_and_column(case, good, write_history, text_frame, out):
    index, column, bad, fragments = BAD_CELLS[case]
    text_frame.loc[index, column] = bad
    write_history(text_frame)
    assert_refused(gonogo("run", good, "--out", out), out, *fragments)


def test_duplicate_date_is_refused(good, write_history, text_frame, out):
    text_frame.loc[4, "date"] = text_frame.loc[3, "date"]  # rows 5 and 6 both 2020-01-04
    write_history(text_frame)
    assert_refused(gonogo("run", good, "--out", out), out, 'row 6, column "date"',
                   "2020-01-04 appears again (first at row 5)", "keep one row per date")


def test_dates_out_of_order_are_refused(good, write_history, text_frame, out):
    swapped = text_frame.iloc[[0, 1, 2, 3, 5, 4]].reset_index(drop=True)
    write_history(pd.concat([swapped, text_frame.iloc[6:]]))
    assert_refused(gonogo("run", good, "--out", out), out, 'row 7, column "date"',
                   "2020-01-05 comes after 2020-01-06", "sort the rows by date")


def test_blank_line_counts_as_a_spreadsheet_row(good, write_history, text_frame, out):
    # a blank line is an empty row in a spreadsheet; the rows after it keep their numbers
    lines = text_frame.to_csv(index=False, lineterminator="\n").splitlines()
    write_history("\n".join(lines[:4] + [""] + lines[4:]) + "\n")
    assert_refused(gonogo("run", good, "--out", out), out, 'row 5, column "date"',
                   "the date is missing")


@pytest.mark.parametrize("outcome, fragment", [
    (1, 'occasions without "event", fewer than 5'),  # 3 non-events
    (0, '3 "event" occasions, fewer than 5'),  # 3 events
])
def test_class_with_fewer_than_five_occasions_is_refused(outcome, fragment, good, write_history,
                                                         history_frame, out):
    frame = history_frame.assign(outcome=outcome)
    frame.loc[[10, 400, 900], "outcome"] = 1 - outcome
    write_history(frame)
    assert_refused(gonogo("run", good, "--out", out), out, "history.csv: the evaluated period has 3",
                   fragment, "use a longer history or a wider season")


def test_weekdays_on_a_monthly_history_are_refused(write_history, write_scenario, history_frame, out):
    monthly = history_frame[pd.to_datetime(history_frame["date"]).dt.day == 1]  # the 1st of each month
    write_history(monthly)
    scenario = write_scenario(season={"weekdays": ["mon", "tue", "wed", "thu", "fri"]})
    assert_refused(gonogo("run", scenario, "--out", out), out,
                   "scenario.toml [season] weekdays: ", "history.csv has a row every month",
                   "leave weekdays out of [season]")


def test_rare_class_is_counted_in_the_season_only(write_history, write_scenario, history_frame, out):
    # 4 events in June-August only: the whole history has plenty, the season too few
    frame = history_frame.copy()
    summer = pd.to_datetime(frame["date"]).dt.month.isin([6, 7, 8]).to_numpy()
    frame.loc[summer, "outcome"] = 0
    frame.loc[np.flatnonzero(summer)[[0, 50, 100, 200]], "outcome"] = 1
    write_history(frame)
    scenario = write_scenario(season={"months": [6, 7, 8]})
    assert_refused(gonogo("run", scenario, "--out", out), out, '4 "event" occasions, fewer than 5')


def test_class_count_is_checked_in_each_period(write_history, write_scenario, history_frame, out):
    # the validation period (December 2022) has only 3 events
    frame = history_frame.copy()
    december = frame["date"].ge("2022-12-01").to_numpy()
    frame.loc[december, "outcome"] = 0
    frame.loc[np.flatnonzero(december)[:3], "outcome"] = 1
    write_history(frame)
    scenario = write_scenario(history={"validation_from": "2022-12-01"})
    assert_refused(gonogo("run", scenario, "--out", out), out, "the validation period has 3")


@pytest.mark.parametrize("when", ["2031-01-01", "2019-06-01"])
def test_validation_date_outside_the_history_is_refused(when, write_history, write_scenario,
                                                        history_frame, out):
    write_history(history_frame)
    scenario = write_scenario(history={"validation_from": when})
    assert_refused(gonogo("run", scenario, "--out", out), out, "scenario.toml [history] validation_from",
                   f"{when} is outside the evaluated history (2020-01-01 to 2022-12-31)",
                   "pick a date inside it")


def test_check_command_names_the_historys_calendar(write_history, history_frame):
    workdays = history_frame[pd.to_datetime(history_frame["date"]).dt.day_of_week < 5]
    result = gonogo("check", write_history(workdays))
    assert result.exit_code == 0, result.output
    assert "daily on mon, tue, wed, thu, fri" in result.stdout


def test_check_command_refuses_bad_input_the_same_way(write_history, text_frame, tmp_path):
    text_frame.loc[12, "probability"] = "17"
    path = write_history(text_frame)
    result = gonogo("check", path)
    assert_refused(result, tmp_path / "out", 'row 14, column "probability"', "17 is outside [0, 1]")


# ------------------------------------------------------------------------------------------------
# the scenario file


def test_unknown_key_names_closest_valid_key(write_history, write_scenario, history_frame, out):
    write_history(history_frame)
    costs = {"hit": 300, "false_alarms": 1800, "miss": 2500}  # STYLE.md section 4's example
    scenario = write_scenario(costs=costs)
    assert_refused(gonogo("run", scenario, "--out", out), out,
                   'scenario.toml [costs]: unknown key "false_alarms"; did you mean "false_alarm"?')


def test_unknown_top_level_key_names_closest_valid_key(write_history, write_scenario, history_frame, out):
    write_history(history_frame)
    scenario = write_scenario(top={"curency": "GBP"})
    assert_refused(gonogo("run", scenario, "--out", out), out,
                   'top level: unknown key "curency"; did you mean "currency"?')


def test_unknown_section_names_closest_valid_section(write_history, write_scenario, history_frame, out):
    write_history(history_frame)
    scenario = write_scenario(seasons={"months": [4, 5]})
    assert_refused(gonogo("run", scenario, "--out", out), out, 'unknown key "seasons"',
                   'did you mean "season"?')


@pytest.mark.parametrize("grid, fragment", [
    ([0.5, 0.2, 0.1], "from and to must satisfy 0 <= from < to <= 1"),
    ([0.0, 1.5, 0.1], "from and to must satisfy 0 <= from < to <= 1"),
    ([0.0, 1.0, 0.0], "the step must be positive"),
    ([0.0, 1.0, 0.3], "the step 0.3 does not divide 0.0 to 1.0 into whole steps"),
    ([0.0, 1.0], "[decision] cutoffs"),
])
def test_bad_cutoff_grid_is_refused(grid, fragment, write_history, write_scenario, history_frame, out):
    write_history(history_frame)
    scenario = write_scenario(decision={"cutoffs": grid})
    assert_refused(gonogo("run", scenario, "--out", out), out, "scenario.toml [decision] cutoffs",
                   fragment)


def test_missing_cost_is_refused(write_history, write_scenario, history_frame, out):
    write_history(history_frame)
    scenario = write_scenario(costs={"hit": 300, "false_alarm": 1800})
    assert_refused(gonogo("run", scenario, "--out", out), out,
                   "scenario.toml [costs] miss: this key is required; add it")


def test_invalid_toml_is_refused(write_scenario, out):
    scenario = write_scenario('name = "x"\n[costs\nhit = 1\n')
    assert_refused(gonogo("run", scenario, "--out", out), out, "scenario.toml: not valid TOML")


# ------------------------------------------------------------------------------------------------
# the output folder


def test_non_empty_output_folder_is_refused_and_left_untouched(good, out):
    out.mkdir()
    (out / "summary.json").write_text("earlier results\n")
    (out / "notes.txt").write_text("mine\n")
    before = {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in out.iterdir()}
    result = gonogo("run", good, "--out", out)
    assert result.exit_code == 2
    assert "already holds results; add --force" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in out.iterdir()} == before


def test_force_replaces_results_in_the_output_folder(good, out, without_report):
    out.mkdir()
    (out / "summary.json").write_text("earlier results\n")
    result = gonogo("run", good, "--out", out, "--force", "--quiet")
    assert result.exit_code == 0, result.output
    assert json.loads((out / "summary.json").read_text())["schema"] == 1
    assert (out / "cutoffs.csv").exists()
    assert not [p.name for p in out.iterdir() if ".tmp" in p.name]  # no temporary left behind


def test_output_path_that_is_a_file_is_refused(good, tmp_path):
    target = tmp_path / "out"
    target.write_text("a file\n")
    result = gonogo("run", good, "--out", target)
    assert result.exit_code == 2
    assert "is a file, not a folder" in result.stderr
    assert target.read_text() == "a file\n"


# ------------------------------------------------------------------------------------------------
# what a good run gives


def test_gaps_in_the_dates_warn_but_run(good, write_history, history_frame, out, without_report):
    write_history(history_frame.drop(index=[40, 41, 42, 500]))
    result = gonogo("run", good, "--out", out, "--quiet")
    assert result.exit_code == 0, result.output
    assert result.stderr.startswith("warning: ")
    assert "history.csv: 4 dates inside the season have no row (2020-02-10, 2020-02-11, " \
           "2020-02-12, ...)" in result.stderr
    assert (out / "summary.json").exists()


def test_parquet_history_gives_the_same_numbers_as_csv(good, write_history, history_frame, tmp_path,
                                                       without_report):
    frame = history_frame.assign(date=pd.to_datetime(history_frame["date"]))  # a real date column
    parquet = write_history(frame, "history.parquet")
    by_csv, by_parquet = tmp_path / "csv", tmp_path / "parquet"
    assert gonogo("run", good, "--out", by_csv, "--quiet").exit_code == 0
    result = gonogo("run", good, "--history", parquet, "--out", by_parquet, "--quiet")
    assert result.exit_code == 0, result.output
    a = json.loads((by_csv / "summary.json").read_text())
    b = json.loads((by_parquet / "summary.json").read_text())
    for key in ("history", "scenario"):  # file names and hashes differ, nothing else may
        for name in ("file", "sha256"):
            a[key].pop(name, None), b[key].pop(name, None)
    assert a == b
    assert (by_csv / "cutoffs.csv").read_bytes() == (by_parquet / "cutoffs.csv").read_bytes()


def test_same_seed_gives_byte_identical_files(good, tmp_path, run_seed, without_report):
    # the reproducibility contract of issue 2 section 3 (common practice, no single source)
    first, second, other = tmp_path / "a", tmp_path / "b", tmp_path / "c"
    for folder, seed in ((first, run_seed), (second, run_seed), (other, run_seed + 1)):
        result = gonogo("run", good, "--out", folder, "--seed", seed, "--replicates", 600, "--quiet")
        assert result.exit_code == 0, result.output
    for name in ("summary.json", "cutoffs.csv"):
        assert (first / name).read_bytes() == (second / name).read_bytes()
    # and the seed matters
    assert (first / "cutoffs.csv").read_bytes() != (other / "cutoffs.csv").read_bytes()


# issue 2 section 4, verbatim
SUMMARY_KEYS = ["schema", "tool_version", "scenario", "history", "currency", "season_occasions",
                "replicates", "seed", "mean_block_days", "reference", "theoretical_cutoff",
                "recommended_cutoff", "recommended_cutoff_interval", "near_optimal_band", "break_even",
                "confident_break_even", "relative_value", "strategies", "savings"]
SCENARIO_KEYS = ["name", "sha256"]
HISTORY_KEYS = ["sha256", "rows", "evaluated_rows", "start", "end", "event_rate", "brier_score",
                "brier_skill_score", "roc_auc"]
STRATEGIES = ["model", "never_act", "always_act", "persistence", "seasonal_rate", "perfect"]
CUTOFF_COLUMNS = ["cutoff", "hits", "false_alarms", "misses", "correct_negatives", "hit_rate",
                  "specificity", "historical_cost", "mean_cost", "p05_cost", "p50_cost", "p95_cost",
                  "mean_savings", "prob_saving"]


def test_summary_and_cutoffs_hold_every_promised_key(good, out, history_frame):
    # one whole run, report included; --json prints the summary.json it writes
    result = gonogo("run", good, "--out", out, "--json")
    assert result.exit_code == 0, result.output
    s = json.loads((out / "summary.json").read_text())
    assert json.loads(result.stdout) == s
    assert set(SUMMARY_KEYS) <= set(s)
    assert s["schema"] == 1
    assert set(SCENARIO_KEYS) <= set(s["scenario"])
    assert set(HISTORY_KEYS) <= set(s["history"])
    assert set(STRATEGIES) <= set(s["strategies"])
    for d in s["strategies"].values():
        assert set(d) >= {"mean", "p05", "p50", "p95"}
    assert set(s["savings"]) >= {"mean", "p05", "p95", "prob_saving"}
    assert len(s["recommended_cutoff_interval"]) == 2 and len(s["near_optimal_band"]) == 2
    assert all(len(r) == 2 for r in s["break_even"] + s["confident_break_even"])
    assert s["history"]["rows"] == len(history_frame) == s["history"]["evaluated_rows"]
    assert (s["history"]["start"], s["history"]["end"]) == ("2020-01-01", "2022-12-31")
    assert s["replicates"] == 60 and s["seed"] == 11  # from the scenario's [simulation]
    assert s["season_occasions"] == 365  # the season priced is 2023, every day
    assert s["theoretical_cutoff"] == 0.45  # 1800 / (1800 + 2500 - 300) (Elkan 2001)
    table = pd.read_csv(out / "cutoffs.csv")
    assert set(CUTOFF_COLUMNS) <= set(table.columns)
    assert len(table) == 101 and table["cutoff"].iloc[50] == 0.5
    counts = table[["hits", "false_alarms", "misses", "correct_negatives"]].sum(axis=1)
    assert (counts == len(history_frame)).all()


def test_scenario_toml_helper_round_trips(toml_text):
    # the tests' own TOML writer, checked against the standard library's reader
    import tomllib

    text = toml_text(top={"currency": "GBP"}, decision={"cutoffs": [0.0, 1.0, 0.05]},
                         event={"name": 'say "dry"', "flip": True})
    data = tomllib.loads(text)
    assert data["currency"] == "GBP" and data["event"] == {"name": 'say "dry"', "flip": True}
    assert data["decision"]["cutoffs"] == [0.0, 1.0, 0.05]
