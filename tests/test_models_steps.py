"""Step models of real dealing procedures (hand riffle, weave, strip/overhand, cut, pile deal,
shelf machine) against the outside world: brute force over all n! arrangements built by
enumerating each physical mechanism, the ideal riffle's exact law (Bayer & Diaconis 1992),
the perfect-shuffle orders of Diaconis, Graham & Kantor (1983), OEIS A008303, hand-worked
examples, and the samplers against the exact laws (chi-square with a fixed seed)."""

from __future__ import annotations

import dataclasses
import itertools
import math
import typing
from collections import Counter, defaultdict
from fractions import Fraction

import numpy as np
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st
from sympy.combinatorics import Permutation

from shufflecheck.common.errors import InputError
from shufflecheck.core.distances import minimum_steps
from shufflecheck.models import cut, hand_riffle, overhand, pile, riffle, shelf
from shufflecheck.models.permute import identity_decks
from shufflecheck.models.registry import step_types

from . import _brute
from ._fit import chisquare_p

# ---------------------------------------------------------------------------------------
# helpers: laws as {source: Fraction}, where new[i] = old[source[i]]

Law = dict[tuple[int, ...], Fraction]


def _as_outcomes(law: Law) -> list[tuple[tuple[int, ...], int]]:
    """Integer weights over a common denominator, for tests/_brute.py."""
    scale = math.lcm(*(p.denominator for p in law.values()))
    return [(source, int(p * scale)) for source, p in law.items() if p]


def _after(law: Law, n: int, steps: int) -> Law:
    """The law after ``steps`` independent steps, by brute-force composition."""
    return _brute.law_after(_as_outcomes(law), n, steps)


def _frequencies(decks: np.ndarray) -> Counter:
    return Counter(map(tuple, decks.tolist()))


def _check_row(law: Law, n: int, row, tol: float = 1e-12) -> None:
    tv, sep, kl = _brute.distances(law, n)
    assert row.kind == "exact"
    assert row.total_variation == pytest.approx(float(tv), abs=tol)
    assert row.separation == pytest.approx(float(sep), abs=tol)
    assert row.kl_bits == pytest.approx(kl, abs=1e-9)


def _valleys(p) -> int:
    return sum(p[i - 1] > p[i] < p[i + 1] for i in range(1, len(p) - 1))


# ---------------------------------------------------------------------------------------
# the physical mechanics, enumerated (independent of the library's code)


def _gaussian_cut_law(n: int, spread: float, low: int, high: int) -> dict[int, Fraction]:
    """The documented discretised normal: round(2^40 exp(-((c-n/2)^2 - d^2)/(2 s^2)))."""
    squares = {c: (Fraction(2 * c - n, 2)) ** 2 for c in range(low, high + 1)}
    nearest = min(squares.values())
    if spread == 0:
        weights = {c: int(q == nearest) for c, q in squares.items()}
    else:
        weights = {
            c: round(2**40 * math.exp(-float(q - nearest) / (2 * spread * spread)))
            for c, q in squares.items()
        }
    total = sum(weights.values())
    return {c: Fraction(w, total) for c, w in weights.items() if w}


def hand_riffle_mechanics(n: int, cut_law: dict[int, Fraction], clump: Fraction) -> Law:
    """Cut ``c`` cards into the left hand; cards fall from the bottoms of the two packets,
    the hand that dropped last weighted by ``clump`` per card held; the first card to fall
    lands at the bottom of the new deck."""
    law: Law = defaultdict(Fraction)

    def drop(left, right, fallen, last, prob):
        if not left and not right:
            law[tuple(reversed(fallen))] += prob
            return
        w_left = len(left) * (clump if last == "L" else 1)
        w_right = len(right) * (clump if last == "R" else 1)
        total = w_left + w_right
        if total == 0:  # clump 0: the only hand with cards drops
            w_left, w_right, total = len(left), len(right), len(left) + len(right)
        if left and w_left:
            drop(left[:-1], right, [*fallen, left[-1]], "L", prob * Fraction(w_left) / total)
        if right and w_right:
            drop(left, right[:-1], [*fallen, right[-1]], "R", prob * Fraction(w_right) / total)

    for c, p_cut in cut_law.items():
        drop(list(range(c)), list(range(c, n)), [], None, p_cut)
    return dict(law)


