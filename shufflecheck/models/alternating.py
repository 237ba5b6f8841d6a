"""Two-valued decks that start alternating (``0, 1, 0, 1, ...``, the second start of
Conger & Viswanath): the exact chance of every word after an ``a``-shuffle, exact distances
for small decks, and a Monte Carlo estimate of the exact total variation for large ones.

**The chance of a word** (derived in this project, checked against brute force over every
label sequence of the a-shuffle). In the inverse description of an ``a``-shuffle ([1]_)
every position of the new deck gets a label in ``0..a-1`` and the deck is sorted stably by
label; the word ``w`` (the class at each position) arises when the sorted word is the
start. Give label ``d`` the *phase* ``e_d``, the parity of the number of cards with smaller
labels: the cards of label ``d``, read down the deck, must then alternate starting with
class ``e_d``, and that is all. Scan ``w`` from the top with ``N_0`` labels of phase 0 and
``N_1`` of phase 1 (``N_0 + N_1 = a``, each label's class possibly empty): ``z`` labels of
phase 0 have taken an odd number of cards and ``o = z + h`` of phase 1 (``h`` the number of
class-1 cards minus class-0 cards seen so far). A card of class 0 goes to an even label of
phase 0 (``N_0 - z`` ways, ``z`` grows) or to an odd label of phase 1 (``o`` ways); a card
of class 1 to an odd label of phase 0 (``z`` ways) or an even label of phase 1 (``N_1 -
o`` ways). The labels in order form a walk of phases from 0 that turns at every odd label;
counting the walks with ``f`` turns each way and dividing by the ``C(N_0, f) C(N_1, f)``
choices of which labels are odd (every choice is equally likely by symmetry) leaves a
factor ``f / N_1`` for an even deck (``f_0 / N_0`` with ``f_0`` odd labels of phase 0 for an
odd deck, which ends in phase 1). So ``P_a(w)`` is a sum over ``N_0`` of a product of
``n`` small matrices in ``z``: ``O(a n^2)`` operations per word, all on non-negative
numbers, computed in floating point (scaled by ``1/a`` per card).

**Exact distances** (total variation, separation, KL) sum that chance over all ``C(n,
n/2)`` words while they number at most :data:`EXACT_WORDS`.

**Large decks** (a 52-card colour deck): the total variation is ``E_U[(1 - M P(W))^+]``
for a uniformly random word ``W`` (``M`` words), estimated from uniform words with each
word's exact chance (:mod:`shufflecheck.models.word_estimate`: a normal-theory interval, or
the exact binomial bound when every sampled word gives the same end of ``[0, 1]``). Every
estimate is labelled as such; the rigorous upper bound stays the distinct-card distance.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [2] M. Conger and D. Viswanath, "Riffle shuffles of decks with repeated cards", Ann.
       Probab. 34 (2006) 804-819.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.core.distances import kl_term
from shufflecheck.models.word_estimate import WordEstimate, shortfall_estimate

__all__ = [
    "ESTIMATE_SAMPLES",
    "ESTIMATE_WORK",
    "EXACT_WORDS",
    "alternating_class",
    "alternating_distances",
    "alternating_tv_estimate",
    "estimate_work",
    "word_chances",
]

#: Largest number of words summed for the exact distances (18 cards: 48,620 words).
EXACT_WORDS = 50_000
#: Uniform words drawn by default for a Monte Carlo estimate of the total variation.
ESTIMATE_SAMPLES = 2_000
#: Most multiply-adds (``(a + 1) n (n/2 + 1)`` per word, times the words) one estimate may
#: take: about 15 s of CPU (measured 4 to 5 ns each at 52 cards).
ESTIMATE_WORK = 3 * 10**9
#: Words processed together (keeps the label-by-word arrays in cache).
_CHUNK = 8


def alternating_class(values: Sequence[int]) -> int | None:
    """The class on top when ``values`` alternate between exactly two classes (``x, y, x,
    y, ...``), else None."""
    vals = [int(v) for v in values]
    if len(vals) < 2 or len(set(vals)) != 2:
        return None
    if any(vals[i] == vals[i + 1] for i in range(len(vals) - 1)):
        return None
    return vals[0]


def word_chances(words: np.ndarray, hands: int) -> np.ndarray:
    """``P_a(w)`` for each row of ``words`` (0/1, class 0 on top of the alternating start:
    ``0, 1, 0, ...``) after one ``a``-shuffle, ``a = hands`` (an ``a``-shuffle is ``k``
    riffles when ``a = 2^k``). Floating point, non-negative terms only (module notes)."""
    words = np.asarray(words)
    if words.ndim != 2 or not np.isin(words, (0, 1)).all():
        raise InputError("words must be a 2-d array of 0 and 1")
    count, n = words.shape
    zeros = (n + 1) // 2
    if count and not (words.sum(axis=1) == n - zeros).all():
        raise InputError(f"each word needs {zeros} cards of class 0 and {n - zeros} of class 1")
    a = int(hands)
    if a < 1:
        raise InputError(f"an a-shuffle needs a >= 1, got {hands!r}")
    out = np.empty(count)
    chunk = 2 * _CHUNK if a <= 32 else _CHUNK  # measured: small arrays stay in cache
    for start in range(0, count, chunk):
        out[start : start + chunk] = _chances(words[start : start + chunk], a, zeros)
    return out


def _chances(words: np.ndarray, a: int, zeros: int) -> np.ndarray:
    count, n = words.shape
    scale = 1.0 / a
    down = (words == 0).astype(float)  # a card of class 0
    steps = np.where(words == 1, 1, -1)
    height = np.zeros((count, n))
    height[:, 1:] = np.cumsum(steps, axis=1)[:, :-1]  # h before each card
    labels0 = np.arange(a + 1, dtype=float)[:, None, None]  # N_0
    labels1 = a - labels0  # N_1
    z = np.arange(zeros + 1, dtype=float)[None, None, :]
    grow = (labels0 - z) * scale  # to z + 1 on a card of class 0
    shrink = z * scale  # to z - 1 on a card of class 1
    state = np.zeros((a + 1, count, zeros + 1))
    state[:, :, 0] = 1.0
    stay = np.empty_like(state)
    moved = np.empty_like(state)
    for t in range(n):
        d = down[:, t][None, :, None]
        u = 1.0 - d
        o = z + height[:, t][None, :, None]
        # stay: a card of class 0 to an odd label of phase 1 (o ways), of class 1 to an even
        # label of phase 1 (N_1 - o ways); move: z + 1 (N_0 - z ways) or z - 1 (z ways)
        np.multiply(state, (u * labels1 + (d - u) * o) * scale, out=stay)
        np.multiply(state, grow * d, out=moved)
        stay[:, :, 1:] += moved[:, :, :-1]
        np.multiply(state, shrink * u, out=moved)
        stay[:, :, :-1] += moved[:, :, 1:]
        state, stay = stay, state
    f = np.arange(zeros + 1, dtype=float)[None, None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        if n % 2 == 0:
            # f turns each way: f / N_1; no turn only with no label of phase 1
            factor = np.where(labels1 > 0, f / np.maximum(labels1, 1), (f == 0) * 1.0)
        else:
            # f_0 = f_1 + 1 turns: f_0 / N_0 (the walk ends in phase 1)
            factor = np.where(labels0 > 0, f / np.maximum(labels0, 1), 0.0)
    return (state * factor).sum(axis=(0, 2))


def _all_words(n: int) -> np.ndarray:
    ones = n // 2
    rows = []
    for chosen in itertools.combinations(range(n), ones):
        row = np.zeros(n, dtype=np.int8)
        row[list(chosen)] = 1
        rows.append(row)
    return np.array(rows)


def alternating_distances(n: int, hands: int) -> tuple[float, float, float]:
    """``(total variation, separation, KL in bits)`` of the word after an ``a``-shuffle
    (``a = hands``) of ``n`` cards alternating from class 0, summed over all words
    (at most :data:`EXACT_WORDS`). Floating point: each chance has relative rounding
    below ``1e-13``."""
    n = int(n)
    words = math.comb(n, n // 2)
    if words > EXACT_WORDS:
        raise InputError(f"{words:,} words exceed the exact sum's limit of {EXACT_WORDS:,}")
    chances = word_chances(_all_words(n), hands)
    uniform = 1.0 / words
    tv = 0.5 * float(np.abs(chances - uniform).sum())
    separation = max(0.0, 1.0 - words * float(chances.min()))
    kl = 0.0
    for p in chances.tolist():
        t = p * words
        kl += kl_term(uniform, t - 1, math.log(t)) if t > 0 else uniform
    return tv, separation, kl / math.log(2)


def estimate_work(n: int, hands: int, samples: int) -> int:
    """Multiply-adds of :func:`alternating_tv_estimate` (compare :data:`ESTIMATE_WORK`)."""
    return (int(hands) + 1) * int(n) * ((int(n) + 1) // 2 + 1) * int(samples)


def alternating_tv_estimate(
    n: int,
    hands: int,
    *,
    samples: int = ESTIMATE_SAMPLES,
    rng: np.random.Generator | int | None = 0,
    confidence: float = 0.99,
) -> WordEstimate:
    """Estimate the total variation of the word after an ``a``-shuffle (``a = hands``) of
    ``n`` cards alternating from class 0: the mean of ``(1 - M P(W))^+`` over ``samples``
    uniformly random words ``W`` (``M = C(n, n/2)``), each chance exact (:func:`word_chances`)."""
    n = int(n)
    samples = int(samples)
    if samples < 2:
        raise InputError(f"an estimate needs at least 2 samples, got {samples}")
    generator = np.random.default_rng(rng)
    base = np.zeros(n, dtype=np.int8)
    base[n - n // 2 :] = 1
    words = base[np.argsort(generator.random((samples, n)), axis=1)]
    ratio = word_chances(words, hands) * float(math.comb(n, n // 2))
    return shortfall_estimate(np.maximum(1.0 - ratio, 0.0), confidence)
