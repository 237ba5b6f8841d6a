"""Top-to-random and its inverse, random-to-top (Aldous & Diaconis 1986).

Top-to-random takes the top card and inserts it at one of the ``n`` positions uniformly.
Random-to-top moves a uniformly chosen card to the top; one step of it is the inverse
rearrangement of one step of top-to-random, so after ``k`` steps the random-to-top deck is
distributed as the inverse of the top-to-random deck and both are equally far from uniform.

Exact law: after ``k`` random-to-top moves the deck is the list of distinct cards drawn
(most recent on top) above the never-drawn cards in reference order; a particular list of
``d`` cards is on top with probability ``S(k, d) / n^k`` (Stirling numbers of the second
kind: ordered set partitions of the ``k`` draws by card, ordered by last draw). So an
arrangement whose longest increasing bottom run has length ``L`` has probability
``sum_{d >= n - L} S(k, d) / n^k``, and ``n!/L!`` arrangements have such a run of length at
least ``L``.

Strong uniform time ([1], Section 2): once the card originally at the bottom has come to
the top and been inserted, the deck is uniform; that time has the law of the coupon
collector's time for ``n`` coupons, so ``separation(k) <= P(T > k) = 1 - n! S(k, n) / n^k``.

References
----------
.. [1] D. Aldous and P. Diaconis, "Shuffling cards and stopping times", Amer. Math.
       Monthly 93 (1986) 333-348.
.. [2] P. Diaconis, J. A. Fill and J. Pitman, "Analysis of top to random shuffles",
       Combin. Probab. Comput. 1 (1992) 135-155 (spectrum).
"""

from __future__ import annotations

import dataclasses
import functools
import math
from fractions import Fraction

import numpy as np

from shufflecheck.common.checks import check_cards, check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import ALDOUS_DIACONIS_1986, DIACONIS_FILL_PITMAN
from shufflecheck.core.characters import Eigenvalue
from shufflecheck.core.counting import rencontres_row, stirling2_columns
from shufflecheck.core.distances import (
    DistanceRow,
    MixingCurve,
    chi_square_from_groups,
    distances_from_groups,
)
from shufflecheck.models.base import Step
from shufflecheck.models.permute import CHUNK_DECKS, deck_dtype, identity_decks, invert
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = [
    "MAX_EXACT_CARDS",
    "MAX_EXACT_STEPS",
    "RandomToTop",
    "TopToRandom",
    "bottom_run_law",
    "chi_square",
    "distance_curve",
    "sample",
    "sample_random_to_top",
    "spectrum",
]

SOURCE = (
    "exact: random-to-top law through Stirling numbers of the second kind "
    "(Aldous & Diaconis 1986; same distances for top-to-random)"
)
BOUND_SOURCE = (
    "bound: strong uniform time, P(T > k) = 1 - n! S(k, n) / n^k (Aldous & Diaconis 1986)"
)
MAX_EXACT_CARDS = 2000
MAX_EXACT_STEPS = 20000


def spectrum(cards: int) -> list[Eigenvalue]:
    """Eigenvalues ``j/n`` with multiplicity the number of permutations with ``j`` fixed points.

    ``j = n-1`` never occurs (multiplicity 0) and is omitted ([2], Thm. 4.1).
    """
    row = rencontres_row(cards)
    return [
        Eigenvalue(value=Fraction(j, cards), multiplicity=row[j], shapes=())
        for j in range(cards, -1, -1)
        if row[j]
    ]


def _check(cards: int, steps: int) -> None:
    check_cards(cards)
    check_integer(steps, "steps", low=0)
    if cards > MAX_EXACT_CARDS or steps > MAX_EXACT_STEPS:
        raise InputError(
            f"the exact top-to-random law is limited to {MAX_EXACT_CARDS} cards and "
            f"{MAX_EXACT_STEPS} steps; use Monte Carlo assessment (shufflecheck assess)"
        )


