"""The imperfect hand riffle (cut spread and clumpy drops) and the perfect weave.

**Hand riffle.** The deck is cut into a top packet of ``c`` cards (left hand) and a bottom
packet of ``n - c`` cards (right hand); cards then fall one at a time from the bottoms of
the two packets, so the first card to fall ends at the bottom of the new deck. Two
parameters describe what a dealer's hands actually do:

* ``spread`` (cards): None (default) cuts binomially, ``c ~ Binomial(n, 1/2)`` (standard
  deviation ``sqrt(n)/2``, about 3.6 cards for 52), as in the ideal riffle; a number
  ``s >= 0`` cuts by a discretised normal curve centred on ``n/2`` with standard deviation
  ``s`` cards, on ``c = 0..n`` (the weights of :func:`shufflecheck.models.cut.centred_weights`:
  integers, so the sampler draws exactly the law that is analysed);
* ``clump`` (a ratio, default 1): with ``A`` and ``B`` cards left in the two hands, the next
  card falls from the left hand with probability ``A f_L / (A f_L + B f_R)``, where the
  factor of the hand that dropped the previous card is ``clump`` and the other is 1 (both 1
  for the first card). ``clump = 1`` is the Gilbert-Shannon-Reeds rule (drop in proportion
  to the cards held); ``clump > 1`` makes a hand that has just dropped likely to go on
  dropping, so cards fall in packets; ``clump < 1`` favours alternation (a neat dealer), and
  ``clump = 0`` alternates strictly until one hand is empty. When both hands hold equally
  many cards, the hand that has just dropped drops again with chance
  ``clump / (1 + clump)``, so packets are nearly geometric with mean ``1 + clump``; as the
  hands become unequal packets shorten. On 52 cards cut in half, packets average about
  1.5, 1.9, 2.7 and 3.5 cards for ``clump`` = 0.5, 1, 2, 3 (Monte Carlo estimate from
  20,000 decks, standard error below 0.01 card).

This parameterisation of clumpy drops is our own (a one-parameter "sticky" version of the
GSR drop rule chosen so that the ideal riffle is the case ``clump = 1``); it is not taken
from a published model. With the defaults (``spread=None, clump=1``) the hand riffle *is*
the ideal riffle ([1], [2]): same sampler, same exact law. Change the parameters to describe
what is seen at the table (no default here is a measured value).

Exact analysis: for ``clump = 1`` every interleaving of the two packets is equally likely
given the cut, so one hand riffle of the reference order gives the identity with
probability ``sum_c P(c) / C(n, c)`` and each of the ``C(n, c) - 1`` arrangements with two
rising sequences split after card ``c`` with probability ``P(c) / C(n, c)`` (the count of
[1], Thm. 1, for two packets); these are exact for one step with any ``spread``. Several
steps are exact only in the GSR case, through the ``2^k``-shuffle law of [1]. Clumpy drops
(``clump != 1``) have no exact analysis here: Monte Carlo.

**Perfect weave** (faro): the deck is cut exactly in half and the halves interleave
perfectly, one card from each. ``faro="out"`` keeps the top card on top (the top half has
``ceil(n/2)`` cards and fills positions 0, 2, 4, ...); ``faro="in"`` puts the top card second
(the top half has ``floor(n/2)`` cards and fills positions 1, 3, 5, ...). It is a fixed
rearrangement, so by itself it mixes nothing (``deterministic = True``). For an even deck
of ``n`` cards, the out-faro restores the deck after ``ord_{n-1}(2)`` weaves and the in-faro
after ``ord_{n+1}(2)`` (the multiplicative order of 2): 8 out-faros, or 52 in-faros, for 52
cards ([3]).

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [2] E. N. Gilbert, "Theory of shuffling", Bell Laboratories technical memorandum, 1955;
       J. Reeds, unpublished manuscript, 1981 (the GSR model).
.. [3] P. Diaconis, R. L. Graham and W. M. Kantor, "The mathematics of perfect shuffles",
       Adv. in Appl. Math. 4 (1983) 175-196.
"""

from __future__ import annotations

import dataclasses
import math
from fractions import Fraction

import numpy as np

