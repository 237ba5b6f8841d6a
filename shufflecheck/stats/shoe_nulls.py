"""Exact null laws for shoes: statistics of a uniformly random arrangement of a multiset.

A shoe of ``k`` packs, or any deck with repeated cards, is a *multiset*: ``counts[v]``
cards of class ``v`` (a card code, a value, a suit). Under the null hypothesis every
arrangement of the multiset (a *word* with ``counts[v]`` letters ``v``) is equally likely;
there are ``multinomial(n; counts)`` of them. Each law here counts words in exact Python
integers and returns a :class:`~shufflecheck.stats.nulls.Law` over that total:

* :func:`value_successions_law` -- positions ``i`` with ``class(i+1) = class(i) + 1``
  (a card followed by one of the next value), by inclusion-exclusion over marked
  successions counted with a transfer over the values;
* :func:`matches_law` -- positions holding the same class in two independent uniform
  words (the sequential test between consecutive shoes): the rook polynomial of a union
  of complete boards ([2]_), a multiset form of the rencontres numbers;
* :func:`zone_maximum_law` -- the largest number of *marked* cards (e.g. cards whose code
  occurs in a segment of the reference shoe) in one of several fixed zones of the shoe:
  the marked cards occupy a uniform random set of positions, so the zone counts are
  multivariate hypergeometric;
* :func:`greedy_guessing_law` -- correct guesses in the guessing game with complete
  feedback when the player always names a most frequent remaining class (the optimal
  strategy under the null, [1]_), by dynamic programming over the remaining counts;
  :func:`greedy_guessing_bracket` -- the same law to within a stated bound (a
  :class:`~shufflecheck.stats.nulls.LawBracket`) where the exact programme is out of reach;
* runs of equal classes are :func:`shufflecheck.stats.nulls.runs_law`.

References
----------
.. [1] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23 (the greedy strategy is optimal; the ESP deck
       of 5 x 5 symbols).
.. [2] J. Riordan, *An Introduction to Combinatorial Analysis*, Wiley, 1958, ch. 7-8 (rook
       polynomials; permutations with restricted positions).
.. [3] R. P. Stanley, *Enumerative Combinatorics*, vol. 1, 2nd ed., Cambridge University
       Press, 2012, section 2.1 (inclusion-exclusion).
.. [4] W. Feller, *An Introduction to Probability Theory and Its Applications*, vol. 1,
       3rd ed., Wiley, 1968, ch. III.1-2 (the reflection principle for lattice paths).
.. [5] N. J. Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed., SIAM, 2002,
       ch. 3-4 (rounding error bounds ``gamma_n = n u / (1 - n u)`` for sums and products).
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Sequence
from fractions import Fraction
from functools import cache

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.core import counting
from shufflecheck.core.counting import poly_multiply
from shufflecheck.stats.nulls import Law, LawBracket, cycles_law

__all__ = [
    "GREEDY_BRACKET_STATES",
    "GREEDY_BRACKET_THRESHOLD",
    "GREEDY_STATE_BUDGET",
    "GuessingOutOfReach",
    "greedy_bracket_fits",
    "greedy_guessing_bracket",
    "greedy_guessing_law",
    "greedy_guessing_mean",
    "greedy_guessing_null",
    "greedy_state_estimate",
    "matches_law",
    "multinomial",
    "value_successions_law",
    "value_successions_row",
    "zone_maximum_law",
]

#: Largest number of (sorted) count states the greedy-guessing DP may need (estimated
#: beforehand by :func:`greedy_state_estimate`; about 5 s of CPU per million states).
GREEDY_STATE_BUDGET = 600_000


def _counts(counts: Sequence[int], *, keep_zeros: bool = False) -> tuple[int, ...]:
    try:
        out = tuple(int(c) for c in counts)
    except (TypeError, ValueError):
        raise InputError(f"counts must be integers, got {counts!r}") from None
    if any(c < 0 for c in out):
        raise InputError(f"counts must be >= 0, got {out}")
    if not keep_zeros:
        out = tuple(c for c in out if c)
    if sum(out) < 1:
        raise InputError("a multiset needs at least one card")
    return out


def multinomial(counts: Sequence[int]) -> int:
    """Number of arrangements of a multiset: ``n! / prod counts[v]!`` (checked)."""
    return counting.multinomial(_counts(counts))


# --------------------------------------------------------------------------- successions


@cache
def _successions_row(counts: tuple[int, ...]) -> tuple[int, ...]:
    n = sum(counts)
    size = len(counts)
    caps = [min(counts[v], counts[v + 1]) for v in range(size - 1)]
    g_max = sum(caps)
    # cards of classes above v: R_v = n - (c_0 + ... + c_v)
    above = [n - sum(counts[: v + 1]) for v in range(size)]
    # D[gamma]: ways for classes v+1.. with gamma glues at or after v (processed from the top)
    table = [0] * (g_max + 1)
    table[0] = 1
    top = 0
    for v in range(size - 2, -1, -1):
        nxt = [0] * (g_max + 1)
        for gamma_next in range(top + 1):
            ways = table[gamma_next]
            if not ways:
                continue
            for g in range(caps[v] + 1):
                gamma = gamma_next + g
                free = above[v] - gamma  # unused unit slots when class v + 1 starts units
                fresh = counts[v + 1] - g
                if free < fresh:
                    continue
                nxt[gamma] += ways * math.comb(counts[v], g) * math.comb(free, fresh)
        table = nxt
        top += caps[v]
    # marked configurations with G glues: C(n - G, c_0) * D_0(G)
    marked = [
        math.comb(n - g, counts[0]) * table[g] if n - g >= counts[0] else 0
        for g in range(g_max + 1)
    ]
    row = []
    for s in range(g_max + 1):
        row.append(sum((-1) ** (g - s) * math.comb(g, s) * marked[g] for g in range(s, g_max + 1)))
    return tuple(row)


def value_successions_row(counts: Sequence[int]) -> tuple[int, ...]:
    """``row[s]``: arrangements of the multiset with exactly ``s`` value successions.

    Classes are ordered ``0, 1, ..., V-1`` (the order of ``counts``; zero counts are kept
    as empty classes); a succession is a position ``i`` with ``class(i+1) = class(i) + 1``.

    Method (inclusion-exclusion, [3]_): mark any subset of the successions of a word; the
    marked successions glue the word into *units*, each a run of consecutive classes
    ``a, a+1, ..., b``. With ``U`` units, a word with marks is a sequence of ``U`` units in
    which class ``v`` is covered ``counts[v]`` times; choosing, class by class from the
    top, which of the ``c_v`` units covering ``v`` continue to ``v + 1`` (``g_v`` of them,
    ``C(c_v, g_v)`` ways) and which unit slots the ``c_{v+1} - g_v`` fresh units of class
    ``v + 1`` occupy (``C(R_v - gamma_v, c_{v+1} - g_v)``, ``R_v`` the cards above ``v``,
    ``gamma_v`` the glues from ``v`` up) counts them exactly. With ``F(G)`` the number of
    marked words with ``G`` glues, ``row[s] = sum_G (-1)^(G-s) C(G, s) F(G)``.
    """
    parts = _counts(counts, keep_zeros=True)
    return _successions_row(parts)


@cache
def _successions_law(parts: tuple[int, ...]) -> Law:
    return Law.from_counts(_successions_row(parts), multinomial(parts))


def value_successions_law(counts: Sequence[int]) -> Law:
    """Exact law of the value successions of a uniform arrangement (see
    :func:`value_successions_row`)."""
    return _successions_law(_counts(counts, keep_zeros=True))


# --------------------------------------------------------------------------- matches


@cache
def _matches_law(parts: tuple[int, ...]) -> Law:
    n = sum(parts)
    # rook numbers of the union of complete c x c boards: prod_v sum_j C(c, j)^2 j! x^j
    rook = [1]
    for c in parts:
        block = [math.comb(c, j) ** 2 * math.factorial(j) for j in range(c + 1)]
        out = [0] * (len(rook) + c)
        for i, a in enumerate(rook):
            for j, b in enumerate(block):
                out[i + j] += a * b
        rook = out
    denominator = math.prod(math.factorial(c) for c in parts)
    # words agreeing with a fixed word on a chosen set of j positions, summed over sets
    at_least = [r * math.factorial(n - j) for j, r in enumerate(rook)]
    row = []
    for m in range(len(at_least)):
        value = sum(
            (-1) ** (j - m) * math.comb(j, m) * at_least[j] for j in range(m, len(at_least))
        )
        row.append(value // denominator)
    return Law.from_counts(row, multinomial(parts))


def matches_law(counts: Sequence[int]) -> Law:
    """Positions holding the same class in two independent uniform arrangements.

    By symmetry the law does not depend on the first arrangement. Placing the second
    arrangement as a permutation of the ``n`` physical cards, the positions where it agrees
    with the first form a rook placement on the union of complete ``c_v x c_v`` boards, so
    the number of permutations agreeing on at least a chosen ``j``-set, summed over the
    sets, is ``r_j (n - j)!`` with ``r_j`` the rook numbers
    ``[x^j] prod_v sum_i C(c_v, i)^2 i! x^i`` ([2]_); inclusion-exclusion gives the exact
    count, divided by ``prod c_v!`` for arrangements with copies alike. With every count 1
    these are the rencontres numbers.
    """
    return _matches_law(tuple(sorted(_counts(counts))))


# --------------------------------------------------------------------------- zones


@cache
def _zone_products(zones: tuple[int, ...]) -> tuple[tuple[int, ...], ...]:
    """For ``m = 0 .. max(zones)``: the coefficients of ``prod_z sum_{t <= m} C(w_z, t) x^t``
    (whole products, shared by every number of marked cards)."""
    widths: dict[int, int] = defaultdict(int)
    for width in zones:
        widths[width] += 1
    products = []
    for m in range(max(zones) + 1):
        poly = [1]
        for width, times in widths.items():
            base = [math.comb(width, t) for t in range(min(m, width) + 1)]
            while times:  # powers by squaring
                if times & 1:
                    poly = poly_multiply(poly, base)
                times >>= 1
                if times:
                    base = poly_multiply(base, base)
        products.append(tuple(poly))
    return tuple(products)


@cache
def _zone_maximum_law(cards: int, marked: int, zones: tuple[int, ...]) -> Law:
    # N(max <= m) = [x^marked] prod_z (sum_{t <= m} C(w_z, t) x^t) * (1 + x)^rest: the
    # positions outside every zone form one more, unscored zone.
    rest = cards - sum(zones)
    outside = [math.comb(rest, t) for t in range(min(rest, marked) + 1)]
    at_most = []
    for poly in _zone_products(zones):
        # coefficient of x^marked in poly * outside
        low = max(0, marked - len(outside) + 1)
        at_most.append(
            sum(poly[i] * outside[marked - i] for i in range(low, min(len(poly), marked + 1)))
        )
    row = [at_most[0]] + [at_most[m] - at_most[m - 1] for m in range(1, len(at_most))]
    return Law.from_counts(row, math.comb(cards, marked))


def zone_maximum_law(cards: int, marked: int, zones: Sequence[int]) -> Law:
    """Largest number of marked cards in one zone, for ``marked`` cards in uniformly random
    positions of a shoe of ``cards`` cards and disjoint zones of the given widths.

    Under a uniform arrangement of any multiset, the set of positions holding cards of a
    chosen group of classes is a uniform ``marked``-subset, so the zone counts are
    multivariate hypergeometric; the law of their maximum is counted zone by zone.
    """
    widths = tuple(int(w) for w in zones)
    if not widths or any(w < 1 for w in widths) or sum(widths) > cards:
        raise InputError(f"zones must be positive widths adding up to at most {cards}")
    if not 0 <= marked <= cards:
        raise InputError(f"marked cards must be from 0 to {cards}, got {marked}")
    return _zone_maximum_law(int(cards), int(marked), widths)


# --------------------------------------------------------------------------- guessing


class GuessingOutOfReach(InputError):
    """The greedy-guessing DP would visit more states than the budget allows."""


def _multisets(size: int, top: int) -> int:
    return math.comb(top + size, size)


def greedy_state_estimate(counts: Sequence[int]) -> int:
    """An upper estimate of the count states :func:`greedy_guessing_law` visits.

    Classes with equal counts are interchangeable, so states are multisets of remaining
    counts per group of equal classes; a unique largest class that exceeds every other
    class is handled in closed form down to the second largest count.
    """
    parts = sorted(_counts(counts), reverse=True)
    groups: dict[int, int] = defaultdict(int)
    for c in parts:
        groups[c] += 1
    total = 1
    if len(parts) > 1 and parts[0] > parts[1]:
        cap = parts[1]
        groups[parts[0]] -= 1
        if not groups[parts[0]]:
            del groups[parts[0]]
        total *= cap + 1
    for c, m in groups.items():
        total *= _multisets(m, c)
    return total


@cache
def _greedy_rows(parts: tuple[int, ...]) -> tuple[int, tuple[int, ...]]:
    """(offset, row): words of the multiset by the number of correct greedy guesses."""
    # start: a unique leader above every other class is guessed right until it falls to
    # the second largest count (others never grow); the words leading to each entry state
    # are counted in closed form, then the DP runs over sorted states.
    start = tuple(sorted(parts, reverse=True))
    layer: dict[tuple[int, ...], dict[int, int]]
    if len(start) > 1 and start[0] > start[1]:
        lead, others = start[0], start[1:]
        drops = lead - others[0]
        layer = defaultdict(lambda: defaultdict(int))
        # removals d from the others before the leader's drops-th draw:
        # C(drops - 1 + j, j) * multinomial(j; d)  (the last letter is the leader's)
        # keyed by the sorted remaining counts of the classes processed so far (only they
        # matter for the future; the number removed follows from them)
        removal: dict[tuple[int, ...], int] = {(): 1}
        processed = 0
        for c in others:
            nxt: dict[tuple[int, ...], int] = defaultdict(int)
            for key, ways in removal.items():
                j = processed - sum(key)
                for x in range(c + 1):
                    new = tuple(sorted((*key, c - x), reverse=True))
                    nxt[new] += ways * math.comb(j + x, x)
            removal = nxt
            processed += c
            if len(removal) > GREEDY_STATE_BUDGET:
                raise GuessingOutOfReach(
                    f"the exact guessing law for counts {parts} needs more than "
                    f"{GREEDY_STATE_BUDGET:,} states"
                )
        for left, ways in removal.items():
            j = processed - sum(left)
            state = tuple(sorted((others[0], *left), reverse=True))
            layer[state][drops] += ways * math.comb(drops - 1 + j, j)
        layer = {k: dict(v) for k, v in layer.items()}
    else:
        layer = {start: {0: 1}}
    by_total: dict[int, dict[tuple[int, ...], dict[int, int]]] = defaultdict(dict)
    for state, dist in layer.items():
        by_total[sum(state)][state] = dist
    remaining = max(by_total) if by_total else 0
    visited = 0
    current: dict[tuple[int, ...], dict[int, int]] = {}
    final: dict[int, int] = defaultdict(int)
    for total in range(remaining, 0, -1):
        for state, dist in by_total.pop(total, {}).items():
            merged = current.setdefault(state, {})
            for s, ways in dist.items():
                merged[s] = merged.get(s, 0) + ways
        nxt_layer: dict[tuple[int, ...], dict[int, int]] = defaultdict(lambda: defaultdict(int))
        for state, dist in current.items():
            visited += 1
            if visited > GREEDY_STATE_BUDGET:
                raise GuessingOutOfReach(
                    f"the exact guessing law for counts {parts} needs more than "
                    f"{GREEDY_STATE_BUDGET:,} states"
                )
            top = state[0]
            i = 0
            size = len(state)
            while i < size and state[i] > 0:
                x = state[i]
                m = 1
                while i + m < size and state[i + m] == x:
                    m += 1
                j = i + m - 1  # decrement the last copy to keep the tuple sorted
                successor = (*state[:j], x - 1, *state[j + 1 :])
                target = nxt_layer[successor]
                if x == top:  # one of the m tied classes is the guess
                    for s, ways in dist.items():
                        target[s + 1] += ways
                        if m > 1:
                            target[s] += ways * (m - 1)
                else:
                    for s, ways in dist.items():
                        target[s] += ways * m
                i += m
        current = {}
        for state, dist in nxt_layer.items():
            if state[0] == 0:
                for s, ways in dist.items():
                    final[s] += ways
            else:
                current[state] = dict(dist)
    low = min(final)
    row = tuple(final.get(s, 0) for s in range(low, max(final) + 1))
    return low, row


def greedy_guessing_law(counts: Sequence[int], *, budget: int | None = None) -> Law:
    """Correct guesses of a player who always names a most frequent remaining class.

    The player sees every card after guessing it (complete feedback). Under a uniform
    arrangement the next card is class ``v`` with chance ``R_v / r`` whatever was seen, so
    naming a class with the largest remaining count ``M`` is right with chance ``M / r``:
    the greedy strategy, optimal for the expected score ([1]_). Which of several tied
    classes is named does not change the law (tied classes are interchangeable), so the
    dynamic programme runs over sorted count vectors, counting words exactly; a unique
    largest class above every other is handled in closed form (every draw of it is a
    correct guess until it falls to the second largest count). Raises
    :class:`GuessingOutOfReach` when the number of states exceeds the budget
    (:data:`GREEDY_STATE_BUDGET`; :func:`greedy_state_estimate` tells beforehand).

    Examples
    --------
    The ESP deck of five symbols, five cards each: mean ``8.6468`` correct guesses
    (Diaconis & Graham 1981).
    """
    parts = _counts(counts)
    if budget is not None and greedy_state_estimate(parts) > budget:
        raise GuessingOutOfReach(
            f"the exact guessing law for counts {parts} needs about "
            f"{greedy_state_estimate(parts):,} states (budget {budget:,})"
        )
    offset, row = _greedy_rows(tuple(sorted(parts, reverse=True)))
    return Law.from_counts(row, multinomial(parts), offset=offset)


@cache
def _greedy_mean(parts: tuple[int, ...]) -> Fraction:
    n = sum(parts)
    top = max(parts)
    # Q_m(y) = prod_v sum_{x < m} C(c_v, x) y^x: remaining compositions with every count < m;
    # E[largest remaining count | r cards remain] = sum_{m=1}^{top} (1 - [y^r] Q_m / C(n, r))
    # = top - B_r / C(n, r), with the integer B_r = sum_m [y^r] Q_m
    binomials = {c: [math.comb(c, x) for x in range(c + 1)] for c in set(parts)}
    below = [0] * (n + 1)
    for m in range(1, top + 1):
        poly = [1]
        for c in parts:
            poly = poly_multiply(poly, binomials[c][: min(c, m - 1) + 1])
        for r in range(1, min(n, len(poly) - 1) + 1):
            below[r] += poly[r]
    total = Fraction(0)
    for r in range(1, n + 1):
        total += Fraction(top * math.comb(n, r) - below[r], r * math.comb(n, r))
    return total


def greedy_guessing_mean(counts: Sequence[int]) -> Fraction:
    """Exact mean of the greedy guessing score, for any composition (even where the whole
    law is out of reach): the guess is right with chance ``M / r`` (``M`` the largest
    remaining count of ``r`` cards), so the mean is ``sum_r E[M_r] / r``; the remaining
    counts are multivariate hypergeometric, and ``P(M_r < m)`` is the coefficient of
    ``y^r`` in ``prod_v sum_{x < m} C(c_v, x) y^x`` over ``C(n, r)`` (the method of
    Diaconis & Graham 1981 for the expected score).
    """
    return _greedy_mean(tuple(sorted(_counts(counts))))


# --------------------------------------------------------------------------- guessing, bracketed

#: Mass below which a (state, score) entry of :func:`greedy_guessing_bracket` is set aside.
GREEDY_BRACKET_THRESHOLD = 1e-18
#: Most live (state, score) entries one layer of :func:`greedy_guessing_bracket` may hold.
GREEDY_BRACKET_STATES = 4_000_000

_UNIT_ROUNDOFF = 2.0**-53


def _records_probabilities(k: int) -> np.ndarray:
    """``P(R = s)``, ``s = 0..k``, for the records ``R`` of a uniform permutation of ``k``:
    the law of its cycles (:func:`~shufflecheck.stats.nulls.cycles_law`, unsigned Stirling
    numbers of the first kind over ``k!``, each rounded once)."""
    law = cycles_law(k)
    out = np.zeros(k + 1)
    out[law.offset : law.offset + len(law.pmf)] = law.pmf
    return out


#: bits of a packed state of :func:`greedy_guessing_bracket` (placed counts and score)
_PACKED_BITS = 62


def _packing(parts: Sequence[int]) -> tuple[int, list[int]]:
    """(bits of the score, bits of each class's placed count) in a packed state."""
    return (sum(parts) + 1).bit_length(), [max(1, c.bit_length()) for c in parts]


def _touch_table(top_cap: int, cap: int) -> np.ndarray:
    """``T[a, y]``: an upper bound (rounded up) on the chance that a class of ``cap`` cards
    with ``y`` already placed ever draws level with the class of ``top_cap`` cards that
    holds ``a > y`` (reversed deal, see :func:`greedy_guessing_bracket`)."""
    table = np.ones((top_cap + 1, cap + 1))
    if cap >= top_cap:
        return table  # it ends at least as high, so it must draw level on the way
    for a in range(top_cap + 1):
        for y in range(min(a, cap + 1)):
            if cap < a:
                table[a, y] = 0.0
                continue
            # reflection: touching paths from (a, y) to (top_cap, cap) <-> all paths from
            # (y, a); out of all paths from (a, y)
            level = math.comb((top_cap - y) + (cap - a), cap - a)
            paths = math.comb((top_cap - a) + (cap - y), cap - y)
            table[a, y] = math.nextafter(level / paths, math.inf)
    return table


def _ahead_laws(at_least: Sequence[int], top_cap: int, records: dict) -> list[np.ndarray]:
    """``U[a]``: the law of ``sum_{L = max(a, 1)}^{top_cap} R(K_L)`` with independent
    records ``R(K_L)`` of ``K_L = at_least[L]`` (the classes of at least ``L`` cards).

    It is stochastically above the score still to come from any state of level ``a``,
    whatever else is known of the path: given the path, each stage's score is a sum of
    independent Bernoulli(1/j) for ``j = 1..k_L`` (a guesser breaking ties at random
    scores the same law), and ``k_L <= K_L``.
    """
    laws: list[np.ndarray] = [np.ones(1)] * (top_cap + 1)
    law = np.ones(1)
    for level in range(top_cap, 0, -1):
        law = np.convolve(records[at_least[level]], law)
        laws[level] = law
    laws[0] = laws[1] if top_cap >= 1 else law
    return laws


def greedy_guessing_bracket(
    counts: Sequence[int],
    *,
    threshold: float = GREEDY_BRACKET_THRESHOLD,
    max_states: int = GREEDY_BRACKET_STATES,
) -> LawBracket:
    """The law of the greedy guessing score to within a stated bound, for compositions the
    exact programme (:func:`greedy_guessing_law`) cannot reach.

    Method. *Stages* ([1]_ for the game; the decomposition is derived in docs/shoes.md and
    checked against the exact programme): let the level be the largest remaining count.
    It falls one step at a time from ``max(counts)`` to 1; when it first equals ``L``, some
    ``k_L`` classes hold exactly ``L`` cards. While it stays at ``L`` each of them falls from
    ``L`` once, in an order that is uniform whatever else happens, and the greedy guess is right
    exactly at the draw of the class it names, so the stage scores the number of records
    ``R(k_L)`` of a uniform permutation of ``k_L`` (law ``c(k, s) / k!``, unsigned Stirling
    numbers of the first kind), independently given the ``k_L``; the score is
    ``sum_L R(k_L)``. Read backwards, a uniform arrangement is again uniform: cards are
    *placed* one at a time, the level is the largest placed count, and ``k_L`` is the number
    of classes at ``L`` when the first class reaches ``L + 1`` (or when the deck is full,
    for the top level). The programme runs over the placed counts (sorted within classes of
    equal size), in floating point, one layer per placed card (states packed in 64-bit
    integers, merged with ``numpy.unique``); the score is added stage by stage.

    Two things are set aside, and their mass is added up: (i) an entry whose mass is below
    ``threshold``; (ii) when one class is strictly ahead, the chance that another class
    ever draws level with it, bounded by the reflection principle ([4]_) on the two classes
    alone (``C((c_u - y) + (c_v - a), c_v - a) / C((c_u - a) + (c_v - y), c_v - y)`` for counts
    ``a > y`` out of ``c_u > c_v``) and summed over the others: if none does, every later
    stage has one class and scores 1, so the rest of the score is known; the entry is
    finished when its mass times that bound is below ``threshold``. Each set-aside piece
    keeps the least it can still score (one at each level left) and a law stochastically
    above what it can still score (at each level ``L`` left, the records of a uniform
    permutation of all ``K_L`` classes of at least ``L`` cards, independently: given the
    path, a stage scores a sum of independent Bernoulli(1/j), ``j = 1..k_L``, and ``k_L <=
    K_L``), so the upper law spreads that mass rather than piling it on the largest
    score. Rounding: every kept mass is a sum of products
    of non-negative terms, so its relative error is at most ``K u / (1 - K u)`` with ``u =
    2**-53`` and ``K`` the longest chain of operations (counted as the programme runs; [5]_);
    see :class:`~shufflecheck.stats.nulls.LawBracket` for what is guaranteed.

    Raises :class:`GuessingOutOfReach` when a layer would hold more than ``max_states``
    entries, or when the counts do not pack into 62 bits.

    Measured (CPU, shared machine; docs/shoes.md): a six-pack read as blackjack values,
    ``[24] * 9 + [96]``, takes about 1 s at ``threshold=1e-8`` (``4.2e-3`` set aside), 3 s
    at ``1e-9`` (``1.0e-3``), 8 s at ``1e-10`` (``2.2e-4``) and 50 s at ``1e-12``
    (``7.9e-6``); one pack's blackjack values take 0.05 s with nothing set aside.
    """
    parts = tuple(sorted(_counts(counts), reverse=True))
    threshold = float(threshold)
    if not 0 <= threshold < 1:
        raise InputError(f"threshold must be in [0, 1), got {threshold!r}", argument="threshold")
    size = len(parts)
    n = sum(parts)
    top_cap = parts[0]
    caps = np.array(parts, dtype=np.int64)
    score_bits, bits = _packing(parts)
    shifts = [0] * size
    at = score_bits
    for i in range(size - 1, -1, -1):
        shifts[i] = at
        at += bits[i]
    if at > _PACKED_BITS:
        raise GuessingOutOfReach(
            f"the bracketed guessing law for counts {parts} needs {at} bits per state "
            f"(at most {_PACKED_BITS})"
        )
    score_mask = (1 << score_bits) - 1
    first_of_group = [i == 0 or parts[i - 1] != parts[i] for i in range(size)]
    group = np.cumsum(first_of_group) - 1
    records = {k: _records_probabilities(k) for k in range(1, size + 1)}
    # the least a state at level a can still score (levels a..top, at least 1 each) and a
    # law stochastically above what it can still score (records of all the classes of at
    # least L cards, at each level L)
    at_least = [sum(1 for c in parts if c >= level) for level in range(top_cap + 1)]
    future_low = np.array([top_cap - max(a, 1) + 1 for a in range(top_cap + 1)])
    laws_ahead = _ahead_laws(at_least, top_cap, records)
    tops = sorted(set(parts))
    touch = {(cu, cv): _touch_table(cu, cv) for cu in tops for cv in tops}

    codes = np.zeros(1, dtype=np.int64)
    mass = np.ones(1)
    width = n + 2  # scores 0..n, and one beyond
    final = np.zeros(width)
    aside_low = np.zeros(width)
    aside_at = np.zeros((top_cap + 1) * width)  # set-aside mass by (level, score so far)
    finished_terms = 0
    visited = 0
    fan_in = size * size  # predecessors of one entry: a class and a records value
    for placed in range(n):
        count = codes.size
        if not count:
            break  # every path finished or set aside
        visited += count
        y = np.empty((count, size), dtype=np.int64)
        for i in range(size):
            y[:, i] = (codes >> shifts[i]) & ((1 << bits[i]) - 1)
        score = codes & score_mask
        top = y.max(axis=1)
        tied = (y == top[:, None]).sum(axis=1)
        done = np.zeros(count, dtype=bool)
        ahead = np.flatnonzero((tied == 1) & (top >= 1))
        if ahead.size:
            leader = np.argmax(y[ahead], axis=1)
            bound = np.zeros(ahead.size)
            for cu in tops:
                for i in range(size):
                    sel = (caps[leader] == cu) & (leader != i)
                    if sel.any():
                        rows = ahead[sel]
                        bound[sel] += touch[(cu, parts[i])][y[rows, leader[sel]], y[rows, i]]
            ok = (bound < 1) & (mass[ahead] * bound <= threshold)
            rows = ahead[ok]
            if rows.size:
                a = top[rows]
                rest = caps[leader[ok]] - a + 1
                final += np.bincount(
                    score[rows] + rest, mass[rows] * (1 - bound[ok]), minlength=width
                )
                finished_terms = max(finished_terms, rows.size)
                piece = mass[rows] * bound[ok]
                aside_low += np.bincount(score[rows] + future_low[a], piece, minlength=width)
                aside_at += np.bincount(a * width + score[rows], piece, minlength=aside_at.size)
                done[rows] = True
        if done.any():
            keep = ~done
            codes, mass, y, score, top, tied = (
                codes[keep],
                mass[keep],
                y[keep],
                score[keep],
                top[keep],
                tied[keep],
            )
        out_codes = [np.zeros(0, dtype=np.int64)]
        out_mass = [np.zeros(0)]
        left = n - placed
        for i in range(size):
            valid = y[:, i] < parts[i]
            if not first_of_group[i]:
                valid &= y[:, i - 1] > y[:, i]  # place on the first copy of equal counts
            if not valid.any():
                continue
            same = np.zeros(codes.size, dtype=np.int64)
            for j in range(size):
                if group[j] == group[i]:
                    same += y[:, j] == y[:, i]
            weight = mass * ((same * (parts[i] - y[:, i])) / left)
            moved = codes + (1 << shifts[i])
            up = valid & (y[:, i] == top) & (top >= 1)  # the first class to pass the level
            flat = valid & ~up
            out_codes.append(moved[flat])
            out_mass.append(weight[flat])
            if up.any():
                for k in np.unique(tied[up]):
                    sel = up & (tied == k)
                    probs = records[int(k)]
                    for s in range(1, int(k) + 1):
                        out_codes.append(moved[sel] + s)
                        out_mass.append(weight[sel] * probs[s])
        merged, where = np.unique(np.concatenate(out_codes), return_inverse=True)
        summed = np.bincount(where.ravel(), weights=np.concatenate(out_mass))
        small = summed < threshold
        if small.any():
            lost = merged[small]
            a = np.zeros(lost.size, dtype=np.int64)
            for i in range(size):
                a = np.maximum(a, (lost >> shifts[i]) & ((1 << bits[i]) - 1))
            s_lost = lost & score_mask
            aside_low += np.bincount(s_lost + future_low[a], summed[small], minlength=width)
            aside_at += np.bincount(a * width + s_lost, summed[small], minlength=aside_at.size)
            finished_terms = max(finished_terms, lost.size)
            merged, summed = merged[~small], summed[~small]
        if merged.size > max_states:
            raise GuessingOutOfReach(
                f"the bracketed guessing law for counts {parts} needs more than "
                f"{max_states:,} entries in one layer at threshold {threshold:g}"
            )
        codes, mass = merged, summed
    visited += codes.size
    ktop = sum(1 for c in parts if c == top_cap)
    score = codes & score_mask
    for s in range(1, ktop + 1):
        final += np.bincount(score + s, mass * records[ktop][s], minlength=width)
    finished_terms = max(finished_terms, codes.size)
    # longest chain: per layer three roundings (weight, records, product) and a sum of at
    # most fan_in terms; one more layer's sum into the tallies (at most finished_terms
    # terms), one addition per layer into them, and a few for the reported sums
    chain = n * (3 + fan_in) + finished_terms + 2 * n + 16
    # the laws ahead (a product and a sum of at most size + 1 terms per level) and the
    # spread of the set-aside mass over them (a product and a sum over levels and scores)
    chain += top_cap * (size + 2) + (top_cap + 1) * width + 1
    rounding = chain * _UNIT_ROUNDOFF / (1 - chain * _UNIT_ROUNDOFF)
    aside_by_level = aside_at.reshape(top_cap + 1, width)
    aside_high = np.zeros(width)
    for a in np.flatnonzero(aside_by_level.any(axis=1)):
        spread = np.convolve(aside_by_level[a], laws_ahead[a])
        aside_high[:n] += spread[:n]
        aside_high[n] += spread[n:].sum()  # no score exceeds the cards
    set_aside = math.fsum(aside_low) * (1 + rounding)
    nonzero = np.flatnonzero(final)
    if nonzero.size == 0:
        raise GuessingOutOfReach(f"threshold {threshold:g} set aside every path for {parts}")
    low_k, high_k = int(nonzero[0]), int(nonzero[-1])
    return LawBracket(
        kept=tuple(float(x) for x in final[low_k : high_k + 1]),
        offset=low_k,
        set_aside=set_aside,
        rounding=rounding,
        low=top_cap,
        high=n,
        aside_low=tuple((int(v), float(aside_low[v])) for v in np.flatnonzero(aside_low)),
        aside_high=tuple((int(v), float(aside_high[v])) for v in np.flatnonzero(aside_high)),
        method=(
            "stage decomposition read backwards, floating-point dynamic programme over the "
            f"placed counts; entries below {threshold:g} of mass and bounded chances of a "
            f"later tie set aside (at most {set_aside:.2g} in all); relative rounding at "
            f"most {rounding:.2g}"
        ),
        states=visited,
        exact_mean=greedy_guessing_mean(parts),
    )


def greedy_bracket_fits(counts: Sequence[int]) -> bool:
    """Whether :func:`greedy_guessing_bracket` can pack the states of ``counts`` (placed
    counts of every class and the score in 62 bits)."""
    parts = _counts(counts)
    score_bits, bits = _packing(parts)
    return score_bits + sum(bits) <= _PACKED_BITS


def greedy_guessing_null(
    counts: Sequence[int],
    *,
    budget: int = GREEDY_STATE_BUDGET,
    threshold: float = GREEDY_BRACKET_THRESHOLD,
    max_states: int = GREEDY_BRACKET_STATES,
) -> Law | LawBracket:
    """The guessing game's null for ``counts``: the exact law (:func:`greedy_guessing_law`)
    when its programme fits ``budget`` states, otherwise the bracket of
    :func:`greedy_guessing_bracket` (which says what it set aside)."""
    parts = _counts(counts)
    if greedy_state_estimate(parts) <= budget:
        return greedy_guessing_law(parts)
    return greedy_guessing_bracket(parts, threshold=threshold, max_states=max_states)
