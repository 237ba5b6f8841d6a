"""Partitions, dimensions and class sizes against OEIS, sympy and brute force."""

from __future__ import annotations

import math
from collections import Counter
from itertools import permutations

import pytest
from sympy.functions.combinatorial.numbers import partition as sympy_partition

from shufflecheck.common.errors import InputError
from shufflecheck.core.partitions import (
    check_partition,
    check_shape,
    class_size,
    conjugate,
    content_sum,
    count_partitions,
    dimension,
    hook_lengths,
    parse_partition,
    partition_sign,
    partitions,
    z,
)
from tests._brute import cycle_lengths

# OEIS A000041, p(0..20)
A000041 = [1, 1, 2, 3, 5, 7, 11, 15, 22, 30, 42, 56, 77, 101, 135, 176, 231, 297, 385, 490, 627]
# OEIS A000085, number of involutions of n, n = 0..20
A000085 = [
    1,
    1,
    2,
    4,
    10,
    26,
    76,
    232,
    764,
    2620,
    9496,
    35696,
    140152,
    568504,
    2390480,
    10349536,
    46206736,
    211799312,
    997313824,
    4809701440,
    23758664096,
]


class TestPartitions:
    def test_counts_oeis_a000041(self):
        assert [len(partitions(n)) for n in range(21)] == A000041

    @pytest.mark.parametrize("n", [0, 7, 20, 52, 100, 416])
    def test_pentagonal_count_against_sympy(self, n):
        # sympy's partition(n) (formerly sympy.npartitions; Hardy-Ramanujan-Rademacher),
        # independent of the pentagonal recurrence
        assert count_partitions(n) == int(sympy_partition(n))

    def test_reverse_lexicographic_order(self):
        assert partitions(4) == ((4,), (3, 1), (2, 2), (2, 1, 1), (1, 1, 1, 1))
        for n in range(1, 12):
            ps = partitions(n)
            assert list(ps) == sorted(ps, reverse=True)
            assert ps[0] == (n,) and ps[-1] == (1,) * n

    def test_empty_partition(self):
        assert partitions(0) == ((),)


class TestShapes:
    def test_conjugate(self):
        assert conjugate((4, 2, 1)) == (3, 2, 1, 1)
        for n in range(1, 12):
            for lam in partitions(n):
                assert conjugate(conjugate(lam)) == lam

    def test_hook_lengths_worked_example(self):
        # worked by hand on the Young diagram of (4, 2, 1)
        assert hook_lengths((4, 2, 1)) == ((6, 4, 2, 1), (3, 1), (1,))

    @pytest.mark.parametrize("n", range(0, 21))
    def test_dimension_sums(self, n):
        dims = [dimension(lam) for lam in partitions(n)]
        assert sum(d * d for d in dims) == math.factorial(n)  # sum d^2 = n!
        assert sum(dims) == A000085[n]  # sum d = number of involutions (OEIS A000085)

    def test_dimension_counts_standard_tableaux(self):
        # brute force: standard Young tableaux of (3, 2) by filling order
        def count_syt(shape):
            if sum(shape) == 0:
                return 1
            total = 0
            for i, part in enumerate(shape):
                if part and (i + 1 == len(shape) or shape[i + 1] < part):
                    smaller = list(shape)
                    smaller[i] -= 1
                    total += count_syt(tuple(smaller))
            return total

        for n in range(1, 9):
            for lam in partitions(n):
                assert dimension(lam) == count_syt(lam)

    def test_content_sum(self):
        assert content_sum((3, 2)) == (0 + 1 + 2) + (-1 + 0)


class TestClasses:
    @pytest.mark.parametrize("n", range(1, 8))
    def test_class_sizes_brute_force(self, n):
        counts = Counter()
        for perm in permutations(range(n)):
            counts[cycle_lengths(perm)] += 1
        for mu in partitions(n):
            assert class_size(mu) == counts[mu]
            assert z(mu) * counts[mu] == math.factorial(n)

    def test_sign(self):
        assert partition_sign((2, 1)) == -1
        assert partition_sign((3,)) == 1


class TestBadInput:
    def test_messages(self):
        with pytest.raises(InputError, match="has a part 0"):
            check_partition([3, 0, 1])
        with pytest.raises(InputError, match="has a part -2"):
            check_partition([3, -2])
        with pytest.raises(InputError, match="not a partition"):
            check_shape([1, 3])
        with pytest.raises(InputError, match="has size 5, expected 4"):
            check_shape([3, 2], size=4)
        with pytest.raises(InputError, match="cannot read part"):
            parse_partition("3,x")
        with pytest.raises(InputError, match="empty"):
            parse_partition("  ")

    def test_parse(self):
        assert parse_partition("3^2,1") == (3, 3, 1)
        assert parse_partition("(4, 2, 1)") == (4, 2, 1)
