"""Riffle distances on a *feature* of the deck: what a game sees when copies are alike.

A feature maps each card to a class (a value, a colour; :mod:`shufflecheck.records.shoes`).
After ``k`` riffles the feature reads a *word*; the uniform law on words gives each of the
``M = multinomial(n; counts)`` words the chance ``1/M`` (a uniformly random deck reads
every word equally often). Distances of the word's law to that uniform law:

**Rigorous upper bounds, always.** The word is a function of the arrangement, so its total
variation, separation and KL divergence are at most those of the arrangement of distinct
cards (data processing; for separation: ``M P(w) >= M |coset| min P(sigma) = n! min P``),
which Bayer & Diaconis give exactly for any ``n`` ([1]); and ``TV <= separation``.

**Exact separation for a start in blocks.** When the deck starts with all cards of class 0
on top, then all of class 1, and so on (or any renaming of the classes: every class in one
run, :func:`block_runs`), an ``a``-shuffle gives a word ``w`` with
probability ``N_a(w) / a^n``, ``N_a(w)`` the number of label sequences (every new position
gets one of ``a`` packet labels, [1]) whose reading in (label, position) order is the
start. Swapping two adjacent cards ``x < y`` of a word into ``y x`` maps these sequences
injectively into those of the swapped word's predecessor, so the fully reversed word
(class ``V-1`` on top) is the least likely; its sequences give every class a set of labels
above the previous class's, hence

    N_a(reversed) = sum_j C(a, j) sum_{j_1 + .. + j_V = j} prod_v j_v! S(c_v, j_v)

(``S`` Stirling numbers of the second kind) and ``separation = 1 - M N_a(reversed)/a^n``,
exact for any ``n``. Derived in this project; checked against brute force.

**Exact total variation for two-valued decks in blocks** (the decks of Conger &
Viswanath [2]: ``p`` cards of class 0 above ``q`` of class 1). With ``beta_i`` the cards of
class 1 above the ``i``-th card of class 0,

    N_a(w) = sum_{c=1}^{a} sum_{i=1}^{p} (c-1)^(p-i) c^(i-1) (a-c)^(beta_i) (a-c+1)^(q-beta_i)

(the last label ``c`` used by class 0 and the last class-0 card ``i`` with that label),
additive over the class-0 cards and decreasing in every ``beta_i``. The total variation
``sum_w (P(w) - 1/M)^+`` is summed exactly over the ``C(n, p)`` words by a dynamic
programme over ``i`` that settles every partial word whose completions all lie above (or
all below) ``1/M`` in closed form; it is offered while the unsettled partial words stay
within a budget (up to ``2 * 10^7`` words: 26 cards in two halves, 0.4 s; beyond it the
two-sided bounds below are faster and as good to seven digits). Derived in this project;
checked against brute force.

**Two-sided bounds for larger two-valued decks in blocks** (a 52-card colour deck, a colour
shoe): :mod:`shufflecheck.models.two_valued` sums the same additive likelihood ratio on a
grid, with rigorous lower and upper ends.

**Alternating two-valued starts** (Conger & Viswanath's other start):
:mod:`shufflecheck.models.alternating` gives each word's exact chance; distances are exact
up to 18 cards, and beyond, the total variation gets a rigorous lower bound from the exact
law of the highest and lowest points of the word's walk
(:mod:`shufflecheck.models.alternating_walk`) and a Monte Carlo estimate over uniform words
with its interval (the upper bounds stay the distinct-card ones).

**Starts in three or more blocks** (the suits of a deck in new-deck order):
:mod:`shufflecheck.models.block_words` gives each word's exact chance; total variation and
KL are exact while the words number at most
:data:`~shufflecheck.models.block_words.EXACT_WORDS`, and beyond, the total variation gets
the same kind of Monte Carlo estimate (the upper bounds stay the ones above) and a rigorous
lower bound: merge the classes above a cut between blocks against those below, and the
merged word, a function of the word, is a two-valued deck in blocks with the bounds above.

**Every class one card** (the codes of one pack): the word is the arrangement, so the
distinct-card distances are exact, not only upper bounds.

**Exact everything for small decks**: for ``n <= 9`` (any start, any feature) the law of
the word is summed from the exact law of the arrangement over all ``n!`` arrangements.

Anything else (e.g. blackjack values of a six-pack shoe in its reference order, which is not
in blocks) gets the upper bounds here and Monte Carlo lower bounds from an assessment, each
labelled. Assaf, Diaconis & Soundararajan [3] study decks in blocks where only some values
matter, with formulas and an asymptotic rule of their own; the counting in
:mod:`~shufflecheck.models.block_words` was derived independently and is not checked
against theirs.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [2] M. Conger and D. Viswanath, "Riffle shuffles of decks with repeated cards", Ann.
       Probab. 34 (2006) 804-819.
.. [3] S. Assaf, P. Diaconis and K. Soundararajan, "A rule of thumb for riffle shuffling",
       Ann. Appl. Probab. 21 (2011) 843-875.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from fractions import Fraction
from functools import cache, lru_cache

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.common.quantity import Quantity
from shufflecheck.core.counting import multinomial, stirling2_row
from shufflecheck.core.distances import kl_term
from shufflecheck.models import block_words, riffle
from shufflecheck.models.alternating import (
    ESTIMATE_SAMPLES,
    ESTIMATE_WORK,
    alternating_class,
    alternating_distances,
    alternating_tv_estimate,
    estimate_work,
)
from shufflecheck.models.alternating import EXACT_WORDS as ALTERNATING_EXACT_WORDS
from shufflecheck.models.alternating_walk import walk_tv_lower
from shufflecheck.models.word_estimate import WordEstimate

__all__ = [
    "ENUMERATION_CARDS",
    "ESTIMATE_FLOOR",
    "ESTIMATE_SAMPLES",
    "FEATURE_SOURCES_NOTE",
    "FeatureCurve",
    "FeatureDistances",
    "block_runs",
    "block_separation",
    "estimate_skipped",
    "feature_curve",
    "feature_curve_until",
    "feature_distances",
    "in_blocks",
    "merged_lower_bound",
    "small_deck_law",
    "two_valued_block_tv",
]

#: How the distances of a feature curve were obtained, in one sentence (terminal and report).
FEATURE_SOURCES_NOTE = (
    "Upper bounds come from the distinct-card distances (a feature is never farther); exact "
    "values where the feature's law is known in closed form; for a two-valued deck in blocks "
    "too large for the exact sum, rigorous lower and upper bounds from its likelihood ratios "
    "summed on a grid; for an alternating two-valued start, or a start in three or more "
    "blocks, too large for the exact sum, a rigorous lower bound (the law of the word's walk "
    "extremes, or classes merged into two blocks) and a Monte Carlo estimate of the exact "
    "total variation with its confidence interval (docs/models.md)."
)
#: A feature curve stops estimating after the first estimate below this.
ESTIMATE_FLOOR = 0.01
#: Largest deck whose word law is summed over all ``n!`` arrangements.
ENUMERATION_CARDS = 9
#: Unsettled partial words the two-valued dynamic programme may hold.
TWO_VALUED_BUDGET = 1_000_000
#: Largest number of words C(n, p) for which the exact two-valued sum is attempted: 13 + 13
#: cards (1.0e7 words) take 0.4 s, 8 + 30 (4.9e7) took 2.9 s, while the two-sided bounds of
#: :mod:`shufflecheck.models.two_valued` take about 0.15 s at 52 cards.
TWO_VALUED_WORDS = 2 * 10**7
#: Cuts between blocks tried for the merged lower bound of a start in three or more blocks.
MERGE_CUTS = 3
#: Grid of the merged two-valued brackets: only their lower ends are used, which a coarse
#: grid barely moves (13 + 39 cards after 2 riffles: 0.4095080 on 4,096 steps, 0.4095080 on
#: 65,536; 8 ms against 0.23 s).
MERGE_GRID = 1 << 12


def in_blocks(start: Sequence[int]) -> bool:
    """True when ``start`` (the class at each reference position) reads ``0..0 1..1 ...``."""
    values = [int(x) for x in start]
    return all(b - a in (0, 1) for a, b in itertools.pairwise(values)) and (
        not values or values[0] == 0
    )


def block_runs(start: Sequence[int]) -> tuple[int, ...] | None:
    """The run lengths, top first, when every class of ``start`` fills one contiguous run
    (a start in blocks up to the names of the classes: ``2..2 0..0 1..1`` as well as
    ``0..0 1..1 2..2``), else None. Renaming the classes maps words one to one onto words,
    so the distances of a start in blocks depend only on these lengths."""
    values = [int(x) for x in start]
    runs: list[int] = []
    seen: set[int] = set()
    for value, group in itertools.groupby(values):
        if value in seen:
            return None
        seen.add(value)
        runs.append(sum(1 for _ in group))
    return tuple(runs)


def _class_counts(start: Sequence[int]) -> tuple[int, ...]:
    values = [int(x) for x in start]
    if not values or min(values) < 0:
        raise InputError("a feature start needs at least one card and classes >= 0")
    out = [0] * (max(values) + 1)
    for x in values:
        out[x] += 1
    return tuple(c for c in out if c)


@cache
def _reversed_sequences(counts: tuple[int, ...], hands: int) -> int:
    """``N_a`` of the reversed word for a start in blocks (module docstring)."""
    # surjections of each block onto j labels: j! S(c, j)
    poly = [1]
    for c in counts:
        row = stirling2_row(c)
        block = [math.factorial(j) * row[j] for j in range(c + 1)]
        out = [0] * (len(poly) + len(block) - 1)
        for i, x in enumerate(poly):
            if x:
                for j, y in enumerate(block):
                    out[i + j] += x * y
        poly = out
    return sum(math.comb(hands, j) * x for j, x in enumerate(poly) if x)


def block_separation(counts: Sequence[int], hands: int) -> Fraction:
    """Exact separation of the word after an ``hands``-shuffle of a deck in class blocks
    (``counts[v]`` cards of class ``v``, class 0 on top)."""
    parts = tuple(int(c) for c in counts if c)
    hands = riffle.check_hands(hands) if hands >= 2 else int(hands)
    n = sum(parts)
    least = _reversed_sequences(parts, hands)
    return 1 - Fraction(multinomial(parts) * least, hands**n)


def _two_valued_table(p: int, q: int, a: int) -> list[list[int]]:
    table = [[0] * (q + 1) for _ in range(p)]
    for c in range(1, a + 1):
        left = [(c - 1) ** (p - 1 - i) * c**i for i in range(p)]
        right = [(a - c) ** b * (a - c + 1) ** (q - b) for b in range(q + 1)]
        for i in range(p):
            if left[i]:
                row = table[i]
                for b in range(q + 1):
                    row[b] += left[i] * right[b]
    return table


@cache
def _two_valued_tv(p: int, q: int, a: int, budget: int) -> Fraction | None:
    n = p + q
    words = math.comb(n, p)
    scale = a**n  # P(w) > 1/M  <=>  N(w) * M > a^n
    g = _two_valued_table(p, q, a)
    # completions of ones i.. with beta >= b: their number and the sum of their N parts
    count = [[0] * (q + 1) for _ in range(p + 1)]
    total = [[0] * (q + 1) for _ in range(p + 1)]
    for b in range(q + 1):
        count[p][b] = 1
    for i in range(p - 1, -1, -1):
        c_acc = s_acc = 0
        for b in range(q, -1, -1):
            c_acc += count[i + 1][b]
            s_acc += total[i + 1][b] + g[i][b] * count[i + 1][b]
            count[i][b] = c_acc
            total[i][b] = s_acc
    low_rest = [sum(g[j][q] for j in range(i, p)) for i in range(p + 1)]
    high_rest = [[sum(g[j][b] for j in range(i, p)) for b in range(q + 1)] for i in range(p + 1)]
    states: dict[int, dict[int, int]] = {0: {0: 1}}
    excess = 0  # sum over words above 1/M of (N M - a^n)
    held = 0
    for i in range(p):
        nxt: dict[int, dict[int, int]] = {}
        for b_prev, dist in states.items():
            for b in range(b_prev, q + 1):
                gi = g[i][b]
                lo, hi = low_rest[i + 1], high_rest[i + 1][b]
                for s, m in dist.items():
                    s2 = s + gi
                    if (s2 + lo) * words > scale:  # every completion lies above 1/M
                        k = count[i + 1][b]
                        excess += m * (words * (s2 * k + total[i + 1][b]) - scale * k)
                    elif (s2 + hi) * words > scale:
                        d = nxt.setdefault(b, {})
                        d[s2] = d.get(s2, 0) + m
                        held += 1
                        if held > budget:
                            return None
        states = nxt
    return Fraction(excess, words * scale)


def two_valued_block_tv(p: int, q: int, hands: int, *, budget: int = TWO_VALUED_BUDGET):
    """Exact total variation of the word after an ``hands``-shuffle of ``p`` cards of one
    class above ``q`` of another, or None when the exact sum needs more than ``budget``
    unsettled partial words (see the module docstring)."""
    if p < 1 or q < 1:
        return Fraction(0) if hands else None
    if math.comb(p + q, p) > TWO_VALUED_WORDS:
        return None
    return _two_valued_tv(int(p), int(q), int(hands), int(budget))


def _rising_sequences(perms: np.ndarray) -> np.ndarray:
    where = np.argsort(perms, axis=1)
    return 1 + np.count_nonzero(where[:, 1:] < where[:, :-1], axis=1)


@cache
def _small_law(start: tuple[int, ...], hands: int) -> dict[tuple[int, ...], Fraction]:
    n = len(start)
    perms = np.array(list(itertools.permutations(range(n))), dtype=np.int8)
    rises = _rising_sequences(perms)
    weight = {r: math.comb(hands + n - r, n) for r in range(1, n + 1)}
    codes = np.asarray(start, dtype=np.int64)[perms]
    base = int(codes.max()) + 1
    keys = codes @ (base ** np.arange(n - 1, -1, -1, dtype=np.int64))
    out: dict[int, int] = {}
    for key, r in zip(keys.tolist(), rises.tolist(), strict=True):
        out[key] = out.get(key, 0) + weight[r]
    denominator = hands**n
    law = {}
    for key, w in out.items():
        if not w:
            continue
        digits = []
        for _ in range(n):
            key, d = divmod(key, base)
            digits.append(d)
        law[tuple(reversed(digits))] = Fraction(w, denominator)
    return law


def small_deck_law(start: Sequence[int], hands: int) -> dict[tuple[int, ...], Fraction]:
    """Exact law of the word after an ``hands``-shuffle of a deck whose reference position
    ``i`` holds class ``start[i]`` (``n <= 9``): the arrangement law of [1] summed over all
    ``n!`` arrangements (the card at new position ``i`` came from old position
    ``sigma(i)``)."""
    values = tuple(int(x) for x in start)
    if len(values) > ENUMERATION_CARDS:
        raise InputError(f"the word law is summed for at most {ENUMERATION_CARDS} cards")
    return _small_law(values, int(hands))


@dataclass(frozen=True)
class FeatureDistances:
    """Distances of a feature's word after ``steps`` riffles, one labelled number each."""

    steps: int
    total_variation: Quantity
    separation: Quantity
    kl_bits: Quantity
    #: a rigorous lower bound on the total variation, where one is computed (the exact
    #: value needs none)
    total_variation_lower: Quantity | None = None
    #: a Monte Carlo estimate of the exact total variation, where one is computed (an
    #: alternating two-valued start too large for the exact sum)
    total_variation_estimate: Quantity | None = None

    def value(self, metric: str) -> Quantity:
        return getattr(self, metric)

    def total_variation_text(self) -> str:
        """The total variation with its label; with a lower bound, both ends rounded outward:
        ``0.1048 to 0.1049 (bounds)``."""
        if self.total_variation_lower is None:
            return self.total_variation.text()
        from shufflecheck.common.numbers import format_number

        low = format_number(self.total_variation_lower.value, 4, "down")
        high = format_number(self.total_variation.value, 4, "up")
        return f"{low} to {high} (bounds)"

    def as_json(self) -> dict:
        out = {
            "steps": self.steps,
            "total_variation": self.total_variation.as_json(),
            "separation": self.separation.as_json(),
            "kl_bits": self.kl_bits.as_json(),
        }
        if self.total_variation_lower is not None:
            out["total_variation_lower"] = self.total_variation_lower.as_json()
        if self.total_variation_estimate is not None:
            out["total_variation_estimate"] = self.total_variation_estimate.as_json()
        return out


