"""Calibration on uniformly random decks (numpy permutations, seeded): every test's p-values
are uniform (scipy.stats.kstest) and the battery's family-wise false-alarm rate at
alpha = 0.01 stays at or below 1.5%.

The exact tests are discrete (a sum over a few hundred decks of a small count), so their
p-values sit on a lattice that a KS test of a thousand audits can resolve. Uniformity of the
*law* is therefore checked on randomized p-values, ``P(T > t) + U P(T = t)`` (one-sided) or
``2 min(u, 1 - u)`` with ``u = P(T < t) + U P(T = t)`` (two-sided), which are exactly uniform
when the null law is right ([1]); the p-values the battery reports are checked to be
super-uniform, ``P(p <= u) <= u``, within binomial tolerance.

The figures in docs/audit.md come from :func:`simulate_audits` with the arguments of the
slow tests below.

[1] A. Agresti and A. Gottard, "Randomized confidence intervals and the mid-p approach",
    Statist. Sci. 20 (2005) 367-371 (randomized p-values of discrete tests).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from shufflecheck.records.cards import STANDARD_52
from shufflecheck.stats import BatterySummary
from shufflecheck.stats.nulls import sum_tail_logs


def _randomized(test, law, count, u):
    lo, up = (math.exp(v) for v in sum_tail_logs(law, count, int(test.statistic)))
    point = max(lo + up - 1.0, 0.0)
    if test.alternative == "greater":
        return up - point + u * point
    pit = lo - point + u * point
    return 2 * min(pit, 1 - pit)


def simulate_audits(
    audits: int, decks: int, cards: int, seed: int, *, with_suits: bool
) -> tuple[list[str], np.ndarray, np.ndarray, np.ndarray]:
    """Run the full battery on ``audits`` logs of ``decks`` uniform decks.

    Returns the test names, the reported p-values and the randomized p-values (both
    ``audits x tests``; the position test's own p-value stands in for its randomized one),
    and whether each audit was flagged at alpha = 0.01.
    """
    rng = np.random.default_rng(seed)
    if with_suits and cards == 52:
        suits, colours = STANDARD_52.suit_codes(), STANDARD_52.colour_codes()
    elif with_suits:
        suits, colours = np.arange(cards) % 4, np.arange(cards) % 2
    else:
        suits = colours = None
    names: list[str] = []
    pvals, randomized, flagged = [], [], []
    base = np.tile(np.arange(cards, dtype=np.int16), (decks, 1))
    for _ in range(audits):
        absolute = rng.permuted(base, axis=1)
        reference = rng.permutation(cards)  # any fixed reference order
        relative = np.argsort(reference)[absolute].astype(np.int16)
        summary = BatterySummary.empty(cards, suits=suits, colours=colours)
        summary.update(relative, absolute)
        result = summary.finish(alpha=0.01, rng=rng)
        names = [t.name for t in result.tests]
        pvals.append([t.p_value for t in result.tests])
        row = []
        for t in result.tests:
            if t.method != "exact":
                row.append(t.p_value)
                continue
            count = decks - 1 if t.name == "repeat-positions" else decks
            row.append(_randomized(t, summary.laws[t.name], count, rng.random()))
        randomized.append(row)
        flagged.append(result.flagged)
    return names, np.array(pvals), np.array(randomized), np.array(flagged)


def _check(names, pvals, randomized, threshold):
    audits = pvals.shape[0]
    for j, name in enumerate(names):
        # scipy.stats.kstest against the uniform law on [0, 1]
        assert stats.kstest(randomized[:, j], "uniform").pvalue > threshold, name
        for u in (0.01, 0.05, 0.25):
            # super-uniform within 4 binomial standard deviations (51 correlated checks per
            # configuration: 3 would fail by chance in a few percent of seeds)
            assert (pvals[:, j] <= u).mean() <= u + 4 * math.sqrt(u * (1 - u) / audits), name


def test_p_values_uniform_quick():
    names, pvals, randomized, flagged = simulate_audits(150, 300, 52, seed=10, with_suits=True)
    assert len(names) == 17
    _check(names, pvals, randomized, 1e-4)
    assert flagged.mean() <= 0.04  # a loose check at 150 audits; the strict one is slow


@pytest.mark.slow
def test_calibration_52_cards():
    names, pvals, randomized, flagged = simulate_audits(1000, 300, 52, seed=2026, with_suits=True)
    _check(names, pvals, randomized, 1e-3)
    assert flagged.mean() <= 0.015


@pytest.mark.slow
def test_calibration_small_pack():
    names, pvals, randomized, flagged = simulate_audits(5000, 400, 8, seed=8, with_suits=True)
    _check(names, pvals, randomized, 1e-3)
    assert flagged.mean() <= 0.015
