"""The plug: a packet taken from the bottom (or top) of the shoe and put into its middle.

Common practice of the card trade (no published source): before a shoe is shuffled, the
cards that were behind the cut card, never dealt, are "plugged" into the discards, or a
dealer plugs a packet from one end into the middle to break up the order. The step takes
the bottom ``cards`` cards (``source="top"``: the top ones) and inserts them so that
``d`` of the other ``n - cards`` cards lie above them, with ``d`` random:

* ``spread=None`` (default): ``d`` uniform on the middle half of the other cards,
  ``ceil(m/4) .. floor(3m/4)`` with ``m = n - cards``;
* ``spread=s`` (cards): a discretised normal curve centred on ``m/2`` with standard
  deviation ``s``, on ``1 .. m - 1`` (the integer weights of
  :func:`shufflecheck.models.cut.centred_weights`).

Exact law of one plug: different depths give different arrangements, so the law puts the
depth's probability on each of its (at most ``m + 1``) arrangements and 0 elsewhere; every
distance to uniform follows exactly (as for a cut). A plug alone mixes almost nothing.

References
----------
.. [1] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of
       Mathematical Statistics, Hayward, CA, 1988, ch. 3 (distances of a law on a group).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from shufflecheck.common.checks import check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import DIACONIS_1988, TRADE_PRACTICE
from shufflecheck.core.distances import DistanceRow, row_from_groups
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.cut import centred_weights, check_spread, draw_from_weights
from shufflecheck.models.permute import apply_in_blocks, apply_sources, deck_dtype
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = ["MAX_EXACT_CARDS", "Plug", "depth_law", "sample"]

MAX_EXACT_CARDS = 2000
_SOURCES = ("bottom", "top")


def depth_law(cards: int, packet: int, spread: float | None) -> tuple[int, tuple[int, ...]]:
    """``(smallest depth, integer weights)``: cards of the rest above the plugged packet."""
    rest = cards - packet
    if spread is None:
        low, high = math.ceil(rest / 4), math.floor(3 * rest / 4)
        low, high = max(low, 1), max(min(high, rest - 1), max(low, 1))
        return low, (1,) * (high - low + 1)
    weights = centred_weights(rest, spread, 1, rest - 1)
    nonzero = [i for i, w in enumerate(weights) if w]
    return 1 + nonzero[0], tuple(weights[nonzero[0] : nonzero[-1] + 1])


@dataclasses.dataclass(frozen=True)
class Plug(Step):
    """Plug ``cards`` cards from the bottom (or top) into the middle of the others."""

    keyword = "plug"
    summary = "plug: a packet from the bottom (or top) put into the middle of the others"

    cards: int = 52
    spread: float | None = None
    source: str = "bottom"

    def __post_init__(self) -> None:
        check_integer(self.cards, "cards", low=1, prefix="plug: ")
        check_spread(self.spread, self.keyword)
        if self.source not in _SOURCES:
            raise InputError(f"plug: source must be bottom or top, got {self.source!r}")

    def check_cards(self, cards: int) -> None:
        super().check_cards(cards)
        if cards - self.cards < 2:
            raise InputError(
                f"plug: a packet of {self.cards} cards leaves fewer than 2 others in a deck of "
                f"{cards}"
            )

    def _sources(self, cards: int, depth: np.ndarray) -> np.ndarray:
        """``sources[d, i]``: old position of the card at new position ``i``."""
        rest = cards - self.cards
        small = deck_dtype(cards)  # positions fit: fewer bytes through every pass
        i = np.arange(cards, dtype=small)[None, :]
        d = depth.astype(small)[:, None]
        if self.source == "bottom":  # packet = old rest..n-1, others = old 0..rest-1
            others = np.where(i < d, i, i - self.cards)
            return np.where((i >= d) & (i < d + self.cards), rest + (i - d), others)
        # packet = old 0..cards-1, others = old cards..n-1
        others = self.cards + np.where(i < d, i, i - self.cards)
        return np.where((i >= d) & (i < d + self.cards), i - d, others)

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        self.check_cards(decks.shape[1])
        return apply_in_blocks(self._block, decks, rng)

    def _block(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        cards = decks.shape[1]
        low, weights = depth_law(cards, self.cards, self.spread)
        depth = draw_from_weights(rng, weights, decks.shape[0], low)
        return apply_sources(decks, self._sources(cards, depth))

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        if times != 1 or cards > MAX_EXACT_CARDS:
            return None
        self.check_cards(cards)
        _, weights = depth_law(cards, self.cards, self.spread)
        support = [w for w in weights if w]
        fact = math.factorial(cards)
        counts = [1] * len(support) + [fact - len(support)]
        numerators = [*support, 0]
        return row_from_groups(
            1, counts, numerators, sum(support), fact, "one plug: one arrangement per depth"
        )


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    **parameters: object,
) -> np.ndarray:
    """``decks`` decks of ``cards`` cards after ``steps`` plugs of the reference order."""
    return sample_step(Plug(**parameters), decks, cards, steps, rng)  # type: ignore[arg-type]


register_model(
    ModelEntry(
        Plug,
        steps_word="plugs",
        sources=(TRADE_PRACTICE, DIACONIS_1988),
        exact=f"one plug: n <= {MAX_EXACT_CARDS:,}",
    )
)
