"""A corpus of hostile and mistaken inputs, each refused the same way (issue 16).

Every case is a scenario or a history spoilt in one way: a number that is not finite or is absurd,
a missing or misspelt key, a file too large or a name too long, a string full of escape sequences or
console markup, a cell that is not what its column needs, a file that is not a history. Each goes
through the command line (in-process, Typer's ``CliRunner``) twice, and each time the refusal must
be: exit status 2, exactly one line on standard error that starts with "error:", names the file and
the place (key, or row and column) and quotes nothing raw (no escape character reaches the
terminal), no traceback, nothing written to a new output folder, and, with ``--force`` over an
earlier run's results, those results left byte for byte as they were.

The rule is the project's own (README, "Commands"; DEVELOPERS.md, "Errors for users"), modelled on
Click's usage errors (exit status 2); common practice, no single source. All data here is invented.
A case may still be marked xfail (not strict) with the reason, while another branch fixes it.
"""

from __future__ import annotations

import shutil
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from simulator.cli import app

runner = CliRunner()


# ------------------------------------------------------------------------------------------------
# the valid inputs every case spoils


def _history_text() -> str:
    """Three years of invented daily forecasts, 2020-2022, outcomes drawn from the probabilities."""
    rng = np.random.default_rng(20270416)
    dates = np.arange(np.datetime64("2020-01-01"), np.datetime64("2023-01-01"))
    p = np.round(rng.beta(1.2, 2.5, len(dates)), 2)
    outcome = (rng.random(len(dates)) < p).astype(int)
    return "date,probability,outcome\n" + "".join(f"{d},{q:.2f},{o}\n" for d, q, o in zip(dates, p, outcome))


HISTORY = _history_text()

BASE = {
    "": {"name": '"Hostile inputs at Quillfen"', "currency": '"EUR"'},
    "history": {"path": '"history.csv"'},
    "decision": {"cutoffs": "[0.0, 1.0, 0.05]"},
    "costs": {"hit": "300", "false_alarm": "1800", "miss": "2500", "correct_negative": "0"},
    "simulation": {"replicates": "40", "seed": "11", "block_days": "3"},
}
# two forecasts of one column and the start of a price table (a price's case adds its line)
TWO = '[forecasts]\n"a" = "probability"\n"b" = "probability"\n[forecast_prices]\n'
OPERATIONS = '[operations]\ncrews_out_on = "acting"\nspoiled_on = "event"\nday_rate = 900\n'


def scenario_text(changes: dict | None = None, extra: str = "") -> str:
    """BASE with ``changes`` ({(section, key): raw TOML value, or None to leave the key out}) and
    ``extra`` TOML appended."""
    sections = {name: dict(keys) for name, keys in BASE.items()}
    for (section, key), value in (changes or {}).items():
        sections.setdefault(section, {})[key] = value
    lines = []
    for section, keys in sections.items():
        if section:
            lines.append(f"[{section}]")
        lines += [f"{key} = {value}" for key, value in keys.items() if value is not None]
    return "\n".join(lines) + "\n" + extra


def ops(**keys) -> str:
    return OPERATIONS + "".join(f"{k} = {v}\n" for k, v in keys.items())


def stress(name: str = '"a wetter year"', **keys) -> str:
    return f"[[stress]]\nname = {name}\n" + "".join(f"{k} = {v}\n" for k, v in keys.items())


def replace_row(index: int, row: str):
    """An edit that puts ``row`` in place of the data row ``index`` (0: the first after the header)."""
    def edit(text: str) -> str:
        lines = text.splitlines(keepends=True)
        lines[index + 1] = row + "\n"
        return "".join(lines)
    return edit


@dataclass
class Case:
    id: str
    fragments: tuple[str, ...]  # the file's name and the place, in the error line
    changes: dict = field(default_factory=dict)
    extra: str = ""
    scenario: str | bytes | None = None  # the whole scenario file, instead of BASE
    history: object = None  # an edit of the history's text, or the file's bytes or text
    args: tuple[str, ...] = ()
    xfail: str | None = None


def S(id, fragments, changes=None, extra="", **kw):  # noqa: N802 - a table's row maker
    return Case(id, ("s.toml", *fragments), changes or {}, extra, **kw)


