"""Tests of the ideal riffle on a log of riffles: exact laws, exact p-values, calibration.

Checks against the outside world: brute force over all n! arrangements weighted by the
ideal riffle's law (Bayer & Diaconis 1992, Thm. 1: probability C(n + 2 - r, n) / 2^n for r
rising sequences); exact p-values against brute-force convolutions in fractions; the tests'
calibration over many logs simulated under the ideal riffle (binomial tolerances beside
each check); the Monte Carlo p-value's validity (Hope 1968).
"""

from __future__ import annotations

import itertools
import math
from collections import defaultdict
from fractions import Fraction

import numpy as np
import pytest

from shufflecheck.analyses.riffle_null import (
    cut_centre_law,
    cut_spread_law,
    expected_packet_lengths,
    ideal_riffle_tests,
    packet_size_statistic,
)
from shufflecheck.common.errors import InputError
from shufflecheck.models import hand_riffle
from shufflecheck.models.riffle_likelihood import (
    decode_riffles,
    packet_count_row,
    tally_riffles,
)
from shufflecheck.stats.nulls import Law, mixed_sum_tail_logs, sum_tail_logs


def _counts(rows):
    return tally_riffles(decode_riffles(np.asarray(rows, dtype=np.int16)))[0]


def _ideal_changed(n: int) -> list[tuple[tuple[int, ...], Fraction]]:
    """Every arrangement one ideal riffle gives that changes the deck, with its probability
    given a change (Bayer & Diaconis: each has 2^-n, so 1/(2^n - n - 1) given a change)."""
    perms = np.array(list(itertools.permutations(range(n))), dtype=np.int16)
    decoded = decode_riffles(perms)
    keep = perms[decoded.rising == 2]
    share = Fraction(1, 2**n - n - 1)
    return [(tuple(p), share) for p in keep.tolist()]


def _convolve(laws: list[dict[int, Fraction]]) -> dict[int, Fraction]:
    dist = {0: Fraction(1)}
    for law in laws:
        nxt: dict[int, Fraction] = defaultdict(Fraction)
        for s, p in dist.items():
            for v, q in law.items():
                nxt[s + v] += p * q
        dist = dict(nxt)
    return dist


def _two_sided(dist: dict[int, Fraction], observed: int) -> float:
    low = sum(p for s, p in dist.items() if s <= observed)
    high = sum(p for s, p in dist.items() if s >= observed)
    return min(1.0, 2 * float(min(low, high)))