from shufflecheck.common.checks import check_cards
from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import BAYER_DIACONIS, DIACONIS_GRAHAM_KANTOR, GILBERT_REEDS
from shufflecheck.core.distances import DistanceRow, chi_square_from_groups, row_from_groups
from shufflecheck.models import riffle
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.cut import centred_weights, check_spread, draw_from_weights
from shufflecheck.models.permute import apply_in_blocks, place_by_sort_key
from shufflecheck.models.pile import fixed_arrangement_distances, power_sources
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = [
    "FAROS",
    "HandRiffle",
    "Weave",
    "check_clump",
    "chi_square",
    "cut_law",
    "exact_distances",
    "hand_riffle_decks",
    "sample",
    "sample_weave",
    "weave_sources",
]

FAROS = ("out", "in")
#: rows of the drop-chance table computed at once (bounds its memory for long decks)
TABLE_ROWS = 64


def check_clump(clump: float) -> float:
    """``clump`` is a finite number >= 0 (1 = the ideal riffle's drop rule)."""
    if (
        isinstance(clump, bool)
        or not isinstance(clump, (int, float))
        or not math.isfinite(clump)
        or clump < 0
    ):
        raise InputError(f"hand-riffle: clump must be a number >= 0, got {clump!r}")
    return float(clump)


def _cut_weights(cards: int, spread: float | None) -> tuple[int, ...]:
    """Integer weights of the cut ``c = 0..n`` (binomial, or the discretised normal)."""
    if spread is None:
        return tuple(math.comb(cards, c) for c in range(cards + 1))
    return centred_weights(cards, spread, 0, cards)


def cut_law(cards: int, spread: float | None = None) -> dict[int, Fraction]:
    """Exact law of the number ``c`` of cards in the top packet: ``{c: probability}``."""
    check_spread(spread, "hand-riffle")
    weights = _cut_weights(cards, spread)
    total = sum(weights)
    return {c: Fraction(w, total) for c, w in enumerate(weights) if w}


def _draw_cuts(rng: np.random.Generator, cards: int, spread: float | None, size: int):
    if spread is None:
        return rng.binomial(cards, 0.5, size=size)
    return draw_from_weights(rng, _cut_weights(cards, spread), size)


def _right_chances(cards: int, clump: float, first: int, stop: int) -> np.ndarray:
    """``table[k - first, 3 * left + last]``: chance that drop ``k`` comes from the right.

    Before drop ``k`` the hands hold ``n - k`` cards, ``left`` of them in the left hand;
    ``last`` is the hand of the previous card (0 left, 1 right, 2 none yet). Rows are
    ``k = first..stop-1``; entries with ``left > n - k`` are never used. When both weights
    are 0 (``clump = 0``) the hand that still holds cards drops.
    """
    left = np.arange(cards + 1, dtype=np.float64)[None, :, None]
    remaining = (cards - np.arange(first, stop, dtype=np.float64))[:, None, None]
    right = np.maximum(remaining - left, 0.0)
    w_left = left * np.array([clump, 1.0, 1.0])
    w_right = right * np.array([1.0, clump, 1.0])
    total = w_left + w_right
    chance = np.divide(w_right, total, out=np.zeros_like(total), where=total > 0)
    chance[(total == 0) & (left == 0)] = 1.0
    return chance.reshape(stop - first, -1)


def _drop_labels(cuts: np.ndarray, cards: int, clump: float, rng: np.random.Generator):
    """Hand of the card at every new position (0 = left/top packet, 1 = right/bottom).

    Drops are simulated from the bottom of the new deck up, all decks at once, one drop per
    pass (a loop over the ``n`` positions, never over decks); each pass looks the chance of
    a right-hand drop up in a table over (cards in the left hand, last hand).
    """
    count = cuts.shape[0]
    labels = np.empty((count, cards), dtype=np.uint8)
    left = cuts.astype(np.intp)
    last = np.full(count, 2, dtype=np.intp)
    for first in range(0, cards, TABLE_ROWS):
        stop = min(cards, first + TABLE_ROWS)
        table = _right_chances(cards, clump, first, stop)
        for k in range(first, stop):
            from_right = rng.random(count) < table[k - first].take(3 * left + last)
            labels[:, cards - 1 - k] = from_right
            left -= ~from_right
            last = from_right.astype(np.intp)
    return labels


