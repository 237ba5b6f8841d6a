"""Reading one riffle off a relative arrangement, and its exact probability.

Checks against the outside world: brute force over all n! arrangements (the physical
mechanics of the hand riffle enumerated independently in tests/test_models_steps.py);
Bayer & Diaconis (1992), Thm. 1 (a riffle of the ideal kind gives an arrangement with r
rising sequences with probability C(n + 2 - r, n) / 2^n); OEIS A000295 (Eulerian numbers
2^n - n - 1: arrangements with exactly two rising sequences); the inclusion-exclusion
count of runs in stats/nulls.py (an independent algorithm) and brute force over drop words
for the runs of two kinds (Wald & Wolfowitz 1940).
"""

from __future__ import annotations

import itertools
import math
from collections import Counter
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.models import hand_riffle
from shufflecheck.models.riffle_likelihood import (
    NOT_ONE_RIFFLE,
    UNCHANGED,
    RiffleCounts,
    changed_cut_counts,
    cut_log_law,
    decode_riffles,
    log_likelihood,
    packet_count_row,
    packet_length_totals,
    riffle_log_probabilities,
    tally_riffles,
    unchanged_log_probability,
)
from shufflecheck.stats.nulls import runs_row
from tests._fit import chisquare_p
from tests.test_models_steps import hand_riffle_mechanics


def _all(n: int) -> np.ndarray:
    return np.array(list(itertools.permutations(range(n))), dtype=np.int16)


def _interleave(cut: int, right: tuple[bool, ...]) -> tuple[int, ...]:
    """The arrangement whose positions marked right hold c..n-1 in order, the rest 0..c-1."""
    top, bottom = iter(range(cut)), iter(range(cut, len(right)))
    return tuple(next(bottom) if r else next(top) for r in right)


def _runs(word) -> list[int]:
    return [len(list(g)) for _, g in itertools.groupby(word)]


class TestDecode:
    @pytest.mark.parametrize("n", [2, 3, 5, 7])
    def test_every_arrangement_brute_force(self, n):
        perms = _all(n)
        decoded = decode_riffles(perms)
        for p, rising, cut, right in zip(
            perms.tolist(), decoded.rising, decoded.cuts, decoded.right, strict=True
        ):
            where = {v: i for i, v in enumerate(p)}
            starts = sum(where[v + 1] < where[v] for v in range(n - 1))
            assert rising == 1 + starts  # definition of rising sequences
            if rising == 1:
                assert cut == UNCHANGED and p == list(range(n))
            elif rising == 2:
                assert _interleave(int(cut), tuple(right.tolist())) == tuple(p)
            else:
                assert cut == NOT_ONE_RIFFLE and not right.any()

    @pytest.mark.parametrize("n", [3, 6, 8])
    def test_two_rising_sequences_count(self, n):
        # OEIS A000295: 2^n - n - 1 arrangements have exactly two rising sequences
        decoded = decode_riffles(_all(n))
        assert int((decoded.rising == 2).sum()) == 2**n - n - 1
        assert int(decoded.one_riffle.sum()) == 2**n - n

    @settings(max_examples=60, deadline=None)
    @given(st.integers(3, 60).flatmap(lambda n: st.lists(st.booleans(), min_size=n, max_size=n)))
    def test_interleavings_read_back(self, word):
        # property: any interleaving of two packets is read back to its own cut and word
        n = len(word)
        cut = n - sum(word)
        row = np.array([_interleave(cut, tuple(word))], dtype=np.int16)
        decoded = decode_riffles(row)
        if row[0].tolist() == list(range(n)):
            assert decoded.cuts[0] == UNCHANGED
        else:
            assert decoded.cuts[0] == cut
            assert decoded.right[0].tolist() == list(word)

    def test_refuses_bad_input(self):
        with pytest.raises(InputError, match="2-D integer array"):
            decode_riffles(np.zeros(5, dtype=np.int16))


class TestLikelihoodAgainstMechanics:
    @pytest.mark.parametrize(
        ("n", "spread", "clump"),
        [
            (5, None, 1.0),
            (6, 1.3, 2.5),
            (5, 0.8, 0.4),
            (6, None, 0.0),
            (4, 0.0, 3.0),
            (7, 2.0, 1.7),
            (5, 0.0, 0.0),
        ],
    )
    def test_brute_force_law(self, n, spread, clump):
        # every cut and every drop sequence of the physical hand riffle, with its
        # probability (tests/test_models_steps.py), against the likelihood of each arrangement
        law = hand_riffle_mechanics(n, hand_riffle.cut_law(n, spread), Fraction(clump))
        perms = _all(n)
        got = np.exp(riffle_log_probabilities(perms, spread, clump))
        want = np.array([float(law.get(tuple(p), 0)) for p in perms.tolist()])
        # tolerance: the sampler's cut weights are the curve rounded at 2^-40 of the largest
        np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-12)
        assert got.sum() == pytest.approx(1.0, abs=1e-12)

    @pytest.mark.parametrize("n", [3, 6, 10, 52])
    def test_ideal_riffle_bayer_diaconis(self, n):
        # Bayer & Diaconis (1992), Thm. 1 with a = 2: C(n + 2 - r, n) / 2^n
        rng = np.random.default_rng(4)
        rows = hand_riffle.sample(200, n, rng=rng)
        logs = riffle_log_probabilities(rows)
        rising = decode_riffles(rows).rising
        expected = np.array([math.log(math.comb(n + 2 - r, n)) - n * math.log(2) for r in rising])
        np.testing.assert_allclose(logs, expected, rtol=1e-12)
        assert unchanged_log_probability(n, None, 1.0) == pytest.approx(
            math.log(n + 1) - n * math.log(2), rel=1e-12
        )

    @pytest.mark.parametrize(("spread", "clump"), [(2.5, 1.6), (None, 0.7), (0.0, 3.0)])
    def test_tallies_equal_row_sums(self, spread, clump):
        rows = hand_riffle.sample(500, 20, rng=8, spread=spread, clump=clump)
        counts = tally_riffles(decode_riffles(rows))[0]
        direct = float(riffle_log_probabilities(rows, spread, clump).sum())
        assert log_likelihood(counts, spread, clump) == pytest.approx(direct, rel=1e-12)

    def test_not_one_riffle_has_probability_zero(self):
        row = np.array([[1, 0, 3, 2, 4]], dtype=np.int16)  # three rising sequences
        assert riffle_log_probabilities(row, 1.0, 2.0)[0] == -math.inf

    def test_cut_curve_is_the_samplers(self):
        # the unrounded curve against the sampler's integer weights (hand_riffle.cut_law)
        for n, spread in [(52, 2.5), (52, 0.7), (13, 4.0)]:
            law = hand_riffle.cut_law(n, spread)
            probs = np.exp(cut_log_law(n, spread))
            for c, p in law.items():
                if p > Fraction(1, 2**30):
                    assert probs[c] == pytest.approx(float(p), rel=1e-9)


