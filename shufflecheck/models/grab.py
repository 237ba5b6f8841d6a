"""The grab (zone) shuffle of a shoe: stacks, grabs riffled in pairs, one new stack.

How dealers shuffle a shoe of several packs by hand (common practice, no published
source): the shoe is broken into ``stacks`` stacks of about equal size, top stack first.
Stacks are worked in pairs (``pairs``): the dealer takes a grab of about ``grab`` cards
from the top of each stack of the pair, riffles the two grabs together, and puts the
result on the new stack; then the next two grabs, and so on until both stacks of the pair
are used up (when one stack runs out, the other's last grabs go on alone). The pairs are
worked in order onto the same new stack, so the first grabs of the first pair end at its
bottom.

Parameters (in the trade's terms):

* ``stacks`` (default 2): stacks the shoe is broken into, sizes differing by at most one
  card, the first stacks taking the extra cards;
* ``grab`` (cards, default 26) and ``spread`` (cards, default 4): every grab size is drawn
  independently from a discretised normal curve centred on ``grab`` with standard
  deviation ``spread``, on ``1 .. 2 grab - 1`` (integer weights as for the cut,
  :func:`shufflecheck.models.cut.centred_weights`); ``spread = 0`` takes exactly ``grab``
  cards; a stack's last grab takes whatever is left;
* ``pairs``: which stacks are riffled together: ``adjacent`` (1-2, 3-4, ...), ``split``
  (1 with ``S/2 + 1``, 2 with ``S/2 + 2``, ...: top half of the shoe against bottom half) or
  explicit stack numbers such as ``1-3/2-4`` (pairs separated by ``/`` or ``;``);
* ``clump`` (default 1) and ``riffles`` (default 1): the hand riffle of each grab pair:
  cards fall from the bottoms of the two grabs with the drop rule of
  :mod:`shufflecheck.models.hand_riffle` (``clump = 1``: every interleaving of the two
  grabs equally likely, the Gilbert-Shannon-Reeds rule given the cut), and ``riffles - 1``
  further ideal riffles of the merged grab pair (a ``2^(riffles-1)``-shuffle of it, [1]).

No default is a measured value: set them from what is seen at the table. The grab shuffle
moves cards only within a zone of the new shoe: a card from grab ``r`` of a pair lands in
that pair's ``r``-th riffled packet. It has no exact analysis here (Monte Carlo only).

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313 (a-shuffles; an a-shuffle followed by a b-shuffle is an
       ab-shuffle).
.. [2] E. N. Gilbert, "Theory of shuffling", Bell Laboratories technical memorandum, 1955;
       J. Reeds, unpublished manuscript, 1981 (the GSR riffle).
"""

from __future__ import annotations

import dataclasses
import math
import re

import numpy as np

from shufflecheck.common.checks import check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import BAYER_DIACONIS, GILBERT_REEDS, TRADE_PRACTICE
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.cut import centred_weights, check_spread, draw_from_weights
from shufflecheck.models.hand_riffle import check_clump
from shufflecheck.models.permute import apply_in_blocks, place_by_sort_key
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = ["Grab", "grab_size_law", "parse_pairs", "sample", "stack_sizes"]

_MAX_RIFFLES = 6


def stack_sizes(cards: int, stacks: int) -> tuple[int, ...]:
    """Sizes of ``stacks`` stacks of a shoe of ``cards`` cards, top stack first."""
    base, extra = divmod(cards, stacks)
    return tuple(base + (1 if i < extra else 0) for i in range(stacks))


def parse_pairs(pairs: str, stacks: int) -> tuple[tuple[int, int], ...]:
    """Pairs of 0-based stack indices from ``adjacent``, ``split`` or ``1-3/2-4``."""
    text = pairs.strip().lower() if isinstance(pairs, str) else ""
    if text == "adjacent":
        if stacks % 2:
            raise InputError(f"grab: pairs=adjacent needs an even number of stacks, got {stacks}")
        return tuple((i, i + 1) for i in range(0, stacks, 2))
    if text == "split":
        if stacks % 2:
            raise InputError(f"grab: pairs=split needs an even number of stacks, got {stacks}")
        half = stacks // 2
        return tuple((i, i + half) for i in range(half))
    found = []
    for part in filter(None, (p.strip() for p in re.split(r"[/;]", text))):
        match = re.fullmatch(r"(\d+)\s*[-:]\s*(\d+)", part)
        if match is None:
            raise InputError(
                f"grab: pairs must be adjacent, split or stack numbers like 1-3/2-4, got {pairs!r}"
            )
        found.append((int(match.group(1)) - 1, int(match.group(2)) - 1))
    used = sorted(i for pair in found for i in pair)
    if used != list(range(stacks)):
        raise InputError(f"grab: pairs {pairs!r} must name every stack 1..{stacks} exactly once")
    return tuple(found)


