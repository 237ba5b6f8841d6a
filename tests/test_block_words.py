"""Decks that start in blocks of three or more classes
(:mod:`shufflecheck.models.block_words`): each word's chance after an a-shuffle against
brute force over every label sequence of the a-shuffle (the inverse description of Bayer &
Diaconis 1992, written out in tests/_brute.py); distinct cards against Bayer & Diaconis's
formula ``C(a + n - r, n) / a^n`` (their Theorem 1); the distances against the arrangement
law summed over all n! orders (``features``, itself checked against Bayer & Diaconis); the
separation against the least-likely-word formula; merging two classes (the merged word's
chance is a sum of chances); turning the deck over; the Monte Carlo estimate against the
exact sum, and at 52 cards against words dealt by the project's riffle sampler. No published
table of these distances was at hand to compare with (Assaf, Diaconis & Soundararajan 2011
study the setting; their text was not available here)."""

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
from shufflecheck.models import block_words, riffle
from shufflecheck.models.features import (
    _small_distances,
    block_separation,
    feature_curve,
    feature_distances,
    merged_lower_bound,
    two_valued_block_tv,
)
from tests._brute import words_by_label_sequences


def brute_counts(counts: tuple[int, ...], a: int) -> Counter:
    """Label sequences of an a-shuffle giving each word of the start in blocks (class 0 on
    top)."""
    return words_by_label_sequences(tuple(v for v, c in enumerate(counts) for _ in range(c)), a)


def words_of(counts: tuple[int, ...]) -> list[tuple[int, ...]]:
    start = [v for v, c in enumerate(counts) for _ in range(c)]
    return sorted(set(itertools.permutations(start)))


def sequences(word, counts, a: int) -> int:
    """``N_a(w) = sum_j C(a, j) S_j`` from the exact label counts."""
    return sum(math.comb(a, j) * s for j, s in enumerate(block_words.label_counts(word, counts)))


class TestChances:
    @pytest.mark.parametrize(
        "counts", [(2, 2, 2), (1, 3, 2), (3, 1, 1, 2), (2, 1, 2, 1), (1, 2, 1, 1, 2), (4, 3)]
    )
    def test_brute_force(self, counts):
        n = sum(counts)
        for a in (1, 2, 3):
            tally = brute_counts(counts, a)
            words = words_of(counts)
            floats = block_words.word_chances(np.array(words), counts, a)
            for word, p in zip(words, floats, strict=True):
                assert sequences(word, counts, a) == tally.get(word, 0)
                assert p == pytest.approx(tally.get(word, 0) / a**n, rel=1e-12, abs=1e-300)

    def test_distinct_cards_bayer_diaconis(self):
        # every class one card: the word is the arrangement (new position i holds the card
        # of reference position word[i]); Bayer & Diaconis 1992, Thm 1
        n = 6
        for word in itertools.permutations(range(n)):
            position = [0] * n
            for i, v in enumerate(word):
                position[v] = i
            r = 1 + sum(position[v + 1] < position[v] for v in range(n - 1))
            for a in (1, 2, 3, 5):
                assert sequences(word, (1,) * n, a) == math.comb(a + n - r, n)

    def test_sums_to_one(self):
        # every label sequence gives one word: the counts sum to a^n exactly
        counts = (2, 3, 2)
        words = words_of(counts)
        for a in (1, 2, 4, 9, 100):
            assert sum(sequences(w, counts, a) for w in words) == a ** sum(counts)

    def test_merging_two_classes(self):
        # reading classes 1 and 2 of (2, 2, 2) as one class gives the (2, 4) deck in blocks,
        # whose word's chance is the sum over the words it merges
        counts = (2, 2, 2)
        merged: Counter = Counter()
        for word in words_of(counts):
            merged[tuple(min(x, 1) for x in word)] += sequences(word, counts, 5)
        for word, total in merged.items():
            assert sequences(word, (2, 4), 5) == total

    @settings(max_examples=40, deadline=None)
    @given(
        st.lists(st.integers(1, 4), min_size=3, max_size=5),
        st.integers(1, 40),
        st.randoms(use_true_random=False),
    )
    def test_turning_the_deck_over(self, counts, a, rnd):
        # an a-shuffle of the deck turned over is the turned-over a-shuffle (labels reversed):
        # the word read from the bottom, classes renamed, has the same chance
        counts = tuple(counts)
        start = [v for v, c in enumerate(counts) for _ in range(c)]
        rnd.shuffle(start)
        word = np.array([start])
        turned = (len(counts) - 1 - word)[:, ::-1]
        p = block_words.word_chances(word, counts, a)[0]
        q = block_words.word_chances(turned, counts[::-1], a)[0]
        assert p == pytest.approx(q, rel=1e-12)

    @pytest.mark.parametrize("c", [1, 2, 3, 7, 13, 24, 40])
    def test_float_weights_are_the_exact_ones(self, c):
        exact = np.array(block_words._weights(c), dtype=float)
        found = block_words._float_weights(c)
        assert found.shape == exact.shape
        assert ((exact == 0) == (found == 0)).all()
        assert np.allclose(found, exact, rtol=1e-13, atol=0)

    def test_bad_input(self):
        with pytest.raises(InputError, match="2-d array with 4 columns"):
            block_words.word_chances(np.zeros((2, 3), dtype=int), (2, 1, 1), 2)
        with pytest.raises(InputError, match="2 cards of class 0"):
            block_words.word_chances(np.array([[0, 1, 1, 2]]), (2, 1, 1), 2)
        with pytest.raises(InputError, match=r"classes must lie in 0\.\.2"):
            block_words.word_chances(np.array([[0, 0, 3, 2]]), (2, 1, 1), 2)
        with pytest.raises(InputError, match="a >= 1"):
            block_words.word_chances(np.array([[0, 0, 1, 2]]), (2, 1, 1), 0)
        with pytest.raises(InputError, match="at least one card"):
            block_words.word_count((2, 0, 1))
        big = block_words.MAX_CLASS + 1
        with pytest.raises(InputError, match=f"a class of {big} cards"):
            block_words.word_chances(np.array([[0, 1] + [2] * big]), (1, 1, big), 2)


