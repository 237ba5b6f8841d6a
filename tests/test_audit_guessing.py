"""The guessing game: exact law for every strategy (brute force), strategies on the decks
they are made for, both code paths, and guesses always naming unseen cards."""

from __future__ import annotations

import itertools
import math
from collections import Counter
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from shufflecheck.common.errors import InputError
from shufflecheck.core.counting import harmonic
from shufflecheck.models import riffle
from shufflecheck.stats import guessing
from shufflecheck.stats.guessing import STRATEGIES, _play


class TestExactLaw:
    @pytest.mark.parametrize("strategy", sorted(STRATEGIES))
    @pytest.mark.parametrize("n", range(1, 8))
    def test_brute_force_every_strategy(self, strategy, n):
        # brute force over all n! arrangements: correct guesses have the law c(n, k) / n!
        decks = np.array(list(itertools.permutations(range(n))), dtype=np.int16)
        counts = Counter(guessing.guess_scores(decks, strategy).tolist())
        law = guessing.guessing_null(n)
        assert {law.offset + k: c for k, c in enumerate(law.counts)} == dict(counts)
        assert law.total == math.factorial(n)

    def test_moments(self):
        # H_52 from OEIS A001008 / A002805 via shufflecheck.core.counting.harmonic (tested there)
        assert guessing.guessing_mean(52) == harmonic(52)
        assert float(guessing.guessing_mean(52)) == pytest.approx(4.5380, abs=1e-4)
        law = guessing.guessing_null(52)
        assert law.mean == harmonic(52)
        assert law.variance == guessing.guessing_variance(52)
        # scipy.stats.poisson_binom variance with p_j = 1/j
        ref = stats.poisson_binom.var([1 / j for j in range(1, 53)])
        assert float(guessing.guessing_variance(52)) == pytest.approx(ref, rel=1e-12)

    def test_monte_carlo_mean_on_uniform_decks(self):
        rng = np.random.default_rng(11)
        decks = rng.permuted(np.tile(np.arange(52, dtype=np.int16), (20000, 1)), axis=1)
        sd = math.sqrt(float(guessing.guessing_variance(52)))
        for name, scores in guessing.guess_scores_many(decks, STRATEGIES).items():
            # within 4.5 standard errors of H_52 (statistical tolerance)
            assert abs(scores.mean() - float(harmonic(52))) < 4.5 * sd / math.sqrt(20000), name


class TestStrategiesOnTheirProcedures:
    def test_unshuffled(self):
        deck = np.arange(52)[None, :]
        for name in ("next-card", "longest-run", "lowest-unseen"):
            assert guessing.guess_scores(deck, name)[0] == 52, name
        assert guessing.guess_scores(deck, "strip")[0] == 51  # first guess: bottom card

    @pytest.mark.parametrize("cut", [1, 17, 26, 51])
    def test_cut(self, cut):
        deck = np.roll(np.arange(52), -cut)[None, :]
        # only the first card is unknown after a cut: n - 1 right
        assert guessing.guess_scores(deck, "next-card")[0] == 51

    @pytest.mark.parametrize("packet", [2, 4, 13])
    def test_strip_equal_packets(self, packet):
        blocks = [list(range(s, s + packet)) for s in range(0, 52, packet)]
        deck = np.array([c for block in reversed(blocks) for c in block])[None, :]
        assert guessing.guess_scores(deck, "strip")[0] == 51  # all but the first card
        assert guessing.guess_scores(deck, "next-card")[0] < 51

    def test_reversal(self):
        deck = np.arange(52)[::-1][None, :]
        assert guessing.guess_scores(deck, "strip")[0] == 52

    def test_riffles_give_an_advantage(self):
        rng = np.random.default_rng(3)
        decks = riffle.sample(4000, 52, 4, rng=rng)
        scores = guessing.guess_scores_many(decks, STRATEGIES)
        h = float(harmonic(52))
        assert scores["longest-run"].mean() > h + 3
        assert scores["next-card"].mean() > h + 2
        # the longest unseen block is the better guess after many packets
        assert scores["longest-run"].mean() > scores["next-card"].mean()


class TestPaths:
    @pytest.mark.parametrize("n", [2, 5, 30, 52, 63, 64])
    def test_bitmask_and_generic_agree(self, n):
        # the bit tricks against the boolean-array path, up to 64 cards; sorted and
        # reversed decks reach the ends of the runs
        rng = np.random.default_rng(n)
        decks = np.concatenate(
            [
                rng.permuted(np.tile(np.arange(n), (200, 1)), axis=1),
                riffle.sample(200, n, 2, rng=rng).astype(np.int64),
                np.tile(np.arange(n), (3, 1)),
                np.tile(np.arange(n)[::-1], (3, 1)),
            ]
        )
        names = tuple(STRATEGIES)
        fast_scores, fast_picks = _play(decks, names, record=True)
        slow_scores, slow_picks = _play(decks, names, record=True, force_generic=True)
        for name in names:
            np.testing.assert_array_equal(fast_picks[name], slow_picks[name])
            np.testing.assert_array_equal(fast_scores[name], slow_scores[name])

    @pytest.mark.parametrize("n", [2, 3, 7, 40, 64, 100, 130])
    def test_linear_and_generic_agree(self, n):
        # the linear-time path (blocks of seen and unseen cards) names the same cards as
        # the straightforward generic path, on uniform, riffled and stripped-and-cut decks
        from shufflecheck.models.procedures import parse_procedure
        from shufflecheck.stats.guessing import _play_blocks

        rng = np.random.default_rng(100 + n)
        decks = np.concatenate(
            [
                rng.permuted(np.tile(np.arange(n), (150, 1)), axis=1),
                riffle.sample(150, n, 2, rng=rng).astype(np.int64),
                parse_procedure("riffle x3, strip(packets=2), cut").sample(150, n, 1, rng=rng),
            ]
        ).astype(np.int64)
        names = tuple(STRATEGIES)
        slow_scores, slow_picks = _play(decks, names, record=True, force_generic=True)
        found = _play_blocks(np.ascontiguousarray(decks.T), names, True)
        for name in names:
            np.testing.assert_array_equal(found[name][1].T, slow_picks[name])
            np.testing.assert_array_equal(found[name][0], slow_scores[name])
        if n > 63:  # the default path for large decks is the linear one
            fast_scores, _ = _play(decks, names, record=False)
            for name in names:
                np.testing.assert_array_equal(fast_scores[name], slow_scores[name])

    def test_large_deck_generic_path(self):
        rng = np.random.default_rng(8)
        decks = riffle.sample(50, 104, 3, rng=rng)
        scores = guessing.guess_scores(decks, "longest-run")
        assert scores.mean() > float(harmonic(104)) + 2


