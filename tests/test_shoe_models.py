"""Shoe procedures (grab, plug, cut card, burn) and riffle distances on features.

Checks against the outside world: brute force over every outcome of the physical
mechanics (every grab size, every interleaving; every label sequence of an a-shuffle, the
Gilbert-Shannon-Reeds description of Bayer & Diaconis 1992), and the samplers against the
exact laws by chi-square with a fixed seed (tests/_fit.py)."""

from __future__ import annotations

import itertools
import math
from collections import Counter, defaultdict
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.models import features, riffle
from shufflecheck.models.dealing import Burn, CutCard, dealt_window
from shufflecheck.models.grab import Grab, grab_size_law, parse_pairs, stack_sizes
from shufflecheck.models.plug import Plug, depth_law
from shufflecheck.models.procedures import parse_procedure
from shufflecheck.models.registry import entry

from ._fit import chisquare_p


def label_sequence_law(start: tuple[int, ...], a: int) -> dict[tuple[int, ...], Fraction]:
    """Brute force: the a-shuffle as a^n equally likely packet labels of the new positions;
    packet j (a block of the old deck, in order) fills the positions labelled j."""
    n = len(start)
    out: Counter = Counter()
    for labels in itertools.product(range(a), repeat=n):
        sizes = [labels.count(j) for j in range(a)]
        offsets = [sum(sizes[:j]) for j in range(a)]
        seen = [0] * a
        word = []
        for x in labels:
            word.append(start[offsets[x] + seen[x]])
            seen[x] += 1
        out[tuple(word)] += 1
    return {w: Fraction(c, a**n) for w, c in out.items()}


def uniform_words(start) -> int:
    counts = Counter(start)
    return math.factorial(len(start)) // math.prod(math.factorial(c) for c in counts.values())


class TestFeatureRiffles:
    @pytest.mark.parametrize(
        ("start", "a"),
        [((0, 0, 1, 1, 1), 2), ((0, 1, 1, 2, 2, 2), 3), ((0, 1, 0, 1, 1), 4), ((0, 0, 1, 1, 2), 2)],
    )
    def test_small_deck_law_is_the_mechanics(self, start, a):
        expected = label_sequence_law(start, a)
        assert features.small_deck_law(start, a) == expected

    @pytest.mark.parametrize(
        "start", [(0, 0, 1, 1, 1), (0, 1, 1, 2, 2, 2), (0, 0, 1, 2, 3), (0, 0, 0, 1, 1, 1)]
    )
    @pytest.mark.parametrize("a", [2, 3, 4])
    def test_block_separation(self, start, a):
        law = label_sequence_law(start, a)
        words = uniform_words(start)
        expected = 1 - words * min(law.values()) if len(law) == words else Fraction(1)
        counts = list(Counter(start).values())
        assert features.block_separation(counts, a) == expected

    @pytest.mark.parametrize(("p", "q"), [(2, 3), (3, 3), (4, 2), (1, 5)])
    @pytest.mark.parametrize("a", [2, 3, 4])
    def test_two_valued_total_variation(self, p, q, a):
        start = (0,) * p + (1,) * q
        law = label_sequence_law(start, a)
        uniform = Fraction(1, uniform_words(start))
        tv = (
            sum(abs(x - uniform) for x in law.values())
            + uniform * (uniform_words(start) - len(law))
        ) / 2
        assert features.two_valued_block_tv(p, q, a) == tv

    def test_feature_never_farther_than_distinct_cards(self):
        # 20 cards in two blocks: exact feature TV and separation below the exact distinct ones
        start = [0] * 10 + [1] * 10
        for k in range(1, 8):
            row = features.feature_distances(start, k)
            full = riffle.exact_distances(20, k)
            assert row.total_variation.kind == "exact" and row.separation.kind == "exact"
            assert row.total_variation.value <= full.total_variation + 1e-15
            assert row.separation.value <= full.separation + 1e-15
            assert row.kl_bits.kind == "bound" and row.kl_bits.side == "upper"

    def test_exact_small_feature_is_labelled_exact(self):
        row = features.feature_distances([0, 1, 0, 1, 2, 2], 2)
        assert {row.total_variation.kind, row.separation.kind, row.kl_bits.kind} == {"exact"}

    def test_large_deck_gets_bounds(self):
        shoe_start = [i % 10 for i in range(312)]  # not in blocks
        row = features.feature_distances(shoe_start, 8)
        assert row.total_variation.kind == "bound" and row.total_variation.side == "upper"

    def test_in_blocks(self):
        assert features.in_blocks([0, 0, 1, 2, 2])
        assert not features.in_blocks([0, 1, 0])
        assert not features.in_blocks([1, 1, 0])


