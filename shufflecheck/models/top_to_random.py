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

The exact integers grow like ``k log2 n`` bits, so beyond a small work budget the curve
follows instead the chain on the number ``D`` of distinct cards drawn (``D -> D + 1`` with
probability ``(n - D)/n``) in double precision: given ``D = d`` the deck is uniform on the
``n!/(n-d)!`` arrangements whose bottom ``n - d`` cards are increasing. Those rows are
labelled exact with the note "double precision" and a rigorous rounding-error bound
(:func:`chain_error`).

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
from collections.abc import Callable
from fractions import Fraction

import numpy as np

from shufflecheck.common.checks import check_cards, check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.numbers import gap_from_log
from shufflecheck.common.sources import ALDOUS_DIACONIS_1986, DIACONIS_FILL_PITMAN
from shufflecheck.core.characters import Eigenvalue
from shufflecheck.core.counting import rencontres_row, stirling2_columns
from shufflecheck.core.distances import (
    DistanceRow,
    MixingCurve,
    chi_square_from_groups,
    row_from_groups,
)
from shufflecheck.models.base import Step
from shufflecheck.models.permute import CHUNK_DECKS, deck_dtype, identity_decks, invert
from shufflecheck.models.registry import ModelEntry, register_model

__all__ = [
    "MAX_CHAIN_STEPS",
    "MAX_EXACT_CARDS",
    "MAX_EXACT_STEPS",
    "RandomToTop",
    "TopToRandom",
    "bottom_run_law",
    "chain_error",
    "chi_square",
    "curve_method",
    "distance_curve",
    "sample",
    "sample_random_to_top",
    "spectrum",
]

SOURCE = (
    "exact: random-to-top law through Stirling numbers of the second kind "
    "(Aldous & Diaconis 1986; same distances for top-to-random)"
)
CHAIN_SOURCE = (
    "exact: chain on the number of distinct cards drawn, double precision (Aldous & "
    "Diaconis 1986; same distances for top-to-random)"
)
BOUND_SOURCE = (
    "bound: strong uniform time, P(T > k) = 1 - n! S(k, n) / n^k (Aldous & Diaconis 1986)"
)
MAX_EXACT_CARDS = 2000
MAX_EXACT_STEPS = 20000


def spectrum(cards: int) -> list[Eigenvalue]:
    """Eigenvalues ``j/n`` with multiplicity the number of permutations with ``j`` fixed points.

    ``j = n-1`` never occurs (multiplicity 0) and is omitted ([2], Thm. 4.1). Offered up to
    :data:`MAX_EXACT_CARDS` cards.
    """
    check_cards(cards, most=MAX_EXACT_CARDS, why="the multiplicities are exact integers")
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


#: exact big-integer work done by the integer method (``exact_work`` units, about a second
#: of one core at 52 cards; slower per unit for wide decks, hence also FAST_EXACT_CARDS)
FAST_EXACT_WORK = 10**7
FAST_EXACT_CARDS = 250
#: the double-precision chain is offered up to this many steps (it costs O(n) per step)
MAX_CHAIN_STEPS = 200_000
CHAIN_METHOD = "chain on the number of distinct cards drawn, double precision"


def exact_work(cards: int, steps: int) -> int:
    """Work of the integer method: each step updates ``cards`` Stirling numbers of about
    ``k log2(cards)`` bits and sums them per group, so ``~cards * steps^2 * log2(cards) /
    60`` 30-bit digit operations over ``k = 1..steps``."""
    return int(cards * steps * steps * math.log2(cards) / 60) + cards * steps


def curve_method(cards: int, steps: int) -> str:
    """``"integers"`` (Stirling numbers, exact) while that is cheap, else ``"chain"``."""
    if cards <= FAST_EXACT_CARDS and exact_work(cards, steps) <= FAST_EXACT_WORK:
        return "integers"
    return "chain"