def H(id, fragments, history, **kw):  # noqa: N802
    return Case(id, ("history.csv", *fragments), history=history, **kw)


LONG = "n" * 2_000_000

CASES = [
    # -- numbers in the scenario (item 3) -------------------------------------------------------
    S("cost nan", ("[costs] hit", "from -1e12 to 1e12", "nan"), {("costs", "hit"): "nan"}),
    S("cost inf", ("[costs] false_alarm", "from -1e12 to 1e12"), {("costs", "false_alarm"): "inf"}),
    S("cost 1e308", ("[costs] miss", "from -1e12 to 1e12"), {("costs", "miss"): "1e308"}),
    S("cost -inf", ("[costs] correct_negative",), {("costs", "correct_negative"): "-inf"}),
    S("cost -1e13", ("[costs] miss", "from -1e12 to 1e12"), {("costs", "miss"): "-1e13"}),
    S("cost a word", ("[costs] miss", "must be a number"), {("costs", "miss"): '"lots"'}),
    S("forecast price negative", ('[forecast_prices] "b"', "from 0 to 1e12", "(got -1)"), extra=TWO + '"b" = -1\n'),
    S("forecast price nan", ('[forecast_prices] "b"', "money per season", "nan"), extra=TWO + '"b" = nan\n'),
    S("forecast price 1e308", ('[forecast_prices] "b"', "from 0 to 1e12"), extra=TWO + '"b" = 1e308\n'),
    S("price of a forecast not listed", ("[forecast_prices]", '"bb" is not a forecast', 'did you mean "b"'),
      extra=TWO + '"bb" = 10\n'),
    S("escape sequence in a price's name", ("[forecast_prices]", "\\x1b[2J"), extra=TWO + '"\\u001b[2J" = 10\n'),
    S("cutoff step missing", ("[decision] cutoffs", "three numbers [from, to, step]"),
      {("decision", "cutoffs"): "[0.0, 1.0]"}),
    S("cutoff step inf", ("[decision] cutoffs", "three numbers"), {("decision", "cutoffs"): "[0.0, 1.0, inf]"}),
    S("cutoff step nan", ("[decision] cutoffs", "three numbers"), {("decision", "cutoffs"): "[0.0, 1.0, nan]"}),
    S("cutoff step wider than the range", ("[decision] cutoffs", "wider than the range"),
      {("decision", "cutoffs"): "[0.0, 0.5, 0.9]"}),
    S("cutoffs from above to", ("[decision] cutoffs", "0 <= from < to <= 1"), {("decision", "cutoffs"): "[0.6, 0.4, 0.01]"}),
    S("cutoff step negative", ("[decision] cutoffs", "positive"), {("decision", "cutoffs"): "[0.0, 1.0, -0.1]"}),
    S("cutoff step too fine", ("[decision] cutoffs", "too many"), {("decision", "cutoffs"): "[0.0, 1.0, 0.00001]"}),
    S("cutoff step uneven", ("[decision] cutoffs", "whole steps"), {("decision", "cutoffs"): "[0.0, 1.0, 0.03]"}),
    S("cutoffs four numbers", ("[decision] cutoffs", "three numbers"), {("decision", "cutoffs"): "[0.0, 1.0, 0.1, 5]"}),
    S("year 3000", ("[season] year", "from 1,900 to 2,200"), {("season", "year"): "3000"}),
    S("year 1800", ("[season] year", "from 1,900 to 2,200"), {("season", "year"): "1800"}),
    S("weekday monkey", ("[season] weekdays", '"monkey" is not a weekday'), {("season", "weekdays"): '["mon", "monkey"]'}),
    S("weekday twice", ("[season] weekdays", "listed twice"), {("season", "weekdays"): '["mon", "Monday"]'}),
    S("no weekday", ("[season] weekdays", "at least one weekday"), {("season", "weekdays"): "[]"}),
    S("month 13", ("[season] months", "from 1 to 12"), {("season", "months"): "[1, 13]"}),
    S("no month", ("[season] months", "at least one month"), {("season", "months"): "[]"}),
    S("month twice", ("[season] months", "listed twice"), {("season", "months"): "[4, 4]"}),
    S("holiday not a date", ("[season] holidays", "item 2", "is not a date"), {("season", "holidays"): '[2027-05-03, "soon"]'}),
    S("holiday of 100,000 characters", ("[season] holidays", "item 1", "(100,000 characters)"),
      {("season", "holidays"): '["' + "9" * 100_000 + '"]'}),
    S("too many holidays", ("[season] holidays", "a list of at most 10,000 entries"), {("season", "holidays"): "[" + ", ".join(["2027-05-03"] * 10_001) + "]"}),
    S("replicates 5", ("[simulation] replicates", "from 20 to 10,000,000"), {("simulation", "replicates"): "5"}),
    S("replicates 1e11", ("[simulation] replicates", "10,000,000"), {("simulation", "replicates"): "100000000000"}),
    S("workload too large", ("[simulation] replicates", "more than the 100,000,000 a run may hold"),
      {("simulation", "replicates"): "2000000", ("decision", "cutoffs"): "[0.0, 1.0, 0.01]"}),
    Case("workload too large from the command line", ("--replicates", "season costs"), args=("--replicates", "9000000")),
    S("seed negative", ("[simulation] seed", "from 0"), {("simulation", "seed"): "-1"}),
    S("block_days nan", ("[simulation] block_days", '"auto" or a number from 1 to 366'),
      {("simulation", "block_days"): "nan"}),
    S("block_days inf", ("[simulation] block_days", "from 1 to 366"), {("simulation", "block_days"): "inf"}),
    S("block_days half a day", ("[simulation] block_days", "from 1 to 366"), {("simulation", "block_days"): "0.5"}),
    S("block_days a word", ("[simulation] block_days", '"auto"'), {("simulation", "block_days"): '"fast"'}),
    S("window_days 1000", ("[simulation] window_days", "from 0 to 60"), {("simulation", "window_days"): "1000"}),
    S("reference unknown", ("[simulation] reference", '"never_act"'), {("simulation", "reference"): '"sometimes"'}),
    S("mode unknown", ("[simulation] mode", '"replay"'), {("simulation", "mode"): '"guess"'}),
    S("threshold nan", ("[history] threshold", "from -1e12 to 1e12"),
      {("history", "value_column"): '"outcome"', ("history", "threshold"): "nan", ("history", "side"): '"above"'}),
    S("threshold 1e300", ("[history] threshold",),
      {("history", "value_column"): '"outcome"', ("history", "threshold"): "1e300", ("history", "side"): '"above"'}),
    S("stress event_rate nan", ("[[stress]] table 1 event_rate", "at most 1,000"), extra=stress(event_rate="nan")),
    S("stress event_rate 0", ("[[stress]] table 1 event_rate", "above 0"), extra=stress(event_rate="0")),
    S("stress event_rate 1e308", ("[[stress]] table 1 event_rate",), extra=stress(event_rate="1e308")),
    S("stress multiplier inf", ("[[stress]] table 1 cost_multipliers.miss", "from 0 to 1,000"),
      extra=stress(cost_multipliers="{ miss = inf }")),
    S("stress multiplier negative", ("[[stress]] table 1 cost_multipliers.miss", "from 0 to 1,000"),
      extra=stress(cost_multipliers="{ miss = -1 }")),
    S("stress multiplier 1e6", ("[[stress]] table 1 cost_multipliers.miss",), extra=stress(cost_multipliers="{ miss = 1e6 }")),
    S("stress cost nan", ("[[stress]] table 1 costs.miss", "from -1e12 to 1e12"), extra=stress(costs="{ miss = nan }")),
    S("stress noise inf", ("[[stress]] table 1 noise", "from 0 to 10"), extra=stress(noise="inf")),
    S("stress skill 2", ("[[stress]] table 1 skill", "from 0 to 1"), extra=stress(skill="2")),
    S("stress block_days 1e9", ("[[stress]] table 1 block_days", "from 1 to 366"), extra=stress(block_days="1e9")),
    S("stress worst_seasons 0", ("[[stress]] table 1 worst_seasons",), extra=stress(worst_seasons="0")),
    S("stress changes nothing", ("[[stress]] table 1", "needs at least one change"), extra=stress()),
    S("stress named twice", ("two [[stress]] tables",), extra=stress(event_rate="2") + stress(skill="0.5")),
    S("operations day_rate nan", ("[operations] day_rate", "from 0 to 1e12"), extra=ops().replace("900", "nan")),
    S("operations day_rate 1e308", ("[operations] day_rate",), extra=ops().replace("900", "1e308")),
    S("operations standby_rate negative", ("[operations] standby_rate", "from 0"), extra=ops(standby_rate="-5")),
    S("operations spoilage inf", ("[operations] spoilage_cost",), extra=ops(spoilage_cost="inf")),
    S("operations work 1e308", ("[operations] work", "at most 10,000,000"), extra=ops(work="1e308")),
    S("operations work 0", ("[operations] work", "above 0"), extra=ops(work="0")),
    S("operations a million crews", ("[operations] crews", "from 1 to 1,000"), extra=ops(crews="1000000")),
    S("operations overtime inf", ("[operations] overtime_multiple", "from 1 to 100"), extra=ops(overtime_multiple="inf")),
    S("operations standby days 0", ("[operations] max_standby_days",), extra=ops(max_standby_days="0")),
    S("operations workday monkey", ("[operations] workdays", '"monkey" is not a weekday'),
      extra=ops(workdays='["mon", "monkey"]')),
    S("operations deadline a word", ("[operations] deadline", "a date written YYYY-MM-DD"), extra=ops(deadline='"soon"')),
    S("operations work lost 2", ("[operations] work_lost_when_spoiled", "from 0 to 1"), extra=ops(work_lost_when_spoiled="2")),
    S("operations crews_out_on unknown", ("[operations] crews_out_on", '"acting"'),
      extra=ops().replace('"acting"', '"sometimes"')),
    S("operations day_rate missing", ("[operations] day_rate", "required"), extra=ops().replace("day_rate = 900\n", "")),
    S("operations multiplier nan", ("[[stress]] table 1 operations_multipliers.day_rate",),
      extra=ops() + stress(operations_multipliers="{ day_rate = nan }")),
    # -- the scenario's structure ----------------------------------------------------------------
    S("unknown top-level key", ('unknown key "nmae"', 'did you mean "name"'), extra="", changes={("", "nmae"): '"x"'}),
    S("misspelt section", ('unknown key "cost"',), extra="[cost]\nhit = 1\n"),
    S("name missing", ('"name"', "required"), {("", "name"): None}),
    S("cost missing", ("[costs] miss", "required"), {("costs", "miss"): None}),
    S("not TOML", ("not valid TOML",), scenario='name = "x"\n[costs\nhit = 1\n'),
    S("arrays nested 100,000 deep", ("nested too deeply",), scenario='name = "x"\na = ' + "[" * 100_000 + "]" * 100_000),
    S("tables nested 50,000 deep", ("nested too deeply",), scenario='name = "x"\na = ' + "{b = " * 50_000 + "1" + "}" * 50_000),
    S("binary scenario", ("not a text file",), scenario=bytes(range(256)) * 4),
    S("empty scenario", ('"name"', "required"), scenario=""),
    S("outcome two ways", ("[history]", "not both"),
      {("history", "value_column"): '"outcome"', ("history", "outcome_column"): '"outcome"'}),
    S("threshold without side", ("[history]", "side"),
      {("history", "value_column"): '"outcome"', ("history", "threshold"): "0.5"}),
    S("sites without a site column", ('[sites."North"]', "site_column"), extra='[sites."North".costs]\nmiss = 3000\n'),
    # -- sizes (item 5) ----------------------------------------------------------------------------
    S("scenario of 2 MB", ("1,000,000 bytes",), extra="# " + "padding " * 250_000 + "\n"),
    S("name of 2 million characters", ("1,000,000 bytes",), {("", "name"): f'"{LONG}"'}),
    S("name of 900,000 characters", ('"name"', "at most 200 characters", "(900,000 characters)"),
      {("", "name"): f'"{LONG[:900_000]}"'}),
    S("event name too long", ("[event] name", "at most 200 characters"), {("event", "name"): '"' + "e" * 300 + '"'}),
    S("currency too long", ("currency", "at most 40 characters"), {("", "currency"): '"' + "E" * 100 + '"'}),
    S("stress name too long", ("[[stress]] table 1 name", "at most 200 characters"), extra=stress(name='"' + "s" * 500 + '"', skill="0.5")),
    S("column name too long", ("[history] probability_column", "at most 200"),
      {("history", "probability_column"): '"' + "p" * 1000 + '"'}),
    S("site name too long", ("[sites]", "at most 200 characters"),
      {("history", "site_column"): '"site"'}, extra=f'[sites."{"y" * 300}".costs]\nmiss = 1\n'),
    S("too many stress tables", ("stress", "at most 100 [[stress]] tables"),
      extra="".join(stress(name=f'"case {i}"', skill="0.5") for i in range(120))),
    # -- untrusted strings in what errors quote (items 8 and 11) -------------------------------
    S("escape sequence in an unknown key", ("unknown key", "\\x1b]0;pwned\\x07"), changes={("", '"\\u001b]0;pwned\\u0007"'): "1"}),
    S("console markup in an unknown key", ('unknown key "[/bold]"',), changes={("", '"[/bold]"'): "1"}),
    S("escape sequence in a weekday", ("[season] weekdays", "\\x1b[2J"), {("season", "weekdays"): '["\\u001b[2J"]'}),
    Case("escape sequence in a missing column", ("history.csv", 'no column "\\x1b]0;x\\x07"'),
         changes={("history", "probability_column"): '"\\u001b]0;x\\u0007"'}),
    H("escape sequence in a header", ('no column "date"', "\\x1b[2J"), lambda t: t.replace("date,", "\x1b[2J,", 1)),
    H("escape sequence in a cell", ("row 5", 'column "probability"', "\\x1b]0;pwn\\x07"),
      replace_row(3, "2020-01-04,\x1b]0;pwn\x07,1")),
    H("a cell of 5 MB", ("row 5", 'column "probability"', "(5,000,001 characters)"),
      replace_row(3, "2020-01-04," + "9" * 5_000_000 + "x,1")),
    H("not a table", ("a single column", "not a history table"),
      "root:x:0:0:root:/root:/bin/bash\ndaemon:x:1:1:daemon:/usr/sbin:/usr/sbin/nologin\n"),
    # -- histories that are refused today --------------------------------------------------------
    Case("history missing", ("nowhere.csv", "no such history file"), changes={("history", "path"): '"nowhere.csv"'}),
    Case("history a folder", ("folder.csv", "is a folder"), changes={("history", "path"): '"folder.csv"'}),
    H("history empty", ("empty",), ""),
    H("history header only", ("no rows",), "date,probability,outcome\n"),
    H("probability column missing", ('no column "probability"',), lambda t: t.replace("probability", "prob", 1)),
    H("date not a date", ("row 5", 'column "date"', "'5th Jan 2020' is not a date"), replace_row(3, "5th Jan 2020,0.3,1")),
    H("probability a word", ("row 6", 'column "probability"', "'high' is not a number"), replace_row(4, "2020-01-05,high,1")),
    H("probability 1.5", ("row 6", 'column "probability"'), replace_row(4, "2020-01-05,1.5,1")),
    H("probability missing", ("row 6", 'column "probability"', "missing"), replace_row(4, "2020-01-05,,1")),
    H("outcome 2", ("row 6", 'column "outcome"', "yes/no outcome"), replace_row(4, "2020-01-05,0.3,2")),
    H("outcome a word", ("row 6", 'column "outcome"', "'maybe'"), replace_row(4, "2020-01-05,0.3,maybe")),
    H("date twice", ("row 6", 'column "date"'), replace_row(4, "2020-01-04,0.3,1")),
    H("dates out of order", ('column "date"',), replace_row(4, "2019-06-01,0.3,1")),
    H("history binary", ("cannot be read",), bytes(range(256)) * 100),
    H("semicolons read with a comma set", ("semicolons", 'separator = ";"'), lambda t: t.replace(",", ";"),
      changes={("history", "separator"): '","'}),
    H("latin-1 text", ("history.csv",), lambda t: (t.replace("date,", "datum_é,", 1)).encode("latin-1")),
    Case("history given on the command line is missing", ("elsewhere.csv", "no such history file"),
         args=("--history", "elsewhere.csv")),
    Case("cluster address without a port", ("cluster tcp://127.0.0.1:notaport",),
         args=("--cluster", "tcp://127.0.0.1:notaport")),
    # -- histories the spreadsheet branch refuses (item 4) --------------------------------------
    H("a date centuries after the rest", ('column "date"', "years from", "check the year"),
      lambda t: t + "2301-01-01,0.3,1\n"),
    # refused by the schema, before the history is read: the scenario names one column twice
    Case("one column as probability and outcome", ("[history]", 'both name column "probability"'),
         changes={("history", "outcome_column"): '"probability"'}),
    Case("threshold on the probability itself", ("[history]", 'both name column "probability"'),
         changes={("history", "value_column"): '"probability"', ("history", "threshold"): "0.5",
                  ("history", "side"): '"above"'}),
]


