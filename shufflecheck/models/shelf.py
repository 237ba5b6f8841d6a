"""The shelf shuffling machine (Diaconis, Fulman & Holmes 2013), with its exact law.

Mechanics ([1], Section 1): the cards are dealt one at a time from the *bottom* of the
deck; each goes to one of ``m`` shelves chosen uniformly at random and is put on top of or
under the cards already on that shelf, with probability 1/2 each. The shelves are then
stacked into one deck: in a fixed order (shelf 1 on top; the default here) or in a
uniformly random order (``stack="random"``; the machine of [1] does this).

Exact law (derived here, and checked against brute force over every shelf and side choice
for small ``n`` and ``m`` with exact fractions). Each shelf receives its cards in
decreasing order of label, so whatever the sides, its pile rises to its first card and
then falls: a pile with no *valley* (a card lower than both neighbours). A pile of
``k >= 1`` given cards can be built in ``2^(k-1)`` ways, each with chance ``2^(1-k)`` (the
first card's side does not matter). The stacked deck is ``m`` such piles one after another,
so an arrangement ``pi`` arises from each way of cutting it into ``m`` consecutive
(possibly empty) valley-free blocks, with chance ``(2m)^(-n) 2^(nonempty blocks)``. A block
is valley-free exactly when every valley of ``pi`` inside it is cut off on one side or the
other; the two gaps beside one valley are never beside another, so the number of ways to
cut ``pi`` into ``j`` nonempty blocks is

    D_j(v) = [x^(j-1)] (2x + x^2)^v (1 + x)^(n-1-2v),        v = valleys of pi,

and therefore ::

    P(pi) = (2m)^(-n) sum_{j=1}^{min(m, n)} C(m, j) 2^j D_j(v).             (1)

The chance depends on ``pi`` only through its number of valleys, as [1] found. With
``x (2 + x) = (1 + x)^2 - 1`` the coefficient sum becomes an alternating sum over binomial
rows, which is how (1) is evaluated here, in exact integers::

    P(pi) = (2m)^(-n) sum_{a=0}^{v} (-1)^(v-a) C(v, a) g(n - 1 - 2v + 2a),
    g(K)  = sum_{i=0}^{K} C(K, i) C(m, i + 1) 2^(i+1).                     (2)

The number of arrangements of ``n`` cards with ``v`` valleys equals the number with ``v``
peaks (turn every label ``x`` into ``n - 1 - x``): OEIS A008303, with André's recurrence
``T(n, v) = (2v + 2) T(n-1, v) + (n - 2v) T(n-1, v-1)``, ``T(n, 0) = 2^(n-1)`` ([2], [3]).

*Stacking in random order changes nothing.* The shelf contents are exchangeable (every
card picks a shelf uniformly and independently), so stacking them in an independent
uniformly random order gives exactly the law of a fixed order (checked by brute force
too). *Several passes.* ``k`` passes through ``m`` shelves have exactly the law of one pass
through ``2^(k-1) m^k`` shelves (checked by brute force for ``n <= 5`` and ``k <= 3``,
including two passes with different shelf counts, ``m1`` then ``m2`` giving ``2 m1 m2``):
the shelf machine behaves like a ``2m``-handed riffle in which half the packets are
reversed ([4]), and such shuffles compose by multiplying the number of hands, as
a-shuffles do ([5], Lemma 1). So every number of passes has an exact law, with either
stacking order, and the distances to uniform follow exactly from (2) and A008303.

References
----------
.. [1] P. Diaconis, J. Fulman and S. Holmes, "Analysis of casino shelf shuffling
       machines", Ann. Appl. Probab. 23 (2013) 1692-1720.
.. [2] The On-Line Encyclopedia of Integer Sequences, A008303 (permutations of [n] with
       k peaks).
.. [3] D. André (1895), the recurrence for permutations by peaks, as quoted in [2].
.. [4] A. Ottolini and R. Chen, "Cutoff in total variation for the shelf shuffle",
       arXiv:2410.17345 (2024) (the shelf shuffle as a modified 2m-handed riffle).
.. [5] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
"""

from __future__ import annotations

import dataclasses
import math
from fractions import Fraction
from functools import cache

import numpy as np

from shufflecheck.common.checks import check_cards, check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.limits import limit
from shufflecheck.common.sources import BAYER_DIACONIS, DIACONIS_FULMAN_HOLMES
from shufflecheck.core.distances import (
    DistanceRow,
    MixingCurve,
    chi_square_from_groups,
    row_from_groups,
)
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.permute import apply_in_blocks, key_dtype, label_bits
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = [
    "MAX_EXACT_CARDS",
    "STACKS",
    "Shelf",
    "arrangement_probability",
    "chi_square",
    "distance_curve",
    "equivalent_shelves",
    "exact_distances",
    "sample",
    "shelf_decks",
    "valley_counts",
    "valley_law",
    "valley_numerators",
    "valleys",
]

