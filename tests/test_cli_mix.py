"""``shufflecheck mix`` through typer's CliRunner: the JSON contract of issue 3, the exact
curves against the published table and brute force over all n! arrangements, the terminal
view, the plot and the one-line errors for bad input."""

from __future__ import annotations

import itertools
import json
import math
import struct
from collections import defaultdict
from fractions import Fraction

import pytest

from shufflecheck.cli import app
from tests._brute import (
    compose,
    distances,
    random_to_top_outcomes,
    riffle_outcomes,
    top_to_random_outcomes,
    transposition_outcomes,
)

from ._cli import command_json, one_line_error, run, runner

#: Total variation distance to uniform after k = 1..10 riffles of 52 cards, to three
#: decimals: the published table of Bayer & Diaconis (1992), "Trailing the dovetail
#: shuffle to its lair", Ann. Appl. Probab. 2, 294-313.
BAYER_DIACONIS_52 = (1.000, 1.000, 1.000, 1.000, 0.924, 0.614, 0.334, 0.167, 0.085, 0.043)

CONTRACT = {"model", "cards", "parameters", "target", "metric", "rows", "minimum_steps"}
ROW_KEYS = {"steps", "total_variation", "separation", "kl_bits", "kind"}
METRICS = ("total_variation", "separation", "kl_bits")


def mix_json(*args: object) -> dict:
    return command_json("mix", *args)


def riffle_separation(n: int, k: int) -> Fraction:
    """Separation after k riffles, 1 - prod_{i<n} (1 - i/2^k), exactly (Bayer & Diaconis
    1992; Aldous & Diaconis 1986, strong uniform time of the inverse riffle)."""
    a = 2**k
    return 1 - math.prod((Fraction(a - i, a) for i in range(1, n)), start=Fraction(1))


class TestMixJsonContract:
    @pytest.fixture(scope="class")
    @classmethod
    def data(cls) -> dict:
        return mix_json("riffle", "--cards", 52, "--target", 0.1)

    def test_fields_of_the_contract(self, data):
        assert CONTRACT <= set(data)
        assert data["model"] == "riffle"
        assert data["cards"] == 52
        assert data["parameters"] == {"hands": 2}
        assert data["target"] == 0.1
        assert data["metric"] == "total-variation"
        # the target applies to the chosen metric only: no minimum is claimed for the others
        assert set(data["minimum_steps"]) == {"total_variation"}
        for row in data["rows"]:
            assert ROW_KEYS <= set(row)
        assert [r["steps"] for r in data["rows"]] == list(range(1, len(data["rows"]) + 1))

    def test_published_table(self, data):
        rows = data["rows"]
        assert len(rows) >= 10
        for row, published in zip(rows, BAYER_DIACONIS_52, strict=False):
            # Bayer & Diaconis (1992), table of variation distance for 52 cards
            assert round(row["total_variation"], 3) == published, row

    def test_minimum_steps_at_01_is_9(self, data):
        # Bayer & Diaconis (1992) table: 0.167 after 8 riffles, 0.085 after 9
        assert data["minimum_steps"]["total_variation"] == 9

    def test_minimum_steps_at_05_is_7(self):
        data = mix_json("riffle", "--cards", 52, "--target", 0.5)
        # Bayer & Diaconis (1992) table: 0.614 after 6 riffles, 0.334 after 7
        assert data["minimum_steps"]["total_variation"] == 7

    def test_every_row_exact(self, data):
        assert {row["kind"] for row in data["rows"]} == {"exact"}

    def test_minimum_is_first_step_meeting_target_on_every_metric(self):
        for metric, option in (
            ("total_variation", "total-variation"),
            ("separation", "separation"),
            ("kl_bits", "kl"),
        ):
            data = mix_json("riffle", "--target", 0.1, "--metric", option, "--max-steps", 20)
            meeting = [r["steps"] for r in data["rows"] if r[metric] <= data["target"]]
            assert data["minimum_steps"] == {metric: meeting[0] if meeting else None}, metric

    def test_separation_matches_closed_form(self, data):
        for row in data["rows"]:
            # separation = 1 - prod_{i<n}(1 - i/2^k) (Bayer & Diaconis 1992), exact Fractions
            expected = float(riffle_separation(52, row["steps"]))
            assert row["separation"] == pytest.approx(expected, rel=1e-12, abs=1e-15)

    def test_inequalities_between_metrics(self, data):
        for row in data["rows"]:
            tv, sep, kl = row["total_variation"], row["separation"], row["kl_bits"]
            assert 0 <= tv <= sep + 1e-12 <= 1 + 1e-12  # separation >= TV (Aldous & Diaconis 1986)
            assert kl + 1e-12 >= 2 * tv**2 / math.log(2)  # Pinsker's inequality, in bits

    def test_without_target_minimums_are_null(self):
        data = mix_json("riffle", "--cards", 52, "--max-steps", 12)
        assert data["target"] is None
        assert data["minimum_steps"] == {"total_variation": None}
        assert len(data["rows"]) == 12

    def test_target_not_reached_is_null(self):
        data = mix_json("riffle", "--cards", 52, "--max-steps", 5, "--target", 0.1)
        # Bayer & Diaconis (1992): 0.924 after 5 riffles, still above 0.1
        assert data["minimum_steps"]["total_variation"] is None

    def test_shoe_of_six_decks(self):
        data = mix_json("riffle", "--cards", 312, "--target", 0.1)
        assert data["cards"] == 312
        tv = [r["total_variation"] for r in data["rows"]]
        assert all(a >= b for a, b in itertools.pairwise(tv))  # never increases
        minimum = data["minimum_steps"]["total_variation"]
        # more cards need more riffles than the 9 of a single deck (cutoff 3/2 log2 n)
        assert minimum is not None and minimum > 9
        assert data["rows"][minimum - 1]["total_variation"] <= 0.1 < tv[minimum - 2]


