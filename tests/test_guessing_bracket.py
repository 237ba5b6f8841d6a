"""The greedy guessing game's null beyond the exact programme: the stage decomposition it
rests on, and the bracketed law (:func:`shufflecheck.stats.shoe_nulls.greedy_guessing_bracket`,
:class:`shufflecheck.stats.nulls.LawBracket`), each checked against something outside it:
brute force over every arrangement of a small multiset (``sympy`` ``multiset_permutations``
played by the vectorised greedy player), the exact integer programme
(:func:`~shufflecheck.stats.shoe_nulls.greedy_guessing_law`, itself checked by brute force
in tests/test_shoe_nulls.py), and the exact mean by the method of Diaconis & Graham (1981)
(:func:`~shufflecheck.stats.shoe_nulls.greedy_guessing_mean`)."""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction
from functools import cache

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sympy.utilities.iterables import multiset_permutations

from shufflecheck.common.errors import InputError
from shufflecheck.core.counting import stirling1_row
from shufflecheck.stats import shoe_nulls
from shufflecheck.stats.nulls import Law, LawBracket
from shufflecheck.stats.shoe_statistics import greedy_scores

SIX_PACK = [24] * 9 + [96]  # blackjack values of six packs: nine values of 24, 96 tens


def exact_pmf(law: Law) -> dict[int, Fraction]:
    return {law.offset + k: Fraction(c, law.total) for k, c in enumerate(law.counts) if c}


def brute_pmf(counts) -> dict[int, Fraction]:
    letters = [v for v, c in enumerate(counts) for _ in range(c)]
    w = np.array(list(multiset_permutations(letters)), dtype=np.int64)
    scores = greedy_scores(w, np.arange(len(counts)), np.array(counts))
    return {int(s): Fraction(c, len(w)) for s, c in Counter(scores.tolist()).items()}


def records_law(k: int) -> dict[int, Fraction]:
    row = stirling1_row(k)
    return {s: Fraction(c, math.factorial(k)) for s, c in enumerate(row) if c}


def convolve(a: dict[int, Fraction], b: dict[int, Fraction]) -> dict[int, Fraction]:
    out: dict[int, Fraction] = {}
    for x, p in a.items():
        for y, q in b.items():
            out[x + y] = out.get(x + y, Fraction(0)) + p * q
    return out


@cache
def stage_law(state: tuple[int, ...]) -> dict[int, Fraction]:
    """Law of ``sum_L R(k_L)`` from a sorted remaining-count state at which the level has
    just first become ``state[0]``: the stage decomposition, computed forwards in exact
    fractions, independently of the bracketed (backwards, floating-point) programme."""
    level = state[0]
    if level == 0:
        return {0: Fraction(1)}
    tied = sum(1 for c in state if c == level)
    # walk the draws (no scoring) until the level first falls below `level`; then recurse
    out: dict[int, Fraction] = {}
    frontier = {state: Fraction(1)}
    while frontier:
        nxt: dict[tuple[int, ...], Fraction] = {}
        for s, p in frontier.items():
            r = sum(s)
            for i, x in enumerate(s):
                if x == 0 or (i + 1 < len(s) and s[i + 1] == x):
                    continue  # draw from the last copy of each count, weighted by its copies
                copies = sum(1 for c in s if c == x)
                t = tuple(sorted((*s[:i], x - 1, *s[i + 1 :]), reverse=True))
                q = p * Fraction(copies * x, r)
                if t[0] < level:
                    for v, w in stage_law(t).items():
                        out[v] = out.get(v, Fraction(0)) + q * w
                else:
                    nxt[t] = nxt.get(t, Fraction(0)) + q
        frontier = nxt
    return convolve(out, records_law(tied))


def bracket_contains(bracket: LawBracket, truth: dict[int, Fraction]) -> None:
    for value in range(bracket.low - 1, bracket.high + 2):
        p = truth.get(value, Fraction(0))
        lo, hi = bracket.probability_bounds(value)
        assert Fraction(lo) <= p <= Fraction(hi), (value, lo, p, hi)
        upper = sum((q for v, q in truth.items() if v >= value), start=Fraction(0))
        lower = sum((q for v, q in truth.items() if v <= value), start=Fraction(0))
        lo, hi = bracket.tail_bounds(value, "greater")
        assert Fraction(lo) <= upper <= Fraction(hi), (value, lo, upper, hi)
        lo, hi = bracket.tail_bounds(value, "less")
        assert Fraction(lo) <= lower <= Fraction(hi), (value, lo, lower, hi)
    # the bounding laws are stochastically below and above the truth: compare the CDFs
    below, above = bracket.lower_law, bracket.upper_law
    assert below.total == above.total == 1 << 160
    for value in range(bracket.low, bracket.high + 1):
        cdf = sum((q for v, q in truth.items() if v <= value), start=Fraction(0))
        cdf_below = sum((below.probability(v) for v in range(below.low, value + 1)), Fraction(0))
        cdf_above = sum((above.probability(v) for v in range(above.low, value + 1)), Fraction(0))
        assert cdf_above <= cdf <= cdf_below, value


