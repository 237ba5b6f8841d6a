"""Report pages in a real browser (issue 14): Debian's chromium through Selenium and the
system chromedriver (skipped with a reason when they are absent; .ci/run installs them).
No table is wider than its block (nothing hidden behind a horizontal scroll), figures fit
the page, and the contents are numbered once."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from ._cli import run

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
DRIVER = shutil.which("chromedriver")
LOGS = Path(__file__).resolve().parents[1] / "shufflecheck/demo_data/logs"

pytestmark = pytest.mark.skipif(
    CHROMIUM is None or DRIVER is None,
    reason="Debian's chromium and chromium-driver are not installed (.ci/run installs them)",
)

#: every table block, with its scroll width against its visible width, and every figure
LAYOUT = """
const blocks = Array.from(document.querySelectorAll('.table-block')).map(b => {
  const t = b.querySelector('table');
  return {caption: t.caption ? t.caption.textContent : '(no caption)',
          scroll: b.scrollWidth, client: b.clientWidth, table: t.offsetWidth};
});
const main = document.querySelector('main');
const width = main.clientWidth;
const images = Array.from(document.querySelectorAll('figure img')).map(i => ({
  natural: i.naturalWidth, shown: i.getBoundingClientRect().width}));
const toc = Array.from(document.querySelectorAll('nav.toc li')).map(li => li.textContent);
const list = document.querySelector('nav.toc ol');
return {blocks, width, images, toc,
        marker: list ? getComputedStyle(list).listStyleType : null,
        pageScroll: document.documentElement.scrollWidth,
        pageClient: document.documentElement.clientWidth};
"""


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    webdriver = pytest.importorskip("selenium.webdriver", reason="selenium is not installed")
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    profile = tmp_path_factory.mktemp("chromium-profile")
    for flag in (
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        f"--user-data-dir={profile}",
        "--window-size=1280,1800",
    ):
        options.add_argument(flag)
    driver = webdriver.Chrome(service=Service(executable_path=DRIVER), options=options)
    yield driver
    driver.quit()


def check_page(driver, page: Path) -> dict:
    """Load a report page and assert what a reader needs of its layout."""
    driver.get(page.resolve().as_uri())
    layout = driver.execute_script(LAYOUT)
    assert layout["blocks"], page
    for block in layout["blocks"]:
        # nothing behind a horizontal scroll: the table fits its block and the page
        assert block["scroll"] <= block["client"], block
        assert block["table"] <= layout["width"], block
    assert layout["pageScroll"] <= layout["pageClient"]
    for image in layout["images"]:
        assert image["natural"] > 0 and 0 < image["shown"] <= layout["width"] + 1
    # the contents: each entry numbered at most once, sections numbered 1, 2, ...
    assert layout["marker"] == "none"
    numbered = [t for t in layout["toc"] if re.match(r"\d+\. ", t)]
    assert numbered, layout["toc"]
    for k, text in enumerate(numbered, 1):
        assert text.startswith(f"{k}. "), text
        assert not re.match(r"\d+\.\s*\d+\.", text), text
    return layout


def test_demo_report(browser, demo_run):
    out, _ = demo_run
    layout = check_page(browser, out / "report.html")
    # the policy's assessment tables are the widest of the demo (the best-strategy column
    # was once behind a scroll)
    assessed = [b for b in layout["blocks"] if "guessing edge" in b["caption"]]
    assert assessed and all(b["scroll"] <= b["client"] for b in assessed)
    assert layout["toc"][0] == "1. Decisions"


@pytest.mark.parametrize(
    "args",
    [
        pytest.param(("audit", LOGS / "table7.csv", "--time", "recorded_at"), id="audit"),
        pytest.param(
            ("assess", "riffle x3, strip(packets=5), riffle x3, cut"),
            id="assess",
            marks=pytest.mark.slow,  # about 7 s
        ),
        pytest.param(("mix", "riffle"), id="mix"),
        pytest.param(("power", "riffle", "-r", "4-6"), id="power"),
        pytest.param(("fit-riffle", LOGS / "table1-riffles.csv"), id="fit-riffle"),
    ],
)
def test_other_reports(browser, tmp_path, args):
    out = tmp_path / "report"
    result = run(*args, "--report", out)
    assert result.exit_code == 0, result.output
    check_page(browser, out / "report.html")