def _small_distances(start: tuple[int, ...], hands: int) -> tuple[float, float, float]:
    law = small_deck_law(start, hands)
    counts = _class_counts(start)
    words = multinomial(counts)
    uniform = Fraction(1, words)
    tv = sum((abs(p - uniform) for p in law.values()), Fraction(0)) + uniform * (words - len(law))
    separation = 1 - words * min(law.values()) if len(law) == words else Fraction(1)
    kl = 0.0
    for p in law.values():
        t = p * words
        kl += kl_term(1 / words, float(t - 1), math.log(t))
    kl += (words - len(law)) / words  # words of probability 0: f(0) = 1
    return float(tv / 2), float(separation), kl / math.log(2)


def feature_distances(
    start: Sequence[int],
    steps: int,
    *,
    hands: int = 2,
    samples: int = ESTIMATE_SAMPLES,
    seed: int = 0,
) -> FeatureDistances:
    """The best labelled distances known for the word after ``steps`` riffles (``hands``
    packets each) of a deck whose reference position ``i`` holds class ``start[i]``.

    A two-valued start that alternates (:mod:`shufflecheck.models.alternating`) gets exact
    distances up to :data:`~shufflecheck.models.alternating.EXACT_WORDS` words and beyond
    that, when ``samples > 0`` and the work stays within
    :data:`~shufflecheck.models.alternating.ESTIMATE_WORK`, a Monte Carlo estimate of its
    exact total variation from ``samples`` uniform words drawn with ``seed``. A start in
    three or more blocks (:mod:`shufflecheck.models.block_words`) gets exact total variation
    and KL up to :data:`~shufflecheck.models.block_words.EXACT_WORDS` words and beyond that
    the same kind of estimate (within
    :data:`~shufflecheck.models.block_words.ESTIMATE_WORK`)."""
    return _feature_distances(
        tuple(int(x) for x in start), int(steps), int(hands), int(samples), int(seed)
    )