def brute_rows(outcomes, n: int, steps: int) -> list[tuple[float, float, float]]:
    """(TV, separation, KL bits) after k = 1..steps, over all n! arrangements."""
    total = sum(w for _, w in outcomes)
    law = {tuple(range(n)): 1}
    rows = []
    for k in range(1, steps + 1):
        law = compose(law, outcomes)
        tv, sep, kl = distances({p: Fraction(w, total**k) for p, w in law.items()}, n)
        rows.append((float(tv), float(sep), kl))
    return rows


def shelf_outcomes(n: int, shelves: int) -> list[tuple[tuple[int, ...], int]]:
    """One pass of a shelf machine with a fixed stacking order (Diaconis, Fulman & Holmes
    2013, Section 1): cards dealt from the bottom, each to a uniform shelf, placed on top of
    or under that shelf's pile with chance 1/2; weights over (2m)^n equally likely choices."""
    law: dict[tuple[int, ...], int] = defaultdict(int)
    for shelf in itertools.product(range(shelves), repeat=n):
        for on_top in itertools.product((False, True), repeat=n):
            piles: list[list[int]] = [[] for _ in range(shelves)]
            for card in range(n - 1, -1, -1):
                if on_top[card]:
                    piles[shelf[card]].insert(0, card)
                else:
                    piles[shelf[card]].append(card)
            law[tuple(c for pile in piles for c in pile)] += 1
    return list(law.items())


