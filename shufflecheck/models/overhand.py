"""Strip and overhand shuffles: packets taken from the top and dropped, reversing their order.

The dealer pulls a packet off the top of the deck and drops it, pulls the next packet and
drops it on top of the first, and so on: the packets keep their own order but end in
reverse order. Following Pemantle's model ([1]), each of the ``n - 1`` gaps between
adjacent cards is, independently, a packet boundary with probability ``p``, so packet sizes
are geometric with mean ``1/p`` cards (cut off at the bottom of the deck) and the number of
packets is ``1 + Binomial(n - 1, p)``. The parameter is given in the trade's terms:

* ``packets`` -- the mean number of packets, ``p = (packets - 1) / (n - 1)``
  (``1 <= packets <= n``), or
* ``size`` -- the mean packet size in cards before the cut-off, ``p = 1/size``
  (``size >= 1``).

``strip`` and ``overhand`` are the same mechanics with different defaults: the strip (run
on the table, a few large packets) defaults to ``packets=5``; the overhand (in the hands,
many small packets) defaults to ``size=5`` cards, about 11 packets of a 52-card deck. Both
defaults are illustrative (common practice, no published source); set them from what is
seen at the table.

Pemantle states the model as reversing every packet *in place*; turning the order of the
packets around instead (the physical strip) is that move followed by reversing the whole
deck. Because the law of the boundaries is unchanged by reflecting the deck, ``k`` strips
have the law of ``k`` of Pemantle's steps followed by one reversal of the deck when ``k`` is
odd, so every distance to uniform is the same. For a fixed ``p``, order ``n^2 log n`` steps
suffice ([1]) and are needed ([2]): strips alone mix very slowly.

Exact law of one strip: different boundary sets give different arrangements (the
boundaries are exactly the descents of the result), so the arrangement with ``j``
boundaries has probability ``p^j (1-p)^(n-1-j)``; ``C(n-1, j)`` arrangements share it and
the other ``n! - 2^(n-1)`` arrangements have probability 0. ``p`` is the exact rational value
of the parameter as given. Several strips: Monte Carlo (no exact law here).

References
----------
.. [1] R. Pemantle, "Randomization time for the overhand shuffle", J. Theoret. Probab. 2
       (1989) 37-49.
.. [2] J. Jonasson, "The overhand shuffle mixes in Theta(n^2 log n) steps", Ann. Appl.
       Probab. 16 (2006) 231-243.
"""

from __future__ import annotations

import dataclasses
import math
import sys
from fractions import Fraction
from typing import ClassVar

import numpy as np

from shufflecheck.common.checks import check_cards
from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import PEMANTLE
from shufflecheck.core.distances import DistanceRow, chi_square_from_groups, row_from_groups
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.permute import apply_in_blocks, key_dtype, label_bits
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = [
    "MAX_EXACT_CARDS",
    "Overhand",
    "Strip",
    "boundary_probability",
    "chi_square",
    "exact_distances",
    "sample",
    "strip_decks",
]

MAX_EXACT_CARDS = 2000


def _check_positive(keyword: str, name: str, value: float | None) -> None:
    if value is None:
        return
    if (
        isinstance(value, bool)
        or not isinstance(value, (int, float))
        or not math.isfinite(value)
        or value < 1
    ):
        raise InputError(f"{keyword}: {name} must be a number >= 1, got {value!r}")


def boundary_probability(
    cards: int, *, packets: float | None = None, size: float | None = None, keyword: str = "strip"
) -> Fraction:
    """Exact chance ``p`` that a gap between two cards is a packet boundary.

    Exactly one of ``packets`` (mean number of packets) and ``size`` (mean packet size in
    cards) is given; the float is taken at its exact binary value.
    """
    _check_positive(keyword, "packets", packets)
    _check_positive(keyword, "size", size)
    if (packets is None) == (size is None):
        raise InputError(f"{keyword}: give exactly one of packets and size")
    check_cards(cards, prefix=f"{keyword}: ")
    if packets is not None:
        if packets > cards:
            raise InputError(
                f"{keyword}: packets must be at most the number of cards ({cards}), got {packets!r}"
            )
        return (Fraction(packets) - 1) / (cards - 1)
    return 1 / Fraction(size)