class TestExactDistances:
    @pytest.mark.parametrize("counts", [(3, 3, 3), (2, 3, 4), (4, 1, 4), (1, 2, 2, 2, 2)])
    @pytest.mark.parametrize("k", [1, 2, 3, 5])
    def test_against_arrangement_law(self, counts, k):
        # the law of the word summed over all 9! arrangements (features, exact fractions)
        start = tuple(v for v, c in enumerate(counts) for _ in range(c))
        exact = _small_distances(start, 2**k)
        found = block_words.block_distances(counts, 2**k)
        assert found == pytest.approx(exact, rel=1e-12, abs=1e-15)

    @pytest.mark.parametrize("k", [1, 2, 3, 4, 6])
    def test_separation_is_the_least_likely_word(self, k):
        # the closed form for the reversed word (features.block_separation, exact fractions)
        counts = (3, 3, 3, 3)
        _, sep, _ = block_words.block_distances(counts, 2**k)
        assert sep == pytest.approx(float(block_separation(counts, 2**k)), rel=1e-12)

    def test_too_many_words(self):
        with pytest.raises(InputError, match="exceed the exact sum's limit"):
            block_words.block_distances((13, 13, 13, 13), 4)

    def test_twelve_card_suits_in_feature_distances(self):
        row = feature_distances([v for v in range(4) for _ in range(3)], 3)
        assert row.total_variation.kind == "exact" and row.kl_bits.kind == "exact"
        assert row.separation.kind == "exact"
        assert row.total_variation.value == pytest.approx(
            block_words.block_distances((3, 3, 3, 3), 8)[0], rel=1e-12
        )


def test_every_class_one_card_is_exact():
    # the word is the arrangement: Bayer & Diaconis (1992), Table 1 (52 cards): 0.924,
    # 0.614, 0.334, 0.167 after 5 to 8 riffles
    for k, published in zip(range(5, 9), (0.924, 0.614, 0.334, 0.167), strict=True):
        row = feature_distances(list(range(52)), k)
        assert row.total_variation.kind == "exact" and row.kl_bits.kind == "exact"
        assert round(row.total_variation.value, 3) == published


