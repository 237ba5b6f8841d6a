"""Exact integer number tables used as laws of statistics of a uniformly random deck.

Every row is a tuple of Python ints (exact at any size); dividing by ``n!`` turns a row into
the exact law of the corresponding statistic of a uniform random permutation of ``n`` cards.
Rows are cached with :func:`functools.cache`; they are immutable tuples, so sharing is safe.

Conventions: ``row[k]`` is the count for the value ``k`` of the statistic, starting at 0, so
``sum(row) == n!`` for every permutation-count row.

References
----------
.. [1] L. Comtet, *Advanced Combinatorics*, Reidel, 1974 (Eulerian, Stirling, rencontres
       numbers and their recurrences).
.. [2] R. P. Stanley, *Enumerative Combinatorics*, vol. 1, 2nd ed., Cambridge University
       Press, 2012, sections 1.3-1.4 (cycles, inversions, descents).
.. [3] The On-Line Encyclopedia of Integer Sequences: A008292 (Eulerian), A132393 (Stirling
       numbers of the first kind), A008277 (second kind), A008302 (Mahonian), A008290
       (rencontres), A000255 (permutations without successions), A001008/A002805
       (harmonic numbers).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction
from functools import cache

from shufflecheck.common.errors import InputError

__all__ = [
    "binomial_row",
    "eulerian_row",
    "harmonic",
    "mahonian_row",
    "multinomial",
    "no_succession_count",
    "poly_multiply",
    "rencontres_row",
    "stirling1_row",
    "stirling2_columns",
    "stirling2_row",
    "successions_row",
]


def _check_n(n: int, name: str = "n") -> int:
    if isinstance(n, bool) or not isinstance(n, int):
        raise InputError(f"{name} must be an integer, got {n!r}")
    if n < 0:
        raise InputError(f"{name} must be >= 0, got {n}")
    return n


@cache
def eulerian_row(n: int) -> tuple[int, ...]:
    """Eulerian numbers: ``row[d]`` permutations of ``n`` with exactly ``d`` descents.

    A permutation has ``r`` rising sequences exactly when its inverse has ``r - 1`` descents,
    so ``row[r - 1]`` also counts arrangements with ``r`` rising sequences. Length ``n``
    for ``n >= 1``; ``(1,)`` for ``n = 0`` (the empty permutation has no descent).

    Recurrence ``A(n, d) = (d + 1) A(n-1, d) + (n - d) A(n-1, d-1)`` ([1], p. 243), run
    iteratively on the first half of each row only, by the symmetry
    ``A(n, d) = A(n, n - 1 - d)``; each row is one vectorized step over exact Python ints.
    """
    _check_n(n)
    if n <= 1:
        return (1,)
    import numpy as np

    half = np.array([1], dtype=object)  # row m = 1: d = 0 .. (m - 1) // 2
    for m in range(2, n + 1):
        width = (m - 1) // 2 + 1  # entries d = 0 .. (m - 1) // 2 of row m
        # entries 0 .. width - 1 of the whole row m - 1 (length m - 1), by symmetry
        prev = np.concatenate([half, half[: m - 1 - len(half)][::-1]])[:width]
        if len(prev) < width:  # only when row m - 1 has fewer than width entries
            prev = np.concatenate([prev, np.zeros(width - len(prev), dtype=object)])
        d = np.arange(width, dtype=object)
        shifted = np.concatenate([np.zeros(1, dtype=object), prev[:-1]])
        half = (d + 1) * prev + (m - d) * shifted
    whole = np.concatenate([half, half[: n - len(half)][::-1]])
    return tuple(int(v) for v in whole)


@cache
def stirling1_row(n: int) -> tuple[int, ...]:
    """Unsigned Stirling numbers of the first kind: ``row[c]`` permutations with ``c`` cycles.

    Length ``n + 1`` (``row[0] = 0`` for ``n >= 1``). Divided by ``n!`` this is also the
    exact law of a sum of independent Bernoulli(1/j), j = 1..n, because
    ``prod_j (x + j - 1) = sum_c row[c] x^c`` ([2], Prop. 1.3.7).
    """
    _check_n(n)
    row = [1]
    for m in range(1, n + 1):
        # multiply the generating polynomial by (x + m - 1)
        nxt = [0] * (m + 1)
        for c, value in enumerate(row):
            nxt[c] += (m - 1) * value
            nxt[c + 1] += value
        row = nxt
    return tuple(row)


@cache
def stirling2_row(n: int) -> tuple[int, ...]:
    """Stirling numbers of the second kind ``S(n, k)``, k = 0..n (set partitions into k blocks)."""
    _check_n(n)
    row = [1]
    for m in range(1, n + 1):
        nxt = [0] * (m + 1)
        for k in range(1, m + 1):
            nxt[k] = k * (row[k] if k < m else 0) + row[k - 1]
        row = nxt
    return tuple(row)


def stirling2_columns(kmax: int, dmax: int) -> list[tuple[int, ...]]:
    """Rows ``S(k, 0..dmax)`` for every ``k = 0..kmax`` (columns cut at ``dmax``).

    This is what random-to-top needs: after ``k`` moves a given list of ``d`` distinct cards
    is on top with probability ``S(k, d) / n^k``. Cost ``O(kmax * dmax)`` big-integer
    operations, against ``O(kmax^2)`` for whole rows.
    """
    _check_n(kmax, "kmax")
    _check_n(dmax, "dmax")
    rows: list[tuple[int, ...]] = []
    row = [1] + [0] * dmax
    rows.append(tuple(row))
    for _ in range(kmax):
        nxt = [0] * (dmax + 1)
        for d in range(1, dmax + 1):
            nxt[d] = d * row[d] + row[d - 1]
        row = nxt
        rows.append(tuple(row))
    return rows


@cache
def mahonian_row(n: int) -> tuple[int, ...]:
    """Mahonian numbers: ``row[i]`` permutations of ``n`` with ``i`` inversions.

    Length ``n(n-1)/2 + 1``; generating function ``prod_{j=1..n} (1 + q + ... + q^{j-1})``
    ([2], Cor. 1.3.13). The inversion count is the Kendall distance to the reference order.
    """
    _check_n(n)
    row = [1]
    for j in range(2, n + 1):
        # multiply by 1 + q + ... + q^(j-1) with a running window sum
        length = len(row) + j - 1
        nxt = [0] * length
        window = 0
        for i in range(length):
            if i < len(row):
                window += row[i]
            if i - j >= 0:
                window -= row[i - j]
            nxt[i] = window
        row = nxt
    return tuple(row)


@cache
def _derangements(n: int) -> int:
    # D(0) = 1, D(1) = 0, D(n) = (n - 1)(D(n-1) + D(n-2))
    a, b = 1, 0
    if n == 0:
        return 1
    for m in range(2, n + 1):
        a, b = b, (m - 1) * (a + b)
    return b


@cache
def rencontres_row(n: int) -> tuple[int, ...]:
    """Rencontres numbers: ``row[j]`` permutations of ``n`` with exactly ``j`` fixed points.

    ``row[j] = C(n, j) D(n - j)`` with ``D`` the derangement numbers ([1], p. 180).
    """
    _check_n(n)
    return tuple(math.comb(n, j) * _derangements(n - j) for j in range(n + 1))


@cache
def no_succession_count(m: int) -> int:
    """``a(m)``: permutations of ``m + 1`` with no succession (OEIS A000255).

    ``a(0) = a(1) = 1``, ``a(m) = m a(m-1) + (m-1) a(m-2)``: 1, 1, 3, 11, 53, 309, ...
    """
    _check_n(m, "m")
    a, b = 1, 1
    if m <= 1:
        return 1
    for i in range(2, m + 1):
        a, b = b, i * b + (i - 1) * a
    return b


@cache
def successions_row(n: int) -> tuple[int, ...]:
    """``row[k]``: permutations of ``n`` with exactly ``k`` successions (card i+1 right after i).

    ``row[k] = C(n-1, k) a(n-1-k)`` with ``a`` from :func:`no_succession_count`; length ``n``
    for ``n >= 1`` (at most ``n - 1`` successions), ``(1,)`` for ``n = 0``.
    """
    _check_n(n)
    if n == 0:
        return (1,)
    return tuple(math.comb(n - 1, k) * no_succession_count(n - 1 - k) for k in range(n))


@cache
def binomial_row(n: int) -> tuple[int, ...]:
    """Binomial coefficients ``C(n, k)``, k = 0..n."""
    _check_n(n)
    return tuple(math.comb(n, k) for k in range(n + 1))


def multinomial(counts: Sequence[int]) -> int:
    """The multinomial coefficient ``(c_0 + c_1 + ...)! / (c_0! c_1! ...)``: the number of
    arrangements of a multiset with ``counts[v]`` copies of value ``v`` (a product of
    binomials, exact)."""
    out, seen = 1, 0
    for c in counts:
        _check_n(c, "a count")
        seen += c
        out *= math.comb(seen, c)
    return out


@cache
def harmonic(n: int) -> Fraction:
    """The harmonic number ``H_n = 1 + 1/2 + ... + 1/n`` as an exact fraction (A001008/A002805).

    ``H_n`` is the mean number of correct guesses in the guessing game with feedback on a
    uniformly random deck of ``n`` cards.
    """
    _check_n(n)
    return sum((Fraction(1, j) for j in range(1, n + 1)), Fraction(0))


def poly_multiply(a: list[int] | tuple[int, ...], b: list[int] | tuple[int, ...]) -> list[int]:
    """Exact product of two polynomials with non-negative integer coefficients
    (``a[i]`` is the coefficient of ``x^i``).

    Kronecker substitution: each polynomial is packed into one big integer with slots wide
    enough for every coefficient of the product, the integers are multiplied once, and the
    slots are read back.
    """
    if not a or not b:
        return []
    if min(a) < 0 or min(b) < 0:
        raise InputError("poly_multiply needs non-negative coefficients")
    bound = max(a) * max(b) * min(len(a), len(b))
    size = max(1, (bound.bit_length() + 8) // 8)  # bytes per slot
    packed_a = int.from_bytes(b"".join(v.to_bytes(size, "little") for v in a), "little")
    packed_b = int.from_bytes(b"".join(v.to_bytes(size, "little") for v in b), "little")
    count = len(a) + len(b) - 1
    data = (packed_a * packed_b).to_bytes(count * size, "little")
    return [int.from_bytes(data[i * size : (i + 1) * size], "little") for i in range(count)]
