"""The report in a real browser: headless Chromium driven through the Chrome DevTools protocol.

The test opens report.html from a file, moves the cutoff slider, and checks the numbers the page
then shows against that row of cutoffs.csv; it also checks that the browser logged no error, made
no network request, and drew a page that is not blank. It needs Debian's ``chromium`` package and
``websocket-client`` (the test extra). Without a browser it is skipped, except in CI (``CI`` set),
where a missing browser is a failure.
"""

from __future__ import annotations

import base64
import io
import json
import os
import re
import shutil
import subprocess
import time
import urllib.request
from pathlib import Path

import matplotlib.image as mpimg
import pandas as pd
import pytest
from typer.testing import CliRunner

from simulator.cli import app
from simulator.account.report_sections import FIELD_FORMATS
from simulator.notation.prose import format_value

CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--remote-debugging-port=0", "--window-size=1200,2000", "--hide-scrollbars"]


def _need(condition: bool, reason: str) -> None:
    if not condition:
        if os.environ.get("CI"):
            pytest.fail(f"{reason}; CI must run the browser test")
        pytest.skip(reason)


class DevTools:
    """A minimal Chrome DevTools protocol client over one page's websocket."""

    def __init__(self, url: str):
        import websocket

        self.ws = websocket.create_connection(url, timeout=15, suppress_origin=True)
        self.next_id = 0
        self.events: list[dict] = []

    def call(self, method: str, **params) -> dict:
        self.next_id += 1
        self.ws.send(json.dumps({"id": self.next_id, "method": method, "params": params}))
        while True:
            message = json.loads(self.ws.recv())
            if message.get("id") == self.next_id:
                if "error" in message:
                    raise RuntimeError(f"{method}: {message['error']}")
                return message.get("result", {})
            self.events.append(message)

    def wait_for(self, event: str, timeout: float = 15.0) -> dict:
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            found = next((e for e in self.events if e.get("method") == event), None)
            if found:
                return found
            self.events.append(json.loads(self.ws.recv()))
        raise TimeoutError(event)

    def evaluate(self, expression: str):
        result = self.call("Runtime.evaluate", expression=expression, returnByValue=True, awaitPromise=True)
        if "exceptionDetails" in result:
            raise RuntimeError(result["exceptionDetails"])
        return result["result"].get("value")

    def close(self) -> None:
        self.ws.close()


