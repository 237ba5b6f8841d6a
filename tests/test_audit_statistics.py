"""Per-deck statistics: against direct definitions, the two code paths against each other,
and (hypothesis) every value inside its exact law's support."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.stats import nulls, statistics
from shufflecheck.stats.catalogue import deck_values
from tests import _brute


def _definitions(p: list[int]) -> dict[str, int]:
    n = len(p)
    where = {card: i for i, card in enumerate(p)}
    return {
        "rising": 1 + sum(where[c + 1] < where[c] for c in range(n - 1)),
        "descents": sum(p[i] > p[i + 1] for i in range(n - 1)),
        "fixed": sum(p[i] == i for i in range(n)),
        "cycles": _brute.cycle_count(p),
        "inversions": sum(p[i] > p[j] for i in range(n) for j in range(i + 1, n)),
        "successions": sum(p[i + 1] == p[i] + 1 for i in range(n - 1)),
        "adjacent": sum(abs(p[i + 1] - p[i]) == 1 for i in range(n - 1)),
        "top": where[0],
        "bottom": where[n - 1],
    }


def _vectorized(decks: np.ndarray) -> dict[str, np.ndarray]:
    inv, rise = statistics.order_statistics(decks)
    return {
        "rising": rise,
        "descents": statistics.descents(decks),
        "fixed": statistics.fixed_points(decks),
        "cycles": statistics.cycles(decks),
        "inversions": inv,
        "successions": statistics.successions(decks),
        "adjacent": statistics.adjacent_pairs(decks),
        "top": statistics.card_position(decks, 0),
        "bottom": statistics.card_position(decks, decks.shape[1] - 1),
    }


class TestAgainstDefinitions:
    @pytest.mark.parametrize("n", [1, 2, 5, 6])
    def test_all_arrangements(self, n):
        decks = np.array(list(itertools.permutations(range(n))), dtype=np.int16)
        got = _vectorized(decks)
        for row, p in enumerate(decks.tolist()):
            expect = _definitions(p)
            assert {k: int(v[row]) for k, v in got.items()} == expect

    @pytest.mark.parametrize("n", [52, 63, 64, 80])
    def test_random_decks_both_paths(self, n):
        rng = np.random.default_rng(n)
        decks = rng.permuted(np.tile(np.arange(n, dtype=np.int16), (300, 1)), axis=1)
        got = _vectorized(decks)
        for row in range(0, 300, 37):
            expect = _definitions(decks[row].tolist())
            assert {k: int(v[row]) for k, v in got.items()} == expect
        inv_a, rise_a = statistics.order_statistics(decks)
        inv_b, rise_b = statistics.order_statistics(decks, force_generic=True)
        np.testing.assert_array_equal(inv_a, inv_b)
        np.testing.assert_array_equal(rise_a, rise_b)
        np.testing.assert_array_equal(
            statistics.cycles(decks), statistics.cycles(decks, force_generic=True)
        )

    def test_unsigned_and_wide_dtypes(self):
        rng = np.random.default_rng(1)
        decks = rng.permuted(np.tile(np.arange(20), (50, 1)), axis=1)
        for dtype in (np.uint8, np.uint16, np.int32, np.int64):
            got = _vectorized(decks.astype(dtype))
            ref = _vectorized(decks.astype(np.int16))
            for k in got:
                np.testing.assert_array_equal(got[k], ref[k])

    def test_identity_and_reversal(self):
        n = 52
        identity = np.arange(n)[None, :]
        reverse = identity[:, ::-1].copy()
        v = _vectorized(identity)
        assert (v["rising"][0], v["inversions"][0], v["successions"][0]) == (1, 0, n - 1)
        assert v["cycles"][0] == n and v["fixed"][0] == n
        r = _vectorized(reverse)
        assert (r["rising"][0], r["inversions"][0], r["descents"][0]) == (
            n,
            n * (n - 1) // 2,
            n - 1,
        )
        assert r["adjacent"][0] == n - 1 and r["successions"][0] == 0


class TestRunsAndRepeats:
    def test_runs(self):
        suits = np.array([0, 0, 1, 1, -1, 2])  # card 4 is a joker: a category of its own
        decks = np.array([[0, 1, 2, 3, 4, 5], [0, 2, 1, 3, 5, 4], [4, 0, 1, 5, 2, 3]])
        assert statistics.runs(decks, suits).tolist() == [4, 6, 4]

    def test_repeat_positions(self):
        decks = np.array([[0, 1, 2, 3], [0, 2, 1, 3], [3, 2, 1, 0], [3, 2, 1, 0]])
        assert statistics.repeat_positions(decks).tolist() == [2, 2, 4]
        assert statistics.repeat_positions(decks[:1]).size == 0

    def test_category_codes_errors(self):
        with pytest.raises(InputError, match="expected 4 integer codes"):
            statistics.category_codes([0, 1, 2], 4, name="suits")


class TestValidation:
    def test_not_an_arrangement(self):
        decks = np.array([[0, 1, 2], [0, 0, 2], [2, 1, 0]])
        with pytest.raises(InputError, match="row 2 is not an arrangement"):
            statistics.as_decks(decks, name="relative decks")
        with pytest.raises(InputError, match="row 1 is not an arrangement"):
            statistics.as_decks(np.array([[0, 1, 3]]))
        wide = np.tile(np.arange(70), (3, 1))
        wide[2, 5] = 6
        with pytest.raises(InputError, match="row 3"):
            statistics.as_decks(wide)

    def test_shape_and_dtype(self):
        with pytest.raises(InputError, match="2-D"):
            statistics.as_decks(np.arange(5))
        with pytest.raises(InputError, match="integer"):
            statistics.as_decks(np.zeros((2, 3)))
        with pytest.raises(InputError, match="expected 52 cards"):
            statistics.as_decks(np.tile(np.arange(5), (2, 1)), cards=52)
        with pytest.raises(InputError, match="card label"):
            statistics.card_position(np.tile(np.arange(5), (2, 1)), 7)


LAWS = {
    "rising-sequences": nulls.rising_law,
    "descents": nulls.descents_law,
    "fixed-points": nulls.fixed_points_law,
    "cycles": nulls.cycles_law,
    "inversions": nulls.inversions_law,
    "successions": nulls.successions_law,
    "adjacent-pairs": nulls.adjacent_pairs_law,
    "top-card-position": nulls.card_position_law,
    "bottom-card-position": nulls.card_position_law,
    "guess-next-card": nulls.guessing_law,
    "guess-longest-run": nulls.guessing_law,
    "guess-strip": nulls.guessing_law,
    "guess-lowest-unseen": nulls.guessing_law,
}


@st.composite
def _batches(draw):
    n = draw(st.integers(2, 70))
    rows = draw(st.lists(st.permutations(list(range(n))), min_size=1, max_size=6))
    return np.array(rows, dtype=np.int16)


@settings(max_examples=60, deadline=None)
@given(_batches())
def test_values_inside_law_supports(decks):
    n = decks.shape[1]
    suits = np.arange(n) % 4
    colours = np.arange(n) % 2
    values = deck_values(decks, suits=suits, colours=colours)
    for name, law_fn in LAWS.items():
        law = law_fn(n)
        assert values[name].min() >= law.low and values[name].max() <= law.high, name
        assert all(law.probability(int(v)) > 0 for v in values[name]), name
    for name, cats in (("suit-runs", suits), ("colour-runs", colours)):
        law = nulls.runs_law(np.bincount(cats))
        assert all(law.probability(int(v)) > 0 for v in values[name]), name