def grab_mechanics(cards: int, step: Grab) -> dict[tuple[int, ...], Fraction]:
    """Brute force of the grab shuffle as described in docs/models.md (clump 1, one riffle):
    every sequence of grab sizes from each stack, every interleaving of each grab pair."""
    least, weights = step.grab_law()
    total = sum(weights)
    p_size = {least + i: Fraction(w, total) for i, w in enumerate(weights) if w}

    def takes(length: int):
        # sequences of grabs taking a stack of `length` cards (the last takes what is left)
        if length == 0:
            yield (), Fraction(1)
            return
        for size, p in p_size.items():
            if size >= length:
                continue
            for rest, q in takes(length - size):
                yield (size, *rest), p * q
        tail = sum((p for size, p in p_size.items() if size >= length), Fraction(0))
        if tail:
            yield (length,), tail

    sizes = stack_sizes(cards, step.stacks)
    starts = [sum(sizes[:i]) for i in range(step.stacks)]
    law: dict[tuple[int, ...], Fraction] = defaultdict(Fraction)
    pairs = parse_pairs(step.pairs, step.stacks)

    def pair_outcomes(a: int, b: int):
        for ga, pa in takes(sizes[a]):
            for gb, pb in takes(sizes[b]):
                rounds = max(len(ga), len(gb))
                ga2 = list(ga) + [0] * (rounds - len(ga))
                gb2 = list(gb) + [0] * (rounds - len(gb))
                # packets of cards, round by round (old positions)
                packets = []
                ca, cb = starts[a], starts[b]
                for x, y in zip(ga2, gb2, strict=True):
                    packets.append((list(range(ca, ca + x)), list(range(cb, cb + y))))
                    ca, cb = ca + x, cb + y
                options = []
                for top, bottom in packets:
                    m = len(top) + len(bottom)
                    options.append(
                        [
                            (chosen, Fraction(1, math.comb(m, len(top))))
                            for chosen in itertools.combinations(range(m), len(top))
                        ]
                    )
                for picks in itertools.product(*options):
                    stack: list[int] = []
                    p = pa * pb
                    for (top, bottom), (chosen, q) in zip(packets, picks, strict=True):
                        merged, it, ib = [], iter(top), iter(bottom)
                        for i in range(len(top) + len(bottom)):
                            merged.append(next(it) if i in chosen else next(ib))
                        stack = merged + stack  # the new packet goes on top
                        p *= q
                    yield tuple(stack), p

    def combine(k: int, above: tuple[int, ...], p: Fraction):
        if k == len(pairs):
            law[above] += p
            return
        for stack, q in pair_outcomes(*pairs[k]):
            combine(k + 1, stack + above, p * q)  # later pairs go on top

    combine(0, (), Fraction(1))
    return dict(law)


