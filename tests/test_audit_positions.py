"""Position-by-card test: statistic against scipy, the n/(n-1) scale by brute force, the
Monte Carlo null, calibration of the scaled limit."""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from shufflecheck.common.errors import InputError
from shufflecheck.stats import positions


def _uniform(rng, decks, n):
    return rng.permuted(np.tile(np.arange(n), (decks, 1)), axis=1)


class TestStatistic:
    def test_counts(self):
        decks = np.array([[0, 1, 2], [2, 0, 1], [0, 2, 1]])
        counts = positions.position_counts(decks)
        assert counts.tolist() == [[2, 0, 1], [1, 1, 1], [0, 2, 1]]

    @pytest.mark.parametrize("kind", ["pearson", "g"])
    def test_statistic_against_scipy(self, kind):
        # scipy.stats.chi2_contingency(correction=False) computes the same X^2 (and G with
        # lambda_="log-likelihood") because every row and column of the counts adds to D
        rng = np.random.default_rng(2)
        counts = positions.position_counts(_uniform(rng, 400, 52))
        ref = stats.chi2_contingency(
            counts, correction=False, lambda_="log-likelihood" if kind == "g" else None
        )
        test = positions.position_test(counts, 400, kind=kind)
        assert test.statistic == pytest.approx(ref.statistic, rel=1e-12)
        assert test.df == ref.dof == 51**2
        # p-value: scipy.stats.chi2.sf of the scaled statistic
        assert math.exp(test.log_p) == pytest.approx(
            stats.chi2.sf(ref.statistic * 51 / 52, 51**2), rel=1e-9
        )
        assert test.method == "asymptotic"

    @pytest.mark.parametrize(("n", "decks"), [(3, 1), (3, 2), (3, 3), (4, 2)])
    def test_exact_mean_is_n_times_n_minus_1(self, n, decks):
        # brute force over all (n!)^D audits: E[X^2] = n(n-1) exactly, not (n-1)^2
        perms = list(itertools.permutations(range(n)))
        total = Fraction(0)
        for audit in itertools.product(perms, repeat=decks):
            counts = positions.position_counts(np.array(audit), n)
            total += Fraction(n * int((counts**2).sum()), decks) - decks * n
        assert total / len(perms) ** decks == n * (n - 1)

    def test_scaled_limit_is_calibrated(self):
        # statistical check: scaled statistic of 300 uniform audits against chi-square
        # (n-1)^2 df with scipy.stats.kstest; the unscaled one is visibly off for n = 52
        rng = np.random.default_rng(5)
        scaled, raw = [], []
        for _ in range(300):
            counts = positions.position_counts(_uniform(rng, 520, 52))
            test = positions.position_test(counts, 520)
            scaled.append(math.exp(test.log_p))
            raw.append(stats.chi2.sf(test.statistic, 51**2))
        assert stats.kstest(scaled, "uniform").pvalue > 0.001
        assert stats.kstest(raw, "uniform").pvalue < 0.001


class TestMonteCarlo:
    def test_auto_switches_below_five_expected(self):
        rng = np.random.default_rng(1)
        counts = positions.position_counts(_uniform(rng, 30, 10))
        test = positions.position_test(counts, 30, resamples=199, rng=4)
        assert test.method == "monte-carlo" and test.resamples == 199
        assert "199 simulated audits" in test.detail
        assert positions.position_test(counts, 30, method="asymptotic").method == "asymptotic"
        big = positions.position_counts(_uniform(rng, 50, 10))
        assert positions.position_test(big, 50).method == "asymptotic"

    def test_detects_an_unshuffled_log(self):
        decks = np.tile(np.arange(10), (20, 1))
        test = positions.position_test(positions.position_counts(decks), 20, rng=0)
        assert test.method == "monte-carlo"
        assert math.exp(test.log_p) == pytest.approx(1 / 1000)  # (1 + 0) / (999 + 1)

    def test_super_uniform_on_uniform_decks(self):
        # P(p <= u) <= u up to Monte Carlo noise: 200 audits of 12 decks of 8 cards
        rng = np.random.default_rng(9)
        ps = np.array(
            [
                math.exp(
                    positions.position_test(
                        positions.position_counts(_uniform(rng, 12, 8)), 12, resamples=99, rng=rng
                    ).log_p
                )
                for _ in range(200)
            ]
        )
        for u in (0.05, 0.2, 0.5):
            # binomial tolerance: 3 standard deviations above u
            assert (ps <= u).mean() <= u + 3 * math.sqrt(u * (1 - u) / 200)


def test_far_tail_uses_the_bound():
    counts = np.diag(np.full(52, 10**6))  # a million unshuffled decks
    test = positions.position_test(counts, 10**6)
    assert math.isfinite(test.log_p) and test.log_p < -1e6
    assert "upper bound" in test.detail


def test_errors():
    with pytest.raises(InputError, match="square matrix"):
        positions.position_test(np.zeros((2, 3)), 1)
    with pytest.raises(InputError, match="add up"):
        positions.position_test(np.eye(3, dtype=int), 2)
    with pytest.raises(InputError, match="kind"):
        positions.position_test(np.eye(3, dtype=int), 1, kind="t")
    with pytest.raises(InputError, match="method"):
        positions.position_test(np.eye(3, dtype=int), 1, method="exact")
