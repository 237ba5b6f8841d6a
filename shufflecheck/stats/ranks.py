"""Sequential ranks of a deck: statistics whose law under a uniform deck is exactly a product.

Read the deck card by card *in reference order*: first where card 0 lies, then card 1, and
so on. When card ``v + 1`` is placed, ``m = n - 1 - v`` positions are still free (those
of cards ``v + 1, ..., n - 1``). Its **rank** ``R_v`` counts the free positions met going
down the deck from card ``v`` (round the circle: after the bottom comes the top), up to
and including card ``v + 1``'s own position, so ``1 <= R_v <= m``. Under a uniformly
random deck, card ``v + 1`` lies in each free position with the same chance whatever was
seen before, so ``R_0, ..., R_{n-2}`` are **independent and uniform** on ``1..m_v``: the
deck (with the position of card 0) is a bijection onto these rank sequences. Any sum of
functions of the ranks therefore has an exact law: a product of small known laws.

Ranks read the deck around a circle, so a cut (a rotation) changes none of them. A strip
(packets reversed in order) changes only the ranks of pairs ``v, v + 1`` on either side of
a packet boundary. After riffles, card ``v + 1`` usually follows card ``v`` closely in the
same packet: small ranks.

* :func:`short_rises`: ``#{v : R_v <= k_v}`` with the window ``k_v = ceil(w m_v / (n - 1))``
  (at least 1): card ``v + 1`` lies within about ``w`` positions below card ``v``, counted
  in free positions. Its law is a sum of independent Bernoulli(``k_v / m_v``).
* :class:`RankScore`: a likelihood-ratio score ``sum_v h_v(bin of R_v)`` whose weights are
  fitted on simulated decks (bins ``{1}, {2}, {3, 4}, {5..8}, ...``); its law under a
  uniform deck is the product of the per-rank laws whatever the weights.

The counts ``L_j = #{u < j : card u lies above card j}`` that give the ranks come from the
placed positions held as bits of ``ceil(n/64)`` 64-bit words per deck
(:func:`~shufflecheck.stats.statistics.smaller_above`).

References
----------
.. [1] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23 (sequential guesses whose successes are
       independent under a uniform deck).
.. [2] C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial limits illustrated
       in the case of the binomial", Biometrika 26 (1934) 404-413.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cache

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.stats.nulls import Law
from shufflecheck.stats.statistics import as_decks, card_positions, smaller_above

__all__ = [
    "RankScore",
    "fit_rank_score",
    "inverse_ranks",
    "rank_bins",
    "short_rise_windows",
    "short_rises",
    "short_rises_law",
]

_ONE = np.uint64(1)
#: a fitted score's weights are integers up to this size (the largest log ratio maps here)
LEVELS = 16
#: log ratios are clipped to this many nats either way
CLIP = 6.0
#: relative and absolute margins added to uniform tails computed in double precision
TAIL_MARGIN = 1e-9
TAIL_FLOOR = 1e-300


def inverse_ranks(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """The ranks ``R_v``, ``v = 0..n-2``, of every deck (``int32``, shape ``(decks, n-1)``).

    ``R_v = 1 + (s_{v+1} - L_{v+1}) - (s_v - L_v) + [s_{v+1} < s_v] m_v`` with ``s_v`` the
    position of card ``v`` and ``L_j`` the number of cards ``u < j`` above card ``j``
    (the free positions below a position ``p`` are ``p`` minus the placed ones).
    """
    decks = as_decks(relative, name="relative decks") if check else np.asarray(relative)
    count, n = decks.shape
    if n < 2:
        return np.zeros((count, 0), dtype=np.int32)
    out = np.empty((count, n - 1), dtype=np.int32)
    chunk = 1 << 12  # keeps the word tables in cache
    free = n - 1 - np.arange(n - 1)
    for start in range(0, count, chunk):
        where = card_positions(decks[start : start + chunk], check=False)
        below = where - smaller_above(
            where
        )  # free positions below card j, at the time it is placed
        rank = 1 + below[:, 1:] - below[:, :-1] + (where[:, 1:] < where[:, :-1]) * free
        out[start : start + chunk] = rank
    return out


# --------------------------------------------------------------------------- short rises


@cache
def short_rise_windows(cards: int, width: int) -> tuple[int, ...]:
    """``k_v = max(1, ceil(w m_v / (n - 1)))`` (at most ``m_v``) for ``v = 0..n-2``."""
    if isinstance(width, bool) or not isinstance(width, int) or width < 1:
        raise InputError(f"the short-rise width must be an integer >= 1, got {width!r}")
    n = cards
    out = []
    for v in range(n - 1):
        m = n - 1 - v
        out.append(min(m, max(1, -(-width * m // (n - 1)))))
    return tuple(out)


def short_rises(ranks: np.ndarray, width: int) -> np.ndarray:
    """Short rises per deck from :func:`inverse_ranks`: ``#{v : R_v <= k_v}`` (``int64``)."""
    n = ranks.shape[1] + 1
    if n < 2:
        return np.zeros(ranks.shape[0], dtype=np.int64)
    window = np.asarray(short_rise_windows(n, width), dtype=ranks.dtype)
    return np.count_nonzero(ranks <= window, axis=1).astype(np.int64)


