"""Two-valued decks that start alternating (:mod:`shufflecheck.models.alternating`): each
word's chance after an a-shuffle against brute force over every label sequence of the
a-shuffle (the inverse description of Bayer & Diaconis 1992, written out in
tests/_brute.py), the distances against the arrangement law summed over all n! orders
(``features``, itself checked against Bayer & Diaconis), the symmetry of the a-shuffle under
turning the deck over, and the Monte Carlo estimate against the exact sum. No published
table of Conger & Viswanath's alternating start was at hand to compare with."""

from __future__ import annotations

import itertools
import json
import math
from collections import Counter

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.models import alternating
from shufflecheck.models.features import ESTIMATE_FLOOR, feature_curve, feature_distances
from tests._brute import words_by_label_sequences


def brute_chances(n: int, a: int) -> Counter:
    """Label sequences of an a-shuffle giving each word of the alternating start 0, 1, 0, ..."""
    return words_by_label_sequences(tuple(i % 2 for i in range(n)), a)


def all_words(n: int) -> list[tuple[int, ...]]:
    return [w for w in itertools.product((0, 1), repeat=n) if sum(w) == n // 2]


class TestChances:
    @pytest.mark.parametrize(
        "n, a",
        [(n, a) for n in range(2, 9) for a in range(1, 5) if a**n <= 70_000],
    )
    def test_brute_force(self, n, a):
        # brute force over every label sequence of the a-shuffle, odd and even decks
        tally = brute_chances(n, a)
        words = all_words(n)
        chances = alternating.word_chances(np.array(words), a)
        for word, p in zip(words, chances, strict=True):
            assert p == pytest.approx(tally[word] / a**n, abs=1e-15), word

    def test_sums_to_one(self):
        words = np.array(all_words(14))
        for a in (5, 7, 64):
            assert alternating.word_chances(words, a).sum() == pytest.approx(1, abs=1e-12)

    @settings(max_examples=30, deadline=None)
    @given(st.integers(1, 10).map(lambda m: 2 * m), st.integers(1, 40), st.randoms())
    def test_turning_the_deck_over(self, n, a, rnd):
        # turning the deck over maps an a-shuffle to an a-shuffle and the alternating start
        # of an even deck to itself with the classes swapped
        word = [1] * (n // 2) + [0] * (n // 2)
        rnd.shuffle(word)
        turned = [1 - x for x in reversed(word)]
        p, q = alternating.word_chances(np.array([word, turned]), a)
        assert p == pytest.approx(q, rel=1e-12, abs=1e-300)

    def test_bad_input(self):
        with pytest.raises(InputError, match="0 and 1"):
            alternating.word_chances(np.array([[0, 2]]), 2)
        with pytest.raises(InputError, match="class 0"):
            alternating.word_chances(np.array([[1, 1]]), 2)
        with pytest.raises(InputError, match="a >= 1"):
            alternating.word_chances(np.array([[0, 1]]), 0)

    def test_alternating_class(self):
        assert alternating.alternating_class([1, 0, 1, 0, 1]) == 1
        assert alternating.alternating_class([0, 0, 1, 1]) is None
        assert alternating.alternating_class([0, 1, 2]) is None


class TestObservedStructure:
    """An observation, not used by any computation (conjectured in general): a word's
    chance depends only on how many times its path (+1 for class 1, -1 for class 0) crosses
    each level, and distinct crossing profiles number (m + 3) 2^(m - 2) for 2m cards."""

    @pytest.mark.parametrize("n", [8, 10, 12, 14])
    def test_chance_is_a_function_of_the_crossing_profile(self, n):
        words = np.array(all_words(n))
        heights = np.concatenate(
            [np.zeros((len(words), 1), int), np.cumsum(np.where(words == 1, 1, -1), axis=1)],
            axis=1,
        )
        lows = np.minimum(heights[:, :-1], heights[:, 1:])
        profiles = [tuple(sorted(Counter(row.tolist()).items())) for row in lows]
        chances = np.stack([alternating.word_chances(words, a) for a in (2, 3, 5, 8)], axis=1)
        groups: dict = {}
        for profile, row in zip(profiles, chances, strict=True):
            groups.setdefault(profile, []).append(row)
        for rows in groups.values():
            assert np.allclose(rows, rows[0], rtol=1e-12, atol=0)
        m = n // 2
        assert len(groups) == (m + 3) * 2 ** (m - 2)


class TestDistances:
    @pytest.mark.parametrize("n", [8, 9])
    @pytest.mark.parametrize("k", [1, 2, 3, 4])
    def test_against_arrangement_law(self, n, k):
        # the word law summed from the exact arrangement law over all n! orders
        small = feature_distances([i % 2 for i in range(n)], k)  # n <= 9: enumeration
        tv, sep, kl = alternating.alternating_distances(n, 2**k)
        assert tv == pytest.approx(small.total_variation.value, abs=1e-13)
        assert sep == pytest.approx(small.separation.value, abs=1e-13)
        assert kl == pytest.approx(small.kl_bits.value, abs=1e-12)

    def test_exact_rows_for_sixteen_cards(self):
        curve = feature_curve([i % 2 for i in range(16)], 6)
        tvs = [r.total_variation.value for r in curve.rows]
        assert all(r.total_variation.kind == "exact" for r in curve.rows)
        assert all(x >= y for x, y in itertools.pairwise(tvs))  # never grows
        # every exact value lies below the distinct-card distance of 16 cards
        from shufflecheck.models import riffle

        for r in curve.rows:
            assert r.total_variation.value <= riffle.exact_distances(16, r.steps).total_variation

    def test_too_many_words(self):
        with pytest.raises(InputError, match="exceed"):
            alternating.alternating_distances(20, 2)


class TestEstimate:
    @pytest.mark.parametrize("k", [2, 3, 4])
    def test_interval_covers_the_exact_value(self, k):
        exact = alternating.alternating_distances(16, 2**k)[0]
        found = alternating.alternating_tv_estimate(16, 2**k, samples=3000, rng=7)
        assert found.low <= exact <= found.high
        assert found.high - found.low < 0.05

    def test_one_riffle_of_52(self):
        # no sampled word can be reached by one riffle: the interval is the exact binomial
        # bound on the share of words that could be, below 1
        found = alternating.alternating_tv_estimate(52, 2, samples=500, rng=1)
        assert found.value == 1.0 and found.stderr == 0.0
        assert found.low == pytest.approx(1 + math.log(0.005) / 500) and found.high == 1.0

    def test_curve_of_52(self):
        # upper bounds stay the distinct-card distances; estimates stop after the first
        # below the floor
        curve = feature_curve([i % 2 for i in range(52)], 9, samples=300, seed=2)
        estimates = [r.total_variation_estimate for r in curve.rows]
        assert estimates[0] is not None and estimates[0].kind == "estimate"
        last = max(i for i, e in enumerate(estimates) if e is not None)
        assert estimates[last].value < ESTIMATE_FLOOR
        assert all(e is None for e in estimates[last + 1 :])
        assert all(e.value >= ESTIMATE_FLOOR for e in estimates[:last])
        assert all(r.total_variation.kind == "bound" for r in curve.rows)
        # estimates certify nothing: the minimum for 0.1 is the distinct-card bound's (9
        # riffles, 0.0854; Bayer & Diaconis 1992), though the estimate is below 0.1 at 5
        assert curve.minimum("total_variation", 0.1) == 9
        assert estimates[4] is not None and estimates[4].interval[1] < 0.13

    def test_samples_checked(self):
        with pytest.raises(InputError, match="at least 2"):
            alternating.alternating_tv_estimate(52, 2, samples=1)


class TestCommand:
    def test_mix_alternating_colour(self, tmp_path):
        from typer.testing import CliRunner

        from shufflecheck.cli import app

        runner = CliRunner()
        args = ["mix", "riffle", "--feature", "colour", "--start", "alternating", "-k", "3"]
        result = runner.invoke(app, [*args, "--simulate", "200"])
        assert result.exit_code == 0, result.output
        assert "estimate (99% CI)" in result.output and "alternating order" in result.output
        result = runner.invoke(app, [*args, "--simulate", "200", "--json"])
        assert result.exit_code == 0
        payload = json.loads(result.output)
        assert payload["samples"] == 200 and payload["start"] == "alternating"
        row = payload["rows"][2]
        assert row["total_variation_estimate"]["kind"] == "estimate"
        low, high = row["total_variation_estimate"]["interval"]
        assert 0.5 < low < high < 0.8  # three riffles: about 0.67
        folder = tmp_path / "report"
        result = runner.invoke(app, [*args, "--simulate", "200", "--report", str(folder)])
        assert result.exit_code == 0, result.output
        text = (folder / "report.md").read_text()
        assert "Monte Carlo estimate (certifies nothing)" in text
        assert "total variation, estimate" in text and "99% confidence band" in text
        result = runner.invoke(
            app, ["mix", "riffle", "--feature", "rank", "--start", "alternating"]
        )
        assert result.exit_code == 2
        assert "--start alternating needs a feature of two classes" in result.output
