"""What docs/python.md shows, a test runs (STYLE.md section 6): its Python examples, in order, in
one namespace, from the repository's root. A block whose first line says it is not run by the tests
is skipped (it needs a running Dask scheduler)."""

from __future__ import annotations

import re
from pathlib import Path

import matplotlib
import pytest

REPO = Path(__file__).resolve().parent.parent
DOC = REPO / "docs" / "python.md"


def python_blocks(text: str) -> list[str]:
    return [block for block in re.findall(r"```python\n(.*?)```", text, flags=re.S)
            if not block.startswith("# (not run by the tests")]


def test_the_python_examples_run_as_written(monkeypatch):
    matplotlib.use("Agg")
    monkeypatch.chdir(REPO)
    blocks = python_blocks(DOC.read_text())
    assert len(blocks) >= 4
    namespace: dict = {}
    for block in blocks:
        exec(compile(block, str(DOC), "exec"), namespace)  # noqa: S102 - our own documentation
    result, cheap = namespace["result"], namespace["cheap"]
    assert [site.name for site in result.sites] == ["Ferrowby Moor", "Gannetholm Harbour", "Pellisford",
                                                    "Scarth Top", "Tarnbeck Lane"]
    assert result.replicates == 500 and cheap.scenario.costs.miss == 4500
    assert {p.name for p in namespace["written"]} >= {"cutoffs.csv", "summary.json", "report.html"}


def test_the_readme_rows_name_keys_the_schema_knows():
    from simulator.inputs.scenario_changes import SiteSection
    from simulator.inputs.scenario_tables import HistorySection

    text = (REPO / "README.md").read_text()
    assert "`site_column`" in text and "site_column" in HistorySection.model_fields
    assert '`[sites."<name>"]`' in text
    assert set(SiteSection.model_fields) == {"costs", "operations"}


@pytest.mark.parametrize("option", ["--workers", "--cluster", "GONOGO_CLUSTER"])
def test_the_options_the_doc_names_exist(option):
    from typer.testing import CliRunner

    from simulator.cli import app

    assert option in CliRunner().invoke(app, ["run", "--help"], terminal_width=200).output
