"""datapackage.json describes every CSV a run writes, and validates against them.

The standard is the Frictionless Data Package with Table Schema (open specifications of the
Frictionless Data project); the reference validator is the ``frictionless`` package, which
checks the descriptor and every CSV row against its declared types. Scenarios are the invented
examples in ``scenarios/``.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from simulator.cli import app
from simulator.account.datapackage import describe_column

frictionless = pytest.importorskip("frictionless")
SCENARIOS = Path(__file__).resolve().parent.parent / "scenarios"


@pytest.mark.parametrize("scenario", ["line_marking_rules.toml", "line_marking_stress.toml",
                                      "gritting_depots.toml"])
def test_datapackage_validates_against_the_csvs_and_describes_every_column(tmp_path, scenario):
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["run", str(SCENARIOS / scenario), "--replicates", "20", "--out", str(out),
                                      "--quiet", "--workers", "1"])
    assert result.exit_code == 0, result.output
    report = frictionless.validate(out / "datapackage.json")
    assert report.valid, report.flatten(["rowNumber", "fieldName", "type", "note"])[:5]
    package = json.loads((out / "datapackage.json").read_text())
    described = {r["path"] for r in package["resources"]}
    assert described == {p.name for p in out.glob("*.csv")}
    for resource in package["resources"]:
        for field in resource["schema"]["fields"]:
            # every column has its own words, not its name echoed
            assert field["description"].replace(" ", "_") != field["name"], (resource["path"], field["name"])


def test_units_say_currency_and_basis():
    assert describe_column("mean_cost", "EUR") == ("mean of the season cost at this cutoff, over replicate "
                                                   "seasons", "EUR per season")
    assert describe_column("training_historical_cost", "NOK")[1] == "NOK over the training period"
    assert describe_column("hits", "EUR")[1] == "count"
    assert describe_column("always_act_p95_cost", "EUR")[0].startswith("95th percentile of the season cost "
                                                                       "of always acting")