class TestEstimate:
    @pytest.mark.parametrize("k", [2, 3, 4])
    def test_interval_covers_the_exact_value(self, k):
        counts = (3, 3, 3, 3)
        exact = block_words.block_distances(counts, 2**k)[0]
        found = block_words.block_tv_estimate(counts, 2**k, samples=3000, seed=11)
        assert found.low <= exact <= found.high
        assert found.high - found.low < 0.06

    def test_dealt_words_agree_at_52_cards(self):
        # TV = E_P[(1 - 1/(M P(W)))^+] for words W dealt by the riffle sampler: a second
        # estimator, with the words drawn from the shuffle itself; every dealt word must have
        # a positive chance
        counts = (13, 13, 13, 13)
        total = block_words.word_count(counts)
        suit = np.repeat(np.arange(4), 13)
        for k in (2, 4):
            words = suit[riffle.sample(3000, 52, k, rng=5)]
            p = block_words.word_chances(words, counts, 2**k)
            assert (p > 0).all()
            dealt = np.maximum(1.0 - 1.0 / (total * p), 0.0)
            half = 2.58 * dealt.std(ddof=1) / math.sqrt(dealt.size)
            found = block_words.block_tv_estimate(counts, 2**k, samples=3000, seed=3)
            assert found.low - half <= dealt.mean() <= found.high + half

    def test_one_riffle_of_52(self):
        # after one riffle at most 2^52 label sequences reach about 5.4e28 words: no uniform
        # word is reached, and the interval is the binomial bound
        found = block_words.block_tv_estimate((13, 13, 13, 13), 2, samples=500, seed=1)
        assert found.value == 1.0 and found.stderr == 0.0
        assert found.low == pytest.approx(1 + math.log(0.005) / 500)

    def test_curve_of_52_suits(self):
        suits = [v for v in range(4) for _ in range(13)]
        curve = feature_curve(suits, 10, samples=1000, seed=2)
        shown = [r.total_variation_estimate for r in curve.rows]
        values = [q.value for q in shown if q is not None]
        assert all(b < a for a, b in itertools.pairwise(values[1:]))
        assert all(q is None for q in shown[shown.index(None) :])  # stops after the floor
        for row in curve.rows:
            assert row.total_variation.kind == "bound"  # estimates never replace bounds
            q = row.total_variation_estimate
            if q is not None:
                assert q.kind == "estimate" and q.interval[0] <= q.value <= q.interval[1]
                assert q.value <= row.total_variation.value

    def test_skipped_estimates_say_why(self):
        from shufflecheck.models.features import estimate_skipped

        suits = [v for v in range(4) for _ in range(78)]  # a six-pack shoe sorted by suit
        work = block_words.estimate_work((78,) * 4, 2000)
        assert work > block_words.ESTIMATE_WORK
        fits = 2000 * block_words.ESTIMATE_WORK // work
        text = estimate_skipped(suits, 2000)
        assert text is not None and f"--simulate {fits:,} or fewer fits" in text
        assert estimate_skipped(suits, fits) is None
        assert estimate_skipped([v for v in range(4) for _ in range(13)], 2000) is None
        assert estimate_skipped([v % 4 for v in range(52)], 2000) is None  # not in blocks
        assert estimate_skipped([v for v in range(4) for _ in range(3)], 2000) is None  # exact
        row = feature_distances(suits, 1, samples=2000)
        assert row.total_variation_estimate is None

    def test_work_and_samples_checked(self):
        # classes below the top: (cards above + 1) (c + 1)^2 c each
        assert block_words.estimate_work((13, 13, 13, 13), 2000) == 2000 * 81 * 14**2 * 13
        # the deck is taken the cheaper way up: the large class on top costs nothing
        assert block_words.estimate_work((2, 2, 9), 1) == block_words.estimate_work((9, 2, 2), 1)
        assert block_words.estimate_work((9, 2, 2), 1) == 10 * 9 * 2 + 12 * 9 * 2
        with pytest.raises(InputError, match="at least 2"):
            block_words.block_tv_estimate((13, 13, 13, 13), 2, samples=1)


