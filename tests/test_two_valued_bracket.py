"""Rigorous two-sided bounds on the total variation of a two-valued deck in blocks
(shufflecheck/models/two_valued.py), for decks beyond the exact sum."""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.models import features
from shufflecheck.models.two_valued import two_valued_tv_bracket


def brute_force_tv(p: int, q: int, a: int) -> float:
    """Every label sequence of an a-shuffle (Bayer & Diaconis 1992: each new position gets
    one of a packet labels, all a^n sequences equally likely; the cards land in (label,
    position) order): the law of the class word, then its total variation."""
    n = p + q
    labels = np.array(list(itertools.product(range(a), repeat=n)), dtype=np.int64)
    keys = labels * n + np.arange(n)
    card = np.argsort(np.argsort(keys, axis=1), axis=1)  # the old position at each new one
    words = (card >= p).astype(np.int64) @ (1 << np.arange(n))
    found, counts = np.unique(words, return_counts=True)
    m = math.comb(n, p)
    chance = counts / a**n
    return 0.5 * (float(np.abs(chance - 1 / m).sum()) + (m - len(found)) / m)


class TestAgainstBruteForce:
    # source: brute force over every label sequence of the a-shuffle (GSR description,
    # Bayer & Diaconis 1992); no formula of this project is used on that side
    @pytest.mark.parametrize(
        "p,q,a", [(1, 1, 2), (2, 3, 2), (3, 3, 3), (4, 4, 2), (3, 5, 4), (5, 3, 4), (4, 3, 8)]
    )
    def test_brackets_the_brute_force_value(self, p, q, a):
        tv = brute_force_tv(p, q, a)
        found = two_valued_tv_bracket(p, q, a)
        assert found.lower <= tv <= found.upper
        assert found.upper - found.lower < 1e-5


class TestAgainstTheExactSum:
    # source: the exact sum over all C(n, p) words (features.two_valued_block_tv, itself
    # checked against brute force in tests/test_shoe_models.py)
    @pytest.mark.parametrize(
        "p,q,a", [(13, 13, 2), (13, 13, 16), (13, 13, 256), (5, 20, 8), (20, 5, 8), (10, 12, 64)]
    )
    def test_brackets_the_exact_value(self, p, q, a):
        exact = float(features.two_valued_block_tv(p, q, a))
        found = two_valued_tv_bracket(p, q, a)
        assert found.lower <= exact <= found.upper
        assert found.upper - found.lower < max(1e-6, 0.01 * exact)

    def test_a_coarse_grid_still_brackets(self):
        exact = float(features.two_valued_block_tv(12, 12, 32))
        found = two_valued_tv_bracket(12, 12, 32, grid=64)
        assert found.lower <= exact <= found.upper
        assert found.upper - found.lower > 1e-4  # coarser, so wider: the grid matters


class TestFullDeck:
    def test_colour_of_a_sorted_deck_narrow_and_decreasing(self):
        # 26 black above 26 red: the exact sum is beyond its budget here
        assert features.two_valued_block_tv(26, 26, 4) is None
        rows = [two_valued_tv_bracket(26, 26, 2**k) for k in range(1, 9)]
        for row in rows:
            assert 0 < row.lower <= row.upper < 1
            assert row.upper - row.lower < 1e-3 * row.upper + 1e-6
        for before, after in itertools.pairwise(rows):  # TV never rises with more riffles
            assert after.lower <= before.upper
        # within the distinct-card figure and the exact separation of a start in blocks
        for k, row in enumerate(rows, start=1):
            assert row.upper <= float(features.block_separation((26, 26), 2**k)) + 1e-12

    def test_feature_distances_use_it(self):
        row = features.feature_distances([0] * 26 + [1] * 26, 4)
        assert row.total_variation.kind == "bound" and row.total_variation.side == "upper"
        assert row.total_variation_lower.side == "lower"
        assert 0 < row.total_variation_lower.value <= row.total_variation.value
        assert row.total_variation.value < 0.2  # far below separation 0.708 and distinct 1.0
        assert row.total_variation_text().endswith("(bounds)")
        assert "total_variation_lower" in row.as_json()


