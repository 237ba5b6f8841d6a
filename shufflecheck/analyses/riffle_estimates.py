"""Maximum-likelihood estimates of a dealer's hand-riffle parameters, with intervals.

The log-likelihood of a log of riffles under ``hand-riffle(spread=s, clump=k)`` is
:func:`shufflecheck.models.riffle_likelihood.log_likelihood` (exact for every riffle,
including decks the riffle left unchanged, whose cut is summed over). It splits into a part
in ``s`` (the cuts read off), a part in ``k`` (the drops, given the cuts) and, only when
some decks came out unchanged, a part that couples the two. Each parameter is estimated by
maximising its *profile* log-likelihood (the other parameter maximised out), on the log
scale of the parameter, by a grid search followed by Brent's method ([1]); the drops part
is concave in ``log k``, so its maximum is unique.

Intervals: the profile-likelihood interval ([2], [3]) at level ``1 - alpha``,
``{theta : 2 (l_max - l_p(theta)) <= chi2_1(1 - alpha)}``, found by root finding on each
side; an end is 0 or infinity when the profile never falls below the threshold there.
Standard errors are from the observed information (the curvature of the profile at the
maximum). Both are large-sample approximations; the tests check their coverage on
simulated logs.

Edge cases, stated where they are handled: a spread of 0 is the maximum when every cut read
off is a middle cut; a clump of 0 when no hand ever dropped twice in a row while both held
cards, infinity when no hand ever gave way to the other while it still held cards.

References
----------
.. [1] R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall, 1973
       (``scipy.optimize.minimize_scalar``, method ``bounded``, and ``brentq``).
.. [2] S. S. Wilks, "The large-sample distribution of the likelihood ratio for testing
       composite hypotheses", Ann. Math. Statist. 9 (1938) 60-62.
.. [3] D. J. Venzon and S. H. Moolgavkar, "A method for computing profile-likelihood-based
       confidence intervals", J. Roy. Statist. Soc. Ser. C 37 (1988) 87-94.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from shufflecheck.common.checks import check_fraction
from shufflecheck.common.distributions import chi_square_quantile
from shufflecheck.common.errors import InputError
from shufflecheck.common.quantity import Quantity, estimate
from shufflecheck.models.riffle_likelihood import (
    RiffleCounts,
    cut_log_law,
    drop_log_likelihood,
    log_likelihood,
    unchanged_given_cut,
)

__all__ = ["MaximumLikelihood", "ParameterEstimate", "RiffleEstimates", "estimate_parameters"]

#: search ranges, on the natural-log scale of each parameter
_LOG_CLUMP = (-12.0, 12.0)
_LOG_SPREAD_LOW = math.log(0.01)
_GRID = 49


@dataclass(frozen=True)
class MaximumLikelihood:
    """The maximum of the log-likelihood: ``spread`` (cards) and ``clump`` may be 0 or inf."""

    spread: float
    clump: float
    log_likelihood: float


@dataclass(frozen=True)
class ParameterEstimate:
    """One parameter: its estimate, profile-likelihood interval and observed-information
    standard error (None where the maximum is on the edge of the range)."""

    name: str
    value: float
    low: float
    high: float
    stderr: float | None
    confidence: float
    unit: str

    @property
    def on_edge(self) -> bool:
        return self.value in (0.0, math.inf)

    def quantity(self) -> Quantity:
        """The estimate as a labelled number (kind ``estimate``, with its interval)."""
        method = "maximum likelihood; profile-likelihood interval" + (
            "; s.e. from the observed information" if self.stderr is not None else ""
        )
        return estimate(
            self.value,
            stderr=self.stderr,
            interval=(self.low, self.high),
            confidence=self.confidence,
            method=method,
            unit=self.unit,
            digits=4,
        )


@dataclass(frozen=True)
class RiffleEstimates:
    """Both parameters of the hand riffle estimated from a log's riffles."""

    cards: int
    riffles: int
    spread: ParameterEstimate
    clump: ParameterEstimate
    log_likelihood: float
    ideal_log_likelihood: float
    confidence: float

    @property
    def log_likelihood_ratio(self) -> float:
        """``2 (l_max - l_ideal)``: the fitted hand riffle against the ideal riffle."""
        return 2.0 * (self.log_likelihood - self.ideal_log_likelihood)