class TestMergedLowerBound:
    """The classes above a cut between blocks merged against those below: a two-valued deck
    in blocks whose bracket's lower end bounds the finer word's total variation."""

    @pytest.mark.parametrize("counts", [(2, 3, 4), (3, 3, 3), (4, 4, 4), (2, 2, 2, 2, 2)])
    @pytest.mark.parametrize("k", [1, 2, 3, 4, 6])
    def test_below_the_exact_value(self, counts, k):
        exact, _, _ = block_words.block_distances(counts, 2**k)
        found = merged_lower_bound(counts, 2**k)
        assert found is not None and found.kind == "bound" and found.side == "lower"
        assert 0 < found.value <= exact

    @pytest.mark.parametrize("k", [1, 2, 4])
    def test_the_best_cut_is_the_merged_decks_exact_value(self, k):
        # (2, 3, 4): cuts give 2 | 7 and 5 | 4; each merged deck's exact total variation by
        # the two-valued sum over all words, itself checked against brute force
        merged = [float(two_valued_block_tv(p, 9 - p, 2**k)) for p in (2, 5)]
        found = merged_lower_bound((2, 3, 4), 2**k)
        assert found.value == pytest.approx(max(merged), abs=1e-6)

    def test_52_suits(self):
        # the top suit against the other three: the bracket of 13 | 39 cards
        from shufflecheck.models.two_valued import two_valued_tv_bracket

        suits = [v for v in range(4) for _ in range(13)]
        for k in (2, 4, 6):
            row = feature_distances(suits, k, samples=1000, seed=k)
            low = row.total_variation_lower
            assert low is not None and "merged" in low.method
            assert low.value == pytest.approx(two_valued_tv_bracket(13, 39, 2**k).lower, abs=1e-6)
            assert low.value <= row.total_variation_estimate.interval[1]
            assert low.value <= row.total_variation.value
        assert feature_distances(suits, 2).total_variation_lower.value == pytest.approx(
            0.4095, abs=1e-4
        )

    def test_classes_too_large_for_the_estimate_still_get_it(self):
        start = [0] * 20 + [1] * 160 + [2] * 20  # a class above block_words.MAX_CLASS
        row = feature_distances(start, 3)
        assert row.total_variation_estimate is None
        assert row.total_variation_lower is not None and row.total_variation_lower.value > 0


class TestCommand:
    def test_mix_suits(self, tmp_path):
        from typer.testing import CliRunner

        from shufflecheck.cli import app

        runner = CliRunner()
        args = ["mix", "riffle", "--feature", "suit", "-k", "4", "--simulate", "300"]
        result = runner.invoke(app, args)
        assert result.exit_code == 0, result.output
        flat = " ".join(result.output.split())  # the terminal wraps long lines
        assert "estimate (99% CI)" in flat and "exact chance for a start in blocks" in flat
        result = runner.invoke(app, [*args, "--json"])
        assert result.exit_code == 0
        payload = json.loads(result.output)
        assert payload["samples"] == 300 and payload["start"] == "reference"
        row = payload["rows"][3]
        assert row["total_variation"]["kind"] == "bound"
        low, high = row["total_variation_estimate"]["interval"]
        assert 0.1 < low < high < 0.25  # four riffles: about 0.16
        folder = tmp_path / "report"
        result = runner.invoke(app, [*args, "--report", str(folder)])
        assert result.exit_code == 0, result.output
        text = (folder / "report.md").read_text()
        assert "three or more blocks" in text and "Monte Carlo estimate" in text

    def test_estimated_minimum_beside_the_certified_one(self):
        from typer.testing import CliRunner

        from shufflecheck.cli import app

        runner = CliRunner()
        args = ["mix", "riffle", "--feature", "suit", "--target", "0.1"]
        result = runner.invoke(app, [*args, "--json"])
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        # certified from the distinct-card distance: 0.167 after 8 riffles, 0.085 after 9
        # (Bayer & Diaconis 1992, Table 1)
        assert payload["minimum_steps"] == {"total_variation": 9}
        k = payload["minimum_steps_estimate"]["total_variation"]
        rows = payload["rows"]
        assert rows[k - 1]["total_variation_estimate"]["interval"][1] <= 0.1
        assert rows[k - 2]["total_variation_estimate"]["interval"][1] > 0.1
        assert k < 9
        flat = " ".join(runner.invoke(app, args).output.split())
        assert f"Monte Carlo estimate (certifies nothing): total variation <= 0.1 from {k}" in flat
        assert "Minimum riffles for total variation <= 0.1: 9 (rigorous upper bound)" in flat

    def test_alternating_needs_a_feature(self):
        from typer.testing import CliRunner

        from shufflecheck.cli import app

        result = CliRunner().invoke(app, ["mix", "riffle", "--start", "alternating"])
        assert result.exit_code == 2
        assert "--start alternating needs a feature of two classes" in result.output

    def test_rows_with_upper_bounds_only_name_the_lower_bound_command(self):
        from typer.testing import CliRunner

        from shufflecheck.cli import app

        runner = CliRunner()
        args = ["mix", "riffle", "--deck", "shoe(packs=2)", "--feature", "blackjack", "-k", "3"]
        flat = " ".join(runner.invoke(app, args).output.split())
        command = "shufflecheck assess riffle --deck 'shoe(packs=2)' --feature blackjack -r 1-3"
        assert "Rows 1-3 carry upper bounds only" in flat and command in flat
        # every row of the suits carries a lower bound (classes merged): none is named
        flat = " ".join(runner.invoke(app, ["mix", "riffle", "--feature", "suit"]).output.split())
        assert "carry upper bounds only" not in flat and "(bounds)" in flat


