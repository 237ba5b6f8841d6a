"""The cut: take a packet off the top and put it underneath (a rotation of the deck).

A cut of depth ``c`` takes the top ``c`` cards and places them under the rest, so the new
deck reads ``old[c], ..., old[n-1], old[0], ..., old[c-1]``: the card at new position
``i`` is ``old[(i + c) mod n]``. The depth is random:

* ``spread=None`` (default): ``c`` uniform on ``least, ..., n - least``;
* ``spread=s`` (cards): a discretised normal curve centred on the middle of the deck,
  weight ``exp(-(c - n/2)^2 / (2 s^2))`` on every ``c`` in ``least, ..., n - least``;
  ``s`` is the standard deviation of the curve before it is discretised and cut off at the
  ends, in cards. ``spread=0`` puts equal weight on the depth(s) nearest ``n/2``.

``least`` (cards, default 1) is the smallest packet a cut leaves on either side; a house
rule such as "at least four cards in each packet" is ``least=4`` (common practice, no
published source).

Exact law. The weights are turned into integers once (``round(2^40 w)`` after scaling the
largest weight to 1; weights below about ``2^-41`` of the largest become 0), and both the
sampler and the exact law use those integers, so the sampled law *is* the law analysed.
Cuts compose by adding depths mod ``n``, so after ``k`` cuts the deck is one of the ``n``
rotations with probabilities given by the ``k``-fold cyclic convolution of the depth law
(exact integers, computed by multiplying packed big integers, i.e. Kronecker
substitution). Every other arrangement has probability 0. Total variation, separation and
KL then follow exactly from ``n`` groups of one arrangement plus one group of ``n! - n``
arrangements of probability 0: a cut alone never mixes more than the ``n`` rotations, so
``TV >= 1 - n/n!`` and separation is 1 for ``n >= 3``.

References
----------
.. [1] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of Mathematical
       Statistics, Hayward, CA, 1988, ch. 3 (random walks on a group; a cut is a walk on the cyclic
       subgroup of rotations, and convolution of step laws).
.. [2] D. Aldous and P. Diaconis, "Shuffling cards and stopping times", Amer. Math.
       Monthly 93 (1986) 333-348 (total variation and separation of a shuffle's law).
"""

from __future__ import annotations

import dataclasses
import math
from fractions import Fraction

import numpy as np

from shufflecheck.common.checks import check_cards
from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import ALDOUS_DIACONIS_1986, DIACONIS_1988
from shufflecheck.core.distances import DistanceRow, chi_square_from_groups, row_from_groups
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.permute import apply_in_blocks
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = [
    "MAX_EXACT_CARDS",
    "MAX_EXACT_STEPS",
    "WEIGHT_BITS",
    "Cut",
    "centred_weights",
    "check_spread",
    "chi_square",
    "cut_law",
    "draw_from_weights",
    "exact_distances",
    "rotate",
    "rotation_law",
    "sample",
]

#: weights of the discretised normal are integers of at most this many bits
WEIGHT_BITS = 40
MAX_EXACT_CARDS = 5000
MAX_EXACT_STEPS = 10000


def check_spread(spread: float | None, keyword: str) -> float | None:
    """``spread`` (cards) is None or a finite number >= 0."""
    if spread is None:
        return None
    if (
        isinstance(spread, bool)
        or not isinstance(spread, (int, float))
        or not math.isfinite(spread)
        or spread < 0
    ):
        raise InputError(
            f"{keyword}: spread must be a number of cards >= 0 (or omitted), got {spread!r}"
        )
    return float(spread)


def centred_weights(cards: int, spread: float, low: int, high: int) -> tuple[int, ...]:
    """Integer weights of the discretised normal curve on depths ``low..high``.

    ``w(c) = exp(-((c - n/2)^2 - d^2) / (2 s^2))`` with ``d`` the distance from ``n/2`` to
    the nearest depth in range (so the largest weight is 1), scaled by ``2^40`` and
    rounded. ``spread = 0`` gives weight 1 to the nearest depth(s) and 0 elsewhere.
    """
    centre = Fraction(cards, 2)
    squares = [(c - centre) ** 2 for c in range(low, high + 1)]
    nearest = min(squares)
    two_s2 = 2.0 * spread * spread
    if two_s2 == 0:  # spread 0 (or so small that its square underflows)
        return tuple(int(q == nearest) for q in squares)
    scale = 1 << WEIGHT_BITS
    return tuple(round(scale * math.exp(-float(q - nearest) / two_s2)) for q in squares)


