"""Dealing marks: the cut card and burned cards, which decide which cards are ever dealt.

Neither step moves a card; both say which positions of the shoe a game sees (common
practice of the card trade, no published source):

* ``cut-card(behind=52)``: the dealer places the cut card with ``behind`` cards behind it;
  play stops when the cut card comes out, so the bottom ``behind`` cards are never dealt
  (the *penetration* is ``1 - behind/n``);
* ``burn(cards=1)``: the top ``cards`` cards are discarded unseen before play.

A procedure's *dealt window* is positions ``first .. stop - 1`` (0-based) with ``first``
the cards burned in one run of the procedure and ``stop = n - behind`` for its last cut
card. Distances and tracking figures for a game can be computed on the dealt window only:
its law is a function of the arrangement, so it is never farther from random than the
whole shoe.

References
----------
.. [1] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of
       Mathematical Statistics, Hayward, CA, 1988, ch. 3 (a function of the deck is never
       farther from uniform than the deck).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np

from shufflecheck.common.checks import check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import DIACONIS_1988, TRADE_PRACTICE
from shufflecheck.core.distances import DistanceRow
from shufflecheck.models.base import Step
from shufflecheck.models.pile import fixed_arrangement_distances
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = ["Burn", "CutCard", "dealt_window"]


class _Mark(Step):
    deterministic = True

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return decks.copy()

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        return decks.copy()

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        return fixed_arrangement_distances(cards, times, "moves no card")


@dataclasses.dataclass(frozen=True)
class CutCard(_Mark):
    """The cut card: the bottom ``behind`` cards are never dealt."""

    keyword = "cut-card"
    summary = "cut card placed with `behind` cards behind it (never dealt); moves no card"

    behind: int = 52

    def __post_init__(self) -> None:
        check_integer(self.behind, "behind", low=0, prefix="cut-card: ")

    def check_cards(self, cards: int) -> None:
        super().check_cards(cards)
        if self.behind >= cards:
            raise InputError(
                f"cut-card: behind={self.behind} leaves nothing to deal from {cards} cards"
            )


@dataclasses.dataclass(frozen=True)
class Burn(_Mark):
    """Burn the top ``cards`` cards: discarded unseen before play."""

    keyword = "burn"
    summary = "burn the top `cards` cards before play (never seen); moves no card"

    cards: int = 1

    def __post_init__(self) -> None:
        check_integer(self.cards, "cards", low=0, prefix="burn: ")

    def check_cards(self, cards: int) -> None:
        super().check_cards(cards)
        if self.cards >= cards:
            raise InputError(f"burn: {self.cards} burned cards leave nothing of {cards}")


def dealt_window(steps: Sequence[Step], cards: int) -> tuple[int, int]:
    """``(first, stop)``: positions ``first .. stop - 1`` are dealt after ``steps`` (one run
    of a procedure): burned cards add up, the last cut card decides the end."""
    first = sum(s.cards for s in steps if isinstance(s, Burn))
    behind = 0
    for s in steps:
        if isinstance(s, CutCard):
            behind = s.behind
    stop = cards - behind
    if first >= stop:
        raise InputError(
            f"the procedure burns {first} cards and leaves {behind} behind the cut card: "
            f"nothing of {cards} is dealt"
        )
    return first, stop


register_model(
    ModelEntry(
        CutCard,
        steps_word="cut cards",
        sources=(TRADE_PRACTICE, DIACONIS_1988),
        exact="moves no card",
    )
)
register_model(
    ModelEntry(
        Burn, steps_word="burns", sources=(TRADE_PRACTICE, DIACONIS_1988), exact="moves no card"
    )
)