def chain_error(cards: int, steps: int) -> float:
    """Bound on the error of every distance of the double-precision chain after ``steps``.

    The law of the number ``D`` of distinct cards drawn follows ``D -> D`` with
    probability ``D/n`` and ``D -> D + 1`` otherwise: sums of products of positive numbers,
    so each probability carries a relative rounding error of at most ``3k`` units of
    ``u = 2^-53`` (one for each coefficient, product and sum per step). The per-group
    probabilities add at most ``n + 4`` more, and their logarithms (magnitudes up to
    ``ln n!``) one unit of that size each; probabilities below 1e-300 are set to 0 (at
    most ``1e-290`` in all). Each distance is a sum of group probabilities or uniform
    masses times their relative error, so it is within the returned bound of its exact
    value (KL in bits: within the bound times ``1 + KL``).
    """
    u = 2.0**-53
    log_fact = math.lgamma(cards + 1)
    return (3 * steps + 2 * cards + 4 * log_fact + 64) * u + 1e-290


def distance_curve(
    cards: int,
    max_steps: int,
    *,
    inverse: bool = False,
    progress: Callable[[int], None] | None = None,
) -> MixingCurve:
    """Exact distances for ``k = 1..max_steps`` and the strong-uniform-time bound.

    While it is cheap (:func:`curve_method`) the law is computed in exact integers (the
    Stirling numbers ``S(k, d)`` kept for one ``k`` at a time, so memory stays ``O(cards)``);
    beyond, by the chain on the number of distinct cards drawn in double precision, whose
    rows are labelled exact with the note "double precision" and an error bound
    (:func:`chain_error`). ``inverse=True`` names the curve random-to-top; the values are
    identical. ``progress(k)`` is called after each step.
    """
    check_cards(cards)
    check_integer(max_steps, "max_steps", low=1)
    if cards > MAX_EXACT_CARDS or max_steps > MAX_CHAIN_STEPS:
        raise InputError(
            f"the exact top-to-random curve is offered for up to {MAX_EXACT_CARDS:,} cards and "
            f"{MAX_CHAIN_STEPS:,} steps ({{max_steps}}); beyond, use Monte Carlo assessment "
            "(shufflecheck assess)",
            argument="max_steps",
        )
    if curve_method(cards, max_steps) == "integers":
        rows, bounds = _integer_rows(cards, max_steps, progress)
        source = SOURCE
    else:
        rows, bounds = _chain_rows(cards, max_steps, progress)
        source = CHAIN_SOURCE
    name = "random-to-top" if inverse else "top-to-random"
    return MixingCurve(
        name, cards, {}, tuple(rows), source, tuple(bounds), BOUND_SOURCE, "strong uniform time"
    )


def _integer_rows(
    cards: int, max_steps: int, progress: Callable[[int], None] | None
) -> tuple[list[DistanceRow], list[DistanceRow]]:
    counts = _run_counts(cards)
    fact = math.factorial(cards)
    rows, bounds = [], []
    stirling = [1] + [0] * cards  # S(0, d)
    den = 1
    for k in range(1, max_steps + 1):
        # S(k, d) = d S(k-1, d) + S(k-1, d-1)
        stirling = [0] + [d * stirling[d] + stirling[d - 1] for d in range(1, cards + 1)]
        den *= cards
        rows.append(row_from_groups(k, counts, _numerators(stirling, cards), den, fact))
        tail = float(Fraction(den - fact * stirling[cards], den))
        bounds.append(DistanceRow(k, tail, tail, None, "bound", "strong uniform time"))
        if progress is not None:
            progress(k)
    return rows, bounds


def _series_g(x: np.ndarray) -> np.ndarray:
    """``g(x) = x e^x - e^x + 1`` (``f(t) = t ln t - t + 1`` at ``t = e^x``) by its series,
    for ``|x| < 0.01`` (coefficients ``(j - 1)/j!``; the first left out is below 1e-21
    relative)."""
    c = (1 / 2, 1 / 3, 1 / 8, 1 / 30, 1 / 144, 1 / 840, 1 / 5760, 1 / 45360)
    out = np.full_like(x, c[-1])
    for coefficient in c[-2::-1]:
        out = out * x + coefficient
    return out * x * x