# ------------------------------------------------------------------------------------------------
# running them


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture(scope="module")
def earlier_results(tmp_path_factory) -> Path:
    """A finished run's result set, as a user's earlier run would have left it."""
    folder = tmp_path_factory.mktemp("earlier")
    (folder / "history.csv").write_text(HISTORY)
    (folder / "s.toml").write_text(scenario_text())
    out = folder / "results"
    result = runner.invoke(app, ["run", str(folder / "s.toml"), "--out", str(out), "--quiet", "--workers", "1"])
    assert result.exit_code == 0, result.output
    return out


def _write_inputs(case: Case, folder: Path) -> Path:
    history = case.history
    if callable(history):
        history = history(HISTORY)
    history = HISTORY if history is None else history
    path = folder / "history.csv"
    path.write_bytes(history) if isinstance(history, bytes) else path.write_text(history, encoding="utf-8")
    (folder / "folder.csv").mkdir()
    scenario = case.scenario if case.scenario is not None else scenario_text(case.changes, case.extra)
    target = folder / "s.toml"
    target.write_bytes(scenario) if isinstance(scenario, bytes) else target.write_text(scenario, encoding="utf-8")
    return target


def _assert_refused(result, case: Case) -> None:
    assert "Traceback" not in result.output, result.output[-2000:]
    assert result.exit_code == 2, (result.exit_code, result.output[-2000:])
    assert isinstance(result.exception, SystemExit), result.exception
    assert len(result.stderr.splitlines()) == 1, result.stderr[:2000]  # not even a blank line
    message = result.stderr.strip()
    assert message.startswith("error: "), message[:2000]
    assert "\x1b" not in result.output and "\x07" not in result.output
    assert len(message) < 700, f"{len(message)} characters: {message[:300]}"
    for fragment in case.fragments:
        assert fragment in message, f"{fragment!r} not in {message!r}"