class TestTallies:
    def test_merge_and_groups(self):
        rows = hand_riffle.sample(600, 12, rng=3, spread=1.5, clump=2.0)
        decoded = decode_riffles(rows)
        whole = tally_riffles(decoded)[0]
        groups = np.arange(600) % 3
        parts = tally_riffles(decoded, groups, 3)
        merged = parts[0] + parts[1] + parts[2]
        for name in ("cuts", "first_right", "visits", "repeats", "packet_lengths"):
            np.testing.assert_array_equal(getattr(merged, name), getattr(whole, name))
        assert merged.packets == whole.packets and merged.unchanged == whole.unchanged
        assert merged.packets_squared == whole.packets_squared
        alone = tally_riffles(decode_riffles(rows[groups == 1]))[0]
        np.testing.assert_array_equal(alone.visits, parts[1].visits)

    def test_packets_by_hand(self):
        rows = hand_riffle.sample(300, 9, rng=5, clump=1.8)
        decoded = decode_riffles(rows)
        counts = tally_riffles(decoded)[0]
        lengths: Counter[int] = Counter()
        packets = 0
        for d in np.flatnonzero(decoded.rising == 2):
            runs = _runs(decoded.right[d].tolist())
            lengths.update(runs)
            packets += len(runs)
        assert counts.packets == packets
        assert {k: int(v) for k, v in enumerate(counts.packet_lengths) if v} == dict(lengths)

    def test_refuses_mismatched_sizes(self):
        with pytest.raises(InputError, match="same deck size"):
            RiffleCounts.empty(5) + RiffleCounts.empty(6)


class TestIdealLawsOfWhatIsReadOff:
    @pytest.mark.parametrize("n", [2, 5, 9])
    def test_changed_cuts(self, n):
        counts = changed_cut_counts(n)
        assert sum(counts) == 2**n - n - 1  # OEIS A000295
        decoded = decode_riffles(_all(n))
        seen = Counter(decoded.cuts[decoded.rising == 2].tolist())
        assert [seen.get(c, 0) for c in range(n + 1)] == list(counts)  # brute force

    @pytest.mark.parametrize(("cut", "n"), [(1, 2), (1, 5), (3, 7), (4, 8), (6, 9)])
    def test_packet_rows_brute_force(self, cut, n):
        words = [w for w in itertools.product((0, 1), repeat=n) if n - sum(w) == cut]
        unchanged = (0,) * cut + (1,) * (n - cut)  # top to bottom: the left packet on top
        counts = Counter(len(_runs(w)) for w in words if w != unchanged)
        row = packet_count_row(cut, n)
        assert {r: k for r, k in enumerate(row) if k} == dict(counts)
        # the inclusion-exclusion count of runs (stats/nulls.py), less the unchanged word
        other = list(runs_row((cut, n - cut)))
        other[2] -= 1
        assert list(row) == other + [0] * (len(row) - len(other))

    @pytest.mark.parametrize(("cut", "n"), [(1, 4), (3, 7), (4, 8), (2, 9)])
    def test_packet_lengths_brute_force(self, cut, n):
        words = [w for w in itertools.product((0, 1), repeat=n) if n - sum(w) == cut]
        unchanged = tuple([0] * cut + [1] * (n - cut))  # top to bottom
        lengths: Counter[int] = Counter()
        for w in words:
            if w != unchanged:
                lengths.update(_runs(w))
        totals = packet_length_totals(cut, n)
        assert {ell: k for ell, k in enumerate(totals) if k} == dict(lengths)

    def test_refuses_a_cut_that_changes_nothing(self):
        with pytest.raises(InputError, match=r"cut in 1\.\.4"):
            packet_count_row(0, 5)


class TestSamplerAgainstLikelihood:
    def test_decoded_cuts_of_sampled_riffles(self):
        # the sampler's cuts, read back off its decks, against the exact cut law
        n, spread = 52, 3.0
        rows = hand_riffle.sample(20000, n, rng=12, spread=spread, clump=1.4)
        decoded = decode_riffles(rows)
        assert decoded.one_riffle.all()
        observed = Counter(decoded.cuts.tolist())
        law = hand_riffle.cut_law(n, spread)
        assert chisquare_p(observed, law, 20000) > 1e-3