def strip_mechanics(n: int, p: Fraction, in_place: bool = False) -> Law:
    """Every gap a boundary with probability ``p``; packet order reversed (or, Pemantle's
    statement, every packet reversed in place)."""
    law: Law = defaultdict(Fraction)
    for mask in itertools.product((0, 1), repeat=n - 1):
        packets = [[0]]
        for gap, boundary in enumerate(mask):
            if boundary:
                packets.append([gap + 1])
            else:
                packets[-1].append(gap + 1)
        if in_place:
            source = [c for packet in packets for c in reversed(packet)]
        else:
            source = [c for packet in reversed(packets) for c in packet]
        k = sum(mask)
        law[tuple(source)] += p**k * (1 - p) ** (n - 1 - k)
    return dict(law)


def cut_mechanics(n: int, depth_law: dict[int, Fraction]) -> Law:
    """Take ``c`` cards off the top and put them underneath."""
    law: Law = defaultdict(Fraction)
    for c, prob in depth_law.items():
        law[tuple(list(range(c, n)) + list(range(c)))] += prob
    return dict(law)


def shelf_mechanics(n: int, m: int, random_order: bool = False) -> Law:
    """Cards dealt from the bottom, each to one of ``m`` shelves (uniform), on top of or
    under that shelf's pile (probability 1/2); shelves stacked 1..m, or in each of the m!
    orders with equal chance (Diaconis, Fulman & Holmes 2013, Section 1)."""
    law: Law = defaultdict(Fraction)
    orders = list(itertools.permutations(range(m))) if random_order else [tuple(range(m))]
    weight = Fraction(1, (2 * m) ** n * len(orders))
    for shelves in itertools.product(range(m), repeat=n):
        for sides in itertools.product((0, 1), repeat=n):
            piles: list[list[int]] = [[] for _ in range(m)]
            for card in range(n - 1, -1, -1):  # the bottom card is dealt first
                if sides[card]:
                    piles[shelves[card]].insert(0, card)  # on top
                else:
                    piles[shelves[card]].append(card)  # underneath
            for order in orders:
                law[tuple(c for j in order for c in piles[j])] += weight
    return dict(law)


def _sample_law(step, n: int, times: int, count: int, seed: int, start=None) -> Counter:
    """Sampled arrangements after ``times`` applications of ``step`` to ``start``."""
    decks = identity_decks(count, n) if start is None else np.tile(start, (count, 1))
    rng = np.random.default_rng(seed)
    return _frequencies(step.apply_repeated(decks, times, rng))


def _moved(law: Law, start) -> Law:
    """The law of the deck when the steps act on ``start`` instead of the reference order."""
    return {tuple(start[s] for s in source): p for source, p in law.items()}


# ---------------------------------------------------------------------------------------
# cut


class TestCut:
    @pytest.mark.parametrize("n", [3, 4, 5, 6])
    @pytest.mark.parametrize(("spread", "least"), [(None, 1), (None, 2), (0.0, 1), (1.5, 1)])
    def test_exact_against_brute_force(self, n, spread, least):
        if 2 * least > n:
            with pytest.raises(InputError, match="leaves no possible cut"):
                cut.exact_distances(n, 1, least=least)
            return
        low, high = least, n - least
        if spread is None:
            depth = {c: Fraction(1, high - low + 1) for c in range(low, high + 1)}
        else:
            depth = _gaussian_cut_law(n, spread, low, high)
        assert cut.cut_law(n, spread=spread, least=least) == depth
        one = cut_mechanics(n, depth)
        for k in (1, 2, 3):
            law = _after(one, n, k)  # brute force over all n! arrangements
            _check_row(law, n, cut.exact_distances(n, k, spread=spread, least=least))

    def test_two_uniform_cuts_by_hand(self):
        # worked by hand: two cuts uniform on 1..n-1 sum to 0 mod n in n-1 of the (n-1)^2
        # depth pairs, and to each other rotation in n-2 of them
        numerators, denominator = cut.rotation_law(52, 2)
        assert denominator == 51**2
        assert numerators[0] == 51
        assert set(numerators[1:]) == {50}

    def test_one_uniform_cut_kl_by_hand(self):
        # worked by hand: 51 equally likely rotations -> KL = log2(52!/51), separation 1
        row = cut.exact_distances(52, 1)
        assert row.kl_bits == pytest.approx(math.log2(math.factorial(52) / 51), rel=1e-12)
        assert row.separation == 1.0
        assert row.total_variation == pytest.approx(1.0)

    def test_spread_zero_is_the_middle(self):
        assert cut.cut_law(52, spread=0.0) == {26: 1}
        assert cut.cut_law(5, spread=0.0) == {2: Fraction(1, 2), 3: Fraction(1, 2)}

    def test_centred_law_is_symmetric_and_concentrated(self):
        law = cut.cut_law(52, spread=3.0)
        assert all(law[c] == law[52 - c] for c in law)
        mean = sum(c * p for c, p in law.items())
        var = sum((c - mean) ** 2 * p for c, p in law.items())
        assert mean == 26
        # a discretised normal with s = 3 far from the ends has variance s^2 + ~0 (to 1e-6)
        assert float(var) == pytest.approx(9.0, abs=1e-6)

    @pytest.mark.parametrize(("n", "spread", "least", "times"), [(5, None, 1, 1), (6, 1.0, 1, 2)])
    def test_sampler_chisquare(self, n, spread, least, times):
        step = cut.Cut(spread=spread, least=least)
        law = _after(cut_mechanics(n, cut.cut_law(n, spread=spread, least=least)), n, times)
        start = (2, 0, 4, 1, 3, 5)[:n] if n == 6 else (2, 0, 4, 1, 3)
        observed = _sample_law(step, n, times, 40000, seed=11, start=np.array(start))
        assert chisquare_p(observed, _moved(law, start), 40000) > 1e-3
        decks = cut.sample(40000, n, times, rng=12, spread=spread, least=least)
        assert chisquare_p(_frequencies(decks), law, 40000) > 1e-3

    def test_bad_input(self):
        with pytest.raises(InputError, match="cut: spread must be a number of cards >= 0"):
            cut.Cut(spread=-1.0)
        with pytest.raises(InputError, match="cut: least must be an integer"):
            cut.Cut(least=0)
        with pytest.raises(InputError, match="cut: least=4 leaves no possible cut"):
            cut.Cut(least=4).check_cards(7)


