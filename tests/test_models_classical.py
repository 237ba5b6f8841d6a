"""Riffle, random transposition and top-to-random against the outside world: the published
variation-distance table, brute force over all n! arrangements, numpy eigenvalues, and the
samplers against the exact laws."""

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
from shufflecheck.core.distances import minimum_steps
from shufflecheck.core.partitions import partitions
from shufflecheck.models import riffle, top_to_random, transposition
from shufflecheck.models.permute import apply_sources, invert, place_by_destination

from . import _brute
from ._fit import chisquare_p


def _rising_sequences(decks: np.ndarray) -> np.ndarray:
    pos = np.argsort(decks, axis=1)
    return 1 + (pos[:, 1:] < pos[:, :-1]).sum(axis=1)


class TestPublishedTable:
    def test_bayer_diaconis_1992_table(self):
        # Bayer & Diaconis (1992), variation distance after k riffles of 52 cards, k = 1..10
        published = [1.000, 1.000, 1.000, 1.000, 0.924, 0.614, 0.334, 0.167, 0.085, 0.043]
        curve = riffle.distance_curve(52, 10)
        assert [round(r.total_variation, 3) for r in curve.rows] == published
        assert all(r.kind == "exact" for r in curve.rows)

    def test_policy_minimums(self):
        # Bayer & Diaconis (1992) table: TV <= 0.5 first at 7 riffles, <= 0.1 first at 9
        rows = riffle.distance_curve(52, 12).rows
        assert minimum_steps(rows, "total-variation", 0.5) == 7
        assert minimum_steps(rows, "total-variation", 0.1) == 9

    def test_separation_closed_form(self):
        # Bayer & Diaconis (1992): separation = 1 - prod_{i<n} (1 - i/2^k)
        for k in (6, 8, 10, 14):
            a = 2**k
            closed = 1 - math.prod(Fraction(a - i, a) for i in range(1, 52))
            assert riffle.exact_distances(52, k).separation == pytest.approx(
                float(closed), rel=1e-12
            )


# ---------------------------------------------------------------------------------------
# brute force over all n! arrangements

BRUTE = [(n, k) for n in (3, 4, 5, 6) for k in (1, 2, 3, 4, 5, 6)]


def _check_rows(law, n, row, tol=1e-12):
    tv, sep, kl = _brute.distances(law, n)
    assert row.total_variation == pytest.approx(float(tv), abs=tol)
    assert row.separation == pytest.approx(float(sep), abs=tol)
    assert row.kl_bits == pytest.approx(kl, abs=1e-9)


class TestBruteForce:
    @pytest.mark.parametrize(("n", "k"), BRUTE)
    def test_riffle(self, n, k):
        law = _brute.law_after(_brute.riffle_outcomes(n), n, k)
        for perm in itertools.permutations(range(n)):
            assert law.get(perm, 0) == riffle.arrangement_probability(perm, k)
        _check_rows(law, n, riffle.exact_distances(n, k))

    @pytest.mark.parametrize(("n", "k"), [(3, 1), (3, 2), (4, 1), (4, 2), (5, 1), (5, 3)])
    def test_three_handed_shuffle(self, n, k):
        law = _brute.law_after(_brute.riffle_outcomes(n, hands=3), n, k)
        for perm in itertools.permutations(range(n)):
            assert law.get(perm, 0) == riffle.arrangement_probability(perm, k, hands=3)
        _check_rows(law, n, riffle.exact_distances(n, k, hands=3))

    @pytest.mark.parametrize(("n", "k"), BRUTE)
    def test_transposition_both_methods(self, n, k):
        law = _brute.law_after(_brute.transposition_outcomes(n), n, k)
        chain = transposition.distance_curve(n, k, method="chain", bound=False).rows[-1]
        fourier = transposition.distance_curve(n, k, method="fourier", bound=False).rows[-1]
        _check_rows(law, n, chain)
        _check_rows(law, n, fourier)

    @pytest.mark.parametrize(("n", "k"), BRUTE)
    def test_top_to_random_and_inverse(self, n, k):
        forward = _brute.law_after(_brute.top_to_random_outcomes(n), n, k)
        backward = _brute.law_after(_brute.random_to_top_outcomes(n), n, k)
        row = top_to_random.exact_distances(n, k)
        _check_rows(forward, n, row)
        _check_rows(backward, n, row)
        # random-to-top law depends only on the increasing bottom run (design brief)
        law = top_to_random.bottom_run_law(n, k)
        by_run = Counter()
        for perm, p in backward.items():
            run = 1
            while run < n and perm[n - run - 1] < perm[n - run]:
                run += 1
            by_run[run] += p
        assert [by_run.get(length, 0) for length in range(1, n + 1)] == list(law)

    @pytest.mark.parametrize(("n", "k"), [(4, 3), (5, 4), (6, 6)])
    def test_strong_uniform_time_bound_holds(self, n, k):
        curve = top_to_random.distance_curve(n, k)
        for row, bound in zip(curve.rows, curve.bounds, strict=True):
            assert row.separation <= bound.separation + 1e-15
            assert row.total_variation <= bound.total_variation + 1e-15


