"""Exact number tables against OEIS, sympy and brute force over all n! arrangements."""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import pytest
import sympy
from sympy.functions.combinatorial.numbers import stirling

from shufflecheck.common.errors import InputError
from shufflecheck.core import counting
from tests._brute import cycle_count


def _brute(n: int, statistic) -> list[int]:
    counts: dict[int, int] = {}
    for perm in itertools.permutations(range(n)):
        value = statistic(perm)
        counts[value] = counts.get(value, 0) + 1
    return [counts.get(k, 0) for k in range(max(counts) + 1)]


def _descents(p):
    return sum(p[i] > p[i + 1] for i in range(len(p) - 1))


def _inversions(p):
    return sum(p[i] > p[j] for i in range(len(p)) for j in range(i + 1, len(p)))


def _fixed(p):
    return sum(p[i] == i for i in range(len(p)))


def _successions(p):
    return sum(p[i + 1] == p[i] + 1 for i in range(len(p) - 1))


class TestEulerian:
    def test_oeis_a008292(self):
        # OEIS A008292, rows n = 1..7 (triangle of Eulerian numbers)
        expected = [
            1,
            1,
            1,
            1,
            4,
            1,
            1,
            11,
            11,
            1,
            1,
            26,
            66,
            26,
            1,
            1,
            57,
            302,
            302,
            57,
            1,
            1,
            120,
            1191,
            2416,
            1191,
            120,
            1,
        ]
        got = [v for n in range(1, 8) for v in counting.eulerian_row(n)]
        assert got == expected

    @pytest.mark.parametrize("n", range(1, 8))
    def test_brute_force_descents(self, n):
        assert list(counting.eulerian_row(n)) == _brute(n, _descents)

    def test_row_sums(self):
        for n in (10, 52, 104):
            assert sum(counting.eulerian_row(n)) == math.factorial(n)


class TestStirling:
    @pytest.mark.parametrize("n", [0, 1, 5, 12, 30])
    def test_first_kind_against_sympy(self, n):
        # sympy.functions.combinatorial.numbers.stirling(n, k, kind=1), unsigned
        expected = [int(stirling(n, k, kind=1)) for k in range(n + 1)]
        assert list(counting.stirling1_row(n)) == expected

    @pytest.mark.parametrize("n", [0, 1, 5, 12, 30])
    def test_second_kind_against_sympy(self, n):
        expected = [int(stirling(n, k, kind=2)) for k in range(n + 1)]
        assert list(counting.stirling2_row(n)) == expected

    def test_columns_match_rows(self):
        cols = counting.stirling2_columns(40, 12)
        for k in (0, 1, 7, 13, 40):
            assert cols[k] == tuple(int(stirling(k, d, kind=2)) for d in range(13))

    def test_first_kind_oeis_a132393(self):
        # OEIS A132393 (unsigned Stirling numbers of the first kind), rows n = 0..5
        expected = [1, 0, 1, 0, 1, 1, 0, 2, 3, 1, 0, 6, 11, 6, 1, 0, 24, 50, 35, 10, 1]
        assert [v for n in range(6) for v in counting.stirling1_row(n)] == expected

    @pytest.mark.parametrize("n", range(1, 8))
    def test_cycles_brute_force(self, n):
        assert list(counting.stirling1_row(n))[1:] == _brute(n, cycle_count)[1:]


class TestMahonian:
    def test_oeis_a008302(self):
        # OEIS A008302, rows n = 1..5
        expected = [1, 1, 1, 1, 2, 2, 1, 1, 3, 5, 6, 5, 3, 1, 1, 4, 9, 15, 20, 22, 20, 15, 9, 4, 1]
        assert [v for n in range(1, 6) for v in counting.mahonian_row(n)] == expected

    @pytest.mark.parametrize("n", range(1, 8))
    def test_brute_force(self, n):
        assert list(counting.mahonian_row(n)) == _brute(n, _inversions)


class TestRencontres:
    def test_oeis_a008290(self):
        # OEIS A008290, rows n = 0..5
        expected = [1, 0, 1, 1, 0, 1, 2, 3, 0, 1, 9, 8, 6, 0, 1, 44, 45, 20, 10, 0, 1]
        assert [v for n in range(6) for v in counting.rencontres_row(n)] == expected

    @pytest.mark.parametrize("n", range(1, 8))
    def test_brute_force(self, n):
        assert list(counting.rencontres_row(n)) == _brute(n, _fixed)


class TestSuccessions:
    def test_oeis_a000255(self):
        # OEIS A000255: 1, 1, 3, 11, 53, 309, 2119, 16687, 148329, 1468457
        expected = [1, 1, 3, 11, 53, 309, 2119, 16687, 148329, 1468457]
        assert [counting.no_succession_count(m) for m in range(10)] == expected

    @pytest.mark.parametrize("n", range(1, 8))
    def test_brute_force(self, n):
        assert list(counting.successions_row(n)) == _brute(n, _successions)


class TestHarmonic:
    def test_oeis_a001008_a002805(self):
        # OEIS A001008 (numerators) and A002805 (denominators) of H_n, n = 1..10
        num = [1, 3, 11, 25, 137, 49, 363, 761, 7129, 7381]
        den = [1, 2, 6, 12, 60, 20, 140, 280, 2520, 2520]
        for n in range(1, 11):
            assert counting.harmonic(n) == Fraction(num[n - 1], den[n - 1])

    def test_against_sympy(self):
        assert counting.harmonic(52) == Fraction(str(sympy.harmonic(52)))


def test_bad_input():
    with pytest.raises(ValueError, match="n must be >= 0"):
        counting.eulerian_row(-1)
    with pytest.raises(ValueError, match="must be an integer"):
        counting.mahonian_row(2.5)


def test_multinomial():
    # bridge deals, 52! / (13!)^4 = 53,644,737,765,488,792,839,237,440,000 (a figure of the
    # card trade, recalled from memory; the same value from factorials here)
    assert counting.multinomial((13, 13, 13, 13)) == 53_644_737_765_488_792_839_237_440_000
    for counts in [(0,), (3,), (2, 3), (1, 1, 1, 1), (4, 0, 2), (24,) * 9 + (96,)]:
        expected = math.factorial(sum(counts))
        for c in counts:
            expected //= math.factorial(c)
        assert counting.multinomial(counts) == expected
    # brute force: distinct arrangements of a small multiset
    assert counting.multinomial((2, 1, 2)) == len(set(itertools.permutations("aabcc")))
    with pytest.raises(InputError, match="a count must be >= 0"):
        counting.multinomial((2, -1))