@cache
def short_rises_law(cards: int, width: int) -> Law:
    """Exact law of :func:`short_rises` under a uniform deck: a sum of independent
    Bernoulli(``k_v / m_v``), counted over the ``(n - 1)!`` equally likely rank sequences
    (the polynomial ``prod_v ((m_v - k_v) + k_v x)`` in exact integers)."""
    if cards < 2:
        return Law((1,), 1)
    poly = [1]
    for v, k in enumerate(short_rise_windows(cards, width)):
        m = cards - 1 - v
        new = [0] * (len(poly) + 1)
        for i, c in enumerate(poly):
            new[i] += c * (m - k)
            new[i + 1] += c * k
        poly = new
    return Law.from_counts(poly, math.factorial(cards - 1))


# --------------------------------------------------------------------------- fitted score


def rank_bins(cards: int) -> np.ndarray:
    """Bin of each rank ``R = 1..n-1`` (index ``R``): ``bit_length(R - 1)``, i.e. bins
    ``{1}, {2}, {3, 4}, {5..8}, ...``; entry 0 is unused."""
    ranks = np.arange(max(cards, 2))
    out = np.zeros(ranks.size, dtype=np.int64)
    out[1:] = [int(r - 1).bit_length() for r in ranks[1:]]
    return out


def _bin_sizes(cards: int) -> np.ndarray:
    """``sizes[v, b]``: ranks in ``1..m_v`` that fall in bin ``b``."""
    bins = rank_bins(cards)
    width = int(bins.max()) + 1 if cards > 1 else 1
    sizes = np.zeros((cards - 1, width), dtype=np.int64)
    for v in range(cards - 1):
        m = cards - 1 - v
        sizes[v] = np.bincount(bins[1 : m + 1], minlength=width)
    return sizes


def _groups(cards: int) -> np.ndarray:
    """Group of each ``v`` for fitting: ``bit_length(m_v) - 1`` (similar free counts)."""
    return np.array([int(cards - 1 - v).bit_length() - 1 for v in range(cards - 1)])


def rank_bin_counts(ranks: np.ndarray) -> np.ndarray:
    """``counts[g, b]`` of the ranks of many decks, by fitting group and bin."""
    n = ranks.shape[1] + 1
    bins = rank_bins(n)[ranks]
    groups = np.broadcast_to(_groups(n), ranks.shape)
    width = int(rank_bins(n).max()) + 1
    top = int(_groups(n).max()) + 1 if n > 1 else 1
    flat = np.bincount((groups * width + bins).ravel(), minlength=top * width)
    return flat.reshape(top, width)


