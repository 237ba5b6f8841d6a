"""Sequential ranks (issue 9, section 2): under a uniform deck the ranks are independent
and uniform (brute force: the map deck -> (position of card 0, ranks) is a bijection onto
all rank sequences), a cut changes none, the short-rise law is exact, and the fitted
score's uniform tail is an upper bound on the brute-force tail."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from shufflecheck.models.procedures import parse_procedure
from shufflecheck.stats import ranks
from shufflecheck.stats.statistics import card_positions, cyclic_rising_sequences, rising_only


def all_arrangements(n: int) -> np.ndarray:
    return np.array(list(itertools.permutations(range(n))), dtype=np.int16)


class TestRanks:
    @pytest.mark.parametrize("n", [2, 3, 4, 5, 6, 7])
    def test_bijection_onto_rank_sequences(self, n):
        decks = all_arrangements(n)
        r = ranks.inverse_ranks(decks)
        free = n - 1 - np.arange(n - 1)
        assert ((r >= 1) & (r <= free)).all()
        first = card_positions(decks)[:, 0]
        keys = {(int(w), *row) for w, row in zip(first, r.tolist(), strict=True)}
        # n positions of card 0 times (n-1)! rank sequences: every one exactly once
        assert len(keys) == math.factorial(n)

    @pytest.mark.parametrize("n", [5, 40, 64, 65, 130])
    def test_against_direct_count(self, n):
        # the rank counted directly: free positions met going down from card v
        rng = np.random.default_rng(n)
        decks = np.argsort(rng.random((30, n)), axis=1)
        got = ranks.inverse_ranks(decks)
        where = card_positions(decks)
        for d in range(30):
            for v in range(n - 1):
                free = {int(where[d, u]) for u in range(v + 1, n)}
                step, count = int(where[d, v]), 0
                while True:
                    step = (step + 1) % n
                    count += step in free
                    if step == where[d, v + 1]:
                        break
                assert got[d, v] == count

    @pytest.mark.parametrize("n", [5, 52, 100])
    def test_a_cut_changes_no_rank(self, n):
        decks = parse_procedure("riffle x3").sample(200, n, 1, rng=3)
        rotated = np.roll(decks, -7, axis=1)
        assert (ranks.inverse_ranks(decks) == ranks.inverse_ranks(rotated)).all()
        # and the cyclic rising sequences are the least rising sequences over the cuts
        every = np.array([rising_only(np.roll(decks, -c, axis=1)) for c in range(n)])
        assert (every.min(axis=0) == cyclic_rising_sequences(decks)).all()


class TestShortRises:
    @pytest.mark.parametrize("n", [3, 5, 7])
    @pytest.mark.parametrize("width", [1, 2, 4, 16])
    def test_law_by_brute_force(self, n, width):
        decks = all_arrangements(n)
        values = ranks.short_rises(ranks.inverse_ranks(decks), width)
        law = ranks.short_rises_law(n, width)
        scale = math.factorial(n) // math.factorial(n - 1)
        counts = np.bincount(values - law.offset, minlength=len(law.counts))
        assert tuple(int(c) for c in counts) == tuple(c * scale for c in law.counts)

    def test_windows(self):
        # width 4 on 52 cards: about 4 positions of the 51 free at first, at least one
        windows = ranks.short_rise_windows(52, 4)
        assert windows[0] == 4 and windows[-1] == 1 and len(windows) == 51

    def test_riffles_make_short_rises(self):
        decks = parse_procedure("riffle x4, strip, cut").sample(2000, 52, 1, rng=5)
        law = ranks.short_rises_law(52, 4)
        observed = ranks.short_rises(ranks.inverse_ranks(decks), 4).mean()
        assert observed > float(law.mean) + 3


class TestFittedScore:
    def test_uniform_tail_is_an_upper_bound(self):
        # fit on riffled decks of 7 cards, then compare with the exact law of the score
        # over all 7! arrangements (brute force)
        n = 7
        fit_decks = parse_procedure("riffle x2, cut").sample(4000, n, 1, rng=1)
        score = ranks.fit_rank_score(ranks.rank_bin_counts(ranks.inverse_ranks(fit_decks)), n)
        assert score is not None
        every = score.scores(ranks.inverse_ranks(all_arrangements(n)))
        for threshold in range(int(every.min()), int(every.max()) + 2):
            brute = float((every >= threshold).mean())
            bound = (
                score.uniform_tail[threshold - score.offset]
                if (0 <= threshold - score.offset < score.uniform_tail.size)
                else 0.0
            )
            assert brute == pytest.approx(bound, abs=1e-12)
        assert score.uniform_probability() >= float((every >= score.threshold).mean())

    def test_detects_what_it_was_fitted_on(self):
        n = 52
        procedure = parse_procedure("riffle x4, strip, cut")
        fit = ranks.inverse_ranks(procedure.sample(5000, n, 1, rng=2))
        score = ranks.fit_rank_score(ranks.rank_bin_counts(fit), n)
        test = ranks.inverse_ranks(procedure.sample(5000, n, 1, rng=3))
        hits = float((score.scores(test) >= score.threshold).mean())
        assert hits - score.uniform_probability() > 0.5
