"""The pile deal: deal the deck into piles one card at a time, then pick the piles up.

The dealer deals from the top, round-robin, onto ``p`` piles numbered 1..p in dealing
order: the card at position ``i`` (0 = top) lands on pile ``(i mod p) + 1``, on top of the
cards already there, so each pile holds its cards in reverse dealing order. The piles are
then stacked into one deck in the *pick-up order*, read from the top of the new deck down:

* ``"forward"`` (default): pile 1 on top, then pile 2, ..., pile ``p`` at the bottom (the
  dealer drops pile 1 on pile 2, both on pile 3, and so on; common practice, no published
  source);
* ``"reverse"``: pile ``p`` on top, ..., pile 1 at the bottom;
* an explicit order such as ``"3-1-4-2"``: pile 3 on top, then 1, 4, 2 (pile numbers
  separated by ``-``, ``/``, ``,`` or spaces; every pile exactly once).

Example worked by hand: 10 cards ``0..9`` into 3 piles; pile 1 holds ``9 6 3 0`` (top
first), pile 2 ``7 4 1``, pile 3 ``8 5 2``; forward pick-up gives
``9 6 3 0 7 4 1 8 5 2``.

**A pile deal mixes nothing by itself.** It is the same fixed rearrangement every time
(``deterministic = True``): from a known deck the result is known, so its distance to a
random deck is the largest possible, exactly ``TV = 1 - 1/n!``, separation 1 and
``KL = log2 n!`` bits, however many times it is repeated (a power of a fixed permutation is
a fixed permutation). Applied to a shuffled deck it leaves that deck's distance to uniform
unchanged (a fixed relabelling of positions); between other steps it changes how they
combine, so a procedure that contains a pile deal is assessed as a whole.

References
----------
.. [1] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of Mathematical
       Statistics, Hayward, CA, 1988, ch. 3 (distance to uniform is invariant under a fixed
       relabelling; a point mass is at total variation ``1 - 1/|G|`` from uniform).
"""

from __future__ import annotations

import dataclasses
import math
import re
from fractions import Fraction

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import DIACONIS_1988
from shufflecheck.core.distances import DistanceRow
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = [
    "Pile",
    "fixed_arrangement_distances",
    "pickup_order",
    "pile_sources",
    "power_sources",
    "sample",
]

NOTE = "a fixed rearrangement: mixes nothing by itself"


def fixed_arrangement_distances(cards: int, times: int, note: str = NOTE) -> DistanceRow:
    """Exact distances of a deck in a known, fixed order: ``1 - 1/n!``, 1, ``log2 n!``."""
    fact = math.factorial(cards)
    return DistanceRow(times, float(1 - Fraction(1, fact)), 1.0, math.log2(fact), "exact", note)


def _check_piles(piles: int) -> None:
    if isinstance(piles, bool) or not isinstance(piles, int) or piles < 1:
        raise InputError(f"pile: piles must be an integer >= 1, got {piles!r}")


def pickup_order(piles: int, pickup: str) -> tuple[int, ...]:
    """The pick-up order as 0-based pile indices, top of the new deck first."""
    _check_piles(piles)
    if not isinstance(pickup, str):
        raise InputError(f"pile: pickup must be text, got {pickup!r}")
    text = pickup.strip().lower()
    if text == "forward":
        return tuple(range(piles))
    if text == "reverse":
        return tuple(range(piles - 1, -1, -1))
    parts = [part for part in re.split(r"[-/,\s]+", text) if part]
    if not parts or not all(part.isdigit() for part in parts):
        raise InputError(
            f"pile: pickup must be 'forward', 'reverse' or pile numbers such as '2-1-3', "
            f"got {pickup!r}"
        )
    order = [int(part) for part in parts]
    if sorted(order) != list(range(1, piles + 1)):
        raise InputError(
            f"pile: pickup {pickup!r} must name each of the piles 1..{piles} exactly once"
        )
    return tuple(j - 1 for j in order)


def pile_sources(cards: int, piles: int, pickup: str = "forward") -> np.ndarray:
    """Source positions of the pile deal: ``new[i] = old[sources[i]]``."""
    order = pickup_order(piles, pickup)
    if cards < 1:
        raise InputError(f"pile: a deck needs at least 1 card, got {cards}")
    sources: list[int] = []
    for pile in order:
        dealt = list(range(pile, cards, piles))  # positions dealt to this pile, in order
        sources.extend(reversed(dealt))  # the last card dealt is on top of the pile
    return np.asarray(sources, dtype=np.intp)


def power_sources(sources: np.ndarray, times: int) -> np.ndarray:
    """Sources of ``times`` consecutive applications of the fixed rearrangement ``sources``."""
    result = np.arange(len(sources), dtype=np.intp)
    for _ in range(times):
        result = result[sources]  # new2[i] = new1[s[i]] = old[r[s[i]]]
    return result


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    piles: int = 5,
    pickup: str = "forward",
) -> np.ndarray:
    """``decks`` copies of the reference order after ``steps`` pile deals (all rows equal).

    ``rng`` is accepted for a uniform interface and never drawn from.
    """
    return sample_step(Pile(piles=piles, pickup=pickup), decks, cards, steps, rng)


@dataclasses.dataclass(frozen=True)
class Pile(Step):
    """Deal into ``piles`` piles round-robin, then pick them up in ``pickup`` order.

    Parameters
    ----------
    piles : int
        Number of piles (default 5).
    pickup : str
        ``"forward"`` (pile 1 on top, default), ``"reverse"`` (last pile on top) or the pile
        numbers from the top of the new deck down, e.g. ``"3-1-4-2-5"``.
    """

    keyword = "pile"
    summary = "pile deal: a fixed rearrangement that mixes nothing by itself (deterministic)"
    deterministic = True

    piles: int = 5
    pickup: str = "forward"

    def __post_init__(self) -> None:
        _check_piles(self.piles)
        order = pickup_order(self.piles, self.pickup)
        # one canonical spelling, which procedure text reads back unchanged
        if order == tuple(range(self.piles)):
            canonical = "forward"
        elif order == tuple(range(self.piles - 1, -1, -1)):
            canonical = "reverse"
        else:
            canonical = "-".join(str(j + 1) for j in order)
        object.__setattr__(self, "pickup", canonical)

    def check_cards(self, cards: int) -> None:
        super().check_cards(cards)
        if self.piles > cards:
            raise InputError(
                f"pile: {self.piles} piles need at least {self.piles} cards, got {cards}"
            )

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return self.apply_repeated(decks, 1, rng)

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        cards = decks.shape[1]
        self.check_cards(cards)
        sources = power_sources(pile_sources(cards, self.piles, self.pickup), times)
        return np.take(decks, sources, axis=1)

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        return fixed_arrangement_distances(cards, times)


register_model(
    ModelEntry(
        Pile,
        steps_word="pile deals",
        sources=(DIACONIS_1988,),
        exact="fixed rearrangement: mixes nothing by itself",
    )
)
