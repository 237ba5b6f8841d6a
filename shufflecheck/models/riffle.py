"""The Gilbert–Shannon–Reeds riffle and its generalisation, the a-shuffle.

An ``a``-shuffle cuts the deck into ``a`` packets with multinomial sizes and interleaves
them so that every interleaving of those packets is equally likely; ``a = 2`` is the
ordinary riffle (GSR: cut binomially, drop from each hand with probability proportional to
its size). An ``a``-shuffle followed by a ``b``-shuffle is an ``ab``-shuffle, so ``k``
riffles are one ``2^k``-shuffle ([1], Lemma 1).

Exact law ([1], Thm. 1): after an ``a``-shuffle of a deck in reference order, an arrangement
with ``r`` rising sequences has probability ``C(a + n - r, n) / a^n``. A rising sequence is a
maximal run of consecutive labels ``v, v+1, ...`` found in increasing positions; the number
of them is ``1 + #{v : label v+1 lies above label v}``, and ``A(n, r-1)`` arrangements (an
Eulerian number) have ``r`` of them. Hence every distance to uniform is a sum of ``n``
terms, exact for any ``n`` (a shoe of 8 decks is ``n = 416``).

Sampler: every *new* position gets an independent uniform packet label in ``[0, a^k)``; the
positions labelled ``j``, top to bottom, receive packet ``j`` of the old deck in order. This
is the forward (physical) shuffle. Sorting the old cards by iid labels instead gives the
inverse shuffle, with the same distance to uniform but a different law for statistics such
as the number of rising sequences, so it is not used.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [2] E. N. Gilbert, "Theory of shuffling", Bell Laboratories technical memorandum, 1955;
       J. Reeds, unpublished manuscript, 1981 (the GSR model).
"""

from __future__ import annotations

import dataclasses
import math
from fractions import Fraction

import numpy as np

from shufflecheck.common.checks import check_cards, check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.limits import limit
from shufflecheck.common.numbers import gap_float
from shufflecheck.common.sources import BAYER_DIACONIS, GILBERT_REEDS
from shufflecheck.core.characters import Eigenvalue
from shufflecheck.core.counting import eulerian_row, stirling1_row
from shufflecheck.core.distances import (
    DistanceRow,
    MixingCurve,
    chi_square_from_groups,
    kl_term,
)
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.permute import apply_in_blocks, label_bits, place_by_sort_key
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = [
    "MAX_EXACT_CARDS",
    "MAX_EXACT_STEPS",
    "Riffle",
    "arrangement_probability",
    "check_hands",
    "chi_square",
    "distance_curve",
    "exact_distances",
    "rising_sequence_law",
    "sample",
    "spectrum",
]

SOURCE = "exact: rising-sequence law of the a-shuffle (Bayer & Diaconis 1992, Thm. 1)"
#: the exact method's limits (cost grows like cards^2 * steps big-integer operations)
MAX_EXACT_CARDS = 2000
MAX_EXACT_STEPS = 200


def check_hands(hands: int) -> int:
    """Number of packets ``a`` of an a-shuffle: an integer >= 2 (any size: consecutive
    riffles merge into one a-shuffle with the product of their packet counts)."""
    if isinstance(hands, bool) or not isinstance(hands, int) or hands < 2:
        raise InputError(f"hands (packets of an a-shuffle) must be an integer >= 2, got {hands!r}")
    return hands


def _given_hands(hands: int) -> int:
    """Packets a user gives (``riffle(hands=a)``, ``--hands``): 2 to 2^20, see
    :data:`~shufflecheck.common.limits.LIMITS`."""
    return limit("hands").check(hands)


def _check_cards_steps(cards: int, steps: int) -> None:
    check_cards(cards)
    check_integer(steps, "steps", low=0)


