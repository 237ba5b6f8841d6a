"""The fleet dashboard: the page and its JSON, the CLI, and the page in a real headless
browser (Debian's chromium through Selenium and the system chromedriver; skipped with a
reason when they are absent; .ci/run installs them)."""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import pytest

from shufflecheck.analyses.monitor import fleet_status, ingest_log
from shufflecheck.report.dashboard import CSP, dashboard_html

from ._cli import command_json, one_line_error, run

LOGS = Path(__file__).resolve().parents[1] / "shufflecheck/demo_data/logs"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
DRIVER = shutil.which("chromedriver")


@pytest.fixture(scope="module")
def fleet(tmp_path_factory) -> tuple[Path, Path]:
    """A store with the demo's three tables and its dashboard folder, made by the CLI."""
    folder = tmp_path_factory.mktemp("fleet")
    store = folder / "fleet.db"
    out = folder / "dashboard"
    for name in ("table1.csv", "table2.csv", "table7.csv"):
        ingest_log(store, LOGS / name)
    result = run("monitor", "dashboard", store, "--report", out)
    assert result.exit_code == 0, result.output
    return store, out


class TestPage:
    def test_json_and_html_agree(self, fleet):
        out = fleet[1]
        payload = json.loads((out / "dashboard.json").read_text())
        assert [t["table"] for t in payload["tables"]] == ["Table 1", "Table 2", "Table 7"]
        html = (out / "dashboard.html").read_text()
        assert f'content="{CSP}"' in html
        for t in payload["tables"]:
            assert t["table"] in html
        assert html.count('<svg class="timeline"') == 3
        # Table 7: the change alarm and its change-point set are on the page
        t7 = payload["tables"][2]
        found = t7["change"]["set_now"]
        assert f"began between deck {found['low']:,} and {found['high']:,}" in html

    def test_page_refers_to_nothing_outside(self, fleet):
        html = (fleet[1] / "dashboard.html").read_text()
        for needle in ("<script", "<link", "src=", "url(", "@import", "https:"):
            assert needle not in html
        # the only http text is the SVG namespace name, which is never fetched
        assert html.count("http:") == html.count('xmlns="http://www.w3.org/2000/svg"')

    def test_rendering_is_a_function_of_the_payload(self, fleet):
        payload = fleet_status(fleet[0]).as_json()
        assert dashboard_html(payload) == dashboard_html(json.loads(json.dumps(payload)))


class TestCommands:
    def test_status_json(self, fleet):
        payload = command_json("monitor", "status", fleet[0])
        t2 = payload["tables"][1]
        assert t2["evidence"]["alarm"] is not None  # the under-shuffling crew
        assert t2["evidence"]["kind"] == "exact"
        assert t2["evidence"]["guarantee"]["kind"] == "bound"
        assert t2["change"]["set_now"]["kind"] == "estimate"
        t1 = payload["tables"][0]
        assert t1["evidence"]["alarm"] is None and t1["change"]["alarm"] is None

    def test_status_text(self, fleet):
        result = run("monitor", "status", fleet[0])
        assert result.exit_code == 0
        assert "Table 7: 2,400 decks" in result.stdout
        assert "the departure began between deck" in result.stdout
        assert "not a certification" in result.stdout

    def test_ingest_twice_and_errors(self, tmp_path):
        store = tmp_path / "s.db"
        log = LOGS / "table2.csv"
        first = command_json("monitor", "ingest", store, log)
        assert first[0]["decks_added"] == 501
        second = run("monitor", "ingest", store, log)
        assert second.exit_code == 0 and "already ingested" in second.stdout
        other = tmp_path / "other.db"
        message = one_line_error(run("monitor", "ingest", other, log, "--time", "when"))
        assert "time column 'when'" in message and "--time" in message
        message = one_line_error(run("monitor", "status", tmp_path / "none.db"))
        assert "does not exist" in message


def _driver(tmp_path: Path):
    webdriver = pytest.importorskip("selenium.webdriver", reason="selenium is not installed")
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for flag in (
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        f"--user-data-dir={tmp_path / 'profile'}",
        "--window-size=1200,1800",
    ):
        options.add_argument(flag)
    options.set_capability("goog:loggingPrefs", {"performance": "ALL"})
    return webdriver.Chrome(service=Service(executable_path=DRIVER), options=options)


@pytest.mark.skipif(
    CHROMIUM is None or DRIVER is None,
    reason="Debian's chromium and chromium-driver are not installed (.ci/run installs them)",
)
class TestBrowser:
    def test_renders_with_charts_and_loads_nothing_from_outside(self, fleet, tmp_path):
        page = (fleet[1] / "dashboard.html").resolve().as_uri()
        driver = _driver(tmp_path)
        try:
            driver.get_log("performance")  # drain what the browser's own start-up page did
            driver.get(page)
            assert driver.title == "shufflecheck monitoring: fleet dashboard"
            charts = driver.find_elements("css selector", "svg.timeline")
            assert len(charts) == 3
            for chart in charts:
                box = chart.rect
                assert box["width"] > 600 and box["height"] > 150
                lines = chart.find_elements("css selector", "polyline.series")
                assert len(lines) == 2
                assert all(len(x.get_attribute("points").split()) > 100 for x in lines)
            # Table 7's chart shows the change alarm and the shaded change-point set
            seven = driver.find_element("css selector", "#table-table-7")
            assert seven.find_elements("css selector", "rect.change-set")
            assert seven.find_elements("css selector", "line.alarm-mark")
            assert "change alarm at deck" in seven.text
            resources = driver.execute_script(
                "return performance.getEntriesByType('resource').map(e => e.name)"
            )
            assert resources == []
            requested, anywhere = [], []
            for entry in driver.get_log("performance"):
                message = json.loads(entry["message"])["message"]
                if message["method"] == "Network.requestWillBeSent":
                    params = message["params"]
                    anywhere.append(params["request"]["url"])
                    if params.get("documentURL") == page:
                        requested.append(params["request"]["url"])
            # the page's document asked for itself only; nothing at all went to a network
            assert requested == [page], requested
            assert not [u for u in anywhere if u.startswith(("http:", "https:", "ws"))]
            shot = tmp_path / "dashboard.png"
            assert driver.save_screenshot(str(shot))
            assert shot.stat().st_size > 20_000
            if os.environ.get("SHUFFLECHECK_KEEP_SCREENSHOT"):
                shutil.copy(shot, os.environ["SHUFFLECHECK_KEEP_SCREENSHOT"])
        finally:
            driver.quit()