def _chain_rows(
    cards: int, max_steps: int, progress: Callable[[int], None] | None
) -> tuple[list[DistanceRow], list[DistanceRow]]:
    """Distances from the law of ``D``, the number of distinct cards drawn (``P(D = d) =
    n!/(n-d)! S(k, d) / n^k``). Given ``D = d`` the deck is uniform on the ``n!/(n-d)!``
    arrangements whose bottom ``n - d`` cards are increasing, so with ``r_m = P(D = n - m)``
    an arrangement of group ``L`` (bottom increasing run of length ``L``) has ``n! P =
    t_L = sum_{m <= L} r_m m!``: one cumulative sum (of logarithms) per step over the
    support of ``r``; beyond it ``t_L`` is 0 (below) or constant (above), and those groups'
    uniform masses ``1 - 1/m!`` and ``1/m!`` enter whole.
    """
    from scipy.special import gammaln

    n = cards
    error = chain_error(cards, max_steps)
    note = f"{CHAIN_METHOD} (each distance within {error:.0e})"
    q = np.zeros(n + 1)
    q[0] = 1.0  # law of D, the number of distinct cards drawn
    d = np.arange(n + 1, dtype=np.float64)
    stay, grow = d / n, (n - d) / n  # P(D -> D), P(D -> D + 1)
    log_fact = gammaln(np.arange(n + 2, dtype=np.float64) + 1.0)  # ln m!
    groups = np.arange(1, n + 1)
    ratio = np.ones(n)
    ratio[:-1] = groups[:-1] / (groups[:-1] + 1.0)
    log_uniform = np.log(ratio) - log_fact[1 : n + 1]  # uniform mass of group L = 1..n
    uniform = np.exp(log_uniform)  # 0 beyond about L = 170: no mass at double precision
    lo = hi = 0  # support of q
    rows, bounds = [], []
    with np.errstate(divide="ignore", under="ignore"):
        for k in range(1, max_steps + 1):
            tv_gap = sep_gap = None  # 1 - value where the float rounds it (log space)
            top = min(hi + 1, n)
            previous = q[lo:top].copy()
            q[lo : top + 1] *= stay[lo : top + 1]
            q[lo + 1 : top + 1] += previous * grow[lo:top]
            hi = top
            while q[lo] < 1e-300 and lo < hi:  # flushed: no subnormal arithmetic
                q[lo] = 0.0
                lo += 1
            while q[hi] < 1e-300 and hi > lo:
                q[hi] = 0.0
                hi -= 1
            # r_m = q[n - m] for m in m_lo..m_hi; x_L = ln t_L
            m_lo, m_hi = n - hi, n - lo
            terms = np.log(q[hi : lo - 1 if lo else None : -1]) + log_fact[m_lo : m_hi + 1]
            x = np.logaddexp.accumulate(terms)
            first = max(1, m_lo)  # group L >= 1
            xs = x[first - m_lo :]
            us = uniform[first - 1 : m_hi]
            below = -math.expm1(-log_fact[m_lo]) if m_lo >= 2 else 0.0  # groups 1..m_lo-1
            above = math.exp(-log_fact[m_hi + 1]) if m_hi < n else 0.0  # groups m_hi+1..n
            if m_lo <= 1 and float(np.abs(xs).max()) < 0.5:
                # near uniform: t_L - 1 from the small probabilities themselves (relative
                # accuracy for tiny distances), t_L - 1 = sum_{2 <= m <= L} r_m (m! - 1)
                # - sum_{m > L} r_m
                r = q[hi : lo - 1 if lo else None : -1]
                excess = np.exp(np.log(r) + log_fact[m_lo : m_hi + 1]) - r
                excess[: max(0, 2 - m_lo)] = 0.0  # m = 0, 1: m! - 1 = 0
                rest = np.r_[np.cumsum(r[::-1])[::-1][1:], 0.0]  # sum_{m > L} r_m
                delta = (np.cumsum(excess) - rest)[first - m_lo :]
                tv, sep, kl = _near_uniform(delta, us, above)
            else:
                x_top = float(xs[-1])
                # only the groups below uniform (t < 1) count: TV = sum U (1 - t)
                tv = below + float(us @ -np.expm1(np.minimum(xs, 0.0)))
                tv += above * -math.expm1(min(x_top, 0.0))
                lowest = min(float(xs.min()), x_top)
                sep = 1.0 if below > 0 else -math.expm1(min(lowest, 0.0))
                if tv > 0.5:  # 1 - TV = sum U min(t, 1), in logs: positive below any float
                    parts = log_uniform[first - 1 : m_hi] + np.minimum(xs, 0.0)
                    if m_hi < n:
                        parts = np.r_[parts, -log_fact[m_hi + 1] + min(x_top, 0.0)]
                    tv_gap = gap_from_log(float(np.logaddexp.reduce(parts)))
                if sep > 0.5 and below == 0:  # 1 - separation = min t
                    sep_gap = gap_from_log(min(lowest, 0.0))
                kl = below + _kl_terms(xs, us, log_uniform[first - 1 : m_hi])
                if m_hi < n:  # in logs: 1/(m_hi + 1)! may underflow while its P does not
                    kl += _kl_terms(
                        np.array([x_top]), np.array([above]), np.array([-log_fact[m_hi + 1]])
                    )
            rows.append(
                DistanceRow(
                    k,
                    tv,
                    sep,
                    kl / math.log(2),
                    "exact",
                    note,
                    total_variation_below_one=tv_gap,
                    separation_below_one=sep_gap,
                )
            )
            tail = float(q[lo : min(hi, n - 1) + 1].sum()) if lo < n else 0.0  # P(D < n)
            bounds.append(DistanceRow(k, tail, tail, None, "bound", "strong uniform time"))
            if progress is not None:
                progress(k)
    return rows, bounds