def _depth_weights(cards: int, spread: float | None, least: int) -> tuple[int, ...]:
    """Weights of depths ``least..n-least`` (uniform, or the discretised normal)."""
    low, high = least, cards - least
    if spread is None:
        return (1,) * (high - low + 1)
    return centred_weights(cards, spread, low, high)


def cut_law(cards: int, *, spread: float | None = None, least: int = 1) -> dict[int, Fraction]:
    """Exact law of the cut depth ``c`` (cards taken off the top): ``{c: probability}``."""
    _check_cut(cards, spread, least)
    weights = _depth_weights(cards, spread, least)
    total = sum(weights)
    return {least + j: Fraction(w, total) for j, w in enumerate(weights) if w}


def draw_from_weights(
    rng: np.random.Generator, weights: tuple[int, ...], size: int, offset: int = 0
) -> np.ndarray:
    """``size`` independent draws of ``offset + j`` with probability ``weights[j] / sum``.

    Exact for integer weights: a uniform integer below the total is located among the
    cumulative sums (``numpy.searchsorted``), so no floating point enters the law.
    """
    cumulative = np.cumsum(np.asarray(weights, dtype=np.int64))
    u = rng.integers(0, int(cumulative[-1]), size=size, dtype=np.int64)
    return np.searchsorted(cumulative, u, side="right").astype(np.int64) + offset


def rotate(decks: np.ndarray, depths: np.ndarray) -> np.ndarray:
    """Cut every row ``d`` at depth ``depths[d]``: ``new[d, i] = decks[d, (i + c_d) mod n]``.

    Each row is read from a window of the row written twice (a strided view), so the cost
    is one contiguous copy of ``n`` cards per deck.
    """
    cards = decks.shape[1]
    doubled = np.concatenate([decks, decks], axis=1)
    windows = np.lib.stride_tricks.sliding_window_view(doubled, cards, axis=1)
    return windows[np.arange(decks.shape[0]), np.asarray(depths) % cards]


def _check_cut(cards: int, spread: float | None, least: int) -> None:
    check_spread(spread, "cut")
    _check_least(least)
    check_cards(cards, prefix="cut: ")
    if 2 * least > cards:
        raise InputError(
            f"cut: least={least} leaves no possible cut in a deck of {cards} cards "
            f"(need cards >= 2 * least)"
        )


def _check_least(least: int) -> None:
    if isinstance(least, bool) or not isinstance(least, int) or least < 1:
        raise InputError(f"cut: least must be an integer number of cards >= 1, got {least!r}")


# ---------------------------------------------------------------------------------------
# the exact law on rotations


def _cyclic_power(weights: list[int], cards: int, times: int) -> list[int]:
    """``times``-fold cyclic convolution of an integer vector of length ``cards``.

    Kronecker substitution: the vector is packed into one big integer with slots wide
    enough for every coefficient of the product, the big integers are multiplied, and the
    ``2n - 1`` slots are folded mod ``n``. Exact.
    """
    result = [1] + [0] * (cards - 1)  # the identity rotation
    total = sum(weights)
    for _ in range(times):
        bound = sum(result) * total  # every coefficient of the product is below this
        width = bound.bit_length() + 1
        a = _pack(result, width)
        b = _pack(weights, width)
        product = a * b
        mask = (1 << width) - 1
        folded = [0] * cards
        for j in range(2 * cards - 1):
            folded[j % cards] += (product >> (j * width)) & mask
        result = folded
    return result


def _pack(values: list[int], width: int) -> int:
    packed = 0
    for v in reversed(values):
        packed = (packed << width) | v
    return packed