def strip_decks(decks: np.ndarray, p: float, rng: np.random.Generator) -> np.ndarray:
    """One strip of every row: boundaries with probability ``p``, packet order reversed."""
    return apply_in_blocks(_strip_block, decks, p, rng)


_ONES = np.uint64(0x0101010101010101)


def _running_count(marks: np.ndarray) -> np.ndarray:
    """Row-wise running sums of a 0/1 ``uint8`` array whose rows are a multiple of 8 long.

    Eight cards are summed at a time inside one 64-bit word (multiplying a word by
    ``0x0101...01`` leaves in byte ``j`` the sum of its bytes ``0..j``; no byte overflows
    while every running sum stays below 256), then the total of each word is carried into
    the next. Falls back to :func:`numpy.cumsum` on big-endian machines or long rows.
    """
    if sys.byteorder != "little" or marks.shape[1] > 256:
        return np.cumsum(marks, axis=1, dtype=np.uint16)
    words = marks.view(np.uint64)
    words *= _ONES
    for w in range(1, words.shape[1]):
        words[:, w] += (words[:, w - 1] >> np.uint64(56)) * _ONES
    return marks


def _strip_block(decks: np.ndarray, p: float, rng: np.random.Generator) -> np.ndarray:
    """Every card gets the key ``(n - 1 - packet, position)`` with its label packed below;
    one sort per row then lays the packets out in reverse order, each in its own order.
    ``packet`` (0 for the top packet) is the running count of boundaries above the card.
    """
    count, cards = decks.shape
    bits = label_bits(cards)
    dtype = key_dtype(3 * bits)
    marks = np.zeros((count, -(-cards // 8) * 8), dtype=np.uint8)
    # gap g (between positions g - 1 and g) is a boundary: p resolved to double precision
    np.less(rng.random((count, cards - 1)), p, out=marks[:, 1:cards].view(bool))
    packet = _running_count(marks)[:, :cards]
    key = packet.astype(dtype)
    key <<= dtype.type(2 * bits)
    base = ((cards - 1) << (2 * bits)) | (np.arange(cards) << bits)  # packet 0, position i
    np.subtract(base.astype(dtype), key, out=key)
    if dtype == np.uint64:  # int16 and uint64 have no common integer type
        key |= decks.astype(dtype)
    else:
        np.bitwise_or(key, decks, out=key, casting="unsafe")
    key.sort(axis=1)
    key &= dtype.type((1 << bits) - 1)
    return key.astype(decks.dtype)


def exact_distances(
    cards: int, steps: int, *, packets: float | None = None, size: float | None = None
) -> DistanceRow | None:
    """Exact distances after ``steps`` strips (``steps <= 1``), else None."""
    p = boundary_probability(cards, packets=packets, size=size)
    if steps == 0 or p == 0:
        fact = math.factorial(cards)
        note = "the unshuffled deck" if steps == 0 else "no boundaries: the deck is unchanged"
        return DistanceRow(steps, float(1 - Fraction(1, fact)), 1.0, math.log2(fact), "exact", note)
    if steps != 1 or cards > MAX_EXACT_CARDS:
        return None
    gaps = cards - 1
    a, b, d = p.numerator, (1 - p).numerator, p.denominator  # p = a/d, 1 - p = b/d
    counts = [math.comb(gaps, j) for j in range(gaps + 1)]
    numerators = [a**j * b ** (gaps - j) for j in range(gaps + 1)]
    fact = math.factorial(cards)
    counts.append(fact - 2**gaps)
    numerators.append(0)
    return row_from_groups(
        1, counts, numerators, d**gaps, fact, "one strip: boundaries are the descents"
    )


def chi_square(
    cards: int, steps: int, *, packets: float | None = None, size: float | None = None
) -> tuple[float, float] | None:
    """Exact ``(chi-square distance, largest likelihood ratio)`` after ``steps <= 1``
    strips (the law of one strip on its ``2^(n-1)`` arrangements), else None."""
    p = boundary_probability(cards, packets=packets, size=size)
    fact = math.factorial(cards)
    if steps == 0 or p == 0:
        return chi_square_from_groups([1, fact - 1], [1, 0], 1, fact)
    if steps != 1 or cards > MAX_EXACT_CARDS:
        return None
    gaps = cards - 1
    a, b, d = p.numerator, (1 - p).numerator, p.denominator
    counts = [math.comb(gaps, j) for j in range(gaps + 1)] + [fact - 2**gaps]
    numerators = [a**j * b ** (gaps - j) for j in range(gaps + 1)] + [0]
    return chi_square_from_groups(counts, numerators, d**gaps, fact)


@dataclasses.dataclass(frozen=True)
class _PacketShuffle(Step):
    """Common body of strip and overhand (same mechanics, different defaults)."""

    default: ClassVar[tuple[str, float]] = ("packets", 5.0)

    packets: float | None = None
    size: float | None = None

    def __post_init__(self) -> None:
        _check_positive(self.keyword, "packets", self.packets)
        _check_positive(self.keyword, "size", self.size)
        if self.packets is not None and self.size is not None:
            raise InputError(f"{self.keyword}: give packets or size, not both")
        name, value = self.default
        if getattr(self, name) == value and self._other(name) is None:
            object.__setattr__(self, name, None)  # the default rule has one canonical form

    def _other(self, name: str) -> float | None:
        return self.size if name == "packets" else self.packets

    def _rule(self) -> dict[str, float | None]:
        if self.packets is None and self.size is None:
            name, value = self.default
            return {name: value}
        return {"packets": self.packets, "size": self.size}

    def boundary_probability(self, cards: int) -> Fraction:
        """Exact chance that a gap between two cards is a packet boundary."""
        return boundary_probability(cards, keyword=self.keyword, **self._rule())

    def check_cards(self, cards: int) -> None:
        super().check_cards(cards)
        self.boundary_probability(cards)

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return strip_decks(decks, float(self.boundary_probability(decks.shape[1])), rng)

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        p = float(self.boundary_probability(decks.shape[1]))
        out = decks.copy()
        for _ in range(times):
            out = strip_decks(out, p, rng)
        return out

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        return exact_distances(cards, times, **self._rule())

    def exact_chi_square(self, cards: int, times: int) -> tuple[float, float] | None:
        return chi_square(cards, times, **self._rule())


@dataclasses.dataclass(frozen=True)
class Strip(_PacketShuffle):
    """Strip: packets pulled off the top onto the table, their order reversed (Pemantle).

    Parameters
    ----------
    packets : float or None
        Mean number of packets (``1 <= packets <= n``); default 5 when ``size`` is not given.
    size : float or None
        Mean packet size in cards (``>= 1``), instead of ``packets``.
    """

    keyword = "strip"
    summary = "strip: packets off the top, order reversed (Pemantle); packets=mean count"
    default = ("packets", 5.0)


@dataclasses.dataclass(frozen=True)
class Overhand(_PacketShuffle):
    """Overhand: the strip's mechanics in the hands, with many small packets by default.

    Parameters
    ----------
    packets : float or None
        Mean number of packets (``1 <= packets <= n``), instead of ``size``.
    size : float or None
        Mean packet size in cards (``>= 1``); default 5 when ``packets`` is not given.
    """

    keyword = "overhand"
    summary = "overhand: as strip, many small packets; size=mean packet size (cards)"
    default = ("size", 5.0)


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    packets: float | None = None,
    size: float | None = None,
) -> np.ndarray:
    """``decks`` decks after ``steps`` strips of the reference order (int16).

    ``packets`` / ``size`` as for :class:`Strip` (default: 5 packets on average).
    """
    return sample_step(Strip(packets=packets, size=size), decks, cards, steps, rng)


register_model(
    ModelEntry(
        Strip, steps_word="strips", sources=(PEMANTLE,), exact=f"one step, n <= {MAX_EXACT_CARDS:,}"
    )
)
register_model(
    ModelEntry(
        Overhand,
        steps_word="overhand shuffles",
        sources=(PEMANTLE,),
        exact=f"one step, n <= {MAX_EXACT_CARDS:,}",
    )
)
