"""The meeting what-if under [operations] in a real browser: the rules' prices typed into the
report's fields, checked against a run at those prices.

The page (templates/whatif.html.j2, its rules model) prices the played seasons' kept counts in
JavaScript. The reference is a second run of the rules scenario at the typed prices, on the same
seed and replicates (``simulator.run.run``; how the crews work never depends on the prices, and
the automatic run length is chosen on the [costs], so the seasons are the same): the expected
season cost and the cutoff chosen by it must agree to the cent (linearity of expectation: every
part of a played season's cost is a count times a price, rules/season_cost.py ``price_outcome``);
the 90% range and the share of seasons that save must equal those statistics of that run's first
sampled seasons, within floating-point rounding, and lie within the sample's error of all its
seasons (binomial bounds, 4 standard errors; common practice, e.g. Conover 1999, Practical
Nonparametric Statistics, section 3.2, from memory). The page's arithmetic is also checked
against :func:`simulator.account.whatif_rules.page_figures`, its Python statement.
"""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from simulator.account import whatif_rules
from simulator.account.whatif_rules import page_figures
from simulator.cli import app
from test_browser import HOSTILE_NAMES, _open, page  # noqa: F401  (the browser fixture)
from test_whatif_browser import _read, _type
from test_whatif_rules import (HISTORY, REPLICATES, SAMPLE, TYPED, _priced_text, _run, _scenario_text,
                               check_against_run)


def _report(folder: Path, text: str, monkeypatch) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    shutil.copy(HISTORY, folder)
    (folder / "scenario.toml").write_text(text, encoding="utf-8")
    monkeypatch.setattr(whatif_rules, "SAMPLE", SAMPLE)
    result = CliRunner().invoke(app, ["run", str(folder / "scenario.toml"), "--out", str(folder / "out"),
                                      "--replicates", str(REPLICATES), "--quiet", "--workers", "1"])
    assert result.exit_code == 0, result.output
    return folder / "out" / "report.html"


def _errors(page) -> list:  # noqa: F811
    return [e for e in page.events if e.get("method") == "Runtime.exceptionThrown"
            or (e.get("method") == "Log.entryAdded" and e["params"]["entry"]["level"] == "error")]


def test_typed_prices_give_the_figures_of_a_run_at_those_prices(tmp_path, page, monkeypatch):  # noqa: F811
    report = _report(tmp_path / "rules", _scenario_text(), monkeypatch)
    other = _run(tmp_path, _priced_text(TYPED), "typed")
    _open(page, report)
    assert page.evaluate("document.getElementById('whatif-break-even')") is None  # no such figure here
    _type(page, {key: f"{value:g}" for key, value in TYPED.items()})
    shown = _read(page)
    assert shown["error"] == ""
    check_against_run(shown, other, SAMPLE, rel=1e-9)  # exact for means, the sample's error for the rest
    # the page's script and its Python statement agree
    found = re.search(r'<script type="application/json" id="whatif-data">(.*?)</script>',
                      report.read_text(encoding="utf-8"), re.S)
    mirror = page_figures(json.loads(found.group(1)), TYPED)
    assert shown["mean"] == pytest.approx(mirror["mean"], rel=1e-15)
    assert (shown["p05"], shown["p95"], shown["prob"]) == pytest.approx(
        (mirror["p05"], mirror["p95"], mirror["prob"]), rel=1e-15)

    # a price below 0: a plain message, the figures left as they were
    _type(page, {"standby_rate": "-50"})
    slip = _read(page)
    assert "Standby rate" in slip["error"] and "0 or more" in slip["error"] and slip["mean"] == shown["mean"]
    # back to the scenario's prices: the run's own cutoff and expected season cost
    page.evaluate("document.getElementById('whatif-reset').click()")
    back = _read(page)
    summary = json.loads((report.parent / "summary.json").read_text())
    assert back["cutoff"] == pytest.approx(summary["recommended_cutoff"], abs=1e-12)
    assert back["mean"] == pytest.approx(summary["strategies"]["model"]["mean"], abs=0.005)
    assert page.evaluate("document.getElementById('whatif-day_rate').value") == "800"
    assert not _errors(page)


def test_rules_report_from_names_full_of_markup_keeps_them_as_text(tmp_path, page, monkeypatch):  # noqa: F811
    # the browser test's hostile names (currency, event, action), and its hostile title
    hostile = {key: value for key, value in HOSTILE_NAMES.items() if key.startswith(('currency', '"dry', '"send'))}
    text = _scenario_text(**hostile, **{'"Line marking at Gannetholm, contract rules"':
                                        HOSTILE_NAMES['"Line marking at Gannetholm"']})
    report = _report(tmp_path / "evil", text, monkeypatch)
    _open(page, report)
    assert page.evaluate("typeof window.__pwned") == "undefined"
    _type(page, {"day_rate": "950"})
    assert page.evaluate("document.getElementById('whatif-mean').textContent").endswith("EUR <!--<script>")
    assert "<!--<script>" in page.evaluate("document.getElementById('whatif-state').textContent")
    assert "always go <!--<script> out" in page.evaluate("document.querySelector('#whatif figcaption').textContent")
    assert page.evaluate("typeof window.__pwned") == "undefined"
    assert not _errors(page)
