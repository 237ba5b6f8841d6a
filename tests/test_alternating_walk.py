"""The lower bound for alternating two-valued starts from the law of the word's walk
extremes (:mod:`shufflecheck.models.alternating_walk`).

Checked against: brute force over every label sequence of the a-shuffle (the inverse
description of Bayer & Diaconis 1992, tests/_brute.py); the per-word chances of
:mod:`shufflecheck.models.alternating` summed over all words; the uniform law against the
method of images for walks between two barriers (Feller 1968, vol. 1; the chapter is
recalled from memory) and against enumeration; the project's riffle sampler (a separate
code path: GSR riffles of card codes) by a chi-square test; and the bound against the exact
total variation (up to 18 cards) and the Monte Carlo estimate (52 cards)."""

from __future__ import annotations

import itertools
import math
from collections import Counter

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.models import alternating, alternating_walk
from shufflecheck.models.alternating_walk import (
    extremes_law,
    uniform_extremes_law,
    walk_tv_lower,
    walk_work,
)
from shufflecheck.models.riffle import riffle_decks
from tests._brute import words_by_label_sequences
from tests._fit import chisquare_p


def extremes(word) -> tuple[int, int]:
    h, top, bottom = 0, 0, 0
    for card in word:
        h += 1 if card == 1 else -1
        top, bottom = max(top, h), min(bottom, h)
    return top, bottom


def words(n: int) -> list[tuple[int, ...]]:
    ones = n // 2
    return [w for w in itertools.product((0, 1), repeat=n) if sum(w) == ones]


def close(found: dict, expected: dict, tol: float = 1e-13) -> None:
    for key in set(found) | set(expected):
        assert found.get(key, 0.0) == pytest.approx(expected.get(key, 0.0), abs=tol), key


class TestShuffledLaw:
    @pytest.mark.parametrize(
        "n, a", [(n, a) for n in range(2, 9) for a in range(1, 5) if a**n <= 70_000]
    )
    def test_brute_force_over_label_sequences(self, n, a):
        tally = words_by_label_sequences(tuple(i % 2 for i in range(n)), a)
        expected: Counter = Counter()
        for word, count in tally.items():
            expected[extremes(word)] += count / a**n
        close(extremes_law(n, a), expected)

    @pytest.mark.parametrize("n", [10, 13, 14])
    @pytest.mark.parametrize("a", [1, 2, 3, 8, 16])
    def test_word_chances_summed_over_all_words(self, n, a):
        rows = np.array(words(n), dtype=np.int8)
        chances = alternating.word_chances(rows, a)
        expected: Counter = Counter()
        for word, p in zip(rows.tolist(), chances.tolist(), strict=True):
            expected[extremes(word)] += p
        close(extremes_law(n, a), expected)

    @pytest.mark.parametrize("n, a", [(12, 2), (12, 4), (15, 3), (16, 6)])
    def test_range_never_exceeds_the_packets(self, n, a):
        # each packet reads an alternating run: a stretch of the new deck gets at most one
        # card more of one class from it, so max h - min h <= a (every word with a larger
        # range has chance 0, here by the per-word chances)
        rows = np.array(words(n), dtype=np.int8)
        chances = alternating.word_chances(rows, a)
        wide = np.array([extremes(w)[0] - extremes(w)[1] > a for w in rows.tolist()])
        assert wide.any() and float(chances[wide].max()) == 0.0
        assert all(top - bottom <= a for top, bottom in extremes_law(n, a))

    def test_against_the_riffle_sampler(self):
        # 20,000 decks of 52 alternating cards after 3 GSR riffles (the project's sampler);
        # the walk's extremes against the exact law, chi-square with small cells pooled
        rng = np.random.default_rng(20261202)
        decks = np.tile(np.arange(52, dtype=np.int16) % 2, (20_000, 1))
        dealt = riffle_decks(decks, 3, rng)
        observed = Counter(extremes(row) for row in dealt.tolist())
        law = extremes_law(52, 8)
        assert set(observed) <= set(law)
        assert chisquare_p(observed, law, len(dealt)) > 1e-4

    @settings(max_examples=30, deadline=None)
    @given(st.integers(2, 11), st.integers(1, 6))
    def test_a_law(self, n, a):
        law = extremes_law(n, a)
        assert min(law.values()) > 0
        assert sum(law.values()) == pytest.approx(1.0, abs=1e-12)