class TestMixAgainstBruteForce:
    """Each model's exact rows against the law built by enumerating the physical shuffle."""

    @pytest.mark.parametrize(
        ("model", "outcomes", "n", "steps"),
        [
            ("riffle", riffle_outcomes, 4, 4),
            ("transposition", transposition_outcomes, 4, 5),
            ("transposition", transposition_outcomes, 5, 4),
            ("top-to-random", top_to_random_outcomes, 5, 6),
            ("random-to-top", random_to_top_outcomes, 5, 6),
        ],
    )
    def test_rows(self, model, outcomes, n, steps):
        data = mix_json(model, "--cards", n, "--max-steps", steps)
        expected = brute_rows(outcomes(n), n, steps)  # brute force over all n! arrangements
        assert len(data["rows"]) == steps
        for row, (tv, sep, kl) in zip(data["rows"], expected, strict=True):
            assert row["kind"] == "exact"
            assert row["total_variation"] == pytest.approx(tv, abs=1e-12)
            assert row["separation"] == pytest.approx(sep, abs=1e-12)
            assert row["kl_bits"] == pytest.approx(kl, rel=1e-7, abs=1e-12)

    @pytest.mark.parametrize(("n", "shelves"), [(3, 2), (4, 2), (5, 3)])
    def test_shelf_rows(self, n, shelves):
        data = mix_json("shelf", "--cards", n, "--shelves", shelves, "--max-steps", 3)
        assert data["parameters"].get("shelves") == shelves
        expected = brute_rows(shelf_outcomes(n, shelves), n, 3)  # brute force, all n! orders
        for row, (tv, sep, kl) in zip(data["rows"], expected, strict=True):
            assert row["kind"] == "exact"
            assert row["total_variation"] == pytest.approx(tv, abs=1e-12)
            assert row["separation"] == pytest.approx(sep, abs=1e-12)
            assert row["kl_bits"] == pytest.approx(kl, rel=1e-7, abs=1e-12)

    def test_riffle_two_cards_by_hand(self):
        # worked by hand: a GSR riffle of 2 cards keeps their order with chance 3/4
        # (cut 0|2 or 2|0: 1/2; cut 1|1 then either drop order: 1/2 x 1/2), so TV = 1/4,
        # separation = 1 - 2 x 1/4 = 1/2
        row = mix_json("riffle", "--cards", 2, "--max-steps", 1)["rows"][0]
        assert row["total_variation"] == pytest.approx(0.25, abs=1e-15)
        assert row["separation"] == pytest.approx(0.5, abs=1e-15)

    def test_a_shuffles_compose(self):
        # Bayer & Diaconis (1992): an a-shuffle followed by a b-shuffle is an ab-shuffle,
        # so two 4-shuffles are four ordinary riffles
        four = mix_json("riffle", "--cards", 52, "--hands", 4, "--max-steps", 5)["rows"]
        two = mix_json("riffle", "--cards", 52, "--max-steps", 10)["rows"]
        for k in range(1, 6):
            for metric in METRICS:
                assert four[k - 1][metric] == pytest.approx(two[2 * k - 1][metric], rel=1e-9)

    def test_top_to_random_and_inverse_agree(self):
        # a walk and its inverse walk are at the same distance from uniform (Aldous &
        # Diaconis 1986): top-to-random and random-to-top
        a = mix_json("top-to-random", "--cards", 20, "--max-steps", 80)["rows"]
        b = mix_json("random-to-top", "--cards", 20, "--max-steps", 80)["rows"]
        for x, y in zip(a, b, strict=True):
            for metric in METRICS:
                assert x[metric] == pytest.approx(y[metric], rel=1e-9, abs=1e-15)

    def test_transposition_bound_is_above_exact(self):
        data = mix_json("transposition", "--cards", 8, "--max-steps", 20)
        assert data["bounds"], "the upper bound lemma curve is missing"
        for row, bound in zip(data["rows"], data["bounds"], strict=True):
            assert bound["kind"] == "bound"
            assert row["kind"] == "exact"
            # upper bound lemma (Diaconis & Shahshahani 1981): a rigorous upper bound on TV
            assert bound["total_variation"] + 1e-12 >= row["total_variation"]

    def test_transposition_fourier_agrees_with_chain(self):
        chain = mix_json("transposition", "--cards", 7, "--max-steps", 12)["rows"]
        fourier = mix_json("transposition", "--cards", 7, "--max-steps", 12, "--method", "fourier")[
            "rows"
        ]
        for x, y in zip(chain, fourier, strict=True):
            assert x["total_variation"] == pytest.approx(y["total_variation"], abs=1e-10)


class TestMixTerminal:
    @staticmethod
    def marked(stdout: str) -> list[list[str]]:
        return [line.split() for line in stdout.splitlines() if line.startswith("*")]

    def test_first_step_meeting_target_is_marked(self):
        result = run("mix", "riffle", "--cards", 52, "--target", 0.1)
        assert result.exit_code == 0, result.output
        table_marks = [m for m in self.marked(result.stdout) if m[1].isdigit()]
        # Bayer & Diaconis (1992): 9 riffles are the first with TV <= 0.1
        assert len(table_marks) == 1 and table_marks[0][1] == "9"
        assert table_marks[0][-1] == "exact"
        assert "Minimum steps for total variation <= 0.1: 9 (exact)" in result.stdout

    def test_mark_follows_target(self):
        result = run("mix", "riffle", "--cards", 52, "--target", 0.5)
        assert result.exit_code == 0, result.output
        marks = [m for m in self.marked(result.stdout) if m[1].isdigit()]
        assert [m[1] for m in marks] == ["7"]  # Bayer & Diaconis (1992): 0.334 after 7

    def test_mark_follows_metric(self):
        result = run("mix", "riffle", "--cards", 52, "--target", 0.1, "--metric", "separation")
        assert result.exit_code == 0, result.output
        # first k with 1 - prod_{i<52}(1 - i/2^k) <= 0.1, in exact Fractions (Bayer &
        # Diaconis 1992 closed form)
        first = next(k for k in range(1, 40) if riffle_separation(52, k) <= Fraction(1, 10))
        marks = [m for m in self.marked(result.stdout) if m[1].isdigit()]
        assert [m[1] for m in marks] == [str(first)]

    def test_method_and_source_named(self):
        result = run("mix", "riffle", "--cards", 52, "--target", 0.1)
        assert "Method: exact" in result.stdout
        assert "Bayer & Diaconis 1992" in result.stdout
        assert "not a certification" in result.stdout

    def test_no_mark_without_target(self):
        result = run("mix", "riffle", "--cards", 52, "--max-steps", 10)
        assert result.exit_code == 0, result.output
        assert not [m for m in self.marked(result.stdout) if m[1].isdigit()]


