"""The meeting what-if's data (simulator/account/whatif.py): what the page reprices at typed costs.

The reference for every check is a second, independent run with the other costs on the same seed
and the same mean run length (``block_days`` fixed: the automatic length is chosen on the cost
series, so other costs may choose another):
a season's classification counts do not depend on the costs, so its cost at any four costs is
sum(count x cost) (the cost-loss model's expense for a 2x2 matrix: Murphy 1977; Richardson 2000,
"Skill and relative economic value of the ECMWF ensemble prediction system", QJRMS 126:649-667),
and the mean of that sum is the sum of the mean counts times the costs (linearity of expectation;
METHODS.md section 6.3). The page's own arithmetic (JavaScript) is checked in tests/test_browser.py.
"""

from __future__ import annotations

import base64
import json
import re
from functools import partial

import numpy as np
import pytest
from typer.testing import CliRunner

from conftest import EXAMPLE_COSTS, scenario_toml
from realdata import seattle_rain
from simulator.account.whatif import SAMPLE, whatif_data
from simulator.cli import app
from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario import scenario_from_text
from simulator.inputs.scenario_types import BASELINES
from simulator.run import run_history

# other costs a budget holder might type: a costlier miss, a cheaper false alarm, a standby charge
TYPED = {"hit": 500, "false_alarm": 1200, "miss": 4000, "correct_negative": 100}


def _run(costs, replicates=1200, reference="never_act", **sections):
    text = scenario_toml(costs=costs, simulation={"replicates": replicates, "seed": 11, "reference": reference,
                                                           "block_days": 5},
                         **sections)
    scenario = scenario_from_text(text, label="scenario.toml")
    return run_history(scenario, history_from_frame(seattle_rain(), scenario, label="history.csv"))


def _decode(text: str, width: int) -> np.ndarray:
    return np.frombuffer(base64.b64decode(text), dtype=f"<u{width}").astype(np.int64)


@pytest.fixture(scope="module")
def runs():
    return _run(EXAMPLE_COSTS, reference="always_act"), _run(TYPED, reference="always_act")


def test_mean_counts_price_to_the_other_runs_mean_season_costs(runs):
    base, other = runs
    data = whatif_data(base)
    m = {k: np.asarray(v) for k, v in data["mean"].items()}
    mean = (m["hits"] * TYPED["hit"] + m["false_alarms"] * TYPED["false_alarm"] + m["misses"] * TYPED["miss"]
            + m["correct_negatives"] * TYPED["correct_negative"])
    np.testing.assert_allclose(mean, other.table["mean_cost"].to_numpy(), rtol=1e-12)
    assert int(np.argmin(mean)) == other.decision.recommended_index
    r = data["reference_mean"]
    reference = sum(r[cell] * TYPED[key] for cell, key in
                    zip(("hits", "false_alarms", "misses", "correct_negatives"), TYPED))
    assert reference == pytest.approx(other.baseline_cost["always_act"].mean(), rel=1e-12)


def test_sample_is_the_first_replicates_and_prices_exactly_as_the_other_run(runs):
    base, other = runs
    s = whatif_data(base)["sample"]
    n = s["n"]
    _uint16 = partial(_decode, width=s["width"])
    assert s["width"] == (1 if base.calendar.n_occasions <= 255 else 2)
    assert n == min(SAMPLE, base.replicates) == 1000
    n_cut = base.cutoffs.size
    hits, false_alarms = _uint16(s["hits"]).reshape(n_cut, n), _uint16(s["false_alarms"]).reshape(n_cut, n)
    events, occasions = _uint16(s["events"]), _uint16(s["occasions"])
    misses, negatives = events - hits, occasions - events - false_alarms
    cost = (hits * TYPED["hit"] + false_alarms * TYPED["false_alarm"] + misses * TYPED["miss"]
            + negatives * TYPED["correct_negative"])
    np.testing.assert_array_equal(cost.T, other.model_cost[:n])  # whole-number costs: exact
    ref = sum(_uint16(s[f"ref_{cell}"]) * TYPED[key] for cell, key in
              zip(("hits", "false_alarms", "misses", "correct_negatives"), TYPED))
    np.testing.assert_array_equal(ref, other.baseline_cost["always_act"][:n])


def test_counts_kept_by_the_run_hold_every_replicate_and_baseline(runs):
    base, _ = runs
    counts = base.replicate_counts
    assert counts.model.hits.shape == (base.replicates, base.cutoffs.size)
    assert counts.baselines.hits.shape == (base.replicates, len(BASELINES))
    total = counts.model.hits + counts.model.false_alarms + counts.model.misses + counts.model.correct_negatives
    assert (total == base.calendar.n_occasions).all()


def test_rules_report_embeds_its_prices_and_sample_and_stays_under_2_mb(tmp_path):
    result = CliRunner().invoke(app, ["run", "scenarios/line_marking_rules.toml", "--out", str(tmp_path / "r"),
                                      "--replicates", "1000", "--quiet"])
    assert result.exit_code == 0, result.output
    page = (tmp_path / "r" / "report.html").read_bytes()
    assert len(page) < 2_000_000, len(page)  # 2 MB (issue 14); the rules' sample adds about 0.8 MB of it
    found = re.search(rb'<script type="application/json" id="whatif-data">(.*?)</script>', page, re.S)
    data = json.loads(found.group(1))
    assert data["kind"] == "rules" and data["sample"]["n"] == 1000
    assert data["keys"] == ["day_rate", "standby_rate", "spoilage_cost", "damages_per_day_late", "unfinished_cost"]
    assert b'id="whatif-reason"' not in page and page.count(b"disabled>") == 0


def test_demo_page_embeds_its_sample_and_stays_under_2_mb(tmp_path):
    out = tmp_path / "demo"
    result = CliRunner().invoke(app, ["demo", "--out", str(out), "--replicates", "1000", "--quiet"])
    assert result.exit_code == 0, result.output
    page = (out / "report.html").read_bytes()
    assert len(page) < 2_000_000, len(page)  # 2 MB (issue 14); the what-if adds about 0.27 MB of it
    found = re.search(rb'<script type="application/json" id="whatif-data">(.*?)</script>', page, re.S)
    data = json.loads(found.group(1))
    assert data["sample"]["n"] == 1000 and data["objective"] == "mean"
