"""Monitoring ingest speed (issue 12: 1,000,000 decks of 52 cards into the store in <= 30 s on
the 2-core machine). The baseline, measured in the same run on the same file, is reading and
validating the log alone (the reader's share of the ingest); the ratio says what the
statistics, e-processes, detectors and SQLite writes add to it."""

from __future__ import annotations

import time

import numpy as np
import pytest

from shufflecheck.records.logs import read_log, write_log

DECKS = 1_000_000
N = 52


@pytest.fixture(scope="module")
def million(tmp_path_factory):
    """A 1,000,000-deck log of uniformly random decks of one table, 90 s apart."""
    path = tmp_path_factory.mktemp("monitor") / "million.csv"
    rng = np.random.default_rng(1601)
    decks = rng.permuted(np.tile(np.arange(N, dtype=np.int16), (DECKS, 1)), axis=1)
    start = np.datetime64("2026-11-02T18:00:00")
    write_log(
        path,
        decks,
        columns={
            "table": ["Table 9"] * DECKS,
            "recorded_at": (start + np.arange(DECKS) * np.timedelta64(90, "s")).astype(str),
        },
    )
    return path


def _read(path):
    return sum(len(chunk) for chunk in read_log(path))


def test_ingest_one_million(benchmark, figures, million, tmp_path):
    from shufflecheck.analyses.monitor import ingest_log

    start = time.perf_counter()
    assert _read(million) == DECKS
    reading = time.perf_counter() - start
    store = tmp_path / "fleet.db"
    result = benchmark.pedantic(ingest_log, args=(store, million), rounds=1, iterations=1)
    ingest = benchmark.stats.stats.mean
    assert result.tables[0].decks_tested == DECKS - 1
    start = time.perf_counter()
    again = ingest_log(store, million)
    repeat = time.perf_counter() - start
    assert again.already is not None
    figures(
        f"monitor ingest of {DECKS:,} decks (store {store.stat().st_size / 1e6:.0f} MB)", ingest, 30
    )
    figures("  baseline in the same run: reading + validating the log alone", reading, 30)
    figures("  ingest / reading alone", ingest / reading, 5, "x")
    figures("  re-ingest of the same file (SHA-256, nothing added)", repeat, 5)