@lru_cache(maxsize=256)
def _feature_distances(
    values: tuple[int, ...], steps: int, hands: int, samples: int = 0, seed: int = 0
) -> FeatureDistances:
    n = len(values)
    counts = _class_counts(values)
    packets = hands**steps
    if n <= ENUMERATION_CARDS:
        tv, sep, kl = _small_distances(values, packets)
        how = f"exact: the arrangement law (Bayer & Diaconis 1992) summed over all {n}! orders"
        return FeatureDistances(
            steps,
            Quantity(tv, "exact", method=how),
            Quantity(sep, "exact", method=how),
            Quantity(kl, "exact", method=how, unit="bits"),
        )
    full = riffle.exact_distances(n, steps, hands=hands)
    if max(counts) == 1:  # every class one card: the word is the arrangement itself
        how = "exact: every class one card, so the word is the arrangement (Bayer & Diaconis 1992)"
        return FeatureDistances(
            steps,
            Quantity(full.total_variation, "exact", method=how),
            Quantity(full.separation, "exact", method=how),
            Quantity(full.kl_bits, "exact", method=how, unit="bits"),
        )
    distinct = "distinct-card distance (Bayer & Diaconis 1992): a feature is never farther"
    tv = Quantity(full.total_variation, "bound", side="upper", method=distinct)
    sep = Quantity(full.separation, "bound", side="upper", method=distinct)
    kl = Quantity(full.kl_bits, "bound", side="upper", method=distinct, unit="bits")
    lower = None
    top = alternating_class(values)
    if top is not None:
        return _alternating(values, steps, packets, samples, seed, tv, sep, kl)
    runs = block_runs(values)
    if runs is not None:
        counts = runs  # the classes renamed in the order of their blocks
        exact_sep = float(block_separation(counts, packets))
        sep = Quantity(
            exact_sep, "exact", method="exact: least likely word of a start in blocks (derived)"
        )
        if exact_sep < tv.value:
            tv = Quantity(exact_sep, "bound", side="upper", method="total variation <= separation")
        if len(counts) == 2:
            exact_tv = two_valued_block_tv(counts[0], counts[1], packets)
            if exact_tv is not None:
                tv = Quantity(
                    float(exact_tv),
                    "exact",
                    method="exact: two-valued deck in blocks, sum over all words (derived)",
                )
            else:
                tv, lower = _bracketed(tv, counts, packets)
        elif len(counts) > 2:
            if 1 < max(counts) <= block_words.MAX_CLASS:
                return _many_blocks(counts, steps, packets, samples, seed, tv, sep, kl)
            lower = merged_lower_bound(counts, packets)
    return FeatureDistances(steps, tv, sep, kl, lower)


