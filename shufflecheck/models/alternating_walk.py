"""A rigorous lower bound on the total variation of an alternating two-valued start, from
the exact law of the highest and lowest points of the word's walk.

Read a word down the deck as a walk ``h``: up one step for a card of class 1, down one for
class 0, from ``h = 0``. Its *extremes* are the highest and lowest points, ``(max h, min
h)``, a function of the word, so the total variation of their law after an ``a``-shuffle
is a lower bound on the word's own (data processing: a function of a law is never farther
from the function of the uniform law). Both laws here are exact:

* **after the shuffle**: the word's chance of :mod:`shufflecheck.models.alternating` is a
  sum, over the number ``N_0`` of labels of phase 0, of products of small weights along the
  word with a hidden count ``z``. Summing it over all words with the walk's position below
  its running maximum (``up = max h - h``) and above its running minimum (``down = h - min
  h``) carried along gives the law of the extremes (``h`` itself is fixed by the number of
  class-1 cards so far). Each card of an ``a``-shuffle comes from one of ``a`` packets, and
  each packet reads an alternating run of the start, so on any stretch of the new deck a
  packet gives at most one card more of one class than of the other: the walk's range
  ``max h - min h`` is at most ``a``, and the programme only holds such states;
* **uniform**: the same programme with every word weighted ``1/C(n, n/2)`` (the classical
  ballot-type count of walks between two barriers; checked against the method of images in
  the tests).

Beyond the work limit for the shuffled law, the uniform chance of a walk wider than ``a``
alone is still a lower bound (the shuffle never gives such a word), and costs only the
uniform programme: for a six-pack colour shoe (312 cards) after 4 and 5 riffles it is what
is left.

Nearly all the distance of an alternating start after few riffles sits in these extremes:
an interleaving of ``a`` alternating runs cannot wander far. For 18 cards the bound is
0.5148 of the exact 0.5401 after 2 riffles and 0.0748 of 0.0767 after 4; for 52 cards it is
0.9909, 0.639 and 0.288 after 2, 3 and 4 riffles, where the Monte Carlo estimates of the
exact value are 0.989, 0.671 and 0.314 (measured in this project).

Work: about ``(a + 1) n (n/2 + 1) min(a, n/2)^2 / 2`` state updates (:func:`walk_work`),
bounded by :data:`WALK_WORK`; at 52 cards 0.3 s after 4 riffles and 1.9 s after 5
(measured). The sums are of non-negative floating-point terms (the tests find both laws
within ``1e-13`` of exact sums); the bound is lowered by :data:`ROUNDING` so that it stays a
lower bound. Derived in this project; checked against brute force over every label
sequence and against the per-word chances summed over all words.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313 (the a-shuffle as labels on positions).
.. [2] M. Conger and D. Viswanath, "Riffle shuffles of decks with repeated cards", Ann.
       Probab. 34 (2006) 804-819 (the alternating start).
.. [3] W. Feller, *An Introduction to Probability Theory and Its Applications*, vol. 1,
       3rd ed., Wiley, 1968 (walks between two barriers by repeated reflection).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from shufflecheck.common.errors import InputError

__all__ = [
    "ROUNDING",
    "WALK_WORK",
    "WalkBound",
    "extremes_law",
    "uniform_extremes_law",
    "uniform_work",
    "walk_tv_lower",
    "walk_work",
]

#: Most state updates (:func:`walk_work`) one bound may take: about 2.5 s of CPU (measured
#: at 52 cards: 5 riffles, 4.9e8 updates, 1.9 s; 6 riffles, 9.7e8, 4.8 s).
WALK_WORK = 6 * 10**8
#: Taken off the bound for floating-point rounding (far above the worst case of the sums).
ROUNDING = 1e-9


@dataclass(frozen=True)
class WalkBound:
    """``lower <= TV`` for the word after an ``hands``-shuffle of ``cards`` cards that
    alternate; ``uniform_outside`` is the uniform chance of a walk whose range exceeds the
    number of packets (a word the shuffle cannot give). ``whole`` says the bound compares
    the two laws of the extremes; otherwise it is ``uniform_outside`` alone (the shuffled
    law was beyond the work limit)."""

    lower: float
    cards: int
    hands: int
    uniform_outside: float
    whole: bool = True


def _check(n: int, a: int) -> tuple[int, int]:
    n, a = int(n), int(a)
    if n < 2:
        raise InputError(f"an alternating deck needs at least 2 cards, got {n}")
    if a < 1:
        raise InputError(f"an a-shuffle needs a >= 1, got {a}")
    return n, a


def _span(n: int, a: int | None) -> int:
    """Largest walk range held: ``a`` (the shuffle's limit) or what ``n`` cards allow."""
    most = n // 2 + 1  # a walk of n/2 up-steps and about n/2 down-steps
    return most if a is None else min(int(a), most)


def walk_work(n: int, hands: int) -> int:
    """State updates of :func:`extremes_law` (compare :data:`WALK_WORK`)."""
    n, a = _check(n, hands)
    span = _span(n, a)
    return (a + 1) * n * (n // 2 + 1) * (min(a, (n + 1) // 2) + 1) * (span + 1) ** 2 // 2


def _step(
    state: np.ndarray, zero: np.ndarray, one: np.ndarray, span: int, lo: int, prune: bool
) -> np.ndarray:
    """Move ``state[c1, z, up, down]`` by one card, given the weighted states ``zero`` (the
    card is of class 0: the walk steps down) and ``one`` (class 1: up, and c1 grows) of the
    counts ``c1 = lo, lo + 1, ...``; with ``prune``, states whose range ``up + down`` passes
    ``span`` are dropped (without it no walk of the deck can pass it)."""
    new = np.zeros_like(state)
    hi = lo + zero.shape[0]
    # class 0, down a step: up + 1; down - 1, or stays 0 at a new minimum
    new[lo:hi, :, 1:, :-1] += zero[:, :, :-1, 1:]
    new[lo:hi, :, 1:, 0] += zero[:, :, :-1, 0]
    # class 1, up a step: down + 1; up - 1, or stays 0 at a new maximum
    rise = one[: state.shape[0] - lo - 1]
    top = lo + 1 + rise.shape[0]
    new[lo + 1 : top, :, :-1, 1:] += rise[:, :, 1:, :-1]
    new[lo + 1 : top, :, 0, 1:] += rise[:, :, 0, :-1]
    if prune:
        size = state.shape[2]
        up = np.arange(size)[:, None]
        down = np.arange(size)[None, :]
        new[:, :, up + down > span] = 0.0
    return new


def _extremes(state: np.ndarray, h_end: int) -> dict[tuple[int, int], float]:
    """The final ``(max h, min h)`` of the states ``state[up, down]`` at height ``h_end``."""
    out: dict[tuple[int, int], float] = {}
    for up, down in zip(*np.nonzero(state), strict=True):
        out[(int(up) + h_end, h_end - int(down))] = float(state[up, down])
    return out


def extremes_law(n: int, hands: int) -> dict[tuple[int, int], float]:
    """Law of ``(max h, min h)`` of the walk of the word after an ``a``-shuffle (``a =
    hands``) of ``n`` cards alternating from class 0 (``0, 1, 0, ...``): a dictionary of the
    extremes with positive chance (module notes)."""
    n, a = _check(n, hands)
    zeros = (n + 1) // 2
    ones = n - zeros
    span = _span(n, a)
    size = span + 1
    prune = span < max(zeros, ones)  # else no walk of the deck is wider than span
    scale = 1.0 / a
    c1 = np.arange(ones + 1)
    total = np.zeros((size, size))
    for labels0 in range(a + 1):
        labels1 = a - labels0
        top = min(labels0, zeros)  # z: labels of phase 0 holding an odd number of cards
        z = np.arange(top + 1, dtype=float)[None, :, None, None]
        state = np.zeros((ones + 1, top + 1, size, size))
        state[0, 0, 0, 0] = 1.0
        for t in range(n):
            lo, hi = max(0, t - zeros), min(t, ones) + 1  # the counts c1 possible so far
            band = state[lo:hi]
            h = (2 * c1[lo:hi] - t).astype(float)[:, None, None, None]
            room = ((t - c1[lo:hi]) < zeros)[:, None, None, None]  # class 0 still to come
            odd1 = z + h  # labels of phase 1 holding an odd number of cards
            # class 0: to an odd label of phase 1 (z stays) or an even one of phase 0 (z + 1)
            zero = band * (np.maximum(odd1, 0.0) * scale)
            # class 1: to an even label of phase 1 (z stays) or an odd one of phase 0 (z - 1)
            one = band * (np.maximum(labels1 - odd1, 0.0) * scale)
            if top:
                zero[:, 1:] += band[:, :-1] * ((labels0 - z[:, :-1]) * scale)
                one[:, :-1] += band[:, 1:] * (z[:, 1:] * scale)
            zero *= room
            state = _step(state, zero, one, span, lo, prune)
        f = np.arange(top + 1, dtype=float)
        if n % 2 == 0:  # f turns each way: f / N_1 (no turn only with no label of phase 1)
            factor = f / labels1 if labels1 > 0 else (f == 0) * 1.0
        else:  # f_0 = f_1 + 1 turns: f_0 / N_0
            factor = f / labels0 if labels0 > 0 else 0.0 * f
        total += np.tensordot(factor, state[ones], axes=(0, 0))
    return _extremes(total, ones - zeros)


def uniform_extremes_law(n: int, span: int | None = None) -> dict[tuple[int, int], float]:
    """Law of ``(max h, min h)`` for a uniformly random word of ``n`` cards (``(n+1)//2`` of
    class 0), restricted to walks of range at most ``span`` (all walks when None)."""
    n, _ = _check(n, 1)
    zeros = (n + 1) // 2
    ones = n - zeros
    held = _span(n, None) if span is None else min(int(span), _span(n, None))
    size = held + 1
    c1 = np.arange(ones + 1)
    state = np.zeros((ones + 1, 1, size, size))
    state[0, 0, 0, 0] = 1.0 / math.comb(n, ones)
    for t in range(n):
        room = ((t - c1) < zeros)[:, None, None, None]
        state = _step(state, state * room, state, held, 0, held < max(zeros, ones))
    return _extremes(state[ones, 0], ones - zeros)


def uniform_work(n: int, hands: int) -> int:
    """State updates of :func:`uniform_extremes_law` held to ranges of at most ``hands``."""
    n, a = _check(n, hands)
    return n * (n // 2 + 1) * (_span(n, a) + 1) ** 2 // 2


def _wide_tail(n: int, a: int) -> float:
    """An upper bound on the uniform chance of a walk wider than ``a`` (a tiny value says
    the uniform programme is not worth running): a range above ``a`` needs a maximum or a
    minus minimum of at least ``m = ceil((a + 1) / 2)``, each of chance at most
    ``C(n, n//2 + m) / C(n, n//2)`` by reflection."""
    m = (a + 2) // 2
    ones = n // 2
    if ones + m > n:
        return 0.0
    return 2.0 * math.comb(n, ones + m) / math.comb(n, ones)


def walk_tv_lower(n: int, hands: int, *, work: int = WALK_WORK) -> WalkBound | None:
    """A rigorous lower bound on the total variation of the word after an ``a``-shuffle
    (``a = hands``) of ``n`` alternating cards: the total variation between the exact laws
    of the walk's extremes (module notes), less :data:`ROUNDING`. When the shuffled law
    would take more than ``work`` state updates, the uniform chance of a walk wider than
    ``a`` alone (words the shuffle never gives; ``whole`` False), if that is positive and
    within ``work``; else None."""
    n, a = _check(n, hands)
    if walk_work(n, a) <= work:
        shuffled = extremes_law(n, a)
    elif uniform_work(n, a) <= work and _wide_tail(n, a) > ROUNDING:
        shuffled = None
    else:
        return None
    uniform = uniform_extremes_law(n, _span(n, a))
    outside = max(0.0, 1.0 - sum(uniform.values()))  # walks of range above a: chance 0
    if shuffled is None:
        lower = outside - ROUNDING
        return WalkBound(lower, n, a, outside, whole=False) if lower > 0 else None
    gap = sum(abs(shuffled.get(k, 0.0) - uniform.get(k, 0.0)) for k in shuffled | uniform)
    lower = max(0.0, min(1.0, 0.5 * (gap + outside)) - ROUNDING)
    return WalkBound(lower, n, a, outside)
