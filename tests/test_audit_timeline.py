"""The "since when" change-point scan on series with a known change."""

from __future__ import annotations

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.stats.timeline import change_point, describe


def test_finds_a_planted_shift():
    rng = np.random.default_rng(1)
    hits = []
    for _ in range(50):
        x = np.concatenate([rng.normal(0, 1, 400), rng.normal(0.6, 1, 200)])
        hits.append(change_point(x, 0.0, 1.0, +1).start)
    # statistical tolerance: the median estimate is within 15 decks of the true start 400
    assert abs(np.median(hits) - 400) <= 15


def test_direction_and_whole_series():
    rng = np.random.default_rng(2)
    x = rng.normal(-1.0, 1.0, 300)
    point = change_point(x, 0.0, 1.0, -1)
    assert point.start < 20 and point.mean_after < -0.8
    if point.start == 0:
        assert "from the first deck" in describe(point, 300, "x", 0.0)
    whole = change_point(np.full(50, 3.0), 0.0, 1.0, +1)
    assert whole.start == 0 and whole.mean_before is None
    assert "from the first deck" in describe(whole, 50, "x", 0.0)


def test_text():
    x = np.array([0.0] * 10 + [5.0] * 10)
    point = change_point(x, 0.0, 1.0, +1)
    assert point.start == 10 and point.mean_before == 0.0 and point.mean_after == 5.0
    text = describe(point, 20, "correct guesses", 0.0)
    assert "deck 11 of 20" in text and "estimate" in text


def test_errors():
    with pytest.raises(InputError, match="non-empty"):
        change_point(np.array([]), 0.0, 1.0, 1)
    with pytest.raises(InputError, match="direction"):
        change_point(np.ones(3), 0.0, 1.0, 0)
    with pytest.raises(InputError, match="variance"):
        change_point(np.ones(3), 0.0, 0.0, 1)
