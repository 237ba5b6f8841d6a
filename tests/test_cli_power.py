"""``shufflecheck power`` through typer's CliRunner (issue 5): the JSON shape, one plan per
repetition count, decks needed growing with the riffle count, and bad --repeat values."""

from __future__ import annotations

import json

import pytest

from ._cli import one_line_error, run

TOP_KEYS = {
    "procedure",
    "cards",
    "alpha",
    "power",
    "seed",
    "simulated_decks",
    "tests_in_battery",
    "per_test_level",
    "plans",
}
ROW_KEYS = {"test", "title", "decks", "power", "kind", "method"}


def fewest(plan: dict) -> int | None:
    """Decks the most sensitive test of the battery needs (None: no test detects it)."""
    needed = [row["decks"] for row in plan["rows"] if row["decks"] is not None]
    return min(needed) if needed else None


@pytest.fixture(scope="module")
def riffles() -> dict:
    result = run("power", "riffle", "--repeat", "4-8", "--simulate", 2000, "--seed", 3, "--json")
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


class TestPowerJson:
    def test_shape(self, riffles):
        assert TOP_KEYS <= set(riffles)
        assert riffles["procedure"] == "riffle"
        assert riffles["cards"] == 52
        assert riffles["alpha"] == 0.01 and riffles["power"] == 0.9
        assert riffles["seed"] == 3
        assert riffles["simulated_decks"] == 2000
        # each test at alpha / m (Bonferroni, conservative for Holm)
        assert riffles["per_test_level"] == pytest.approx(
            riffles["alpha"] / riffles["tests_in_battery"]
        )
        for plan in riffles["plans"]:
            assert len(plan["rows"]) == riffles["tests_in_battery"]
            for row in plan["rows"]:
                assert ROW_KEYS <= set(row)
                assert row["kind"] == "estimate"
                if row["decks"] is not None:
                    assert row["decks"] >= 1
                    assert row["power"] >= riffles["power"] - 1e-9

    def test_one_plan_per_count(self, riffles):
        assert [plan["repeats"] for plan in riffles["plans"]] == [4, 5, 6, 7, 8]

    def test_decks_needed_grow_with_riffles(self, riffles):
        needed = [fewest(plan) for plan in riffles["plans"]]
        assert all(n is not None for n in needed), needed
        assert needed == sorted(needed)
        # each riffle roughly halves the departure from uniform (Bayer & Diaconis 1992),
        # so eight riffles need many more decks than four
        assert needed[-1] >= 10 * needed[0]

    def test_rising_sequences_grow(self, riffles):
        rising = [
            next(r["decks"] for r in plan["rows"] if r["test"] == "rising-sequences")
            for plan in riffles["plans"]
        ]
        assert rising == sorted(rising)

    def test_four_riffles_need_at_most_20_decks(self, riffles):
        # consistent with issue 5's sensitivity requirement: 4 riffles flagged from 20 decks
        assert fewest(riffles["plans"][0]) <= 20

    def test_single_count_default(self):
        result = run("power", "riffle x6", "--simulate", 1000, "--json")
        assert result.exit_code == 0, result.output
        data = json.loads(result.stdout)
        assert [plan["repeats"] for plan in data["plans"]] == [1]
        assert data["procedure"] == "riffle x6"


class TestPowerTerminal:
    def test_table_and_advice(self):
        result = run("power", "riffle", "--repeat", "5-6", "--simulate", 1000)
        assert result.exit_code == 0, result.output
        assert "r = 5" in result.stdout and "r = 6" in result.stdout
        assert "null laws exact" in result.stdout
        assert "log about" in result.stdout


class TestPowerBadInput:
    @pytest.mark.parametrize(
        ("repeat", "fragment"),
        [
            ("0-3", "within 1..50"),
            ("9-2", "low <= high"),
            ("x", "a count like 5 or a range like 4-8"),
            ("1-60", "within 1..50"),
            ("4-", "a count like 5 or a range like 4-8"),
        ],
    )
    def test_bad_repeat(self, repeat, fragment):
        message = one_line_error(run("power", "riffle", "--repeat", repeat))
        assert fragment in message and repeat in message

    @pytest.mark.parametrize(("option", "value"), [("--alpha", 2), ("--power", 1.5)])
    def test_bad_levels(self, option, value):
        assert option in one_line_error(run("power", "riffle", option, value))

    def test_plot_needs_a_range(self, tmp_path):
        result = run("power", "riffle", "--simulate", 500, "--plot", tmp_path / "p.png")
        assert "--plot needs a range" in one_line_error(result)
        assert not (tmp_path / "p.png").exists()
