"""Procedure assessment: exact blocks, rigorous bounds, valid lower confidence bounds."""

from __future__ import annotations

import dataclasses

import pytest

from shufflecheck.analyses.assess import assess
from shufflecheck.common.errors import InputError
from shufflecheck.core.counting import harmonic
from shufflecheck.models import riffle, shelf, top_to_random
from shufflecheck.models.base import Step
from shufflecheck.models.blocks import procedure_blocks
from shufflecheck.models.procedures import Procedure, ProcedureItem, parse_procedure

from . import _brute


@dataclasses.dataclass(frozen=True)
class _UniformStep(Step):
    """Test-only step: a uniformly random rearrangement of every deck."""

    keyword = "uniform-test"

    def apply(self, decks, rng):
        return rng.permuted(decks, axis=1)


UNIFORM = Procedure((ProcedureItem(_UniformStep()),), "uniform-test")


class TestExactBlocks:
    def test_riffle_runs_are_exact(self):
        proc = parse_procedure("riffle x3")
        for r in (1, 2, 3):
            whole = procedure_blocks(proc, r, 52).whole
            assert whole.kind == "exact"
            assert whole.total_variation == riffle.exact_distances(52, 3 * r).total_variation

    def test_mixed_packet_counts_compose(self):
        # an a-shuffle followed by a b-shuffle is an ab-shuffle (Bayer & Diaconis 1992, Lemma 1)
        proc = parse_procedure("riffle(hands=2), riffle(hands=3)")
        whole = procedure_blocks(proc, 2, 20).whole
        assert whole.total_variation == riffle.exact_distances(20, 1, hands=36).total_variation

    def test_default_hand_riffle_is_a_riffle(self):
        whole = procedure_blocks(parse_procedure("riffle x3, hand-riffle x2"), 1, 52).whole
        assert whole.total_variation == riffle.exact_distances(52, 5).total_variation

    def test_fixed_rearrangements_at_the_ends(self):
        proc = parse_procedure("pile(piles=4), riffle x7")
        whole = procedure_blocks(proc, 1, 52).whole
        assert whole.total_variation == riffle.exact_distances(52, 7).total_variation
        split = procedure_blocks(proc, 2, 52)
        assert split.whole is None
        assert [block.label for block in split.blocks] == ["riffle x7", "riffle x7"]

    def test_top_to_random(self):
        whole = procedure_blocks(parse_procedure("top-to-random x10"), 3, 12).whole
        assert whole.separation == top_to_random.exact_distances(12, 30).separation

    def test_shelf_passes_with_different_shelf_counts_combine(self):
        # m1 then m2 shelves is one pass through 2 m1 m2 shelves (brute force in
        # tests/test_models_steps.py); so the procedure is exact
        proc = parse_procedure("shelf(shelves=20), shelf(shelves=30)")
        whole = procedure_blocks(proc, 1, 52).whole
        assert whole is not None and whole.kind == "exact"
        assert whole.total_variation == shelf.exact_distances(52, 1, shelves=1200).total_variation
        twice = procedure_blocks(proc, 2, 52).whole  # 20, 30, 20, 30: 2^3 20^2 30^2 shelves
        assert (
            twice.total_variation
            == shelf.exact_distances(52, 1, shelves=8 * 400 * 900).total_variation
        )

    def test_upper_bounds_against_brute_force(self):
        # riffle x2, top-to-random, riffle on 5 cards: exact law by brute force over all 5!
        proc = parse_procedure("riffle x2, top-to-random, riffle")
        result = assess(proc, 5, repeats=1, decks=4000, rng=1)
        row = result.rows[0]
        assert row.exact is None
        law = _brute.law_after(_brute.riffle_outcomes(5), 5, 2)
        law = _brute.compose(
            {k: v for k, v in law.items()}, [(s, 1) for s, _ in _brute.top_to_random_outcomes(5)]
        )
        law = _brute.compose(law, _brute.riffle_outcomes(5))
        total = sum(law.values())
        tv, sep, kl = _brute.distances({k: v / total for k, v in law.items()}, 5)
        assert float(tv) <= row.upper["total_variation"].value + 1e-12
        assert float(sep) <= row.upper["separation"].value + 1e-12
        assert kl <= row.upper["kl_bits"].value + 1e-9
        # never worse than the product of block separations
        s2 = riffle.exact_distances(5, 2).separation
        s1 = riffle.exact_distances(5, 1).separation
        ttr = top_to_random.exact_distances(5, 1).separation
        assert row.upper["separation"].value <= s2 * s1 * ttr * (1 + 1e-9)
        assert row.lower["total_variation"].value <= float(tv) + 0.05


class TestLowerBounds:
    def test_valid_on_uniform_decks(self):
        # at 99% confidence the lower bound on uniform decks must be 0 in >= 99% of runs
        positives = 0
        runs = 300
        for seed in range(runs):
            result = assess(UNIFORM, 20, repeats=1, decks=600, rng=seed, strategies=("next-card",))
            positives += result.rows[0].lower["total_variation"].value > 0
        assert positives <= 0.01 * runs

    def test_below_the_exact_value(self):
        # riffle x7 of 52 cards: exact TV 0.334 (Bayer & Diaconis 1992); the bound stays below
        result = assess(parse_procedure("riffle x7"), 52, repeats=1, decks=40000, rng=5)
        row = result.rows[0]
        assert 0.25 < row.lower["total_variation"].value <= row.exact.total_variation
        assert row.lower["kl_bits"].value <= row.exact.kl_bits
        assert row.lower["total_variation"].label_text == "lower bound (99% confidence)"


class TestGuessing:
    def test_uniform_decks_have_no_edge(self):
        result = assess(UNIFORM, 52, repeats=1, decks=40000, rng=2)
        row = result.rows[0]
        assert row.uniform_guesses == pytest.approx(float(harmonic(52)))  # OEIS A001008/A002805
        low, high = row.extra_guesses.interval
        assert low < 0 < high
        for quantity in row.guessing.values():
            assert quantity.kind == "estimate"
            assert quantity.interval[0] < float(harmonic(52)) < quantity.interval[1]

    def test_four_riffles_are_exploitable(self):
        row = assess(parse_procedure("riffle x4"), 52, repeats=1, decks=20000, rng=3).rows[0]
        assert row.extra_guesses.interval[0] > 2.0
        assert row.best_strategy in ("next-card", "longest-run")

    def test_deterministic_note(self):
        result = assess(parse_procedure("pile(piles=4)"), 52, repeats=2, decks=1000, rng=1)
        assert result.notes and "mixes nothing" in result.notes[0]
        assert result.rows[0].exact.total_variation == pytest.approx(1.0)


class TestReproducibility:
    def test_same_seed_same_numbers(self):
        proc = parse_procedure("riffle x3, strip, riffle, cut")
        a = assess(proc, 52, repeats=2, decks=3000, rng=9)
        b = assess(proc, 52, repeats=2, decks=3000, rng=9)
        assert a == b


class TestBadInput:
    @pytest.mark.parametrize(
        ("kwargs", "message"),
        [
            ({"repeats": 0}, "repeats must be"),
            ({"decks": 1}, "decks must be"),
            ({"confidence": 1.5}, "confidence must be"),
        ],
    )
    def test_messages(self, kwargs, message):
        with pytest.raises(InputError, match=message):
            assess(parse_procedure("riffle"), 52, **kwargs)