class TestExactLaws:
    @pytest.mark.parametrize("n", [4, 6, 7])
    def test_cut_laws_brute_force(self, n):
        changed = _ideal_changed(n)
        cuts = decode_riffles(np.array([p for p, _ in changed], dtype=np.int16)).cuts
        by_cut: dict[int, Fraction] = defaultdict(Fraction)
        by_square: dict[int, Fraction] = defaultdict(Fraction)
        for c, (_, share) in zip(cuts.tolist(), changed, strict=True):
            by_cut[c] += share
            by_square[((2 * c - n) ** 2 - n % 2) // 4] += share
        centre = cut_centre_law(n)
        assert {v: centre.probability(v) for v in by_cut} == dict(by_cut)
        spread = cut_spread_law(n)
        assert {v: spread.probability(v) for v in by_square} == dict(by_square)
        assert centre.mean == Fraction(n, 2)

    def test_expected_packet_lengths_brute_force(self):
        n = 6
        rows = [p for p, _ in _ideal_changed(n)]
        counts = _counts(rows)  # every changed arrangement once
        # each arrangement once is exactly C(n,c) - 1 riffles per cut, so the expectation
        # given those cuts is the observed count
        np.testing.assert_allclose(expected_packet_lengths(counts), counts.packet_lengths)
        assert packet_size_statistic(counts) == pytest.approx(0.0, abs=1e-9)


class TestMixedSum:
    def test_against_fractions(self):
        # a sum of draws from several exact laws (packets given the cut, 10 cards)
        n = 10
        spec = [(3, 2), (5, 3), (1, 1), (7, 2)]
        parts = [(Law.from_counts(packet_count_row(c, n), math.comb(n, c) - 1), m) for c, m in spec]
        laws = []
        for law, m in parts:
            pmf = {law.offset + k: Fraction(v, law.total) for k, v in enumerate(law.counts) if v}
            laws += [pmf] * m
        dist = _convolve(laws)
        for t in range(min(dist) - 1, max(dist) + 2):
            low = sum(p for s, p in dist.items() if s <= t)
            high = sum(p for s, p in dist.items() if s >= t)
            got_low, got_high = mixed_sum_tail_logs(parts, t)
            for got, want in ((got_low, low), (got_high, high)):
                if want == 0:
                    assert got == -math.inf
                else:
                    # relative accuracy about 1e-10 (the module's stated accuracy)
                    assert got == pytest.approx(math.log(want), rel=1e-9, abs=1e-9)

    def test_one_law_is_the_iid_sum(self):
        law = Law.from_counts(packet_count_row(20, 52), math.comb(52, 20) - 1)
        for total in (600, 800, 900):
            want = sum_tail_logs(law, 30, total)
            assert mixed_sum_tail_logs([(law, 12), (law, 18)], total) == pytest.approx(
                want, rel=1e-9
            )


class TestExactPValues:
    def test_small_log_against_enumeration(self):
        # four riffles of 5 cards: enumerate every way the null could have dropped them
        n = 5
        changed = [p for p, _ in _ideal_changed(n)]
        counts = _counts([changed[k] for k in (3, 10, 17, 22)])
        assert counts.changed == 4
        result = ideal_riffle_tests(counts, samples=0)
        centre = {c: Fraction(k, 2**n - n - 1) for c, k in enumerate(cut_centre_law(n).counts, 1)}
        dist = _convolve([centre] * 4)
        assert result.by_name("cut-centre").p_value == pytest.approx(
            _two_sided(dist, int(counts.cuts @ np.arange(n + 1))), rel=1e-9
        )
        packet_laws = []
        for c in np.flatnonzero(counts.cuts):
            row = packet_count_row(int(c), n)
            total = math.comb(n, int(c)) - 1
            packet_laws += [{r: Fraction(k, total) for r, k in enumerate(row) if k}] * int(
                counts.cuts[c]
            )
        assert result.by_name("packets").p_value == pytest.approx(
            _two_sided(_convolve(packet_laws), counts.packets), rel=1e-9
        )


class TestCalibration:
    @staticmethod
    def _exact_p_values(logs, riffles, cards, seed):
        rng = np.random.default_rng(seed)
        out = []
        for _ in range(logs):
            counts = _counts(hand_riffle.sample(riffles, cards, rng=rng))
            out.append([t.p_value for t in ideal_riffle_tests(counts, samples=0).tests])
        return np.array(out)

    def test_exact_tests_under_the_ideal_riffle(self):
        # 200 logs of 40 ideal riffles: P(p <= a) must not exceed a by more than 3 binomial
        # s.e. (a = 0.2: s.e. 0.028; a = 0.5: s.e. 0.035), nor be far below it
        p = self._exact_p_values(200, 40, 52, seed=11)
        for level in (0.2, 0.5):
            rate = (p <= level).mean(axis=0)
            se = math.sqrt(level * (1 - level) / 200)
            assert np.all(rate <= level + 3 * se), (level, rate)
            assert np.all(rate >= level - 4 * se), (level, rate)

    @pytest.mark.slow
    def test_exact_tests_many_logs(self):
        # 3000 logs: s.e. 0.004 at a = 0.05, 0.0018 at a = 0.01
        p = self._exact_p_values(3000, 30, 52, seed=12)
        for level in (0.01, 0.05, 0.2):
            rate = (p <= level).mean(axis=0)
            se = math.sqrt(level * (1 - level) / 3000)
            assert np.all(rate <= level + 3 * se), (level, rate)
            assert np.all(rate >= 0.5 * level), (level, rate)

    @pytest.mark.slow
    def test_monte_carlo_tests_and_family_wise_error(self):
        # 400 logs of 25 ideal riffles, 99 simulated logs each: a valid Monte Carlo p-value
        # has P(p <= 0.1) <= 0.1 (s.e. 0.015 for the observed rate); Holm keeps the chance
        # that any of the five tests rejects at 0.1 below 0.1
        rng = np.random.default_rng(13)
        p, flagged = [], 0
        for _ in range(400):
            counts = _counts(hand_riffle.sample(25, 52, rng=rng))
            result = ideal_riffle_tests(counts, samples=99, alpha=0.1, rng=rng)
            p.append([result.by_name(n).p_value for n in ("packet-sizes", "likelihood-ratio")])
            flagged += result.flagged
        rate = (np.array(p) <= 0.1).mean(axis=0)
        assert np.all(rate <= 0.1 + 3 * 0.015) and np.all(rate >= 0.1 - 4 * 0.015), rate
        assert flagged / 400 <= 0.1 + 3 * 0.015


class TestPower:
    def test_clumpy_and_tight_dealer_rejected(self):
        counts = _counts(hand_riffle.sample(300, 52, rng=2, spread=2.5, clump=1.6))
        result = ideal_riffle_tests(counts, samples=199, rng=1)
        assert result.by_name("packets").flagged and result.by_name("cut-spread").flagged
        assert not result.by_name("cut-centre").flagged
        assert result.by_name("likelihood-ratio").p_value == pytest.approx(1 / 200)

    def test_off_centre_cuts_rejected(self):
        # ideal drops after a cut three cards below the middle
        rng = np.random.default_rng(5)
        n, rows = 52, []
        for _ in range(300):
            c = int(rng.binomial(n, 0.5)) - 3
            right = np.zeros(n, dtype=bool)
            right[rng.choice(n, n - c, replace=False)] = True
            top, bottom = iter(range(c)), iter(range(c, n))
            rows.append([next(bottom) if r else next(top) for r in right])
        result = ideal_riffle_tests(_counts(rows), samples=0)
        assert result.by_name("cut-centre").flagged
        assert not result.by_name("packets").flagged

    def test_ideal_dealer_not_rejected(self):
        counts = _counts(hand_riffle.sample(300, 52, rng=4))
        result = ideal_riffle_tests(counts, samples=99, rng=2)
        assert not result.flagged
        assert "not rejected" in result.verdict()


class TestArguments:
    def test_samples(self):
        counts = _counts(hand_riffle.sample(20, 20, rng=1))
        wanted = r"samples must be 0 \(exact tests only\) or at least 19"
        with pytest.raises(InputError, match=wanted):
            ideal_riffle_tests(counts, samples=5)
        assert len(ideal_riffle_tests(counts, samples=0).tests) == 3

    def test_needs_a_change(self):
        counts = _counts(np.tile(np.arange(8), (3, 1)))
        with pytest.raises(InputError, match="at least one riffle that changed the deck"):
            ideal_riffle_tests(counts, samples=0)