def _run_counts(cards: int) -> list[int]:
    """``counts[L - 1]``: arrangements whose longest increasing bottom run has length ``L``."""
    fact = math.factorial(cards)
    at_least = [fact // math.factorial(length) for length in range(1, cards + 1)]
    return [at_least[i] - (at_least[i + 1] if i + 1 < cards else 0) for i in range(cards)]


def _numerators(row: tuple[int, ...], cards: int) -> list[int]:
    """``num[L - 1] = sum_{d >= n - L} S(k, d)`` for ``L = 1..n`` (row = S(k, 0..n))."""
    suffix = [0] * (cards + 2)
    for d in range(cards, -1, -1):
        suffix[d] = suffix[d + 1] + row[d]
    return [suffix[cards - length] for length in range(1, cards + 1)]


#: exact big-integer work allowed for one curve (``exact_work`` units; 2e9 is about 80 s
#: on one core: 52 cards x 20,000 steps fits, 2,000 cards up to about 2,300 steps)
MAX_EXACT_WORK = 2 * 10**9


def exact_work(cards: int, steps: int) -> int:
    """Work of the exact curve: each step updates ``cards`` Stirling numbers of about
    ``k log2(cards)`` bits and sums them per group, so ``~cards * steps^2 * log2(cards) /
    60`` 30-bit digit operations over ``k = 1..steps``."""
    return int(cards * steps * steps * math.log2(cards) / 60) + cards * steps


def check_work(cards: int, steps: int) -> None:
    """Refuse, before any work, a curve whose exact integers would take too long."""
    if exact_work(cards, steps) > MAX_EXACT_WORK:
        # the largest step count within the budget at this deck size
        most = int(math.sqrt(MAX_EXACT_WORK * 60 / (cards * math.log2(cards))))
        raise InputError(
            f"the exact top-to-random law after k steps needs integers of about "
            f"k log2(n) bits for each of the n cards; {cards} cards x {steps} steps is beyond "
            f"the exact range (at {cards} cards up to about {most} steps); use fewer "
            "steps ({max_steps}) or Monte Carlo assessment (shufflecheck assess)",
            argument="max_steps",
        )


def distance_curve(cards: int, max_steps: int, *, inverse: bool = False) -> MixingCurve:
    """Exact distances for ``k = 1..max_steps`` and the strong-uniform-time bound.

    ``inverse=True`` names the curve random-to-top; the values are identical. The Stirling
    numbers ``S(k, d)`` are kept for one ``k`` at a time, so memory stays ``O(cards)``
    integers however many steps are asked for.
    """
    _check(cards, max_steps)
    check_work(cards, max_steps)
    counts = _run_counts(cards)
    fact = math.factorial(cards)
    rows, bounds = [], []
    stirling = [1] + [0] * cards  # S(0, d)
    den = 1
    for k in range(1, max_steps + 1):
        # S(k, d) = d S(k-1, d) + S(k-1, d-1)
        stirling = [0] + [d * stirling[d] + stirling[d - 1] for d in range(1, cards + 1)]
        den *= cards
        tv, sep, kl = distances_from_groups(counts, _numerators(stirling, cards), den, fact)
        rows.append(DistanceRow(k, tv, sep, kl, "exact"))
        tail = float(Fraction(den - fact * stirling[cards], den))
        bounds.append(DistanceRow(k, tail, tail, None, "bound", "strong uniform time"))
    name = "random-to-top" if inverse else "top-to-random"
    return MixingCurve(
        name, cards, {}, tuple(rows), SOURCE, tuple(bounds), BOUND_SOURCE, "strong uniform time"
    )


def exact_distances(cards: int, steps: int) -> DistanceRow:
    """Exact distances after ``steps`` top-to-random (or random-to-top) moves."""
    _check(cards, steps)
    if steps == 0:
        fact = math.factorial(cards)
        return DistanceRow(0, float(1 - Fraction(1, fact)), 1.0, math.log2(fact), "exact")
    return distance_curve(cards, steps).rows[-1]


def chi_square(cards: int, steps: int) -> tuple[float, float]:
    """Exact ``(chi-square distance, largest likelihood ratio)`` after ``steps``
    top-to-random (or random-to-top) moves, from the bottom-run groups."""
    _check(cards, steps)
    fact = math.factorial(cards)
    if steps == 0:
        return chi_square_from_groups([1, fact - 1], [1, 0], 1, fact)
    row = stirling2_columns(steps, cards)[steps]
    return chi_square_from_groups(_run_counts(cards), _numerators(row, cards), cards**steps, fact)


def bottom_run_law(cards: int, steps: int) -> tuple[Fraction, ...]:
    """Exact law of ``L`` after ``steps`` random-to-top moves: ``law[L - 1]``, ``L = 1..n``.

    ``L`` is the length of the longest increasing run at the bottom of the deck. For
    top-to-random decks the same law holds for the statistic ``L`` of the inverse
    arrangement: the largest ``L`` such that the original bottom ``L`` cards are still in
    their original relative order.
    """
    _check(cards, steps)
    row = stirling2_columns(steps, cards)[steps]
    den = cards**steps
    return tuple(
        Fraction(c * m, den)
        for c, m in zip(_run_counts(cards), _numerators(row, cards), strict=True)
    )


# ---------------------------------------------------------------------------------------
# sampling


def _random_to_top_block(
    decks: int, cards: int, steps: int, rng: np.random.Generator
) -> np.ndarray:
    """Random-to-top from the reference order: drawn cards by last draw, then the rest."""
    last = np.full((decks, cards), -1, dtype=np.int64)
    rows = np.arange(decks)
    for t in range(steps):
        last[rows, rng.integers(0, cards, size=decks)] = t
    # order: most recent draw first; undrawn (-1) last, in reference order (stable sort)
    order = np.argsort(-last, axis=1, kind="stable")
    return order.astype(deck_dtype(cards))


def sample_random_to_top(
    decks: int, cards: int, steps: int = 1, *, rng: np.random.Generator | int | None = None
) -> np.ndarray:
    """``decks`` decks after ``steps`` random-to-top moves of the reference order."""
    check_integer(decks, "decks", low=0)
    check_cards(cards)
    check_integer(steps, "steps", low=0)
    generator = np.random.default_rng(rng)
    out = identity_decks(decks, cards)
    for start in range(0, decks, CHUNK_DECKS):
        stop = min(decks, start + CHUNK_DECKS)
        out[start:stop] = _random_to_top_block(stop - start, cards, steps, generator)
    return out


def sample(
    decks: int, cards: int, steps: int = 1, *, rng: np.random.Generator | int | None = None
) -> np.ndarray:
    """``decks`` decks after ``steps`` top-to-random moves of the reference order.

    Drawn as the inverse of random-to-top decks (the two walks are inverse to each other,
    step by step, so the laws after ``k`` steps are inverse to each other).
    """
    return invert(sample_random_to_top(decks, cards, steps, rng=rng))


def _insert_sources(decks: int, cards: int, rng: np.random.Generator) -> np.ndarray:
    """Source positions of one top-to-random step: the top card goes to position ``j``."""
    j = rng.integers(0, cards, size=(decks, 1))
    i = np.arange(cards)
    return np.where(i < j, i + 1, np.where(i == j, 0, i))


@dataclasses.dataclass(frozen=True)
class TopToRandom(Step):
    """Take the top card and insert it at a uniformly random position (n choices)."""

    keyword = "top-to-random"
    summary = "top card inserted at a uniformly random position"

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        sources = _insert_sources(decks.shape[0], decks.shape[1], rng)
        return np.take_along_axis(decks, sources, axis=1)

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
            return None
        return exact_distances(cards, times)

    def exact_chi_square(self, cards: int, times: int) -> tuple[float, float] | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
            return None
        return chi_square(cards, times)


@dataclasses.dataclass(frozen=True)
class RandomToTop(Step):
    """Take a uniformly random card and put it on top (the inverse of top-to-random)."""

    keyword = "random-to-top"
    summary = "a uniformly random card moved to the top"

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        p = rng.integers(0, decks.shape[1], size=(decks.shape[0], 1))
        i = np.arange(decks.shape[1])
        sources = np.where(i == 0, p, np.where(i <= p, i - 1, i))
        return np.take_along_axis(decks, sources, axis=1)

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
            return None
        return exact_distances(cards, times)

    def exact_chi_square(self, cards: int, times: int) -> tuple[float, float] | None:
        if cards > MAX_EXACT_CARDS or times > MAX_EXACT_STEPS:
            return None
        return chi_square(cards, times)


def _default_steps(cards: int) -> int:
    return math.ceil(1.5 * cards * math.log(cards))


register_model(
    ModelEntry(
        TopToRandom,
        steps_word="top-to-random moves",
        sources=(ALDOUS_DIACONIS_1986, DIACONIS_FILL_PITMAN),
        curve=distance_curve,
        spectrum=spectrum,
        default_steps=_default_steps,
        exact=f"any number of steps (Stirling numbers): k <= {MAX_EXACT_STEPS:,}, "
        f"n <= {MAX_EXACT_CARDS:,}",
    )
)
register_model(
    ModelEntry(
        RandomToTop,
        steps_word="random-to-top moves",
        sources=(ALDOUS_DIACONIS_1986, DIACONIS_FILL_PITMAN),
        curve=functools.partial(distance_curve, inverse=True),
        spectrum=spectrum,
        default_steps=_default_steps,
        exact="as top-to-random (its inverse: the same distances)",
    )
)
