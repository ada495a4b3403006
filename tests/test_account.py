"""One account of each run: the terminal headline, the report's first screen and summary.json agree.

The runs here are the invented demo and its operating-rules scenario (demo data only); the checks
are of consistency between outputs, plus a few identities with their sources beside them.
Rounding to three significant figures for a reader is common practice (no single source).
"""

from __future__ import annotations

import json
import re
from html import unescape
from pathlib import Path

import numpy as np
import pytest
from rich.console import Console

from simulator import read_scenario, run
from simulator.account.findings import account, season_name, seasons_text
from simulator.notation.prose import money, share
from simulator.account.terminal import _headline
from simulator.demo.generator import write_demo_files
from simulator.account.outputs import render_files, summary

ROOT = Path(__file__).resolve().parents[1]
# basis words that carry a fixed percentage: "90% of seasons", "95% of seasons", "within 1%"
FIXED_PERCENTAGES = {"90%", "95%", "1%", "5%"}


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("account-demo")
    return run(read_scenario(write_demo_files(folder)), replicates=300)


@pytest.fixture(scope="module")
def rules():
    return run(read_scenario(ROOT / "scenarios" / "line_marking_rules.toml"), replicates=200)


@pytest.fixture(scope="module")
def sites():
    return run(read_scenario(ROOT / "scenarios" / "gritting_depots.toml"), replicates=40)


def _leaves(value):
    if isinstance(value, dict):
        for v in value.values():
            yield from _leaves(v)
    elif isinstance(value, list):
        for v in value:
            yield from _leaves(v)
    else:
        yield value


def _spellings(s: dict) -> set[str]:
    """Every way the documented formatters write a number of summary.json (the account aside)."""
    numbers = {k: v for k, v in s.items() if k != "account"}
    out: set[str] = set()
    for v in _leaves(numbers):
        if isinstance(v, str):
            out.add(v)
        elif isinstance(v, bool) or v is None:
            continue
        elif isinstance(v, int | float):
            for x in (v, -v):
                out |= {money(x, ""), f"{x:.2f}", f"{x:.1f}", share(x)}
                if float(x).is_integer():
                    out |= {f"{int(x):,}", str(int(x))}
            out.add(season_name(int(v), s["scenario"]["season_months"]) if float(v).is_integer() else "")
    return out


TOKEN = re.compile(r"\d{4}-\d{2}-\d{2}|\d{4}/\d{2}|(?:over|under) \d+%|-?\d[\d,]*(?:\.\d+)?%?")


def _unexplained(text: str, s: dict) -> list[str]:
    known = _spellings(s)
    return [t for t in TOKEN.findall(text) if t not in known and t not in FIXED_PERCENTAGES]


def _headline_text(result) -> str:
    console = Console(width=400, record=True, file=open("/dev/null", "w"))
    console.print(_headline(result))
    return console.export_text()


def _advice_text(html: str, quoted: list[str] = ()) -> str:
    """The text of the report's recommendation section, less the run's warnings (quoted verbatim)."""
    section = html.split('<section id="advice">', 1)[1].split("</section>", 1)[0]
    text = unescape(re.sub(r"<[^>]+>", " ", section))
    for warning in quoted:
        text = text.replace(warning, "")
    return text


@pytest.mark.parametrize("name", ["demo", "rules", "sites"])
def test_every_number_of_the_headline_and_the_recommendation_is_in_summary_json(name, request):
    result = request.getfixturevalue(name)
    s = summary(result)
    files = render_files(result)
    assert json.loads(files["summary.json"]) == json.loads(json.dumps(s))
    headline = _headline_text(result)
    advice = _advice_text(files["report.html"].decode(), s["warnings"])
    assert _unexplained(headline, s) == []
    assert _unexplained(advice, s) == []
    # the report's sentences are the account's, which summary.json carries
    for sentence in account(s).sentences:
        assert " ".join(sentence.split()) in " ".join(advice.split())
    assert [f["key"] for f in s["account"]] == [f.key for f in account(s).findings]


def test_money_for_a_reader_has_three_significant_figures():
    # common practice: a season's 90% range spans tens of thousands, so its last digits mean nothing
    assert money(503106.2, "EUR") == "503,000 EUR"
    assert money(78720, "EUR") == "78,700 EUR"
    assert money(-3600, "EUR") == "-3,600 EUR"
    assert money(1134, "EUR") == "1,130 EUR"
    assert money(675.4, "EUR") == "675 EUR"


def test_a_season_across_the_new_year_is_written_with_both_years():
    winter = [10, 11, 12, 1, 2, 3]
    assert season_name(2023, winter) == "2023/24"
    assert season_name(1999, winter) == "1999/00"
    assert season_name(2023, [4, 5, 6, 7, 8, 9, 10]) == "2023"
    assert seasons_text("2014-10-01", "2023-03-31", winter) == "2014/15 to 2022/23"
    assert seasons_text("2017-04-03", "2024-10-31", list(range(4, 11))) == "2017 to 2024"


def test_one_range_of_cutoffs_that_beat_the_reference_and_none_that_says_nothing(demo):
    s = summary(demo)
    beats = account(s).get("beats_reference")
    if s["confident_break_even"]:
        assert "95%" in beats.text and "on average" not in beats.text
    every = dict(s, confident_break_even=[], break_even=[[0.0, 1.0]])
    assert account(every).get("beats_reference") is None
    none = dict(s, confident_break_even=[], break_even=[])
    assert "keep to the reference rule" in account(none).get("beats_reference").sentence