class _Likelihood:
    """The log-likelihood of one log, split into its parts, with the profiles."""

    def __init__(self, counts: RiffleCounts) -> None:
        self.counts = counts
        self.n = n = counts.cards
        self.cut_index = np.flatnonzero(counts.cuts)
        self.cut_weights = counts.cuts[self.cut_index].astype(float)
        squares = (np.arange(n + 1) - n / 2) ** 2
        self.excess = squares - squares.min()  # squared distance beyond the nearest cut
        self.seen_excess = self.excess[self.cut_index]
        self.middle_only = not np.any(self.seen_excess)
        self._warm: dict[str, float] = {}

    # parts -------------------------------------------------------------------------------

    def cut_law(self, spread: float) -> np.ndarray:
        """``log P(c)``, c = 0..n (the curve of :func:`cut_log_law`, computed quickly)."""
        if spread == math.inf:
            return np.full(self.n + 1, -math.log(self.n + 1))
        two_s2 = 2.0 * spread * spread
        if two_s2 == 0:
            return cut_log_law(self.n, 0.0)
        z = -self.excess / two_s2
        return z - math.log(float(np.exp(z).sum()))

    def cut_part(self, spread: float) -> float:
        if spread == math.inf:  # the limit: uniform on 0..n
            return -float(self.cut_weights.sum()) * math.log(self.n + 1)
        two_s2 = 2.0 * spread * spread
        if two_s2 == 0:
            if not self.middle_only:
                return -math.inf
            return float(self.cut_weights.sum()) * float(cut_log_law(self.n, 0.0).max())
        z = -self.excess / two_s2
        log_total = math.log(float(np.exp(z).sum()))
        return float(self.cut_weights @ (-self.seen_excess / two_s2)) - (
            float(self.cut_weights.sum()) * log_total
        )

    def unchanged_part(self, spread: float, clump: float) -> float:
        if not self.counts.unchanged:
            return 0.0
        terms = self.cut_law(spread) + unchanged_given_cut(self.n, clump)
        top = float(terms.max())
        if top == -math.inf:
            return -math.inf
        return self.counts.unchanged * (top + math.log(float(np.exp(terms - top).sum())))

    def total(self, spread: float, clump: float) -> float:
        return (
            self.cut_part(spread)
            + drop_log_likelihood(self.counts, clump)
            + (self.unchanged_part(spread, clump))
        )

    # profiles ----------------------------------------------------------------------------

    def spread_range(self) -> tuple[float, float]:
        return _LOG_SPREAD_LOW, math.log(50.0 * self.n)

    def spread_root(self) -> float:
        """The spread maximising the cut part alone.

        The cut curve is an exponential family in ``t = 1/(2 s^2)`` with statistic
        ``e(c) = (c - n/2)^2 - min``, so the part is concave in ``t`` and its maximum
        matches the curve's mean of ``e`` to the observed mean (0 -> spread 0; at least the
        mean under a uniform cut -> spread inf).
        """
        observed = float(self.cut_weights @ self.seen_excess) / float(self.cut_weights.sum())
        if observed == 0:
            return 0.0
        if observed >= float(self.excess.mean()):
            return math.inf
        excess = self.excess

        def gap(tau: float) -> float:
            z = -excess * math.exp(tau)
            w = np.exp(z - z.max())
            return float(w @ excess) / float(w.sum()) - observed

        tau = _root_decreasing(gap)
        return 1.0 / math.sqrt(2.0 * math.exp(tau))

    def clump_root(self) -> float:
        """The clump maximising the drops part alone: the root in ``u = log k`` of its score
        ``R - sum N a k / (a k + b)`` (decreasing in ``u``: the part is concave)."""
        a, b, visits, repeats = self.counts.drop_table()
        r = float(repeats.sum())
        if r == 0:
            return 0.0
        if r == float(visits.sum()):
            return math.inf
        shift = np.log(a) - np.log(b)

        def score(u: float) -> float:
            return r - float(visits @ (1.0 / (1.0 + np.exp(-(u + shift)))))

        return math.exp(_root_decreasing(score))

    def best_spread(self, clump: float) -> tuple[float, float]:
        """``(spread, value)`` maximising the spread-dependent parts at this clump."""
        if not self.counts.unchanged:
            spread = self.spread_root()
            return spread, self.cut_part(spread)

        def f(log_s: float) -> float:
            s = math.exp(log_s)
            return self.cut_part(s) + self.unchanged_part(s, clump)

        edges = {
            0.0: self.cut_part(0.0) + self.unchanged_part(0.0, clump),
            math.inf: self.cut_part(math.inf) + self.unchanged_part(math.inf, clump),
        }
        return self._warm_maximise("spread", f, self.spread_range(), edges)

    def best_clump(self, spread: float) -> tuple[float, float]:
        """``(clump, value)`` maximising the clump-dependent parts at this spread."""
        if not self.counts.unchanged:
            clump = self.clump_root()
            return clump, drop_log_likelihood(self.counts, clump)

        def f(log_k: float) -> float:
            k = math.exp(log_k)
            return drop_log_likelihood(self.counts, k) + self.unchanged_part(spread, k)

        edges = {
            0.0: drop_log_likelihood(self.counts, 0.0) + self.unchanged_part(spread, 0.0),
            math.inf: drop_log_likelihood(self.counts, math.inf)
            + self.unchanged_part(spread, math.inf),
        }
        return self._warm_maximise("clump", f, _LOG_CLUMP, edges)

    def _warm_maximise(
        self,
        key: str,
        f: Callable[[float], float],
        bounds: tuple[float, float],
        edges: dict[float, float],
    ) -> tuple[float, float]:
        """:func:`_maximise`, but near the last maximum found for ``key`` when there is one
        (profiles move the maximum of the other parameter only a little)."""
        start = self._warm.get(key)
        if start is not None:
            lo, hi = start - 1.5, start + 1.5
            result = minimize_scalar(
                lambda u: -f(u), bounds=(lo, hi), method="bounded", options={"xatol": 1e-10}
            )
            inside = lo + 0.01 < result.x < hi - 0.01
            if inside and math.isfinite(result.fun):
                theta, best = math.exp(float(result.x)), float(-result.fun)
                for edge, value in edges.items():
                    if value > best:
                        theta, best = edge, value
                if 0 < theta < math.inf:
                    return theta, best
        theta, best = _maximise(f, *bounds, edges)
        if 0 < theta < math.inf:
            self._warm[key] = math.log(theta)
        return theta, best

    def clump_profile(self) -> Callable[[float], float]:
        if not self.counts.unchanged:
            fixed = self.best_spread(1.0)[1]
            return lambda k: drop_log_likelihood(self.counts, k) + fixed
        return lambda k: drop_log_likelihood(self.counts, k) + self.best_spread(k)[1]

    def spread_profile(self) -> Callable[[float], float]:
        if not self.counts.unchanged:
            fixed = self.best_clump(1.0)[1]
            return lambda s: self.cut_part(s) + fixed
        return lambda s: self.cut_part(s) + self.best_clump(s)[1]


