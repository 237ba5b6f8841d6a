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
"""

from __future__ import annotations

import math
import re
from collections import Counter
from collections.abc import Iterable, Iterator, Sequence
from functools import cache

import numpy as np

from shufflecheck.common.errors import InputError

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
    "log_dimensions",
    "multiplicity_matrix",
    "parse_partition",
    "partition_sign",
    "partitions",
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
    raw = list(parts)
    shape = check_partition(raw, name, size)
    if tuple(raw) != shape:
        raise InputError(
            f"{name} {','.join(str(p) for p in raw)} is not a partition: "
            "parts must be weakly decreasing (a Young diagram's row lengths)"
        )
    return shape


_TOKEN = re.compile(r"^\s*(\d+)\s*(?:\^\s*(\d+))?\s*$")


def parse_partition(text: str, name: str = "partition") -> Partition:
    """Parse ``"4,2,1"`` (or ``"3^2,1"`` for repeated parts, or ``"4 2 1"``) into a partition.

    The parts are returned in the order given, sorted only by :func:`check_partition` or
    :func:`check_shape`, so a caller can still see whether a shape was decreasing.
    """
    stripped = text.strip().strip("()[]")
    if not stripped:
        raise InputError(f"{name} is empty; give parts like 4,2,1")
    parts: list[int] = []
    for token in re.split(r"[,\s]+", stripped):
        if not token:
            continue
        match = _TOKEN.match(token)
        if match is None:
            raise InputError(
                f"{name} {text!r}: cannot read part {token!r}; give parts like 4,2,1 or 3^2,1"
            )
        value = int(match.group(1))
        repeat = int(match.group(2)) if match.group(2) is not None else 1
        parts.extend([value] * repeat)
    return tuple(parts)


def format_partition(parts: Sequence[int]) -> str:
    """``(3, 3, 1)`` -> ``"3,3,1"``; the empty partition -> ``"()"``."""
    return ",".join(str(p) for p in parts) if parts else "()"


@cache
def partitions(n: int) -> tuple[Partition, ...]:
    """All partitions of ``n`` in reverse lexicographic order (see the module docstring).

    ``partitions(0) == ((),)``: the empty partition is the only partition of 0.
    """
    if isinstance(n, bool) or not isinstance(n, int) or n < 0:
        raise InputError(f"n must be a non-negative integer, got {n!r}")
    return tuple(_partitions_bounded(n, n))


def _partitions_bounded(n: int, largest: int) -> Iterator[Partition]:
    if n == 0:
        yield ()
        return
    for first in range(min(n, largest), 0, -1):
        for rest in _partitions_bounded(n - first, first):
            yield (first, *rest)


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

    Shape ``(p(n), n + 1)`` (column 0 unused), uint8. Built vectorized, part sizes from ``n``
    down to 2, the parts equal to 1 filling the remainder. Row order: lexicographic in
    ``(m_n, m_{n-1}, ..., m_2)`` (not the reverse lexicographic order of :func:`partitions`).
    """
    rows = np.zeros((1, n + 1), dtype=np.uint8)
    sums = np.zeros(1, dtype=np.int64)
    for s in range(n, 1, -1):
        reps = (n - sums) // s + 1
        parent = np.repeat(np.arange(len(sums)), reps)
        offsets = np.arange(int(reps.sum())) - np.repeat(np.cumsum(reps) - reps, reps)
        rows = rows[parent]
        rows[:, s] = offsets
        sums = sums[parent] + offsets * s
    rows[:, 1] = n - sums
    return rows


def _column_lengths(m: np.ndarray) -> np.ndarray:
    """``L[i, j]`` = length of column ``j`` (0-based) = number of parts larger than ``j``."""
    counts = m[:, 1:].astype(np.int32)
    return np.cumsum(counts[:, ::-1], axis=1)[:, ::-1]  # column j: parts >= j + 1


def content_sums(m: np.ndarray) -> np.ndarray:
    """Content sum of every partition of a multiplicity matrix (vectorized).

    ``sum_i C(lambda_i, 2) - sum_j C(lambda'_j, 2)``: row contents minus column contents.
    """
    n = m.shape[1] - 1
    sizes = np.arange(n + 1, dtype=np.int64)
    rows = m.astype(np.int64) @ (sizes * (sizes - 1) // 2)
    cols = _column_lengths(m).astype(np.int64)
    return rows - (cols * (cols - 1) // 2).sum(axis=1)


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
