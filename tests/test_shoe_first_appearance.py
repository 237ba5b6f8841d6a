"""First appearances in shoes: the sorted fast path equals the definition (brute force:
the first index of every kind, read row by row in Python)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.stats.shoe_statistics import first_appearance_ranks


def _brute(rows: np.ndarray, kinds: int) -> np.ndarray:
    out = []
    for row in rows.tolist():
        first = [row.index(k) if k in row else len(row) for k in range(kinds)]
        # ranks of the first appearances, ties (absent kinds) broken by kind
        order = sorted(range(kinds), key=lambda k: (first[k], k))
        rank = [0] * kinds
        for r, k in enumerate(order):
            rank[k] = r
        out.append(rank)
    return np.array(out, dtype=np.int64).reshape(len(out), kinds)


@settings(max_examples=60, deadline=None)
@given(
    copies=st.lists(st.integers(1, 4), min_size=1, max_size=6),
    shoes=st.integers(1, 8),
    seed=st.integers(0, 2**32 - 1),
)
def test_one_multiset_matches_the_definition(copies, shoes, seed):
    rng = np.random.default_rng(seed)
    base = np.repeat(np.arange(len(copies)), copies)
    rows = np.array([rng.permutation(base) for _ in range(shoes)], dtype=np.int16)
    assert np.array_equal(first_appearance_ranks(rows, len(copies)), _brute(rows, len(copies)))


@settings(max_examples=60, deadline=None)
@given(rows=st.lists(st.lists(st.integers(0, 3), min_size=5, max_size=5), min_size=1, max_size=6))
def test_rows_of_different_multisets_match_the_definition(rows):
    array = np.array(rows, dtype=np.int16)
    assert np.array_equal(first_appearance_ranks(array, 4), _brute(array, 4))
