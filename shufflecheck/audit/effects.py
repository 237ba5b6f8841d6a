"""Effects in plain units: how far the recorded decks are from random, per statistic.

An effect is an *estimate* from the recorded decks: the observed mean per deck minus the
exact mean under a uniform deck, with the standard error of the observed mean, and one
sentence in the statistic's own words (:meth:`~shufflecheck.audit.catalogue.Statistic.
describe_effect`). The position-by-card test reports its largest cell departure instead.
"""

from __future__ import annotations

import math

import numpy as np

from shufflecheck.audit.catalogue import Statistic
from shufflecheck.audit.nulls import Law
from shufflecheck.audit.results import Effect

__all__ = ["ordinal", "position_effect", "sum_effect"]


def ordinal(k: int) -> str:
    """``1st``, ``2nd``, ``3rd``, ``4th``, ..., ``11th``, ``21st``."""
    suffix = "th" if 10 <= k % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(k % 10, "th")
    return f"{k}{suffix}"


def sum_effect(stat: Statistic, hist: np.ndarray, law: Law) -> Effect:
    """Effect of a per-deck statistic from its histogram over the decks (or pairs)."""
    count = int(hist.sum())
    values = np.arange(hist.size, dtype=float)
    observed = float(values @ hist) / count
    spread = float(((values - observed) ** 2) @ hist) / (count - 1) if count > 1 else 0.0
    se = math.sqrt(spread / count)
    expected = float(law.mean)
    diff = observed - expected
    shown_observed = observed + stat.shown_offset
    shown_expected = expected + stat.shown_offset
    text = stat.describe_effect(shown_observed, shown_expected)
    return Effect(diff, stat.unit, shown_observed, shown_expected, se, text)


def position_effect(counts: np.ndarray, decks: int) -> Effect:
    """The largest departure of one (card, position) frequency from ``1/n``, in
    percentage points, with its binomial standard error."""
    n = counts.shape[0]
    freq = counts / decks
    dev = freq - 1.0 / n
    i, c = np.unravel_index(int(np.argmax(np.abs(dev))), dev.shape)
    f = float(freq[i, c])
    value = 100.0 * float(dev[i, c])
    se = 100.0 * math.sqrt(max(f * (1 - f), 0.0) / decks)
    text = (
        f"largest departure: the {ordinal(int(c) + 1)} card of the reference lies at position "
        f"{int(i) + 1} in {100 * f:.3g}% of decks vs {100 / n:.3g}% expected"
    )
    return Effect(value, "percentage points (largest cell)", 100 * f, 100.0 / n, se, text)
