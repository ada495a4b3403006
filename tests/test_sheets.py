"""Reading history files: office dialects found or set, and hostile or mistaken files refused.

Every refusal goes through the command line (``gonogo check``) and is one line naming the file,
the row as a spreadsheet counts it and the column where there is one, with what to do (the
project's own rule, STYLE.md section 4; common practice, no single source). Histories are
invented test data (``tests/conftest.py``).
"""

from __future__ import annotations

import os
import threading

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from simulator.inputs import sheets
from simulator.cli import app
from simulator.inputs.errors import InputError
from simulator.inputs.sheets import read_table

runner = CliRunner()


def check(history, scenario=None):
    args = ["check", str(history)] + (["--scenario", str(scenario)] if scenario is not None else [])
    return runner.invoke(app, args)


def refused(result, *fragments) -> str:
    """Exit 2 and one line holding every fragment, no traceback."""
    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit), result.exception
    message = result.stderr.strip()
    assert len(message.splitlines()) == 1, message
    assert "Traceback" not in result.output
    for fragment in fragments:
        assert fragment in message, f"{fragment!r} not in {message!r}"
    return message


# ------------------------------------------------------------------------------------------------
# dialects found and set


def test_found_and_explicit_dialects_read_the_same_cells(tmp_path, history_frame):
    # the reference is pandas' reader given the options explicitly
    path = tmp_path / "h.csv"
    history_frame.assign(note="grêle").to_csv(path, sep=";", decimal=",", index=False, encoding="cp1252")
    found = read_table(path)
    explicit = pd.read_csv(path, sep=";", decimal=",", encoding="cp1252")
    assert found.dialect.separator == ";" and found.dialect.decimal == "," and found.dialect.encoding == "cp1252"
    assert set(found.dialect.found) == {"encoding", "separator", "decimal"}
    np.testing.assert_array_equal(found.frame["probability"].astype(float), explicit["probability"])
    assert found.dialect.describe() == "CSV, semicolon-separated, decimal comma, encoding cp1252"
    assert (found.frame["note"] == "grêle").all()
    set_ = read_table(path, separator=";", decimal=",", encoding="cp1252")
    pd.testing.assert_frame_equal(found.frame, set_.frame)
    assert set_.dialect.found == ()


def test_utf16_unicode_text_export_is_read(tmp_path, history_frame):
    # office suites' "Unicode text": UTF-16 with a byte-order mark, tab-separated
    path = tmp_path / "h.txt"
    history_frame.to_csv(path, sep="\t", index=False, encoding="utf-16")
    assert check(path).exit_code == 0


def test_outcomes_written_with_decimals_read_as_yes_and_no(tmp_path, history_frame):
    path = tmp_path / "h.csv"
    history_frame.assign(outcome=history_frame["outcome"].map({1: "1.00", 0: "0.00"})).to_csv(path, index=False)
    result = check(path)
    assert result.exit_code == 0, result.output
    rate = history_frame["outcome"].mean()
    assert f"{rate:.3f}" in result.stdout


def test_explicit_date_format_with_offsets_reads_local_dates(tmp_path, write_scenario, history_frame):
    local = pd.to_datetime(history_frame["date"]) + pd.Timedelta(minutes=30)
    stamps = local.dt.tz_localize("Europe/Berlin", nonexistent="shift_forward", ambiguous=False)
    frame = history_frame.assign(date=stamps.dt.strftime("%d.%m.%Y %H:%M %z"))
    frame.to_csv(tmp_path / "history.csv", index=False)
    scenario = write_scenario(history={"date_format": "%d.%m.%Y %H:%M %z"})
    result = check(tmp_path / "history.csv", scenario)
    assert result.exit_code == 0, result.output
    assert "2020-01-01 to 2022-12-31" in result.stdout


# ------------------------------------------------------------------------------------------------
# mistaken files


def test_one_probability_slip_gets_no_advice_about_percentages(tmp_path, history_frame):
    path = tmp_path / "h.csv"
    history_frame.astype(str).assign(probability=lambda f: f["probability"].where(f.index != 5, "1.5")).to_csv(
        path, index=False)
    message = refused(check(path), 'row 7, column "probability": 1.5 is outside [0, 1]',
                      "probabilities run from 0 to 1")
    assert "0.015" not in message


def test_column_of_percentages_gets_advice_to_divide_by_100(tmp_path, history_frame):
    path = tmp_path / "h.csv"
    history_frame.assign(probability=np.round(history_frame["probability"] * 100)).to_csv(path, index=False)
    refused(check(path), 'column "probability"', "looks like percentages", "divide them by 100")


def test_semicolon_file_read_with_a_comma_set_names_the_separator(tmp_path, write_scenario, history_frame):
    history_frame.to_csv(tmp_path / "history.csv", sep=";", index=False)
    scenario = write_scenario(history={"separator": ","})
    refused(check(tmp_path / "history.csv", scenario), "seems to use semicolons", 'separator = ";"')


def test_latin1_file_read_as_utf8_names_row_column_and_the_fix(tmp_path, write_scenario, history_frame):
    frame = history_frame.assign(note="ok")
    frame.loc[6, "note"] = "Grêle"
    frame.to_csv(tmp_path / "history.csv", index=False, encoding="latin-1")
    scenario = write_scenario(history={"encoding": "utf-8"})
    refused(check(tmp_path / "history.csv", scenario), 'history.csv row 8, column "note"',
            "cannot be read as utf-8", "save the file as UTF-8", "[history] encoding")


