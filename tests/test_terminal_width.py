"""Terminal output fits 100 columns (issue 14): tables wrap their text columns and every
column has a header; prose wraps at spaces. Only a single unbreakable token (a file path)
may run past, and no command here has one that long."""

from __future__ import annotations

from pathlib import Path

import pytest

from shufflecheck.report.render.terminal import WIDTH, format_table, wrap_line

from ._cli import run

DEMO = Path(__file__).resolve().parents[1] / "shufflecheck/demo_data"


def assert_fits(text: str) -> None:
    long = [line for line in text.splitlines() if len(line) > WIDTH and " " in line.strip()]
    assert not long, "\n".join(long)
    for line in text.splitlines():  # a longer line is one token, e.g. a path
        assert len(line) <= WIDTH or len(line.split()) == 1, line


@pytest.mark.parametrize(
    "args",
    [
        pytest.param(("audit", DEMO / "logs/table2.csv"), id="audit"),
        pytest.param(("audit", DEMO / "logs/table7.csv", "--time", "recorded_at"), id="audit-7"),
        pytest.param(("spectrum", "transposition", "-n", "12"), id="spectrum"),
        pytest.param(("spectrum", "riffle", "-n", "12"), id="spectrum-riffle"),
        pytest.param(("mix", "riffle"), id="mix"),
        pytest.param(
            ("assess", "riffle x3, strip(packets=5), riffle x3, cut", "--simulate", "2000"),
            id="assess",
        ),
        pytest.param(("power", "riffle", "-r", "4-6"), id="power"),
        pytest.param(("fit-riffle", DEMO / "logs/table1-riffles.csv"), id="fit-riffle"),
        pytest.param(("characters", "7"), id="characters"),
        pytest.param(
            (
                "track",
                "plug(cards=60), grab(stacks=4, pairs=split), cut(spread=20), cut-card(behind=60)",
                "--simulate",
                "2000",
            ),
            id="track",
        ),
    ],
)
def test_command_fits(args):
    result = run(*args)
    assert result.exit_code == 0, result.output
    assert_fits(result.stdout)


@pytest.mark.slow
def test_policy_fits():
    result = run("policy", DEMO / "policy.toml")  # about 20 s
    assert result.exit_code == 0, result.output
    assert_fits(result.stdout)


def test_demo_fits(demo_run):
    _, result = demo_run
    assert_fits(result.stdout)
    # the policy table (once 226 columns) and the audit lines (once 255) are in it
    assert "Hand-dealt games" in result.stdout and "log Table 7: FLAGGED" in result.stdout
    assert "(1 repetitions)" not in result.stdout


def test_grouped_audit_fits(tmp_path):
    one = (DEMO / "logs/table1.csv").read_text(encoding="utf-8").splitlines()
    seven = (DEMO / "logs/table7.csv").read_text(encoding="utf-8").splitlines()
    path = tmp_path / "tables.csv"
    path.write_text("\n".join(one + seven[1:]) + "\n", encoding="utf-8")
    result = run("audit", path, "--by", "table", "--time", "recorded_at")
    assert result.exit_code == 0, result.output
    assert_fits(result.stdout)


class TestFormatTable:
    def test_wraps_text_columns_and_keeps_numbers_whole(self):
        rows = [["a long description " * 6, "12,345", "another long text " * 5]]
        text = format_table(["what", "decks", "notes"], rows)
        assert_fits(text)
        lines = text.splitlines()
        assert lines[0].split() == ["what", "decks", "notes"]
        assert "12,345" in lines[2]  # the number on the row's first line, unbroken
        words = " ".join(line for line in lines[2:]).split()
        assert words.count("description") == 6 and words.count("another") == 5

    def test_every_column_has_a_header(self):
        with pytest.raises(ValueError, match="header"):
            format_table(["test", ""], [["a", "FLAGGED"]])

    def test_details_under_rows(self):
        text = format_table(
            ["test", "p"], [["runs", "0.1"]], details=["x " * 80], details_header="in words"
        )
        lines = text.splitlines()
        assert lines[1] == "    in words" and lines[3].startswith("runs")
        assert all(line.startswith("    x") for line in lines[4:])
        assert_fits(text)

    def test_narrow_table_unchanged(self):
        assert format_table(["a", "b"], [["x", "1"]]) == "a  b\n-  -\nx  1"

    def test_wrap_line_hangs_under_bullets(self):
        text = wrap_line("  - " + "word " * 40)
        lines = text.splitlines()
        assert lines[0].startswith("  - ") and all(x.startswith("    w") for x in lines[1:])
        path = "/" + "p" * 150
        assert wrap_line(path) == path  # one token stays whole


@pytest.mark.parametrize("model", ["transposition", "riffle"])
def test_spectrum_of_a_full_deck_fits_without_exceptions(model):
    # 52 cards: multiplicities of up to 68 digits (d^2 for S_52) and the shape 1^52 once
    # ran the table to 210 columns; now no line at all is longer than 100
    result = run("spectrum", model, "-n", "52")
    assert result.exit_code == 0, result.output
    assert max(len(line) for line in result.stdout.splitlines()) <= WIDTH
    if model == "transposition":
        assert "(1^52)" in result.stdout and "(2,1^50)" in result.stdout
        assert "multiplicity, exact: " in result.stdout  # the digits under a rounded cell
        assert "its exact digits are on the line under the row" in " ".join(result.stdout.split())


def test_compact_partitions_read_back():
    from shufflecheck.core.partitions import format_partition, parse_partition

    for parts in [(52,), (2, 1, 1), (3, 3, 3, 1, 1, 1, 1), (1,) * 52, (5, 2, 2, 2)]:
        text = format_partition(parts, compact=True)
        assert parse_partition(text) == parts, text
    assert format_partition((2, 1, 1, 1, 1), compact=True) == "2,1^4"