def grab_size_law(grab: int, spread: float) -> tuple[int, tuple[int, ...]]:
    """``(smallest size, integer weights)`` of one grab: a discretised normal curve centred
    on ``grab`` with standard deviation ``spread``, on ``grab - 4 spread .. grab + 4 spread``
    within ``1 .. 2 grab - 1`` (a hand never takes a grab beyond four spreads; the weights
    cut off there hold less than 1e-4 of the curve)."""
    reach = math.floor(4 * spread)
    low, high = max(1, grab - reach), max(1, min(2 * grab - 1, grab + reach))
    weights = centred_weights(2 * grab, spread, low, high)
    nonzero = [i for i, w in enumerate(weights) if w]
    first, last = nonzero[0], nonzero[-1]
    return low + first, tuple(weights[first : last + 1])


def _grab_rounds(
    rng: np.random.Generator,
    decks: int,
    length: int,
    least: int,
    weights: tuple[int, ...],
    rounds: int,
) -> np.ndarray:
    """``(decks, rounds)`` grab sizes taking ``length`` cards off a stack (zeros once used up)."""
    sizes = draw_from_weights(rng, weights, decks * rounds, least).reshape(decks, rounds)
    taken = np.minimum(np.cumsum(sizes, axis=1), length)
    return np.diff(taken, axis=1, prepend=0)


def _segment_index(lengths: np.ndarray, cards: int) -> np.ndarray:
    """``(decks, cards)``: index of the segment (in top-to-bottom order) of each position."""
    decks, segments = lengths.shape
    ids = np.broadcast_to(np.arange(segments, dtype=np.int16), (decks, segments))
    return np.repeat(ids.ravel(), lengths.ravel()).reshape(decks, cards)


def _uniform_labels(
    rng: np.random.Generator,
    segment: np.ndarray,
    starts: np.ndarray,
    first: np.ndarray,
    lengths: np.ndarray,
) -> np.ndarray:
    """True where a position takes a card of the first grab: a uniform interleaving of the
    ``first[d, s]`` cards of one grab with the rest, independently in every segment.

    Sequential sampling without replacement, top to bottom: a position is the first grab's
    with chance ``a / m``, ``a`` of its cards and ``m`` positions being left in the segment
    (every subset of ``first`` positions equally likely). One loop over the ``n``
    positions, all decks at once.
    """
    decks, cards = segment.shape
    chance = rng.random((decks, cards))
    sizes = lengths.ravel()

    def spread(values: np.ndarray) -> np.ndarray:  # each segment's value at its positions
        return np.repeat(values.ravel(), sizes).reshape(decks, cards)

    # m, the positions left in the segment from each position on, and the threshold m u
    # (a product of the same doubles as one position at a time)
    offset = spread(starts.astype(np.int32))
    np.subtract(np.arange(cards, dtype=np.int32), offset, out=offset)
    threshold = spread(lengths.astype(np.float64))
    threshold -= offset
    threshold *= chance
    # laid out position by position (one contiguous row of all decks per position)
    threshold = threshold.T.copy()
    opens = (offset == 0).T.copy()
    first_at = spread(first.astype(np.int32)).T.copy()
    labels = np.empty((cards, decks), dtype=bool)
    left = np.zeros(decks)
    for i in range(cards):
        np.copyto(left, first_at[i], where=opens[i])
        np.less(threshold[i], left, out=labels[i])
        left -= labels[i]
    return np.ascontiguousarray(labels.T)


def _clumpy_labels(
    rng: np.random.Generator,
    starts: np.ndarray,
    lengths: np.ndarray,
    first: np.ndarray,
    clump: float,
    cards: int,
) -> np.ndarray:
    """Drops of every grab pair with the hand-riffle drop rule, bottom card first."""
    decks, segments = lengths.shape
    labels = np.zeros((decks, cards), dtype=bool)
    left = first.astype(np.float64).ravel()
    right = (lengths - first).astype(np.float64).ravel()
    last = np.full(left.size, 2, dtype=np.int64)  # 0: first grab, 1: second, 2: none yet
    bottoms = (starts + lengths - 1).ravel()
    rows = np.repeat(np.arange(decks), segments)
    size = lengths.ravel()
    factor = np.array([clump, 1.0, 1.0])
    other = np.array([1.0, clump, 1.0])
    for k in range(int(size.max(initial=0))):
        live = np.flatnonzero(size > k)
        if live.size == 0:
            break
        w_left = left[live] * factor[last[live]]
        w_right = right[live] * other[last[live]]
        total = w_left + w_right
        p_left = np.divide(w_left, total, out=(left[live] > 0).astype(float), where=total > 0)
        from_left = rng.random(live.size) < p_left
        labels[rows[live], bottoms[live] - k] = from_left
        left[live] -= from_left
        right[live] -= ~from_left
        last[live] = np.where(from_left, 0, 1)
    return labels