class TestStageDecomposition:
    @pytest.mark.parametrize("counts", [(2, 2), (3, 1, 2), (2, 2, 2), (4, 1, 1, 2), (5, 2, 2)])
    def test_brute_force(self, counts):
        # brute force over every arrangement
        start = tuple(sorted(counts, reverse=True))
        assert stage_law(start) == brute_pmf(counts)

    @settings(max_examples=40, deadline=None)
    @given(st.lists(st.integers(1, 5), min_size=1, max_size=4))
    def test_against_exact_programme(self, counts):
        # the exact integer programme over sorted counts (tested by brute force elsewhere)
        start = tuple(sorted(counts, reverse=True))
        assert stage_law(start) == exact_pmf(shoe_nulls.greedy_guessing_law(counts))

    def test_leader_and_ties(self):
        # the exact integer programme: a leading class and four tied ones
        counts = [6, 2, 2, 2, 2]
        law = shoe_nulls.greedy_guessing_law(counts)
        assert stage_law(tuple(sorted(counts, reverse=True))) == exact_pmf(law)

    @pytest.mark.slow
    def test_one_pack(self):
        # the exact integer programme, one pack's blackjack values (4 x 9 + 16 tens)
        law = shoe_nulls.greedy_guessing_law([4] * 9 + [16])
        assert stage_law(tuple(sorted([4] * 9 + [16], reverse=True))) == exact_pmf(law)


class TestBracket:
    @pytest.mark.parametrize("counts", [(2, 2), (3, 1, 2), (2, 2, 2), (3, 3, 1), (2, 3, 2, 1)])
    @pytest.mark.parametrize("threshold", [0.0, 1e-3])
    def test_brute_force(self, counts, threshold):
        # brute force over every arrangement; a coarse threshold sets mass aside, and the
        # bracket must still hold the truth
        bracket = shoe_nulls.greedy_guessing_bracket(counts, threshold=threshold)
        bracket_contains(bracket, brute_pmf(counts))

    @pytest.mark.parametrize(
        "counts, threshold",
        [
            ([5] * 5, 0.0),  # the ESP deck of Diaconis & Graham (1981)
            ([5] * 5, 1e-9),
            ([4] * 9 + [16], 0.0),  # one pack, blackjack values
            ([4] * 9 + [16], 1e-12),
            ([6, 6, 3, 3, 1], 1e-10),
        ],
    )
    def test_against_exact_programme(self, counts, threshold):
        # the exact integer programme
        bracket = shoe_nulls.greedy_guessing_bracket(counts, threshold=threshold)
        bracket_contains(bracket, exact_pmf(shoe_nulls.greedy_guessing_law(counts)))
        if threshold == 0.0:
            assert bracket.set_aside == 0.0
            assert bracket.width < 1e-11  # rounding only

    def test_esp_mean(self):
        # Diaconis & Graham (1981): the ESP deck of 5 x 5, greedy mean 23148348523/2677114440
        # (the exact fraction as posted by B. McKay, sci.math, 16 Nov 1986)
        low, high = shoe_nulls.greedy_guessing_bracket([5] * 5).mean_bounds()
        assert low <= Fraction(23148348523, 2677114440) <= high
        assert high - low < 1e-10

    @pytest.mark.slow
    def test_two_packs_against_exact_programme(self):
        # the exact integer programme, two packs' blackjack values (about 1 s exact)
        counts = [8] * 9 + [32]
        bracket = shoe_nulls.greedy_guessing_bracket(counts, threshold=1e-14)
        bracket_contains(bracket, exact_pmf(shoe_nulls.greedy_guessing_law(counts)))

    def test_six_pack_mean_coarse(self):
        # the exact mean (Diaconis & Graham 1981 method, any composition) lies within the
        # bracket's mean bounds, at a coarse threshold that runs in about a second
        bracket = shoe_nulls.greedy_guessing_bracket(SIX_PACK, threshold=1e-8)
        low, high = bracket.mean_bounds()
        assert low <= shoe_nulls.greedy_guessing_mean(SIX_PACK) <= high
        assert 0 < bracket.set_aside < 0.05
        assert bracket.low == 96 and bracket.high == 312

    @pytest.mark.slow
    def test_six_pack_mean_fine(self):
        # as above at a finer threshold (minutes): the mean bracket narrows around the
        # exact mean
        bracket = shoe_nulls.greedy_guessing_bracket(
            SIX_PACK, threshold=1e-11, max_states=20_000_000
        )
        low, high = bracket.mean_bounds()
        exact = shoe_nulls.greedy_guessing_mean(SIX_PACK)
        assert low <= exact <= high
        assert bracket.set_aside < 1e-4

    def test_max_states(self):
        with pytest.raises(shoe_nulls.GuessingOutOfReach, match="entries in one layer"):
            shoe_nulls.greedy_guessing_bracket(SIX_PACK, threshold=0.0, max_states=1000)

    def test_bad_threshold(self):
        with pytest.raises(InputError, match="threshold"):
            shoe_nulls.greedy_guessing_bracket([2, 2], threshold=1.5)

    def test_too_wide_to_pack(self):
        # 52 card codes of six copies: 52 x 3 bits do not pack into one 64-bit state
        with pytest.raises(shoe_nulls.GuessingOutOfReach, match="bits"):
            shoe_nulls.greedy_guessing_bracket([6] * 52)