# ---------------------------------------------------------------------------------------
# hand riffle and weave


class TestHandRiffle:
    @pytest.mark.parametrize("n", [3, 4, 5, 6])
    def test_gsr_special_case_is_the_ideal_riffle(self, n):
        # binomial cut and clump 1 = GSR: the enumerated mechanics give exactly the
        # Bayer & Diaconis (1992) Thm. 1 law, C(n + 2 - r, n) / 2^n
        binomial = {c: Fraction(math.comb(n, c), 2**n) for c in range(n + 1)}
        assert hand_riffle.cut_law(n) == binomial
        law = hand_riffle_mechanics(n, binomial, Fraction(1))
        for perm in itertools.permutations(range(n)):
            assert law.get(perm, 0) == riffle.arrangement_probability(perm, 1)
        for k in (1, 2, 3):
            _check_row(_after(law, n, k), n, hand_riffle.exact_distances(n, k))

    def test_gsr_special_case_distances_at_52(self):
        # the published table: Bayer & Diaconis (1992), TV after k riffles of 52 cards
        published = [1.000, 1.000, 1.000, 1.000, 0.924, 0.614, 0.334, 0.167, 0.085, 0.043]
        step = hand_riffle.HandRiffle()
        rows = [step.exact_distances(52, k) for k in range(1, 11)]
        assert [round(r.total_variation, 3) for r in rows] == published
        for k, row in enumerate(rows, start=1):
            assert row == riffle.exact_distances(52, k)

    @pytest.mark.parametrize("n", [3, 4, 5, 6])
    @pytest.mark.parametrize("spread", [0.0, 0.8, 2.0])
    def test_one_step_exact_with_spread(self, n, spread):
        cut_law = _gaussian_cut_law(n, spread, 0, n)
        assert hand_riffle.cut_law(n, spread) == cut_law
        law = hand_riffle_mechanics(n, cut_law, Fraction(1))
        _check_row(law, n, hand_riffle.exact_distances(n, 1, spread=spread))
        assert hand_riffle.exact_distances(n, 2, spread=spread) is None

    def test_clumpy_drops_have_no_exact_law(self):
        assert hand_riffle.HandRiffle(clump=2.0).exact_distances(52, 1) is None

    def test_strict_alternation_from_the_middle_is_a_faro(self):
        # worked by hand: cut exactly in half, clump 0 -> strict alternation; the first card
        # to fall comes from either hand with chance 1/2, giving the in- or the out-faro
        law = hand_riffle_mechanics(8, {4: Fraction(1)}, Fraction(0))
        out_faro = tuple(hand_riffle.weave_sources(8, "out"))
        in_faro = tuple(hand_riffle.weave_sources(8, "in"))
        assert law == {out_faro: Fraction(1, 2), in_faro: Fraction(1, 2)}
        decks = hand_riffle.sample(2000, 8, rng=3, spread=0.0, clump=0.0)
        assert set(_frequencies(decks)) == {out_faro, in_faro}

    @pytest.mark.parametrize(
        ("n", "spread", "clump", "times"),
        [(5, 1.5, 2.5, 1), (6, None, 0.5, 1), (5, 0.0, 0.0, 1), (4, 1.0, 3.0, 2)],
    )
    def test_sampler_chisquare(self, n, spread, clump, times):
        cut_law = hand_riffle.cut_law(n, spread)
        one = hand_riffle_mechanics(n, cut_law, Fraction(clump))
        law = _after(one, n, times)
        step = hand_riffle.HandRiffle(spread=spread, clump=clump)
        start = np.array([3, 1, 4, 0, 5, 2][:n]) if n == 6 else np.roll(np.arange(n), 1)
        observed = _sample_law(step, n, times, 50000, seed=21, start=start)
        assert chisquare_p(observed, _moved(law, start), 50000) > 1e-3

    @pytest.mark.parametrize("clump", [0.5, 3.0])
    def test_second_drop_at_52_cards(self, clump):
        # worked by hand from the drop rule: cut 26/26, the first card falls from either
        # hand with chance 1/2 and the second from the same hand with chance
        # 25 c / (25 c + 26)
        decks = hand_riffle.sample(40000, 52, rng=6, spread=0.0, clump=clump)
        left = decks[:, -2:] < 26  # the two bottom cards: did they come from the left?
        same = (left[:, 0] == left[:, 1]).mean()
        expected = 25 * clump / (25 * clump + 26)
        # binomial standard error sqrt(p(1-p)/40000) < 0.0025; 4 standard errors
        assert same == pytest.approx(expected, abs=0.01)
        assert left[:, 1].mean() == pytest.approx(0.5, abs=0.01)

    def test_bad_input(self):
        with pytest.raises(InputError, match="hand-riffle: clump must be a number >= 0"):
            hand_riffle.HandRiffle(clump=-0.5)
        with pytest.raises(InputError, match="hand-riffle: spread must be"):
            hand_riffle.HandRiffle(spread=float("nan"))


