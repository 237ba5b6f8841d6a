"""Integer partitions: shapes of irreducible characters and cycle types of permutations.

One canonical form throughout the package: a partition is a tuple of positive ints in
weakly decreasing order, e.g. ``(4, 2, 1)``. The empty tuple is the one partition of 0.

Ordering convention: :func:`partitions` lists partitions of ``n`` in *reverse
lexicographic* order, ``(n), (n-1, 1), (n-2, 2), (n-2, 1, 1), ..., (1, ..., 1)``. Used for
shapes this puts the trivial character first and the sign character last; the same order
indexes conjugacy classes (the identity class ``(1^n)`` is then last).

References
----------
.. [1] B. E. Sagan, *The Symmetric Group*, 2nd ed., Springer GTM 203, 2001: hook length
       formula (Thm. 3.10.2), centralizer orders (Prop. 1.1.1), contents.
.. [2] G. E. Andrews, *The Theory of Partitions*, Cambridge University Press, 1984:
       Euler's pentagonal number recurrence for p(n) (Cor. 1.8).
.. [3] A. Zoghbi and I. Stojmenovic, "Fast algorithms for generating integer partitions",
       Int. J. Comput. Math. 70 (1998) 319-332 (algorithm ZS1, reverse lexicographic order).
"""

from __future__ import annotations

import itertools
import math
import re
from collections import Counter
from collections.abc import Callable, Iterable, Sequence
from functools import cache

import numpy as np

from shufflecheck.common.errors import InputError, clip
from shufflecheck.common.limits import limit

Partition = tuple[int, ...]

__all__ = [
    "Partition",
    "check_partition",
    "check_shape",
    "class_size",
    "conjugate",
    "content_sum",
    "content_sums",
    "contents",
    "count_partitions",
    "dimension",
    "format_partition",
    "hook_lengths",
    "hook_product_exponents",
    "log_dimensions",
    "multiplicity_matrix",
    "parse_partition",
    "partition_sign",
    "partitions",
    "squared_dimension_sums",
    "z",
]


def check_partition(
    parts: Iterable[int], name: str = "partition", size: int | None = None
) -> Partition:
    """Return ``parts`` as a canonical partition or raise :class:`InputError`.

    Parts must be positive integers; they are sorted into weakly decreasing order (a cycle
    type may be given in any order; a shape must already be weakly decreasing, which the
    caller asks for with :func:`check_shape`). ``size``, when given, is the required sum.
    """
    try:
        raw = list(parts)
    except TypeError as exc:
        raise InputError(f"{name} must be a sequence of positive integers, got {parts!r}") from exc
    if set(map(type, raw)) <= {int}:  # plain ints (a bool's type is bool): checked in C
        result = tuple(sorted(raw, reverse=True))
        if not result or result[-1] > 0:
            if size is not None and sum(result) != size:
                raise InputError(
                    f"{name} {format_partition(result)} has size {sum(result)}, expected {size}"
                )
            return result
    values: list[int] = []
    for p in raw:
        if isinstance(p, bool) or not isinstance(p, int):
            try:
                if float(p) != int(p):
                    raise ValueError
                p = int(p)
            except (TypeError, ValueError) as exc:
                raise InputError(f"{name} has a part that is not an integer: {p!r}") from exc
        if p <= 0:
            given = ",".join(str(q) for q in raw)
            raise InputError(f"{name} {given} has a part {p}; parts must be positive integers")
        values.append(int(p))
    values.sort(reverse=True)
    result = tuple(values)
    if size is not None and sum(result) != size:
        raise InputError(
            f"{name} {format_partition(result)} has size {sum(result)}, expected {size}"
        )
    return result


def check_shape(parts: Iterable[int], name: str = "shape", size: int | None = None) -> Partition:
    """Like :func:`check_partition`, but a shape must be given in weakly decreasing order."""
    if type(parts) is tuple and set(map(type, parts)) <= {int}:  # the common case, in C
        if (not parts or parts[-1] > 0) and tuple(sorted(parts, reverse=True)) == parts:
            if size is None or sum(parts) == size:
                return parts
    raw = list(parts)
    shape = check_partition(raw, name, size)
    if tuple(raw) != shape:
        raise InputError(
            f"{name} {','.join(str(p) for p in raw)} is not a partition: "
            "parts must be weakly decreasing (a Young diagram's row lengths)"
        )
    return shape