class TestNull:
    def test_exact_within_budget(self):
        law = shoe_nulls.greedy_guessing_null([4] * 9 + [16])
        assert isinstance(law, Law)
        assert law == shoe_nulls.greedy_guessing_law([4] * 9 + [16])

    def test_bracket_beyond_budget(self):
        # a budget too small for the exact programme: the bracket, which says so
        null = shoe_nulls.greedy_guessing_null([5] * 5, budget=10, threshold=1e-12)
        assert isinstance(null, LawBracket)
        assert "set aside" in null.method
        bracket_contains(null, exact_pmf(shoe_nulls.greedy_guessing_law([5] * 5)))


class TestLawBracket:
    def test_exact_when_nothing_set_aside(self):
        bracket = LawBracket(
            kept=(0.25, 0.5, 0.25), offset=1, set_aside=0.0, rounding=0.0, low=1, high=3
        )
        assert bracket.probability_bounds(2) == (0.5, 0.5)
        assert bracket.tail_bounds(2, "greater") == (0.75, 0.75)
        # the bounding laws differ only by the last bit of each piece, moved to an end
        low, high = bracket.mean_bounds()
        assert low <= 2 <= high and high - low < 1e-15

    def test_set_aside_reaches_only_its_values(self):
        bracket = LawBracket(
            kept=(0.5, 0.25),
            offset=1,
            set_aside=0.25,
            rounding=0.0,
            low=1,
            high=5,
            aside_low=((2, 0.25),),
            aside_high=((4, 0.25),),
        )
        assert bracket.probability_bounds(1) == (0.5, 0.5)  # nothing set aside reaches 1
        assert bracket.probability_bounds(3) == (0.0, 0.25)
        assert bracket.tail_bounds(5, "greater") == (0.0, 0.0)
        # kept and set-aside pieces sit at their values, less one last bit each (moved to
        # the end of the range)
        assert abs(bracket.lower_law.probability(2) - Fraction(1, 2)) < 1e-15
        assert abs(bracket.upper_law.probability(4) - Fraction(1, 4)) < 1e-15
        assert bracket.upper_law.probability(5) < 1e-15
        assert bracket.lower_law.probability(5) == bracket.upper_law.probability(3) == 0

    def test_bad_input(self):
        with pytest.raises(InputError, match="within low"):
            LawBracket(kept=(1.0,), offset=0, set_aside=0.0, rounding=0.0, low=1, high=3)
        with pytest.raises(InputError, match="set-aside"):
            LawBracket(kept=(1.0,), offset=1, set_aside=-1.0, rounding=0.0, low=1, high=3)


class TestAuditWithBracket:
    """The shoe battery with the guessing game beyond the exact budget: its p-value is a
    bound that brackets the exact p-value (computed with the exact law, within budget)."""

    @pytest.mark.parametrize("ordered", [False, True])
    def test_p_value_bracket_holds_the_exact_one(self, ordered):
        import dataclasses

        from shufflecheck.records.shoes import shoe
        from shufflecheck.stats.catalogue import ShoeContext
        from shufflecheck.stats.summary import BatterySummary

        exact_ctx = ShoeContext.of(shoe(1), "blackjack")
        bracket_ctx = dataclasses.replace(exact_ctx, guess_budget=10, guess_threshold=1e-9)
        rng = np.random.default_rng(11)
        kinds = shoe(1).physical_kinds()
        words = kinds[np.argsort(rng.random((201, 52)), axis=1)]
        if ordered:
            # a faulty machine: one shoe in ten deals its tens first, which the guesser
            # (who names tens while they lead) exploits
            ten = int(np.argmax(exact_ctx.class_counts))
            is_ten = np.asarray(exact_ctx.classes)[words[1::10]] == ten
            order = np.argsort(~is_ten, axis=1, kind="stable")
            words[1::10] = np.take_along_axis(words[1::10], order, axis=1)
        results = {}
        for name, ctx in (("exact", exact_ctx), ("bracket", bracket_ctx)):
            summary = BatterySummary.empty(52, shoe=ctx)
            summary.update(words[1:], words[1:], references=words[:-1])
            results[name] = summary.finish(rng=np.random.default_rng(0)).overall
        exact = results["exact"].test("guess-most-frequent")
        bound = results["bracket"].test("guess-most-frequent")
        assert exact.method == "exact" and bound.method == "bound"
        assert "known to within" in bound.detail and "p-value between" in bound.detail
        # the reported (larger) end is an upper bound on the exact p-value, close to it
        assert bound.log10_p_value >= exact.log10_p_value - 1e-9
        assert bound.log10_p_value - exact.log10_p_value < 0.05
        assert bound.effect.expected == exact.effect.expected  # the exact mean either way
        assert (exact.log10_p_value < -3) == ordered  # the fault is found
