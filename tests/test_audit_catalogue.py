"""The statistic catalogue: each record's values and exact law belong together.

Every per-deck statistic is computed, through the catalogue, on all n! arrangements of a
small deck, and its histogram must equal the record's exact law times n! (brute force over
all arrangements; the laws themselves are checked against OEIS rows in test_audit_nulls).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.stats import power
from shufflecheck.stats.catalogue import (
    DeckContext,
    DeckView,
    battery_statistics,
    catalogue,
    guess_statistic,
    statistic,
)
from shufflecheck.stats.guessing import STRATEGIES
from shufflecheck.stats.summary import BatterySummary

N = 6
COLOURS = np.array([0, 0, 1, 1, 0, 1])  # invented two-colour deck of 6 cards
SUITS = np.array([0, 1, 2, 0, 1, 2])


def all_arrangements(n: int) -> np.ndarray:
    return np.array(list(itertools.permutations(range(n))), dtype=np.int16)


def brute_histogram(values: np.ndarray) -> dict[int, int]:
    keys, counts = np.unique(values, return_counts=True)
    return {int(k): int(c) for k, c in zip(keys, counts, strict=True)}


def law_histogram(law, scale: int) -> dict[int, int]:
    out = {}
    for k, c in enumerate(law.counts):
        value = law.offset + k
        count = c * scale // law.total
        assert c * scale % law.total == 0
        if count:
            out[value] = count
    return out


class TestEveryRecord:
    @pytest.fixture(scope="class")
    @classmethod
    def context(cls) -> DeckContext:
        return DeckContext.checked(N, suits=SUITS, colours=COLOURS, strategies=tuple(STRATEGIES))

    def test_names_are_unique_and_found(self, context):
        names = [s.name for s in battery_statistics(context)]
        assert len(names) == len(set(names))
        for name in names:
            assert statistic(name, tuple(STRATEGIES)).name == name

    def test_unknown_name(self):
        with pytest.raises(InputError, match="unknown statistic 'runs'"):
            statistic("runs")

    @pytest.mark.parametrize(
        "name",
        [
            s.name
            for s in catalogue(tuple(STRATEGIES))
            if s.shape == "per-deck" and s.need in (None, "colours", "suits")
        ],
    )
    def test_per_deck_law_is_the_law_of_its_values(self, context, name):
        # brute force over all 6! = 720 arrangements of the deck
        stat = statistic(name, tuple(STRATEGIES))
        decks = all_arrangements(N)
        values = stat.values(DeckView(decks, decks, context))
        assert values.shape == (math.factorial(N),)
        assert brute_histogram(values) == law_histogram(stat.law(context), math.factorial(N))

    def test_consecutive_law_is_the_law_of_its_values(self, context):
        # brute force over all ordered pairs of arrangements of 4 cards (24 x 24)
        stat = statistic("repeat-positions")
        small = DeckContext.checked(4)
        decks = all_arrangements(4)
        pairs = np.array([np.stack([a, b]) for a in decks for b in decks])
        values = np.concatenate(
            [stat.values(DeckView(p, p, small)) for p in pairs]  # one pair per view
        )
        assert brute_histogram(values) == law_histogram(stat.law(small), 24 * 24)

    def test_runs_need_their_categories(self):
        plain = DeckContext.checked(N)
        names = {s.name for s in battery_statistics(plain)}
        assert "colour-runs" not in names and "suit-runs" not in names
        assert "rising-sequences" in names


class TestReaders:
    def test_summary_runs_the_catalogue(self):
        summary = BatterySummary.empty(N, colours=COLOURS)
        assert [s.name for s in summary.statistics] == [
            s.name for s in battery_statistics(DeckContext.checked(N, colours=COLOURS))
        ]
        assert set(summary.laws) == {s.name for s in summary.statistics if s.law is not None}

    def test_power_plans_every_statistic(self):
        rng = np.random.default_rng(7)

        def sample(count, generator):
            return np.argsort(generator.random((count, N)), axis=1)

        plan = power.plan_decks(sample, N, simulate=200, rng=rng)
        context = DeckContext.checked(N)
        assert [r.test for r in plan.rows] == [s.name for s in battery_statistics(context)]

    def test_guess_records_name_their_strategy(self):
        for name in STRATEGIES:
            stat = guess_statistic(name)
            assert stat.strategy == name and stat.name == f"guess-{name}"
            assert stat.alternative == "greater" and stat.lower_bound