_TOKEN = re.compile(r"^\s*(\d+)\s*(?:\^\s*(\d+))?\s*$")


def parse_partition(text: str, name: str = "partition", most: int | None = None) -> Partition:
    """Parse ``"4,2,1"`` (or ``"3^2,1"`` for repeated parts, or ``"4 2 1"``) into a partition.

    The parts are returned in the order given, sorted only by :func:`check_partition` or
    :func:`check_shape`, so a caller can still see whether a shape was decreasing. ``most``
    bounds the sum of the parts (the ``n`` a caller expects; at most the largest ``n`` of
    :data:`~shufflecheck.common.limits.LIMITS` ``"characters_n"`` in any case): text adding
    up to more is refused before the parts are written out, so ``3^999999999999`` costs
    nothing.
    """
    ceiling = limit("characters_n").high
    most = ceiling if most is None else min(most, ceiling)
    stripped = text.strip().strip("()[]")
    if not stripped:
        raise InputError(f"{name} is empty; give parts like 4,2,1")
    parts: list[int] = []
    total = 0
    for token in re.split(r"[,\s]+", stripped):
        if not token:
            continue
        match = _TOKEN.match(token) if len(token) <= 40 else None
        if match is None:
            raise InputError(
                f"{name} {clip(text, 40)!r}: cannot read part {clip(token, 20)!r}; give parts "
                "like 4,2,1 or 3^2,1"
            )
        value = int(match.group(1))
        repeat = int(match.group(2)) if match.group(2) is not None else 1
        total += value * repeat
        if total > most:
            raise InputError(f"{name} {clip(text, 40)!r}: its parts add up to more than {most:,}")
        parts.extend([value] * repeat)
    return tuple(parts)


def format_partition(parts: Sequence[int], *, compact: bool = False) -> str:
    """``(3, 3, 1)`` -> ``"3,3,1"``; the empty partition -> ``"()"``.

    ``compact=True`` writes a run of three or more equal parts as ``part^count``, the
    notation ``characters --shape`` reads: ``(2, 1, 1, 1, 1)`` -> ``"2,1^4"``.
    """
    if not parts:
        return "()"
    if not compact:
        return ",".join(str(p) for p in parts)
    out: list[str] = []
    for part, run in itertools.groupby(parts):
        count = len(list(run))
        out.append(f"{part}^{count}" if count >= 3 else ",".join([str(part)] * count))
    return ",".join(out)


@cache
def partitions(n: int) -> tuple[Partition, ...]:
    """All partitions of ``n`` in reverse lexicographic order (see the module docstring).

    ``partitions(0) == ((),)``: the empty partition is the only partition of 0. Generated
    without recursion by algorithm ZS1 of [3] (each partition from the previous one in
    constant amortised time).
    """
    if isinstance(n, bool) or not isinstance(n, int) or n < 0:
        raise InputError(f"n must be a non-negative integer, got {n!r}")
    if n == 0:
        return ((),)
    x = [1] * (n + 1)  # x[1..m] holds the current partition
    x[1] = n
    m = h = 1  # m: number of parts; h: index of the last part larger than 1
    out = [(n,)]
    while x[1] != 1:
        if x[h] == 2:
            m += 1
            x[h] = 1
            h -= 1
        else:
            r = x[h] - 1
            t = m - h + 1
            x[h] = r
            while t >= r:
                h += 1
                x[h] = r
                t -= r
            if t == 0:
                m = h
            else:
                m = h + 1
                if t > 1:
                    h += 1
                    x[h] = t
        out.append(tuple(x[1 : m + 1]))
    return tuple(out)


@cache
def count_partitions(n: int) -> int:
    """``p(n)``, the number of partitions of ``n``, by Euler's pentagonal recurrence ([2]).

    Cheap for large ``n`` (no enumeration), so it is used to estimate memory before building
    a table.
    """
    if n < 0:
        return 0
    p = [1] + [0] * n
    for m in range(1, n + 1):
        total = 0
        k = 1
        while True:
            g1 = k * (3 * k - 1) // 2
            if g1 > m:
                break
            sign = 1 if k % 2 else -1
            total += sign * p[m - g1]
            g2 = k * (3 * k + 1) // 2
            if g2 <= m:
                total += sign * p[m - g2]
            k += 1
        p[m] = total
    return p[n]