class TestAssess:
    """``assess`` on a shoe read through a feature: runs of ideal riffles carry the estimate
    of the exact total variation beside their bounds; anything else carries none."""

    def _assess(self, text: str, feature: str = "suit", repeats: int = 4):
        from shufflecheck.analyses.feature_assess import assess_feature
        from shufflecheck.models.procedures import parse_procedure
        from shufflecheck.records.shoes import shoe

        return assess_feature(
            parse_procedure(text), shoe(1), feature, repeats=repeats, decks=4000, rng=4
        )

    def test_riffles_carry_the_estimate(self):
        result = self._assess("riffle x2")
        suits = [v for v in range(4) for _ in range(13)]
        found = [row.estimated.get("total_variation") for row in result.rows]
        assert found[0] is not None and found[0].kind == "estimate"
        # the same estimate as mix's for four packets (seed = the assessment's)
        same = feature_distances(suits, 1, hands=4, samples=2000, seed=4)
        assert found[0].value == same.total_variation_estimate.value
        for row, q in zip(result.rows, found, strict=True):
            if q is None:
                continue
            assert q.interval[0] <= row.upper["total_variation"].value  # rigorous
            assert q.interval[1] >= row.lower["total_variation"].value  # 99% lower bound
        first_small = next(i for i, q in enumerate(found) if q.value < 0.01)
        assert all(q is None for q in found[first_small + 1 :])

    def test_other_procedures_and_starts_carry_none(self):
        assert not any(row.estimated for row in self._assess("riffle x2, cut", repeats=2).rows)
        # blackjack values of a pack in its reference order are not in blocks
        assert not any(row.estimated for row in self._assess("riffle", "blackjack", 2).rows)

    def test_command(self, tmp_path):
        from typer.testing import CliRunner

        from shufflecheck.cli import app

        runner = CliRunner()
        args = ["assess", "riffle x2", "--deck", "shoe(packs=1)", "--feature", "suit"]
        args += ["-r", "1-2", "--simulate", "4000"]
        result = runner.invoke(app, [*args, "--json"])
        assert result.exit_code == 0, result.output
        row = json.loads(result.output)["rows"][0]
        assert row["estimated"]["total_variation"]["kind"] == "estimate"
        flat = " ".join(runner.invoke(app, args).output.split())
        assert "TV estimate" in flat and "ideal riffles from a start in blocks" in flat
        folder = tmp_path / "report"
        assert runner.invoke(app, [*args, "--report", str(folder)]).exit_code == 0
        text = (folder / "report.md").read_text()
        assert "estimates of the exact total variation" in text
        assert "total variation: estimate" in text