def _many_blocks(
    counts: tuple[int, ...],
    steps: int,
    packets: int,
    samples: int,
    seed: int,
    tv: Quantity,
    sep: Quantity,
    kl: Quantity,
) -> FeatureDistances:
    """Distances of a start in three or more blocks (:mod:`shufflecheck.models.block_words`):
    exact while the words are few, else the bounds given, a lower bound from merged classes
    (:func:`merged_lower_bound`) and (``samples > 0``) an estimate of the exact total variation."""
    words = block_words.word_count(counts)
    if words <= block_words.EXACT_WORDS:
        t, _, k = block_words.block_distances(counts, packets)
        how = (
            f"exact: start in blocks, each word's chance (derived) summed over all {words:,} words"
        )
        return FeatureDistances(
            steps,
            Quantity(t, "exact", method=how),
            sep,
            Quantity(k, "exact", method=how, unit="bits"),
        )
    estimate = None
    if _fits(_blocks_cost(counts, samples), samples):
        found = block_words.block_tv_estimate(counts, packets, samples=samples, seed=seed)
        estimate = _estimate_quantity(found, seed, "the start in blocks")
    return FeatureDistances(steps, tv, sep, kl, merged_lower_bound(counts, packets), estimate)


def merged_lower_bound(counts: tuple[int, ...], packets: int) -> Quantity | None:
    """A rigorous lower bound for a start in blocks of ``counts`` (top block first): merge
    the classes above a cut between blocks into one and those below into another. The
    merged word is a function of the word, so its total variation (a two-valued deck in
    blocks, bracketed by :mod:`shufflecheck.models.two_valued`) is a lower bound. The
    :data:`MERGE_CUTS` cuts leaving the fewest cards on one side are tried (after a few
    riffles the most uneven split is the farthest), and the best lower end is kept."""
    from shufflecheck.models.two_valued import two_valued_tv_bracket

    n = sum(counts)
    cuts: dict[tuple[int, int], int] = {}
    above = 0
    for j, c in enumerate(counts[:-1], start=1):
        above += c
        cuts.setdefault((min(above, n - above), max(above, n - above)), j)
    best = None
    for (small, large), j in sorted(cuts.items())[:MERGE_CUTS]:
        found = two_valued_tv_bracket(small, large, packets, grid=MERGE_GRID)
        if found is not None and found.lower > 0 and (best is None or found.lower > best[0]):
            best = (found.lower, j)
    if best is None:
        return None
    lower, j = best
    top = sum(counts[:j])
    return Quantity(
        lower,
        "bound",
        side="lower",
        method=(
            f"lower bound: the {top} cards of the top {j} classes merged against the other "
            f"{n - top}, a two-valued deck in blocks with rigorous bounds (derived); merging "
            "classes never adds distance"
        ),
    )


