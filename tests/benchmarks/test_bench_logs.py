"""Log reading at scale (issue 5: the whole audit of a CSV log of 1,000,000 decks of 52
cards, about 160 MB, in <= 60 s with <= 2 GB peak memory; the reading and validating part
is budgeted here at <= 20 s and <= 1 GB, leaving the rest to the test battery)."""

from __future__ import annotations

import time

import numpy as np
import pytest

from shufflecheck.records.logs import Reference, read_log, write_log

from ._memory import peak_rss_mb

DECKS = 1_000_000
N = 52


def _checksum(decks: np.ndarray) -> int:
    weights = np.arange(1, N + 1, dtype=np.int64)
    return int((decks.astype(np.int64) @ weights % 1_000_003).sum())


@pytest.fixture(scope="module")
def million(tmp_path_factory):
    """A 1,000,000-deck CSV log of the fictional Lantern Quay card room, written once."""
    path = tmp_path_factory.mktemp("logs") / "million.csv"
    rng = np.random.default_rng(2031)
    decks = rng.permuted(np.tile(np.arange(N, dtype=np.int16), (DECKS, 1)), axis=1)
    start = np.datetime64("2031-03-01T18:00:00")
    columns = {
        "deck_id": np.arange(1, DECKS + 1),
        "table": np.array([f"T{k}" for k in range(1, 9)])[np.arange(DECKS) % 8],
        "dealer": np.array([f"dealer-{k:02d}" for k in range(1, 25)])[rng.integers(0, 24, DECKS)],
        "recorded_at": (start + np.arange(DECKS) * np.timedelta64(7, "s")).astype(str),
    }
    began = time.perf_counter()
    write_log(path, decks, columns=columns)
    return path, _checksum(decks), time.perf_counter() - began


def _read(path) -> tuple[int, int]:
    count = checksum = 0
    for chunk in read_log(path):
        count += len(chunk)
        checksum += _checksum(chunk.decks)
    return count, checksum


def test_read_and_validate(benchmark, figures, million):
    path, expected, written = million
    count, checksum = benchmark.pedantic(_read, args=(path,), rounds=1, iterations=1)
    assert count == DECKS and checksum == expected
    size = path.stat().st_size / 1e6
    figures(
        f"read + validate {DECKS:,} decks of {N} (CSV, {size:.0f} MB)",
        benchmark.stats.stats.mean,
        20,
    )
    # write_log has no target of its own in the issue; shown against the same budget
    figures(f"write_log of {DECKS:,} decks (CSV with 4 kept columns)", written, 20)


def test_read_relative_previous_by_table(benchmark, figures, million):
    path, _, _ = million

    def run() -> int:
        stream = Reference.parse("previous").stream(by="table")
        tested = 0
        for chunk in read_log(path):
            tested += len(stream.relative(chunk))
        return tested

    tested = benchmark.pedantic(run, rounds=1, iterations=1)
    assert tested == DECKS - 8  # the first deck of each of the 8 tables is only a reference
    figures(
        f"read + validate + relative to previous deck by table, {DECKS:,} decks",
        benchmark.stats.stats.mean,
        25,
    )


def test_read_memory(benchmark, figures, million):
    path, _, _ = million
    before, after = benchmark.pedantic(
        peak_rss_mb,
        args=(
            "from shufflecheck.records.logs import read_log",
            f"total = sum(len(c) for c in read_log({str(path)!r}))\nassert total == {DECKS}",
        ),
        rounds=1,
        iterations=1,
    )
    figures(f"read {DECKS:,} decks, peak RSS of the process", after, 1024, "MB")
    figures(f"read {DECKS:,} decks, RSS added by reading", after - before, 1024, "MB")


def test_read_symbols_and_lower_case(benchmark, figures, tmp_path):
    """Codes as people type them (``10♠``, ``q♥``) take the slower multi-byte lookup."""
    from shufflecheck.records.cards import STANDARD_52

    decks = np.random.default_rng(7).permuted(
        np.tile(np.arange(N, dtype=np.int16), (200_000, 1)), axis=1
    )
    symbol = {"S": "♠", "H": "♥", "D": "♦", "C": "♣"}
    words = np.array(
        [(c[0].replace("T", "10") + symbol[c[1]]).lower() for c in STANDARD_52.cards], dtype=object
    )
    path = tmp_path / "symbols.csv"
    path.write_text(
        "order\n" + "\n".join(" ".join(r) for r in words[decks].tolist()) + "\n", encoding="utf-8"
    )
    count, checksum = benchmark.pedantic(_read, args=(path,), rounds=1, iterations=1)
    assert count == len(decks) and checksum == _checksum(decks)
    # budget: the 1,000,000-deck reading budget scaled to 200,000 decks
    figures("read + validate 200,000 decks coded like '10♠ q♥'", benchmark.stats.stats.mean, 4)
