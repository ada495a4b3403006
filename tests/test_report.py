"""The report: files written, self-contained, numbers that agree with summary.json and cutoffs.csv.

The data here are invented (the demo, and a small synthetic history made below); the checks are of
the report's plumbing and wording, not of any forecast. Formatting rules are common practice, no
single source.
"""

from __future__ import annotations

import base64
import hashlib
import io
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import matplotlib.image as mpimg
import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from simulator import read_scenario, run
from simulator.cli import app
from simulator.account.outputs import render_files, summary
from simulator.account.result_set import write_files
from simulator.account.report import CAUTION, render_report
from simulator.account.report_sections import FIELD_FORMATS, headline_numbers
from simulator.notation.prose import format_value, money, share

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (W3C/ISO 15948), section 5.2
CORE_FIGURES = ("season_cost", "savings", "reliability", "roc", "relative_value", "risk")

MINIMAL_TOML = """
name = "Yard gritting at Tollbury"
[history]
path = "history.csv"
[event]
name = "frost"
hazard = true
[decision]
action = "grit the yard"
[costs]
hit = 100
false_alarm = 100
miss = 500
"""


def write_minimal(folder: Path) -> Path:
    """A small invented history (three years, daily) and a scenario using every default it can."""
    rng = np.random.default_rng(11)
    dates = pd.date_range("2021-01-01", "2023-12-31", freq="D")
    p = np.round(rng.beta(0.8, 2.0, dates.size), 2)
    outcome = (rng.random(dates.size) < p).astype(int)
    pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": p, "outcome": outcome}).to_csv(
        folder / "history.csv", index=False)
    (folder / "minimal.toml").write_text(MINIMAL_TOML)
    return folder / "minimal.toml"


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("demo")
    result = CliRunner().invoke(app, ["demo", "--out", str(out), "--replicates", "300", "--quiet"])
    assert result.exit_code == 0, result.output
    return out


@pytest.fixture(scope="module")
def minimal_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("minimal")
    result = run(read_scenario(write_minimal(folder)), replicates=200)
    write_files(render_files(result), folder / "out", force=False)
    return result, folder / "out"


@pytest.fixture(scope="module", params=["demo", "minimal"])
def out(request, demo_out, minimal_run) -> Path:
    return demo_out if request.param == "demo" else minimal_run[1]


class _Text(HTMLParser):
    """Text inside the element with a given id, and every src/href/url the page names."""

    def __init__(self, element_id: str):
        super().__init__()
        self.element_id, self.depth, self.parts, self.links = element_id, 0, [], []

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        self.links += [attrs[k] for k in ("src", "href", "action", "srcset", "poster") if k in attrs]
        if self.depth or attrs.get("id") == self.element_id:
            self.depth += 1

    def handle_endtag(self, tag):
        if self.depth:
            self.depth -= 1

    def handle_data(self, data):
        if self.depth:
            self.parts.append(data)

    @property
    def text(self) -> str:
        return re.sub(r"\s+", " ", "".join(self.parts)).strip()


def parse(html: str, element_id: str = "recommendation") -> _Text:
    parser = _Text(element_id)
    parser.feed(html)
    return parser


def test_every_figure_is_a_valid_png(out):
    for name in CORE_FIGURES:
        data = (out / "figures" / f"{name}.png").read_bytes()
        assert data[:8] == PNG_SIGNATURE, name
        image = mpimg.imread(io.BytesIO(data), format="png")
        assert image.ndim == 3 and image.shape[0] > 300 and image.shape[1] > 600, name
        assert image.std() > 0.05, f"{name} looks blank"


def test_report_references_no_network_resource(out):
    html = (out / "report.html").read_text(encoding="utf-8")
    assert not re.search(r"(?i)(https?|ftp|wss?):", html)
    assert not re.search(r"(?i)<link\b|@import|@font-face|<iframe|<object|<embed", html)
    assert not re.search(r"""(?i)url\(\s*['"]?(?!data:)""", html)
    links = parse(html).links
    assert links, "the page should embed its figures"
    assert all(link.startswith(("data:image/png;base64,", "#")) for link in links), links
    assert "<script src" not in html.lower()