def spectrum(cards: int, *, hands: int = 2) -> list[Eigenvalue]:
    """Eigenvalues ``a^-i``, ``i = 0..n-1``, multiplicity ``c(n, n-i)`` ([1], Cor. 3).

    ``c`` are the unsigned Stirling numbers of the first kind (permutations by cycles).
    """
    a = _given_hands(hands)
    check_cards(cards, most=MAX_EXACT_CARDS, why="the multiplicities are exact integers")
    row = stirling1_row(cards)
    return [
        Eigenvalue(value=Fraction(1, a**i), multiplicity=row[cards - i], shapes=())
        for i in range(cards)
        if row[cards - i]
    ]


def _group_law(cards: int, packets: int) -> tuple[tuple[int, ...], list[int], int]:
    """(arrangements with r = 1..n rising sequences, C(a+n-r, n) for each r, a^n)."""
    counts = eulerian_row(cards)  # counts[r - 1]: arrangements with r rising sequences
    numerators = []
    value = math.comb(packets + cards - 1, cards)  # r = 1
    for r in range(1, cards + 1):
        numerators.append(value)
        # C(a + n - r - 1, n) = C(a + n - r, n) * (a - r) / (a + n - r)
        value = value * (packets - r) // (packets + cards - r) if packets - r > 0 else 0
    return counts, numerators, packets**cards


def exact_distances(cards: int, steps: int, *, hands: int = 2) -> DistanceRow:
    """Exact TV, separation and KL (bits) after ``steps`` a-shuffles of ``cards`` cards.

    Equivalent to one ``a^steps``-shuffle ([1], Lemma 1); formula of [1], Thm. 1 summed over
    the Eulerian groups. ``steps = 0`` is the unshuffled deck.
    """
    a = check_hands(hands)
    _check_cards_steps(cards, steps)
    _check_exact_range(cards, steps)
    return _exact_row(cards, steps, a)


def _check_exact_range(cards: int, steps: int) -> None:
    if cards > MAX_EXACT_CARDS or steps > MAX_EXACT_STEPS:
        raise InputError(
            f"the exact riffle law is limited to {MAX_EXACT_CARDS} cards and "
            f"{MAX_EXACT_STEPS} steps; use Monte Carlo assessment (shufflecheck assess)"
        )


def _exact_row(cards: int, steps: int, hands: int) -> DistanceRow:
    """One exact row, by the single crossing point of the rising-sequence law.

    ``P(r) = C(a + n - r, n) / a^n`` decreases in ``r``, so ``P - U`` changes sign once:
    with ``X = sum A(n, r) C(a + n - r, n)`` and ``Y = sum A(n, r)`` over the ``r`` where
    ``P(r) > 1/n!``, ``TV = X / a^n - Y / n!`` (because ``sum_r A(n, r) C(a + n - r, n) =
    a^n``). ``n! C(a + n - r, n)`` follows ``r`` by one small multiplication and one exact
    small division, so no step multiplies two large integers more than once per group. The
    integers, their order of summation and the final divisions are those of
    :func:`shufflecheck.core.distances.distances_from_groups`, so the three floats are the
    same to the last bit.
    """
    fact = math.factorial(cards)
    if steps == 0:
        tv = 1 - Fraction(1, fact)
        return DistanceRow(
            0,
            float(tv),
            1.0,
            math.log2(fact),
            "exact",
            total_variation_below_one=gap_float(1, fact),
            separation_below_one=0.0,
        )
    a = hands**steps
    counts = eulerian_row(cards)  # counts[r - 1]: arrangements with r rising sequences
    denominator = a**cards
    log_scale = math.log(fact) - math.log(denominator)
    numerator = math.comb(a + cards - 1, cards)  # C(a + n - r, n) at r = 1
    scaled = numerator * fact  # n! C(a + n - r, n)
    above_mass = 0  # X: sum of A(n, r) C(a + n - r, n) where P(r) > 1/n!
    above_count = 0  # Y
    kl_nats = 0.0
    for r in range(1, cards + 1):
        count = counts[r - 1]
        weight = count / fact
        if numerator == 0:
            kl_nats += kl_term(weight, -1.0, -math.inf)
        else:
            mass = None
            if scaled > denominator:
                mass = count * numerator
                above_mass += mass
                above_count += count
            log_t = math.log(numerator) + log_scale
            if log_t < 30:
                u = (scaled - denominator) / denominator  # exact, then rounded
                kl_nats += kl_term(weight, u, log_t)
            else:
                # weight * t = count * numerator / denominator is a probability: finite
                kl_nats += (mass / denominator) * (log_t - 1.0) + weight
        # C(a + n - r - 1, n) = C(a + n - r, n) * (a - r) / (a + n - r)
        if a - r > 0:
            numerator = numerator * (a - r) // (a + cards - r)
            scaled = scaled * (a - r) // (a + cards - r)
        else:
            numerator = scaled = 0
    minimum = math.comb(a, cards)  # P(r = n) is the smallest probability
    tv_numerator = 2 * (above_mass * fact - above_count * denominator)
    tv = tv_numerator / (2 * denominator * fact)
    separation = (denominator - minimum * fact) / denominator
    # 1 - TV and 1 - separation from the same integers: they keep values a float rounds to 1
    tv_gap = gap_float(2 * denominator * fact - tv_numerator, 2 * denominator * fact)
    separation_gap = gap_float(minimum * fact, denominator)
    return DistanceRow(
        steps,
        float(tv),
        float(separation),
        kl_nats / math.log(2),
        "exact",
        total_variation_below_one=tv_gap,
        separation_below_one=separation_gap,
    )