@dataclass(frozen=True)
class RankScore:
    """A fitted score ``sum_v weights[v, bin(R_v)]`` (integers proportional to the fitted
    log ratios, the largest ``LEVELS``),
    with the exact law of the score under a uniform deck (``uniform_tail[k]`` = chance of a
    score ``>= offset + k``, an upper bound in double precision) and the event
    ``score >= threshold`` chosen from the fit."""

    cards: int
    weights: np.ndarray  # (n - 1, bins) int64
    offset: int
    uniform_tail: np.ndarray
    threshold: int
    predicted: float  # predicted chance of the event under the fitted law (for the choice)

    def scores(self, ranks: np.ndarray) -> np.ndarray:
        bins = rank_bins(self.cards)[ranks]
        rows = np.arange(self.cards - 1)
        return self.weights[rows, bins].sum(axis=1)

    def uniform_probability(self) -> float:
        """Upper bound on the chance of ``score >= threshold`` under a uniform deck."""
        k = self.threshold - self.offset
        if k <= 0:
            return 1.0
        if k >= self.uniform_tail.size:
            return TAIL_FLOOR
        return min(1.0, float(self.uniform_tail[k]) * (1 + TAIL_MARGIN) + TAIL_FLOOR)


def _law_of_sum(values: np.ndarray, probabilities: np.ndarray) -> tuple[int, np.ndarray]:
    """(offset, pmf) of ``sum_v X_v`` with ``P(X_v = values[v, b]) = probabilities[v, b]``
    (independent), by direct convolution in double precision (all terms positive)."""
    low = int(values.min(axis=1).sum())
    pmf = np.ones(1)
    for v in range(values.shape[0]):
        base = int(values[v].min())
        span = int(values[v].max()) - base + 1
        step = np.zeros(span)
        np.add.at(step, values[v] - base, probabilities[v])
        pmf = np.convolve(pmf, step)
    return low, pmf


def fit_rank_score(counts: np.ndarray, cards: int) -> RankScore | None:
    """Fit weights ``log(fitted / uniform)`` per bin from ``counts`` (:func:`rank_bin_counts`
    of the fitting decks), and choose the threshold that maximises the predicted excess
    ``P(score >= t) - U(score >= t)``. None when the deck is too small to have ranks."""
    if cards < 3 or counts.sum() == 0:
        return None
    sizes = _bin_sizes(cards)
    uniform = sizes / sizes.sum(axis=1, keepdims=True)
    groups = _groups(cards)
    fitted = np.zeros_like(uniform)
    logs = np.zeros(uniform.shape)
    for g in range(counts.shape[0]):
        members = groups == g
        if not members.any():
            continue
        possible = sizes[members].sum(axis=0) > 0
        observed = counts[g] + 0.5 * possible
        share = observed / observed.sum()
        base = uniform[members].mean(axis=0)
        ratio = np.where(possible, share / np.where(base > 0, base, 1.0), 1.0)
        logs[members] = np.clip(np.log(np.where(ratio > 0, ratio, 1.0)), -CLIP, CLIP)
        guess = np.where(uniform[members] > 0, uniform[members] * ratio, 0.0)
        fitted[members] = guess / guess.sum(axis=1, keepdims=True)
    logs = np.where(sizes > 0, logs, 0.0)
    largest = float(np.abs(logs).max())
    if largest == 0:
        return None
    weights = np.rint(logs * (LEVELS / largest)).astype(np.int64)
    offset, uniform_pmf = _law_of_sum(weights, uniform)
    other, fitted_pmf = _law_of_sum(weights, fitted)
    assert other == offset
    uniform_tail = np.cumsum(uniform_pmf[::-1])[::-1]
    fitted_tail = np.cumsum(fitted_pmf[::-1])[::-1]
    excess = fitted_tail - uniform_tail
    best = int(np.argmax(excess))
    return RankScore(cards, weights, offset, uniform_tail, offset + best, float(fitted_tail[best]))
