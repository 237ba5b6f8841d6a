"""Exact null laws of per-deck statistics, and of their sums over many decks.

Under the hypothesis that every recorded deck is a uniformly random arrangement, drawn
independently of the others, each statistic of one deck has an exact law counted in
integers (:class:`Law`: ``counts[k]`` equally likely arrangements give the value
``offset + k``, out of ``total``). The sum of a statistic over ``D`` decks then has the
``D``-fold convolution of that law as its exact law. :func:`sum_tail_logs` evaluates the two
tails of that convolution at an observed sum, for any ``D`` up to millions, by exponential
tilting ([4]_): the per-deck law is tilted so that its mean is the observed per-deck mean,
the tilted ``D``-fold convolution is computed with one FFT on a window that holds all but
``exp(-80)`` of its mass (Bernstein's inequality, [5]_), and the tilt is undone exactly:

    P(S = s) = M(theta)^D exp(-theta s) P_theta(S = s)                # eq. (2.1) of [4]

so the tail that matters is computed where the tilted law is largest, with a relative
accuracy near 1e-10 even when the p-value is far below the smallest double (the result is a
natural logarithm). Only the floating-point evaluation is approximate; the law is exact.

References
----------
.. [1] L. Comtet, *Advanced Combinatorics*, Reidel, 1974 (Eulerian, Stirling, rencontres).
.. [2] J. Riordan, "A recurrence for permutations without rising or falling successions",
       Ann. Math. Statist. 36 (1965) 708-710; D. P. Robbins, "The probability that
       neighbors remain neighbors after random rearrangements", Amer. Math. Monthly 87
       (1980) 122-124 (adjacent pairs in either order, OEIS A001100 / A002464).
.. [3] A. Wald and J. Wolfowitz, "On a test whether two samples are from the same
       population", Ann. Math. Statist. 11 (1940) 147-162 (runs of two kinds); for several
       kinds, the inclusion-exclusion over merged blocks in Stanley, *Enumerative
       Combinatorics* vol. 1, 2nd ed., 2012, section 4.7 (Smirnov words).
.. [4] J. L. Jensen, *Saddlepoint Approximations*, Oxford University Press, 1995, ch. 2
       (exponential tilting / Esscher transform of sums of independent variables).
.. [5] S. Bernstein, *The Theory of Probabilities*, 1946; see S. Boucheron, G. Lugosi and
       P. Massart, *Concentration Inequalities*, Oxford University Press, 2013, Thm. 2.10.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from functools import cache, cached_property

import numpy as np
from scipy import fft as sp_fft

from shufflecheck.common.errors import InputError
from shufflecheck.core.counting import (
    eulerian_row,
    mahonian_row,
    multinomial,
    rencontres_row,
    stirling1_row,
    successions_row,
)
from shufflecheck.core.roots import brent_root

__all__ = [
    "Law",
    "LawBracket",
    "SumDistribution",
    "adjacency_row",
    "adjacent_pairs_law",
    "card_position_law",
    "cycles_law",
    "cyclic_rising_law",
    "cyclic_valleys_law",
    "descents_law",
    "fixed_points_law",
    "guessing_law",
    "inversions_law",
    "law_bytes",
    "mixed_sum_p_value",
    "mixed_sum_tail_logs",
    "repeat_positions_law",
    "rising_law",
    "runs_law",
    "runs_row",
    "successions_law",
    "sum_distribution",
    "sum_p_value",
    "sum_tail_logs",
]

#: Mass allowed outside the FFT window, as a natural log: exp(-80) ~ 1.8e-35.
_WINDOW_LOG_MASS = 80.0
#: Largest FFT window (points); beyond it the statistic's range is too wide for this method.
_MAX_WINDOW = 1 << 27


@dataclass(frozen=True)
class Law:
    """Exact law of an integer statistic: ``P(X = offset + k) = counts[k] / total``.

    ``counts`` are Python ints (numbers of equally likely arrangements) with no zero at
    either end; ``sum(counts) == total``.
    """

    counts: tuple[int, ...]
    total: int
    offset: int = 0

    def __post_init__(self) -> None:
        if not self.counts or self.counts[0] == 0 or self.counts[-1] == 0:
            raise InputError("a law needs counts with no zero at either end")
        if sum(self.counts) != self.total:
            raise InputError("a law's counts must add up to its total")

    @classmethod
    def from_counts(cls, counts: tuple[int, ...] | list[int], total: int, offset: int = 0) -> Law:
        """Build a law, dropping zero counts at both ends (the offset follows)."""
        values = list(counts)
        lo = 0
        while lo < len(values) and values[lo] == 0:
            lo += 1
        hi = len(values)
        while hi > lo and values[hi - 1] == 0:
            hi -= 1
        return cls(tuple(values[lo:hi]), total, offset + lo)

    @property
    def low(self) -> int:
        """Smallest value with positive probability."""
        return self.offset

    @property
    def high(self) -> int:
        """Largest value with positive probability."""
        return self.offset + len(self.counts) - 1

    def probability(self, value: int) -> Fraction:
        """Exact ``P(X = value)``."""
        k = value - self.offset
        if 0 <= k < len(self.counts):
            return Fraction(self.counts[k], self.total)
        return Fraction(0)

    @cached_property
    def mean(self) -> Fraction:
        """Exact mean."""
        return Fraction(sum((self.offset + k) * c for k, c in enumerate(self.counts)), self.total)

    @cached_property
    def variance(self) -> Fraction:
        """Exact variance."""
        second = Fraction(
            sum((self.offset + k) ** 2 * c for k, c in enumerate(self.counts)), self.total
        )
        return second - self.mean**2

    @cached_property
    def log_pmf(self) -> np.ndarray:
        """Natural logs of the probabilities of ``offset + k`` (``-inf`` where zero)."""
        log_total = math.log(self.total)
        out = np.array([math.log(c) - log_total if c else -math.inf for c in self.counts])
        out.flags.writeable = False
        return out

    @cached_property
    def pmf(self) -> np.ndarray:
        """Probabilities as floats (exact ratios rounded once; tiny ones may underflow)."""
        out = np.array([c / self.total for c in self.counts])
        out.flags.writeable = False
        return out


def _dyadic_law(pieces: dict[int, float], rest_at: int, low: int, high: int) -> Law:
    """An exact law over ``low..high``: each float piece rounded down to a multiple of
    ``2**-_DYADIC_BITS`` (floats are dyadic, so this is exact), the rest of the mass at
    ``rest_at``."""
    scale = 1 << _DYADIC_BITS
    counts = [0] * (high - low + 1)
    for value, mass in pieces.items():
        if mass > 0:
            counts[value - low] += math.floor(Fraction(mass) * scale)
    used = sum(counts)
    if used > scale:  # cannot happen for masses that add up to at most one; be safe
        raise InputError("a law bracket's kept masses add up to more than one")
    counts[rest_at - low] += scale - used
    return Law.from_counts(counts, scale, offset=low)


#: Bits of the common denominator of the bounding laws of a :class:`LawBracket`.
_DYADIC_BITS = 160


@dataclass(frozen=True)
class LawBracket:
    """A law known to within a stated bound, not exactly.

    ``kept[k]`` is a lower bound (before the rounding allowance) on ``P(X = offset + k)``:
    the mass a computation followed to the end. Mass it set aside is at most
    ``set_aside`` in total; ``aside_low`` / ``aside_high`` (``(value, mass)`` pairs) are
    that mass placed stochastically below and above where it truly lies: piece by piece at
    the smallest and largest value it can reach, or spread over a law that bounds it.
    Floating-point rounding is within a relative ``rounding`` of every kept mass (and of
    the set-aside total, already included in ``set_aside``). Every value of ``X`` lies in
    ``low..high``. So

        kept[k] (1 - rounding) <= P(X = offset + k) <= kept[k] (1 + rounding) + set_aside

    and the same for tails, where only set-aside pieces that can reach the tail count.
    :meth:`lower_law` and :meth:`upper_law` are exact laws (dyadic denominators) that are
    stochastically below and above ``X``, so any p-value computed from them brackets the
    true one.
    """

    kept: tuple[float, ...]
    offset: int
    set_aside: float
    rounding: float
    low: int
    high: int
    aside_low: tuple[tuple[int, float], ...] = ()
    aside_high: tuple[tuple[int, float], ...] = ()
    method: str = ""
    states: int = 0
    exact_mean: Fraction | None = None

    def __post_init__(self) -> None:
        if not self.low <= self.offset or self.offset + len(self.kept) - 1 > self.high:
            raise InputError("a law bracket's kept values must lie within low..high")
        if self.set_aside < 0 or not 0 <= self.rounding < 1:
            raise InputError("a law bracket needs a set-aside bound >= 0 and rounding in [0, 1)")

    def _kept(self, value: int) -> float:
        k = value - self.offset
        return self.kept[k] if 0 <= k < len(self.kept) else 0.0

    @property
    def mean(self) -> Fraction:
        """The exact mean when the computation knows it (``exact_mean``), else the midpoint
        of :meth:`mean_bounds`."""
        if self.exact_mean is not None:
            return self.exact_mean
        low, high = self.mean_bounds()
        return (low + high) / 2

    @property
    def pmf(self) -> np.ndarray:
        """The kept masses as floats (lower bounds, values ``offset`` onwards)."""
        out = np.array(self.kept)
        out.flags.writeable = False
        return out

    @property
    def kept_mass(self) -> float:
        """Total kept mass (at most one)."""
        return math.fsum(self.kept)

    @property
    def width(self) -> float:
        """Largest width of the bracket on one probability: ``set_aside`` plus twice the
        rounding of the largest kept mass."""
        return self.set_aside + 2 * self.rounding * max(self.kept, default=0.0)

    def probability_bounds(self, value: int) -> tuple[float, float]:
        """``(lo, hi)`` with ``lo <= P(X = value) <= hi``."""
        if value < self.low or value > self.high:
            return 0.0, 0.0
        kept = self._kept(value)
        reach = math.fsum(m for v, m in self.aside_low if v <= value)
        reach = min(reach, math.fsum(m for v, m in self.aside_high if v >= value))
        aside = min(self.set_aside, reach * (1 + self.rounding))
        return kept * (1 - self.rounding), min(1.0, kept * (1 + self.rounding) + aside)

    def tail_bounds(self, value: int, alternative: str = "greater") -> tuple[float, float]:
        """``(lo, hi)`` bracketing ``P(X >= value)`` (``greater``) or ``P(X <= value)``
        (``less``)."""
        if alternative == "greater":
            kept = math.fsum(self._kept(v) for v in range(value, self.offset + len(self.kept)))
            reach = math.fsum(m for v, m in self.aside_high if v >= value)
        elif alternative == "less":
            kept = math.fsum(self._kept(v) for v in range(self.offset, value + 1))
            reach = math.fsum(m for v, m in self.aside_low if v <= value)
        else:
            raise InputError(f"alternative must be greater or less, got {alternative!r}")
        aside = min(self.set_aside, reach * (1 + self.rounding))
        return kept * (1 - self.rounding), min(1.0, kept * (1 + self.rounding) + aside)

    def _pieces(self, aside: tuple[tuple[int, float], ...]) -> dict[int, float]:
        shrink = 1 - self.rounding
        pieces: dict[int, float] = {}
        for k, mass in enumerate(self.kept):
            pieces[self.offset + k] = mass * shrink
        for value, mass in aside:
            pieces[value] = pieces.get(value, 0.0) + mass * shrink
        # rounding down once more keeps every piece below its true mass
        return {v: math.nextafter(m, 0.0) for v, m in pieces.items() if m > 0}

    @cached_property
    def lower_law(self) -> Law:
        """An exact law stochastically below ``X``: kept and set-aside pieces (shrunk by
        the rounding allowance) at their lowest values, the rest at ``low``."""
        return _dyadic_law(self._pieces(self.aside_low), self.low, self.low, self.high)

    @cached_property
    def upper_law(self) -> Law:
        """An exact law stochastically above ``X``: kept and set-aside pieces (shrunk by
        the rounding allowance) at their highest values, the rest at ``high``."""
        return _dyadic_law(self._pieces(self.aside_high), self.high, self.low, self.high)

    def mean_bounds(self) -> tuple[Fraction, Fraction]:
        """Exact bounds on the mean (the means of :attr:`lower_law` and :attr:`upper_law`)."""
        return self.lower_law.mean, self.upper_law.mean


# --------------------------------------------------------------------------- per-deck laws


def _check_cards(n: int) -> int:
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise InputError(f"a deck needs at least 1 card, got {n!r}")
    return int(n)


@cache
def rising_law(n: int) -> Law:
    """Rising sequences of a uniform deck of ``n`` cards: Eulerian numbers, values 1..n.

    ``r`` rising sequences <=> the inverse arrangement has ``r - 1`` descents ([1], p. 243).
    """
    n = _check_cards(n)
    return Law.from_counts(eulerian_row(n), math.factorial(n), offset=1)


@cache
def descents_law(n: int) -> Law:
    """Descents (a card above a card earlier in the reference): Eulerian numbers, 0..n-1."""
    n = _check_cards(n)
    return Law.from_counts(eulerian_row(n), math.factorial(n))


@cache
def fixed_points_law(n: int) -> Law:
    """Cards left at their reference position: rencontres numbers ([1], p. 180)."""
    n = _check_cards(n)
    return Law.from_counts(rencontres_row(n), math.factorial(n))


@cache
def cycles_law(n: int) -> Law:
    """Cycles of the arrangement: unsigned Stirling numbers of the first kind, 1..n."""
    n = _check_cards(n)
    return Law.from_counts(stirling1_row(n), math.factorial(n))


def law_bytes(n: int) -> int:
    """Memory the battery's exact laws need at ``n`` cards, in bytes: dominated by the
    Mahonian row (``n(n-1)/2 + 1`` integers of about ``log2 n!`` bits) and its working
    copies (measured: 1.8 GB at 832 cards and 2.6 GB at 1,000, peak resident size of a
    whole audit; the estimate stays near those)."""
    n = max(int(n), 2)
    digits = math.lgamma(n + 1) / math.log(2) / 8  # bytes of one integer about n!
    return int(5 * (n * (n - 1) // 2 + 1) * (digits + 64)) + (64 << 20)


@cache
def inversions_law(n: int) -> Law:
    """Inversions (Kendall distance to the reference): Mahonian numbers, 0..n(n-1)/2."""
    n = _check_cards(n)
    return Law.from_counts(mahonian_row(n), math.factorial(n))


@cache
def successions_law(n: int) -> Law:
    """Successions (reference card ``i+1`` directly below card ``i``): C(n-1,k) a(n-1-k)."""
    n = _check_cards(n)
    return Law.from_counts(successions_row(n), math.factorial(n))


@cache
def cyclic_rising_law(n: int) -> Law:
    """Cyclic rising sequences (:func:`~shufflecheck.stats.statistics.cyclic_rising_sequences`)
    of a uniform deck: ``n A(n-1, k-1)`` arrangements have ``k`` of them, ``k = 1..n-1``.

    They are the cyclic descents of the inverse arrangement; turning its cyclic word so
    that the largest entry comes last leaves ``1 + des`` of a uniform arrangement of the
    other ``n - 1`` entries, and each of the ``n`` turns is one arrangement (derived in
    docs/methods.md, checked by brute force).
    """
    n = _check_cards(n)
    if n == 1:
        return Law((1,), 1, offset=1)
    return Law.from_counts([n * c for c in eulerian_row(n - 1)], math.factorial(n), offset=1)


@cache
def cyclic_valleys_law(n: int) -> Law:
    """Cyclic valleys (:func:`~shufflecheck.stats.statistics.cyclic_valleys`) of a uniform
    deck: ``n V(n-1, k-1)`` arrangements have ``k``, with ``V`` the arrangements of
    ``n - 1`` cards by valleys (OEIS A008303, by turning every label ``x`` into
    ``n - 2 - x``). Turning the circle so that the lowest card comes last, it is a valley
    and the others are the valleys of the first ``n - 1`` cards read in a line (derived in
    docs/methods.md, checked by brute force)."""
    from shufflecheck.models.shelf import valley_counts

    n = _check_cards(n)
    if n == 1:
        return Law((1,), 1)
    return Law.from_counts([n * c for c in valley_counts(n - 1)], math.factorial(n), offset=1)


@cache
def adjacency_row(n: int) -> tuple[int, ...]:
    """``row[k]``: arrangements of ``n`` cards in which exactly ``k`` of the ``n - 1``
    reference neighbour pairs ``{i, i+1}`` are still next to each other, in either order.

    Inclusion-exclusion over sets ``S`` of ``s`` neighbour pairs that are forced to stay
    adjacent: the pairs of ``S`` form ``c`` maximal runs, each run of ``j`` pairs glues
    ``j + 1`` consecutive cards into a block that reads up or down (2 ways), so ``2^c (n-s)!``
    arrangements keep all of ``S``; there are ``C(s-1, c-1) C(n-s, c)`` sets with ``s``
    pairs in ``c`` runs. With ``N(s)`` the sum over those sets,
    ``row[k] = sum_{s >= k} (-1)^(s-k) C(s, k) N(s)`` ([2]; OEIS A001100, column 0 A002464).
    """
    n = _check_cards(n) if n else 0
    if n <= 1:
        return (1,)
    forced = [math.factorial(n)]  # N(0)
    for s in range(1, n):
        ways = sum(math.comb(s - 1, c - 1) * math.comb(n - s, c) * 2**c for c in range(1, s + 1))
        forced.append(ways * math.factorial(n - s))
    row = []
    for k in range(n):
        row.append(sum((-1) ** (s - k) * math.comb(s, k) * forced[s] for s in range(k, n)))
    return tuple(row)


@cache
def adjacent_pairs_law(n: int) -> Law:
    """Reference neighbours still adjacent (either order): :func:`adjacency_row`."""
    n = _check_cards(n)
    return Law.from_counts(adjacency_row(n), math.factorial(n))


@cache
def card_position_law(n: int) -> Law:
    """Position (0 = top) of one given card in a uniform deck: uniform on 0..n-1."""
    n = _check_cards(n)
    return Law((1,) * n, n)


def _category_counts(counts: tuple[int, ...]) -> tuple[int, ...]:
    out = tuple(int(c) for c in counts if c)
    if any(c < 0 for c in out):
        raise InputError("category counts must be >= 0")
    return out


@cache
def runs_row(counts: tuple[int, ...]) -> tuple[int, ...]:
    """``row[r]``: words with ``counts[j]`` letters of kind ``j`` that have ``r`` runs.

    A run is a maximal block of equal letters (e.g. consecutive cards of one suit). All
    ``multinomial(n; counts)`` words are equally likely when the deck is uniform, so the row
    divided by that multinomial is the exact law of the number of runs.

    Method: a word with ``b_j`` blocks of kind ``j`` is a composition of each ``counts[j]``
    into ``b_j`` parts (``C(c_j - 1, b_j - 1)`` ways) times a word of blocks with no two
    equal neighbours; counting the latter by inclusion-exclusion over merged blocks ([3])
    collapses to ``P(x) = sum_A q_A x^A (1 - x)^(n - A)``, where
    ``q_A = sum_{a_1+..+a_m = A} A!/prod a_j! prod C(c_j - 1, a_j - 1)`` is built one kind
    at a time in integers; ``row[r]`` is the coefficient of ``x^r`` in ``P``.
    """
    parts = _category_counts(counts)
    n = sum(parts)
    if n == 0:
        return (1,)
    q = {0: 1}
    for c in parts:
        nxt: dict[int, int] = {}
        for total_a, value in q.items():
            for a in range(1, c + 1):
                key = total_a + a
                nxt[key] = nxt.get(key, 0) + value * math.comb(key, a) * math.comb(c - 1, a - 1)
        q = nxt
    row = [0] * (n + 1)
    for r in range(n + 1):
        row[r] = sum(
            value * math.comb(n - a, r - a) * (-1) ** (r - a) for a, value in q.items() if a <= r
        )
    return tuple(row)


@cache
def _runs_law(parts: tuple[int, ...]) -> Law:
    return Law.from_counts(runs_row(parts), multinomial(parts))


def runs_law(category_counts: tuple[int, ...] | list[int] | np.ndarray) -> Law:
    """Runs of equal categories (suits, colours) along a uniform deck with these counts.

    The law does not depend on the order of the categories, so counts are sorted first
    (one cache entry per multiset).
    """
    parts = tuple(sorted(_category_counts(tuple(int(c) for c in category_counts))))
    if not parts:
        raise InputError("runs need at least one card with a category")
    return _runs_law(parts)


@cache
def guessing_law(n: int) -> Law:
    """Correct guesses in the guessing game with feedback, for any strategy that always
    names an unseen card: a sum of independent Bernoulli(1/j), j = 1..n, whose law is
    ``stirling1_row(n) / n!`` (values 1..n: the last card is always guessed)."""
    n = _check_cards(n)
    return Law.from_counts(stirling1_row(n), math.factorial(n))


@cache
def repeat_positions_law(n: int) -> Law:
    """Positions holding the same card in two consecutive independent uniform decks.

    With ``a``, ``b`` the two arrangements, the count is the number of fixed points of
    ``a^-1 b``, which is uniform and independent of ``a``: rencontres numbers. Differences
    of a sequence of independent uniform decks are again independent and uniform, so the
    counts of successive pairs are independent too.
    """
    return fixed_points_law(n)


# --------------------------------------------------------------------------- sums over D decks


def _check_decks(decks: int) -> int:
    if isinstance(decks, bool) or not isinstance(decks, (int, np.integer)) or decks < 1:
        raise InputError(f"the number of decks must be an integer >= 1, got {decks!r}")
    return int(decks)


def _log_mgf(log_q: np.ndarray, ks: np.ndarray, theta: float) -> float:
    z = log_q + theta * ks
    top = float(np.max(z))
    return top + math.log(float(np.sum(np.exp(z - top))))


def _tilted(log_q: np.ndarray, ks: np.ndarray, theta: float) -> tuple[np.ndarray, float]:
    """Tilted probabilities ``q_k e^{theta k} / M(theta)`` and ``log M(theta)``."""
    z = log_q + theta * ks
    top = float(np.max(z))
    w = np.exp(z - top)
    total = float(np.sum(w))
    return w / total, top + math.log(total)


def _solve_tilt(log_q: np.ndarray, ks: np.ndarray, x: float) -> float:
    """``theta`` with tilted mean ``x`` (any ``theta`` is exact; this one is well conditioned)."""

    def gap(theta: float) -> float:
        r, _ = _tilted(log_q, ks, theta)
        return float(r @ ks) - x

    lo, hi = -1.0, 1.0
    while gap(lo) > 0:
        lo *= 2.0
        if lo < -1e7:
            break
    while gap(hi) < 0:
        hi *= 2.0
        if hi > 1e7:
            break
    g_lo, g_hi = gap(lo), gap(hi)
    if g_lo > 0:
        return lo
    if g_hi < 0:
        return hi
    return brent_root(gap, lo, hi, xtol=1e-10, rtol=1e-10, maxiter=200)


def _bernstein_half_width(decks: int, variance: float, spread: float) -> float:
    """``h`` with ``P(|S - ES| >= h) <= 2 exp(-L)`` for a sum of ``decks`` variables of this
    variance, each within ``spread`` of its mean (Bernstein's inequality, [5])."""
    big_l = _WINDOW_LOG_MASS
    third = spread * big_l / 3.0
    return third + math.sqrt(third * third + 2.0 * big_l * decks * variance)


def _windowed_convolution(r: np.ndarray, decks: int, start: int, stop: int) -> np.ndarray:
    """``P(T = t)`` for ``t = start..stop`` where ``T`` is a sum of ``decks`` draws from
    ``r`` (on 0..K-1), assuming all but a negligible mass of ``T`` lies in the window."""
    width = stop - start + 1
    size = sp_fft.next_fast_len(max(width, len(r)), real=True)
    if size > _MAX_WINDOW:
        raise InputError(
            f"the sum over {decks} decks spans {width} values, too wide for the exact method"
        )
    # |phi|^D e^{i D arg phi}, computed in place: at a million decks the window holds a
    # few million points, and each array of the spectrum is then several MB
    phi = sp_fft.rfft(r, size)
    angle = np.angle(phi)
    angle *= decks
    power = np.abs(phi)
    del phi
    with np.errstate(divide="ignore", under="ignore"):
        np.log(power, out=power)
        power *= decks
        np.exp(power, out=power)
    spectrum = 1j * angle
    del angle
    np.exp(spectrum, out=spectrum)
    spectrum *= power
    del power
    values = sp_fft.irfft(spectrum, size)
    del spectrum
    first = start % size  # the window, read cyclically from the circular convolution
    if first + width <= size:
        out = values[first : first + width].copy()
    else:
        out = np.concatenate([values[first:], values[: first + width - size]])
    del values
    np.clip(out, 0.0, None, out=out)
    return out


def sum_tail_logs(law: Law, decks: int, total: int) -> tuple[float, float]:
    """Natural logs of ``P(S <= total)`` and ``P(S >= total)``, ``S`` the sum over ``decks``
    independent draws from ``law`` (the exact ``decks``-fold convolution).

    Parameters
    ----------
    law : Law
        Exact per-deck law.
    decks : int
        Number of decks ``D`` (>= 1).
    total : int
        Observed sum of the statistic over the ``D`` decks.

    Returns
    -------
    (float, float)
        ``log P(S <= total)`` and ``log P(S >= total)``; ``-inf`` outside the support.

    Notes
    -----
    The tail on the far side of the mean is computed by exponential tilting
    (eq. (2.1) of [4]) on an FFT window holding all but ``exp(-80)`` of the tilted mass;
    the other tail is one minus it plus the point mass. Relative accuracy about 1e-10.
    """
    decks = _check_decks(decks)
    total = int(total)
    k_max = len(law.counts) - 1
    t = total - decks * law.offset
    t_max = decks * k_max
    if t < 0:
        return -math.inf, 0.0
    if t > t_max:
        return 0.0, -math.inf
    if k_max == 0:
        return 0.0, 0.0
    log_q = law.log_pmf
    if t == 0:
        return decks * float(log_q[0]), 0.0
    if t == t_max:
        return 0.0, decks * float(log_q[-1])
    ks = np.arange(k_max + 1, dtype=float)
    x = t / decks
    theta = _solve_tilt(log_q, ks, x)
    r, log_m = _tilted(log_q, ks, theta)
    mean_r = float(r @ ks)
    var_r = max(float(r @ (ks - mean_r) ** 2), 0.0)
    half = _bernstein_half_width(decks, var_r, max(k_max - mean_r, mean_r))
    start = max(0, math.floor(decks * mean_r - half))
    stop = min(t_max, math.ceil(decks * mean_r + half))
    start, stop = min(start, t), max(stop, t)
    tilted = _windowed_convolution(r, decks, start, stop)
    base = decks * log_m - theta * t  # log of M^D e^{-theta t}
    point = tilted[t - start]
    with np.errstate(divide="ignore"):
        log_point = base + math.log(point) if point > 0 else -math.inf
    upper_side = theta >= 0
    # the window's side of t: offsets from t of 0..stop-t (upper) or start-t..0 (lower)
    if upper_side:
        offsets = np.arange(0, stop - t + 1)
        side = tilted[t - start :].copy()
    else:
        offsets = np.arange(start - t, 1)
        side = tilted[: t - start + 1].copy()
    del tilted
    weights = np.exp(-theta * offsets)
    del offsets
    tail_sum = float(side @ weights)
    log_small = base + math.log(tail_sum) if tail_sum > 0 else -math.inf
    # the other tail: 1 - P(strictly beyond on the small side) = 1 - (small - point)
    strict = math.exp(log_small) - (math.exp(log_point) if log_point > -math.inf else 0.0)
    log_large = math.log1p(-min(max(strict, 0.0), 1.0 - 1e-300))
    log_small = min(log_small, 0.0)
    if upper_side:
        return log_large, log_small
    return log_small, log_large


def sum_p_value(law: Law, decks: int, total: int, alternative: str) -> float:
    """Natural log of the exact p-value of an observed sum over ``decks`` decks.

    ``alternative`` is ``"greater"`` (sum too large), ``"less"`` or ``"two-sided"``; the
    two-sided p-value doubles the smaller tail (capped at 1).
    """
    lower, upper = sum_tail_logs(law, decks, total)
    if alternative == "greater":
        return upper
    if alternative == "less":
        return lower
    if alternative == "two-sided":
        return min(0.0, math.log(2.0) + min(lower, upper))
    raise InputError(f"alternative must be 'greater', 'less' or 'two-sided', got {alternative!r}")


@dataclass(frozen=True)
class SumDistribution:
    """The law of a sum over ``decks`` draws on a window (floats, absolute error ~1e-15).

    ``pmf[j]`` is ``P(S = start + j)``; the mass outside the window is below ``2 exp(-80)``.
    Good for critical values and power at levels far above 1e-12; for p-values of observed
    sums use :func:`sum_tail_logs`, which keeps relative accuracy in the far tails.
    """

    decks: int
    start: int
    pmf: np.ndarray

    @cached_property
    def _cdf(self) -> np.ndarray:
        return np.cumsum(self.pmf)

    @cached_property
    def _sf(self) -> np.ndarray:
        return np.cumsum(self.pmf[::-1])[::-1]

    def cdf(self, value: int | np.ndarray) -> np.ndarray:
        """``P(S <= value)``."""
        j = np.asarray(value) - self.start
        out = np.where(j >= len(self.pmf), 1.0, 0.0)
        inside = (j >= 0) & (j < len(self.pmf))
        return np.where(inside, self._cdf[np.clip(j, 0, len(self.pmf) - 1)], out)

    def sf(self, value: int | np.ndarray) -> np.ndarray:
        """``P(S >= value)``."""
        j = np.asarray(value) - self.start
        out = np.where(j < 0, 1.0, 0.0)
        inside = (j >= 0) & (j < len(self.pmf))
        return np.where(inside, self._sf[np.clip(j, 0, len(self.pmf) - 1)], out)

    def lower_critical(self, level: float) -> int | None:
        """Largest ``c`` with ``P(S <= c) <= level`` (None if even the minimum exceeds it)."""
        j = int(np.searchsorted(self._cdf, level * (1 + 1e-12), side="right")) - 1
        return self.start + j if j >= 0 else None

    def upper_critical(self, level: float) -> int | None:
        """Smallest ``c`` with ``P(S >= c) <= level`` (None if even the maximum exceeds it)."""
        tail = self._sf
        ok = np.nonzero(tail <= level * (1 + 1e-12))[0]
        return self.start + int(ok[0]) if ok.size else None


def sum_distribution(pmf: np.ndarray, decks: int, *, offset: int = 0) -> SumDistribution:
    """The ``decks``-fold convolution of a per-deck ``pmf`` on ``offset + 0..K-1``.

    ``pmf`` may be an exact law's floats or an empirical (simulated) law; it is normalised.
    One FFT on a Bernstein window (see :func:`sum_tail_logs`); cost ``O(W log W)`` with
    ``W`` about ``2 * sqrt(160 D var)`` points.
    """
    decks = _check_decks(decks)
    q = np.asarray(pmf, dtype=float)
    if q.ndim != 1 or q.size == 0 or np.any(q < 0) or not np.isfinite(q).all():
        raise InputError("a per-deck pmf must be a non-empty 1-D array of probabilities")
    q = q / q.sum()
    nz = np.nonzero(q)[0]
    q = q[nz[0] : nz[-1] + 1]
    offset += int(nz[0])
    k_max = len(q) - 1
    if k_max == 0:
        return SumDistribution(decks, decks * offset, np.ones(1))
    ks = np.arange(k_max + 1, dtype=float)
    mean = float(q @ ks)
    var = float(q @ (ks - mean) ** 2)
    half = _bernstein_half_width(decks, var, max(k_max - mean, mean))
    start = max(0, math.floor(decks * mean - half))
    stop = min(decks * k_max, math.ceil(decks * mean + half))
    pmf_sum = _windowed_convolution(q, decks, start, stop)
    return SumDistribution(decks, decks * offset + start, pmf_sum)


def mixed_sum_tail_logs(parts: list[tuple[Law, int]], total: int) -> tuple[float, float]:
    """Natural logs of ``P(S <= total)`` and ``P(S >= total)`` for a sum of independent
    draws from several laws: ``parts = [(law_j, m_j), ...]`` draws ``m_j`` times from
    ``law_j`` (the exact convolution of all of them).

    The method of :func:`sum_tail_logs` with one tilt ``theta`` shared by every law
    (eq. (2.1) of [4]: the tilted sum is the sum of the tilted draws), the tilted laws'
    transforms multiplied on one FFT window (Bernstein's inequality, [5], with the summed
    variance and the largest spread of one draw). With one part it is
    :func:`sum_tail_logs`.
    """
    kept = [(law, _check_decks(m)) for law, m in parts if m]
    if not kept:
        raise InputError("a sum needs at least one draw")
    total = int(total)
    if len(kept) == 1:
        return sum_tail_logs(kept[0][0], kept[0][1], total)
    low = sum(m * law.low for law, m in kept)
    t = total - low
    t_max = sum(m * (len(law.counts) - 1) for law, m in kept)
    if t < 0:
        return -math.inf, 0.0
    if t > t_max:
        return 0.0, -math.inf
    if t_max == 0:
        return 0.0, 0.0
    if t == 0:
        return sum(m * float(law.log_pmf[0]) for law, m in kept), 0.0
    if t == t_max:
        return 0.0, sum(m * float(law.log_pmf[-1]) for law, m in kept)
    # the laws as rows of one matrix (log-probabilities, -inf beyond each law's end)
    width_k = max(len(law.counts) for law, _ in kept)
    log_q = np.full((len(kept), width_k), -np.inf)
    for j, (law, _) in enumerate(kept):
        log_q[j, : len(law.counts)] = law.log_pmf
    draws = np.array([m for _, m in kept], dtype=float)
    ks = np.arange(width_k, dtype=float)

    def tilted_all(theta: float) -> tuple[np.ndarray, np.ndarray]:
        z = log_q + theta * ks
        top = z.max(axis=1, keepdims=True)
        w = np.exp(z - top)
        total = w.sum(axis=1, keepdims=True)
        return w / total, (top + np.log(total))[:, 0]

    def gap(theta: float) -> float:
        r, _ = tilted_all(theta)
        return float(draws @ (r @ ks)) - t

    lo, hi = -1.0, 1.0
    while gap(lo) > 0 and lo > -1e7:
        lo *= 2.0
    while gap(hi) < 0 and hi < 1e7:
        hi *= 2.0
    if gap(lo) > 0:
        theta = lo
    elif gap(hi) < 0:
        theta = hi
    else:
        theta = brent_root(gap, lo, hi, xtol=1e-10, rtol=1e-10, maxiter=200)
    r, log_ms = tilted_all(theta)
    means = r @ ks
    ends = np.array([len(law.counts) - 1 for law, _ in kept], dtype=float)
    variances = np.maximum((r * (ks[None, :] - means[:, None]) ** 2).sum(axis=1), 0.0)
    mean = float(draws @ means)
    var = float(draws @ variances)
    spread = float(np.max(np.maximum(ends - means, means)))
    log_m = float(draws @ log_ms)
    decks = int(draws.sum())
    half = _bernstein_half_width(decks, var / decks, spread)
    start = max(0, math.floor(mean - half))
    stop = min(t_max, math.ceil(mean + half))
    start, stop = min(start, t), max(stop, t)
    width = stop - start + 1
    size = sp_fft.next_fast_len(max(width, width_k), real=True)
    if size > _MAX_WINDOW:
        raise InputError(f"the sum spans {width} values, too wide for the exact method")
    phi = sp_fft.rfft(r, size, axis=1)
    with np.errstate(divide="ignore"):
        log_mag = draws @ np.log(np.abs(phi))
    angle = draws @ np.angle(phi)
    with np.errstate(under="ignore"):
        values = sp_fft.irfft(np.exp(log_mag) * np.exp(1j * angle), size)
    window = values[np.arange(start, stop + 1) % size]
    np.clip(window, 0.0, None, out=window)
    offsets = np.arange(start, stop + 1) - t
    base = log_m - theta * t
    point = window[t - start]
    log_point = base + math.log(point) if point > 0 else -math.inf
    upper_side = theta >= 0
    mask = offsets >= 0 if upper_side else offsets <= 0
    tail_sum = float(window[mask] @ np.exp(-theta * offsets[mask]))
    log_small = base + math.log(tail_sum) if tail_sum > 0 else -math.inf
    strict = math.exp(log_small) - (math.exp(log_point) if log_point > -math.inf else 0.0)
    log_large = math.log1p(-min(max(strict, 0.0), 1.0 - 1e-300))
    log_small = min(log_small, 0.0)
    if upper_side:
        return log_large, log_small
    return log_small, log_large


def mixed_sum_p_value(parts: list[tuple[Law, int]], total: int, alternative: str) -> float:
    """Natural log of the exact p-value of a sum over decks whose per-deck laws differ
    (see :func:`mixed_sum_tail_logs`; alternatives as in :func:`sum_p_value`)."""
    lower, upper = mixed_sum_tail_logs(parts, total)
    if alternative == "greater":
        return upper
    if alternative == "less":
        return lower
    if alternative == "two-sided":
        return min(0.0, math.log(2.0) + min(lower, upper))
    raise InputError(f"alternative must be 'greater', 'less' or 'two-sided', got {alternative!r}")
