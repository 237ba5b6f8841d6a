"""Character engine speed and memory (issue targets: S_20 <= 0.25 s, S_28 <= 5 s and
< 1 GB peak, one value at n = 100 <= 50 ms)."""

from __future__ import annotations

import pytest

from shufflecheck.core import characters, partitions

from ._memory import peak_rss_mb


def _cold_table(n):
    partitions.partitions.cache_clear()
    partitions.dimension.cache_clear()
    return characters.character_table(n)


@pytest.mark.parametrize(("n", "target"), [(20, 0.25), (28, 5.0)])
def test_whole_table(benchmark, figures, n, target):
    table = benchmark.pedantic(_cold_table, args=(n,), rounds=3, iterations=1)
    assert table.values.shape == (len(table.shapes),) * 2
    figures(f"character table of S_{n}, cold (mean of 3)", benchmark.stats.stats.mean, target)


def test_table_memory_s28(benchmark, figures):
    before, after = benchmark.pedantic(
        peak_rss_mb,
        args=(
            "from shufflecheck.core.characters import character_table",
            "t = character_table(28)",
        ),
        rounds=1,
        iterations=1,
    )
    figures("character table of S_28, peak RSS of the process", after, 1024, "MB")
    figures("character table of S_28, RSS added by the build", after - before, 1024, "MB")


# representative classes and shapes of 100 (the closed form covers equal-part tails)
CASES_100 = [
    ((30, 25, 20, 15, 10), (20, 15, 15, 10, 10, 10, 5, 5, 4, 3, 2, 1)),
    ((40, 30, 20, 10), (13, 12, 11, 10, 9, 8, 7, 6, 5, 4, 3, 2, 1, 9)),
    ((10,) * 10, (3,) * 33 + (1,)),
    ((50, 20, 10, 5, 5, 3, 3, 2, 1, 1), (5,) * 10 + (3,) * 10 + (2,) * 10),
    ((25, 25, 25, 25), (4,) * 10 + (3,) * 10 + (2,) * 10 + (1,) * 10),
    ((14, 13, 12, 11, 10, 9, 8, 7, 6, 5, 4, 1), (2,) * 20 + (1,) * 60),
    ((14, 13, 12, 11, 10, 9, 8, 7, 6, 5, 4, 1), (17, 13, 13, 11, 11, 7, 7, 5, 5, 3, 3, 2, 2, 1)),
]


@pytest.mark.parametrize("case", range(len(CASES_100)))
def test_single_value_n100(benchmark, figures, case):
    lam, mu = CASES_100[case]
    assert sum(lam) == sum(mu) == 100
    value = benchmark(characters.character, lam, mu)
    assert isinstance(value, int)
    label = "+".join(map(str, mu))
    figures(
        f"one value chi^{lam}({label[:36]}...) at n = 100 (mean)", benchmark.stats.stats.mean, 0.05
    )


def test_hard_single_value_n100_reported(benchmark, figures):
    """A known hard case (staircase-like shape, two blocks of mid-size repeated parts):
    measured and printed, not a target the engine meets; see the note in DEVELOPERS.md."""
    lam = (14, 13, 12, 11, 10, 9, 8, 7, 6, 5, 4, 1)
    mu = (3,) * 20 + (2,) * 20
    benchmark.pedantic(characters.character, args=(lam, mu), rounds=1, iterations=1)
    figures("hard case chi^(14,...,4,1)(3^20,2^20) at n = 100", benchmark.stats.stats.mean, 0.05)
