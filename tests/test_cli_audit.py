"""``shufflecheck audit`` through typer's CliRunner (issue 5): the JSON contract, exit codes,
groups, time order, quarantine, one-line errors for malformed logs, the input left
untouched, and the report folder."""

from __future__ import annotations

import csv
import hashlib
import json
from pathlib import Path

import pytest

from ._cli import command_json, one_line_error, run

CONTRACT = {"decks", "set_aside", "alpha", "flagged", "tests", "groups"}
TEST_KEYS = {"name", "statistic", "p_value", "p_adjusted", "method", "effect"}


def audit_json(*args: object) -> dict:
    return command_json("audit", *args)


def sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def simulate(out: Path, procedure: str, *args: object) -> Path:
    result = run("simulate", procedure, "--out", out, *args)
    assert result.exit_code == 0, result.output
    return out


def rewrite(source: Path, target: Path, change) -> Path:
    """Copy a CSV log with ``change(rows)`` applied to its rows (header kept)."""
    with open(source, newline="", encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    change(rows)
    with open(target, "w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(rows)
    return target


def holm(p_values: list[float]) -> list[float]:
    """Holm's step-down adjusted p-values (Holm 1979, Scand. J. Statist. 6, 65-70)."""
    order = sorted(range(len(p_values)), key=p_values.__getitem__)
    adjusted = [0.0] * len(p_values)
    running = 0.0
    for rank, i in enumerate(order):
        running = max(running, min(1.0, (len(p_values) - rank) * p_values[i]))
        adjusted[i] = running
    return adjusted


@pytest.fixture(scope="module")
def logs(tmp_path_factory) -> dict[str, Path]:
    folder = tmp_path_factory.mktemp("audit-logs")
    out = {
        # 4 riffles from row 1: strongly biased (issue 5 sensitivity case)
        "biased": simulate(
            folder / "biased.csv", "riffle x4", "--decks", 20, "--seed", 3, "--reference", "first"
        ),
        # 20 riffles from the previous deck: as good as random (TV < 3e-6, exact)
        "fair": simulate(folder / "fair.csv", "riffle x20", "--decks", 200, "--seed", 9),
    }
    a = simulate(
        folder / "a.csv", "riffle x4", "--decks", 30, "--seed", 1, "--table", "A",
        "--start-time", "2026-01-01T10:00:00",
    )  # fmt: skip
    b = simulate(
        folder / "b.csv", "riffle x12", "--decks", 30, "--seed", 2, "--table", "B",
        "--start-time", "2026-01-01T10:00:00",
    )  # fmt: skip
    with open(a, newline="") as fa, open(b, newline="") as fb:
        rows_a, rows_b = list(csv.reader(fa)), list(csv.reader(fb))
    # two tables interleaved in one log, in time order (A's deck first at each time)
    with open(folder / "tables.csv", "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(rows_a[0])
        for x, y in zip(rows_a[1:], rows_b[1:], strict=True):
            writer.writerow(x)
            writer.writerow(y)
    out["tables"] = folder / "tables.csv"
    out["timed"] = a
    return out


class TestAuditContract:
    @pytest.fixture(scope="class")
    @classmethod
    def data(cls, logs) -> dict:
        return audit_json(logs["biased"], "--reference", "first")

    def test_fields(self, data):
        assert CONTRACT <= set(data)
        assert data["decks"] == 20
        assert data["set_aside"] == 0
        assert data["alpha"] == 0.01
        assert isinstance(data["flagged"], bool)
        assert data["groups"] == {}
        assert len(data["tests"]) >= 10
        for test in data["tests"]:
            assert TEST_KEYS <= set(test)
            assert 0 <= test["p_value"] <= test["p_adjusted"] <= 1
            assert test["method"] in ("exact", "asymptotic", "monte-carlo")

    def test_holm_adjustment(self, data):
        tests = data["tests"]
        expected = holm([t["p_value"] for t in tests])  # Holm (1979), computed here
        for test, adjusted in zip(tests, expected, strict=True):
            assert test["p_adjusted"] == pytest.approx(adjusted, rel=1e-9), test["name"]

    def test_flagged_is_holm_at_alpha(self, data):
        tests = data["tests"]
        assert data["flagged"] == any(t["p_adjusted"] <= data["alpha"] for t in tests)
        for test in tests:
            assert test["flagged"] == (test["p_adjusted"] <= data["alpha"])

    def test_biased_log_is_flagged_by_rising_sequences(self, data):
        assert data["flagged"] is True
        rising = next(t for t in data["tests"] if t["name"] == "rising-sequences")
        assert rising["method"] == "exact"
        # Bayer & Diaconis (1992): after 4 riffles about 13 to 14 rising sequences on
        # average (forward shuffle), against (n + 1) / 2 = 26.5 for a random deck
        assert rising["effect"]["expected"] == pytest.approx(26.5)
        assert rising["effect"]["observed"] < 20

    def test_effects_in_plain_units(self, data):
        for test in data["tests"]:
            assert test["effect"]["kind"] == "estimate"
            assert test["effect"]["text"]

    def test_alpha_option(self, logs):
        data = audit_json(logs["biased"], "--reference", "first", "--alpha", 0.05)
        assert data["alpha"] == 0.05
        assert data["flagged"] == any(t["p_adjusted"] <= 0.05 for t in data["tests"])


class TestAuditExitCode:
    def test_zero_when_flagged(self, logs):
        result = run("audit", logs["biased"], "--reference", "first")
        assert result.exit_code == 0, result.output
        first = result.stdout.splitlines()[0]
        assert first.startswith(f"{logs['biased']}: FLAGGED")

    def test_zero_when_not_flagged(self, logs):
        result = run("audit", logs["fair"])
        assert result.exit_code == 0, result.output
        assert "FLAGGED" not in result.stdout.splitlines()[0]
        assert audit_json(logs["fair"])["flagged"] is False

    def test_terminal_sorted_by_adjusted_p_with_caution(self, logs):
        result = run("audit", logs["biased"], "--reference", "first")
        data = audit_json(logs["biased"], "--reference", "first")
        ordered = sorted(data["tests"], key=lambda t: t["p_adjusted"])
        # each test's effect in words is printed under its row (wrapped to 100 columns)
        text = " ".join(result.stdout.split())
        table = text.index("statistic")  # the small-log note above names tests too
        positions = [text.find(t["effect"]["text"], table) for t in ordered[:5]]
        assert all(p > 0 for p in positions) and positions == sorted(positions)
        assert "not a certification" in result.stdout
        assert "accredited test laboratories" in result.stdout


class TestAuditGroups:
    def test_by_table(self, logs):
        data = audit_json(logs["tables"], "--by", "table")
        assert set(data["groups"]) == {"A", "B"}
        a, b = data["groups"]["A"], data["groups"]["B"]
        assert a["decks"] == b["decks"] == 30
        assert data["decks"] == 60  # each table's first row is its own reference
        assert a["flagged"] is True  # 4 riffles
        # 12 riffles: TV 0.0108 (exact, Bayer & Diaconis 1992 formula), far too small to
        # show in 30 decks
        assert b["flagged"] is False

    def test_terminal_lists_groups(self, logs):
        result = run("audit", logs["tables"], "--by", "table")
        assert result.exit_code == 0, result.output
        lines = result.stdout.splitlines()
        assert (
            "By table: 1 of 2 flagged (each group's battery at the same family-wise level)."
            in lines
        )
        row = {line.split()[0]: line for line in lines if line[:2] in ("A ", "B ")}
        assert "FLAGGED" in row["A"] and "FLAGGED" not in row["B"]

    def test_unknown_column(self, logs):
        message = one_line_error(run("audit", logs["tables"], "--by", "dealer"))
        assert "dealer" in message


class TestAuditTime:
    def test_time_order_and_since_when_row(self, logs):
        data = audit_json(logs["timed"], "--time", "recorded_at")
        assert data["log"]["time"] == "recorded_at"
        assert data["flagged"] is True
        where = data["since_when_rows"]["all"]
        assert where["row"] >= 3  # row 1 header, row 2 the starting order
        assert where["time"].startswith("2026-01-01T")

    def test_out_of_order_names_the_row(self, logs, tmp_path):
        def swap(rows):  # file rows 11 and 12 swap their times
            rows[10][2], rows[11][2] = rows[11][2], rows[10][2]

        bad = rewrite(logs["timed"], tmp_path / "swapped.csv", swap)
        message = one_line_error(run("audit", bad, "--time", "recorded_at"))
        assert f"{bad} row 12" in message and "back in time" in message

    def test_not_a_time(self, logs, tmp_path):
        def spoil(rows):
            rows[8][2] = "yesterday"

        bad = rewrite(logs["timed"], tmp_path / "spoilt.csv", spoil)
        message = one_line_error(run("audit", bad, "--time", "recorded_at"))
        assert f"{bad} row 9" in message and "'yesterday'" in message

    def test_missing_column(self, logs):
        assert "'when'" in one_line_error(run("audit", logs["timed"], "--time", "when"))


def _cards(rows, index):
    return rows[index][-1].split()


def _unknown(rows):
    cards = _cards(rows, 6)
    cards[2] = "ZZ"
    rows[6][-1] = " ".join(cards)


def _duplicate(rows):
    cards = _cards(rows, 6)
    cards[40] = cards[3]
    rows[6][-1] = " ".join(cards)


def _short(rows):
    rows[6][-1] = " ".join(_cards(rows, 6)[:-1])


def _long(rows):
    cards = _cards(rows, 6)
    rows[6][-1] = " ".join([*cards, cards[0]])


class TestAuditMalformed:
    @pytest.mark.parametrize(
        ("change", "problem"),
        [
            (_unknown, "unknown card code 'ZZ' at position 3"),
            (_duplicate, "appears twice (positions 4 and 41)"),
            (_short, "51 cards"),
            (_long, "53 cards"),
        ],
    )
    def test_bad_row(self, logs, tmp_path, change, problem):
        bad = rewrite(logs["biased"], tmp_path / "bad.csv", change)
        before = sha256(bad)
        message = one_line_error(run("audit", bad, "--reference", "first"))
        # rows are counted as a spreadsheet shows them: header row 1, index 6 is row 7
        assert message.startswith(f"error: {bad} row 7: ")
        assert problem in message
        assert sha256(bad) == before

    def test_empty_file(self, tmp_path):
        empty = tmp_path / "empty.csv"
        empty.write_bytes(b"")
        assert one_line_error(run("audit", empty)) == f"error: {empty}: empty file"

    def test_header_only(self, tmp_path):
        header = tmp_path / "header.csv"
        header.write_text("deck,order\n", encoding="utf-8")
        message = one_line_error(run("audit", header))
        assert str(header) in message and "no deck rows" in message

    def test_missing_file(self, tmp_path):
        assert "no such file" in one_line_error(run("audit", tmp_path / "absent.csv"))

    @pytest.mark.parametrize("alpha", [0, 1.5])
    def test_bad_alpha(self, logs, alpha):
        assert "alpha" in one_line_error(run("audit", logs["fair"], "--alpha", alpha))


class TestAuditQuarantine:
    def test_sets_bad_rows_aside(self, logs, tmp_path):
        bad = rewrite(logs["fair"], tmp_path / "dup.csv", _duplicate)
        quarantine = tmp_path / "quarantine.csv"
        data = audit_json(bad, "--quarantine", quarantine)
        assert data["set_aside"] == 1
        assert data["log"]["set_aside_reasons"] == {"duplicate-card": 1}
        # reference 'previous': the deck after the bad row has no reference left
        assert data["log"]["untested_after_set_aside"] == 1
        assert data["decks"] == 200 - 1 - 1
        with open(quarantine, newline="", encoding="utf-8") as handle:
            kept = list(csv.DictReader(handle))
        assert len(kept) == 1
        assert kept[0]["row"] == "7" and kept[0]["reason"] == "duplicate-card"
        assert "appears twice" in kept[0]["problem"]

    def test_terminal_says_how_many(self, logs, tmp_path):
        bad = rewrite(logs["fair"], tmp_path / "dup.csv", _duplicate)
        result = run("audit", bad, "--quarantine", tmp_path / "q.csv")
        assert result.exit_code == 0, result.output
        assert "1 set aside" in result.stdout

    def test_quarantine_onto_the_log_is_refused(self, logs, tmp_path):
        bad = rewrite(logs["fair"], tmp_path / "dup.csv", _duplicate)
        before = sha256(bad)
        assert "the log itself" in one_line_error(run("audit", bad, "--quarantine", bad))
        assert sha256(bad) == before


class TestAuditLeavesInputAlone:
    def test_sha256_unchanged(self, logs, tmp_path):
        bad = rewrite(logs["tables"], tmp_path / "tables.csv", _duplicate)
        before = sha256(bad), bad.stat().st_size
        result = run(
            "audit", bad, "--by", "table", "--time", "recorded_at",
            "--quarantine", tmp_path / "q.csv", "--report", tmp_path / "report",
        )  # fmt: skip
        assert result.exit_code == 0, result.output
        assert (sha256(bad), bad.stat().st_size) == before


class TestAuditReport:
    def test_writes_folder(self, logs, tmp_path):
        folder = tmp_path / "report"
        result = run("audit", logs["biased"], "--reference", "first", "--report", folder)
        assert result.exit_code == 0, result.output
        assert f"Wrote report {folder}" in result.stdout
        for name in ("report.md", "report.html", "report.json"):
            assert (folder / name).is_file()
        figures = sorted(p.name for p in (folder / "figures").iterdir())
        assert figures and all(name.endswith(".png") for name in figures)
        report = json.loads((folder / "report.json").read_text(encoding="utf-8"))
        inputs = report["reproducibility"]["inputs"]
        assert [i["sha256"] for i in inputs] == [sha256(logs["biased"])]
