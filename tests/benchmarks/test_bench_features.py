"""Riffle distances on a feature (issue 10, section 1), each beside an anchor measured in
the same run: the riffle sampler dealing 2,000 decks of 52 cards after 6 riffles (numpy work
of a like size, so the ratios carry from machine to machine).

* the suits of 52 cards in their reference order (a start in four blocks): each word's
  exact chance for 2,000 uniform words, one sample serving all 12 rows of the estimate;
* the same words' chances alone, per word;
* the alternating colour deck (52 cards, rows 1 to 8): each row its own sample;
* the exact sum for 4 suits of 3 cards (369,600 words);
* the rigorous lower bounds beside the estimates: the walk extremes of the alternating
  colour deck after 1 to 5 riffles, and the merged classes of the suits after 1 to 12.

CPU time (the machine is shared); no issue target, nothing asserted against a time.
"""

from __future__ import annotations

import time

import numpy as np


def _cpu(function, *args, **kwargs) -> tuple[float, object]:
    start = time.process_time()
    out = function(*args, **kwargs)
    return time.process_time() - start, out


def test_feature_estimates(benchmark, figures):
    from shufflecheck.models import block_words, riffle
    from shufflecheck.models.features import _feature_distances, feature_curve

    def run():
        _feature_distances.cache_clear()
        block_words._sample.cache_clear()
        block_words._every_word.cache_clear()
        baseline, _ = _cpu(riffle.sample, 2000, 52, 6, rng=0)
        suits = [v for v in range(4) for _ in range(13)]
        suit_time, curve = _cpu(feature_curve, suits, 12, samples=2000, seed=0)
        order = np.argsort(np.random.default_rng(1).random((2000, 52)), axis=1)
        words = np.repeat(np.arange(4), 13)[order]
        chance_time, _ = _cpu(block_words.word_chances, words, (13, 13, 13, 13), 64)
        colour = [i % 2 for i in range(52)]
        alternating_time, _ = _cpu(feature_curve, colour, 8, samples=2000, seed=0)
        exact_time, _ = _cpu(block_words.block_distances, (3, 3, 3, 3), 8)
        walk_time = sum(_cpu(walk_tv_lower, 52, 2**k)[0] for k in range(1, 6))
        merged_time = sum(_cpu(merged_lower_bound, (13, 13, 13, 13), 2**k)[0] for k in range(1, 13))
        times = (suit_time, chance_time, alternating_time, exact_time, walk_time, merged_time)
        return baseline, times, curve

    from shufflecheck.models.alternating_walk import walk_tv_lower
    from shufflecheck.models.features import merged_lower_bound

    baseline, times, curve = benchmark.pedantic(run, rounds=1, iterations=1)
    suit_time, chance_time, alternating_time, exact_time, walk_time, merged_time = times
    figures("anchor: riffle sampler, 2,000 decks of 52 after 6 riffles, CPU", baseline, None)
    estimated = sum(r.total_variation_estimate is not None for r in curve.rows)
    figures(
        "suits of 52 in blocks: 12 rows with estimates from 2,000 words, CPU",
        suit_time,
        None,
        note=f"{suit_time / baseline:.0f} x the anchor; {estimated} rows estimated",
    )
    figures(
        "suits of 52: exact chance per word (2,000 words, 6 riffles), CPU",
        chance_time / 2000 * 1e6,
        None,
        unit="us per word",
        note=f"{chance_time / baseline:.0f} x the anchor for the 2,000 words",
    )
    figures(
        "alternating colour deck of 52: 8 rows with estimates from 2,000 words, CPU",
        alternating_time,
        None,
        note=f"{alternating_time / baseline:.0f} x the anchor",
    )
    figures(
        "4 suits of 3 cards: exact sum over 369,600 words (first row), CPU",
        exact_time,
        None,
        note=f"{exact_time / baseline:.0f} x the anchor",
    )
    figures(
        "alternating colour deck of 52: walk-extremes lower bound, 1 to 5 riffles, CPU",
        walk_time,
        None,
        note=f"{walk_time / baseline:.0f} x the anchor",
    )
    figures(
        "suits of 52: merged-class lower bound, 1 to 12 riffles, CPU",
        merged_time,
        None,
        note=f"{merged_time / baseline:.0f} x the anchor",
    )