def _root_decreasing(f: Callable[[float], float]) -> float:
    """The root of a decreasing function on the real line (bracketed by doubling)."""
    lo, hi = -1.0, 1.0
    while f(lo) < 0:
        lo *= 2.0
    while f(hi) > 0:
        hi *= 2.0
    return float(brentq(f, lo, hi, xtol=1e-12, rtol=1e-12))


def _maximise(
    f: Callable[[float], float], low: float, high: float, edges: dict[float, float]
) -> tuple[float, float]:
    """Maximise ``f(log theta)`` over ``[low, high]`` and the exact edge values ``edges``
    (``{theta: value}`` for theta = 0 and inf): a grid, then Brent's method in the best cell."""
    grid = np.linspace(low, high, _GRID)
    values = np.array([f(u) for u in grid])
    i = int(np.argmax(values))
    best_u, best = float(grid[i]), float(values[i])
    if math.isfinite(best):
        lo = grid[max(i - 1, 0)]
        hi = grid[min(i + 1, _GRID - 1)]
        if i == 0:
            lo = low - 20.0
        if i == _GRID - 1:
            hi = high + 20.0
        result = minimize_scalar(
            lambda u: -f(u), bounds=(lo, hi), method="bounded", options={"xatol": 1e-10}
        )
        if math.isfinite(result.fun) and -result.fun >= best:
            best_u, best = float(result.x), float(-result.fun)
    theta = math.exp(best_u)
    for edge, value in edges.items():
        if value > best or (value == best and math.isfinite(value)):
            theta, best = edge, value
    if not math.isfinite(best):
        raise InputError("the log-likelihood is -inf everywhere: no parameters fit this log")
    return theta, best


def maximum_likelihood(counts: RiffleCounts) -> MaximumLikelihood:
    """The maximum-likelihood ``spread`` and ``clump`` (no intervals; quick)."""
    _check_counts(counts)
    model = _Likelihood(counts)
    return _maximum(model)


