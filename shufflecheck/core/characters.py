"""Characters of the symmetric group by the Murnaghan–Nakayama rule on beta-sets.

A partition ``lambda`` with ``l`` parts is held as its *beta-set* (abacus) encoded in the
bits of one Python int: bead ``b_i = lambda_i + (l - i)`` for ``i = 1..l``. Removing a rim
hook of length ``r`` moves a bead from ``b`` to an empty position ``b - r``, and the sign of
that rim hook is ``(-1)^(beads strictly between)`` ([1], 2.7.25; [2], I.1 Ex. 8). A
beta-set is *normalised* when position 0 is empty (no zero parts), which makes the
encoding canonical: equal ints, equal partitions.

* :func:`character` evaluates one value ``chi^lambda(mu)``: the parts of ``mu`` (largest
  first) are stripped level by level, each level holding the beta-sets reached with their
  signed coefficients; as soon as all the
  remaining parts are equal to ``r`` it finishes in closed form through the ``r``-quotient
  ([1], 2.7.32): ``chi^lambda(r^k) = delta_r(lambda) * k!/prod |q_j|! * prod d(q_j)`` when
  the ``r``-core is empty and 0 otherwise (for ``r = 1`` this is the hook length formula).
* :func:`character_table` builds a whole table column block by column block: for a fixed
  largest part ``r`` the Murnaghan–Nakayama rule is one sparse ``+-1`` matrix ``M_r``
  (partitions of ``m`` by partitions of ``m - r``), and the columns of ``S_m`` whose
  largest part is ``r`` are ``M_r`` times the columns of ``S_{m-r}`` for the tails. Tails
  are shared across classes, so the work is a few sparse-times-dense products in int64.

Values are exact integers: int64 while the largest dimension of ``S_n`` (which bounds every
entry *and* every partial sum, because ``sum_xi d(lambda - xi) <= d(lambda)`` over rim hooks
``xi`` of one length) fits in 63 bits, which holds up to ``n = 35``; Python ints beyond.

References
----------
.. [1] G. James and A. Kerber, *The Representation Theory of the Symmetric Group*,
       Encyclopedia of Mathematics and its Applications 16, Addison-Wesley, 1981.
.. [2] I. G. Macdonald, *Symmetric Functions and Hall Polynomials*, 2nd ed., Oxford, 1995.
.. [3] P. Diaconis and M. Shahshahani, "Generating a random permutation with random
       transpositions", Z. Wahrsch. Verw. Gebiete 57 (1981) 159-179 (character ratio at a
       transposition, eigenvalues of class-function step laws).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from itertools import repeat
from operator import add, lshift

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.core.partitions import (
    Partition,
    check_partition,
    check_shape,
    class_size,
    content_sum,
    count_partitions,
    dimension,
    format_partition,
    partitions,
)

__all__ = [
    "CharacterTable",
    "Eigenvalue",
    "character",
    "character_table",
    "class_eigenvalues",
    "group_eigenvalues",
    "ratio",
    "table_memory_estimate",
    "transposition_ratio",
]

#: Default ceiling for the memory of one whole table (bytes); see :func:`table_memory_estimate`.
DEFAULT_TABLE_MEMORY = 2 * 1024**3

# ---------------------------------------------------------------------------------------
# beta-sets as bit masks


def _beta_mask(shape: Sequence[int]) -> int:
    """Normalised beta-set of a partition: bit ``lambda_i + (l - i)`` set for each part.

    The positions are distinct, so the mask is the sum of their powers of two (one pass
    in C); a run of ``c`` equal parts occupies ``c`` consecutive bits, so shapes with long
    runs are built one distinct part at a time.
    """
    length = len(shape)
    if length <= 24 or 3 * len(distinct := set(shape)) >= length:
        return sum(map(lshift, repeat(1), map(add, shape, range(length - 1, -1, -1))))
    mask = 0
    start = 0  # index of the first part of the current run
    for part in sorted(distinct, reverse=True):
        count = shape.count(part)
        mask |= ((1 << count) - 1) << (part + length - start - count)
        start += count
    return mask


def _normalise(mask: int) -> int:
    """Drop beads packed at the bottom (zero parts): shift out the trailing one bits."""
    trailing_ones = (mask ^ (mask + 1)).bit_length() - 1
    return mask >> trailing_ones


def _beads(mask: int) -> list[int]:
    """Bead positions in increasing order."""
    out = []
    while mask:
        low = mask & -mask
        out.append(low.bit_length() - 1)
        mask ^= low
    return out


def _mask_to_shape(mask: int) -> Partition:
    beads = _beads(mask)  # increasing
    return tuple(b - i for i, b in reversed(list(enumerate(beads))) if b - i > 0)


def _dimension_from_levels(levels: Sequence[int]) -> tuple[int, int]:
    """(size, dimension) of the partition with beta-set ``levels`` (any bead count).

    ``d = |q|! * prod_{i<j} (l_i - l_j) / prod l_i!`` ([1], 2.3.21).
    """
    t = len(levels)
    size = sum(levels) - t * (t - 1) // 2
    numerator = math.factorial(size)
    for i in range(t):
        for j in range(i + 1, t):
            numerator *= abs(levels[i] - levels[j])
    denominator = 1
    for level in levels:
        denominator *= math.factorial(level)
    return size, numerator // denominator


def _equal_parts_value(mask: int, r: int, k: int) -> int:
    """``chi^lambda(r^k)`` for the partition with beta-set ``mask`` of size ``r * k``.

    Closed form through the ``r``-quotient ([1], 2.7.32): zero unless the ``r``-core is
    empty; otherwise the ``r``-sign times the number of ways to strip ``lambda`` by ``r``-rim
    hooks, ``k! / prod |q_j|! * prod d(q_j)``. The sign does not depend on the order in which
    the hooks are stripped ([1], 2.7.26): stripping them all slides every bead down its
    runner to the lowest free level, and each move changes the sign once per bead passed,
    so the sign is the parity of the permutation from the beads' order to their final order.
    """
    if not (mask >> r) & ~mask:  # no r-rim hook at all
        return 0
    # The r-weight (cells removable as r-hooks) is the sum of the bead levels b // r minus
    # the levels the beads would fill from the bottom of their runners. With t beads the
    # positions add up to r k + C(t, 2), so only the bead count of each runner is needed.
    beads_total = mask.bit_count()
    width = mask.bit_length() // r + 1
    runner = ((1 << (r * width)) - 1) // ((1 << r) - 1)  # bits 0, r, 2r, ...
    level_sum = r * k + beads_total * (beads_total - 1) // 2
    bottom = 0  # levels the beads would fill from the bottom of their runners
    for j in range(r):
        c = (mask & runner).bit_count()
        runner <<= 1
        level_sum -= j * c
        bottom += c * (c - 1) // 2
    if level_sum // r - bottom != k:  # the r-core is not empty
        return 0
    beads = _beads(mask)
    runners: list[list[int]] = [[] for _ in range(r)]
    for b in beads:
        runners[b % r].append(b // r)
    sizes = [sum(levels) - len(levels) * (len(levels) - 1) // 2 for levels in runners]
    count = math.factorial(k)
    for levels, size in zip(runners, sizes, strict=True):
        if size:
            count = count // math.factorial(size) * _dimension_from_levels(levels)[1]
    final = []  # where each bead ends: runner j, next free level
    filled = [0] * r
    for b in beads:
        j = b % r
        final.append(j + r * filled[j])
        filled[j] += 1
    order = sorted(range(len(final)), key=final.__getitem__)
    seen = [False] * len(order)
    parity = 0
    for start in range(len(order)):
        if not seen[start]:
            x, cycle = start, 0
            while not seen[x]:
                seen[x] = True
                x = order[x]
                cycle += 1
            parity ^= (cycle - 1) & 1
    return -count if parity else count


def _removal_order(parts: Partition) -> Partition:
    """Order in which to strip the parts: the Murnaghan–Nakayama rule allows any order.

    Largest first by default: few long rim hooks fit, so the rule branches little
    near the top, and the smallest parts form the closing block of equal parts. When one
    part size is repeated much more often than the smallest one and the other parts are
    few (at most a quarter of the cells of that block, and at most 8 parts), that size goes
    last instead, so the closed form for equal parts finishes a much longer block; with
    many other parts, stripping them first from the whole shape costs more than the closed
    form saves.
    """
    if not parts:
        return parts
    distinct = set(parts)
    smallest = parts.count(parts[-1])
    # no size can be repeated more often than the repeats allow
    if len(parts) - len(distinct) + 1 <= 2 * smallest + 2:
        return parts
    last, repeats = 0, 0
    for part in distinct:  # the most repeated size, the smallest on ties
        count = parts.count(part)
        if count > repeats or (count == repeats and part < last):
            last, repeats = part, count
    if repeats <= 2 * smallest + 2:
        return parts
    head = tuple(p for p in parts if p != last)
    if len(head) > 8 or 4 * sum(head) > last * repeats:
        return parts
    return head + (last,) * repeats


def _character_value(mask: int, parts: Partition) -> int:
    """Murnaghan–Nakayama rule, one part at a time over all shapes reached so far.

    ``parts`` is a partition whose size matches ``mask``. Each level maps the beta-sets
    reached to their signed coefficients; removing an ``r``-rim hook moves a bead from
    ``h + r`` to an empty ``h`` with sign ``(-1)^(beads strictly between)``. Shapes whose
    coefficients cancel are dropped. The closing block of equal parts is evaluated by the
    closed form (:func:`_equal_parts_value`) once per shape that reaches it.
    """
    parts = _removal_order(parts)
    length = len(parts)
    if not length:
        return 1  # the empty shape at the empty class
    # first index from which all remaining parts are equal: every copy of the last part
    # sits at the end (decreasing order, or the one size moved last); a closing "block" of
    # one part is a plain last step
    equal_from = length - parts.count(parts[-1])
    if equal_from == length - 1:
        equal_from = length
    level = {_normalise(mask): 1}
    for i in range(equal_from):
        r = parts[i]
        window = (1 << (r - 1)) - 1  # the r - 1 positions strictly between h and h + r
        reached: dict[int, int] = {}
        get = reached.get
        for current, coefficient in level.items():
            holes = (current >> r) & ~current  # h empty with a bead at h + r
            while holes:
                low = holes & -holes
                holes ^= low
                h = low.bit_length() - 1
                moved = current ^ (low | (low << r))
                if not h:  # the bead landed at the bottom: drop the packed beads
                    moved = _normalise(moved)
                if ((current >> (h + 1)) & window).bit_count() & 1:
                    reached[moved] = get(moved, 0) - coefficient
                else:
                    reached[moved] = get(moved, 0) + coefficient
        if 0 in reached.values():  # drop the shapes whose terms cancelled
            reached = {m: c for m, c in reached.items() if c}
        if not reached:
            return 0
        level = reached
    if equal_from == length:
        return level.get(0, 0)  # the empty shape's beta-set is 0 once normalised
    r, k = parts[equal_from], length - equal_from
    return sum(c * _equal_parts_value(m, r, k) for m, c in level.items())


def character(shape: Sequence[int], cycle_type: Sequence[int]) -> int:
    """The irreducible character value ``chi^shape(cycle_type)`` as an exact integer.

    Parameters
    ----------
    shape : sequence of int
        A partition of ``n`` in weakly decreasing order (the Young diagram's rows).
    cycle_type : sequence of int
        The cycle lengths of the class, in any order, summing to ``n``.

    Returns
    -------
    int
        The character value, by the Murnaghan–Nakayama rule on beta-sets ([1], 2.4.7).

    Examples
    --------
    The 2-dimensional character of ``S_3`` at a 3-cycle is ``-1``:

    >>> character((2, 1), (3,))
    -1
    """
    if (
        type(shape) is tuple
        and type(cycle_type) is tuple
        and set(map(type, shape + cycle_type)) <= {int}
        and tuple(sorted(shape, reverse=True)) == shape
        and (not shape or shape[-1] > 0)
    ):  # the common case, checked in C: a shape and a class given as tuples of ints
        lam, mu = shape, tuple(sorted(cycle_type, reverse=True))
        if mu and mu[-1] <= 0:
            mu = check_partition(cycle_type, "class")  # raises, naming the part
    else:
        lam = check_shape(shape, "shape")
        mu = check_partition(cycle_type, "class")
    if sum(lam) != sum(mu):
        raise InputError(
            f"shape {format_partition(lam)} has size {sum(lam)} but class "
            f"{format_partition(mu)} has size {sum(mu)}; both must partition the same n"
        )
    if mu and mu[0] > lam[0] + len(lam) - 1:
        return 0  # the longest cycle exceeds the longest hook: no rim hook to remove
    return _character_value(_beta_mask(lam), mu)


def ratio(shape: Sequence[int], cycle_type: Sequence[int]) -> Fraction:
    """Character ratio ``chi^shape(cycle_type) / d_shape`` as an exact fraction."""
    lam = check_shape(shape, "shape")
    return Fraction(character(lam, cycle_type), dimension(lam))


def transposition_ratio(shape: Sequence[int]) -> Fraction:
    """``chi(tau) / d`` at a transposition by the content formula ([3], Lemma 7).

    ``chi(tau)/d = 2 * (sum of contents) / (n (n - 1))``; for ``n < 2`` there is no
    transposition and the ratio is returned as 1 by convention (the class is empty).
    """
    lam = check_shape(shape, "shape")
    n = sum(lam)
    if n < 2:
        return Fraction(1)
    return Fraction(2 * content_sum(lam), n * (n - 1))


# ---------------------------------------------------------------------------------------
# whole tables


def table_memory_estimate(n: int) -> tuple[int, str]:
    """(bytes, dtype) the exact table of ``S_n`` needs: ``p(n)^2`` entries.

    int64 (8 bytes) while ``n <= 35``; Python ints beyond, estimated at 48 bytes an entry
    (pointer plus a small int object). Computed from ``p(n)`` alone, before any work.
    """
    p = count_partitions(n)
    dtype = "int64" if _int64_safe(n) else "object"
    per_entry = 8 if dtype == "int64" else 48
    return p * p * per_entry, dtype


#: Largest n whose every character value (bounded by the largest dimension) fits in int64;
#: the test suite recomputes the largest dimensions of S_35 and S_36 to confirm it.
INT64_MAX_N = 35


def _int64_safe(n: int) -> bool:
    # Every entry and every partial sum is bounded by the largest dimension of S_n.
    return n <= INT64_MAX_N


@dataclass(frozen=True)
class CharacterTable:
    """The exact character table of ``S_n``.

    ``values[i, j]`` is ``chi^{shapes[i]}`` at the class ``classes[j]``. Shapes and classes
    are both in the reverse lexicographic order of :func:`shufflecheck.core.partitions.partitions`
    (trivial character first, sign character last; identity class last). ``values`` is
    read-only, int64 while that cannot overflow (``n <= 35``) and Python ints otherwise.
    """

    n: int
    shapes: tuple[Partition, ...]
    classes: tuple[Partition, ...]
    class_sizes: tuple[int, ...]
    values: np.ndarray

    def value(self, shape: Sequence[int], cycle_type: Sequence[int]) -> int:
        """One entry, looked up by shape and class."""
        i = self.shapes.index(check_shape(shape, "shape", self.n))
        j = self.classes.index(check_partition(cycle_type, "class", self.n))
        return int(self.values[i, j])

    @property
    def dimensions(self) -> tuple[int, ...]:
        """``d_lambda`` for each shape: the column of the identity class."""
        return tuple(int(v) for v in self.values[:, -1])


def character_table(n: int, *, max_bytes: int = DEFAULT_TABLE_MEMORY) -> CharacterTable:
    """The whole exact character table of ``S_n`` (see :class:`CharacterTable`).

    Parameters
    ----------
    n : int
        Degree, ``n >= 0``.
    max_bytes : int
        Refuse (with the estimate) when the table alone would need more memory than this.

    Notes
    -----
    Built column block by column block with sparse Murnaghan–Nakayama matrices (module
    docstring). Cost is dominated by ``sum_r nnz(M_r) * (classes with largest part r)``.
    """
    if isinstance(n, bool) or not isinstance(n, int) or n < 0:
        raise InputError(f"n must be a non-negative integer, got {n!r}")
    estimate, dtype = table_memory_estimate(n)
    if estimate > max_bytes:
        p = count_partitions(n)
        raise InputError(
            f"the character table of S_{n} has {p} x {p} entries, about "
            f"{estimate / 1e9:.1f} GB as {dtype}, over the limit of {max_bytes / 1e9:.1f} GB; "
            "ask for single values with {shape} and {class} instead",
            argument=("shape", "class"),
        )
    return _build_table(n, object_values=(dtype == "object"))


def _masks_array(shapes: Sequence[Partition]) -> np.ndarray:
    """Normalised beta-set masks of ``shapes`` as int64 (a partition of ``m`` needs ``m + 1``
    bits, so this holds for ``m <= 62``)."""
    return np.fromiter((_beta_mask(shape) for shape in shapes), dtype=np.int64, count=len(shapes))


def _rim_hooks(
    masks: np.ndarray, m: int, lengths: Sequence[int], targets: np.ndarray, order: np.ndarray
) -> dict[int, tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """All rim hooks of the given lengths in every partition of ``m``, vectorized.

    For each length ``r``: (source rows, target rows, signs). A rim hook of length ``r`` is a
    bead at ``b`` with position ``b - r`` empty; its sign is ``(-1)^(beads strictly
    between)`` ([1], 2.7.25). Targets are looked up among the sorted normalised masks
    ``targets[order]`` of the partitions of ``m - r`` (passed per length as a dict).
    """
    width = m + 1  # bead positions 0..m
    bits = ((masks[:, None] >> np.arange(width, dtype=np.int64)) & 1).astype(np.int8)
    below = np.cumsum(bits, axis=1, dtype=np.int16)  # beads at positions <= j
    out = {}
    for r in lengths:
        # bead at b (b >= r), empty at b - r
        valid = (bits[:, r:] == 1) & (bits[:, : width - r] == 0)
        rows, hole = np.nonzero(valid)
        bead = hole + r
        between = below[rows, bead - 1] - below[rows, hole]
        moved = masks[rows] ^ (np.int64(1) << bead) ^ (np.int64(1) << hole)
        # normalise: shift out the trailing one bits (zero parts)
        trailing = np.log2((moved ^ (moved + 1)) + 1).astype(np.int64) - 1
        moved >>= trailing
        target_masks, target_order = targets[r], order[r]
        found = np.searchsorted(target_masks, moved, sorter=target_order)
        cols = target_order[found]
        if not (target_masks[cols] == moved).all():  # pragma: no cover - a wrong hook
            raise AssertionError("rim-hook removal left the partitions of m - r")
        out[r] = (rows, cols, np.where(between % 2 == 1, -1, 1).astype(np.int64))
    return out


def _as_slice(indices: list[int]) -> slice | list[int]:
    """A run of consecutive indices as a slice (a view, not a copy), else the list."""
    if indices and indices[-1] - indices[0] == len(indices) - 1:
        return slice(indices[0], indices[-1] + 1)
    return indices


def _build_table(n: int, *, object_values: bool) -> CharacterTable:
    from scipy import sparse

    shapes = partitions(n)
    # which columns of each smaller S_m are needed: tails of needed classes
    needed: list[set[Partition]] = [set() for _ in range(n + 1)]
    needed[n] = set(shapes)
    for m in range(n, 0, -1):
        for mu in needed[m]:
            needed[m - mu[0]].add(mu[1:])

    masks: list[np.ndarray] = []  # normalised beta masks, per m, in reverse lex order
    sorters: list[np.ndarray] = []
    columns: list[dict[Partition, int]] = []  # class -> column position, per m
    blocks: list[np.ndarray | None] = []
    dtype = object if object_values else np.int64

    for m in range(n + 1):
        parts_m = partitions(m)
        masks.append(_masks_array(parts_m))
        sorters.append(np.argsort(masks[m], kind="stable"))
        wanted = [mu for mu in parts_m if mu in needed[m]]  # keeps reverse lex order
        columns.append({mu: j for j, mu in enumerate(wanted)})
        if m == 0:
            blocks.append(np.ones((1, 1), dtype=dtype))
            continue
        if not wanted:
            blocks.append(None)
            continue
        # rim-hook removals, grouped by hook length r (only lengths that are needed)
        lengths = sorted({mu[0] for mu in wanted})
        hooks = _rim_hooks(
            masks[m],
            m,
            lengths,
            {r: masks[m - r] for r in lengths},
            {r: sorters[m - r] for r in lengths},
        )
        block = np.empty((len(parts_m), len(wanted)), dtype=dtype)
        for r, (rows, cols, vals) in hooks.items():
            # classes with largest part r are contiguous in reverse lexicographic order, and
            # so are their tails (the needed classes of m - r with parts <= r, a suffix)
            here = [j for j, mu in enumerate(wanted) if mu[0] == r]
            positions = _as_slice(here)
            tails = blocks[m - r]
            assert tails is not None
            tail_cols = _as_slice([columns[m - r][wanted[j][1:]] for j in here])
            source = tails[:, tail_cols]
            if object_values:
                out = np.zeros((len(parts_m), len(here)), dtype=object)
                for i, j, sign in zip(rows.tolist(), cols.tolist(), vals.tolist(), strict=True):
                    out[i] += source[j] if sign > 0 else -source[j]
            else:
                matrix = sparse.csr_matrix(
                    (vals, (rows, cols)), shape=(len(parts_m), len(masks[m - r]))
                )
                out = np.asarray(matrix @ source)
            block[:, positions] = out
        blocks.append(block)

    values = blocks[n]
    assert values is not None
    values.flags.writeable = False
    sizes = tuple(class_size(mu) for mu in shapes)
    return CharacterTable(n=n, shapes=shapes, classes=shapes, class_sizes=sizes, values=values)


# ---------------------------------------------------------------------------------------
# eigenvalues of class-function step laws


@dataclass(frozen=True)
class Eigenvalue:
    """One distinct eigenvalue of a step law's transition operator on all ``n!`` decks.

    ``value`` is exact (a :class:`~fractions.Fraction`) when the weights were exact.
    ``multiplicity`` is ``sum d_lambda^2`` over the ``shapes`` giving it.
    """

    value: Fraction | float
    multiplicity: int
    shapes: tuple[Partition, ...]


def class_eigenvalues(
    n: int, weights: Mapping[Sequence[int], Fraction | int | float]
) -> list[tuple[Partition, Fraction | float, int]]:
    """Eigenvalues of the step law that gives total weight ``w_mu`` to the class ``mu``.

    The law puts ``w_mu / |C_mu|`` on each permutation of cycle type ``mu``; on the
    irreducible ``lambda`` it acts as the scalar ``sum_mu w_mu chi^lambda(mu) / d_lambda``
    with multiplicity ``d_lambda^2`` ([3], Lemma 5). Random transpositions with holding
    probability ``h`` are ``{(1^n): h, (2, 1^(n-2)): 1 - h}``.

    Returns
    -------
    list of (shape, eigenvalue, multiplicity)
        One entry per shape, in reverse lexicographic order.
    """
    if not weights:
        raise InputError("the step law needs at least one class with positive weight")
    law: list[tuple[Partition, Fraction | float]] = []
    exact = True
    for cycle_type, w in weights.items():
        mu = check_partition(cycle_type, "class", n)
        if isinstance(w, float):
            exact = False
        if w < 0:
            raise InputError(f"weight of class {format_partition(mu)} is negative ({w})")
        law.append((mu, Fraction(w) if not isinstance(w, float) else w))
    total = sum(w for _, w in law)
    if abs(float(total) - 1.0) > 1e-12:
        raise InputError(f"class weights must sum to 1, they sum to {float(total)}")
    identity = (1,) * n
    transposition = (2,) + (1,) * (n - 2) if n >= 2 else None
    out = []
    for lam in partitions(n):
        value: Fraction | float = Fraction(0) if exact else 0.0
        d = dimension(lam)
        for mu, w in law:
            if mu == identity:
                r: Fraction = Fraction(1)
            elif mu == transposition:
                r = transposition_ratio(lam)
            else:
                r = Fraction(_character_value(_beta_mask(lam), mu), d)
            value += w * r if exact else float(w) * float(r)
        out.append((lam, value, d * d))
    return out


def group_eigenvalues(
    rows: Sequence[tuple[Partition, Fraction | float, int]],
) -> list[Eigenvalue]:
    """Merge per-shape eigenvalues into distinct values, largest first."""
    merged: dict[Fraction | float, tuple[int, list[Partition]]] = {}
    for lam, value, mult in rows:
        total, shapes = merged.get(value, (0, []))
        shapes.append(lam)
        merged[value] = (total + mult, shapes)
    return [
        Eigenvalue(value=v, multiplicity=m, shapes=tuple(s))
        for v, (m, s) in sorted(merged.items(), key=lambda item: item[0], reverse=True)
    ]