def chi_square(cards: int, steps: int, *, hands: int = 2) -> tuple[float, float]:
    """Exact ``(chi-square distance, largest likelihood ratio)`` after ``steps`` a-shuffles.

    ``chi2 = n! sum_r A(n, r-1) (C(a+n-r, n) / a^n)^2 - 1`` over the rising-sequence
    groups of [1], Thm. 1 (``a`` = ``hands^steps``), in exact integers; the largest ratio is
    ``n! C(a+n-1, n) / a^n``, the chance of the unshuffled order. ``inf`` when either
    exceeds the double range (while ``a`` is small against ``n``).
    """
    a = check_hands(hands)
    _check_cards_steps(cards, steps)
    if cards > MAX_EXACT_CARDS or steps > MAX_EXACT_STEPS:
        raise InputError(
            f"the exact riffle law is limited to {MAX_EXACT_CARDS} cards and "
            f"{MAX_EXACT_STEPS} steps"
        )
    fact = math.factorial(cards)
    if steps == 0:
        return _ratio_or_inf(fact - 1), _ratio_or_inf(fact)
    counts, numerators, denominator = _group_law(cards, a**steps)
    return chi_square_from_groups(counts, numerators, denominator, fact)


def _ratio_or_inf(value: int) -> float:
    try:
        return float(value)
    except OverflowError:
        return math.inf


def distance_curve(cards: int, max_steps: int, *, hands: int = 2) -> MixingCurve:
    """Exact distances after ``k = 1..max_steps`` a-shuffles (see :func:`exact_distances`)."""
    a = _given_hands(hands)
    _check_cards_steps(cards, max_steps)
    _check_exact_range(cards, max_steps)
    rows = tuple(_exact_row(cards, k, a) for k in range(1, max_steps + 1))
    return MixingCurve("riffle", cards, {"hands": hands}, rows, SOURCE)


def rising_sequence_law(cards: int, steps: int, *, hands: int = 2) -> tuple[Fraction, ...]:
    """Exact law of the number of rising sequences after ``steps`` a-shuffles.

    ``law[r - 1] = A(n, r - 1) C(a + n - r, n) / a^n`` for ``r = 1..n`` ([1], Thm. 1).
    """
    a = check_hands(hands)
    _check_cards_steps(cards, steps)
    counts, numerators, denominator = _group_law(cards, a**steps)
    return tuple(Fraction(c * m, denominator) for c, m in zip(counts, numerators, strict=True))