class TestWeave:
    def test_hand_worked_eight_cards(self):
        # worked by hand: halves 0123 / 4567 interleaved
        out = hand_riffle.sample_weave(1, 8, faro="out")[0]
        assert out.tolist() == [0, 4, 1, 5, 2, 6, 3, 7]
        inn = hand_riffle.sample_weave(1, 8, faro="in")[0]
        assert inn.tolist() == [4, 0, 5, 1, 6, 2, 7, 3]

    def test_odd_deck_by_hand(self):
        # worked by hand: out keeps the larger top half on the even positions
        assert hand_riffle.weave_sources(7, "out").tolist() == [0, 4, 1, 5, 2, 6, 3]
        assert hand_riffle.weave_sources(7, "in").tolist() == [3, 0, 4, 1, 5, 2, 6]

    def test_fifty_two_cards(self):
        # Diaconis, Graham & Kantor (1983): 8 out-faros restore a 52-card deck, 52 in-faros
        # (the numbers recalled from memory; they are ord_51(2) and ord_53(2), which the
        # next test computes with sympy)
        for faro, order in (("out", 8), ("in", 52)):
            decks = hand_riffle.sample_weave(1, 52, order, faro=faro)
            assert decks[0].tolist() == list(range(52))
            for k in range(1, order):
                assert hand_riffle.sample_weave(1, 52, k, faro=faro)[0].tolist() != list(range(52))

    @pytest.mark.parametrize("n", range(4, 61, 2))
    def test_orders_are_orders_of_two(self, n):
        # Diaconis, Graham & Kantor (1983): out-faro order = ord_{n-1}(2), in-faro order =
        # ord_{n+1}(2) for an even deck; the multiplicative orders from sympy.n_order
        for faro, modulus in (("out", n - 1), ("in", n + 1)):
            src = hand_riffle.weave_sources(n, faro)
            perm = Permutation(src.tolist())
            assert perm.order() == sympy.n_order(2, modulus)

    def test_deterministic_and_says_so(self):
        step = hand_riffle.Weave()
        assert step.deterministic
        assert "mixes nothing" in step.summary
        row = step.exact_distances(52, 3)
        assert row.separation == 1.0
        assert row.kl_bits == pytest.approx(math.log2(math.factorial(52)))

    def test_bad_input(self):
        with pytest.raises(InputError, match="weave: faro must be 'out' or 'in'"):
            hand_riffle.Weave(faro="sideways")


