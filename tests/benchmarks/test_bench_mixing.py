"""Exact mixing speed (issue targets: riffle n = 52, k = 1..20, all metrics <= 20 ms;
n = 416, k = 1..30 <= 1 s; transposition n = 52, k = 1..300 exact <= 5 s including the
chain build; top-to-random n = 52, k = 1..600 <= 0.3 s) and the riffle sampler (1,000,000
decks of 52 cards through 7 riffles <= 1 s on one core)."""

from __future__ import annotations

from shufflecheck.core import counting
from shufflecheck.models import riffle, top_to_random, transposition


def _cold_riffle(n, k):
    counting.eulerian_row.cache_clear()
    return riffle.distance_curve(n, k)


def test_riffle_52(benchmark, figures):
    curve = benchmark.pedantic(_cold_riffle, args=(52, 20), rounds=5, iterations=1)
    assert len(curve.rows) == 20
    figures(
        "riffle, 52 cards, k = 1..20, TV + separation + KL, cold", benchmark.stats.stats.mean, 0.02
    )


def test_riffle_416(benchmark, figures):
    curve = benchmark.pedantic(_cold_riffle, args=(416, 30), rounds=3, iterations=1)
    assert len(curve.rows) == 30
    figures("riffle, 416 cards (8-deck shoe), k = 1..30, cold", benchmark.stats.stats.mean, 1.0)


def _cold_transposition():
    transposition.lumped_chain.cache_clear()
    return transposition.distance_curve(52, 300, bound=False)


def test_transposition_52(benchmark, figures):
    curve = benchmark.pedantic(_cold_transposition, rounds=2, iterations=1)
    assert len(curve.rows) == 300
    figures(
        "transposition, 52 cards, k = 1..300 exact incl. chain build",
        benchmark.stats.stats.mean,
        5.0,
    )


def test_transposition_upper_bound_52(benchmark, figures):
    rows = benchmark.pedantic(
        transposition.upper_bound_curve, args=(52, 300), rounds=2, iterations=1
    )
    assert len(rows) == 300
    figures(
        "transposition, 52 cards, upper bound lemma k = 1..300 (no target)",
        benchmark.stats.stats.mean,
        5.0,
    )


def _cold_top(n, k):
    counting.stirling2_row.cache_clear()
    return top_to_random.distance_curve(n, k)


def test_top_to_random_52(benchmark, figures):
    curve = benchmark.pedantic(_cold_top, args=(52, 600), rounds=3, iterations=1)
    assert len(curve.rows) == 600
    figures(
        "top-to-random, 52 cards, k = 1..600 with the SUT bound", benchmark.stats.stats.mean, 0.3
    )


def test_riffle_sampler_one_million(benchmark, figures):
    decks = benchmark.pedantic(
        riffle.sample, args=(1_000_000, 52, 7), kwargs={"rng": 1}, rounds=3, iterations=1
    )
    assert decks.shape == (1_000_000, 52)
    figures(
        "sample 1,000,000 decks x 7 ideal riffles (one thread)", benchmark.stats.stats.mean, 1.0
    )