def rotation_law(
    cards: int, times: int, *, spread: float | None = None, least: int = 1
) -> tuple[list[int], int]:
    """Exact law of the rotation after ``times`` cuts: ``(numerators, denominator)``.

    ``numerators[j] / denominator`` is the chance that the deck is the reference order
    rotated by ``j`` (``new[i] = old[(i + j) mod n]``); the numerators sum to the
    denominator ``(sum of weights)^times``.
    """
    _check_cut(cards, spread, least)
    if isinstance(times, bool) or not isinstance(times, int) or times < 0:
        raise InputError(f"cut: the number of cuts must be an integer >= 0, got {times!r}")
    weights = [0] * cards
    for j, w in enumerate(_depth_weights(cards, spread, least)):
        weights[(least + j) % cards] += w
    return _cyclic_power(weights, cards, times), sum(weights) ** times


def exact_distances(
    cards: int, times: int, *, spread: float | None = None, least: int = 1
) -> DistanceRow:
    """Exact TV, separation and KL (bits) after ``times`` cuts of the reference order."""
    if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
        raise InputError(
            f"the exact cut law is limited to {MAX_EXACT_CARDS} cards and {MAX_EXACT_STEPS} "
            f"cuts; use Monte Carlo assessment (shufflecheck assess)"
        )
    numerators, denominator = rotation_law(cards, times, spread=spread, least=least)
    fact = math.factorial(cards)
    counts = [1] * cards + [fact - cards]
    return row_from_groups(
        times, counts, [*numerators, 0], denominator, fact, "law on the n rotations"
    )


def chi_square(
    cards: int, times: int, *, spread: float | None = None, least: int = 1
) -> tuple[float, float]:
    """Exact ``(chi-square distance, largest likelihood ratio)`` after ``times`` cuts: the
    law sits on the ``n`` rotations, so both are of order ``n!/n`` (``inf`` for large decks)."""
    if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
        raise InputError(
            f"the exact cut law is limited to {MAX_EXACT_CARDS} cards and {MAX_EXACT_STEPS} cuts"
        )
    numerators, denominator = rotation_law(cards, times, spread=spread, least=least)
    fact = math.factorial(cards)
    counts = [1] * cards + [fact - cards]
    return chi_square_from_groups(counts, [*numerators, 0], denominator, fact)


# ---------------------------------------------------------------------------------------
# sampling


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    spread: float | None = None,
    least: int = 1,
) -> np.ndarray:
    """``decks`` decks after ``steps`` cuts of the reference order (int16, one row a deck)."""
    return sample_step(Cut(spread=spread, least=least), decks, cards, steps, rng)


@dataclasses.dataclass(frozen=True)
class Cut(Step):
    """Cut the deck: the top ``c`` cards go underneath.

    Parameters
    ----------
    spread : float or None
        None (default): the depth is uniform on ``least..n-least``. A number ``s >= 0``: the
        depth follows a discretised normal curve centred on ``n/2`` with standard deviation
        ``s`` cards (before discretisation and truncation).
    least : int
        Fewest cards either packet of the cut may hold (default 1).
    """

    keyword = "cut"
    summary = "cut: a rotation of the deck, uniform or centred with a spread (cards)"

    spread: float | None = None
    least: int = 1

    def __post_init__(self) -> None:
        check_spread(self.spread, self.keyword)
        _check_least(self.least)

    def check_cards(self, cards: int) -> None:
        super().check_cards(cards)
        _check_cut(cards, self.spread, self.least)

    def _weights(self, cards: int) -> tuple[int, ...]:
        return _depth_weights(cards, self.spread, self.least)

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return self.apply_repeated(decks, 1, rng)

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        self.check_cards(decks.shape[1])
        if times == 0:
            return decks.copy()
        return apply_in_blocks(self._cut_block, decks, times, rng)

    def _cut_block(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        weights = self._weights(decks.shape[1])
        depth = np.zeros(decks.shape[0], dtype=np.int64)
        for _ in range(times):  # cuts compose by adding depths mod n
            depth += draw_from_weights(rng, weights, decks.shape[0], self.least)
        return rotate(decks, depth)

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
            return None
        return exact_distances(cards, times, spread=self.spread, least=self.least)

    def exact_chi_square(self, cards: int, times: int) -> tuple[float, float] | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
            return None
        return chi_square(cards, times, spread=self.spread, least=self.least)


register_model(
    ModelEntry(
        Cut,
        steps_word="cuts",
        sources=(DIACONIS_1988, ALDOUS_DIACONIS_1986),
        exact=f"any number of cuts: k <= {MAX_EXACT_STEPS:,}, n <= {MAX_EXACT_CARDS:,}",
    )
)