def test_under_operating_rules_every_figure_comes_from_the_rules(rules):
    s = summary(rules)
    model, never, always, perfect = (s["strategies"][k]["mean"] for k in ("model", "never_act", "always_act",
                                                                             "perfect"))
    # relative value, E_climate - E_forecast over E_climate - E_perfect, with climate the cheaper fixed
    # rule: Richardson (2000), QJRMS 126, 649-667, eq. for V; here on the rules' season costs
    climate = min(never, always)
    assert s["relative_value"] == pytest.approx((climate - model) / (climate - perfect))
    assert s["recommended"]["historical_cost"] is None  # the fixed cost table prices nothing
    html = render_files(rules)["report.html"].decode()
    assert "the rules below price every season" in html
    assert "priced by the cell of the classification matrix" not in html
    assert "not fully reliable" not in html
    # selection.csv: the cost per occasion is over the occasions it was priced on
    for period in ("training", "validation"):
        record = s["selection"]["validation"][period]
        assert record["cost_per_occasion"] == pytest.approx(record["cost"] / record["n_priced"])


def test_lateness_is_on_the_headline_the_first_screen_and_the_slider(rules):
    s = summary(rules)
    here = s["operations"]["at_recommended_cutoff"]["share_late"]
    there = s["operations"]["baselines"][s["reference"]]["share_late"]
    headline = _headline_text(rules)
    assert f"in {share(here)} of seasons" in headline and f"reference rule: {share(there)}" in headline
    html = render_files(rules)["report.html"].decode()
    advice = _advice_text(html)
    assert "Seasons finished late" in advice and share(here) in advice and share(there) in advice
    assert 'data-field="share_late"' in html
    assert "share_late" in rules.table.columns


def test_completion_curve_by_day_reads_the_share_on_time_at_the_deadline(rules):
    from simulator.account.report_sections import _completion_by_day

    dates, shares, reference = _completion_by_day(rules)
    deadline = summary(rules)["operations"]["deadline"]
    on_time = shares[dates.index(deadline)]
    s = summary(rules)
    late = s["operations"]["at_recommended_cutoff"]["share_late"]
    assert on_time == pytest.approx(1 - late)
    reference_late = s["operations"]["baselines"][s["reference"]]["share_late"]
    assert reference[dates.index(deadline)] == pytest.approx(1 - reference_late)
    assert np.all(np.diff(shares) >= 0)


def test_settings_are_read_back_in_words_and_a_rate_is_not_money(rules):
    from simulator.account.scenario_words import _rules_read_back

    scenario = rules.scenario.model_copy(update={"stress": ()})
    pairs = dict(_rules_read_back(scenario)[0][1])
    assert pairs["crews go out"] == "when we send the crews out"
    assert "as_in_file" not in pairs["the safety stop reads"]
    stressed = read_scenario(ROOT / "scenarios" / "line_marking_stress.toml")
    for _, case in _rules_read_back(stressed):
        for key, value in case:
            if key == "event rate":
                assert "EUR" not in value and "times as often" in value


def test_the_report_names_files_not_folders_and_lists_every_file_beside_it(demo, tmp_path):
    files = render_files(demo)
    html = files["report.html"].decode()
    for name in files:
        if not name.startswith("figures/") and name != "report.html":
            assert name in html.split("Beside this report", 1)[1]
    assert str(Path(demo.history.label).parent) not in json.dumps(summary(demo)["warnings"])


def test_a_warning_names_the_history_file_never_its_folder(tmp_path):
    folder = tmp_path / "somewhere" / "private"
    folder.mkdir(parents=True)
    scenario = read_scenario(write_demo_files(folder))
    history = Path(scenario.history.path if Path(scenario.history.path).is_absolute()
                   else folder / scenario.history.path)
    lines = history.read_text().splitlines(keepends=True)
    history.write_text("".join(lines[:150] + lines[154:]))  # a gap of four dates in May
    result = run(scenario, replicates=40)
    assert any(str(folder) in w for w in result.warnings)  # the terminal may say where it is
    s = summary(result)
    html = render_files(result)["report.html"].decode()
    assert s["warnings"] and all(str(folder) not in w for w in s["warnings"])
    assert history.name in s["warnings"][0]
    assert str(folder) not in html


def test_a_verdict_is_stated_first(demo):
    s = summary(demo)
    s["verdict"] = {"use_forecast": False, "best_rule_without_forecast": "always_act",
                    "saving_against_best_rule": {"mean": 10.0, "p05": -5.0, "p95": 20.0, "prob_saving": 0.6},
                    "reason": "the saving is no larger than choosing among many cutoffs gives a useless forecast"}
    told = account(s)
    assert told.first[0].key == "verdict"
    assert "always send the crews out" in told.first[0].text
    assert told.sentences[0].startswith("Keep to the rule that ignores it")
    assert "because the saving is no larger" in told.sentences[0]
    assert told.get("cutoff").label == "Cheapest cutoff (not advised)"
    assert "not advised" in told.get("cutoff").sentence