@pytest.fixture(scope="module")
def demo_report(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("browser") / "demo"
    result = CliRunner().invoke(app, ["demo", "--out", str(out), "--replicates", "200", "--quiet"])
    assert result.exit_code == 0, result.output
    return out


@pytest.fixture
def page(tmp_path):
    _need(CHROMIUM is not None, "the chromium browser is not installed (apt-get install chromium)")
    try:
        import websocket  # noqa: F401
    except ImportError:
        _need(False, "websocket-client is not installed (pip install -e '.[test]')")
    profile = tmp_path / "profile"
    browser = subprocess.Popen([CHROMIUM, *FLAGS, f"--user-data-dir={profile}", "about:blank"],
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    client = None
    try:
        port_file = profile / "DevToolsActivePort"
        deadline = time.monotonic() + 15
        while not (port_file.exists() and port_file.read_text().strip()):
            assert browser.poll() is None, "chromium exited before it opened its DevTools port"
            assert time.monotonic() < deadline, "chromium did not open its DevTools port within 15 s"
            time.sleep(0.05)
        port = int(port_file.read_text().split()[0])
        with urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list", timeout=10) as response:
            targets = json.load(response)
        target = next(t for t in targets if t["type"] == "page")
        client = DevTools(target["webSocketDebuggerUrl"])
        for domain in ("Page", "Runtime", "Log", "Network"):
            client.call(f"{domain}.enable")
        yield client
    finally:
        if client is not None:
            client.close()
        browser.terminate()
        try:
            browser.wait(timeout=5)
        except subprocess.TimeoutExpired:
            browser.kill()
            browser.wait(timeout=5)


def _number(text: str) -> float:
    """The number in a displayed value: "391,743 EUR" -> 391743, "72.7%" -> 72.7."""
    found = re.search(r"-?[\d,]+(\.\d+)?", text)
    assert found, text
    return float(found.group(0).replace(",", ""))


def _shown(page) -> list[list[str]]:
    return page.evaluate("""Array.from(document.querySelectorAll('#explorer [data-field]'))
        .map(el => [el.getAttribute('data-field'), el.textContent])""")


def _open(page, path: Path) -> None:
    page.events.clear()
    page.call("Page.navigate", url=path.resolve().as_uri())
    page.wait_for("Page.loadEventFired")


def test_slider_shows_the_chosen_row_of_cutoffs_csv(demo_report, page):
    table = pd.read_csv(demo_report / "cutoffs.csv")
    s = json.loads((demo_report / "summary.json").read_text())
    currency = s["currency"]

    # without JavaScript: no slider on screen, everything at the recommended cutoff
    page.call("Emulation.setScriptExecutionDisabled", value=True)
    _open(page, demo_report / "report.html")
    assert page.evaluate("getComputedStyle(document.getElementById('explorer-controls')).display") == "none"
    best = table.index[table["cutoff"] == s["recommended_cutoff"]][0]
    for field, text in _shown(page):
        assert text == format_value(FIELD_FORMATS[field], table[field][best], currency), field
    page.call("Emulation.setScriptExecutionDisabled", value=False)

    _open(page, demo_report / "report.html")

    assert page.evaluate("getComputedStyle(document.getElementById('explorer-controls')).display") != "none"
    recommended = page.evaluate("Number(document.getElementById('cutoff-slider').value)")
    marker_before = page.evaluate("document.getElementById('cost-marker').style.left")
    chosen = 30 if abs(recommended - 30) > 5 else 60
    page.evaluate(f"""(() => {{
        const slider = document.getElementById('cutoff-slider');
        slider.value = '{chosen}';
        slider.dispatchEvent(new Event('input', {{bubbles: true}}));
    }})()""")
    shown = _shown(page)

    row = table.iloc[chosen]
    assert {field for field, _ in shown} == set(FIELD_FORMATS)
    for field, text in shown:
        value = row[field]
        assert text == format_value(FIELD_FORMATS[field], value, currency), (field, text, value)
        kind = FIELD_FORMATS[field]
        if kind == "money":
            # three significant figures (simulator.account.findings.money)
            places = max(0, len(str(int(abs(round(value))))) - 3)
            assert abs(_number(text) - value) <= 0.5 * 10 ** places, (field, text, value)
        elif kind == "rate":
            assert abs(_number(text) / 100 - value) <= 0.0005, (field, text, value)
        elif kind == "share" and "%" in text and "over" not in text and "under" not in text:
            assert abs(_number(text) / 100 - value) <= 0.005, (field, text, value)
        elif kind in ("count", "cutoff"):
            assert _number(text) == pytest.approx(value), (field, text, value)
    assert page.evaluate("document.getElementById('cost-marker').style.left") != marker_before
    assert page.evaluate("document.getElementById('is-recommended').hidden") is True

    shot = base64.b64decode(page.call("Page.captureScreenshot", format="png")["data"])
    pixels = mpimg.imread(io.BytesIO(shot), format="png")
    assert pixels.std() > 0.05, "the screenshot is blank"

    errors = [e for e in page.events if e.get("method") == "Runtime.exceptionThrown"
              or (e.get("method") == "Runtime.consoleAPICalled" and e["params"]["type"] in ("error", "assert"))
              or (e.get("method") == "Log.entryAdded" and e["params"]["entry"]["level"] == "error")]
    assert not errors, errors
    requests = [e["params"]["request"]["url"] for e in page.events
                if e.get("method") == "Network.requestWillBeSent"]
    assert all(url.startswith(("file:", "data:")) for url in requests), requests


# A4 less the report's 12 mm margins (its @page rule), in CSS pixels (96 per inch, 25.4 mm per inch)
A4_CONTENT_WIDTH = round((210 - 24) / 25.4 * 96)
A4_CONTENT_HEIGHT = (297 - 24) / 25.4 * 96


@pytest.fixture(scope="module")
def flood_report(tmp_path_factory) -> Path:
    """The flood scenario: a hazard caution above the decision, and a cost chart zoomed on the decision."""
    out = tmp_path_factory.mktemp("browser") / "flood"
    scenario = Path(__file__).resolve().parents[1] / "scenarios" / "river_pumps.toml"
    result = CliRunner().invoke(app, ["run", str(scenario), "--out", str(out), "--replicates", "200", "--quiet"])
    assert result.exit_code == 0, result.output
    return out


def test_page_does_not_scroll_sideways_on_a_phone(demo_report, flood_report, page):
    """At 390 CSS pixels (a common phone width) wide tables scroll inside their own box, the figures
    come in their narrow layout and the slider's marker sits on that layout's axes."""
    page.call("Emulation.setDeviceMetricsOverride", width=390, height=844, deviceScaleFactor=2, mobile=True)
    try:
        for report in (demo_report, flood_report):
            _open(page, report / "report.html")
            assert page.evaluate("document.documentElement.scrollWidth") <= 390, report.name
            shown = page.evaluate("""Array.from(document.querySelectorAll('figure img'))
                .filter(img => getComputedStyle(img).display !== 'none').map(img => img.className)""")
            assert shown and set(shown) == {"fig-narrow"}, shown
            data = json.loads(page.evaluate("document.getElementById('cutoff-data').textContent"))
            g = data["geometry"]["narrow"]
            x = data["cutoff"][data["recommended"]]
            expected = 100 * (g["left"] + (x - g["xmin"]) / (g["xmax"] - g["xmin"]) * (g["right"] - g["left"]))
            left = page.evaluate("document.getElementById('cost-marker').style.left")
            assert float(left.rstrip("%")) == pytest.approx(expected, abs=1e-3)
    finally:
        page.call("Emulation.clearDeviceMetricsOverride")


def test_first_printed_page_holds_the_decision_the_tiles_and_the_cost_chart(demo_report, flood_report, page):
    """Laid out for print on A4, everything from the title to the cost chart's caption ends within the
    first page's height, in the wide layout; the hazard caution of the flood scenario included."""
    page.call("Emulation.setDeviceMetricsOverride", width=A4_CONTENT_WIDTH, height=1000, deviceScaleFactor=1,
              mobile=False)
    page.call("Emulation.setEmulatedMedia", media="print")
    try:
        for report in (demo_report, flood_report):
            _open(page, report / "report.html")
            box = page.evaluate("""(() => {
                const r = s => document.querySelector(s).getBoundingClientRect();
                return {advice: r('#recommendation').bottom, tiles: r('#advice .tiles').bottom,
                        chart: r('#cost figure').bottom, shown: r('#cost img.fig-wide').height,
                        top: r('main').top + window.scrollY};
            })()""")
            assert box["shown"] > 200, "the cost chart is not shown in its wide layout"
            assert box["advice"] < box["tiles"] < box["chart"] <= box["top"] + A4_CONTENT_HEIGHT, (report.name, box)
        hazard = page.evaluate("document.getElementById('hazard').getBoundingClientRect().bottom")
        assert 0 < hazard < box["advice"]
    finally:
        page.call("Emulation.setEmulatedMedia", media="")
        page.call("Emulation.clearDeviceMetricsOverride")


# the demo's own scenario with names full of markup: each tries to run script, load something, or
# end the data block early
HOSTILE_NAMES = {
    '"Line marking at Gannetholm"': '"Evil <img src=x onerror=\\"window.__pwned = 1\\"> [/bold]"',
    'currency = "EUR"': 'currency = "EUR <!--<script>"',
    '"dry day"': '"dry </script><script>window.__pwned = 2</script> $x$ day"',
    '"send the crews out"': '"go <!--<script> out"',
    "replicates = 5000": "replicates = 100",
}


def test_report_from_names_full_of_markup_runs_nothing_injected_and_its_slider_works(tmp_path, page):
    # the page's own defences (issue 16 item 10): HTML escaping of names, JSON in the data block
    # with <, > and & as \u escapes (WHATWG HTML, "Restrictions for contents of script elements"),
    # and a Content-Security-Policy that runs only the page's own script by its hash (W3C CSP 3)
    scenarios = Path(__file__).resolve().parents[1] / "scenarios"
    shutil.copy(scenarios / "line_marking_history.csv", tmp_path)
    text = (scenarios / "line_marking.toml").read_text(encoding="utf-8")
    for plain, hostile in HOSTILE_NAMES.items():
        assert plain in text
        text = text.replace(plain, hostile)
    scenario = tmp_path / "evil.toml"
    scenario.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["run", str(scenario), "--out", str(out), "--quiet", "--workers", "1"])
    assert result.exit_code == 0, result.output
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "default-src 'none'" in html and "'sha256-" in html

    _open(page, out / "report.html")
    assert page.evaluate("typeof window.__pwned") == "undefined"
    # the explorer's data and script, the what-if's data and script
    assert page.evaluate("document.querySelectorAll('img[src=x], script').length") == 4
    data = page.evaluate("JSON.parse(document.getElementById('cutoff-data').textContent)")
    assert data["rows"][0]["mean_cost"].endswith("EUR <!--<script>")  # read back as written
    before = page.evaluate("document.getElementById('cutoff-shown').textContent")
    page.evaluate("""(() => {
        const slider = document.getElementById('cutoff-slider');
        slider.value = String(Number(slider.value) > 50 ? 20 : 70);
        slider.dispatchEvent(new Event('input', {bubbles: true}));
    })()""")
    assert page.evaluate("document.getElementById('cutoff-shown').textContent") != before
    assert page.evaluate("typeof window.__pwned") == "undefined"
    # the what-if's labels hold the hostile names as text, and its money the currency as written
    assert "</script>" in page.evaluate("document.querySelector('label[for=whatif-hit]').textContent")
    page.evaluate("""(() => {
        const field = document.getElementById('whatif-miss');
        field.value = String(Number(field.value) * 2);
        field.dispatchEvent(new Event('input', {bubbles: true}));
    })()""")
    assert page.evaluate("document.getElementById('whatif-mean').textContent").endswith("EUR <!--<script>")
    assert page.evaluate("typeof window.__pwned") == "undefined"
    errors = [e for e in page.events if e.get("method") == "Runtime.exceptionThrown"
              or (e.get("method") == "Log.entryAdded" and e["params"]["entry"]["level"] == "error")]
    assert not errors, errors


def test_the_forecasts_section_shows_its_table_and_chart_on_a_desktop_and_a_phone(demo_report, page):
    """The demo's two forecasts (issue 13): the section's table has a row per forecast and stays in
    the page's width (on a phone it scrolls inside its own box), and its chart shows in the layout
    of the screen, loaded."""
    try:
        for width, layout in ((1200, "fig-wide"), (390, "fig-narrow")):
            page.call("Emulation.setDeviceMetricsOverride", width=width, height=900, deviceScaleFactor=1,
                      mobile=width < 600)
            _open(page, demo_report / "report.html")
            seen = page.evaluate("""(() => {
                const section = document.getElementById('forecasts');
                const table = document.getElementById('forecast-table');
                const shown = Array.from(section.querySelectorAll('figure img'))
                    .filter(img => getComputedStyle(img).display !== 'none');
                return {rows: table.tBodies[0].rows.length, names: Array.from(table.tBodies[0].rows)
                            .map(row => row.cells[0].textContent.trim()),
                        table_right: table.getBoundingClientRect().right,
                        shown: shown.map(img => img.className),
                        loaded: shown.every(img => img.complete && img.naturalWidth > 0),
                        nav: !!document.querySelector('nav a[href="#forecasts"]')};
            })()""")
            assert seen["rows"] == 2 and seen["names"] == ["national service (main)", "premium supplier"]
            assert seen["table_right"] <= width, seen
            assert seen["shown"] == [layout] and seen["loaded"] and seen["nav"]
    finally:
        page.call("Emulation.clearDeviceMetricsOverride")