def images(n: int, end: int, top: int, bottom: int) -> int:
    """Walks of n +-1 steps from 0 to ``end`` staying within [bottom, top], by repeated
    reflection in the barriers top + 1 and bottom - 1 (the method of images)."""
    if top < 0 or bottom > 0:
        return 0
    period = 2 * (top - bottom + 2)

    def free(y: int) -> int:
        return math.comb(n, (n + y) // 2) if (n + y) % 2 == 0 and abs(y) <= n else 0

    total = 0
    for k in range(-n, n + 1):
        total += free(end + k * period) - free(2 * (top + 1) - end + k * period)
    return total


class TestUniformLaw:
    @pytest.mark.parametrize("n", [2, 7, 12, 52, 53])
    def test_method_of_images(self, n):
        ones = n // 2
        end = ones - (n - ones)
        law = uniform_extremes_law(n)
        total = math.comb(n, ones)
        for (top, bottom), p in law.items():
            count = (
                images(n, end, top, bottom)
                - images(n, end, top - 1, bottom)
                - images(n, end, top, bottom + 1)
                + images(n, end, top - 1, bottom + 1)
            )
            assert p * total == pytest.approx(count, rel=1e-12)
        assert sum(law.values()) == pytest.approx(1.0, abs=1e-12)

    @pytest.mark.parametrize("n", [9, 14])
    def test_enumeration(self, n):
        every = words(n)
        expected = Counter(extremes(w) for w in every)
        close(uniform_extremes_law(n), {k: v / len(every) for k, v in expected.items()})

    def test_restricted_span(self):
        law = uniform_extremes_law(20, 4)
        assert all(top - bottom <= 4 for top, bottom in law)
        full = uniform_extremes_law(20)
        close(law, {k: v for k, v in full.items() if k[0] - k[1] <= 4})


class TestBound:
    @pytest.mark.parametrize(
        "n, k", [(n, k) for n in (10, 13) for k in (1, 2, 3, 4, 6)] + [(18, 2), (18, 4)]
    )
    def test_below_the_exact_value(self, n, k):
        exact, _, _ = alternating.alternating_distances(n, 2**k)
        found = walk_tv_lower(n, 2**k)
        assert found is not None and 0 < found.lower <= exact
        assert found.lower >= 0.9 * exact  # measured: 0.95 to 1.0 of it at 18 cards

    def test_eighteen_cards(self):
        # measured in this project when the bound was derived
        assert walk_tv_lower(18, 4).lower == pytest.approx(0.5148, abs=1e-4)
        assert walk_tv_lower(18, 16).lower == pytest.approx(0.0748, abs=1e-4)

    @pytest.mark.parametrize("k", [2, 3, 4])
    def test_52_cards_against_the_estimate(self, k):
        found = walk_tv_lower(52, 2**k)
        guess = alternating.alternating_tv_estimate(52, 2**k, samples=2_000, rng=k)
        assert found is not None
        assert found.lower <= guess.high
        assert found.lower >= 0.8 * guess.low  # measured: 0.92 to 1.0 of the estimate

    def test_one_riffle_of_52(self):
        # one riffle gives only walks of range 2 or less: 2.7e-7 of the uniform words
        found = walk_tv_lower(52, 2)
        assert found.uniform_outside > 1 - 3e-7
        assert found.lower > 1 - 3e-7

    def test_beyond_the_work_limit_the_wide_walks_alone(self):
        # a six-pack colour shoe after 4 riffles: the shuffled law is out of reach, the
        # uniform chance of a walk wider than 16 is not (no shuffled word is that wide)
        assert walk_work(312, 16) > alternating_walk.WALK_WORK
        found = walk_tv_lower(312, 16)
        assert found is not None and not found.whole
        wide = 1 - sum(uniform_extremes_law(312, 16).values())
        assert found.lower == pytest.approx(wide - alternating_walk.ROUNDING, abs=1e-15)
        assert 0.8 < found.lower < 0.9  # measured: 0.8353
        assert walk_tv_lower(312, 256) is None  # no walk of 312 cards is that wide

    @pytest.mark.parametrize("n", [9, 20, 52])
    def test_wide_tail_bounds_the_uniform_chance(self, n):
        for a in range(1, n // 2 + 2):
            wide = 1 - sum(uniform_extremes_law(n, a).values())
            assert alternating_walk._wide_tail(n, a) >= wide - 1e-12

    def test_work_limit(self):
        assert walk_work(52, 32) <= alternating_walk.WALK_WORK < walk_work(52, 64)
        assert walk_tv_lower(52, 64) is None
        fallback = walk_tv_lower(52, 16, work=walk_work(52, 16) - 1)
        assert fallback is not None and not fallback.whole
        assert fallback.lower == pytest.approx(fallback.uniform_outside, abs=1e-8)
        assert fallback.lower < walk_tv_lower(52, 16).lower
        assert walk_tv_lower(52, 16, work=0) is None

    def test_bad_input(self):
        with pytest.raises(InputError, match="at least 2 cards"):
            extremes_law(1, 2)
        with pytest.raises(InputError, match="a >= 1"):
            walk_tv_lower(10, 0)


class TestCommand:
    def test_mix_shows_the_bound_and_what_it_proves(self, tmp_path):
        import json

        from typer.testing import CliRunner

        from shufflecheck.cli import app

        runner = CliRunner()
        args = ["mix", "riffle", "--feature", "colour", "--start", "alternating", "-k", "4"]
        args += ["--simulate", "200", "--target", "0.2"]
        result = runner.invoke(app, [*args, "--json"])
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        lows = [row["total_variation_lower"] for row in payload["rows"]]
        assert all(q["kind"] == "bound" and q["side"] == "lower" for q in lows)
        assert lows[2]["value"] == pytest.approx(0.6390, abs=1e-4)
        assert lows[3]["value"] == pytest.approx(0.2880, abs=1e-4)
        # 0.288 or more after 4 riffles, above 0.2: at least 5 are needed
        assert payload["minimum_steps_at_least"] == {"total_variation": 5}
        assert payload["minimum_steps"] == {"total_variation": None}
        flat = " ".join(runner.invoke(app, args).output.split())
        assert "0.6390 to 1.000" in flat  # the cell wraps before "(bounds)"
        assert "At least 5 riffles are needed: after 4, total variation is 0.2880 or more" in flat
        folder = tmp_path / "report"
        result = runner.invoke(app, [*args, "--report", str(folder)])
        assert result.exit_code == 0, result.output
        text = (folder / "report.md").read_text()
        assert "highest and lowest points of the walk" in text
        assert "At least 5 riffles are needed" in text