# ---------------------------------------------------------------------------------------
# strip and overhand


class TestStrip:
    @pytest.mark.parametrize("n", [3, 4, 5, 6])
    @pytest.mark.parametrize(
        "rule", [{"packets": 3.0}, {"size": 2.5}, {"packets": 1.0}, {"size": 1.0}]
    )
    def test_one_strip_exact_against_brute_force(self, n, rule):
        p = overhand.boundary_probability(n, **rule)
        expected_p = (Fraction(rule["packets"]) - 1) / (n - 1) if "packets" in rule else None
        if expected_p is not None:
            assert p == expected_p
        else:
            assert p == 1 / Fraction(rule["size"])
        law = strip_mechanics(n, p)
        _check_row(law, n, overhand.exact_distances(n, 1, **rule))
        support = sum(1 for q in law.values() if q)
        assert support == (2 ** (n - 1) if 0 < p < 1 else 1)  # boundaries = descents

    @pytest.mark.parametrize(
        ("n", "step", "times"),
        [
            (5, overhand.Strip(packets=3.0), 1),
            (6, overhand.Strip(size=2.5), 1),
            (6, overhand.Overhand(), 1),
            (5, overhand.Strip(), 3),
        ],
    )
    def test_sampler_chisquare(self, n, step, times):
        law = _after(strip_mechanics(n, step.boundary_probability(n)), n, times)
        start = np.array([4, 2, 0, 3, 1, 5][:n]) if n == 6 else np.array([4, 2, 0, 3, 1])
        observed = _sample_law(step, n, times, 50000, seed=31, start=start)
        assert chisquare_p(observed, _moved(law, start), 50000) > 1e-3

    @pytest.mark.parametrize("k", [1, 2, 3, 4])
    def test_same_distances_as_pemantles_statement(self, k):
        # brute force: k strips = k of Pemantle's (1989) in-place reversals, followed by
        # reversing the deck when k is odd; hence the same distances to uniform
        n, p = 5, Fraction(1, 3)
        ours = _after(strip_mechanics(n, p), n, k)
        his = _after(strip_mechanics(n, p, in_place=True), n, k)
        for perm in itertools.permutations(range(n)):
            image = tuple(reversed(perm)) if k % 2 else perm
            assert ours.get(perm, 0) == his.get(image, 0)

    def test_strip_and_overhand_defaults(self):
        assert overhand.Strip().boundary_probability(52) == Fraction(4, 51)
        assert overhand.Overhand().boundary_probability(52) == Fraction(1, 5)
        assert overhand.Overhand(packets=5.0).boundary_probability(52) == Fraction(4, 51)
        assert overhand.Strip().describe() == "strip"
        assert overhand.Strip(packets=5) == overhand.Strip()  # one canonical form
        assert overhand.Strip(packets=7.0).describe() == "strip(packets=7.0)"

    def test_mean_number_of_packets(self):
        decks = overhand.sample(20000, 52, rng=4, packets=6.0)
        packets = 1 + (decks[:, 1:] < decks[:, :-1]).sum(axis=1)  # boundaries = descents
        # the mean is exactly 6 under the model; 20000 decks give a standard error ~0.013
        assert packets.mean() == pytest.approx(6.0, abs=0.06)

    def test_bad_input(self):
        with pytest.raises(InputError, match=r"strip: packets must be a number >= 1, got 0"):
            overhand.Strip(packets=0)
        with pytest.raises(InputError, match="overhand: give packets or size, not both"):
            overhand.Overhand(packets=4.0, size=3.0)
        with pytest.raises(InputError, match="strip: packets must be at most the number"):
            overhand.Strip(packets=60.0).check_cards(52)


# ---------------------------------------------------------------------------------------
# pile deal


