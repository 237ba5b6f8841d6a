"""shufflecheck.common.distributions against scipy.stats (the reference: same doubles).

The analyses call scipy.special directly so that a command does not import scipy.stats;
these checks compare every function with the scipy.stats method it replaces, on random
arguments, for exact equality of the doubles (the same special functions underneath).
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from scipy import stats

from shufflecheck.common import distributions as dist

RNG_SEED = 20261202


@pytest.fixture
def rng() -> np.random.Generator:
    return np.random.default_rng(RNG_SEED)


def test_normal_quantiles_equal_scipy_stats(rng):
    for p in [*rng.random(500), 1e-300, 1e-20, 0.5, 1 - 1e-16]:
        assert dist.normal_quantile(p) == stats.norm.ppf(p)
        assert dist.normal_upper_quantile(p) == stats.norm.isf(p)


def test_beta_quantile_equals_scipy_stats(rng):
    for _ in range(500):
        a, b = rng.integers(1, 10**6, size=2)
        q = rng.random() ** rng.integers(1, 30)
        assert dist.beta_quantile(q, a, b) == stats.beta.ppf(q, a, b)


def test_chi_square_quantiles_equal_scipy_stats(rng):
    for _ in range(500):
        df = int(rng.integers(1, 3000))
        level = rng.random() ** 5
        assert dist.chi_square_upper_quantile(level, df) == stats.chi2.isf(level, df)
        assert dist.chi_square_quantile(level, df) == stats.chi2.ppf(level, df)


def test_noncentral_chi_square_tail_equals_scipy_stats(rng):
    for _ in range(500):
        df = int(rng.integers(1, 3000))
        nc = float(rng.random() * 1000)
        x = float(rng.random() * 3000)
        assert dist.noncentral_chi_square_sf(x, df, nc) == stats.ncx2.sf(x, df, nc)
    assert dist.noncentral_chi_square_sf(5.0, 3, 0.0) == stats.chi2.sf(5.0, 3)


def test_hypergeometric_law_equals_scipy_stats(rng):
    for _ in range(200):
        total = int(rng.integers(1, 400))
        marked = int(rng.integers(0, total + 1))
        drawn = int(rng.integers(0, total + 1))
        k = np.arange(-2, drawn + 3)
        reference = stats.hypergeom(total, marked, drawn)
        assert np.array_equal(dist.hypergeometric_pmf(k, total, marked, drawn), reference.pmf(k))
        for j in k:
            assert dist.hypergeometric_sf(int(j), total, marked, drawn) == reference.sf(j)


def test_clopper_pearson_is_the_beta_quantile_interval():
    # Clopper & Pearson (1934): Beta(x, n - x + 1) and Beta(x + 1, n - x) quantiles
    low, high = dist.clopper_pearson(7, 20, 0.95)
    alpha = 1 - 0.95  # as the analyses compute it (0.05 plus a rounding error)
    assert low == stats.beta.ppf(alpha / 2, 7, 14)
    assert high == stats.beta.ppf(1 - alpha / 2, 8, 13)
    assert dist.clopper_pearson(0, 20, 0.95)[0] == 0.0
    assert dist.clopper_pearson(20, 20, 0.95)[1] == 1.0
    assert dist.clopper_pearson_lower(7, 20, 0.05) == stats.beta.ppf(0.05, 7, 14)
    assert dist.clopper_pearson_lower(0, 20, 0.05) == 0.0
    # the familiar "rule of three" neighbourhood: 0 of 100 gives an upper end near 3.6%
    assert dist.clopper_pearson(0, 100, 0.95)[1] == pytest.approx(0.0362, abs=5e-5)


@pytest.mark.parametrize(
    "module",
    [
        "shufflecheck.analyses.assess",
        "shufflecheck.analyses.feature_assess",
        "shufflecheck.analyses.tracking",
        "shufflecheck.analyses.riffle_estimates",
        "shufflecheck.stats.power",
    ],
)
def test_analyses_do_not_import_scipy_stats(module):
    code = f"import sys, {module}; print('scipy.stats' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