@settings(max_examples=25, deadline=None)
@given(st.integers(1, 12), st.integers(1, 12), st.sampled_from([2, 3, 4, 8, 16]))
def test_symmetric_under_swapping_the_classes(p, q, a):
    # reversing the deck and swapping the class names maps the law onto itself (the
    # a-shuffle's law is unchanged by turning the deck over), so both orders agree
    one, other = two_valued_tv_bracket(p, q, a), two_valued_tv_bracket(q, p, a)
    assert one.lower <= other.upper and other.lower <= one.upper


def test_mix_shows_both_ends(tmp_path):
    from typer.testing import CliRunner

    from shufflecheck.cli import app

    args = ["mix", "riffle", "--feature", "colour", "--start", "blocks", "--max-steps", "3"]
    result = CliRunner().invoke(app, args)
    assert result.exit_code == 0, result.output
    assert "to 0.3600 (bounds)" in result.output  # k = 2: 0.35994.. to 0.35994..
    result = CliRunner().invoke(app, [*args, "--json"])
    rows = json.loads(result.output)["rows"]
    assert all(r["total_variation_lower"]["side"] == "lower" for r in rows)
    assert all(r["total_variation_lower"]["value"] <= r["total_variation"]["value"] for r in rows)


def test_both_ends_pin_the_minimum():
    # 26 above 26 of the other colour: 0.05251 or more after 5 riffles, at most 0.02628
    # after 6 (the bracket), so a target of 0.05 needs exactly 6
    from typer.testing import CliRunner

    from shufflecheck.cli import app

    args = ["mix", "riffle", "--feature", "colour", "--start", "blocks", "--target", "0.05"]
    result = CliRunner().invoke(app, [*args, "--json"])
    assert result.exit_code == 0, result.output
    payload = json.loads(result.output)
    assert payload["minimum_steps"] == {"total_variation": 6}
    assert payload["minimum_steps_at_least"] == {"total_variation": 6}
    flat = " ".join(CliRunner().invoke(app, args).output.split())
    assert "So exactly 6 riffles: after 5, total variation is 0.05251 or more" in flat


class TestBlocksUpToRenaming:
    """A start whose classes each fill one run, in any order of the classes, is a start in
    blocks: renaming the classes maps words one to one onto words."""

    @pytest.mark.parametrize("a", [2, 4, 8])
    def test_separation_and_tv_against_all_arrangements(self, a):
        # source: the word law summed over all 9! arrangements from the Bayer & Diaconis
        # arrangement law (features.small_deck_law), no block formula on that side
        from fractions import Fraction

        for start, runs in (([2, 2, 2, 0, 0, 0, 1, 1, 1], (3, 3, 3)), ([1] * 5 + [0] * 4, (5, 4))):
            assert features.block_runs(start) == runs
            law = features.small_deck_law(start, a)
            words = math.factorial(9) // math.prod(math.factorial(r) for r in runs)
            least = min(law.values()) if len(law) == words else Fraction(0)
            assert features.block_separation(runs, a) == 1 - words * least
            if len(runs) == 2:
                tv = sum(abs(p - Fraction(1, words)) for p in law.values()) / 2
                tv += Fraction(words - len(law), 2 * words)
                assert features.two_valued_block_tv(*runs, a) == tv

    def test_a_reversed_two_valued_deck_is_exact(self):
        row = features.feature_distances([1] * 13 + [0] * 13, 3)
        assert row.total_variation.kind == "exact"
        assert row.total_variation.value == pytest.approx(
            float(features.two_valued_block_tv(13, 13, 8))
        )
        assert features.block_runs([0, 1, 0]) is None  # class 0 in two runs