def arrangement_probability(
    arrangement: np.ndarray | list[int], steps: int, *, hands: int = 2
) -> Fraction:
    """Exact probability of one arrangement (labels top to bottom, 0-based) after ``steps``
    a-shuffles of the reference order: ``C(a + n - r, n) / a^n`` ([1], Thm. 1)."""
    a = check_hands(hands) ** steps
    labels = [int(v) for v in arrangement]
    n = len(labels)
    position = [0] * n
    for i, v in enumerate(labels):
        position[v] = i
    r = 1 + sum(position[v + 1] < position[v] for v in range(n - 1))
    return Fraction(math.comb(a + n - r, n), a**n)


# ---------------------------------------------------------------------------------------
# sampling


def _packet_labels(rng: np.random.Generator, shape: tuple[int, int], packets: int) -> np.ndarray:
    """iid uniform labels in ``[0, packets)``, cheapest draw for powers of two."""
    if packets & (packets - 1) == 0 and packets <= 256:
        raw = np.frombuffer(rng.bytes(shape[0] * shape[1]), dtype=np.uint8).reshape(shape)
        return raw & np.uint8(packets - 1)
    if packets & (packets - 1) == 0 and packets <= 1 << 16:
        raw = np.frombuffer(rng.bytes(2 * shape[0] * shape[1]), dtype=np.uint16).reshape(shape)
        return raw & np.uint16(packets - 1)
    dtype = np.uint32 if packets <= 1 << 32 else np.uint64
    return rng.integers(0, packets, size=shape, dtype=dtype)


def _block_sizes(cards: int, hands: int, steps: int) -> list[int]:
    """Split ``steps`` a-shuffles into blocks whose packet count keeps sort keys in 32 bits."""
    room = 32 - label_bits(cards)
    per_block = max(1, int(room // math.log2(hands)))
    blocks, left = [], steps
    while left > 0:
        blocks.append(min(per_block, left))
        left -= blocks[-1]
    return blocks


def riffle_decks(
    decks: np.ndarray, steps: int, rng: np.random.Generator, hands: int = 2
) -> np.ndarray:
    """Apply ``steps`` forward a-shuffles to every row of ``decks`` (returns a new array)."""
    cards = decks.shape[1]
    out = decks
    for block in _block_sizes(cards, hands, steps):
        packets = hands**block
        field_bits = max(1, (packets - 1).bit_length())
        labels = _packet_labels(rng, out.shape, packets)
        out = place_by_sort_key(out, labels, field_bits)
    return out if out is not decks else decks.copy()


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    hands: int = 2,
) -> np.ndarray:
    """``decks`` decks after ``steps`` forward a-shuffles of the reference order.

    Returns an int16 array of shape ``(decks, cards)``; ``row[i]`` is the label of the card at
    position ``i`` (0 = top).
    """
    return sample_step(Riffle(hands=hands), decks, cards, steps, rng)


@dataclasses.dataclass(frozen=True)
class Riffle(Step):
    """The ideal riffle (GSR), or an a-shuffle with ``hands`` packets."""

    keyword = "riffle"
    summary = "ideal riffle (Gilbert-Shannon-Reeds); hands=a for an a-shuffle"

    hands: int = 2

    def __post_init__(self) -> None:
        _given_hands(self.hands)

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return apply_in_blocks(riffle_decks, decks, 1, rng, self.hands)

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        return apply_in_blocks(riffle_decks, decks, times, rng, self.hands)

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
            return None
        return exact_distances(cards, times, hands=self.hands)

    def exact_chi_square(self, cards: int, times: int) -> tuple[float, float] | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
            return None
        return chi_square(cards, times, hands=self.hands)


register_model(
    ModelEntry(
        Riffle,
        steps_word="riffles",
        sources=(BAYER_DIACONIS, GILBERT_REEDS),
        curve=distance_curve,
        curve_options=("hands",),
        spectrum=spectrum,
        spectrum_options=("hands",),
        default_steps=lambda cards: math.ceil(1.5 * math.log2(cards)) + 5,
        steps_limit=MAX_EXACT_STEPS,
        exact=f"any number of riffles (rising sequences): k <= {MAX_EXACT_STEPS}, "
        f"n <= {MAX_EXACT_CARDS:,}",
    )
)