def _hand_riffle_block(
    decks: np.ndarray, rng: np.random.Generator, spread: float | None, clump: float
) -> np.ndarray:
    cards = decks.shape[1]
    cuts = _draw_cuts(rng, cards, spread, decks.shape[0])
    return place_by_sort_key(decks, _drop_labels(cuts, cards, clump, rng), 1)


def hand_riffle_decks(
    decks: np.ndarray,
    steps: int,
    rng: np.random.Generator,
    *,
    spread: float | None = None,
    clump: float = 1.0,
) -> np.ndarray:
    """Apply ``steps`` hand riffles to every row of ``decks`` (returns a new array)."""
    if spread is None and clump == 1:
        return riffle.riffle_decks(decks, steps, rng)  # the ideal riffle: same law
    out = decks.copy()
    for _ in range(steps):
        out = apply_in_blocks(_hand_riffle_block, out, rng, spread, clump)
    return out


def exact_distances(
    cards: int, steps: int, *, spread: float | None = None, clump: float = 1.0
) -> DistanceRow | None:
    """Exact distances after ``steps`` hand riffles, or None when there is no exact law.

    Exact cases: ``clump = 1`` with ``spread=None`` (the ideal riffle, any number of steps,
    [1] Thm. 1) and ``clump = 1`` with any ``spread`` for one step (uniform interleavings).
    """
    check_spread(spread, "hand-riffle")
    check_clump(clump)
    check_cards(cards, prefix="hand-riffle: ")
    if clump != 1:
        return None
    if spread is None:
        if cards > riffle.MAX_EXACT_CARDS or steps > riffle.MAX_EXACT_STEPS:
            return None
        return riffle.exact_distances(cards, steps)
    if steps == 0:
        return fixed_arrangement_distances(cards, 0, "the unshuffled deck")
    if steps != 1 or cards > riffle.MAX_EXACT_CARDS:
        return None
    counts, numerators, denominator = _one_step_groups(cards, spread)
    return row_from_groups(
        1,
        counts,
        numerators,
        denominator,
        math.factorial(cards),
        "uniform interleavings given the cut",
    )