STACKS = ("fixed", "random")
SOURCE = (
    "exact: law constant on the number of valleys (Diaconis, Fulman & Holmes 2013), "
    "formula derived and checked by brute force"
)
MAX_EXACT_CARDS = 1000
MAX_EXACT_PASSES = 200


def _check_shelves(shelves: int) -> int:
    """Shelves of the machine: 1 to 2^19 (see :data:`~shufflecheck.common.limits.LIMITS`)."""
    return limit("shelves").check(shelves, prefix="shelf: ")


def _check_count(shelves: int) -> int:
    """A shelf count met inside the computations (equivalent shelves of several passes may
    exceed the user's limit): any integer >= 1."""
    return check_integer(shelves, "shelves", low=1, prefix="shelf: ")


def _check_stack(stack: str) -> str:
    value = stack.strip().lower() if isinstance(stack, str) else stack
    if value not in STACKS:
        raise InputError(f"shelf: stack must be 'fixed' or 'random', got {stack!r}")
    return value


def _check_sizes(cards: int, passes: int) -> None:
    check_cards(cards, prefix="shelf: ")
    check_integer(passes, "passes", low=0, prefix="shelf: ")


def equivalent_shelves(shelves: int, passes: int) -> int:
    """Shelves of the single pass equal in law to ``passes`` passes: ``2^(k-1) m^k``."""
    _check_count(shelves)
    if passes < 1:
        raise InputError(f"shelf: passes must be >= 1, got {passes}")
    return 2 ** (passes - 1) * shelves**passes


@cache
def valley_counts(cards: int) -> tuple[int, ...]:
    """``row[v]``: arrangements of ``cards`` cards with ``v`` valleys (OEIS A008303).

    André's recurrence ``T(n, v) = (2v + 2) T(n-1, v) + (n - 2v) T(n-1, v-1)`` ([3]).
    """
    if isinstance(cards, bool) or not isinstance(cards, int) or cards < 1:
        raise InputError(f"cards must be an integer >= 1, got {cards!r}")
    row = [1]  # n = 1
    for n in range(2, cards + 1):
        size = (n + 1) // 2  # v = 0 .. ceil(n/2) - 1
        new = [0] * size
        for v in range(size):
            keep = (2 * v + 2) * row[v] if v < len(row) else 0
            grow = (n - 2 * v) * row[v - 1] if 0 < v <= len(row) else 0
            new[v] = keep + grow
        row = new
    return tuple(row)


def valleys(arrangement: np.ndarray | list[int]) -> int:
    """Number of interior positions whose label is below both neighbours."""
    labels = [int(x) for x in arrangement]
    return sum(labels[i - 1] > labels[i] < labels[i + 1] for i in range(1, len(labels) - 1))