def test_bytes_that_no_western_encoding_reads_are_refused_with_the_row(tmp_path, history_frame):
    path = tmp_path / "h.csv"
    text = history_frame.to_csv(index=False).encode()
    lines = text.split(b"\n")
    lines[3] = lines[3] + b"\xc3\x81\x81"  # not UTF-8, and 0x81 is undefined in cp1252
    path.write_bytes(b"\n".join(lines))
    refused(check(path), "h.csv row 4", "nor as cp1252", "save the file as UTF-8")


def test_numbers_with_both_decimal_marks_ask_which(tmp_path, history_frame):
    path = tmp_path / "h.csv"
    frame = history_frame.astype(str)
    frame["probability"] = frame["probability"].str.replace(".", ",", regex=False)
    frame.loc[10, "probability"] = "0.5"
    frame.to_csv(path, sep=";", index=False)
    refused(check(path), "decimal comma", "decimal point", "(row 12", 'set [history] decimal')


def test_date_centuries_after_the_rest_is_refused(tmp_path, history_frame):
    path = tmp_path / "h.csv"
    frame = history_frame.copy()
    frame.loc[len(frame) - 1, "date"] = "2301-01-01"
    frame.to_csv(path, index=False)
    refused(check(path), f'row {len(frame) + 1}, column "date": 2301-01-01 is 280 years from', "check the year")


@pytest.mark.parametrize("history, extra", [
    ({"probability_column": "probability", "outcome_column": "probability"}, "outcome_column"),
    ({"value_column": "probability", "threshold": 0.5, "side": "above"}, "value_column"),
])
def test_forecast_judged_against_itself_is_refused(tmp_path, write_scenario, history_frame, history, extra):
    history_frame.to_csv(tmp_path / "history.csv", index=False)
    scenario = write_scenario(history=history)
    refused(check(tmp_path / "history.csv", scenario), "[history]", f'probability_column and {extra} both name '
            'column "probability"')


def test_unknown_sheet_lists_the_sheets(tmp_path, write_scenario, history_frame):
    with pd.ExcelWriter(tmp_path / "book.xlsx", engine="openpyxl") as book:
        history_frame.to_excel(book, sheet_name="2020-2022", index=False)
    scenario = write_scenario(history={"path": "book.xlsx", "sheet": "Sheet1"})
    refused(check(tmp_path / "book.xlsx", scenario), 'no sheet "Sheet1"', '"2020-2022"')


def test_old_workbook_formats_are_refused_with_what_to_save(tmp_path):
    (tmp_path / "h.xls").write_bytes(b"\xd0\xcf\x11\xe0" + bytes(100))
    refused(check(tmp_path / "h.xls"), "save it as .xlsx")


# ------------------------------------------------------------------------------------------------
# files that are not files


def test_named_pipe_is_refused_without_waiting(tmp_path):
    fifo = tmp_path / "h.csv"
    os.mkfifo(fifo)
    results = []
    worker = threading.Thread(target=lambda: results.append(check(fifo)), daemon=True)
    worker.start()
    worker.join(timeout=20)
    if worker.is_alive():  # unblock the reader before failing
        with open(fifo, "wb"):
            pass
        pytest.fail("reading a named pipe blocked")
    refused(results[0], "is a named pipe, not a file")


def test_device_is_refused():
    refused(check("/dev/zero"), "/dev/zero: is a device, not a file")


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0,
                    reason="root reads any file, so a file it may not read cannot be made")
def test_file_the_user_may_not_read_is_refused(tmp_path, history_frame):
    path = tmp_path / "h.csv"
    history_frame.to_csv(path, index=False)
    path.chmod(0)
    refused(check(path), "you may not read this history file")


def test_permission_refusal_reads_as_one_line(tmp_path, history_frame, monkeypatch):
    # the same refusal where the test runs as root: the open call fails as it would for a user
    path = tmp_path / "h.csv"
    history_frame.to_csv(path, index=False)
    real_open = type(path).open

    def denied(self, *args, **kwargs):
        if self == path:
            raise PermissionError(13, "Permission denied")
        return real_open(self, *args, **kwargs)

    monkeypatch.setattr(type(path), "open", denied)
    refused(check(path), "you may not read this history file", "ask its owner")


def test_file_over_the_size_limit_is_refused_naming_the_limit(tmp_path, history_frame, monkeypatch):
    path = tmp_path / "h.csv"
    history_frame.to_csv(path, index=False)
    monkeypatch.setattr(sheets, "MAX_BYTES", 2**20 // 64)  # the file is about 20 KiB
    with pytest.raises(InputError, match="larger than the 16 KiB that gonogo reads from a history file"):
        read_table(path)
    monkeypatch.setattr(sheets, "MAX_BYTES", 2**20 + 1)
    assert read_table(path).frame.shape == (1096, 3)


def test_rows_over_the_limit_are_refused_naming_the_limit(tmp_path, history_frame, monkeypatch):
    path = tmp_path / "h.csv"
    history_frame.to_csv(path, index=False)
    monkeypatch.setattr(sheets, "MAX_ROWS", 1000)
    refused(check(path), "more than 1,000 rows", "the most gonogo reads")


def test_cells_formatted_as_percentages_read_as_the_numbers_they_stand_for(tmp_path, history_frame):
    # a spreadsheet shows 0.35 formatted as a percentage as "35%" and exports that text
    path = tmp_path / "h.csv"
    shown = [f"{round(p * 100, 1):g}%" for p in history_frame["probability"]]
    history_frame.assign(probability=shown).to_csv(path, sep=";", index=False)
    table = read_table(path)
    np.testing.assert_allclose(table.frame["probability"].astype(float), history_frame["probability"], atol=1e-12)
    assert check(path).exit_code == 0
