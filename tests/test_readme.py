"""What the README shows, a test runs: the demo's headline and the operating-rules cutoff.

The README's numbers are the demo's own output (invented data, demo only); these tests fail when a
change moves them, so the README is updated in the same commit.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from rich.console import Console

from simulator import read_scenario, run
from simulator.account.whatif_rules import page_figures, rules_whatif_data
from simulator.notation.prose import money
from simulator.account.terminal import _headline
from simulator.demo.generator import write_demo_files

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _readme_block(after: str) -> list[str]:
    start = README.index(after)
    block = README[start:].split("```text\n", 1)[1].split("```", 1)[0]
    return [line.rstrip() for line in block.splitlines()]


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    return run(read_scenario(write_demo_files(tmp_path_factory.mktemp("demo"))))


def test_readme_shows_the_demo_headline_as_the_demo_prints_it(demo_run, tmp_path):
    result = demo_run
    console = Console(width=100, record=True, file=open(tmp_path / "out.txt", "w"))
    console.print(_headline(result))
    printed = [line.rstrip() for line in console.export_text().splitlines()]
    shown = _readme_block("`make demo` (or `.venv/bin/gonogo demo`) prints:")
    table = [line for line in printed if line.strip()]
    assert shown[: len(table)] == table


@pytest.fixture(scope="module")
def rules_run():
    return run(read_scenario(ROOT / "scenarios" / "line_marking_rules.toml"))


def test_readme_quotes_the_operating_rules_cutoff(rules_run):
    quoted = "0.38"
    assert re.search(rf"falls from 0\.80 to about \*\*{re.escape(quoted)}\*\*", README)
    assert f"{rules_run.decision.recommended_cutoff:.2f}" == quoted


def test_readme_quotes_the_rules_what_if_as_the_page_computes_it(rules_run):
    base = page_figures(rules_whatif_data(rules_run))
    dearer = page_figures(rules_whatif_data(rules_run), {"day_rate": 950.0})
    quoted = (f"a day rate of 950 EUR instead of 800 moves the recommended cutoff from {base['cutoff']:.2f} to "
              f"{dearer['cutoff']:.2f} and its expected season cost from {money(base['mean'], '')} to "
              f"{money(dearer['mean'], 'EUR')}")
    assert quoted in " ".join(README.split())


def test_readme_python_example_runs(monkeypatch):
    monkeypatch.chdir(ROOT)
    blocks = re.findall(r"```python\n(.*?)```", README, flags=re.S)
    assert blocks
    for block in blocks:
        exec(compile(block, "README.md", "exec"), {})


@pytest.fixture(scope="module")
def stress_run():
    return run(read_scenario(ROOT / "scenarios" / "line_marking_stress.toml"))


def test_readme_quotes_the_stress_headline_as_the_run_says_it(stress_run):
    result = stress_run
    wetter = next(case for case in result.stress if case.name == "a wetter year")
    headline = " ".join(wetter.views[0].headline.split())
    quoted = " ".join(re.search(r'\*"(Keep the cutoff.*?)"\*', README, flags=re.S).group(1).split())
    assert headline.startswith(quoted)


def test_readme_path_from_a_spreadsheet_runs_as_written(tmp_path, monkeypatch):
    """The README's init, check and run commands, in order, on the demo's history, after the four
    costs are filled in (with the demo's own costs)."""
    import shlex

    from typer.testing import CliRunner

    from simulator.cli import app

    section = README[README.index("## Your own history"):README.index("## Commands")]
    commands = [shlex.split(line)[1:] for block in re.findall(r"```sh\n(.*?)```", section, flags=re.S)
                for line in block.splitlines() if line.startswith(".venv/bin/gonogo ")]
    assert [c[0] for c in commands] == ["init", "check", "run"]
    monkeypatch.chdir(tmp_path)
    write_demo_files(tmp_path / "outputs" / "demo")
    runner = CliRunner()
    made = runner.invoke(app, commands[0])
    assert made.exit_code == 0, made.output
    scenario = tmp_path / commands[0][2]
    demo_costs = {"hit": 2400, "false_alarm": 7400, "miss": 3800, "correct_negative": 3800}  # README's demo
    text = scenario.read_text()
    for key, value in demo_costs.items():
        text = re.sub(rf'^{key} = "fill in"', f"{key} = {value}", text, flags=re.M)
    scenario.write_text(text)
    for command in commands[1:]:
        extra = ["--replicates", "20"] if command[0] == "run" else []
        result = runner.invoke(app, command + extra)
        assert result.exit_code == 0, result.output
    assert (tmp_path / "outputs" / scenario.stem / "report.html").exists()


def test_readme_quotes_the_bad_season_choice_as_the_run_makes_it(stress_run):
    from simulator.notation.prose import money
    from simulator.account.outputs import summary

    objectives = summary(stress_run)["objectives"]
    mean, tail = objectives["mean"], objectives["shortfall10"]
    quoted = (f"the cutoff moves from **{mean['cutoff']:.2f}** to **{tail['cutoff']:.2f}**,\n"
              f"a season costs {money(tail['mean_cost'] - mean['mean_cost'], 'EUR')} more on average, and the worst "
              f"10% of seasons cost {money(mean['shortfall10_cost'] - tail['shortfall10_cost'], 'EUR')} less each.")
    assert quoted in README


def test_readme_quotes_which_cost_estimate_matters_as_the_demo_finds_it(demo_run):
    from simulator.notation.prose import money

    top = demo_run.sensitivity.costs[0]
    assert top.key == "costs.false_alarm"
    section = README[README.index("### Which cost estimate matters"):README.index("### Another trade")]
    flat = " ".join(section.split())
    for value in (top.low.mean_saving, top.high.mean_saving, top.verdict_switch.down, top.verdict_switch.up,
                  top.band_switch.down, top.band_switch.up):
        assert money(value, "EUR").removesuffix(" EUR") in flat, value
    assert f"falls to {top.low.cutoff:.2f}" in flat and f"rises to {top.high.cutoff:.2f}" in flat


def test_readme_quotes_the_split_of_the_spread_as_the_run_makes_it(stress_run):
    from simulator.notation.prose import share

    spread = stress_run.cost_spread
    quoted = (f"at its cutoff of {stress_run.decision.recommended_cutoff:.2f}, **{share(spread.share_weather)}** of "
              f"the variance of the season cost comes from the weather\nand **{share(spread.share_costs)}** from "
              "that range")
    assert quoted in README