def test_recommendation_quotes_the_numbers_in_summary_json(out):
    s = json.loads((out / "summary.json").read_text())
    text = parse((out / "report.html").read_text(encoding="utf-8")).text
    for key, value in headline_numbers(s).items():
        if key != "break_even":  # one range is given, and only when it says something (test_account.py)
            assert value in text, (key, value, text)
    # the same numbers written out independently of the helper: three significant figures
    cur = s["currency"]

    def three(x):
        return f"{round(x, -max(0, len(str(int(abs(round(x))))) - 3)):,.0f} {cur}"

    assert f"is {s['recommended_cutoff']:.2f} or more" in text
    assert f"{three(s['strategies']['model']['mean'])} on average" in text
    assert f"between {three(s['strategies']['model']['p05'])} and {three(s['strategies']['model']['p95'])}" in text
    assert f"{three(abs(s['savings']['mean']))} a season" in text
    assert len(re.findall(r"[.!?](\s|$)", text)) in (3, 4, 5, 6)  # three to six plain sentences (the verdict's, a hazard's)


def test_hazard_caution_comes_before_the_recommendation(demo_out, minimal_run):
    hazardous = (minimal_run[1] / "report.html").read_text(encoding="utf-8")
    assert 'id="hazard"' in hazardous
    assert hazardous.index('id="hazard"') < hazardous.index('id="recommendation"')
    assert "\u201cfrost\u201d can hurt people" in hazardous
    calm = (demo_out / "report.html").read_text(encoding="utf-8")
    assert 'id="hazard"' not in calm
    for html in (hazardous, calm):
        assert CAUTION in html


def test_scenario_words_name_the_event_and_the_action(minimal_run):
    html = (minimal_run[1] / "report.html").read_text(encoding="utf-8")
    assert "Grit the yard when the forecast probability of \u201cfrost\u201d" in html
    assert "Did not grit the yard" in html


def test_training_and_validation_side_by_side_only_with_a_split(demo_out, minimal_run):
    assert 'id="periods"' in (demo_out / "report.html").read_text(encoding="utf-8")
    assert "Validation 2025 to 2026" in (demo_out / "report.html").read_text(encoding="utf-8")
    assert 'id="periods"' not in (minimal_run[1] / "report.html").read_text(encoding="utf-8")


def test_content_security_policy_allows_only_the_pages_own_script_by_its_hash(out):
    # W3C, Content Security Policy Level 3 (2024 draft), section 8.3: an inline script runs when
    # the base64 SHA-256 of its text is listed in script-src; hashlib computes it independently
    html = (out / "report.html").read_text(encoding="utf-8")
    policy = re.search(r'<meta http-equiv="Content-Security-Policy" content="([^"]*)">', html).group(1)
    assert html.index("Content-Security-Policy") < html.index("<style>")
    directives = dict(part.strip().split(" ", 1) for part in policy.split(";"))
    assert directives["default-src"] == "'none'" and directives["img-src"] == "data:"
    scripts = re.findall(r"<script>(.*?)</script>", html, re.S)
    assert len(scripts) == 2  # the cutoff explorer's and the cost what-if's
    digests = [base64.b64encode(hashlib.sha256(s.encode("utf-8")).digest()).decode("ascii") for s in scripts]
    assert directives["script-src"] == " ".join(f"'sha256-{digest}'" for digest in digests)


@pytest.mark.parametrize("text", ["</script><script>alert(1)</script>", "<!--<script>", "a & b > c",
                                  "line\u2028separator\u2029", "\x1b]0;x\x07"])
def test_json_for_the_page_escapes_what_could_end_or_bend_a_script_element(text):
    # WHATWG HTML, "Restrictions for contents of script elements": "<!--", "<script" and "</script"
    # must not appear in a script's text; JSON's \\u escapes read back as the same characters
    from simulator.account.report_page import script_json

    encoded = script_json({"name": text, "values": [1.5, float("nan")]})
    assert not re.search("[<>&\u2028\u2029]", encoded)
    assert json.loads(encoded) == {"name": text, "values": [1.5, None]}


def _explorer(html: str) -> dict:
    raw = re.search(r'<script type="application/json" id="cutoff-data">(.*?)</script>', html, re.S).group(1)
    return json.loads(raw)


