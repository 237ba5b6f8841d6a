"""Audit battery speed and memory (issue 5 targets: the full battery on 1,000,000 decks of 52
cards within 60 s including reading the CSV, peak memory <= 2 GB; this library's share,
``update`` over all decks, well under 30 s). Decks are uniform numpy permutations made in
chunks of 100,000 (generation is not timed)."""

from __future__ import annotations

import time

import numpy as np

from shufflecheck.models import riffle
from shufflecheck.records.cards import STANDARD_52
from shufflecheck.stats import BatterySummary, plan_decks
from shufflecheck.stats.nulls import inversions_law, sum_tail_logs

from ._memory import peak_rss_mb

DECKS = 1_000_000
CHUNK = 100_000


def _run_battery():
    rng = np.random.default_rng(2026)
    base = np.tile(np.arange(52, dtype=np.int16), (CHUNK, 1))
    summary = BatterySummary.empty(
        52, suits=STANDARD_52.suit_codes(), colours=STANDARD_52.colour_codes()
    )
    updating = 0.0
    for _ in range(DECKS // CHUNK):
        absolute = rng.permuted(base, axis=1)
        start = time.perf_counter()
        summary.update(absolute, absolute)
        updating += time.perf_counter() - start
    start = time.perf_counter()
    result = summary.finish(alpha=0.01)
    finishing = time.perf_counter() - start
    return updating, finishing, result


def test_battery_one_million_decks(benchmark, figures):
    updating, finishing, result = benchmark.pedantic(_run_battery, rounds=1, iterations=1)
    assert result.decks == DECKS
    assert {t.method for t in result.tests} == {"exact", "asymptotic"}  # no Monte Carlo
    figures("audit update() over 1,000,000 decks of 52 (all tests' summaries)", updating, 30)
    figures("audit finish() on 1,000,000 decks (17 tests, Holm)", finishing, 5)
    figures("audit update() + finish(), 1,000,000 decks", updating + finishing, 30)


def test_battery_memory(benchmark, figures):
    setup = """
    import numpy as np
    from shufflecheck.stats import BatterySummary
    from shufflecheck.records.cards import STANDARD_52
    rng = np.random.default_rng(1)
    base = np.tile(np.arange(52, dtype=np.int16), (100_000, 1))
    """
    body = """
    summary = BatterySummary.empty(
        52, suits=STANDARD_52.suit_codes(), colours=STANDARD_52.colour_codes()
    )
    for _ in range(10):
        absolute = rng.permuted(base, axis=1)
        summary.update(absolute, absolute)
    result = summary.finish()
    """
    _before, after = benchmark.pedantic(peak_rss_mb, args=(setup, body), rounds=1, iterations=1)
    figures("audit of 1,000,000 decks in chunks of 100,000: peak RSS", after, 2048, "MB")


def test_exact_tail_one_million_decks(benchmark, figures):
    law = inversions_law(52)
    lo, up = benchmark.pedantic(
        sum_tail_logs, args=(law, DECKS, 663 * DECKS + 150_000), rounds=3, iterations=1
    )
    assert up < lo
    figures(
        "exact tail of the inversion sum over 1,000,000 decks (widest law, mean of 3)",
        benchmark.stats.stats.mean,
        1.0,
    )


def test_power_plan_riffle_7(benchmark, figures):
    def plan():
        return plan_decks(
            lambda count, rng: riffle.sample(count, 52, 7, rng=rng),
            52,
            suits=STANDARD_52.suit_codes(),
            colours=STANDARD_52.colour_codes(),
            rng=7,
        )

    result = benchmark.pedantic(plan, rounds=1, iterations=1)
    assert result.best() is not None
    figures(
        "power plan for riffle x7, 52 cards, 4000 simulated decks", benchmark.stats.stats.mean, 5
    )
