"""Fleet scale on Dask (issue 11: 10 million decks across 100 tables in a Parquet dataset
partitioned by table and date; throughput with 1 and 2 workers and peak memory per
worker, which must stay bounded whatever the dataset size).

The dataset is made in the benchmark's setup (in a temporary folder, never in git): 100
tables x 10 dates x 10,000 uniformly random decks, integer labels in int8 position
columns ``p1..p52`` (about 520 MB). The engine is the default one, a local cluster of
worker processes with one thread each. The same-run anchor is the single-process audit
of the first 10 tables (1,000,000 decks). Peak memory per worker is measured twice, on
the first 10 tables and on all 100: a bounded engine shows the same figure for both.
"""

from __future__ import annotations

import time

import numpy as np
import pytest

DECKS_PER_FILE = 10_000
TABLES = 100
DATES = 10
N = 52


@pytest.fixture(scope="module")
def dataset(tmp_path_factory):
    pa = pytest.importorskip("pyarrow")
    pq = pytest.importorskip("pyarrow.parquet")
    root = tmp_path_factory.mktemp("fleet") / "decks"
    rng = np.random.default_rng(11)
    base = np.tile(np.arange(N, dtype=np.int8), (DECKS_PER_FILE, 1))
    for t in range(1, TABLES + 1):
        for d in range(1, DATES + 1):
            decks = rng.permuted(base, axis=1)
            folder = root / f"table=T{t:03d}" / f"date=2026-11-{d:02d}"
            folder.mkdir(parents=True)
            columns = {f"p{k + 1}": pa.array(decks[:, k]) for k in range(N)}
            pq.write_table(pa.table(columns), folder / "part-0.parquet")
    return root


def _fleet(root, pattern: str | None, workers: int):
    from shufflecheck.analyses.audit_log import finish_audit
    from shufflecheck.analyses.fleet import audit_parts
    from shufflecheck.analyses.log_parts import AuditOptions
    from shufflecheck.records.cards import STANDARD_52
    from shufflecheck.records.logs.sources import log_sources

    sources = log_sources(str(root / pattern) if pattern else root)
    options = AuditOptions(deck=STANDARD_52, labels="int0", by="table")
    report: dict = {}
    began = time.perf_counter()
    part, engine = audit_parts(sources, options, workers=workers, report=report)
    result = finish_audit(
        part,
        options,
        shown=str(root),
        paths=[s.path for s in sources],
        alpha=0.01,
        rng=0,
        engine=engine,
    )
    elapsed = time.perf_counter() - began
    return result, elapsed, max(report["worker_peak_mb"].values())


def test_fleet_throughput_and_memory(benchmark, figures, dataset):
    pytest.importorskip("distributed")
    from shufflecheck.analyses.audit_log import audit_log

    def run():
        began = time.perf_counter()
        one = audit_log(
            str(dataset / "table=T00[0-9]" / "*" / "*.parquet"), labels="int0", by="table"
        )
        single = time.perf_counter() - began
        small = _fleet(dataset, "table=T00[0-9]/*/*.parquet", 2)
        full1 = _fleet(dataset, None, 1)
        full2 = _fleet(dataset, None, 2)
        return one, single, small, full1, full2

    one, single, small, full1, full2 = benchmark.pedantic(run, rounds=1, iterations=1)
    total = TABLES * DATES * DECKS_PER_FILE
    assert full2[0].tested == full1[0].tested == total - TABLES
    assert full2[0].fleet()["groups"] == TABLES
    assert small[0].tested == one.tested  # 9 tables: T001..T009
    figures(f"single process, {one.tested + 9:,} decks (9 tables), wall", single, 60)
    figures("single process throughput (anchor)", (one.tested + 9) / single / 1e3, 1e9, "k decks/s")
    figures(f"Dask, 1 worker, {total:,} decks / {TABLES} tables, wall", full1[1], 600)
    figures("Dask, 1 worker, throughput", total / full1[1] / 1e3, 1e9, "k decks/s")
    figures(f"Dask, 2 workers, {total:,} decks, wall", full2[1], 600)
    figures("Dask, 2 workers, throughput", total / full2[1] / 1e3, 1e9, "k decks/s")
    figures("speed-up 2 workers / 1 worker", full1[1] / full2[1], 1e9, "x")
    figures("peak memory per worker, 9 tables (900,000 decks)", small[2], 1024, "MB")
    figures("peak memory per worker, 100 tables (10,000,000 decks)", full2[2], 1024, "MB")