def test_explorer_table_holds_every_row_of_cutoffs_csv(out):
    html = (out / "report.html").read_text(encoding="utf-8")
    data = _explorer(html)
    table = pd.read_csv(out / "cutoffs.csv")
    cur = json.loads((out / "summary.json").read_text())["currency"]
    assert len(data["rows"]) == len(table) == len(data["cutoff"])
    for i in (0, len(table) // 3, len(table) - 1):
        for field, kind in FIELD_FORMATS.items():
            assert data["rows"][i][field] == format_value(kind, table[field][i], cur), (i, field)
    assert np.allclose(data["mean_cost"], table["mean_cost"])


def test_without_javascript_the_explorer_shows_the_recommended_cutoff(out):
    html = (out / "report.html").read_text(encoding="utf-8")
    s = json.loads((out / "summary.json").read_text())
    data = _explorer(html)
    assert data["cutoff"][data["recommended"]] == s["recommended_cutoff"]
    shown = dict(re.findall(r'data-field="(\w+)">([^<]*)<', html))
    assert shown == data["rows"][data["recommended"]]
    assert re.search(r'<div class="controls" id="explorer-controls" hidden>', html)


def _embedded(html: str, name_alt: str) -> bytes:
    """The narrow (phone) PNG of the figure whose alt text starts with ``name_alt``."""
    import base64

    found = re.search(r'<img class="fig-narrow" src="data:image/png;base64,([^"]+)" width="\d+" height="\d+" alt="'
                      + re.escape(name_alt), html)
    assert found, name_alt
    return base64.b64decode(found.group(1))


def test_cost_chart_geometry_puts_the_marker_on_the_recommended_line(out):
    """The marker's position, computed from the embedded axes extents, falls on the black line
    matplotlib drew at the recommended cutoff, in the wide figure and in the phone one."""
    html = (out / "report.html").read_text(encoding="utf-8")
    data = _explorer(html)
    images = {"wide": (out / "figures" / "season_cost.png").read_bytes(),
              "narrow": _embedded(html, "Season cost in")}
    for layout, png in images.items():
        g = data["geometry"][layout]
        image = mpimg.imread(io.BytesIO(png), format="png")
        height, width = image.shape[:2]
        x = data["cutoff"][data["recommended"]]
        column = (g["left"] + (x - g["xmin"]) / (g["xmax"] - g["xmin"]) * (g["right"] - g["left"])) * width
        top, bottom = int(g["top"] * height) + 5, int(g["bottom"] * height) - 5
        dark = image[top:bottom, :, :3].max(axis=2) < 0.2  # near-black pixels
        near = dark[:, max(0, int(column) - 2): int(column) + 3].any(axis=1)
        assert near.mean() > 0.8, layout


STRESS_TOML = MINIMAL_TOML + """
[[stress]]
name = "dearer grit"
cost_multipliers = { false_alarm = 1.5, hit = 1.5 }
"""

OPERATIONS_TOML = MINIMAL_TOML.replace("[costs]", """[operations]
crews = 2
crews_out_on = "acting"
spoiled_on = "no_event"
day_rate = 50
work = 150
deadline = 2024-10-01
damages_per_day_late = 40

[costs]""")


def _run_variant(folder: Path, text: str):
    folder.mkdir()
    write_minimal(folder)
    (folder / "variant.toml").write_text(text)
    result = run(read_scenario(folder / "variant.toml"), replicates=100)
    s = summary(result)
    return s, render_report(result, s)


def test_stress_and_operations_sections_appear_only_when_present(minimal_run, tmp_path):
    result, _ = minimal_run
    plain = render_report(result, summary(result))
    # a single-site run with fixed costs also draws which cost estimate matters (the tornado)
    assert set(plain) == {"report.html"} | {f"figures/{n}.png" for n in (*CORE_FIGURES, "tornado")}
    assert b'id="stress"' not in plain["report.html"]
    assert b'id="operations"' not in plain["report.html"]

    s, files = _run_variant(tmp_path / "stress", STRESS_TOML)
    html = files["report.html"].decode()
    assert 'id="stress"' in html and "Dearer grit" in html
    view = s["stress"][0]["views"][0]
    assert money(view["strategies"]["model"]["mean"], "EUR") in html
    assert view["headline"].replace('"', "&#34;") in html
    assert files["figures/stress.png"][:8] == PNG_SIGNATURE

    s, files = _run_variant(tmp_path / "operations", OPERATIONS_TOML)
    html = files["report.html"].decode()
    at = s["operations"]["at_recommended_cutoff"]
    assert 'id="operations"' in html and "Standby" in html
    assert money(at["mean_components"]["total_cost"], "EUR") in html
    assert (at["completion_date"]["p50"] or "not finished") in html
    for name in ("operations_costs", "completion"):
        assert files[f"figures/{name}.png"][:8] == PNG_SIGNATURE


def test_same_run_gives_byte_identical_report(minimal_run):
    result, out = minimal_run
    again = render_report(result, summary(result))
    assert again["report.html"] == (out / "report.html").read_bytes()
    assert again["figures/season_cost.png"] == (out / "figures" / "season_cost.png").read_bytes()


def test_money_and_share_are_written_for_a_reader():
    # common practice, no source: three significant figures with thousands separators (the spread
    # of a season's cost is far wider than its last digits); a share that is not exactly 0 or 1 is
    # never rounded to 0% or 100%
    assert money(391743.2, "EUR") == "392,000 EUR"
    assert money(-0.4, "EUR") == "0 EUR"
    assert money(-1234.6, "GBP") == "-1,230 GBP"
    assert money(432.4, "EUR") == "432 EUR"
    assert money(float("nan"), "EUR") == "\u2013"
    assert share(1.0) == "100%" and share(0.0) == "0%"
    assert share(0.996) == "over 99%" and share(0.004) == "under 1%"
    assert share(0.954) == "95%"


def test_walk_forward_section_shows_each_season_and_the_total(tmp_path):
    folder = tmp_path / "walk"
    folder.mkdir()
    path = write_minimal(folder)
    result = run(read_scenario(path), replicates=100, walk_forward=True)
    s = summary(result)
    html = render_report(result, s)["report.html"].decode()
    forward = s["selection"]["walk_forward"]
    assert 'id="walk-forward"' in html
    assert money(forward["total_cost"], "EUR") in html
    assert all(f"<td>{row['season']}</td>" in html for row in forward["seasons"])
    without = run(read_scenario(path), replicates=100)
    assert b'id="walk-forward"' not in render_report(without, summary(without))["report.html"]


def test_calibrated_mode_is_said_in_the_report(tmp_path):
    text = MINIMAL_TOML.replace("[costs]", '[simulation]\nmode = "calibrated"\n\n[costs]', 1)
    assert 'mode = "calibrated"' in text
    s, files = _run_variant(tmp_path / "calibrated", text)
    html = files["report.html"].decode()
    assert 'id="calibrated-mode"' in html
    assert f'{s["calibration"]["brier_training_recalibrated"]:.4f}' in html


def test_two_by_two_table_appears_once_with_what_its_cells_mean(out):
    html = (out / "report.html").read_text(encoding="utf-8")
    assert html.count('<table class="matrix">') == 1
    explorer = parse(html, "explorer").text
    assert "A hit is a" in explorer and "a correct negative, we did not" in explorer


def test_run_length_of_the_replay_is_explained_where_it_is_given(demo_out):
    html = (demo_out / "report.html").read_text(encoding="utf-8")
    s = json.loads((demo_out / "summary.json").read_text())
    block = re.search(r"<dt>Spells kept together</dt><dd>(.*?)</dd>", html, re.S).group(1)
    assert block.startswith(f"Mean run {s['mean_block_days']:.1f} days")
    assert "runs of consecutive days of the history" in block and "replayed whole" in block


def test_every_day_count_of_the_operating_rules_says_what_it_counts(tmp_path):
    from simulator.rules.operating_rules import COUNTS

    text = OPERATIONS_TOML.replace("damages_per_day_late = 40", "damages_per_day_late = 40\nmax_standby_days = 2")
    s, files = _run_variant(tmp_path / "retention", text)
    html = files["report.html"].decode()
    rows = dict(re.findall(r"<tr><td>([^<]+)</td><td class=\"num\">[^<]*</td><td class=\"what-cell\">([^<]+)</td>", html))
    assert set(rows) == {key.replace("_", " ").capitalize() for key in COUNTS}
    assert "stood down 2 days in a row" in rows["Retention days"]


def test_cost_chart_caption_says_when_it_shows_part_of_the_cutoffs(demo_out, tmp_path):
    scenario = Path(__file__).resolve().parents[1] / "scenarios" / "river_pumps.toml"
    result = run(read_scenario(scenario), replicates=100)
    html = render_report(result, summary(result))["report.html"].decode()
    caption = parse(html, "cost").text
    assert re.search(r"The chart shows cutoffs 0\.00 to 0\.\d\d, where the decision lies", caption), caption
    assert "every cutoff from 0.00 to 1.00" in caption
    assert "The chart shows cutoffs" not in (demo_out / "report.html").read_text(encoding="utf-8")