@pytest.mark.parametrize("case", [pytest.param(c, id=c.id, marks=[pytest.mark.xfail(strict=False, reason=c.xfail)]
                                               if c.xfail else []) for c in CASES])
def test_hostile_input_is_refused_in_one_line_and_nothing_is_written(case, tmp_path, earlier_results, monkeypatch):
    monkeypatch.chdir(tmp_path)  # a relative --history is looked for here
    scenario = _write_inputs(case, tmp_path)
    fresh = tmp_path / "out"
    result = runner.invoke(app, ["run", str(scenario), "--out", str(fresh), "--workers", "1", *case.args])
    _assert_refused(result, case)
    assert not fresh.exists()

    earlier = tmp_path / "earlier"
    shutil.copytree(earlier_results, earlier)
    before = _snapshot(earlier)
    result = runner.invoke(app, ["run", str(scenario), "--out", str(earlier), "--force", "--workers", "1", *case.args])
    _assert_refused(result, case)
    assert _snapshot(earlier) == before

    if case.history is not None:  # the same history, checked without a run
        _assert_refused(runner.invoke(app, ["check", "history.csv", "--scenario", str(scenario)]), case)


def test_results_already_in_the_folder_are_refused_without_force_and_left_as_they_were(tmp_path, earlier_results):
    (tmp_path / "history.csv").write_text(HISTORY)
    (tmp_path / "s.toml").write_text(scenario_text())
    earlier = tmp_path / "earlier"
    shutil.copytree(earlier_results, earlier)
    before = _snapshot(earlier)
    result = runner.invoke(app, ["run", str(tmp_path / "s.toml"), "--out", str(earlier), "--workers", "1"])
    _assert_refused(result, Case("results exist", ("earlier", "--force")))
    assert _snapshot(earlier) == before