@st.composite
def _decks(draw):
    n = draw(st.integers(1, 70))
    rows = draw(st.lists(st.permutations(list(range(n))), min_size=1, max_size=4))
    return np.array(rows, dtype=np.int16)


@settings(max_examples=60, deadline=None)
@given(_decks(), st.sampled_from(sorted(STRATEGIES)))
def test_guesses_name_unseen_cards(decks, strategy):
    picks = guessing.guesses(decks, strategy)
    n = decks.shape[1]
    for row, guess_row in zip(decks, picks, strict=True):
        seen = set()
        for card, guess in zip(row.tolist(), guess_row.tolist(), strict=True):
            assert 0 <= guess < n and guess not in seen
            seen.add(card)
    assert (guessing.guess_scores(decks, strategy) == (picks == decks).sum(axis=1)).all()


def test_unknown_strategy():
    with pytest.raises(InputError, match="unknown guessing strategy 'psychic'"):
        guessing.guess_scores(np.arange(5)[None, :], "psychic")


def test_null_is_exact_fractions():
    law = guessing.guessing_null(4)
    # c(4, k): 6, 11, 6, 1 for k = 1..4 (OEIS A132393 row 4)
    assert law.counts == (6, 11, 6, 1) and law.offset == 1
    assert law.probability(2) == Fraction(11, 24)


# -- the scores against the strategies played one deck at a time --------------------------


def _row_by_row(deck: list[int], strategy: str) -> int:
    """Correct guesses of ``strategy`` on one deck, played card by card straight from the
    definitions in shufflecheck.stats.guessing (sets and lists, no bit tricks)."""
    n = len(deck)
    seen: set[int] = set()
    score = 0
    last = packet_start = packet_len = -1
    for i, card in enumerate(deck):
        unseen = [c for c in range(n) if c not in seen]
        blocks = []  # (start, length) of the maximal blocks of consecutive unseen labels
        for c in unseen:
            if blocks and blocks[-1][0] + blocks[-1][1] == c:
                blocks[-1] = (blocks[-1][0], blocks[-1][1] + 1)
            else:
                blocks.append((c, 1))
        longest = max(blocks, key=lambda b: (b[1], -b[0]))[0]  # lowest start on ties
        if strategy == "lowest-unseen":
            guess = unseen[0]
        elif strategy == "longest-run":
            guess = longest
        elif strategy == "next-card":
            follower = (last + 1) % n
            guess = follower if i > 0 and follower not in seen else longest
        elif i == 0:  # strip: the first guess is the reference bottom card
            guess = n - 1
        elif last + 1 < n and last + 1 not in seen:  # the packet goes on
            guess = last + 1
        elif packet_start - packet_len >= 0 and packet_start - packet_len not in seen:
            guess = packet_start - packet_len  # one packet-length above it
        else:
            above = [c for c in unseen if c < packet_start]
            guess = above[-1] if above else unseen[0]
        score += guess == card
        if i > 0 and card == last + 1:
            packet_len += 1
        else:
            packet_start, packet_len = card, 1
        seen.add(card)
        last = card
    return score


def _check_scores(decks: np.ndarray) -> None:
    found = guessing.guess_scores_many(decks, tuple(STRATEGIES))
    for name in STRATEGIES:
        expected = [_row_by_row(row, name) for row in decks.tolist()]
        assert found[name].tolist() == expected, name


@settings(max_examples=80, deadline=None)
@given(_decks())
def test_scores_match_row_by_row_play(decks):
    # random arrangements of 1..70 cards: the 64-bit scoring path (up to 63) and the
    # block path (64 and more) against the definitions played one card at a time
    _check_scores(decks)


@pytest.mark.parametrize("n", [2, 3, 13, 52, 62, 63])
def test_scores_match_row_by_row_on_shuffled_decks(n):
    # the decks each strategy is made for, and the ends of the 64-bit masks
    from shufflecheck.models.procedures import parse_procedure

    rng = np.random.default_rng(500 + n)
    decks = np.concatenate(
        [
            rng.permuted(np.tile(np.arange(n), (60, 1)), axis=1),
            riffle.sample(60, n, 2, rng=rng).astype(np.int64),
            parse_procedure("riffle x3, strip(packets=2), cut").sample(60, n, 1, rng=rng),
            parse_procedure("strip(packets=2), cut").sample(60, n, 1, rng=rng),
            np.arange(n)[None, :],
            np.arange(n)[None, ::-1],
        ]
    ).astype(np.int16)
    _check_scores(decks)