def _maximum(model: _Likelihood) -> MaximumLikelihood:
    if not model.counts.unchanged:  # the two parts are separate
        spread, _ = model.best_spread(1.0)
        clump, _ = model.best_clump(1.0)
        return MaximumLikelihood(spread, clump, model.total(spread, clump))
    profile = model.clump_profile()
    # start from the clump that fits the drops alone, then search near it
    drops = _Likelihood(dataclasses.replace(model.counts, unchanged=0))
    start, _ = drops.best_clump(1.0)
    outer = _Likelihood(model.counts)
    if 0 < start < math.inf:
        outer._warm["clump"] = math.log(start)
    clump, _ = outer._warm_maximise(
        "clump",
        lambda u: profile(math.exp(u)),
        _LOG_CLUMP,
        {0.0: profile(0.0), math.inf: profile(math.inf)},
    )
    spread, _ = model.best_spread(clump)
    return MaximumLikelihood(spread, clump, model.total(spread, clump))


def _check_counts(counts: RiffleCounts) -> None:
    if not isinstance(counts, RiffleCounts):
        raise InputError("counts must be RiffleCounts (from tally_riffles)")
    if counts.changed == 0:
        raise InputError(
            "no riffle changed the deck, so no cut is seen: the parameters cannot be estimated"
        )
    if counts.drops_with_choice == 0:
        raise InputError("no card fell while both hands held cards, so clump cannot be estimated")


def _interval(
    profile: Callable[[float], float], mle: float, peak: float, confidence: float
) -> tuple[float, float]:
    """Ends of ``{theta : profile(theta) >= peak - chi2_1(confidence)/2}`` around ``mle``."""
    threshold = peak - chi_square_quantile(confidence, 1) / 2.0

    def gap(u: float) -> float:
        return profile(math.exp(u)) - threshold

    ends = []
    for direction, edge in ((-1.0, 0.0), (1.0, math.inf)):
        if mle == edge or profile(edge) >= threshold:
            ends.append(edge)
            continue
        start = math.log(mle) if 0 < mle < math.inf else (-40.0 if mle == 0.0 else 40.0)
        u = start
        step = 0.05
        found = None
        for _ in range(80):
            nxt = u + direction * step
            if gap(nxt) < 0:
                found = (u, nxt)
                break
            u, step = nxt, step * 1.6
        if found is None:  # the profile never drops below the threshold within the range
            ends.append(edge)
            continue
        a, b = sorted(found)
        ends.append(math.exp(brentq(gap, a, b, xtol=1e-12, rtol=1e-10)))
    return ends[0], ends[1]


def _stderr(profile: Callable[[float], float], mle: float) -> float | None:
    """Observed-information standard error: ``1 / sqrt(-d2 profile / d theta^2)``."""
    if not 0 < mle < math.inf:
        return None
    h = 1e-3 * mle
    if mle - h <= 0:
        return None
    curvature = (profile(mle + h) - 2.0 * profile(mle) + profile(mle - h)) / (h * h)
    if not math.isfinite(curvature) or curvature >= 0:
        return None
    return 1.0 / math.sqrt(-curvature)


def estimate_parameters(counts: RiffleCounts, *, confidence: float = 0.95) -> RiffleEstimates:
    """Maximum-likelihood estimates of ``spread`` and ``clump`` with profile intervals.

    Parameters
    ----------
    counts : RiffleCounts
        Sufficient statistics of the riffles (from
        :func:`~shufflecheck.models.riffle_likelihood.tally_riffles`).
    confidence : float
        Level of the profile-likelihood intervals, in (0, 1); default 0.95.

    Returns
    -------
    RiffleEstimates
        ``spread`` in cards (standard deviation of the cut around the middle) and ``clump``
        (a ratio), each with its interval and standard error; the maximised log-likelihood
        and that of the ideal riffle (binomial cut, clump 1), in nats.
    """
    confidence = check_fraction(confidence, "confidence")
    _check_counts(counts)
    model = _Likelihood(counts)
    best = _maximum(model)
    estimates = {}
    for name, mle, profile, unit in (
        ("spread", best.spread, model.spread_profile(), "cards"),
        ("clump", best.clump, model.clump_profile(), ""),
    ):
        peak = max(best.log_likelihood, profile(mle))
        low, high = _interval(profile, mle, peak, confidence)
        estimates[name] = ParameterEstimate(
            name, mle, min(low, mle), max(high, mle), _stderr(profile, mle), confidence, unit
        )
    return RiffleEstimates(
        cards=counts.cards,
        riffles=counts.riffles,
        spread=estimates["spread"],
        clump=estimates["clump"],
        log_likelihood=best.log_likelihood,
        ideal_log_likelihood=log_likelihood(counts, None, 1.0),
        confidence=confidence,
    )