def _estimate_quantity(found: WordEstimate, seed: int, start: str) -> Quantity:
    return Quantity(
        found.value,
        "estimate",
        stderr=found.stderr,
        interval=(found.low, found.high),
        confidence=found.confidence,
        method=(
            f"Monte Carlo over {found.samples:,} uniform words (seed {seed}), each word's "
            f"exact chance for {start} (derived)"
        ),
    )


def _alternating_cost(n: int, packets: int, samples: int) -> tuple[int, int]:
    """``(work, limit)`` of the Monte Carlo estimate of an alternating start."""
    return estimate_work(n, packets, samples), ESTIMATE_WORK


def _blocks_cost(runs: tuple[int, ...], samples: int) -> tuple[int, int]:
    """``(work, limit)`` of the Monte Carlo estimate of a start in blocks of ``runs``."""
    return block_words.estimate_work(runs, samples), block_words.ESTIMATE_WORK


def _fits(cost: tuple[int, int], samples: int) -> bool:
    return samples > 0 and cost[0] <= cost[1]


def _estimate_cost(values: tuple[int, ...], packets: int, samples: int) -> tuple[int, int] | None:
    """``(work, limit)`` of the Monte Carlo estimate that ``values`` takes after one
    ``packets``-shuffle: a start that alternates, or lies in three or more blocks, too large
    for the exact sum (the routes of :func:`feature_distances`). None when it takes none."""
    n = len(values)
    if samples <= 0 or n <= ENUMERATION_CARDS:
        return None
    if alternating_class(values) is not None:
        if math.comb(n, n // 2) <= ALTERNATING_EXACT_WORDS:
            return None
        return _alternating_cost(n, packets, samples)
    runs = block_runs(values)
    if runs is None or len(runs) < 3 or not 1 < max(runs) <= block_words.MAX_CLASS:
        return None
    if block_words.word_count(runs) <= block_words.EXACT_WORDS:
        return None
    return _blocks_cost(runs, samples)


def estimate_skipped(start: Sequence[int], samples: int, *, hands: int = 2) -> str | None:
    """One line saying why a start that takes a Monte Carlo estimate (alternating, or in
    three or more blocks, too large for the exact sum) gets none even after one riffle:
    ``samples`` words would exceed the work limit. None when an estimate is made, exact
    values are given, or the start takes no estimate."""
    samples = int(samples)
    cost = _estimate_cost(tuple(int(x) for x in start), int(hands), samples)
    if cost is None or cost[0] <= cost[1]:
        return None
    work, limit = cost
    fits = samples * limit // work
    advice = f"--simulate {fits:,} or fewer fits" if fits >= 2 else "no sample size fits"
    return (
        f"No Monte Carlo estimate: {samples:,} words would take about {work:.1e} "
        f"multiply-adds, beyond the limit of {limit:.0e} (10 to 15 s of CPU); {advice}."
    )


def _alternating(
    values: tuple[int, ...],
    steps: int,
    packets: int,
    samples: int,
    seed: int,
    tv: Quantity,
    sep: Quantity,
    kl: Quantity,
) -> FeatureDistances:
    """Distances of an alternating two-valued start: exact while the words are few, else
    the upper bounds given and (``samples > 0``) an estimate of the exact total variation."""
    n = len(values)
    if math.comb(n, n // 2) <= ALTERNATING_EXACT_WORDS:
        t, s, k = alternating_distances(n, packets)
        how = (
            f"exact: alternating two-valued start, each word's chance (derived) summed over "
            f"all {math.comb(n, n // 2):,} words"
        )
        return FeatureDistances(
            steps,
            Quantity(t, "exact", method=how),
            Quantity(s, "exact", method=how),
            Quantity(k, "exact", method=how, unit="bits"),
        )
    estimate = None
    if _fits(_alternating_cost(n, packets, samples), samples):
        found = alternating_tv_estimate(n, packets, samples=samples, rng=seed)
        estimate = _estimate_quantity(found, seed, "the alternating start")
    lower = None
    walk = walk_tv_lower(n, packets)
    if walk is not None and walk.lower > 0:
        how = (
            "the exact law of the highest and lowest points of the word's walk"
            if walk.whole
            else f"the uniform chance of a walk wider than {packets}, which the shuffle never gives"
        )
        lower = Quantity(
            walk.lower,
            "bound",
            side="lower",
            method=f"lower bound: {how} (derived; a function of the word is never farther)",
        )
    return FeatureDistances(steps, tv, sep, kl, lower, estimate)


def _bracketed(tv: Quantity, counts: tuple[int, ...], packets: int):
    """The two-valued bracket of :mod:`shufflecheck.models.two_valued` (when within its work
    limit): its upper end where it beats ``tv``, and its lower end."""
    from shufflecheck.models.two_valued import two_valued_tv_bracket

    found = two_valued_tv_bracket(counts[0], counts[1], packets)
    if found is None:
        return tv, None
    how = (
        f"two-valued deck in blocks: likelihood ratios summed on a grid of {found.grid:,} "
        "steps, both ends rigorous (derived)"
    )
    if found.upper < tv.value:
        tv = Quantity(found.upper, "bound", side="upper", method=how)
    return tv, Quantity(found.lower, "bound", side="lower", method=how)


@dataclass(frozen=True)
class FeatureCurve:
    """Feature distances after ``k = 1..K`` riffles, with what the start and feature are."""

    feature: str
    start: str
    cards: int
    hands: int
    classes: tuple[str, ...]
    class_counts: tuple[int, ...]
    rows: tuple[FeatureDistances, ...]

    def minimum(self, metric: str, target: float | None) -> int | None:
        """First ``k`` whose exact value or rigorous upper bound meets ``target``."""
        if target is None:
            return None
        for row in self.rows:
            q = row.value(metric)
            if q.kind == "exact" or (q.kind == "bound" and q.side == "upper"):
                if q.value <= target:
                    return row.steps
        return None

    def proven_short(self, metric: str, target: float | None) -> tuple[int, Quantity] | None:
        """The last ``k`` whose exact value or rigorous lower bound exceeds ``target``, with
        that figure: fewer than ``k + 1`` riffles are proven not to meet the target. None
        when no row is proven above it."""
        if target is None:
            return None
        found = None
        for row in self.rows:
            q = row.value(metric)
            if q.kind != "exact":
                q = row.total_variation_lower if metric == "total_variation" else None
            if q is not None and q.value > target:
                found = (row.steps, q)
        return found

    def estimated_minimum(self, target: float | None) -> tuple[int, Quantity] | None:
        """First ``k`` whose Monte Carlo estimate of the total variation has the upper end
        of its interval at most ``target``, with that estimate; None when no estimated row
        meets it. An estimate, not a certificate: :meth:`minimum` is the certified count."""
        if target is None:
            return None
        for row in self.rows:
            q = row.total_variation_estimate
            if q is not None and q.interval is not None and q.interval[1] <= target:
                return row.steps, q
        return None


def feature_curve(
    start: Sequence[int],
    max_steps: int,
    *,
    hands: int = 2,
    feature: str = "",
    start_name: str = "",
    names: Sequence[str] = (),
    progress: Callable[[int], None] | None = None,
    samples: int = ESTIMATE_SAMPLES,
    seed: int = 0,
) -> FeatureCurve:
    """:func:`feature_distances` for ``k = 1..max_steps`` riffles; ``progress(k)`` is called
    after each row. Monte Carlo estimates (``samples`` words, ``seed``) stop after the first
    row estimated below :data:`ESTIMATE_FLOOR` (the total variation never grows with more
    riffles, and each row costs about twice the one before)."""
    values = tuple(int(x) for x in start)
    counts = _class_counts(values)
    rows = []
    for k in range(1, max_steps + 1):
        row = feature_distances(values, k, hands=hands, samples=samples, seed=seed)
        rows.append(row)
        found = row.total_variation_estimate
        if found is not None and found.value < ESTIMATE_FLOOR:
            samples = 0
        if progress is not None:
            progress(k)
    return FeatureCurve(feature, start_name, len(values), hands, tuple(names), counts, tuple(rows))


def feature_curve_until(
    start: Sequence[int],
    default_steps: int,
    target: float | None,
    metric: str,
    *,
    max_steps: int | None = None,
    hands: int = 2,
    feature: str = "",
    start_name: str = "",
    names: Sequence[str] = (),
    progress: Callable[[int], None] | None = None,
    samples: int = ESTIMATE_SAMPLES,
    seed: int = 0,
) -> FeatureCurve:
    """:func:`feature_curve` over ``max_steps`` riffles when given; otherwise over
    ``default_steps``, doubled up to the exact riffle law's limit
    (:data:`~shufflecheck.models.riffle.MAX_EXACT_STEPS`) until ``metric`` (exact or upper
    bound) meets ``target``, then cut back to the first step meeting it (never below
    ``default_steps``); ``len(curve.rows) > default_steps`` says the range was extended."""
    options = {
        "hands": hands,
        "feature": feature,
        "start_name": start_name,
        "names": names,
        "progress": progress,
        "samples": samples,
        "seed": seed,
    }
    if max_steps is not None or target is None:
        return feature_curve(start, default_steps if max_steps is None else max_steps, **options)
    most = max(default_steps, riffle.MAX_EXACT_STEPS)
    steps = default_steps
    while True:
        curve = feature_curve(start, steps, **options)
        first = curve.minimum(metric, target)
        if first is not None and steps > default_steps:
            return replace(curve, rows=curve.rows[: max(default_steps, first)])
        if first is not None or steps >= most:
            return curve
        steps = min(2 * steps, most)