def _one_step_groups(cards: int, spread: float) -> tuple[list[int], list[int], int]:
    """Groups of one hand riffle with uniform interleavings given a cut of the given spread:
    (counts, numerators, denominator), the identity first, then the two-sequence
    arrangements split after each cut depth, then the arrangements it cannot reach."""
    weights = _cut_weights(cards, spread)
    total = sum(weights)
    binomials = [math.comb(cards, c) for c in range(cards + 1)]
    scale = math.lcm(*binomials)
    # P(c)/C(n,c) over the common denominator total * scale
    share = [w * (scale // b) for w, b in zip(weights, binomials, strict=True)]
    counts = [1, *(b - 1 for b in binomials[1:-1])]
    numerators = [sum(share), *share[1:-1]]
    counts.append(math.factorial(cards) - sum(counts))
    numerators.append(0)
    return counts, numerators, total * scale


def chi_square(
    cards: int, steps: int, *, spread: float | None = None, clump: float = 1.0
) -> tuple[float, float] | None:
    """Exact ``(chi-square distance, largest likelihood ratio)`` in the cases of
    :func:`exact_distances`, else None."""
    check_spread(spread, "hand-riffle")
    check_clump(clump)
    check_cards(cards, prefix="hand-riffle: ")
    if clump != 1:
        return None
    if spread is None:
        if cards > riffle.MAX_EXACT_CARDS or steps > riffle.MAX_EXACT_STEPS:
            return None
        return riffle.chi_square(cards, steps)
    fact = math.factorial(cards)
    if steps == 0:
        return chi_square_from_groups([1, fact - 1], [1, 0], 1, fact)
    if steps != 1 or cards > riffle.MAX_EXACT_CARDS:
        return None
    return chi_square_from_groups(*_one_step_groups(cards, spread), fact)


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    spread: float | None = None,
    clump: float = 1.0,
) -> np.ndarray:
    """``decks`` decks after ``steps`` hand riffles of the reference order (int16)."""
    return sample_step(HandRiffle(spread=spread, clump=clump), decks, cards, steps, rng)


@dataclasses.dataclass(frozen=True)
class HandRiffle(Step):
    """A riffle as hands do it: the cut spread around the middle, cards falling in clumps.

    Parameters
    ----------
    spread : float or None
        Standard deviation of the cut, in cards, around the middle of the deck; None
        (default) cuts binomially as the ideal riffle does.
    clump : float
        How much more likely (per card held) the hand that dropped the last card is to drop
        the next one; 1 (default) is the ideal riffle, larger values give larger packets
        (at most about ``1 + clump`` cards on average), 0 strict alternation.
    """

    keyword = "hand-riffle"
    summary = "imperfect hand riffle: cut spread (cards) and clumpy drops; GSR when clump=1"

    spread: float | None = None
    clump: float = 1.0

    def __post_init__(self) -> None:
        check_spread(self.spread, self.keyword)
        check_clump(self.clump)

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return self.apply_repeated(decks, 1, rng)

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        return hand_riffle_decks(decks, times, rng, spread=self.spread, clump=self.clump)

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        return exact_distances(cards, times, spread=self.spread, clump=self.clump)

    def exact_chi_square(self, cards: int, times: int) -> tuple[float, float] | None:
        return chi_square(cards, times, spread=self.spread, clump=self.clump)


# ---------------------------------------------------------------------------------------
# the perfect weave


def _check_faro(faro: str) -> str:
    value = faro.strip().lower() if isinstance(faro, str) else faro
    if value not in FAROS:
        raise InputError(f"weave: faro must be 'out' or 'in', got {faro!r}")
    return value


def weave_sources(cards: int, faro: str = "out") -> np.ndarray:
    """Source positions of one perfect weave: ``new[i] = old[sources[i]]``.

    Out-faro: ``new[2i] = old[i]`` for the top ``ceil(n/2)`` cards and
    ``new[2j+1] = old[ceil(n/2) + j]``. In-faro: ``new[2i+1] = old[i]`` for the top
    ``floor(n/2)`` cards and ``new[2j] = old[floor(n/2) + j]`` ([3]).
    """
    _check_faro(faro)
    if cards < 1:
        raise InputError(f"weave: a deck needs at least 1 card, got {cards}")
    top = (cards + 1) // 2 if faro == "out" else cards // 2
    first = 0 if faro == "out" else 1  # first position filled by the top half
    sources = np.empty(cards, dtype=np.intp)
    sources[first::2] = np.arange(top)
    sources[1 - first :: 2] = np.arange(top, cards)
    return sources


def sample_weave(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    faro: str = "out",
) -> np.ndarray:
    """``decks`` copies of the reference order after ``steps`` perfect weaves."""
    return sample_step(Weave(faro=faro), decks, cards, steps, rng)


@dataclasses.dataclass(frozen=True)
class Weave(Step):
    """The perfect weave (faro): exact halves, interleaved one card from each.

    Parameters
    ----------
    faro : str
        ``"out"`` (default: the top card stays on top) or ``"in"`` (it goes second).
    """

    keyword = "weave"
    summary = "perfect weave (faro out or in): a fixed rearrangement, mixes nothing by itself"
    deterministic = True

    faro: str = "out"

    def __post_init__(self) -> None:
        object.__setattr__(self, "faro", _check_faro(self.faro))

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return self.apply_repeated(decks, 1, rng)

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        sources = power_sources(weave_sources(decks.shape[1], self.faro), times)
        return np.take(decks, sources, axis=1)

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        return fixed_arrangement_distances(cards, times)


register_model(
    ModelEntry(
        HandRiffle,
        steps_word="hand riffles",
        sources=(GILBERT_REEDS, BAYER_DIACONIS),
        exact="defaults: as riffle; clump=1 with a spread: one step; otherwise none",
    )
)
register_model(
    ModelEntry(
        Weave,
        steps_word="weaves",
        sources=(DIACONIS_GRAHAM_KANTOR,),
        exact="fixed rearrangement: mixes nothing by itself",
    )
)
