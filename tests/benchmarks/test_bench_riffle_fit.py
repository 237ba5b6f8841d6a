"""Fitting the hand riffle to a long log of recorded riffles (no target in the issue; the
figure is set beside a baseline measured in the same run: the audit of the same log, which
reads and relates the same decks).

A log of 100,000 riffles of 52 cards, each one riffle of the deck before it. ``fit-riffle``
without Monte Carlo nulls reads it, reads every riffle off, fits and runs the exact tests;
the Monte Carlo nulls are then timed per simulated log of that size."""

from __future__ import annotations

import time

import pytest

from shufflecheck.models.procedures import parse_procedure, simulate_play
from shufflecheck.records.logs import write_log

RIFFLES = 100_000


@pytest.fixture(scope="module")
def riffle_log(tmp_path_factory):
    path = tmp_path_factory.mktemp("fit") / "riffles.csv"
    procedure = parse_procedure("hand-riffle(spread=2.6, clump=1.7)")
    write_log(path, simulate_play(procedure, 52, RIFFLES, rng=909))
    return path


def test_fit_against_audit(benchmark, figures, riffle_log):
    from shufflecheck.analyses.audit_log import audit_log
    from shufflecheck.analyses.riffle_fit import fit_riffle_log

    start = time.perf_counter()
    audit_log(riffle_log)
    baseline = time.perf_counter() - start
    result = benchmark.pedantic(
        fit_riffle_log, args=(riffle_log,), kwargs={"samples": 0}, rounds=1, iterations=1
    )
    assert result.counts.riffles == RIFFLES
    figures(
        f"fit-riffle of {RIFFLES:,} riffles, exact tests only (target: the audit of the same "
        f"log, {baseline:.3g} s in this run)",
        benchmark.stats.stats.mean,
        baseline,
    )


def test_monte_carlo_per_simulated_log(benchmark, figures):
    import numpy as np

    from shufflecheck.analyses.riffle_null import ideal_riffle_tests
    from shufflecheck.models import hand_riffle
    from shufflecheck.models.riffle_likelihood import decode_riffles, tally_riffles

    counts = tally_riffles(
        decode_riffles(hand_riffle.sample(300, 52, rng=np.random.default_rng(3)))
    )[0]
    exact_only = time.perf_counter()
    ideal_riffle_tests(counts, samples=0)
    exact_only = time.perf_counter() - exact_only
    result = benchmark.pedantic(
        ideal_riffle_tests,
        args=(counts,),
        kwargs={"samples": 999, "rng": 1},
        rounds=1,
        iterations=1,
    )
    assert result.samples == 999
    per_log = (benchmark.stats.stats.mean - exact_only) / 999
    figures(
        "Monte Carlo nulls, one simulated log of 300 riffles (target: 10 ms, set here)",
        per_log * 1000,
        10,
        "ms",
    )