class TestPile:
    def test_hand_worked_ten_cards_three_piles(self):
        # worked by hand: piles 9 6 3 0 | 7 4 1 | 8 5 2 (top first)
        assert pile.sample(1, 10, piles=3)[0].tolist() == [9, 6, 3, 0, 7, 4, 1, 8, 5, 2]
        assert pile.sample(1, 10, piles=3, pickup="reverse")[0].tolist() == [
            8, 5, 2, 7, 4, 1, 9, 6, 3, 0,
        ]  # fmt: skip
        assert pile.sample(1, 10, piles=3, pickup="2-3-1")[0].tolist() == [
            7, 4, 1, 8, 5, 2, 9, 6, 3, 0,
        ]  # fmt: skip

    def test_one_pile_reverses_and_n_piles_restore(self):
        # worked by hand: dealing into one pile reverses the deck; into n piles of one card
        # each, picked up in dealing order, it restores it
        assert pile.sample(1, 6, piles=1)[0].tolist() == [5, 4, 3, 2, 1, 0]
        assert pile.sample(1, 6, piles=6)[0].tolist() == [0, 1, 2, 3, 4, 5]

    def test_deterministic_and_says_so(self):
        step = pile.Pile()
        assert step.deterministic
        assert "mixes nothing" in step.summary
        assert "mixes nothing" in pile.__doc__
        for times in (1, 4):
            row = step.exact_distances(52, times)
            assert row.kind == "exact"
            assert row.total_variation == pytest.approx(1.0)
            assert row.separation == 1.0
            assert row.kl_bits == pytest.approx(math.log2(math.factorial(52)))
            assert "mixes nothing" in row.note
        # exact at small n: 1 - 1/n! (brute force over the 3! arrangements)
        law = {tuple(pile.pile_sources(3, 2)): Fraction(1)}
        _check_row(law, 3, step.exact_distances(3, 1))

    def test_canonical_pickup_text(self):
        assert pile.Pile(piles=3, pickup="2, 3, 1").describe() == "pile(piles=3, pickup=2-3-1)"
        assert pile.Pile(piles=3, pickup="1/2/3") == pile.Pile(piles=3)
        assert pile.Pile(piles=3, pickup="3 2 1").pickup == "reverse"

    def test_repeated_equals_applied_twice(self):
        step = pile.Pile(piles=4, pickup="3-1-4-2")
        rng = np.random.default_rng(0)
        decks = rng.permuted(identity_decks(5, 13), axis=1)
        twice = step.apply(step.apply(decks, rng), rng)
        assert (step.apply_repeated(decks, 2, rng) == twice).all()

    def test_bad_input(self):
        with pytest.raises(InputError, match="pile: piles must be an integer >= 1, got 0"):
            pile.Pile(piles=0)
        with pytest.raises(InputError, match=r"must name each of the piles 1\.\.3 exactly once"):
            pile.Pile(piles=3, pickup="1-1-2")
        with pytest.raises(InputError, match="pile: pickup must be 'forward', 'reverse'"):
            pile.Pile(pickup="sideways")
        with pytest.raises(InputError, match="pile: 5 piles need at least 5 cards"):
            pile.Pile().check_cards(4)


# ---------------------------------------------------------------------------------------
# shelf machine

SHELF_CASES = [(3, 1), (3, 2), (4, 2), (4, 3), (5, 2), (5, 3), (6, 2)]


