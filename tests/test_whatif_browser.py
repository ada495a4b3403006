"""The meeting what-if in a real browser: costs typed into the report's fields, checked against a run.

The page (templates/whatif.html.j2) reprices the run's kept classification counts in JavaScript. The
reference is a second run of the same history, seed and mean run length (``block_days`` fixed) with
the typed costs (``run_history``): the
expected costs and the cheapest cutoff by expected cost must agree exactly (up to floating-point
rounding), the range and the share of seasons that save must equal the same statistics of that
run's first 1,000 seasons exactly, and lie within the sampling error of all its seasons: a sample
quantile of n = 1,000 draws lies between the population's quantiles at q -/+ 4 sqrt(q(1-q)/n)
(the binomial bound on order statistics, common practice; e.g. Conover 1999, Practical
Nonparametric Statistics, section 3.2, from memory), and a sample share within 4 standard errors.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from conftest import EXAMPLE_COSTS, scenario_toml
from realdata import seattle_rain
from simulator.account.whatif import SAMPLE
from simulator.cli import app
from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario import scenario_from_text
from simulator.pricing.decision import OBJECTIVE_COLUMN, lowest, objective_cost
from simulator.run import run_history
from test_browser import _open, page  # noqa: F401  (the browser fixture)
from test_whatif_rules import check_against_run

REPLICATES, SEED = 2000, 5
TYPED = {"hit": 500, "false_alarm": 1200, "miss": 4000, "correct_negative": 100}


def _toml(costs, objective="mean") -> str:
    return scenario_toml(costs=costs, history={"path": "history.csv"},
                         decision={"objective": objective},
                         simulation={"replicates": REPLICATES, "seed": SEED, "reference": "always_act",
                                     "block_days": 5})


def _report(folder: Path, objective: str = "mean") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    seattle_rain().to_csv(folder / "history.csv", index=False)
    (folder / "scenario.toml").write_text(_toml(EXAMPLE_COSTS, objective), encoding="utf-8")
    result = CliRunner().invoke(app, ["run", str(folder / "scenario.toml"), "--out", str(folder / "out"),
                                      "--quiet", "--workers", "1"])
    assert result.exit_code == 0, result.output
    return folder / "out" / "report.html"


def _reference_run(costs, objective="mean"):
    scenario = scenario_from_text(_toml(costs, objective), label="scenario.toml")
    return run_history(scenario, history_from_frame(seattle_rain(), scenario, label="history.csv"))


def _type(page, costs) -> None:
    page.evaluate(f"""(() => {{
        const costs = {dict((k, str(v)) for k, v in costs.items())!r};
        for (const key of Object.keys(costs)) {{
            const field = document.getElementById('whatif-' + key);
            field.value = costs[key];
            field.dispatchEvent(new Event('input', {{bubbles: true}}));
        }}
    }})()""".replace("'", '"'))


def _read(page) -> dict:
    return page.evaluate("""(() => {
        const v = id => Number(document.getElementById(id).getAttribute('data-value'));
        const range = document.getElementById('whatif-range');
        return {cutoff: v('whatif-cutoff'), mean: v('whatif-mean'), saving: v('whatif-saving'),
                prob: v('whatif-prob'), p05: Number(range.getAttribute('data-p05')),
                p95: Number(range.getAttribute('data-p95')),
                text: document.getElementById('whatif-mean').textContent,
                error: document.getElementById('whatif-error').hidden ? '' :
                       document.getElementById('whatif-error').textContent};
    })()""")


def test_typed_costs_give_the_figures_of_a_run_with_those_costs(tmp_path, page):  # noqa: F811
    report = _report(tmp_path / "mean")
    other = _reference_run(TYPED)
    _open(page, report)
    _type(page, TYPED)
    shown = _read(page)
    assert shown["error"] == ""
    # exact: the expected costs and the cheapest cutoff by expected cost; the sample: exactly the
    # first 1,000 seasons of the run with these costs, and within its error of all the run's seasons
    check_against_run(shown, other, SAMPLE)

    # a typing slip: a plain message, the figures left as they were
    _type(page, {"miss": "4,000x"})
    slip = _read(page)
    assert "Miss" in slip["error"] and "not an amount" in slip["error"] and slip["mean"] == shown["mean"]
    _type(page, {"miss": "-2e13"})
    assert "not an amount" in _read(page)["error"]
    _type(page, {"miss": "4,000"})  # thousands commas are read
    assert _read(page)["error"] == "" and _read(page)["mean"] == shown["mean"]

    # reset: the scenario's costs and the run's own recommended cutoff
    page.evaluate("document.getElementById('whatif-reset').click()")
    back = _read(page)
    import json
    summary = json.loads((report.parent / "summary.json").read_text())
    assert back["cutoff"] == pytest.approx(summary["recommended_cutoff"], abs=1e-12)
    assert back["mean"] == pytest.approx(summary["strategies"]["model"]["mean"], rel=1e-12)
    assert page.evaluate("document.getElementById('whatif-miss').value") == str(EXAMPLE_COSTS["miss"])
    errors = [e for e in page.events if e.get("method") == "Runtime.exceptionThrown"
              or (e.get("method") == "Log.entryAdded" and e["params"]["entry"]["level"] == "error")]
    assert not errors, errors


@pytest.mark.parametrize("objective", ["p95", "shortfall10"])
def test_a_risk_objective_is_chosen_on_the_sample_as_the_run_would(objective, tmp_path, page):  # noqa: F811
    report = _report(tmp_path / objective, objective=objective)
    other = _reference_run(TYPED, objective=objective)
    _open(page, report)
    _type(page, TYPED)
    shown = _read(page)
    chosen = int(lowest(objective_cost(other.model_cost[:SAMPLE], objective)))  # the run's own rule, on the sample
    assert shown["cutoff"] == pytest.approx(float(other.cutoffs[chosen]), abs=1e-12)
    # near the run's choice on all its seasons: within 2% of the lowest (common practice, no source)
    column = other.table[OBJECTIVE_COLUMN[objective]].to_numpy()
    assert column[chosen] <= column.min() * 1.02