def _near_uniform(
    delta: np.ndarray, uniform: np.ndarray, above: float
) -> tuple[float, float, float]:
    """(TV, separation, KL nats) from ``t_L - 1`` per group (the last value also holds for
    the groups above, of uniform mass ``above``); ``f(1 + u) = (1 + u) ln(1 + u) - u`` by its
    series for ``|u| < 0.01`` (coefficients ``(-1)^j / (j (j - 1))``)."""
    last = float(delta[-1])
    tv = float(uniform @ np.maximum(0.0, -delta)) + above * max(0.0, -last)
    sep = max(0.0, -float(delta.min()))
    every = np.r_[delta, last]
    weights = np.r_[uniform, above]
    near = np.abs(every) < 0.01
    f = np.empty_like(every)
    u = every[near]
    series = np.full_like(u, 1 / 90)  # j = 10
    for j in range(9, 1, -1):
        series = series * u + (-1) ** j / (j * (j - 1))
    f[near] = series * u * u
    w = every[~near]
    f[~near] = (1 + w) * np.log1p(w) - w
    return tv, sep, float(weights @ f)


def _kl_terms(x: np.ndarray, uniform: np.ndarray, log_uniform: np.ndarray) -> float:
    """``sum U f(t)`` with ``t = e^x``, ``f(t) = t ln t - t + 1 >= 0`` (no cancellation):
    by the series near ``t = 1``, as ``P ln t - P + U`` (``P = U t``) elsewhere."""
    near = np.abs(x) < 0.01
    total = float(uniform[near] @ _series_g(x[near])) if near.any() else 0.0
    far = ~near
    if far.any():
        xf, uf = x[far], uniform[far]
        p = np.exp(log_uniform[far] + xf)  # 0 where t = 0 (x = -inf)
        with np.errstate(invalid="ignore"):
            terms = np.where(p > 0, p * xf - p, 0.0) + uf
        total += float(terms.sum())
    return total


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
    # past the cutoff n ln n; at most 22,803 steps (2,000 cards), within MAX_CHAIN_STEPS
    return math.ceil(1.5 * cards * math.log(cards))


register_model(
    ModelEntry(
        TopToRandom,
        steps_word="top-to-random moves",
        sources=(ALDOUS_DIACONIS_1986, DIACONIS_FILL_PITMAN),
        curve=distance_curve,
        curve_options=("progress",),
        spectrum=spectrum,
        default_steps=_default_steps,
        steps_limit=MAX_CHAIN_STEPS,
        exact=f"Stirling numbers while cheap, else a double-precision chain with an error "
        f"bound: k <= {MAX_CHAIN_STEPS:,}, n <= {MAX_EXACT_CARDS:,}",
    )
)
register_model(
    ModelEntry(
        RandomToTop,
        steps_word="random-to-top moves",
        sources=(ALDOUS_DIACONIS_1986, DIACONIS_FILL_PITMAN),
        curve=functools.partial(distance_curve, inverse=True),
        curve_options=("progress",),
        spectrum=spectrum,
        default_steps=_default_steps,
        steps_limit=MAX_CHAIN_STEPS,
        exact="as top-to-random (its inverse: the same distances)",
    )
)
