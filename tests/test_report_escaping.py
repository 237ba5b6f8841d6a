"""User text in reports is escaped (issue 16): a log whose table name is
``<script>alert(1)</script>`` gives an HTML report with no live script.

The reports are made end to end through the command line (an audit grouped by table,
a policy whose attached log and procedure carry hostile names, a log file with a hostile
name); the HTML is checked element by element, and where Debian's chromium is installed
it is loaded in the headless browser, which would run any live script (a page with a
live script is loaded first, to show that the check can fail).
"""

from __future__ import annotations

import csv
import json
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import pytest

from tests._cli import run

SCRIPT = "<script>alert(1)</script>"
#: payloads that would change the page's title if any of them ran
LIVE = [
    '<script>document.title="PWNED"</script>',
    "<img src=x onerror=\"document.title='PWNED'\">",
    "<svg onload=\"document.title='PWNED'\"></svg>",
]
CODES = " ".join(r + s for s in "SHDC" for r in "A23456789TJQK")
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


class _Elements(HTMLParser):
    """Every element and attribute of a page."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[str] = []
        self.events: list[str] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.events += [name for name, _ in attrs if name.lower().startswith("on")]

    def handle_data(self, data):
        self.text.append(data)


def _elements(html: str) -> _Elements:
    parser = _Elements()
    parser.feed(html)
    parser.close()
    return parser


def _assert_inert(folder: Path, *hostile: str) -> None:
    html = (folder / "report.html").read_text(encoding="utf-8")
    page = _elements(html)
    assert {"script", "svg", "iframe", "object", "embed"}.isdisjoint(page.tags)
    assert page.events == []  # no onerror=, onload=, ...
    assert not any(tag == "img" for tag in page.tags) or all(
        "data:image/png;base64," in chunk for chunk in html.split("<img")[1:]
    )
    shown = "".join(page.text)
    for text in hostile:
        assert text in shown  # shown to the reader as text, not markup
    markdown = (folder / "report.md").read_text(encoding="utf-8")
    for text in hostile:
        assert text not in markdown  # escaped there too
    if CHROMIUM is not None:
        # a live payload would make the title exactly PWNED (the escaped payloads may
        # appear inside the title as text)
        assert _title_after_scripts(folder / "report.html") != "PWNED"


def _title_after_scripts(page: Path) -> str:
    """The page's <title> after headless chromium has run whatever scripts it holds."""
    done = subprocess.run(
        [
            CHROMIUM,
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            f"--user-data-dir={page.parent / '.chromium'}",
            "--dump-dom",
            page.resolve().as_uri(),
        ],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    head = done.stdout.split("</title>")[0]
    return head.rsplit("<title>", 1)[-1]


@pytest.mark.skipif(CHROMIUM is None, reason="Debian's chromium is not installed")
def test_the_browser_check_can_fail(tmp_path):
    page = tmp_path / "live.html"
    page.write_text(f"<!doctype html><title>report</title><p>{LIVE[0]}</p>")
    assert _title_after_scripts(page) == "PWNED"


def test_table_names_in_an_audit_report(tmp_path):
    names = [SCRIPT, *LIVE]
    log = tmp_path / "log.csv"
    with open(log, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["deck", "table", "order"])
        writer.writerows([k, names[k % len(names)], CODES] for k in range(40))
    result = run(
        "audit", log, "--reference", "first", "--by", "table", "--report", tmp_path / "report"
    )
    assert result.exit_code == 0, result.output
    _assert_inert(tmp_path / "report", SCRIPT, LIVE[0])


def test_names_in_a_policy_report(tmp_path):
    (tmp_path / "logs").mkdir()
    hostile_file = '<img src=x onerror="alert(3)">.csv'
    (tmp_path / "logs" / hostile_file).write_text(
        "order\n" + "\n".join([CODES] * 30) + "\n", encoding="utf-8"
    )
    policy = tmp_path / "policy.toml"
    policy.write_text(
        "[policy]\n"
        f"title = {json.dumps(LIVE[1])}\ntarget = 0.1\nsimulate = 200\nmax_repeats = 2\n"
        "[[procedure]]\n"
        f"name = {json.dumps(LIVE[0])}\nsteps = 'riffle x7'\n"
        "[[procedure.log]]\n"
        f"table = {json.dumps(SCRIPT)}\npath = {json.dumps('logs/' + hostile_file)}\n"
        "reference = 'first'\n",
        encoding="utf-8",
    )
    result = run("policy", policy, "--report", tmp_path / "report")
    assert result.exit_code == 0, result.output
    _assert_inert(tmp_path / "report", SCRIPT, LIVE[0], LIVE[1])
