"""A Monte Carlo estimate of a feature's exact total variation from uniformly random words.

For a word law ``P`` on ``M`` words, ``TV = sum_w (1/M - P(w))^+ = E_U[(1 - M P(W))^+]``
with ``W`` uniform: the mean of a quantity in ``[0, 1]`` (the *shortfall* of each sampled
word). When each sampled word's chance is exact, the sample mean is an unbiased estimate of
the exact total variation; it carries a normal-theory interval, and when every sampled word
gives the same end of ``[0, 1]`` (the standard error is 0) the exact binomial bound on the
share of words that could differ (``-ln(tail) / samples``, from ``(1 - x)^N <= e^(-N x)``).
Estimates certify nothing: they are labelled as such wherever they are shown.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from shufflecheck.common.distributions import normal_upper_quantile

__all__ = ["WordEstimate", "shortfall_estimate"]


@dataclass(frozen=True)
class WordEstimate:
    """A Monte Carlo estimate of the exact total variation: ``value`` with its standard
    error and interval at ``confidence`` (normal theory), from ``samples`` uniform words."""

    value: float
    stderr: float
    low: float
    high: float
    confidence: float
    samples: int


def shortfall_estimate(shortfalls: np.ndarray, confidence: float = 0.99) -> WordEstimate:
    """The estimate from each sampled word's ``(1 - M P(w))^+`` (module notes)."""
    below = np.asarray(shortfalls, dtype=float)
    samples = int(below.size)
    value = float(below.mean())
    stderr = float(below.std(ddof=1) / math.sqrt(samples))
    tail = (1 - confidence) / 2
    z = normal_upper_quantile(tail)
    low, high = max(0.0, value - z * stderr), min(1.0, value + z * stderr)
    if stderr == 0.0:
        # every word gave the same end of [0, 1] (e.g. after one riffle no sampled word can
        # be reached): the exact binomial bound on the share of words that could differ
        share = -math.log(tail) / samples
        low, high = (1.0 - share, 1.0) if value == 1.0 else (0.0, min(1.0, share))
    return WordEstimate(value, stderr, low, high, confidence, samples)