def test_the_corpus_covers_at_least_eighty_cases_of_every_kind():
    # issue 16, "Tests": a table-driven corpus of at least 80 cases across the kinds of the issue
    assert len(CASES) >= 80
    assert len({c.id for c in CASES}) == len(CASES)


# ------------------------------------------------------------------------------------------------
# hostile names in a run that succeeds (items 8 and 9)

NAMES = {
    ("", "name"): r'"Quillfen [/bold] \u001b]0;retitled\u0007 [red]works"',
    ("", "currency"): r'"EUR [/] \u001b[2J"',
    ("event", "name"): r'"dry $\\foo$ day [/bold]"',
    ("decision", "action"): r'"go [bold]out\u001b[31m"',
}



def _run_plain(tmp_path, text: str, out):
    """``gonogo run`` of scenario ``text`` into ``out``: it succeeds and prints no control character."""
    (tmp_path / "s.toml").write_text(text)
    result = runner.invoke(app, ["run", str(tmp_path / "s.toml"), "--out", str(out), "--workers", "1"],
                           env={"COLUMNS": "200"})
    assert result.exit_code == 0, result.output[-3000:]
    assert "\x1b" not in result.output and "\x07" not in result.output
    return result

def test_names_full_of_markup_and_escapes_print_as_plain_text_and_draw_as_plain_text(tmp_path):
    # before: "[/bold]" in a name or a stress case's name crashed the headline (rich's MarkupError),
    # escape sequences reached the terminal raw, and "$\foo$" stopped the figures (matplotlib's
    # mathtext parser); now each is printed and drawn as the characters it is
    (tmp_path / "history.csv").write_text(HISTORY)
    changes = {**NAMES, ("simulation", "replicates"): "40"}
    text = scenario_text(changes, stress(name=r'"wet [/bold] $\\bar$ \u001b[5m"', event_rate="1.5"))
    out = tmp_path / "out"
    result = _run_plain(tmp_path, text, out)
    assert "Quillfen [/bold] \\x1b]0;retitled\\x07 [red]works" in result.stdout
    assert "wet [/bold] $\\bar$ \\x1b[5m" in result.stdout
    assert "dry $\\foo$ day [/bold]" in result.stdout
    assert (out / "figures" / "stress.png").exists() and (out / "report.html").exists()



