"""The whole audit of a large log (issue 5: a CSV log of 1,000,000 decks of 52 cards, about
160 MB: full battery without Monte Carlo nulls in <= 60 s, peak memory <= 2 GB), measured
end to end through :func:`shufflecheck.analyses.audit_log.audit_log`: reading, validating, relating
every deck to the previous one, and the battery with Holm's method."""

from __future__ import annotations

import numpy as np
import pytest

from shufflecheck.records.logs import write_log

from ._memory import peak_rss_mb

DECKS = 1_000_000
N = 52


@pytest.fixture(scope="module")
def million(tmp_path_factory):
    """A 1,000,000-deck log of uniformly random decks (numpy permutations), with the
    usual kept columns of the invented card room."""
    path = tmp_path_factory.mktemp("audit") / "million.csv"
    rng = np.random.default_rng(1601)
    decks = rng.permuted(np.tile(np.arange(N, dtype=np.int16), (DECKS, 1)), axis=1)
    start = np.datetime64("2026-11-02T18:00:00")
    write_log(
        path,
        decks,
        columns={
            "deck": np.arange(1, DECKS + 1),
            "table": np.array(["Table 1", "Table 2", "Table 7"])[np.arange(DECKS) % 3],
            "recorded_at": (start + np.arange(DECKS) * np.timedelta64(2, "s")).astype(str),
        },
    )
    return path


def _audit(path):
    from shufflecheck.analyses.audit_log import audit_log

    # position test asymptotic: D/n is far above 5, so no Monte Carlo null runs anyway
    return audit_log(path)


def test_full_battery_one_million(benchmark, figures, million):
    result = benchmark.pedantic(_audit, args=(million,), rounds=1, iterations=1)
    assert result.tested == DECKS - 1
    assert all(t.method in ("exact", "asymptotic") for t in result.result.tests)
    size = million.stat().st_size / 1e6
    figures(
        f"audit of {DECKS:,} decks ({size:.0f} MB CSV): read + validate + battery",
        benchmark.stats.stats.mean,
        60,
    )


def test_full_battery_memory(benchmark, figures, million):
    _before, after = benchmark.pedantic(
        peak_rss_mb,
        args=(
            "from shufflecheck.analyses.audit_log import audit_log",
            f"audit_log({str(million)!r}, by='table', time='recorded_at')",
        ),
        rounds=1,
        iterations=1,
    )
    figures(f"audit of {DECKS:,} decks grouped by table with --time: peak RSS", after, 2048, "MB")
