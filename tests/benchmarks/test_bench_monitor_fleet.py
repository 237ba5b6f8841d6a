"""Fleet ingestion on Dask (issue 12, section 4: tables of a fleet ingested in parallel).

Eight tables of an invented card room, one log each of 100,000 uniformly random decks of 52
cards (800,000 decks), ingested into a fresh store three ways in the same run: one file
after another in this process (the baseline), then on a local Dask cluster of worker
processes (the engine's default) with 1 and with 2 workers. The figures are wall-clock
ratios to the baseline (the machine has 2 cores shared with other work, so absolute
seconds move from run to run; the ratios less so). The 1-worker run measures the engine's
overhead (cluster start, moving decks between processes); the 2-worker run what two cores
give. The three stores are compared too: they must be equal.
"""

from __future__ import annotations

import sqlite3
import time

import numpy as np
import pytest

from shufflecheck.records.logs import write_log

TABLES = 8
DECKS = 100_000
N = 52


@pytest.fixture(scope="module")
def fleet(tmp_path_factory):
    folder = tmp_path_factory.mktemp("monitor-fleet")
    rng = np.random.default_rng(1212)
    start = np.datetime64("2026-11-02T18:00:00")
    paths = []
    for t in range(TABLES):
        decks = rng.permuted(np.tile(np.arange(N, dtype=np.int16), (DECKS, 1)), axis=1)
        stamps = start + np.arange(DECKS) * np.timedelta64(90, "s")
        path = folder / f"table-{t + 1:02d}.csv"
        write_log(
            path,
            decks,
            columns={"table": [f"Table {t + 1}"] * DECKS, "recorded_at": stamps.astype(str)},
        )
        paths.append(path)
    return paths


def _contents(store) -> list:
    with sqlite3.connect(store) as db:
        blocks = db.execute(
            "SELECT table_id, first_deck, count, stats, trace FROM deck_blocks ORDER BY 1, 2"
        ).fetchall()
        states = db.execute("SELECT name, decks, state FROM monitored_tables ORDER BY 1").fetchall()
    return [blocks, states]


def test_fleet_ingest_one_and_two_workers(benchmark, figures, fleet, tmp_path):
    pytest.importorskip("distributed")
    from shufflecheck.analyses.monitor import ingest_log, ingest_logs

    def run():
        began = time.perf_counter()
        for path in fleet:
            ingest_log(tmp_path / "one.db", path)
        single = time.perf_counter() - began
        one = ingest_logs(tmp_path / "w1.db", fleet, engine="dask", workers=1)
        two = ingest_logs(tmp_path / "w2.db", fleet, engine="dask", workers=2)
        return single, one, two

    single, one, two = benchmark.pedantic(run, rounds=1, iterations=1)
    assert _contents(tmp_path / "w1.db") == _contents(tmp_path / "one.db")
    assert _contents(tmp_path / "w2.db") == _contents(tmp_path / "one.db")
    decks = TABLES * DECKS
    figures(f"one process: ingest of {TABLES} logs, {decks:,} decks (baseline)", single, 30)
    figures("  dask, 1 worker process / one process (same run)", one.seconds / single, 1.25, "x")
    figures("  dask, 2 worker processes / one process (same run)", two.seconds / single, 0.75, "x")
    figures(
        "  dask, 2 workers: peak resident memory per worker",
        max(two.worker_peak_mb.values()),
        300,
        "MB",
    )