def test_forecast_names_full_of_markup_name_stress_winners_as_plain_text(tmp_path):
    # the names of [forecasts] reach the stress headlines (which forecast wins each case): printed
    # as the characters they are in the terminal and escaped in the report
    (tmp_path / "history.csv").write_text(HISTORY)
    names = (r'"ours [/bold] \u001b[31m <b>x</b>"', r'"theirs $\\foo$ \u0007"')
    text = scenario_text({("history", "probability_column"): None},
                         stress(event_rate="1.5") + f"[forecasts]\n{names[0]} = \"probability\"\n"
                         f"{names[1]} = \"probability\"\n")
    out = tmp_path / "out"
    result = _run_plain(tmp_path, text, out)
    assert "cost the same here" in result.stdout  # one column under two names: no winner
    assert "ours [/bold] \\x1b[31m <b>x</b>" in result.stdout
    report = (out / "report.html").read_text()
    assert "<b>x</b>" not in report and "&lt;b&gt;x&lt;/b&gt;" in report


def test_a_python_warning_prints_as_one_line_without_a_source_path(tmp_path, monkeypatch):
    # issue 16 item 7: numpy's "RuntimeWarning: invalid value encountered in divide" reached the
    # terminal with the path and line of numpy's source, and the line of code itself
    import warnings

    from simulator import cli
    from simulator.inputs.errors import InputError

    def warn_then_fail(*args, **kwargs):
        np.seterr(all="warn")
        np.array([0.0]) / np.array([0.0])
        warnings.warn("a stray \x1b[2J warning", UserWarning, stacklevel=1)
        raise InputError("s.toml [costs]: stop here")

    monkeypatch.setattr(cli, "run", warn_then_fail)
    (tmp_path / "history.csv").write_text(HISTORY)
    (tmp_path / "s.toml").write_text(scenario_text())
    result = runner.invoke(app, ["run", str(tmp_path / "s.toml"), "--out", str(tmp_path / "out")])
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert lines == ["warning: invalid value encountered in divide", "warning: a stray \\x1b[2J warning",
                     "error: s.toml [costs]: stop here"]
