"""The interleaving conjecture (issue 9): the separation statement re-verified exhaustively
for every fixed rearrangement between two ideal-riffle blocks, n <= 6, several (a, b);
its total-variation analogue refuted by the exact counterexample of the issue; and the
figure only ever shown with kind ``conjectured``.

Exactness: every law here has integer numerators over (ab)^n below 2^53, so the float64
sums and matrix products are exact integers (checked below)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from shufflecheck.analyses.assess import assess
from shufflecheck.models import riffle
from shufflecheck.models.blocks import procedure_blocks
from shufflecheck.models.interleaving import conjectured_bounds, interleaved_separation
from shufflecheck.models.procedures import parse_procedure

from . import _laws


def shuffle_numerators(n: int, a: int) -> np.ndarray:
    """a^n times the a-shuffle law, by arrangement (exact integers; Bayer & Diaconis 1992,
    Thm. 1: C(a + n - r, n) for r rising sequences), checked against brute force in
    tests/test_models_classical.py."""
    perms = _laws.arrangements(n)
    out = np.zeros(perms.shape[0])
    for k, p in enumerate(perms):
        out[k] = float(riffle.arrangement_probability(p, 1, hands=a) * a**n)
    return out


def between(n: int, a: int, b: int) -> np.ndarray:
    """Rows: sigma; columns: arrangements; (ab)^n P(R_a, then sigma, then R_b)."""
    perms = _laws.arrangements(n)
    first, second = shuffle_numerators(n, a), shuffle_numerators(n, b)
    assert first.sum() * second.sum() < 2**53  # exact in double precision
    matrix = _laws.convolve_matrix(second, n)  # f @ M: then an independent R_b
    moved = np.zeros((perms.shape[0], perms.shape[0]))  # row sigma: law of x[sigma]
    for s, sigma in enumerate(perms):
        moved[s, _laws.rank(perms[:, sigma])] = first
    return moved @ matrix


PAIRS = [(2, 2), (2, 3), (3, 2), (2, 4), (3, 3), (4, 4), (2, 8), (8, 8)]


class TestSeparationStatement:
    @pytest.mark.parametrize("n", [3, 4, 5, 6])
    @pytest.mark.parametrize(("a", "b"), PAIRS)
    def test_every_sigma_between_two_blocks(self, n, a, b):
        # exhaustive over all n! fixed rearrangements sigma: the least likely arrangement
        # of R_a sigma R_b has probability at least C(ab, n) / (ab)^n (the ab-shuffle's)
        laws = between(n, a, b)
        assert (laws.sum(axis=1) == (a * b) ** n).all()
        least = laws.min(axis=1)
        assert (least >= math.comb(a * b, n)).all()
        # sigma = identity gives the ab-shuffle itself: equality
        assert least[0] == math.comb(a * b, n)

    def test_separation_formula(self):
        # 1 - prod(1 - i/A) is the separation of an A-shuffle (Bayer & Diaconis 1992)
        for n, k in ((52, 12), (52, 16), (20, 9)):
            exact = riffle.exact_distances(n, k).separation
            assert interleaved_separation(n, 2**k) == pytest.approx(exact, rel=1e-12)
        # the figures of the issue for "riffle x3, strip, riffle, cut": 12 and 16 riffles
        assert round(interleaved_separation(52, 2**12), 4) == 0.2775
        assert round(interleaved_separation(52, 2**16), 4) == 0.0200


class TestTotalVariationAnalogueIsFalse:
    def test_counterexample_of_the_issue(self):
        # n = 5, a = b = 8, sigma reverses the middle three cards
        n = 5
        laws = between(n, 8, 8)
        perms = _laws.arrangements(n)
        sigma = int(_laws.rank(np.array([[0, 3, 2, 1, 4]]))[0])
        law = laws[sigma] / 64.0**n
        tv = 0.5 * float(np.abs(law - 1 / math.factorial(n)).sum())
        assert round(tv, 7) == 0.0190582
        assert round(riffle.exact_distances(n, 6).total_variation, 7) == 0.0185623
        assert tv > riffle.exact_distances(n, 6).total_variation
        assert perms[sigma].tolist() == [0, 3, 2, 1, 4]


class TestOnlyConjectured:
    def test_kind_and_wording(self):
        split = procedure_blocks(parse_procedure("riffle x3, strip, riffle, cut"), 3, 52)
        figures = conjectured_bounds(split, 52)
        assert set(figures) == {"separation", "total_variation"}
        for q in figures.values():
            assert q.kind == "conjectured" and q.side == "upper"
            assert not q.guaranteed
            assert "unproven" in q.method
        assert round(figures["separation"].value, 4) == 0.2775

    def test_never_in_the_rigorous_bounds(self):
        row = assess(
            parse_procedure("riffle x3, strip, riffle, cut"), 52, repeats=3, decks=400, rng=1
        ).rows[2]
        assert row.upper["total_variation"].value == pytest.approx(1.0)
        assert row.conjectured["total_variation"].kind == "conjectured"
        assert all(q.kind == "bound" for q in row.upper.values())

    def test_not_shown_for_one_block(self):
        # a single run of riffles between other steps: its exact separation is a bound
        split = procedure_blocks(parse_procedure("strip, riffle x9, cut"), 1, 52)
        assert conjectured_bounds(split, 52) == {}
