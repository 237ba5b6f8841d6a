"""The fast kernels of issue 15 against the implementations they replaced.

Each check compares a fast path with a plain reference written out here (the project's
previous implementation, or the textbook recurrence): values must be identical (exact
integers, or floats to the last bit where the same integers are divided) or agree to the
stated tolerance.
"""

from __future__ import annotations

import math

import pytest

from shufflecheck.core.counting import eulerian_row
from shufflecheck.core.distances import distances_from_groups
from shufflecheck.models import riffle


def _eulerian_plain(n: int) -> tuple[int, ...]:
    # A(n, d) = (d + 1) A(n-1, d) + (n - d) A(n-1, d-1) (Comtet 1974, p. 243), whole rows
    row = [1]
    for m in range(2, n + 1):
        prev, row = row, [0] * m
        for d in range(m):
            row[d] = ((d + 1) * prev[d] if d < m - 1 else 0) + ((m - d) * prev[d - 1] if d else 0)
    return tuple(row)


def _riffle_reference(n: int, k: int, hands: int = 2):
    # the previous implementation: every Eulerian group through distances_from_groups
    a = hands**k
    numerators, value = [], math.comb(a + n - 1, n)
    for r in range(1, n + 1):
        numerators.append(value)
        value = value * (a - r) // (a + n - r) if a - r > 0 else 0
    return distances_from_groups(_eulerian_plain(n), numerators, a**n, math.factorial(n))


class TestEulerian:
    def test_half_rows_equal_whole_rows(self):
        for n in range(1, 120):
            assert eulerian_row(n) == _eulerian_plain(n)

    def test_no_recursion_limit(self):
        # the row of 2,000 used to recurse 2,000 deep; OEIS A008292: A(n, 0) = 1, A(n, 1) =
        # 2^n - n - 1, and the row sums to n!
        row = eulerian_row(2000)
        assert row[0] == row[-1] == 1
        assert row[1] == 2**2000 - 2001
        assert sum(row) == math.factorial(2000)


class TestRiffleCrossingPoint:
    @pytest.mark.parametrize("n", [2, 3, 7, 52, 133, 416])
    @pytest.mark.parametrize("hands", [2, 3])
    def test_identical_to_group_sums(self, n, hands):
        for k in range(1, 16):
            row = riffle.exact_distances(n, k, hands=hands)
            assert (row.total_variation, row.separation, row.kl_bits) == _riffle_reference(
                n, k, hands
            )

    def test_every_size_up_to_the_limit(self):
        curve = riffle.distance_curve(riffle.MAX_EXACT_CARDS, 3)
        assert [r.total_variation for r in curve.rows] == [1.0, 1.0, 1.0]
        row = riffle.exact_distances(600, 14)
        assert (row.total_variation, row.separation, row.kl_bits) == _riffle_reference(600, 14)