class TestSpectra:
    @staticmethod
    def _matrix(outcomes, n):
        perms = list(itertools.permutations(range(n)))
        index = {p: i for i, p in enumerate(perms)}
        total = sum(q for _, q in outcomes)
        matrix = np.zeros((len(perms), len(perms)))
        for p in perms:
            for source, q in outcomes:
                matrix[index[p], index[tuple(p[s] for s in source)]] += q / total
        return matrix

    @staticmethod
    def _expand(rows):
        return np.sort(np.repeat([float(r.value) for r in rows], [r.multiplicity for r in rows]))

    @pytest.mark.parametrize("n", [3, 4, 5])
    def test_riffle(self, n):
        # numpy.linalg.eigvals of the full n! x n! transition matrix
        numeric = np.sort(np.linalg.eigvals(self._matrix(_brute.riffle_outcomes(n), n)).real)
        assert np.allclose(numeric, self._expand(riffle.spectrum(n)), atol=1e-9)

    @pytest.mark.parametrize("n", [3, 4, 5])
    def test_top_to_random(self, n):
        numeric = np.sort(np.linalg.eigvals(self._matrix(_brute.top_to_random_outcomes(n), n)).real)
        assert np.allclose(numeric, self._expand(top_to_random.spectrum(n)), atol=1e-7)

    @pytest.mark.parametrize("n", [3, 4, 5])
    def test_transposition(self, n):
        numeric = np.sort(np.linalg.eigvalsh(self._matrix(_brute.transposition_outcomes(n), n)))
        assert np.allclose(numeric, self._expand(transposition.spectrum(n)), atol=1e-12)


class TestTranspositionMethods:
    @pytest.mark.parametrize("n", [7, 9, 11, 12, 14])
    def test_chain_equals_fourier(self, n):
        steps = 3 * n
        chain = transposition.distance_curve(n, steps, method="chain", bound=False).rows
        fourier = transposition.distance_curve(n, steps, method="fourier", bound=False).rows
        for a, b in zip(chain, fourier, strict=True):
            assert a.total_variation == pytest.approx(b.total_variation, abs=1e-12)
            assert a.separation == pytest.approx(b.separation, abs=1e-11)
            assert a.kl_bits == pytest.approx(b.kl_bits, rel=1e-9, abs=1e-12)

    @pytest.mark.parametrize("n", [6, 10, 20])
    def test_upper_bound_lemma_is_above_exact(self, n):
        curve = transposition.distance_curve(n, 4 * n)
        for exact, bound in zip(curve.rows, curve.bounds, strict=True):
            assert bound.kind == "bound"
            assert exact.total_variation <= bound.total_variation + 1e-12

    def test_class_law_sums_to_one(self):
        law = transposition.class_law_fourier(8, 5)
        assert sum(law.values()) == 1
        assert set(law) == set(partitions(8))

    def test_hold_zero_alternates_parity(self):
        # without holding, after one step the deck is always odd: separation stays 1
        curve = transposition.distance_curve(6, 8, hold=0.0, bound=False)
        assert all(r.separation == pytest.approx(1.0) for r in curve.rows)
        assert all(r.total_variation >= 0.5 - 1e-12 for r in curve.rows)

    def test_limits(self):
        with pytest.raises(InputError, match="lumped chain is offered"):
            transposition.lumped_chain(80)
        with pytest.raises(InputError, match="Fourier inversion is offered"):
            transposition.class_law_fourier(30, 2)


# ---------------------------------------------------------------------------------------
# samplers against the exact laws


