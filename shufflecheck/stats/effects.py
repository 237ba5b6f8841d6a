"""Effects in plain units: how far the recorded decks are from random, per statistic.

An effect is an *estimate* from the recorded decks: the observed mean per deck minus the
exact mean under a uniform deck, with the standard error of the observed mean, and one
sentence in the statistic's own words (:meth:`~shufflecheck.stats.catalogue.Statistic.
describe_effect`). The position-by-card test reports its largest cell departure instead.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from shufflecheck.stats.catalogue import Statistic
from shufflecheck.stats.nulls import Law
from shufflecheck.stats.results import Effect

__all__ = ["class_position_effect", "keyed_sum_effect", "ordinal", "position_effect", "sum_effect"]


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


def keyed_sum_effect(stat: Statistic, table: np.ndarray, laws: Mapping[int, Law]) -> Effect:
    """Effect of a statistic whose exact law depends on the deck: ``table[key, value]``
    counts the decks; the expectation averages the decks' own exact means."""
    per_key = table.sum(axis=1)
    count = int(per_key.sum())
    values = np.arange(table.shape[1], dtype=float)
    hist = table.sum(axis=0)
    observed = float(values @ hist) / count
    spread = float(((values - observed) ** 2) @ hist) / (count - 1) if count > 1 else 0.0
    se = math.sqrt(spread / count)
    expected = sum(float(laws[int(k)].mean) * int(per_key[k]) for k in np.flatnonzero(per_key))
    expected /= count
    text = stat.describe_effect(observed + stat.shown_offset, expected + stat.shown_offset)
    return Effect(observed - expected, stat.unit, observed, expected, se, text)


def class_position_effect(
    counts: np.ndarray, decks: int, class_counts: tuple[int, ...], names: tuple[str, ...] = ()
) -> Effect:
    """The largest departure of one (value, position) frequency from its share ``c_v / n``,
    in percentage points, with its binomial standard error."""
    n = counts.shape[0]
    share = np.asarray(class_counts, dtype=float) / n
    freq = counts / decks
    dev = freq - share[None, :]
    i, v = np.unravel_index(int(np.argmax(np.abs(dev))), dev.shape)
    f = float(freq[i, v])
    value = 100.0 * float(dev[i, v])
    se = 100.0 * math.sqrt(max(f * (1 - f), 0.0) / decks)
    name = names[int(v)] if names else f"class {int(v) + 1}"
    text = (
        f"largest departure: value {name} lies at position {int(i) + 1} in {100 * f:.3g}% of "
        f"shoes vs {100 * share[v]:.3g}% expected"
    )
    return Effect(value, "percentage points (largest cell)", 100 * f, 100 * share[v], se, text)
