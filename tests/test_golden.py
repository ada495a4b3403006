"""Single-site runs write the same bytes as before sites, workers and clusters were added.

The scenarios, the history and the expected ``summary.json`` / ``cutoffs.csv`` are in
tests/golden/single_site/ (invented test data; see make_golden.py there). The expected files were
written by the simulator before the joint replay of many sites and the task-based pricing were
introduced, so these tests hold the refactor to "a history without a site column behaves exactly as
it did". A change meant to alter results is a breaking change (DEVELOPERS.md): rewrite the files
with make_golden.py and review the diff.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from simulator import read_scenario, run
from simulator.account.outputs import summary

GOLDEN = Path(__file__).resolve().parent / "golden" / "single_site"


@pytest.mark.parametrize("name", ["plain", "rules", "calibrated"])
def test_single_site_outputs_are_byte_identical_to_the_golden_files(name):
    result = run(read_scenario(GOLDEN / f"{name}.toml"))
    written = (json.dumps(summary(result), indent=2) + "\n").encode()
    assert written == (GOLDEN / f"{name}.summary.json").read_bytes()
    assert result.table.to_csv(index=False, lineterminator="\n").encode() == \
        (GOLDEN / f"{name}.cutoffs.csv").read_bytes()
    assert result.portfolio is None and result.sites == ()
