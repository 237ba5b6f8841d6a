"""Exact null laws for shoes, each checked against brute force over all arrangements of a
small multiset (every word enumerated by ``sympy.utilities.iterables.multiset_permutations``)
and against published values where they exist."""

from __future__ import annotations

import itertools
import math
from collections import Counter
from fractions import Fraction

import numpy as np
import pytest
from sympy.utilities.iterables import multiset_permutations

from shufflecheck.core.counting import rencontres_row
from shufflecheck.stats import shoe_nulls
from shufflecheck.stats.nulls import Law, mixed_sum_tail_logs, sum_tail_logs
from shufflecheck.stats.shoe_statistics import greedy_scores, value_successions

COMPOSITIONS = [(2, 2), (3, 1, 2), (2, 2, 2), (3, 3, 1), (4, 1, 1, 2), (2, 3, 2, 1), (5, 2, 2)]


def words(counts) -> np.ndarray:
    letters = [v for v, c in enumerate(counts) for _ in range(c)]
    return np.array(list(multiset_permutations(letters)), dtype=np.int64)


def histogram(values) -> dict[int, int]:
    return dict(Counter(int(v) for v in values))


def law_counts(law: Law) -> dict[int, int]:
    return {law.offset + k: c for k, c in enumerate(law.counts) if c}


class TestGreedyGuessing:
    @pytest.mark.parametrize("counts", COMPOSITIONS)
    def test_brute_force(self, counts):
        # brute force: every word played by the vectorized greedy player
        w = words(counts)
        classes = np.arange(len(counts))
        scores = greedy_scores(w, classes, np.array(counts))
        law = shoe_nulls.greedy_guessing_law(counts)
        assert law.total == len(w) == shoe_nulls.multinomial(counts)
        assert histogram(scores) == law_counts(law)

    def test_esp_deck(self):
        # Diaconis & Graham (1981): the ESP deck of 5 symbols x 5 cards, greedy mean about
        # 8.65 correct guesses; the exact fraction 23148348523/2677114440 as posted by
        # B. McKay (sci.math, 16 Nov 1986, "a mathematical problem in psi").
        law = shoe_nulls.greedy_guessing_law([5] * 5)
        assert law.mean == Fraction(23148348523, 2677114440)

    def test_distinct_cards(self):
        # every class once: the greedy guess is any unseen card, so the law is the Stirling
        # row of the distinct-card guessing game (sum of Bernoulli(1/j))
        law = shoe_nulls.greedy_guessing_law([1] * 7)
        from shufflecheck.stats.nulls import guessing_law

        assert law_counts(law) == law_counts(guessing_law(7))

    def test_budget(self):
        assert shoe_nulls.greedy_state_estimate([24] * 9 + [96]) > 10**8
        with pytest.raises(shoe_nulls.GuessingOutOfReach):
            shoe_nulls.greedy_guessing_law([24] * 9 + [96], budget=1000)


class TestValueSuccessions:
    @pytest.mark.parametrize("counts", [*COMPOSITIONS, (1, 0, 2, 2), (0, 3, 3)])
    def test_brute_force(self, counts):
        w = words(counts)  # class labels follow the order of counts (empty ones kept)
        got = value_successions(w, np.arange(len(counts)))
        law = shoe_nulls.value_successions_law(counts)
        assert law.total == len(w)
        assert histogram(got) == law_counts(law)

    def test_distinct_cards_are_the_successions_row(self):
        # every value once: permutations by successions, C(n-1, k) a(n-1-k) (OEIS A000255)
        from shufflecheck.core.counting import successions_row

        assert shoe_nulls.value_successions_row([1] * 8) == successions_row(8)


class TestMatches:
    @pytest.mark.parametrize("counts", COMPOSITIONS)
    def test_brute_force_every_reference(self, counts):
        w = words(counts)
        law = shoe_nulls.matches_law(counts)
        for ref in w[:: max(1, len(w) // 5)]:  # the law does not depend on the reference
            got = np.count_nonzero(w == ref, axis=1)
            assert histogram(got) == law_counts(law)

    def test_rencontres(self):
        # every count 1: rencontres numbers (OEIS A008290)
        assert shoe_nulls.matches_law([1] * 7).counts == rencontres_row(7)


class TestZoneMaximum:
    @pytest.mark.parametrize("zones", [(3, 3, 2), (2, 2, 2, 2), (4, 3)])
    def test_brute_force(self, zones):
        n = 9
        edges = np.concatenate([[0], np.cumsum(zones)])
        for marked in range(n + 1):
            counted = Counter()
            for subset in itertools.combinations(range(n), marked):
                per_zone = [
                    sum(1 for x in subset if edges[z] <= x < edges[z + 1])
                    for z in range(len(zones))
                ]
                counted[max(per_zone)] += 1
            law = shoe_nulls.zone_maximum_law(n, marked, zones)
            assert law.total == math.comb(n, marked)
            assert law_counts(law) == dict(counted)

    def test_refuses_bad_zones(self):
        from shufflecheck.common.errors import InputError

        with pytest.raises(InputError, match="zones"):
            shoe_nulls.zone_maximum_law(10, 3, (6, 6))


class TestMixedSums:
    def test_against_exact_convolution(self):
        # exact convolution in fractions of 3 + 4 draws from two different laws
        a = shoe_nulls.zone_maximum_law(40, 12, (10, 10, 10, 10))
        b = shoe_nulls.zone_maximum_law(40, 20, (10, 10, 10, 10))

        def pmf(law):
            return {law.offset + k: Fraction(c, law.total) for k, c in enumerate(law.counts)}

        def conv(p, q):
            out: dict[int, Fraction] = {}
            for x, u in p.items():
                for y, v in q.items():
                    out[x + y] = out.get(x + y, 0) + u * v
            return out

        total = {0: Fraction(1)}
        for law, times in ((a, 3), (b, 4)):
            for _ in range(times):
                total = conv(total, pmf(law))
        for s in (min(total) + 1, 33, 41, 50, max(total) - 1):
            lower = sum(v for k, v in total.items() if k <= s)
            upper = sum(v for k, v in total.items() if k >= s)
            lo, up = mixed_sum_tail_logs([(a, 3), (b, 4)], s)
            # relative accuracy of the tilted FFT (nulls.py states about 1e-10)
            assert math.exp(lo) == pytest.approx(float(lower), rel=1e-9)
            assert math.exp(up) == pytest.approx(float(upper), rel=1e-9)

    def test_one_law_is_the_plain_sum(self):
        law = shoe_nulls.zone_maximum_law(40, 12, (10, 10, 10, 10))
        assert mixed_sum_tail_logs([(law, 7)], 30) == sum_tail_logs(law, 7, 30)