@dataclasses.dataclass(frozen=True)
class Grab(Step):
    """The grab (zone) shuffle: see the module docstring for the mechanics."""

    keyword = "grab"
    summary = (
        "grab (zone) shuffle of a shoe: stacks, grabs of about `grab` cards riffled in pairs "
        "onto a new stack"
    )

    stacks: int = 2
    grab: int = 26
    spread: float | None = 4.0
    pairs: str = "adjacent"
    clump: float = 1.0
    riffles: int = 1

    def __post_init__(self) -> None:
        check_integer(self.stacks, "stacks", low=2, high=64, prefix="grab: ")
        check_integer(self.grab, "grab", low=1, high=10_000, prefix="grab: ")
        check_spread(self.spread, self.keyword)
        check_clump(self.clump)
        check_integer(self.riffles, "riffles", low=1, high=_MAX_RIFFLES, prefix="grab: ")
        parse_pairs(self.pairs, self.stacks)

    def check_cards(self, cards: int) -> None:
        super().check_cards(cards)
        if cards < 2 * self.stacks:
            raise InputError(
                f"grab: {self.stacks} stacks need at least {2 * self.stacks} cards, got {cards}"
            )

    def grab_law(self) -> tuple[int, tuple[int, ...]]:
        return grab_size_law(self.grab, 0.0 if self.spread is None else self.spread)

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        self.check_cards(decks.shape[1])
        return apply_in_blocks(self._block, decks, rng)

    def _block(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        count, cards = decks.shape
        sizes = stack_sizes(cards, self.stacks)
        pairs = parse_pairs(self.pairs, self.stacks)
        least, weights = self.grab_law()
        rounds = math.ceil(max(sizes) / least) + 1
        # per pair: grab sizes from each of its two stacks, round by round
        first_parts, second_parts = [], []
        for a, b in pairs:
            first_parts.append(_grab_rounds(rng, count, sizes[a], least, weights, rounds))
            second_parts.append(_grab_rounds(rng, count, sizes[b], least, weights, rounds))
        # segments top to bottom: the last pair, its last round first
        order = [(p, r) for p in reversed(range(len(pairs))) for r in reversed(range(rounds))]
        first = np.stack([first_parts[p][:, r] for p, r in order], axis=1)
        second = np.stack([second_parts[p][:, r] for p, r in order], axis=1)
        lengths = first + second
        starts = np.cumsum(lengths, axis=1) - lengths
        segment = _segment_index(lengths, cards)
        if self.clump == 1:
            from_first = _uniform_labels(rng, segment, starts, first, lengths)
        else:
            from_first = _clumpy_labels(rng, starts, lengths, first, self.clump, cards)
        # the source of every new position: (stack of its grab, round), in old-deck order
        field_first = np.array([pairs[p][0] * rounds + r for p, r in order], dtype=np.int16)
        field_second = np.array([pairs[p][1] * rounds + r for p, r in order], dtype=np.int16)
        field = np.where(from_first, field_first[segment], field_second[segment])
        bits = max(1, (self.stacks * rounds - 1).bit_length())
        out = place_by_sort_key(decks, field, bits)
        if self.riffles > 1:
            packets = 2 ** (self.riffles - 1)
            noise = rng.integers(0, packets, size=out.shape, dtype=np.int64)
            key = segment.astype(np.int64) * packets + noise
            out = place_by_sort_key(out, key, max(1, int(key.max()).bit_length()))
        return out


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    **parameters: object,
) -> np.ndarray:
    """``decks`` shoes of ``cards`` cards after ``steps`` grab shuffles of the reference order."""
    return sample_step(Grab(**parameters), decks, cards, steps, rng)  # type: ignore[arg-type]


register_model(
    ModelEntry(
        Grab,
        steps_word="grab shuffles",
        sources=(TRADE_PRACTICE, BAYER_DIACONIS, GILBERT_REEDS),
    )
)