class TestGrab:
    @pytest.mark.parametrize(
        "step",
        [
            Grab(stacks=2, grab=2, spread=0.5),
            Grab(stacks=4, grab=1, spread=0.0, pairs="split"),
            Grab(stacks=2, grab=3, spread=0.6),
        ],
    )
    def test_sampler_follows_the_mechanics(self, step):
        cards = 8
        exact = grab_mechanics(cards, step)
        assert sum(exact.values()) == 1
        rng = np.random.default_rng(2026)
        start = np.tile(np.arange(cards, dtype=np.int16), (60_000, 1))
        sampled = Counter(map(tuple, step.apply(start, rng).tolist()))
        # chi-square goodness of fit with a fixed seed (tests/_fit.py)
        assert chisquare_p(sampled, exact, 60_000) > 1e-3

    def test_zone_structure(self):
        # with fixed grabs, the top packet holds the last grab of each stack
        step = Grab(stacks=2, grab=26, spread=0.0)
        out = step.apply(np.tile(np.arange(312, dtype=np.int16), (50, 1)), np.random.default_rng(1))
        top = np.sort(out[:, :52], axis=1)
        expected = np.sort(np.r_[130:156, 286:312])
        assert (top == expected).all()

    def test_grab_size_law(self):
        least, weights = grab_size_law(26, 4.0)
        assert least == 10 and len(weights) == 33  # 26 +- 16 (four spreads)
        assert weights[16] == max(weights)
        assert grab_size_law(10, 0.0) == (10, (1,))

    @pytest.mark.parametrize("pairs", ["1-2/3", "1-2/2-3", "x"])
    def test_bad_pairs(self, pairs):
        with pytest.raises(InputError, match="grab: pairs"):
            Grab(stacks=4, pairs=pairs)

    def test_odd_stacks_need_explicit_pairs(self):
        with pytest.raises(InputError, match="even number of stacks"):
            Grab(stacks=3)

    @settings(max_examples=25, deadline=None)
    @given(
        stacks=st.sampled_from([2, 4, 6]),
        grab=st.integers(1, 40),
        spread=st.floats(0, 8),
        clump=st.sampled_from([0.0, 0.5, 1.0, 2.5]),
        riffles=st.integers(1, 3),
        seed=st.integers(0, 2**32 - 1),
    )
    def test_rows_are_permutations(self, stacks, grab, spread, clump, riffles, seed):
        step = Grab(stacks=stacks, grab=grab, spread=spread, clump=clump, riffles=riffles)
        out = step.apply(
            np.tile(np.arange(104, dtype=np.int16), (20, 1)), np.random.default_rng(seed)
        )
        assert (np.sort(out, axis=1) == np.arange(104)).all()


class TestPlug:
    def test_exact_law_against_brute_force(self):
        # brute force: every insertion depth with its weight, the arrangement built by hand
        cards = 7
        step = Plug(cards=2, spread=1.0)
        low, weights = depth_law(cards, 2, 1.0)
        total = sum(weights)
        law = {}
        for i, w in enumerate(weights):
            d = low + i
            rest = list(range(cards - 2))
            arrangement = (*rest[:d], 5, 6, *rest[d:])
            law[arrangement] = Fraction(w, total)
        fact = math.factorial(cards)
        uniform = Fraction(1, fact)
        tv = (sum(abs(p - uniform) for p in law.values()) + uniform * (fact - len(law))) / 2
        row = step.exact_distances(cards, 1)
        assert row.kind == "exact" and row.total_variation == pytest.approx(float(tv), rel=1e-12)
        rng = np.random.default_rng(7)
        sampled = Counter(
            map(
                tuple,
                step.apply(np.tile(np.arange(cards, dtype=np.int16), (20_000, 1)), rng).tolist(),
            )
        )
        assert chisquare_p(sampled, law, 20_000) > 1e-3

    def test_top_source(self):
        out = Plug(cards=3, spread=0.0, source="top").apply(
            np.tile(np.arange(10, dtype=np.int16), (3, 1)), np.random.default_rng(0)
        )
        # the top 3 cards go below the 3 or 4 middle cards of the other 7 (spread 0)
        assert out[0].tolist() in ([3, 4, 5, 0, 1, 2, 6, 7, 8, 9], [3, 4, 5, 6, 0, 1, 2, 7, 8, 9])


class TestDealingMarks:
    def test_marks_move_nothing(self):
        decks = np.tile(np.arange(20, dtype=np.int16), (4, 1))
        for step in (CutCard(behind=5), Burn(cards=2)):
            assert (step.apply(decks, np.random.default_rng(0)) == decks).all()
            assert step.deterministic

    def test_dealt_window(self):
        proc = parse_procedure("grab, burn, cut-card(behind=60)")
        assert dealt_window(proc.expanded(), 312) == (1, 252)
        with pytest.raises(InputError, match="nothing of 10 is dealt"):
            dealt_window(parse_procedure("burn(cards=5), cut-card(behind=5)").expanded(), 10)

    def test_registered(self):
        for name in ("grab", "plug", "cut-card", "burn"):
            assert entry(name).sources