def conjugate(shape: Sequence[int]) -> Partition:
    """The conjugate (transposed) shape: column lengths of the Young diagram."""
    if not shape:
        return ()
    return tuple(sum(1 for part in shape if part > j) for j in range(shape[0]))


def hook_lengths(shape: Sequence[int]) -> tuple[tuple[int, ...], ...]:
    """Hook length of every cell, row by row: ``arm + leg + 1``."""
    cols = conjugate(shape)
    return tuple(
        tuple(shape[i] - j + cols[j] - i - 1 for j in range(shape[i])) for i in range(len(shape))
    )


def contents(shape: Sequence[int]) -> tuple[tuple[int, ...], ...]:
    """Content ``j - i`` of every cell (row ``i``, column ``j``, both from 0), row by row."""
    return tuple(tuple(j - i for j in range(shape[i])) for i in range(len(shape)))


def content_sum(shape: Sequence[int]) -> int:
    """Sum of the contents of all cells, ``sum_i (C(lambda_i, 2) - i * lambda_i)``.

    Frobenius: the character ratio at a transposition is
    ``chi(tau) / d = 2 * content_sum / (n (n - 1))``.
    """
    return sum(part * (part - 1) // 2 - i * part for i, part in enumerate(shape))


@cache
def dimension(shape: Partition) -> int:
    """Dimension ``d_lambda = n! / prod(hook lengths)`` of the irreducible (hook length formula).

    Exact integer; ``shape`` must be a canonical partition (tuple). See [1], Thm. 3.10.2.
    """
    n = sum(shape)
    product = 1
    for row in hook_lengths(shape):
        for h in row:
            product *= h
    return math.factorial(n) // product


def z(cycle_type: Sequence[int]) -> int:
    """Centralizer order ``z_mu = prod_i i^{m_i} m_i!`` ([1], Prop. 1.1.1).

    The conjugacy class of cycle type ``mu`` in ``S_n`` has ``n! / z_mu`` elements, and a
    uniformly random permutation has cycle type ``mu`` with probability ``1 / z_mu``.
    """
    result = 1
    for part, mult in Counter(cycle_type).items():
        result *= part**mult * math.factorial(mult)
    return result


def class_size(cycle_type: Sequence[int]) -> int:
    """Number of permutations of cycle type ``cycle_type``: ``n! / z``."""
    return math.factorial(sum(cycle_type)) // z(cycle_type)


def partition_sign(cycle_type: Sequence[int]) -> int:
    """Sign of a permutation of this cycle type: ``(-1)^(n - number of cycles)``."""
    return -1 if (sum(cycle_type) - len(cycle_type)) % 2 else 1


# ---------------------------------------------------------------------------------------
# all partitions of n at once, as a multiplicity matrix (for n where tuples would be slow)


def multiplicity_matrix(n: int) -> np.ndarray:
    """All partitions of ``n`` as rows of part multiplicities: ``M[i, s]`` = parts equal to ``s``.

    Shape ``(p(n), n + 1)`` (column 0 unused), uint8, read-only (one cached array per ``n``).
    Built vectorized, part sizes from ``n`` down to 2, the parts equal to 1 filling the
    remainder. Row order: lexicographic in ``(m_n, m_{n-1}, ..., m_2)``, which is exactly
    the reverse of the order of :func:`partitions` (row ``i`` is ``partitions(n)[-1 - i]``).
    """
    return _multiplicity_matrix(n)


@cache
def _multiplicity_matrix(n: int) -> np.ndarray:
    rows = np.zeros((1, n + 1), dtype=np.uint8)
    sums = np.zeros(1, dtype=np.int64)
    for s in range(n, 1, -1):
        reps = (n - sums) // s + 1
        parent = np.repeat(np.arange(len(sums)), reps)
        offsets = np.arange(int(reps.sum())) - np.repeat(np.cumsum(reps) - reps, reps)
        rows = rows[parent]
        rows[:, s] = offsets
        sums = sums[parent] + offsets * s
    if n >= 1:
        rows[:, 1] = n - sums
    rows.flags.writeable = False
    return rows


def _column_lengths(m: np.ndarray) -> np.ndarray:
    """``L[i, j]`` = length of column ``j`` (0-based) = number of parts larger than ``j``."""
    counts = m[:, 1:].astype(np.int32)
    return np.cumsum(counts[:, ::-1], axis=1)[:, ::-1]  # column j: parts >= j + 1


def content_sums(m: np.ndarray) -> np.ndarray:
    """Content sum of every partition of a multiplicity matrix (vectorized, int64).

    ``sum_i C(lambda_i, 2) - sum_j C(lambda'_j, 2)``: row contents minus column contents,
    the column lengths ``lambda'_j`` being running sums of the multiplicities from the top.
    """
    n = m.shape[1] - 1
    by_size = np.ascontiguousarray(m.T)  # one row per part size: contiguous reads
    total = np.zeros(len(m), dtype=np.int64)
    column = np.zeros(len(m), dtype=np.int64)
    for size in range(n, 0, -1):  # column size - 1 has length = parts >= size
        part = by_size[size].astype(np.int64)
        total += part * (size * (size - 1) // 2)
        column += part
        total -= (column * (column - 1)) >> 1  # C(column, 2); the product is even
    return total


def log_dimensions(m: np.ndarray, chunk: int = 20_000) -> np.ndarray:
    """Natural log of ``d_lambda`` for every partition of a multiplicity matrix.

    Hook length formula cell by cell, vectorized over partitions in chunks:
    ``ln d = ln n! - sum_cells ln(arm + leg + 1)``, with the hook of cell ``(i, j)`` equal to
    ``lambda_i - j + lambda'_j - i - 1``. Float64 (about 1e-13 relative); exact values come
    from :func:`dimension`.
    """
    n = m.shape[1] - 1
    out = np.empty(len(m))
    log_fact = math.lgamma(n + 1)
    for start in range(0, len(m), chunk):
        block = m[start : start + chunk]
        cols = _column_lengths(block)
        # parts of each partition, largest first: nonzero over columns s = n..1
        rev = block[:, :0:-1]
        which, col = np.nonzero(rev)
        size = n - col
        mult = rev[which, col].astype(np.int64)
        part_owner = np.repeat(which, mult)
        part_size = np.repeat(size, mult)
        first = np.r_[0, np.nonzero(np.diff(part_owner))[0] + 1]
        starts = np.repeat(first, np.diff(np.r_[first, len(part_owner)]))
        part_row = np.arange(len(part_owner)) - starts
        cell_owner = np.repeat(part_owner, part_size)
        cell_row = np.repeat(part_row, part_size)
        cell_len = np.repeat(part_size, part_size)
        cell_first = np.repeat(np.cumsum(part_size) - part_size, part_size)
        cell_col = np.arange(len(cell_owner)) - cell_first
        hooks = cell_len - cell_col + cols[cell_owner, cell_col] - cell_row - 1
        sums = np.bincount(cell_owner, weights=np.log(hooks), minlength=len(block))
        out[start : start + len(block)] = log_fact - sums
    return out


# ---------------------------------------------------------------------------------------
# exact sums of squared dimensions, all partitions at once

#: primes just below 2^31 for the residues of squared dimensions (products fit in int64)
_RESIDUE_PRIMES = (
    2147483647,
    2147483629,
    2147483587,
    2147483579,
    2147483563,
    2147483549,
    2147483543,
    2147483497,
    2147483489,
    2147483477,
    2147483423,
    2147483399,
    2147483353,
    2147483323,
)


def _primes_upto(n: int) -> list[int]:
    return [p for p in range(2, n + 1) if all(p % q for q in range(2, math.isqrt(p) + 1))]


def _legendre(p: int, x: int) -> int:
    """Exponent of the prime ``p`` in ``x!``."""
    total, power = 0, p
    while power <= x:
        total += x // power
        power *= p
    return total


def _hook_powers(m: np.ndarray, width: int) -> np.ndarray:
    """``K[i, x + 1]``: the power of ``G(x)`` in the hook product of partition ``i``."""
    n = m.shape[1] - 1
    count = len(m)
    rev = m[:, :0:-1]  # columns: sizes n, n-1, ..., 1
    owner, col = np.nonzero(rev)  # distinct parts of each partition, largest first
    owner = owner.astype(np.int32)
    size = (n - col).astype(np.int32)
    mult = rev[owner, col].astype(np.int32)
    first = np.r_[0, np.nonzero(np.diff(owner))[0] + 1]
    blocks = np.diff(np.r_[first, len(owner)])  # distinct part sizes per partition
    per_entry = np.repeat(blocks, blocks)
    rank = np.arange(len(owner), dtype=np.int32) - np.repeat(first, blocks).astype(np.int32)
    before = np.cumsum(mult) - mult  # parts in earlier blocks, counting across partitions
    cum_before = (before - np.repeat(before[first], blocks)).astype(np.int32)  # M_{a-1}
    cum = cum_before + mult  # M_a
    nxt = np.where(rank + 1 < per_entry, np.r_[size[1:], 0], 0).astype(np.int32)  # s_{b+1}
    # pairs (a, b), a <= b, of blocks of the same partition
    later = per_entry - rank
    a_index = np.repeat(np.arange(len(owner), dtype=np.int32), later)
    b_index = a_index + (
        np.arange(len(a_index), dtype=np.int32) - np.repeat(np.cumsum(later) - later, later)
    ).astype(np.int32)
    c1 = size[a_index] + cum[b_index] - cum_before[a_index] - 1
    c2 = c1 - mult[a_index]
    s_b, s_b1 = size[b_index], nxt[b_index]
    who = owner[a_index] * width + 1
    # one weighted count (+1, +1, -1, -1): integers, exact in float64
    index = np.concatenate([who + c1 - s_b1, who + c2 - s_b, who + c1 - s_b, who + c2 - s_b1])
    signs = np.ones(len(index))
    signs[2 * len(who) :] = -1.0
    return np.bincount(index, weights=signs, minlength=count * width).reshape(count, width)


def hook_product_exponents(
    m: np.ndarray, progress: Callable[[float], None] | None = None
) -> tuple[list[int], np.ndarray]:
    """(primes up to n, E) with ``E[i, k]`` the exponent of ``primes[k]`` in the product of
    the hook lengths of partition ``i`` of a multiplicity matrix (exact, vectorized).

    The rows of equal parts ``s_a`` (``m_a`` of them) and the columns ``j`` between two
    consecutive distinct part sizes ``s_{b+1} <= j < s_b`` (all of length ``M_b``, the
    number of parts ``>= s_b``) form a rectangle whose hooks are, column by column, runs of
    consecutive integers, so its hook product is ``prod_j (c_1 - j)! / (c_2 - j)!`` with
    ``c_1 = s_a + M_b - M_{a-1} - 1`` and ``c_2 = c_1 - m_a``, i.e. a ratio of four values
    of ``G(x) = prod_{y <= x} y!``. Every hook product is thus a product of powers of
    ``G``, whose prime exponents are tabulated once. ``progress(f)``, when given, is
    called with the fraction of partitions done.
    """
    n = m.shape[1] - 1
    count = len(m)
    primes = _primes_upto(n)
    if n == 0 or not primes:
        return primes, np.zeros((count, len(primes)), dtype=np.int64)
    # G index x + 1 for x = -1 .. n: every argument is a hook length (at most n) minus a
    # column count, and at least -1
    width = n + 2
    # exponent of p in G(x) = sum_{y <= x} v_p(y!), for x = -1 .. n
    table = np.zeros((width, len(primes)))
    for k, p in enumerate(primes):
        table[1:, k] = np.cumsum([_legendre(p, y) for y in range(width - 1)])
    exponents = np.empty((count, len(primes)), dtype=np.int64)
    chunk = 8192  # partitions at a time: the work arrays stay small and warm in cache
    for lo in range(0, count, chunk):
        hi = min(count, lo + chunk)
        # float64 products are exact: every partial sum is an integer far below 2^53
        exponents[lo:hi] = np.rint(_hook_powers(m[lo:hi], width) @ table)
        if progress is not None:
            progress(hi / count)
    return primes, exponents


def _combined_index(free: np.ndarray, top: np.ndarray, members: list[int]) -> np.ndarray:
    """Mixed-radix index of the exponents of the primes ``members`` (first = most
    significant digit)."""
    index = np.zeros(len(free), dtype=np.int64)
    for k in members:
        index = index * (int(top[k]) + 1) + free[:, k]
    return index


def squared_dimension_sums(
    n: int, progress: Callable[[float], None] | None = None
) -> dict[int, int]:
    """``sum d_lambda^2`` over the shapes of each content sum: content sum -> exact int.

    Vectorized over all ``p(n)`` shapes: the prime exponents of ``d_lambda = n! / prod
    hooks`` (hook length formula, [1] Thm. 3.10.2) come from
    :func:`hook_product_exponents`; ``d_lambda^2`` is summed per content sum modulo enough
    primes below ``2^31`` to exceed ``n!``, and each sum is rebuilt by the Chinese
    remainder theorem. The sums are checked to add up to ``n!`` (``sum d^2 = n!``).
    ``progress(f)``, when given, is called with the fraction of the work done.
    """
    if n <= 1:  # the one shape of 0 or 1 cell: d = 1, content sum 0
        return {0: 1}
    m = multiplicity_matrix(n)
    # A shape and its conjugate have the same dimension and opposite content sums, so only
    # the shapes at least as wide as they are long (lambda_1 >= number of parts, about 52%)
    # are computed; those strictly wider stand in for their conjugates as well.
    length = m[:, 1:].sum(axis=1, dtype=np.int64)
    largest = n - np.argmax(m[:, :0:-1] != 0, axis=1)
    wide = largest >= length
    m = m[wide]
    mirrored = (largest > length)[wide]
    hooks_done = None if progress is None else (lambda f: progress(0.8 * f))
    primes, exponents = hook_product_exponents(m, hooks_done)
    top = np.array([_legendre(p, n) for p in primes], dtype=np.int64)
    free = top - exponents  # exponents of d_lambda
    if (free < 0).any():  # pragma: no cover - would mean a wrong hook product
        raise AssertionError("hook product does not divide n!")
    own = content_sums(m)
    sums = np.concatenate([own, -own[mirrored]])
    order = np.argsort(sums, kind="stable")
    keys, starts = np.unique(sums[order], return_index=True)
    fact = math.factorial(n)
    # prime powers in groups whose exponent combinations index one small table each
    groups: list[tuple[list[int], np.ndarray]] = []
    members: list[int] = []
    span = 1
    for k in reversed(range(len(primes))):
        if members and span * (int(top[k]) + 1) > 4096:
            groups.append((members, _combined_index(free, top, members)))
            members, span = [], 1
        members.append(k)
        span *= int(top[k]) + 1
    if members:
        groups.append((members, _combined_index(free, top, members)))
    moduli: list[int] = []
    residues: list[np.ndarray] = []
    for q in _RESIDUE_PRIMES:
        if math.prod(moduli) > fact:
            break
        d = np.ones(len(m), dtype=np.int64)
        for members, index in groups:
            table = np.ones(1, dtype=np.int64)
            for k in members:  # same mixed radix as _combined_index
                powers = np.array([pow(primes[k], e, q) for e in range(int(top[k]) + 1)])
                table = (table[:, None] * powers[None, :] % q).ravel()
            d = d * table[index] % q
        square = d * d % q
        square = np.concatenate([square, square[mirrored]])
        residues.append(np.add.reduceat(square[order], starts) % q)  # < 2^31 * p(n) < 2^63
        moduli.append(q)
        if progress is not None:
            progress(min(1.0, 0.8 + 0.2 * math.log(math.prod(moduli)) / math.log(fact)))
    modulus = math.prod(moduli)
    if modulus <= fact:  # pragma: no cover - n far beyond any table
        raise InputError(f"squared dimensions of S_{n} exceed the residue arithmetic")
    basis = []
    for q in moduli:
        rest = modulus // q
        basis.append(rest * pow(rest, -1, q))
    out: dict[int, int] = {}
    columns = [r.tolist() for r in residues]
    for g, key in enumerate(keys.tolist()):
        out[key] = sum(c[g] * b for c, b in zip(columns, basis, strict=True)) % modulus
    if sum(out.values()) != fact:  # pragma: no cover - a wrong residue
        raise AssertionError("squared dimensions do not add up to n!")
    return out