def png_size(data: bytes) -> tuple[int, int]:
    """Width and height from a PNG's IHDR chunk (PNG specification, ISO/IEC 15948)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


class TestMixPlot:
    def test_plot_writes_png(self, tmp_path):
        target = tmp_path / "riffle.png"
        result = run("mix", "riffle", "--cards", 52, "--target", 0.1, "--plot", target)
        assert result.exit_code == 0, result.output
        width, height = png_size(target.read_bytes())
        assert width >= 300 and height >= 200
        assert f"Wrote {target}" in result.stdout

    def test_plot_with_json_keeps_stdout_json(self, tmp_path):
        target = tmp_path / "shelf.png"
        result = run("mix", "shelf", "--cards", 52, "--plot", target, "--json")
        assert result.exit_code == 0, result.output
        assert json.loads(result.stdout)["model"] == "shelf"
        png_size(target.read_bytes())

    def test_plot_into_missing_folder_is_an_error(self, tmp_path):
        result = run("mix", "riffle", "--plot", tmp_path / "missing" / "x.png")
        assert "does not exist" in one_line_error(result)


class TestMixBadInput:
    @pytest.mark.parametrize("cards", [1, 0, -3])
    def test_cards_below_two(self, cards):
        message = one_line_error(run("mix", "riffle", "--cards", cards))
        assert "--cards must be at least 2" in message

    @pytest.mark.parametrize("target", ["0", "-0.1", "1.5", "nan"])
    def test_target_outside_unit_interval(self, target):
        message = one_line_error(run("mix", "riffle", "--target", target))
        assert "target must be in (0, 1]" in message

    def test_target_one_is_allowed(self):
        data = mix_json("riffle", "--cards", 52, "--target", 1)
        assert data["minimum_steps"]["total_variation"] == 1  # TV <= 1 always holds

    @pytest.mark.parametrize(
        ("args", "serves"),
        [
            (["riffle", "--max-steps", 100000], "shufflecheck assess"),
            (["top-to-random", "--cards", 52, "--max-steps", 300000], "shufflecheck assess"),
            (["shelf", "--cards", 52, "--max-steps", 100000], "shufflecheck assess"),
            (["transposition", "--cards", 6, "--max-steps", 100000], "upper bound lemma"),
            (["transposition", "--cards", 500, "--max-steps", 5], "upper bound lemma"),
            (["transposition", "--cards", 30, "--method", "fourier"], "Fourier"),
        ],
    )
    def test_too_large_for_exact_method_names_what_serves(self, args, serves):
        assert serves in one_line_error(run("mix", *args))

    def test_unknown_model(self):
        message = one_line_error(run("mix", "bogus", "--cards", 52))
        assert "bogus" in message and "riffle" in message


class TestUpperBoundLemmaOnly:
    def test_large_deck_gets_labelled_bounds(self):
        # beyond the lumped chain (55 cards) the upper bound lemma alone serves; every row is
        # a bound, and the minimum it certifies is no smaller than the exact one would be
        result = runner.invoke(
            app,
            [
                "mix",
                "transposition",
                "--cards",
                "60",
                "--method",
                "bound",
                "--target",
                "0.1",
                "--json",
            ],
        )
        assert result.exit_code == 0, result.output
        data = json.loads(result.stdout)
        assert {r["kind"] for r in data["rows"]} == {"bound"}
        assert all(r["separation"] is None for r in data["rows"])
        k = data["minimum_steps"]["total_variation"]
        assert k is not None and data["rows"][k - 1]["total_variation"] <= 0.1
        assert data["rows"][k - 2]["total_variation"] > 0.1

    def test_bound_never_below_exact(self):
        # the same bound curve at 30 cards lies above the exact lumped-chain values
        bound = json.loads(
            runner.invoke(
                app, ["mix", "transposition", "-n", "30", "-k", "80", "--method", "bound", "--json"]
            ).stdout
        )
        exact = json.loads(
            runner.invoke(app, ["mix", "transposition", "-n", "30", "-k", "80", "--json"]).stdout
        )
        for b, e in zip(bound["rows"], exact["rows"], strict=True):
            assert e["total_variation"] <= b["total_variation"] + 1e-12
