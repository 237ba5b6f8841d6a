"""Since when, per group (issue 14): the interval on the start, each group's estimate in the
terminal and the report, and the chart of the statistic over time per group."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.stats.timeline import change_interval, change_point

from ._cli import command_json, run

LOGS = Path(__file__).resolve().parents[1] / "shufflecheck/demo_data/logs"
#: first deck of Table 7's fault in the demo scenario (shufflecheck/demo_data/README.md)
FAULT_DECK = 1601


def _brute_interval(x, mean0, var0, direction, level):
    # the module notes' set, one start at a time
    point = change_point(x, mean0, var0, direction)
    shift = direction * (point.mean_after - mean0)
    sums = []
    for v in range(x.size):
        tail = x[v:]
        sums.append(float(np.sum((shift * direction * (tail - mean0) - shift**2 / 2) / var0)))
    best = max(sums)
    inside = [v for v, s in enumerate(sums) if s >= best - np.log(2 / (1 - level))]
    return min(inside[0], point.start), max(inside[-1], point.start)


class TestInterval:
    def test_matches_brute_force(self):
        rng = np.random.default_rng(5)
        for direction in (1, -1):
            x = np.concatenate([rng.normal(0, 1, 120), rng.normal(0.8 * direction, 1, 60)])
            found = change_interval(x, 0.0, 1.0, direction, level=0.9)
            assert (found.low, found.high) == _brute_interval(x, 0.0, 1.0, direction, 0.9)

    def test_coverage_on_gaussian_series(self):
        # Monte Carlo: a planted start at 300 of 500 with a shift of half a standard
        # deviation; the nominal 95% set must hold it in most runs (statistical tolerance:
        # at least 85% of 200 runs; measured about 0.95)
        rng = np.random.default_rng(11)
        held = 0
        for _ in range(200):
            x = np.concatenate([rng.normal(0, 1, 300), rng.normal(0.5, 1, 200)])
            found = change_interval(x, 0.0, 1.0, +1, level=0.95)
            held += found.low <= 300 <= found.high
        assert held / 200 >= 0.85

    def test_holds_the_estimate_and_refuses_bad_levels(self):
        x = np.array([0.0] * 10 + [5.0] * 10)
        found = change_interval(x, 0.0, 1.0, +1)
        assert found.low <= 10 <= found.high
        with pytest.raises(InputError, match="level"):
            change_interval(x, 0.0, 1.0, +1, level=1.0)


@pytest.fixture(scope="module")
def grouped(tmp_path_factory) -> Path:
    """Tables 1 and 7 of the demo in one log with a table column (as a card room would
    export them); Table 7 has the shelf-machine fault from deck 1601."""
    folder = tmp_path_factory.mktemp("grouped")
    one = (LOGS / "table1.csv").read_text(encoding="utf-8").splitlines()
    seven = (LOGS / "table7.csv").read_text(encoding="utf-8").splitlines()
    assert one[0] == seven[0] and "table" in one[0].split(",")
    path = folder / "tables.csv"
    path.write_text("\n".join(one + seven[1:]) + "\n", encoding="utf-8")
    return path


class TestGroupedAudit:
    def test_json_interval_holds_the_fault(self, grouped):
        data = command_json("audit", grouped, "--by", "table", "--time", "recorded_at")
        when = data["groups"]["Table 7"]["since_when"]
        interval = when["interval"]
        assert interval["kind"] == "estimate" and interval["level"] == 0.95
        assert interval["low"] <= FAULT_DECK <= interval["high"]
        assert data["groups"]["Table 1"]["since_when"] is None

    def test_terminal_prints_each_group(self, grouped):
        result = run("audit", grouped, "--by", "table", "--time", "recorded_at")
        assert result.exit_code == 0, result.output
        text = " ".join(result.stdout.split())
        assert "Since when in Table 7 (estimate): the departure in correct guesses" in text
        assert "95% interval: decks" in text
        assert "2026-11-04T09:55:30" in text  # the time of the first deck of the stretch
        assert "Since when in Table 1" not in text

    def test_report_charts_the_statistic_per_group(self, grouped, tmp_path):
        from shufflecheck.report import figures as F

        out = tmp_path / "report"
        result = run("audit", grouped, "--by", "table", "--time", "recorded_at", "--report", out)
        assert result.exit_code == 0, result.output
        report = json.loads((out / "report.json").read_text(encoding="utf-8"))
        section = report["sections"][0]
        assert any("Since when in Table 7 (estimate)" in p for p in section["paragraphs"])
        # the pooled decks are not flagged, so the answer names the flagged table itself
        assert any(a.startswith("Table 7: FLAGGED") and "Since when" in a for a in report["answer"])
        (chart,) = [f for f in section["figures"] if f["file"].endswith("since-when.png")]
        (group,) = chart["data"]["groups"]
        assert group["label"] == "Table 7"
        assert group["low"] <= FAULT_DECK <= group["high"]
        assert group["mean_after"] > group["expected"]
        # the image: the interval's shading and the moving average both show
        from PIL import Image

        image = np.asarray(Image.open(out / chart["file"]).convert("RGB")).astype(int)
        for colour in (F.OKABE_ITO["blue"], F.OKABE_ITO["vermillion"]):
            rgb = np.array([int(colour[k : k + 2], 16) for k in (1, 3, 5)])
            assert (np.abs(image - rgb).sum(axis=2) <= 30).sum() > 200, colour
        # orange at 25% on white, where the shaded interval is
        shade = np.array([255, 255, 255]) * 0.75 + np.array([0xE6, 0x9F, 0x00]) * 0.25
        assert (np.abs(image - shade).sum(axis=2) <= 12).sum() > 500

    def test_timeline_figure_checks_its_input(self):
        from shufflecheck.report.figures import timeline_figure

        spec = {
            "label": "x",
            "values": [1.0] * 10,
            "expected": 1.0,
            "start": 5,
            "low": 6,
            "high": 8,
            "level": 0.95,
            "what": "w",
        }
        with pytest.raises(InputError, match="low <= start <= high"):
            timeline_figure([spec])