class TestSamplers:
    @pytest.mark.parametrize(("n", "k"), [(10, 3), (26, 5), (52, 7)])
    def test_riffle_rising_sequences(self, n, k):
        decks = riffle.sample(20000, n, k, rng=1000 + n)
        observed = Counter(_rising_sequences(decks).tolist())
        law = riffle.rising_sequence_law(n, k)
        assert chisquare_p(observed, {r + 1: p for r, p in enumerate(law)}, len(decks)) > 1e-3

    def test_riffle_mean_rising_sequences_forward(self):
        # design brief: after 7 riffles of 52 cards the mean is about 24.7 forwards
        law = riffle.rising_sequence_law(52, 7)
        mean = float(sum((r + 1) * p for r, p in enumerate(law)))
        assert mean == pytest.approx(24.7, abs=0.05)
        decks = riffle.sample(50000, 52, 7, rng=5)
        assert _rising_sequences(decks).mean() == pytest.approx(mean, abs=0.05)

    def test_riffle_sampler_exact_for_small_n(self):
        # frequencies of all 4! arrangements after 2 riffles vs Bayer-Diaconis probabilities
        decks = riffle.sample(60000, 4, 2, rng=7)
        observed = Counter(map(tuple, decks.tolist()))
        expected = {
            p: riffle.arrangement_probability(p, 2) for p in itertools.permutations(range(4))
        }
        assert chisquare_p(observed, expected, len(decks)) > 1e-3

    def test_three_handed_sampler(self):
        decks = riffle.sample(60000, 4, 1, rng=8, hands=3)
        observed = Counter(map(tuple, decks.tolist()))
        expected = {
            p: riffle.arrangement_probability(p, 1, hands=3)
            for p in itertools.permutations(range(4))
        }
        assert chisquare_p(observed, expected, len(decks)) > 1e-3

    @pytest.mark.parametrize(("n", "k"), [(8, 4), (10, 6)])
    def test_transposition_cycle_types(self, n, k):
        decks = transposition.sample(30000, n, k, rng=n)
        observed = Counter()
        for row in decks.tolist():
            observed[_brute.cycle_lengths(row)] += 1
        expected = transposition.class_law_fourier(n, k)
        assert chisquare_p(observed, expected, len(decks)) > 1e-3

    def test_transposition_other_hold(self):
        # hold 0.4 on 5 cards: identity 0.4, each of the 10 transpositions 0.06 = 20:3
        decks = transposition.sample(30000, 5, 3, rng=9, hold=0.4)
        outcomes = [(tuple(range(5)), 20)] + [
            (tuple(_swap(5, a, b)), 3) for a in range(5) for b in range(a + 1, 5)
        ]
        law = _brute.law_after(outcomes, 5, 3)
        observed = Counter(map(tuple, decks.tolist()))
        assert chisquare_p(observed, law, len(decks)) > 1e-3

    @pytest.mark.parametrize(("n", "k"), [(10, 20), (30, 80), (52, 200)])
    def test_top_to_random_bottom_runs(self, n, k):
        law = top_to_random.bottom_run_law(n, k)
        expected = {length + 1: p for length, p in enumerate(law)}
        back = top_to_random.sample_random_to_top(20000, n, k, rng=n)
        observed = Counter(_bottom_runs(back).tolist())
        assert chisquare_p(observed, expected, len(back)) > 1e-3
        # top-to-random decks: the same law for the run of their inverses
        forward = top_to_random.sample(20000, n, k, rng=n + 1)
        observed = Counter(_bottom_runs(invert(forward)).tolist())
        assert chisquare_p(observed, expected, len(forward)) > 1e-3

    def test_step_classes_match_samplers(self):
        rng = np.random.default_rng(3)
        decks = np.broadcast_to(np.arange(5, dtype=np.int16), (40000, 5)).copy()
        stepped = top_to_random.TopToRandom().apply_repeated(decks, 3, rng)
        observed = Counter(map(tuple, stepped.tolist()))
        law = _brute.law_after(_brute.top_to_random_outcomes(5), 5, 3)
        assert chisquare_p(observed, law, len(stepped)) > 1e-3
        stepped = top_to_random.RandomToTop().apply_repeated(decks, 3, rng)
        observed = Counter(map(tuple, stepped.tolist()))
        law = _brute.law_after(_brute.random_to_top_outcomes(5), 5, 3)
        assert chisquare_p(observed, law, len(stepped)) > 1e-3


def _swap(n, a, b):
    src = list(range(n))
    src[a], src[b] = src[b], src[a]
    return src


def _bottom_runs(decks: np.ndarray) -> np.ndarray:
    n = decks.shape[1]
    increasing = decks[:, 1:] > decks[:, :-1]  # position i -> i+1 increasing
    runs = np.ones(len(decks), dtype=np.int64)
    alive = np.ones(len(decks), dtype=bool)
    for i in range(n - 2, -1, -1):
        alive &= increasing[:, i]
        runs += alive
    return runs


class TestPermutePrimitives:
    @given(st.integers(2, 70), st.integers(1, 20), st.integers(0, 2**32 - 1))
    @settings(max_examples=40, deadline=None)
    def test_against_fancy_indexing(self, n, decks, seed):
        rng = np.random.default_rng(seed)
        old = rng.permuted(np.broadcast_to(np.arange(n, dtype=np.int16), (decks, n)), axis=1)
        src = rng.permuted(np.broadcast_to(np.arange(n), (decks, n)), axis=1)
        assert (apply_sources(old, src) == np.take_along_axis(old, src, axis=1)).all()
        expected = np.empty_like(old)
        np.put_along_axis(expected, src, old, axis=1)
        assert (place_by_destination(old, src) == expected).all()
        inv = invert(old)
        assert (np.take_along_axis(old, inv.astype(np.intp), axis=1) == np.arange(n)).all()

    @given(st.integers(2, 300), st.integers(1, 9), st.integers(0, 2**32 - 1))
    @settings(max_examples=30, deadline=None)
    def test_sampled_decks_are_permutations(self, n, k, seed):
        for decks in (
            riffle.sample(5, n, k, rng=seed),
            transposition.sample(5, n, k, rng=seed),
            top_to_random.sample(5, n, k, rng=seed),
        ):
            assert (np.sort(decks, axis=1) == np.arange(n)).all()


class TestBadInput:
    def test_messages(self):
        with pytest.raises(InputError, match="hands"):
            riffle.exact_distances(52, 3, hands=1)
        with pytest.raises(InputError, match="cards must be at least 2"):
            riffle.exact_distances(1, 3)
        with pytest.raises(InputError, match="limited to"):
            riffle.exact_distances(52, 500)
        with pytest.raises(InputError, match="hold must be in"):
            transposition.distance_curve(10, 5, hold=1.0)
