"""``shufflecheck assess`` through typer's CliRunner (issue 4): the JSON shape, exact rows
against the published riffle table, rigorous bounds for mixed procedures, the guessing
fields, reproducibility from --seed, procedure files and parse errors."""

from __future__ import annotations

import json
from fractions import Fraction

import pytest

from ._cli import command_json, one_line_error, run

TOP_KEYS = {
    "procedure",
    "name",
    "cards",
    "feature",  # what the distances are on: distinct cards here (shoes: docs/shoes.md)
    "deck",
    "decks",
    "seed",
    "confidence",
    "rows",
    "notes",
    "caution",
}
ROW_KEYS = {
    "repeats",
    "exact",
    "upper_bound",
    "upper_bound_extra",
    "upper_bound_blocks",
    "conjectured",
    "estimated",
    "lower_bound",
    "lower_bound_by_statistic",
    "guessing",
}
METRICS = ("total_variation", "separation", "kl_bits")
#: small Monte Carlo samples keep the run fast; every check below holds at this size
DECKS = "2000"


def assess_json(*args: object) -> dict:
    return command_json("assess", *args)


def harmonic(n: int) -> Fraction:
    """H_n = sum 1/j exactly (numerators OEIS A001008, denominators A002805)."""
    return sum((Fraction(1, j) for j in range(1, n + 1)), Fraction(0))


@pytest.fixture(scope="module")
def riffles() -> dict:
    """'riffle x5' for r = 1, 2: the whole procedure is the exact riffle model."""
    return assess_json("riffle x5", "--repeat", "1-2", "--simulate", DECKS, "--seed", 11)


@pytest.fixture(scope="module")
def mixed() -> dict:
    """A procedure with a step (strip) that has no exact law: bounds only."""
    return assess_json("strip, riffle x8", "--repeat", "1-2", "--simulate", DECKS, "--seed", 12)


class TestAssessShape:
    def test_top_level(self, riffles):
        assert set(riffles) == TOP_KEYS
        assert riffles["procedure"] == "riffle x5"
        assert riffles["cards"] == 52
        assert riffles["decks"] == int(DECKS)
        assert riffles["seed"] == 11
        assert riffles["confidence"] == 0.99
        assert "not a certification" in riffles["caution"]

    def test_rows(self, riffles):
        assert [row["repeats"] for row in riffles["rows"]] == [1, 2]
        for row in riffles["rows"]:
            assert set(row) == ROW_KEYS

    def test_lower_bounds_are_labelled(self, riffles):
        for row in riffles["rows"]:
            for metric in METRICS:
                bound = row["lower_bound"][metric]
                assert bound["kind"] == "bound" and bound["side"] == "lower"
                assert bound["confidence"] == 0.99
            for by_statistic in row["lower_bound_by_statistic"]:
                assert 0 <= by_statistic["total_variation_lower_bound"] <= 1
                assert 0 < by_statistic["measured_decks"] <= int(DECKS)


class TestAssessExact:
    def test_riffle_x7(self):
        data = assess_json("riffle x7", "--repeat", 1, "--simulate", DECKS)
        exact = data["rows"][0]["exact"]
        assert exact["kind"] == "exact"
        # Bayer & Diaconis (1992), variation distance after 7 riffles of 52 cards: 0.334
        assert round(exact["total_variation"], 3) == 0.334

    def test_repeats_multiply_riffles(self, riffles):
        first, second = (row["exact"] for row in riffles["rows"])
        # Bayer & Diaconis (1992) table: 0.924 after 5 riffles, 0.043 after 10
        assert round(first["total_variation"], 3) == 0.924
        assert round(second["total_variation"], 3) == 0.043
        assert first["kind"] == second["kind"] == "exact"

    def test_lower_bound_below_exact(self, riffles):
        for row in riffles["rows"]:
            for metric in METRICS:
                # a valid lower confidence bound (99%) sits below the exact value
                assert row["lower_bound"][metric]["value"] <= row["exact"][metric] + 1e-12

    def test_terminal_shows_exact_value(self):
        result = run("assess", "riffle x7", "--repeat", 1, "--simulate", DECKS)
        assert result.exit_code == 0, result.output
        # Bayer & Diaconis (1992): 0.334 (printed with four significant digits)
        assert "= 0.3341" in result.stdout
        assert "exact" in result.stdout
        assert "not a certification" in result.stdout


class TestAssessBounds:
    def test_no_exact_value(self, mixed):
        assert all(row["exact"] is None for row in mixed["rows"])

    def test_lower_at_most_upper(self, mixed):
        for row in mixed["rows"]:
            for metric, upper in row["upper_bound"].items():
                assert upper["kind"] == "bound" and upper["side"] == "upper"
                lower = row["lower_bound"][metric]
                assert lower["value"] <= upper["value"] + 1e-12, (row["repeats"], metric)

    def test_upper_bound_from_exact_block(self, mixed):
        first = mixed["rows"][0]
        assert "riffle x8" in first["upper_bound_blocks"]
        # a further step never increases TV, so the 8 riffles bound the whole procedure:
        # Bayer & Diaconis (1992), 0.167 after 8 riffles
        assert round(first["upper_bound"]["total_variation"]["value"], 3) == 0.167

    def test_upper_bound_never_grows_with_repeats(self, mixed):
        first, second = (row["upper_bound"]["total_variation"]["value"] for row in mixed["rows"])
        assert second <= first + 1e-12

    def test_procedure_without_exact_block_is_bounded_by_one(self):
        data = assess_json("strip, cut", "--repeat", 1, "--simulate", DECKS)
        row = data["rows"][0]
        upper = row["upper_bound"].get("total_variation")
        assert upper is None or upper["value"] <= 1
        assert 0 <= row["lower_bound"]["total_variation"]["value"] <= 1