class TestShelf:
    def test_valley_counts_oeis_a008303(self):
        # OEIS A008303 (permutations of [n] with k peaks), rows n = 1..8; peaks and valleys
        # have the same counts (complement every label)
        rows = [
            [1],
            [2],
            [4, 2],
            [8, 16],
            [16, 88, 16],
            [32, 416, 272],
            [64, 1824, 2880, 272],
            [128, 7680, 24576, 7936],
        ]
        for n, row in enumerate(rows, start=1):
            assert list(shelf.valley_counts(n)) == row
        for n in range(1, 8):  # brute force over all n! arrangements
            counts = Counter(_valleys(p) for p in itertools.permutations(range(n)))
            assert [counts[v] for v in range(len(counts))] == list(shelf.valley_counts(n))

    @pytest.mark.parametrize(("n", "m"), SHELF_CASES)
    def test_closed_form_against_brute_force(self, n, m):
        # brute force over every shelf and side choice, exact fractions
        law = shelf_mechanics(n, m)
        for perm in itertools.permutations(range(n)):
            assert law.get(perm, 0) == shelf.arrangement_probability(perm, 1, shelves=m)
        _check_row(law, n, shelf.exact_distances(n, 1, shelves=m))

    @pytest.mark.parametrize(("n", "m"), [(4, 2), (4, 3), (5, 2)])
    def test_random_stacking_order_has_the_same_law(self, n, m):
        assert shelf_mechanics(n, m, random_order=True) == shelf_mechanics(n, m)

    @pytest.mark.parametrize(("n", "m", "k"), [(4, 2, 2), (4, 3, 2), (5, 2, 2), (4, 2, 3)])
    def test_passes_compose_into_more_shelves(self, n, m, k):
        # brute force: k passes through m shelves = one pass through 2^(k-1) m^k shelves
        law = _after(shelf_mechanics(n, m), n, k)
        assert shelf.equivalent_shelves(m, k) == 2 ** (k - 1) * m**k
        for perm in itertools.permutations(range(n)):
            assert law.get(perm, 0) == shelf.arrangement_probability(perm, k, shelves=m)
        _check_row(law, n, shelf.exact_distances(n, k, shelves=m))

    def test_two_different_machines_compose(self):
        # brute force: 2 shelves then 3 shelves = one pass through 2 * 2 * 3 = 12 shelves
        n = 4
        first = _as_outcomes(shelf_mechanics(n, 2))
        second = _as_outcomes(shelf_mechanics(n, 3))
        law = _brute.compose({tuple(range(n)): 1}, first)
        law = _brute.compose(law, second)
        total = sum(law.values())
        for perm in itertools.permutations(range(n)):
            expected = shelf.arrangement_probability(perm, 1, shelves=12)
            assert Fraction(law.get(perm, 0), total) == expected

    @pytest.mark.parametrize(("n", "m"), [(7, 4), (12, 10), (30, 10), (52, 10), (52, 200)])
    def test_two_forms_of_the_formula_agree(self, n, m):
        # formula (1) by polynomial products vs the alternating form (2) used by the library
        def times(a, b):
            out = [0] * (len(a) + len(b) - 1)
            for i, x in enumerate(a):
                for j, y in enumerate(b):
                    out[i + j] += x * y
            return out

        numerators = shelf.valley_numerators(n, m)
        for v, value in enumerate(numerators):
            poly = [1]
            for _ in range(v):
                poly = times(poly, [0, 2, 1])
            for _ in range(n - 1 - 2 * v):
                poly = times(poly, [1, 1])
            direct = sum(math.comb(m, j) * 2**j * poly[j - 1] for j in range(1, min(m, n) + 1))
            assert value == direct

    @pytest.mark.parametrize("n", [2, 10, 52, 416])
    def test_law_sums_to_one(self, n):
        assert sum(shelf.valley_law(n, 1, shelves=10)) == 1
        assert sum(shelf.valley_law(n, 2, shelves=10)) == 1

    @pytest.mark.parametrize(
        ("n", "m", "stack", "times"),
        [(5, 3, "fixed", 1), (5, 2, "random", 1), (4, 2, "fixed", 2), (5, 2, "random", 2)],
    )
    def test_sampler_chisquare(self, n, m, stack, times):
        law = _after(shelf_mechanics(n, m), n, times)
        step = shelf.Shelf(shelves=m, stack=stack)
        start = np.array([2, 4, 0, 1, 3][:n]) if n == 5 else np.array([1, 3, 0, 2])
        observed = _sample_law(step, n, times, 60000, seed=41, start=start)
        assert chisquare_p(observed, _moved(law, start), 60000) > 1e-3
        # one pass at a time through apply, as well as apply_repeated's combined passes
        rng = np.random.default_rng(42)
        decks = np.tile(start, (60000, 1))
        for _ in range(times):
            decks = step.apply(decks, rng)
        assert chisquare_p(_frequencies(decks), _moved(law, start), 60000) > 1e-3

    @pytest.mark.parametrize(("passes", "stack"), [(1, "fixed"), (1, "random"), (2, "fixed")])
    def test_valleys_at_52_cards(self, passes, stack):
        # the exact valley law (formula (2) x A008303) against sampled 52-card decks
        decks = shelf.sample(20000, 52, passes, rng=50 + passes, stack=stack)
        v = ((decks[:, :-2] > decks[:, 1:-1]) & (decks[:, 1:-1] < decks[:, 2:])).sum(axis=1)
        law = shelf.valley_law(52, passes, shelves=10)
        expected = {(k,): p for k, p in enumerate(law)}
        observed = Counter((int(x),) for x in v)
        assert chisquare_p(observed, expected, len(decks)) > 1e-3

    def test_ten_shelves_one_and_two_passes(self):
        # exact values of our formula; one pass of 10 shelves is far from random for 52
        # cards (Diaconis, Fulman & Holmes 2013 reach the same conclusion)
        one = shelf.exact_distances(52, 1)
        two = shelf.exact_distances(52, 2)
        assert one.total_variation > 0.99
        assert two.total_variation < 0.02
        same = shelf.exact_distances(52, 1, shelves=200)  # 2 * 10^2 equivalent shelves
        assert (two.total_variation, two.separation, two.kl_bits) == (
            same.total_variation,
            same.separation,
            same.kl_bits,
        )

    @given(st.integers(3, 80), st.integers(1, 12), st.integers(0, 2**32 - 1))
    @settings(max_examples=30, deadline=None)
    def test_at_most_m_minus_one_valleys(self, n, m, seed):
        # worked by hand from the mechanics: no shelf's pile has a valley, so after one
        # pass valleys sit only at the m - 1 joins between piles
        decks = shelf.sample(50, n, 1, rng=seed, shelves=m)
        v = ((decks[:, :-2] > decks[:, 1:-1]) & (decks[:, 1:-1] < decks[:, 2:])).sum(axis=1)
        assert v.max() <= m - 1
        law = shelf.valley_law(n, 1, shelves=m)
        assert all(p == 0 for p in law[m:])

    def test_distance_curve_and_policy_minimum(self):
        # our exact formula: two passes of 10 shelves bring 52 cards under TV 0.1, one does not
        curve = shelf.distance_curve(52, 4)
        assert [r.steps for r in curve.rows] == [1, 2, 3, 4]
        assert minimum_steps(curve.rows, "total-variation", 0.1) == 2
        tvs = [r.total_variation for r in curve.rows]
        assert tvs == sorted(tvs, reverse=True)

    def test_bad_input(self):
        with pytest.raises(
            InputError, match="shelf: shelves must be an integer from 1 to 524,288, got 0"
        ):
            shelf.Shelf(shelves=0)
        with pytest.raises(InputError, match="shelf: stack must be 'fixed' or 'random'"):
            shelf.Shelf(stack="shuffled")


