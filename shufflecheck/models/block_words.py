"""Decks that start in blocks of any number of classes (all of class 0 on top, then all of
class 1, ...: the suits of a deck in new-deck order, or any deck sorted by value): the exact
chance of every word after an ``a``-shuffle, exact distances for small decks, and a Monte
Carlo estimate of the exact total variation for large ones.

**The chance of a word** (derived in this project; checked against brute force over every
label sequence, against Bayer & Diaconis [1]_ for distinct cards and against the
arrangement law summed over all orders of 9 cards). In the inverse description of an
``a``-shuffle ([1]_) every position of the new deck gets a label and the deck is sorted
stably by label; the word ``w`` arises when the sorted word is the start. For a start in
blocks that says: classes rise along the order by (label, position), i.e. the last card of
class ``v`` in that order, ``T_v = (l, p)``, comes before every card of class ``v + 1``.
Count *surjective* labellings onto ``1..j`` (``S_j(w)`` of them); then ``N_a(w) = sum_j
C(a, j) S_j(w)`` and ``P_a(w) = N_a(w) / a^n``, for every ``a`` at once. Class ``v + 1``
(``c`` cards at ``x_1 < .. < x_c``, ``m`` of them above ``p``) moves ``T`` to ``(l + d,
x_i)``; its cards must cover the new labels ``l + 1 .. l + d``, those above ``p`` cannot
take label ``l`` and those below ``x_i`` cannot take ``l + d``. With ``A, B, C, D`` the
numbers of its other cards above ``x_i`` and above ``p`` / above ``x_i`` and below ``p`` /
below ``x_i`` and above ``p`` / below both, each card either takes one of the ``d - 1``
labels that must be covered or one of its spare labels (A: ``l + d``; B: ``l`` or ``l +
d``; C: none; D: ``l``), so the number of ways is

    t(d, m, i) = sum_s e_s (d - 1)! S(c - 1 - s, d - 1),
    e_s = sum_b C(B, b) 2^b C(A + D, s - b)

(``S`` Stirling numbers of the second kind; ``d = 0`` only when every card of the class
lies below ``p`` and takes label ``l``). The weight depends on the word only through
``m``, so a dynamic programme over the classes with state ``(l, i)`` costs about
``sum_v L_v c_v^3`` operations per word (``L_v`` the cards above class ``v``; the top class
costs nothing, and the deck is taken the cheaper way up), all on non-negative numbers
(floating point, with a per-word scale).

**Exact distances** (total variation, separation, KL) sum those chances over all
``multinomial(n; c)`` words while they number at most :data:`EXACT_WORDS`.

**Large decks** (the suits of a 52-card deck): a Monte Carlo estimate of the exact total
variation from uniform words (:mod:`shufflecheck.models.word_estimate`); one sample of words
serves every number of riffles, since ``S_j`` does not depend on ``a``.

Assaf, Diaconis & Soundararajan [2]_ study these decks and give formulas of their own; the
counting here was derived independently and is checked by brute force, not against theirs.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [2] S. Assaf, P. Diaconis and K. Soundararajan, "A rule of thumb for riffle shuffling",
       Ann. Appl. Probab. 21 (2011) 843-875.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from functools import lru_cache

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.core.counting import multinomial, stirling2_row
from shufflecheck.models.word_estimate import WordEstimate, shortfall_estimate

__all__ = [
    "ESTIMATE_WORK",
    "EXACT_WORDS",
    "block_distances",
    "block_tv_estimate",
    "estimate_work",
    "label_counts",
    "word_chances",
    "word_count",
]

#: Largest number of words summed for the exact distances (4 classes of 3 cards: 369,600).
EXACT_WORDS = 400_000
#: Most multiply-adds (:func:`estimate_work`) one sample of words may take: about 10 s of
#: CPU (measured 0.16 to 0.19 ns each for six-pack shoes sorted by rank or by blackjack
#: value and a double deck sorted by suit, 0.1 ns for a six-pack sorted by suit; small decks
#: run at 0.3 ns but take well under a second).
ESTIMATE_WORK = 6 * 10**10
#: Largest class the floating-point weights hold (their largest entry nears 1e308 by 160).
MAX_CLASS = 150
#: Words processed together.
_CHUNK = 512


def _check_counts(counts: Sequence[int]) -> tuple[int, ...]:
    out = tuple(int(c) for c in counts)
    if not out or min(out) < 1:
        raise InputError(f"a start in blocks needs classes of at least one card, got {counts!r}")
    return out


def word_count(counts: Sequence[int]) -> int:
    """``multinomial(n; counts)``: the number of distinct words."""
    return multinomial(_check_counts(counts))


@lru_cache(maxsize=64)
def _weights(c: int) -> tuple[tuple[tuple[int, ...], ...], ...]:
    """``t(d, m, i)`` of the module notes, exact: indexed ``[d][m][i - 1]``."""
    stirling = [stirling2_row(u) for u in range(c)]
    out = [[[0] * c for _ in range(c + 1)] for _ in range(c + 1)]
    out[0][0][c - 1] = 1
    for m in range(c + 1):
        for i in range(1, c + 1):
            above = i - 1
            a_n = min(m, above)  # above x_i and above p
            b_n = above - a_n  # above x_i, below p
            c_n = max(0, m - i)  # below x_i, above p
            d_n = c - i - c_n  # below both
            spare = [
                sum(
                    math.comb(b_n, b) * 2**b * math.comb(a_n + d_n, s - b)
                    for b in range(min(b_n, s) + 1)
                )
                for s in range(c)
            ]
            for d in range(1, c + 1):
                f = math.factorial(d - 1)
                out[d][m][i - 1] = sum(
                    spare[s] * f * stirling[c - 1 - s][d - 1]
                    for s in range(c)
                    if d - 1 <= c - 1 - s
                )
    return tuple(tuple(tuple(row) for row in plane) for plane in out)


@lru_cache(maxsize=64)
def _float_weights(c: int) -> np.ndarray:
    """``t(d, m, i)`` in floating point, shape ``(c + 1, c + 1, c)``: the same sums as
    :func:`_weights` with numpy (every term non-negative, so each entry carries a relative
    rounding of a few ``c`` units in the last place), in about ``c^4`` operations instead of
    as many on Python integers. Classes of more than :data:`MAX_CLASS` cards overflow."""
    if c > MAX_CLASS:
        raise InputError(f"a class of {c} cards is beyond the largest of {MAX_CLASS}")
    # onto[u, k] = k! S(u, k): surjections of u cards onto k labels
    onto = np.zeros((c + 1, c + 1))
    onto[0, 0] = 1.0
    for u in range(1, c + 1):
        onto[u, 1:] = np.arange(1, c + 1) * (onto[u - 1, 1:] + onto[u - 1, :-1])
    choose = np.zeros((c + 1, c + 1))
    for p in range(c + 1):
        choose[p, : p + 1] = [math.comb(p, k) for k in range(p + 1)]
    doubled = choose * (2.0 ** np.arange(c + 1))[None, :]
    spare = np.zeros((c + 1, c, c))  # [m, i - 1, s]: e_s of the module notes
    polys: dict[tuple[int, int], np.ndarray] = {}
    for m in range(c + 1):
        for i in range(1, c + 1):
            a_n = min(m, i - 1)
            b_n = i - 1 - a_n
            d_n = c - i - max(0, m - i)
            key = (a_n + d_n, b_n)
            if key not in polys:
                polys[key] = np.convolve(choose[key[0], : key[0] + 1], doubled[b_n, : b_n + 1])
            poly = polys[key]
            spare[m, i - 1, : poly.size] = poly
    out = np.zeros((c + 1, c + 1, c))
    out[0, 0, c - 1] = 1.0
    # t(d, m, i) = sum_s e_s onto[c - 1 - s, d - 1], for d = 1..c
    out[1:] = np.einsum("mis,sd->dmi", spare, onto[c - 1 :: -1, :c])
    return out


def _check_words(words: np.ndarray, counts: tuple[int, ...]) -> np.ndarray:
    words = np.asarray(words)
    n = sum(counts)
    if words.ndim != 2 or words.shape[1] != n:
        raise InputError(f"words must be a 2-d array with {n} columns")
    if words.size and (words.min() < 0 or words.max() >= len(counts)):
        raise InputError(f"word classes must lie in 0..{len(counts) - 1}")
    for v, c in enumerate(counts):
        if words.shape[0] and not ((words == v).sum(axis=1) == c).all():
            raise InputError(f"each word needs {c} cards of class {v}")
    return words


def label_counts(word: Sequence[int], counts: Sequence[int]) -> tuple[int, ...]:
    """Exact ``S_j(w)``, ``j = 0..n``, for one word (classes in block order, class 0 on
    top of the start): surjective labellings onto ``1..j`` (module notes); ``N_a(w) =
    sum_j C(a, j) S_j``. Exact integers, for checks and small decks."""
    counts = _check_counts(counts)
    row = _check_words(np.asarray([list(word)]), counts)[0].tolist()
    n = len(row)
    where = [[i for i, x in enumerate(row) if x == v] for v in range(len(counts))]
    state: dict[tuple[int, int], int] = {(0, counts[0]): 1}  # (l, m) before class 0
    for v, c in enumerate(counts):
        table = _weights(c)
        found: dict[tuple[int, int], int] = {}
        for (top, m), g in state.items():
            for d in range(c + 1):
                for i, t in enumerate(table[d][m]):
                    if t:
                        key = (top + d, i)
                        found[key] = found.get(key, 0) + g * t
        if v + 1 == len(counts):
            out = [0] * (n + 1)
            for (top, _), f in found.items():
                out[top] += f
            return tuple(out)
        below = where[v + 1]
        state = {}
        for (top, i), f in found.items():
            m = sum(1 for x in below if x < where[v][i])
            state[(top, m)] = state.get((top, m), 0) + f
    raise AssertionError("unreachable")


def _class_work(counts: tuple[int, ...]) -> int:
    """Multiply-adds per word of the programme with class ``counts[0]`` on top: class ``v``
    costs ``(L_v + 1) (c_v + 1)^2 c_v`` with ``L_v`` the cards above it (at most one label
    each); the top class costs nothing (its step does not depend on the word)."""
    total, above = 0, counts[0]
    for c in counts[1:]:
        total += (above + 1) * (c + 1) ** 2 * c
        above += c
    return total


def _log_label_counts(words: np.ndarray, counts: tuple[int, ...]) -> np.ndarray:
    """``log S_j(w)`` for each row (``-inf`` where 0), shape ``(rows, n + 1)``.

    Turning the deck over (the word read from the bottom, classes renamed ``v -> V-1-v``)
    maps an ``a``-shuffle's labellings one to one onto those of the turned start (labels
    reversed), so ``S_j`` is the same either way up; the programme runs the way up whose
    top class is the more costly one (:func:`_class_work`)."""
    if _class_work(counts[::-1]) < _class_work(counts):
        words = (len(counts) - 1 - words)[:, ::-1]
        counts = counts[::-1]
    count, n = words.shape
    order = np.argsort(words, axis=1, kind="stable")  # positions of each class, in order
    starts = np.concatenate(([0], np.cumsum(counts)))
    c0 = counts[0]
    t0 = _float_weights(c0)
    state = np.zeros((count, n + 1, c0))
    state[:, : c0 + 1, :] = t0[:, c0, :][None, :, :]  # class 0 from the virtual (0, m = c0)
    scale = np.zeros(count)
    for v in range(1, len(counts)):
        c = counts[v]
        used = int(starts[v])  # labels so far: at most one per card
        here = order[:, starts[v - 1] : starts[v]]  # positions of class v - 1
        # m: cards of class v above each card of class v - 1
        before = np.cumsum(words == v, axis=1)
        m = np.take_along_axis(before, here, axis=1)  # (rows, c_{v-1})
        onehot = (m[:, :, None] == np.arange(c + 1)[None, None, :]).astype(float)
        grouped = state[:, : used + 1, :] @ onehot  # (rows, used + 1, c + 1)
        weights = _float_weights(c)
        state = np.zeros((count, n + 1, c))
        for d in range(c + 1):
            state[:, d : d + used + 1, :] += grouped @ weights[d]
        top = state.max(axis=(1, 2))
        state /= top[:, None, None]
        scale += np.log(top)
    with np.errstate(divide="ignore"):
        return np.log(state.sum(axis=2)) + scale[:, None]


def _log_chances(log_counts: np.ndarray, hands: int) -> np.ndarray:
    """``log P_a(w)`` from ``log S_j(w)`` (``a = hands``)."""
    n = log_counts.shape[1] - 1
    a = int(hands)
    # log(C(a, j) / a^n) = (j - n) log a + sum_{i<j} log(1 - i/a) - log j!, summed so that
    # no large logarithms cancel (lgamma(a + 1) would lose digits for a in the millions)
    j = np.arange(n + 1)
    with np.errstate(divide="ignore"):
        falling = np.concatenate(([0.0], np.cumsum(np.log1p(-np.minimum(j[:-1], a) / a))))
        scaled = (j - n) * math.log(a) + falling - np.array([math.lgamma(k + 1) for k in j])
    scaled[j > a] = -math.inf
    terms = log_counts + scaled[None, :]
    top = terms.max(axis=1)
    safe = np.where(np.isfinite(top), top, 0.0)  # a word no a-shuffle reaches: top = -inf
    with np.errstate(divide="ignore"):
        summed = np.log(np.exp(terms - safe[:, None]).sum(axis=1))
    return safe + summed


def word_chances(words: np.ndarray, counts: Sequence[int], hands: int) -> np.ndarray:
    """``P_a(w)`` for each row of ``words`` (class ``v`` in ``0..V-1``; the start holds
    ``counts[0]`` cards of class 0 on top, then ``counts[1]`` of class 1, ...) after one
    ``a``-shuffle, ``a = hands`` (``k`` riffles when ``a = 2^k``). Floating point,
    non-negative terms only (module notes)."""
    counts = _check_counts(counts)
    words = _check_words(words, counts)
    a = int(hands)
    if a < 1:
        raise InputError(f"an a-shuffle needs a >= 1, got {hands!r}")
    out = np.empty(words.shape[0])
    for begin in range(0, words.shape[0], _CHUNK):
        logs = _log_label_counts(words[begin : begin + _CHUNK], counts)
        out[begin : begin + _CHUNK] = np.exp(_log_chances(logs, a))
    return out


def _all_words(counts: tuple[int, ...]) -> np.ndarray:
    n = sum(counts)
    rows: list[np.ndarray] = [np.full(n, -1, dtype=np.int16)]
    for v, c in enumerate(counts[:-1]):
        grown = []
        for row in rows:
            free = np.flatnonzero(row < 0)
            for chosen in itertools.combinations(free.tolist(), c):
                new = row.copy()
                new[list(chosen)] = v
                grown.append(new)
        rows = grown
    out = np.array(rows)
    out[out < 0] = len(counts) - 1
    return out


@lru_cache(maxsize=4)
def _every_word(counts: tuple[int, ...]) -> np.ndarray:
    """``log S_j`` of every word (:func:`_all_words`), kept for the last few decks."""
    words = _all_words(counts)
    logs = np.concatenate(
        [
            _log_label_counts(words[begin : begin + _CHUNK], counts)
            for begin in range(0, words.shape[0], _CHUNK)
        ]
    )
    logs.flags.writeable = False
    return logs


def _f_divergence_terms(u: np.ndarray, log_t: np.ndarray) -> np.ndarray:
    """``f(1 + u)``, ``f(t) = t ln t - t + 1``, elementwise (the series near ``t = 1``, as
    :func:`shufflecheck.core.distances.kl_term`)."""
    out = np.empty_like(u)
    near = np.abs(u) < 0.25
    x = u[near]
    series = np.zeros_like(x)
    for k in range(60, 1, -1):  # Horner in u: sum_{k>=2} (-u)^k / (k (k - 1))
        series = series * (-x) + 1.0 / (k * (k - 1))
    out[near] = series * x * x
    far = ~near
    t = 1.0 + u[far]
    with np.errstate(invalid="ignore"):
        out[far] = np.where(t > 0, t * log_t[far] - t + 1.0, 1.0)
    return out


def block_distances(counts: Sequence[int], hands: int) -> tuple[float, float, float]:
    """``(total variation, separation, KL in bits)`` of the word after an ``a``-shuffle
    (``a = hands``) of a deck in blocks of ``counts``, summed over all words (at most
    :data:`EXACT_WORDS`). Floating point: ``M P(w) - 1`` comes from a logarithm with an
    absolute error near ``1e-15``, so the distances carry relative errors near ``1e-15`` while
    they are large and near ``1e-15 / TV`` once they are tiny (measured against exact
    fractions at 9 cards: ``3e-16`` after 5 riffles, ``1e-10`` after 20)."""
    counts = _check_counts(counts)
    total = word_count(counts)
    if total > EXACT_WORDS:
        raise InputError(f"{total:,} words exceed the exact sum's limit of {EXACT_WORDS:,}")
    a = int(hands)
    if a < 1:
        raise InputError(f"an a-shuffle needs a >= 1, got {hands!r}")
    log_t = _log_chances(_every_word(counts), a) + math.log(total)  # t = M P(w)
    u = np.expm1(log_t)
    tv = 0.5 * float(np.abs(u).sum()) / total
    separation = max(0.0, -float(u.min()))
    kl = float(_f_divergence_terms(u, log_t).sum()) / total
    return tv, separation, kl / math.log(2)


def estimate_work(counts: Sequence[int], samples: int) -> int:
    """Multiply-adds of one sample behind :func:`block_tv_estimate` (compare
    :data:`ESTIMATE_WORK`): ``samples`` times :func:`_class_work`, the deck taken the
    cheaper way up."""
    counts = _check_counts(counts)
    return int(samples) * min(_class_work(counts), _class_work(counts[::-1]))


@lru_cache(maxsize=8)
def _sample(counts: tuple[int, ...], samples: int, seed: int) -> tuple[np.ndarray, float]:
    """``log S_j`` of ``samples`` uniform words drawn with ``seed``, and ``log M``."""
    generator = np.random.default_rng(seed)
    base = np.repeat(np.arange(len(counts), dtype=np.int16), counts)
    words = base[np.argsort(generator.random((samples, base.size)), axis=1)]
    logs = np.concatenate(
        [
            _log_label_counts(words[begin : begin + _CHUNK], counts)
            for begin in range(0, samples, _CHUNK)
        ]
    )
    logs.flags.writeable = False
    return logs, math.log(word_count(counts))


def block_tv_estimate(
    counts: Sequence[int],
    hands: int,
    *,
    samples: int,
    seed: int = 0,
    confidence: float = 0.99,
) -> WordEstimate:
    """Estimate the total variation of the word after an ``a``-shuffle (``a = hands``) of a
    deck in blocks of ``counts``: the mean of ``(1 - M P(W))^+`` over ``samples`` uniform
    words ``W`` drawn with ``seed`` (``M`` = :func:`word_count`), each chance exact. The
    same words (kept for the last few ``(counts, samples, seed)``) serve every ``a``."""
    counts = _check_counts(counts)
    samples = int(samples)
    if samples < 2:
        raise InputError(f"an estimate needs at least 2 samples, got {samples}")
    a = int(hands)
    if a < 1:
        raise InputError(f"an a-shuffle needs a >= 1, got {hands!r}")
    logs, log_words = _sample(counts, samples, int(seed))
    ratio = np.exp(_log_chances(logs, a) + log_words)
    return shortfall_estimate(np.maximum(1.0 - ratio, 0.0), confidence)