def valley_numerators(cards: int, shelves: int) -> tuple[int, ...]:
    """``num[v]`` with ``P(pi) = num[v] / (2m)^n`` for an arrangement with ``v`` valleys.

    Formula (2) of the module docstring, in exact integers.
    """
    _check_count(shelves)
    n = cards
    # weight[i] = C(m, i + 1) 2^(i + 1), i = 0..n-1 (zero once i + 1 > m)
    weight, binom = [], shelves  # C(m, 1)
    for i in range(n):
        weight.append(binom * 2 ** (i + 1))
        binom = binom * (shelves - i - 1) // (i + 2)
    g: dict[int, int] = {}

    def g_of(k: int) -> int:
        if k not in g:
            row, total = 1, 0  # C(k, 0)
            for i in range(k + 1):
                total += row * weight[i]
                row = row * (k - i) // (i + 1)
            g[k] = total
        return g[k]

    out = []
    for v in range((n + 1) // 2):
        total, coeff = 0, 1  # C(v, 0)
        for a in range(v + 1):
            term = coeff * g_of(n - 1 - 2 * v + 2 * a)
            total += term if (v - a) % 2 == 0 else -term
            coeff = coeff * (v - a) // (a + 1)
        out.append(total)
    return tuple(out)


def arrangement_probability(
    arrangement: np.ndarray | list[int], passes: int = 1, *, shelves: int = 10
) -> Fraction:
    """Exact probability of one arrangement after ``passes`` passes from the reference order."""
    n = len(arrangement)
    _check_sizes(n, passes)
    if passes == 0:
        return Fraction(int(list(map(int, arrangement)) == list(range(n))))
    m = equivalent_shelves(shelves, passes)
    return Fraction(valley_numerators(n, m)[valleys(arrangement)], (2 * m) ** n)


def valley_law(cards: int, passes: int = 1, *, shelves: int = 10) -> tuple[Fraction, ...]:
    """Exact law of the number of valleys after ``passes`` passes: ``law[v]``."""
    _check_sizes(cards, passes)
    if passes == 0:
        return (Fraction(1),) + (Fraction(0),) * ((cards + 1) // 2 - 1)
    m = equivalent_shelves(shelves, passes)
    den = (2 * m) ** cards
    return tuple(
        Fraction(c * p, den)
        for c, p in zip(valley_counts(cards), valley_numerators(cards, m), strict=True)
    )


def exact_distances(cards: int, passes: int, *, shelves: int = 10) -> DistanceRow:
    """Exact TV, separation and KL (bits) after ``passes`` passes through ``shelves``
    shelves (either stacking order)."""
    _check_count(shelves)
    _check_sizes(cards, passes)
    if cards > MAX_EXACT_CARDS or passes > MAX_EXACT_PASSES:
        raise InputError(
            f"the exact shelf law is limited to {MAX_EXACT_CARDS} cards and "
            f"{MAX_EXACT_PASSES} passes; use Monte Carlo assessment (shufflecheck assess)"
        )
    fact = math.factorial(cards)
    if passes == 0:
        return DistanceRow(0, float(1 - Fraction(1, fact)), 1.0, math.log2(fact), "exact")
    m = equivalent_shelves(shelves, passes)
    numerators = valley_numerators(cards, m)
    return row_from_groups(
        passes,
        valley_counts(cards),
        numerators,
        (2 * m) ** cards,
        fact,
        f"valley law, {m} equivalent shelves",
    )


def chi_square(cards: int, passes: int, *, shelves: int = 10) -> tuple[float, float]:
    """Exact ``(chi-square distance, largest likelihood ratio)`` after ``passes`` passes,
    from the valley law (2) and A008303 in exact integers (``inf`` beyond doubles)."""
    _check_count(shelves)
    _check_sizes(cards, passes)
    if cards > MAX_EXACT_CARDS or passes > MAX_EXACT_PASSES:
        raise InputError(
            f"the exact shelf law is limited to {MAX_EXACT_CARDS} cards and "
            f"{MAX_EXACT_PASSES} passes"
        )
    fact = math.factorial(cards)
    if passes == 0:
        return chi_square_from_groups([1, fact - 1], [1, 0], 1, fact)
    m = equivalent_shelves(shelves, passes)
    return chi_square_from_groups(
        valley_counts(cards), valley_numerators(cards, m), (2 * m) ** cards, fact
    )


def distance_curve(cards: int, max_passes: int, *, shelves: int = 10) -> MixingCurve:
    """Exact distances after ``1..max_passes`` passes (see :func:`exact_distances`)."""
    _check_shelves(shelves)
    _check_sizes(cards, max_passes)
    if max_passes < 1:
        raise InputError(f"shelf: passes must be >= 1, got {max_passes}")
    rows = tuple(exact_distances(cards, k, shelves=shelves) for k in range(1, max_passes + 1))
    return MixingCurve("shelf", cards, {"shelves": shelves}, rows, SOURCE)


# ---------------------------------------------------------------------------------------
# sampling


def _uniform_codes(rng: np.random.Generator, shape: tuple[int, int], codes: int) -> np.ndarray:
    """iid uniform integers in ``[0, codes)`` in the narrowest unsigned dtype."""
    if codes <= 1 << 16:  # numpy's bounded uint16 draws are its fastest here
        dtype = np.uint16
    elif codes <= 1 << 32:
        dtype = np.uint32
    else:
        dtype = np.uint64
    return rng.integers(0, codes, size=shape, dtype=dtype)


def shelf_decks(
    decks: np.ndarray, shelves: int, rng: np.random.Generator, *, stack: str = "fixed"
) -> np.ndarray:
    """One pass of every row through the machine (returns a new array)."""
    _check_count(shelves)
    return apply_in_blocks(_shelf_block, decks, shelves, rng, _check_stack(stack))


def _shelf_block(
    decks: np.ndarray, shelves: int, rng: np.random.Generator, stack: str
) -> np.ndarray:
    """One pass of a block of decks.

    Every card draws one code in ``[0, 2m)``: shelf ``code >> 1``, side ``code & 1`` (0 = on
    top). Fed from the bottom, the card at old position ``i`` sits within its shelf at rank
    ``i`` if put on top and ``2^b - 1 - i`` if put underneath (``b`` bits hold both halves,
    so every bottom rank is above every top rank); sorting the keys ``(shelf, rank)`` with
    the card's label packed below gives the stacked deck in one sort.
    """
    cards = decks.shape[1]
    bits = label_bits(cards)
    rank_bits = bits + 1
    shelf_bits = max(1, (shelves - 1).bit_length())
    dtype = key_dtype(shelf_bits + rank_bits + bits)
    code = _uniform_codes(rng, decks.shape, 2 * shelves)
    if stack == "random":
        code = _stack_at_random(code, shelves, rng)
    # rank: i on top, i XOR (2^bits - 1) under the pile, with the side as the rank's top bit
    flip = (code & code.dtype.type(1)).astype(dtype)
    flip *= dtype.type((1 << bits) - 1)
    flip ^= np.arange(cards, dtype=dtype)
    key = code.astype(dtype)
    key <<= dtype.type(bits)
    key |= flip
    key <<= dtype.type(bits)
    if dtype == np.uint64:  # int16 and uint64 have no common integer type
        key |= decks.astype(dtype)
    else:
        np.bitwise_or(key, decks, out=key, casting="unsafe")
    key.sort(axis=1)
    key &= dtype.type((1 << bits) - 1)
    return key.astype(decks.dtype)


def _stack_at_random(code: np.ndarray, shelves: int, rng: np.random.Generator) -> np.ndarray:
    """Replace every card's shelf by that shelf's place in a random stacking order.

    Each deck gets an independent uniformly random permutation of the shelves (argsort of
    uniform keys). With few shelves the permutation is packed into one 64-bit word per deck
    and read with shifts; otherwise it is gathered per card.
    """
    count = code.shape[0]
    place = np.argsort(rng.random((count, shelves)), axis=1)
    width = max(1, (shelves - 1).bit_length())
    side = code & code.dtype.type(1)
    if shelves * width <= 64:
        packed = np.zeros((count, 1), dtype=np.uint64)
        for s in range(shelves):
            packed[:, 0] |= place[:, s].astype(np.uint64) << np.uint64(s * width)
        shift = (code >> code.dtype.type(1)).astype(np.uint64)
        shift *= np.uint64(width)
        shelf = (packed >> shift) & np.uint64((1 << width) - 1)
    else:
        shelf = np.take_along_axis(place, (code >> code.dtype.type(1)).astype(np.intp), axis=1)
    return (shelf.astype(code.dtype) << code.dtype.type(1)) | side


def _max_shelves(cards: int) -> int:
    """Most shelves one sort can handle: shelf, rank and label bits fit in 64."""
    return 1 << (64 - 2 * label_bits(cards) - 1)


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    shelves: int = 10,
    stack: str = "fixed",
) -> np.ndarray:
    """``decks`` decks after ``steps`` passes of the reference order (int16)."""
    return sample_step(Shelf(shelves=shelves, stack=stack), decks, cards, steps, rng)


@dataclasses.dataclass(frozen=True)
class Shelf(Step):
    """A shelf shuffling machine: each card to a random shelf, on top or underneath.

    Parameters
    ----------
    shelves : int
        Number of shelves ``m`` (default 10, the machine of [1]).
    stack : str
        ``"fixed"`` (default: shelf 1 on top, then 2, ...) or ``"random"`` (a uniformly
        random order each pass). The two have exactly the same law.
    """

    keyword = "shelf"
    summary = "shelf machine (Diaconis-Fulman-Holmes): exact law through the number of valleys"

    shelves: int = 10
    stack: str = "fixed"

    def __post_init__(self) -> None:
        _check_shelves(self.shelves)
        object.__setattr__(self, "stack", _check_stack(self.stack))

    def check_cards(self, cards: int) -> None:
        super().check_cards(cards)
        if self.shelves > _max_shelves(cards):
            raise InputError(f"shelf: {self.shelves} shelves is too many for {cards} cards")

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return shelf_decks(decks, self.shelves, rng, stack=self.stack)

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        """``times`` passes, drawn as fewer passes through more shelves (same law, see the
        module docstring), as many at once as one 64-bit sort allows."""
        cards = decks.shape[1]
        out = decks.copy()
        left = times
        limit = _max_shelves(cards)
        while left > 0:
            block = 1
            while block < left and equivalent_shelves(self.shelves, block + 1) <= limit:
                block += 1
            m = equivalent_shelves(self.shelves, block)
            stack = self.stack if block == 1 else "fixed"  # same law either way
            out = shelf_decks(out, m, rng, stack=stack)
            left -= block
        return out

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_PASSES:
            return None
        return exact_distances(cards, times, shelves=self.shelves)

    def exact_chi_square(self, cards: int, times: int) -> tuple[float, float] | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_PASSES:
            return None
        return chi_square(cards, times, shelves=self.shelves)


register_model(
    ModelEntry(
        Shelf,
        steps_word="machine passes",
        sources=(DIACONIS_FULMAN_HOLMES, BAYER_DIACONIS),
        curve=distance_curve,
        curve_options=("shelves",),
        default_steps=lambda cards: 6,
        steps_limit=MAX_EXACT_PASSES,
        exact=f"any number of passes, either stacking (valleys): k <= {MAX_EXACT_PASSES}, "
        f"n <= {MAX_EXACT_CARDS:,}",
    )
)