class TestAssessGuessing:
    def test_uniform_mean_is_harmonic_number(self, riffles):
        for row in riffles["rows"]:
            guessing = row["guessing"]
            # H_52 exactly (OEIS A001008 / A002805), floats only at the end
            assert guessing["uniform_mean"] == pytest.approx(float(harmonic(52)), rel=1e-12)
            assert guessing["uniform_method"].startswith("exact")

    def test_extra_guesses_field(self, riffles):
        for row in riffles["rows"]:
            guessing = row["guessing"]
            extra = guessing["extra_correct_guesses_per_deck"]
            assert extra["kind"] == "estimate"
            low, high = extra["interval"]
            assert low <= extra["value"] <= high
            assert guessing["best_strategy"] in guessing["strategies"]
            for strategy in guessing["strategies"].values():
                assert strategy["kind"] == "estimate"
                assert strategy["interval"][0] <= strategy["value"] <= strategy["interval"][1]

    def test_under_mixed_deck_gives_extra_guesses(self):
        data = assess_json("riffle x4", "--repeat", 1, "--simulate", DECKS, "--seed", 3)
        extra = data["rows"][0]["guessing"]["extra_correct_guesses_per_deck"]
        # after 4 riffles the rising sequences are long (Bayer & Diaconis 1992): a strategy
        # that follows them gains at least one correct guess per deck
        assert extra["interval"][0] > 1

    def test_well_mixed_deck_interval_covers_zero(self):
        data = assess_json("riffle x20", "--repeat", 1, "--simulate", DECKS, "--seed", 4)
        extra = data["rows"][0]["guessing"]["extra_correct_guesses_per_deck"]
        low, high = extra["interval"]
        # TV after 20 riffles is below 3e-6 (exact), so no strategy gains measurably
        assert low <= 0 <= high


class TestAssessReproducible:
    def test_same_seed_same_json(self):
        args = (
            "assess",
            "riffle x3, strip, riffle x2, cut",
            "--repeat",
            "1-2",
            "--simulate",
            DECKS,
        )
        first = run(*args, "--seed", 5, "--json")
        second = run(*args, "--seed", 5, "--json")
        assert first.exit_code == second.exit_code == 0
        assert first.stdout == second.stdout
        other = run(*args, "--seed", 6, "--json")
        assert json.loads(other.stdout)["rows"] != json.loads(first.stdout)["rows"]


class TestAssessProcedureFile:
    def test_toml_argument(self, tmp_path):
        path = tmp_path / "back-room.toml"
        path.write_text(
            'name = "Back room, invented"\ncards = 20\nsteps = "riffle x2, cut"\n', encoding="utf-8"
        )
        data = assess_json(path, "--repeat", 1, "--simulate", DECKS)
        assert data["name"] == "Back room, invented"
        assert data["cards"] == 20
        assert data["procedure"].startswith("riffle x2")

    def test_cards_option_overrides_file(self, tmp_path):
        path = tmp_path / "p.toml"
        path.write_text('cards = 20\nsteps = "riffle x6"\n', encoding="utf-8")
        data = assess_json(path, "--cards", 30, "--repeat", 1, "--simulate", DECKS)
        assert data["cards"] == 30

    def test_file_errors_name_line_and_key(self, tmp_path):
        path = tmp_path / "bad.toml"
        path.write_text('name = "x"\ncards = 20\nsteps = "riffle x2, rifle"\n', encoding="utf-8")
        message = one_line_error(run("assess", path))
        assert str(path) in message and "line 3" in message and "'steps'" in message
        assert "unknown step 'rifle' at column 12; did you mean 'riffle'?" in message

    def test_missing_file(self, tmp_path):
        message = one_line_error(run("assess", tmp_path / "absent.toml"))
        assert "no such procedure file" in message


class TestAssessParseErrors:
    def test_message_of_the_issue(self):
        result = run("assess", "rifle x3")
        assert one_line_error(result) == (
            "error: unknown step 'rifle' at column 1; did you mean 'riffle'?"
        )

    def test_column_of_a_later_step(self):
        message = one_line_error(run("assess", "riffle x3, strp"))
        assert "unknown step 'strp' at column 12; did you mean 'strip'?" in message

    def test_unclosed_parameters(self):
        message = one_line_error(run("assess", "riffle x3, strip(packets=5"))
        assert "column 27" in message

    @pytest.mark.parametrize(
        ("args", "fragment"),
        [
            (["riffle", "--repeat", 0], "--repeat"),
            (["riffle", "--simulate", 0], "--simulate"),
            (["riffle", "--cards", 1], "--cards must be an integer from 2 to 2,000"),
            (["riffle", "--confidence", 1.5], "confidence"),
        ],
    )
    def test_bad_options(self, args, fragment):
        assert fragment in one_line_error(run("assess", *args))


class TestAssessPlot:
    def test_plot_png(self, tmp_path):
        target = tmp_path / "bounds.png"
        result = run(
            "assess", "strip, riffle x8", "--repeat", "1-2", "--simulate", 500, "--plot", target
        )
        assert result.exit_code == 0, result.output
        assert target.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
