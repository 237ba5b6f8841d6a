"""Random transpositions (Diaconis & Shahshahani 1981).

Each step a left hand and a right hand each pick a uniformly random card and the two are
swapped; nothing happens when both pick the same card. The step law is a class function:
weight ``hold`` (default ``1/n``) on the identity and ``1 - hold`` spread evenly over the
``n(n-1)/2`` transpositions (each ``2/n^2`` in the two-hands model).

Exact law, two independent ways:

* the *lumped chain* on cycle types: the law after ``k`` steps is constant on conjugacy
  classes, and a transposition merges two cycles of lengths ``s, t`` into one of ``s + t``
  (``s t`` pairs per pair of cycles) or splits an ``s``-cycle into ``j`` and ``s - j`` (``s``
  pairs for each ``j < s/2``, ``s/2`` for ``j = s/2``). The uniform law puts mass ``1/z_mu`` on
  cycle type ``mu``. For ``n = 52`` the chain has ``p(52) = 281,589`` states and about 8.8
  million transitions; it is propagated in double precision (sums of positive terms, so the
  relative error stays near ``k * 1e-16``);
* *Fourier inversion* with the character table ([1], Section 2):
  ``P_k(mu) = (1/z_mu) sum_lambda d_lambda chi^lambda(mu) r_lambda^k`` with
  ``r_lambda = hold + (1 - hold) chi^lambda(tau)/d_lambda``; with a rational ``hold`` this is
  exact rational arithmetic (used for small ``n`` and to check the chain).

Upper bound lemma ([1], Lemma 4; [2], ch. 3): ``4 TV^2 <= sum_{lambda != (n)} d_lambda^2
r_lambda^(2k)``, evaluated in log space grouped by distinct eigenvalue.

References
----------
.. [1] P. Diaconis and M. Shahshahani, "Generating a random permutation with random
       transpositions", Z. Wahrsch. Verw. Gebiete 57 (1981) 159-179.
.. [2] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of Mathematical
       Statistics, Hayward, CA, 1988.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Callable
from fractions import Fraction
from functools import lru_cache

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.common.sources import DIACONIS_1988, DIACONIS_SHAHSHAHANI
from shufflecheck.core.characters import (
    Eigenvalue,
    character_table,
)
from shufflecheck.core.distances import DistanceRow, MixingCurve
from shufflecheck.core.partitions import (
    content_sum,
    content_sums,
    count_partitions,
    multiplicity_matrix,
    partitions,
    squared_dimension_sums,
    z,
)
from shufflecheck.models.base import Step, sample_step
from shufflecheck.models.registry import SPECTRUM_UNITS, ModelEntry, register_model

__all__ = [
    "MAX_BOUND_CARDS",
    "MAX_CHAIN_CARDS",
    "MAX_CHAIN_STEPS",
    "MAX_FOURIER_CARDS",
    "MAX_SPECTRUM_CARDS",
    "LumpedChain",
    "Transposition",
    "check_hold",
    "check_spectrum_cards",
    "class_law_fourier",
    "distance_curve",
    "lumped_chain",
    "sample",
    "spectrum",
    "upper_bound_curve",
]

SOURCE = "exact: lumped chain on cycle types (Diaconis & Shahshahani 1981), double precision"
FOURIER_SOURCE = "exact: Fourier inversion with the character table (Diaconis & Shahshahani 1981)"
BOUND_SOURCE = "bound: upper bound lemma, 4 TV^2 <= sum d^2 r^(2k) (Diaconis & Shahshahani 1981)"
#: the lumped chain is offered up to this many cards (p(55) = 451,276 states)
MAX_CHAIN_CARDS = 55
#: and this many steps (each step is one sparse product over all transitions)
MAX_CHAIN_STEPS = 5000
#: Fourier inversion needs the whole character table; p(20) = 627 classes
MAX_FOURIER_CARDS = 20
#: the upper bound lemma visits every shape; p(64) = 1,741,630
MAX_BOUND_CARDS = 64
#: the spectrum lists every shape with its eigenvalue (p(64) = 1,741,630 shapes)
MAX_SPECTRUM_CARDS = 64


def check_hold(cards: int, hold: float | Fraction | None) -> Fraction | float:
    """The holding probability: ``1/n`` by default (exact), else a value in [0, 1)."""
    if hold is None:
        return Fraction(1, cards)
    if isinstance(hold, bool) or not 0 <= hold < 1:
        raise InputError(f"hold must be in [0, 1), got {hold}")
    return hold


def spectrum(
    cards: int,
    *,
    hold: float | Fraction | None = None,
    progress: Callable[[int], None] | None = None,
) -> list[Eigenvalue]:
    """Distinct eigenvalues of one step: ``hold + (1 - hold) chi^lambda(tau)/d_lambda``.

    Multiplicity ``d_lambda^2`` summed over the shapes giving the same value ([1], Lemma 5;
    the content formula gives the ratio), as exact integers. The shapes of each eigenvalue
    are listed in reverse lexicographic order. All ``p(n)`` shapes are handled at once
    (:func:`shufflecheck.core.partitions.squared_dimension_sums`); offered up to
    ``MAX_SPECTRUM_CARDS`` cards (64 cards take a few seconds). ``progress(done)`` is
    called with the units done out of ``SPECTRUM_UNITS``.
    """
    h = check_hold(cards, hold)
    check_spectrum_cards(cards)

    def report(fraction: float) -> None:
        if progress is not None:
            progress(round(SPECTRUM_UNITS * fraction))

    m = multiplicity_matrix(cards)
    sums = content_sums(m)[::-1]  # aligned with partitions(cards)
    report(0.15)
    weights = squared_dimension_sums(cards, lambda f: report(0.15 + 0.6 * f))
    shapes = partitions(cards)
    report(0.95)
    order = np.argsort(-sums, kind="stable")  # largest content sum (eigenvalue) first
    keys, starts = np.unique(-sums[order], return_index=True)
    bounds = [*starts.tolist(), len(order)]
    pairs = cards * (cards - 1) // 2
    out = []
    for g, key in enumerate(keys.tolist()):
        c = -key
        ratio = Fraction(c, pairs) if cards >= 2 else Fraction(1)
        value: Fraction | float = (
            h + (1 - h) * ratio if isinstance(h, Fraction) else h + (1 - h) * float(ratio)
        )
        members = tuple(shapes[i] for i in order[bounds[g] : bounds[g + 1]].tolist())
        out.append(Eigenvalue(value=value, multiplicity=weights[c], shapes=members))
    report(1.0)
    return out


def check_spectrum_cards(cards: int) -> None:
    """The spectrum lists every shape: refuse (before any work) above ``MAX_SPECTRUM_CARDS``."""
    if not 2 <= cards <= MAX_SPECTRUM_CARDS:
        raise InputError(
            f"the transposition spectrum lists all p(n) shapes of n cards; it is offered for "
            f"2..{MAX_SPECTRUM_CARDS} cards (p({MAX_SPECTRUM_CARDS}) = "
            f"{count_partitions(MAX_SPECTRUM_CARDS):,} shapes), and {cards} cards have "
            f"p({cards}) = {count_partitions(cards):,}"
        )


# ---------------------------------------------------------------------------------------
# the lumped chain


@dataclasses.dataclass(frozen=True)
class LumpedChain:
    """The random-transposition walk lumped to cycle types.

    States are ordered by rank ``n - (number of cycles)`` (the fewest transpositions whose
    product has the cycle type), so ``multiplicities`` rows run from the identity ``(1^n)``
    (``identity == 0``) to the ``n``-cycle; ``rank_ends[r]`` is the number of states of
    rank ``<= r``. A step changes the rank by at most one, so after ``k`` steps from the
    identity only the first ``rank_ends[k]`` states can hold mass. ``log_z`` holds
    ``ln z_mu`` per state; ``matrix`` is the step (scipy CSR, rows = destination, columns
    = source).
    """

    cards: int
    hold: float
    multiplicities: np.ndarray
    log_z: np.ndarray
    identity: int
    matrix: object  # scipy.sparse CSR, rows = destination, columns = source
    transitions: int
    rank_ends: np.ndarray

    @property
    def uniform(self) -> np.ndarray:
        """The uniform law on cycle types, ``1 / z_mu``."""
        return np.exp(-self.log_z)

    def step(self, law: np.ndarray) -> np.ndarray:
        """The law one step later (one sparse product over all states)."""
        return self.matrix @ law

    def advance(self, law: np.ndarray, k: int) -> np.ndarray:
        """Step ``k`` from the identity: the law after ``k - 1`` steps to the law after ``k``.

        Only the rows of states of rank ``<= k`` are computed (the others are exactly zero);
        the values equal :meth:`step`'s bit for bit, because the products skipped multiply
        exact zeros.
        """
        reach = int(self.rank_ends[min(k, len(self.rank_ends) - 1)])
        if reach >= len(law):
            return self.matrix @ law
        out = np.zeros_like(law)
        out[:reach] = _leading_rows(self.matrix, reach) @ law
        return out


def _leading_rows(matrix, rows: int):
    """The first ``rows`` rows of a CSR matrix as a CSR matrix sharing its arrays (no copy)."""
    from scipy import sparse

    head = sparse.csr_matrix((rows, matrix.shape[1]), dtype=matrix.dtype)
    end = int(matrix.indptr[rows])
    head.indptr = matrix.indptr[: rows + 1]
    head.indices = matrix.indices[:end]
    head.data = matrix.data[:end]
    return head


def _log_z(m: np.ndarray) -> np.ndarray:
    """``ln z_mu = sum_s (m_s ln s + ln m_s!)`` for every row of a multiplicity matrix."""
    from scipy.special import gammaln

    n = m.shape[1] - 1
    sizes = np.log(np.arange(1, n + 1, dtype=np.float64))
    log_factorial = gammaln(np.arange(n + 2, dtype=np.float64) + 1.0)
    counts = m[:, 1:]
    return counts.astype(np.float64) @ sizes + log_factorial[counts].sum(axis=1)


def lumped_chain(cards: int, hold: float | Fraction | None = None) -> LumpedChain:
    """The lumped chain for ``cards`` cards, built once per (cards, hold) and cached.

    ``hold`` is normalised first (``None``, ``Fraction(1, n)`` and ``1/n`` are one chain).
    Built vectorized with no lookups (see :func:`_build_chain`), states ordered by rank.
    """
    if not 2 <= cards <= MAX_CHAIN_CARDS:
        raise InputError(
            f"the lumped chain is offered for 2..{MAX_CHAIN_CARDS} cards (p(n) states); for "
            f"{cards} cards use {{method}} bound (the upper bound lemma, up to "
            f"{MAX_BOUND_CARDS} cards) or Monte Carlo assessment (shufflecheck assess)",
            argument="method",
        )
    return _build_chain(cards, float(check_hold(cards, hold)))


@lru_cache(maxsize=2)
def _build_chain(cards: int, h: float) -> LumpedChain:
    from scipy import sparse

    n = cards
    m = multiplicity_matrix(n)
    states = len(m)
    by_size = np.ascontiguousarray(m.T)  # one row per cycle length: contiguous reads
    rows_with = [np.flatnonzero(by_size[s]).astype(np.int32) for s in range(n + 1)]
    # Merging an s-cycle and a t-cycle of mu gives nu = mu - e_s - e_t + e_(s+t). For fixed
    # (s, t) this is a bijection from the states with such cycles onto the states with an
    # (s + t)-cycle (both sides are the partitions of n - s - t with parts added), and it
    # keeps the row order, which is lexicographic in the multiplicities and so unchanged by
    # adding a fixed vector. The k-th state with an s- and a t-cycle therefore merges into
    # the k-th state with an (s + t)-cycle: no lookups. Every split is the reverse of one
    # merge and is read off the same pair. Counts fit in int32 (at most n(n-1)/2).
    merge_from: list[np.ndarray] = []
    merge_to: list[np.ndarray] = []
    merge_count: list[np.ndarray] = []
    split_count: list[np.ndarray] = []
    for t in range(1, n):
        holders = rows_with[t]  # merge an s-cycle (s <= t, s + t <= n) with another t-cycle
        if holders.size == 0:
            continue
        mt = by_size[t, holders].astype(np.int32)
        for s in range(1, min(t, n - t) + 1):
            if s < t:
                ms = by_size[s, holders].astype(np.int32)
                keep = np.flatnonzero(ms)
                count = (s * t) * ms[keep] * mt[keep]  # s t pairs per pair of cycles
            else:  # s == t: pairs of distinct t-cycles
                keep = np.flatnonzero(mt >= 2)
                count = (t * t) * (mt[keep] * (mt[keep] - 1) // 2)
            source = holders[keep]
            target = rows_with[s + t]
            if len(source) != len(target):  # pragma: no cover - would mean a wrong order
                raise RuntimeError("lumped chain: merges are not a bijection")
            merge_from.append(source)
            merge_to.append(target)
            merge_count.append(count)
            # the reverse: split one (s + t)-cycle of nu into s and t; s + t pairs per cycle
            # (s pairs when s == t), times the number of (s + t)-cycles of nu
            split_count.append((t if s == t else s + t) * by_size[s + t, target].astype(np.int32))
    source = np.concatenate(merge_from)
    target = np.concatenate(merge_to)
    pairs = n * (n - 1) // 2
    scale = (1.0 - h) / pairs
    data = np.empty(2 * len(source) + states)
    np.multiply(np.concatenate(merge_count), scale, out=data[: len(source)])
    np.multiply(np.concatenate(split_count), scale, out=data[len(source) : 2 * len(source)])
    data[2 * len(source) :] = h
    diagonal = np.arange(states, dtype=np.int32)
    matrix = sparse.csr_matrix(
        (
            data,
            (
                np.concatenate([target, source, diagonal]),  # rows: destination
                np.concatenate([source, target, diagonal]),  # columns: source
            ),
        ),
        shape=(states, states),
    )
    # States by rank (stable), rows permuted with each row's entries kept in their order
    # (ascending previous column), so every row sum adds the same terms in the same order.
    rank = n - by_size[1:].sum(axis=0, dtype=np.int64)
    order = np.argsort(rank, kind="stable")
    position = np.empty(states, dtype=np.int32)
    position[order] = np.arange(states, dtype=np.int32)
    matrix = matrix[order]
    matrix.indices = position[matrix.indices]
    matrix.has_sorted_indices = False
    rank_ends = np.cumsum(np.bincount(rank, minlength=n))
    multiplicities = m[order]
    multiplicities.flags.writeable = False
    log_z = _log_z(m)[order]
    return LumpedChain(n, h, multiplicities, log_z, 0, matrix, int(matrix.nnz), rank_ends)


class _ClassLawDistances:
    """(TV, separation, KL bits) of laws on cycle types, with work arrays kept between
    calls (fresh multi-megabyte temporaries cost page faults on every step).

    With ``t = P(mu) z_mu = n! P(sigma)``: TV = 1/2 sum |P - U|, separation = 1 - min t,
    KL = sum_mu P(mu) ln t_mu, and once every ``|t - 1| < 1e-3`` the cancellation-free form
    sum_mu U(mu) f(t_mu), f(t) = t ln t - t + 1, by its series near t = 1 (no logarithms
    then). A law that can only occupy the first ``support`` states (the others are exact
    zeros) is measured on those, the zeros' share of TV being the uniform mass beyond.
    """

    def __init__(
        self, uniform: np.ndarray, z_values: np.ndarray, ends: np.ndarray | None = None
    ) -> None:
        self.uniform = uniform
        self.z = z_values
        self.work = np.empty_like(uniform)
        self.t = np.empty_like(uniform)
        self.u = np.empty_like(uniform)
        # uniform mass of the states from ``end`` on, for the supports ``ends`` (block sums
        # added pairwise, then exactly, so the tail is as accurate as a whole-array sum)
        bounds = [0, *(int(e) for e in ([] if ends is None else ends)), len(uniform)]
        blocks = [float(uniform[a:b].sum()) for a, b in itertools.pairwise(bounds)]
        self.tail = {bounds[i]: math.fsum(blocks[i:]) for i in range(len(blocks))}
        #: the smallest ``t`` of the last law measured (0 while some state is empty)
        self.lowest = 0.0
        #: ``1 - TV = sum min(P, U)`` of the last law, summed directly (no cancellation)
        #: while TV > 1/2, where ``1 - TV`` of the float would lose its digits; else None
        self.overlap: float | None = None

    def __call__(self, law: np.ndarray, support: int | None = None) -> tuple[float, float, float]:
        states = len(law)
        s = states if support is None else min(int(support), states)
        p, uniform = law[:s], self.uniform[:s]
        w, t = self.work[:s], self.t[:s]
        np.subtract(p, uniform, out=w)
        np.abs(w, out=w)
        tv = 0.5 * (float(w.sum()) + (self.tail[s] if s < states else 0.0))
        self.overlap = None
        if tv > 0.5:  # the states beyond the support hold no mass: they add nothing
            np.minimum(p, uniform, out=w)
            self.overlap = float(w.sum())
        np.multiply(p, self.z[:s], out=t)
        low = float(t.min()) if s == states else 0.0
        self.lowest = low
        separation = float(max(0.0, 1.0 - low))
        if s == states and 1.0 - low < 1e-3 and float(t.max()) - 1.0 < 1e-3:
            return tv, separation, self._series_kl(t) / math.log(2)
        if low < 1e-300:
            np.maximum(t, 1e-300, out=w)
            np.log(w, out=w)
        else:
            np.log(t, out=w)
        kl_bits = float(np.dot(p, w)) / math.log(2)  # zero-probability classes add 0
        # A KL this small means a law near uniform on every state (the empty states of a
        # shorter support alone give more than 1e-3 bits below 1,000 cards)
        if kl_bits < 1e-3 and s == states:
            kl_bits = self._mixed_kl(t, w) / math.log(2)
        return tv, separation, kl_bits

    def _series_kl(self, t: np.ndarray) -> float:
        # every class is close to uniform: f(1 + u) by its series, in place
        u = self.work
        np.subtract(t, 1.0, out=u)
        f = self.t  # t is not needed any more
        np.multiply(u, -1.0 / 20.0, out=f)
        f += 1.0 / 12.0
        f *= u
        f -= 1.0 / 6.0
        f *= u
        f += 0.5
        f *= u
        f *= u
        return float(np.dot(self.uniform, f))

    def _mixed_kl(self, t: np.ndarray, log_t: np.ndarray) -> float:
        # t ln t - t + 1 where |t - 1| >= 1e-3, its series (no cancellation) elsewhere
        u = np.subtract(t, 1.0, out=self.u)
        f = np.multiply(t, log_t, out=log_t)
        f -= u
        near = np.flatnonzero(np.abs(u, out=self.t) < 1e-3)  # t is not needed any more
        un = u[near]
        f[near] = un * un * (0.5 + un * (-1.0 / 6.0 + un * (1.0 / 12.0 - un / 20.0)))
        return float(np.dot(self.uniform, f))


def _chain_rows(
    cards: int,
    max_steps: int,
    hold: float | Fraction | None,
    progress: Callable[[int], None] | None,
) -> tuple[DistanceRow, ...]:
    from threadpoolctl import threadpool_limits

    chain = lumped_chain(cards, hold)
    distances = _ClassLawDistances(chain.uniform, np.exp(chain.log_z), chain.rank_ends)
    smallest_u = float(np.exp(-chain.log_z.max()))  # 1 / n!, the identity's uniform mass
    law = np.zeros(len(chain.log_z))
    law[chain.identity] = 1.0
    rows = []
    # The loop is single-threaded by design: a BLAS thread pool woken by the dot products
    # only spins against the sparse products on a small shared machine.
    with threadpool_limits(limits=1, user_api="blas"):
        for k in range(1, max_steps + 1):
            law = chain.advance(law, k)
            support = int(chain.rank_ends[min(k, len(chain.rank_ends) - 1)])
            # Probabilities below 1e-300 cannot move any distance at double precision;
            # zeroing them keeps the arithmetic out of subnormal numbers, which are very
            # slow. P(mu) >= min(n! P) / n!, and min(n! P) never decreases along the walk
            # (each step averages n! P over neighbours), so once that bound clears 1e-300
            # by a wide margin the check (which would find nothing) is skipped.
            if distances.lowest * smallest_u < 1e-280:
                head = law[:support]  # the states beyond are exact zeros
                if head.min() < 1e-300:
                    np.putmask(head, head < 1e-300, 0.0)
            tv, sep, kl = distances(law, support)
            rows.append(
                DistanceRow(
                    k,
                    tv,
                    sep,
                    kl,
                    "exact",
                    "lumped chain, double precision",
                    total_variation_below_one=distances.overlap,
                    separation_below_one=distances.lowest,
                )
            )
            if progress is not None:
                progress(k)
    return tuple(rows)


# ---------------------------------------------------------------------------------------
# Fourier inversion and the upper bound lemma


def class_law_fourier(
    cards: int, steps: int, hold: Fraction | None = None
) -> dict[tuple[int, ...], Fraction]:
    """Exact law of the cycle type after ``steps`` steps, by Fourier inversion ([1], §2).

    ``P_k(mu) = (1/z_mu) sum_lambda d_lambda chi^lambda(mu) r_lambda^k``, in exact rationals
    (``hold`` must be rational; default ``1/n``).
    """
    if not 2 <= cards <= MAX_FOURIER_CARDS:
        raise InputError(f"Fourier inversion is offered for 2..{MAX_FOURIER_CARDS} cards")
    h = check_hold(cards, hold)
    if not isinstance(h, Fraction):
        h = Fraction(h)
    table = character_table(cards)
    # r_lambda = (A + B c_lambda) / D with integers, so powers stay integers
    pairs = cards * (cards - 1) // 2
    den = h.denominator * pairs
    powers = []
    for lam in table.shapes:
        r = h + (1 - h) * Fraction(content_sum(lam), pairs)
        numerator = r * den
        assert numerator.denominator == 1
        powers.append(int(numerator) ** steps)
    dims = table.dimensions
    weights = [d * p for d, p in zip(dims, powers, strict=True)]
    law = {}
    scale = den**steps
    for j, mu in enumerate(table.classes):
        total = sum(int(table.values[i, j]) * weights[i] for i in range(len(weights)))
        law[mu] = Fraction(total, z(mu) * scale)
    return law


def _fourier_rows(cards: int, max_steps: int, hold: Fraction | None) -> tuple[DistanceRow, ...]:
    from shufflecheck.core.distances import row_from_groups

    fact = math.factorial(cards)
    rows = []
    for k in range(1, max_steps + 1):
        law = class_law_fourier(cards, k, hold)
        counts = [fact // z(mu) for mu in law]
        probs = list(law.values())
        den = math.lcm(*(p.denominator for p in probs))
        # per arrangement: P(mu) / |C_mu| = P(mu) z_mu / n!
        nums = [int(p * den * z(mu)) for mu, p in law.items()]
        rows.append(
            row_from_groups(k, counts, nums, den * fact, fact, "Fourier inversion, exact rationals")
        )
    return tuple(rows)


@lru_cache(maxsize=4)
def _bound_terms(cards: int, hold: float) -> tuple[np.ndarray, np.ndarray]:
    """(distinct |eigenvalue| of the non-trivial shapes, ln of their summed ``d^2``).

    Content sums are integers, so shapes are grouped exactly; the summed multiplicities are
    exact integers (:func:`squared_dimension_sums`) and only their logarithms are floats.
    """
    pairs = cards * (cards - 1) // 2
    weights = squared_dimension_sums(cards)
    top = pairs  # the trivial shape (n) alone has content sum C(n, 2)
    groups: dict[float, int] = {}
    for c, w in weights.items():
        eigen = abs(hold + (1.0 - hold) * (c / pairs))
        if c == top or eigen == 0.0:
            continue
        groups[eigen] = groups.get(eigen, 0) + w
    values = np.array(sorted(groups))
    log_weights = np.array([math.log(groups[v]) for v in values.tolist()])
    values.flags.writeable = False
    log_weights.flags.writeable = False
    return values, log_weights


def upper_bound_curve(
    cards: int, max_steps: int, hold: float | Fraction | None = None
) -> tuple[DistanceRow, ...]:
    """``TV_k <= 1/2 sqrt(sum_{lambda != (n)} d_lambda^2 r_lambda^(2k))`` for ``k = 1..K``.

    The sum is grouped by distinct eigenvalue and evaluated in log space; the bound is
    capped at 1 (TV never exceeds 1).
    """
    h = check_hold(cards, hold)
    if cards > MAX_BOUND_CARDS:
        raise InputError(
            f"the upper bound lemma sums over p({cards}) shapes; it is offered up to "
            f"{MAX_BOUND_CARDS} cards; use Monte Carlo assessment (shufflecheck assess)"
        )
    from scipy.special import logsumexp

    values, log_weights = _bound_terms(cards, float(h))
    log_values = np.log(values)
    rows = []
    for k in range(1, max_steps + 1):
        log_sum = logsumexp(log_weights + 2 * k * log_values) if values.size else -np.inf
        bound = min(1.0, 0.5 * math.exp(0.5 * log_sum))
        rows.append(DistanceRow(k, bound, None, None, "bound", "upper bound lemma"))
    return tuple(rows)


def distance_curve(
    cards: int,
    max_steps: int,
    *,
    hold: float | Fraction | None = None,
    method: str = "chain",
    bound: bool = True,
    progress: Callable[[int], None] | None = None,
) -> MixingCurve:
    """Exact distances for ``k = 1..max_steps`` (``method="chain"`` or ``"fourier"``) and,
    with ``bound=True``, the upper-bound-lemma curve; ``method="bound"`` gives that curve
    alone (total variation only), for decks too large for the exact methods."""
    h = check_hold(cards, hold)
    if max_steps < 1:
        raise InputError(f"max_steps must be at least 1, got {max_steps}", argument="max_steps")
    if method == "chain":
        if max_steps > MAX_CHAIN_STEPS:
            raise InputError(
                f"the lumped chain is offered up to {MAX_CHAIN_STEPS} steps; for more, the upper "
                "bound lemma serves ({method} bound)",
                argument="method",
            )
        rows = _chain_rows(cards, max_steps, hold, progress)
        source = SOURCE
    elif method == "fourier":
        if not isinstance(h, Fraction):
            raise InputError("Fourier inversion needs a rational hold (e.g. the default 1/n)")
        rows = _fourier_rows(cards, max_steps, h)
        source = FOURIER_SOURCE
    elif method == "bound":
        # the upper-bound-lemma curve alone, where no exact method is offered
        rows = upper_bound_curve(cards, max_steps, hold)
        parameters = {"hold": float(h)}
        return MixingCurve("transposition", cards, parameters, rows, BOUND_SOURCE)
    else:
        raise InputError(f"unknown method {method!r}; choose chain, fourier or bound")
    bounds = upper_bound_curve(cards, max_steps, hold) if bound and cards <= MAX_BOUND_CARDS else ()
    parameters = {"hold": float(h)}
    return MixingCurve(
        "transposition",
        cards,
        parameters,
        rows,
        source,
        bounds,
        BOUND_SOURCE if bound else "",
        "upper bound lemma" if bound else "",
    )


# ---------------------------------------------------------------------------------------
# sampling


def _swap_step(decks: np.ndarray, hold: float, rng: np.random.Generator) -> np.ndarray:
    count, cards = decks.shape
    rows = np.arange(count)
    if hold == 1.0 / cards:
        # the two-hands model: independent uniform picks (equal picks do nothing)
        a = rng.integers(0, cards, size=count)
        b = rng.integers(0, cards, size=count)
    else:
        a = rng.integers(0, cards, size=count)
        b = (a + 1 + rng.integers(0, cards - 1, size=count)) % cards
        stay = rng.random(count) < hold
        b = np.where(stay, a, b)
    out = decks.copy()
    out[rows, a] = decks[rows, b]
    out[rows, b] = decks[rows, a]
    return out


def sample(
    decks: int,
    cards: int,
    steps: int = 1,
    *,
    rng: np.random.Generator | int | None = None,
    hold: float | Fraction | None = None,
) -> np.ndarray:
    """``decks`` decks after ``steps`` random transpositions of the reference order."""
    check_hold(cards, hold)
    return sample_step(
        Transposition(hold=None if hold is None else float(hold)), decks, cards, steps, rng
    )


@dataclasses.dataclass(frozen=True)
class Transposition(Step):
    """Two hands each pick a uniformly random card and swap them (hold = chance of no swap)."""

    keyword = "transposition"
    summary = "two uniformly chosen cards swapped; hold = chance nothing happens (default 1/n)"

    hold: float | None = None

    def __post_init__(self) -> None:
        if self.hold is not None and not 0 <= self.hold < 1:
            raise InputError(f"transposition: hold must be in [0, 1), got {self.hold}")

    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return _swap_step(decks, float(check_hold(decks.shape[1], self.hold)), rng)

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        if cards > MAX_CHAIN_CARDS or times > MAX_CHAIN_STEPS or times < 1:
            return None
        bucket = 1 << (times - 1).bit_length()  # compute in powers of two, reuse the prefix
        return _cached_chain_rows(cards, self.hold, min(bucket, MAX_CHAIN_STEPS))[times - 1]


@lru_cache(maxsize=8)
def _cached_chain_rows(cards: int, hold: float | None, steps: int) -> tuple[DistanceRow, ...]:
    return _chain_rows(cards, steps, hold, None)


register_model(
    ModelEntry(
        Transposition,
        steps_word="random transpositions",
        sources=(DIACONIS_SHAHSHAHANI, DIACONIS_1988),
        curve=distance_curve,
        curve_options=("hold", "method", "progress"),
        spectrum=spectrum,
        spectrum_options=("hold", "progress"),
        default_steps=lambda cards: math.ceil(cards * math.log(cards)),
        steps_limit=MAX_CHAIN_STEPS,
        exact=f"lumped chain on cycle types: n <= {MAX_CHAIN_CARDS}, k <= {MAX_CHAIN_STEPS:,}; "
        f"upper bound lemma: n <= {MAX_BOUND_CARDS}",
    )
)


#: clears the cached chains (benchmarks measure a cold build)
lumped_chain.cache_clear = _build_chain.cache_clear  # type: ignore[attr-defined]