# ---------------------------------------------------------------------------------------
# every step: registration, parameter types, permutations


KEYWORDS = {
    "hand-riffle": hand_riffle.HandRiffle,
    "weave": hand_riffle.Weave,
    "strip": overhand.Strip,
    "overhand": overhand.Overhand,
    "cut": cut.Cut,
    "pile": pile.Pile,
    "shelf": shelf.Shelf,
}
PLAIN_TYPES = {int, float, str, bool, int | None, float | None, str | None}


class TestRegistry:
    @pytest.mark.parametrize("keyword", sorted(KEYWORDS))
    def test_registered_with_plain_parameter_types(self, keyword):
        cls = step_types()[keyword]
        assert cls is KEYWORDS[keyword]
        hints = typing.get_type_hints(cls)
        for field in dataclasses.fields(cls):
            assert hints[field.name] in PLAIN_TYPES, (keyword, field.name, hints[field.name])
        assert cls().describe() == keyword
        assert cls.deterministic == (keyword in ("pile", "weave"))


def _step_strategy():
    spreads = st.one_of(st.none(), st.floats(0, 10))
    return st.one_of(
        st.builds(hand_riffle.HandRiffle, spread=spreads, clump=st.floats(0, 5, allow_nan=False)),
        st.builds(hand_riffle.Weave, faro=st.sampled_from(["out", "in"])),
        st.builds(overhand.Strip, size=st.floats(1, 30)),
        st.builds(overhand.Overhand, size=st.floats(1, 30)),
        st.builds(cut.Cut, spread=spreads, least=st.integers(1, 2)),
        st.builds(
            pile.Pile, piles=st.integers(1, 4), pickup=st.sampled_from(["forward", "reverse"])
        ),
        st.builds(
            shelf.Shelf, shelves=st.integers(1, 30), stack=st.sampled_from(["fixed", "random"])
        ),
    )


class TestPermutations:
    @given(_step_strategy(), st.integers(4, 70), st.integers(1, 3), st.integers(0, 2**32 - 1))
    @settings(max_examples=80, deadline=None)
    def test_sampled_rows_are_permutations(self, step, n, times, seed):
        rng = np.random.default_rng(seed)
        decks = rng.permuted(identity_decks(7, n), axis=1)
        out = step.apply_repeated(decks, times, rng)
        assert out.shape == decks.shape and out.dtype == decks.dtype
        assert (np.sort(out, axis=1) == np.arange(n)).all()
        one = step.apply(decks, rng)
        assert (np.sort(one, axis=1) == np.arange(n)).all()
