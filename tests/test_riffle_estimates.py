"""Maximum-likelihood estimates of the hand riffle: recovery, coverage, edges.

Checks: parameters recovered from simulated logs with known parameters (the project's
sampler, tested against brute force in tests/test_models_steps.py); interval coverage over
many seeds against the nominal level (binomial tolerances stated beside each check); the
maximum against a brute-force grid search of the exact log-likelihood; the interval ends
against the chi-square threshold of Wilks (1938) computed with an independent inner
maximisation (scipy.optimize.minimize_scalar).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar
from scipy.stats import chi2

from shufflecheck.analyses.riffle_estimates import estimate_parameters, maximum_likelihood
from shufflecheck.common.errors import InputError
from shufflecheck.models import hand_riffle
from shufflecheck.models.riffle_likelihood import decode_riffles, log_likelihood, tally_riffles


def _counts(decks: int, cards: int, *, rng, spread=None, clump=1.0):
    rows = hand_riffle.sample(decks, cards, rng=rng, spread=spread, clump=clump)
    return tally_riffles(decode_riffles(rows))[0]


def _coverage(cards, spread, clump, decks, seeds, seed=2024):
    rng = np.random.default_rng(seed)
    hits = np.zeros(2)
    values, errors = [], []
    for _ in range(seeds):
        est = estimate_parameters(_counts(decks, cards, rng=rng, spread=spread, clump=clump))
        hits += [
            est.spread.low <= spread <= est.spread.high,
            est.clump.low <= clump <= est.clump.high,
        ]
        values.append((est.spread.value, est.clump.value))
        errors.append((est.spread.stderr, est.clump.stderr))
    return hits / seeds, np.array(values), np.array(errors, dtype=float)


class TestRecovery:
    @pytest.mark.parametrize(("spread", "clump"), [(2.5, 1.6), (4.5, 0.6), (3.0, 1.0)])
    def test_large_log(self, spread, clump):
        est = estimate_parameters(_counts(4000, 52, rng=31, spread=spread, clump=clump))
        # within 4 standard errors (a false failure has chance about 6e-5 per parameter)
        assert abs(est.spread.value - spread) < 4 * est.spread.stderr
        assert abs(est.clump.value - clump) < 4 * est.clump.stderr
        assert est.spread.low < spread < est.spread.high or abs(est.spread.value - spread) < 0.1

    def test_ideal_riffle_cuts_fit_near_binomial_spread(self):
        # the binomial cut has standard deviation sqrt(n)/2 = 3.606 for 52 cards
        est = estimate_parameters(_counts(4000, 52, rng=5))
        assert est.spread.value == pytest.approx(math.sqrt(52) / 2, abs=4 * est.spread.stderr)
        assert est.clump.value == pytest.approx(1.0, abs=4 * est.clump.stderr)

    def test_unchanged_decks_in_the_likelihood(self):
        # 6 cards and clumpy drops: about a fifth of the riffles leave the deck unchanged
        counts = _counts(3000, 6, rng=9, spread=0.8, clump=4.0)
        assert counts.unchanged > 300
        est = estimate_parameters(counts)
        assert abs(est.spread.value - 0.8) < 4 * est.spread.stderr
        assert abs(est.clump.value - 4.0) < 4 * est.clump.stderr


class TestCoverage:
    def test_nominal_coverage_52_cards(self):
        # 300 logs of 200 riffles: coverage of a 95% interval has binomial s.e. 0.0126;
        # accept 0.91..0.99 (beyond 3 s.e. below, and the upper side allows conservative)
        covered, values, errors = _coverage(52, 2.5, 1.6, 200, 300)
        assert np.all(covered >= 0.91) and np.all(covered <= 0.99), covered
        # observed-information standard errors against the spread of the estimates (within
        # 15%: the sd of 300 estimates is itself uncertain by about 4%)
        ratio = np.nanmean(errors, axis=0) / values.std(axis=0, ddof=1)
        assert np.all(np.abs(ratio - 1) < 0.15), ratio

    @pytest.mark.slow
    @pytest.mark.parametrize(
        ("cards", "spread", "clump", "decks"),
        [(52, 2.5, 1.6, 100), (52, 4.0, 0.7, 60), (8, 1.0, 2.0, 100), (20, 2.0, 1.2, 40)],
    )
    def test_nominal_coverage_many_seeds(self, cards, spread, clump, decks):
        # 1000 logs: binomial s.e. 0.0069 around 0.95; accept 0.93..0.97 (about 3 s.e.)
        covered, _, _ = _coverage(cards, spread, clump, decks, 1000, seed=77)
        assert np.all(covered >= 0.93) and np.all(covered <= 0.97), covered

    @pytest.mark.slow
    def test_coverage_at_other_levels(self):
        rng = np.random.default_rng(8)
        for level, low, high in [(0.8, 0.76, 0.84), (0.99, 0.98, 1.0)]:
            hits = 0
            for _ in range(1000):
                est = estimate_parameters(
                    _counts(100, 52, rng=rng, spread=3.0, clump=1.4), confidence=level
                )
                hits += est.clump.low <= 1.4 <= est.clump.high
            assert low <= hits / 1000 <= high, (level, hits)


class TestAgainstBruteForce:
    def test_maximum_against_a_grid(self):
        # a small log with unchanged decks: both parts coupled
        counts = _counts(150, 6, rng=4, spread=1.0, clump=2.5)
        assert counts.unchanged > 0
        best = maximum_likelihood(counts)
        spreads = np.linspace(0.6, 1.6, 61)
        clumps = np.exp(np.linspace(math.log(1.2), math.log(5.0), 61))
        grid = max(log_likelihood(counts, s, k) for s in spreads for k in clumps)
        assert best.log_likelihood >= grid - 1e-9
        assert best.log_likelihood - grid < 0.01  # the grid is fine enough to come close

    @pytest.mark.parametrize("cards", [6, 52])
    def test_interval_ends_on_the_threshold(self, cards):
        counts = _counts(200, cards, rng=6, spread=2.0, clump=1.5)
        est = estimate_parameters(counts, confidence=0.9)
        threshold = est.log_likelihood - chi2.ppf(0.9, 1) / 2

        def profile_clump(k):
            res = minimize_scalar(
                lambda u: -log_likelihood(counts, math.exp(u), k), bounds=(-3, 3), method="bounded"
            )
            return -res.fun

        def profile_spread(s):
            res = minimize_scalar(
                lambda u: -log_likelihood(counts, s, math.exp(u)), bounds=(-4, 4), method="bounded"
            )
            return -res.fun

        for end in (est.clump.low, est.clump.high):
            assert profile_clump(end) == pytest.approx(threshold, abs=1e-4)
        for end in (est.spread.low, est.spread.high):
            assert profile_spread(end) == pytest.approx(threshold, abs=1e-4)


class TestEdges:
    def test_spread_zero(self):
        counts = _counts(200, 52, rng=1, spread=0.0, clump=1.3)
        est = estimate_parameters(counts)
        assert est.spread.value == 0.0 and est.spread.low == 0.0
        assert 0 < est.spread.high < 1 and est.spread.stderr is None

    def test_clump_zero(self):
        # strict alternation: no hand ever drops twice while both hold cards
        est = estimate_parameters(_counts(200, 52, rng=1, spread=3.0, clump=0.0))
        assert est.clump.value == 0.0 and est.clump.low == 0.0 and est.clump.high < 0.01

    def test_no_switch_means_unbounded_clump(self):
        # every riffle a single cut of two packets (the top packet dropped first, then the
        # other): rotations, whose likelihood grows without bound with the clump
        n = 20
        rows = np.array([np.roll(np.arange(n), -c) for c in (8, 10, 11, 9, 12)], dtype=np.int16)
        est = estimate_parameters(tally_riffles(decode_riffles(rows))[0])
        assert est.clump.value == math.inf and est.clump.high == math.inf

    def test_nothing_to_estimate(self):
        unchanged = np.tile(np.arange(10, dtype=np.int16), (5, 1))
        with pytest.raises(InputError, match="no riffle changed the deck"):
            estimate_parameters(tally_riffles(decode_riffles(unchanged))[0])
        two = np.array([[1, 0]] * 4, dtype=np.int16)
        with pytest.raises(InputError, match="clump cannot be estimated"):
            estimate_parameters(tally_riffles(decode_riffles(two))[0])

    def test_confidence_checked(self):
        with pytest.raises(InputError, match="confidence must lie in"):
            estimate_parameters(_counts(50, 20, rng=1), confidence=1.0)
