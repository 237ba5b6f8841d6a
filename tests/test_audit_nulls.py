"""Exact null laws (OEIS, brute force over all n! arrangements) and exact sum tails
(integer convolution, scipy.stats)."""

from __future__ import annotations

import itertools
import math
from collections import Counter
from fractions import Fraction

import numpy as np
import pytest
from scipy import special, stats

from shufflecheck.common.errors import InputError
from shufflecheck.stats import nulls
from tests._brute import cycle_count


def _brute(n: int, statistic) -> tuple[int, dict[int, int]]:
    counts = Counter(statistic(p) for p in itertools.permutations(range(n)))
    return math.factorial(n), counts


def _law_counts(law: nulls.Law) -> dict[int, int]:
    return {law.offset + k: c for k, c in enumerate(law.counts) if c}


def _rising(p):
    where = {card: i for i, card in enumerate(p)}
    return 1 + sum(where[c + 1] < where[c] for c in range(len(p) - 1))


def _adjacent(p):
    return sum(abs(p[i + 1] - p[i]) == 1 for i in range(len(p) - 1))


BRUTE = {
    "rising": (nulls.rising_law, _rising),
    "descents": (nulls.descents_law, lambda p: sum(p[i] > p[i + 1] for i in range(len(p) - 1))),
    "fixed": (nulls.fixed_points_law, lambda p: sum(p[i] == i for i in range(len(p)))),
    "cycles": (nulls.cycles_law, cycle_count),
    "inversions": (
        nulls.inversions_law,
        lambda p: sum(p[i] > p[j] for i in range(len(p)) for j in range(i + 1, len(p))),
    ),
    "successions": (
        nulls.successions_law,
        lambda p: sum(p[i + 1] == p[i] + 1 for i in range(len(p) - 1)),
    ),
    "adjacent": (nulls.adjacent_pairs_law, _adjacent),
    "top": (nulls.card_position_law, lambda p: p.index(0)),
}


class TestPerDeckLaws:
    @pytest.mark.parametrize("name", sorted(BRUTE))
    @pytest.mark.parametrize("n", range(1, 8))
    def test_brute_force(self, name, n):
        # brute force over all n! arrangements
        law_fn, stat = BRUTE[name]
        total, counts = _brute(n, stat)
        law = law_fn(n)
        exact = {v: Fraction(c, total) for v, c in counts.items()}
        assert {v: law.probability(v) for v in _law_counts(law)} == exact

    def test_adjacency_brute_force_n8(self):
        # brute force over all 8! arrangements
        total, counts = _brute(8, _adjacent)
        assert _law_counts(nulls.adjacent_pairs_law(8)) == dict(counts)
        assert sum(counts.values()) == total

    def test_adjacency_oeis_a001100(self):
        # OEIS A001100, rows n = 1..10 (permutations with k rising or falling successions)
        expected = [
            1, 0, 2, 0, 4, 2, 2, 10, 10, 2, 14, 40, 48, 16, 2, 90, 230, 256, 120, 22, 2,
            646, 1580, 1670, 888, 226, 28, 2, 5242, 12434, 12846, 7198, 2198, 366, 34, 2,
            47622, 110320, 112820, 64968, 22120, 4448, 540, 40, 2,
            479306, 1090270, 1108612, 650644, 236968, 54304, 7900, 748, 46, 2,
        ]  # fmt: skip
        got = [v for n in range(1, 11) for v in nulls.adjacency_row(n)]
        assert got == expected

    def test_adjacency_oeis_a002464(self):
        # OEIS A002464 (Hertzsprung's problem), n = 0..15
        expected = [
            1, 1, 0, 0, 2, 14, 90, 646, 5242, 47622, 479306, 5296790, 63779034, 831283558,
            11661506218, 175203184374,
        ]  # fmt: skip
        assert [nulls.adjacency_row(n)[0] for n in range(16)] == expected

    def test_adjacency_large_n_is_a_law(self):
        row = nulls.adjacency_row(52)
        assert sum(row) == math.factorial(52)
        assert all(v >= 0 for v in row)
        # mean number of kept neighbour pairs is 2(n-1)/n (each of n-1 pairs, chance 2/n)
        law = nulls.adjacent_pairs_law(52)
        assert law.mean == Fraction(2 * 51, 52)

    def test_oeis_rows(self):
        # OEIS A008292 (Eulerian) row 5; A008290 (rencontres) row 5; A132393 (Stirling I)
        # row 5; A008302 (Mahonian) row 4; A000255 a(0..6) as the zero-succession column
        assert nulls.rising_law(5).counts == (1, 26, 66, 26, 1)
        assert nulls.fixed_points_law(5).counts == (44, 45, 20, 10, 0, 1)
        assert nulls.cycles_law(5).counts == (24, 50, 35, 10, 1)
        assert nulls.inversions_law(4).counts == (1, 3, 5, 6, 5, 3, 1)
        assert [nulls.successions_law(m + 1).counts[0] for m in range(7)] == [
            1, 1, 3, 11, 53, 309, 2119,
        ]  # fmt: skip

    def test_guessing_law_is_poisson_binomial(self):
        # scipy.stats.poisson_binom with p_j = 1/j, j = 1..n
        for n in (5, 13, 52):
            law = nulls.guessing_law(n)
            ref = stats.poisson_binom.pmf(np.arange(n + 1), [1 / j for j in range(1, n + 1)])
            ours = np.zeros(n + 1)
            ours[law.offset : law.high + 1] = law.pmf
            np.testing.assert_allclose(ours, ref, rtol=1e-9, atol=1e-300)

    def test_moments(self):
        # textbook moments of a uniform permutation (Stanley, Enumerative Combinatorics I,
        # 2nd ed., 2012): descents mean (n-1)/2, variance (n+1)/12 (so rising sequences =
        # descents of the inverse + 1 have mean (n+1)/2); fixed points mean and variance 1;
        # inversions mean n(n-1)/4
        law = nulls.rising_law(52)
        assert law.mean == Fraction(53, 2)  # (n+1)/2 rising sequences
        assert law.variance == Fraction(53, 12)  # (n+1)/12
        assert nulls.fixed_points_law(52).mean == 1
        assert nulls.fixed_points_law(52).variance == 1
        assert nulls.inversions_law(52).mean == Fraction(52 * 51, 4)


def _runs_of(word):
    return 1 + sum(word[i] != word[i + 1] for i in range(len(word) - 1)) if word else 0


class TestRuns:
    @pytest.mark.parametrize(
        "counts", [(1,), (3,), (2, 2), (3, 1), (2, 2, 2), (3, 2, 1), (2, 1, 1, 1), (4, 3, 2)]
    )
    def test_brute_force_words(self, counts):
        # brute force over all distinct words with these letter counts
        letters = [k for k, c in enumerate(counts) for _ in range(c)]
        words = set(itertools.permutations(letters))
        got = Counter(_runs_of(w) for w in words)
        row = nulls.runs_row(counts)
        assert {r: c for r, c in enumerate(row) if c} == dict(got)
        assert sum(row) == len(words)

    def test_brute_force_cards(self):
        # brute force over all 8! arrangements of a pack with suits (3, 3, 2)
        suits = [0, 0, 0, 1, 1, 1, 2, 2]
        got = Counter(_runs_of([suits[c] for c in p]) for p in itertools.permutations(range(8)))
        law = nulls.runs_law([3, 3, 2])
        scale = math.factorial(8) // law.total
        assert {law.offset + k: c * scale for k, c in enumerate(law.counts)} == dict(got)

    def test_two_colours_wald_wolfowitz(self):
        # Wald & Wolfowitz (1940): with m and k letters, P(2j runs) = 2 C(m-1,j-1) C(k-1,j-1)
        # / C(m+k,m) and P(2j+1 runs) = [C(m-1,j) C(k-1,j-1) + C(m-1,j-1) C(k-1,j)] / C(m+k,m)
        m, k = 26, 26
        row = nulls.runs_row((m, k))
        c = math.comb
        for j in range(1, 27):
            assert row[2 * j] == 2 * c(m - 1, j - 1) * c(k - 1, j - 1)
            if 2 * j + 1 < len(row):
                odd = c(m - 1, j) * c(k - 1, j - 1) + c(m - 1, j - 1) * c(k - 1, j)
                assert row[2 * j + 1] == odd

    def test_order_of_categories_does_not_matter(self):
        assert nulls.runs_law([13, 13, 13, 13, 2]) == nulls.runs_law([2, 13, 13, 13, 13])
        assert (
            sum(nulls.runs_row((13, 13, 13, 13))) == math.factorial(52) // math.factorial(13) ** 4
        )


def _exact_sum(law: nulls.Law, decks: int) -> tuple[list[int], int, int]:
    row = [1]
    for _ in range(decks):
        new = [0] * (len(row) + len(law.counts) - 1)
        for i, a in enumerate(row):
            for j, b in enumerate(law.counts):
                new[i + j] += a * b
        row = new
    return row, law.total**decks, decks * law.offset


class TestSumTails:
    @pytest.mark.parametrize(
        ("law", "decks"),
        [
            (nulls.rising_law(6), 5),
            (nulls.inversions_law(5), 7),
            (nulls.fixed_points_law(7), 6),
            (nulls.guessing_law(8), 10),
            (nulls.runs_law([2, 2, 2]), 9),
            (nulls.card_position_law(4), 1),
        ],
    )
    def test_against_exact_integer_convolution(self, law, decks):
        # exact integer convolution, every possible total, including both extreme tails
        row, total, offset = _exact_sum(law, decks)
        cum = list(itertools.accumulate(row))
        for t in range(len(row)):
            lower = Fraction(cum[t], total)
            upper = Fraction(total - (cum[t - 1] if t else 0), total)
            lo, up = nulls.sum_tail_logs(law, decks, t + offset)
            # absolute error in the log = relative error in the probability
            assert lo == pytest.approx(math.log(lower), abs=1e-9)
            assert up == pytest.approx(math.log(upper), abs=1e-9)

    @pytest.mark.parametrize("decks", [1000, 10**6])
    def test_binomial_against_scipy(self, decks):
        # with n = 2 the fixed-point count is 0 or 2, each with chance 1/2, so the sum over
        # D decks is 2 x Binomial(D, 1/2): scipy.stats.binom (logsf, logcdf)
        law = nulls.fixed_points_law(2)
        sd = math.sqrt(decks) / 2
        for z in (0.0, 0.5, 2.0, 5.0, 20.0):
            k = round(decks / 2 + z * sd)
            lo, up = nulls.sum_tail_logs(law, decks, 2 * k)
            ref_up = stats.binom.logsf(k - 1, decks, 0.5)
            ref_lo = stats.binom.logcdf(k, decks, 0.5)
            assert up == pytest.approx(ref_up, rel=1e-8, abs=1e-10)
            assert lo == pytest.approx(ref_lo, rel=1e-8, abs=1e-10)

    def test_deep_binomial_tail_beyond_double_range(self):
        # log P(Bin(1e6, 1/2) >= k) far below 1e-308, summed term by term in log space with
        # scipy.special.gammaln (the terms fall geometrically; 20000 of them suffice)
        decks = 10**6
        law = nulls.fixed_points_law(2)
        for k in (520_000, 600_000, 900_000):
            j = np.arange(k, min(decks, k + 20_000) + 1)
            terms = (
                special.gammaln(decks + 1)
                - special.gammaln(j + 1)
                - special.gammaln(decks - j + 1)
                - decks * math.log(2)
            )
            ref = special.logsumexp(terms)
            _, up = nulls.sum_tail_logs(law, decks, 2 * k)
            assert up == pytest.approx(ref, rel=1e-9)

    def test_guessing_sum_against_poisson_binomial(self):
        # sum over 40 decks of a sum of Bernoulli(1/j): scipy.stats.poisson_binom.pmf with the
        # probabilities repeated 40 times, summed over each tail (scipy's own sf loses the
        # far upper tail, its pmf does not)
        n, decks = 10, 40
        probs = np.tile([1 / j for j in range(1, n + 1)], decks)
        pmf = stats.poisson_binom.pmf(np.arange(n * decks + 1), probs)
        law = nulls.guessing_law(n)
        for total in (41, 60, 100, 115, 150, 200, 250):
            lo, up = nulls.sum_tail_logs(law, decks, total)
            assert math.exp(up) == pytest.approx(pmf[total:].sum(), rel=1e-7)
            assert math.exp(lo) == pytest.approx(pmf[: total + 1].sum(), rel=1e-7)

    def test_extremes_and_outside(self):
        law = nulls.rising_law(52)
        lo, up = nulls.sum_tail_logs(law, 1000, 1000)  # every deck unshuffled
        assert up == 0.0
        assert lo == pytest.approx(1000 * (-math.log(math.factorial(52))))
        assert nulls.sum_tail_logs(law, 10, 5) == (-math.inf, 0.0)
        assert nulls.sum_tail_logs(law, 10, 521) == (0.0, -math.inf)

    def test_large_sums_are_fast_enough_to_run(self):
        # one million decks of 52 cards on the widest law (inversions): a finite answer
        law = nulls.inversions_law(52)
        lo, up = nulls.sum_tail_logs(law, 10**6, 663 * 10**6 + 200_000)
        assert math.isfinite(lo) and math.isfinite(up)
        assert up < math.log(0.01) < lo

    def test_p_values(self):
        law = nulls.rising_law(8)
        lo, up = nulls.sum_tail_logs(law, 30, 120)
        assert nulls.sum_p_value(law, 30, 120, "less") == lo
        assert nulls.sum_p_value(law, 30, 120, "greater") == up
        assert nulls.sum_p_value(law, 30, 120, "two-sided") == pytest.approx(
            min(0.0, math.log(2) + min(lo, up))
        )
        with pytest.raises(InputError, match="alternative"):
            nulls.sum_p_value(law, 30, 120, "both")
        with pytest.raises(InputError, match="number of decks"):
            nulls.sum_tail_logs(law, 0, 0)


class TestSumDistribution:
    def test_matches_exact(self):
        law = nulls.inversions_law(6)
        row, total, offset = _exact_sum(law, 4)
        dist = nulls.sum_distribution(law.pmf, 4, offset=law.offset)
        exact = np.array([c / total for c in row])
        got = np.zeros(len(row))
        got[dist.start - offset : dist.start - offset + dist.pmf.size] = dist.pmf
        np.testing.assert_allclose(got, exact, atol=1e-15)

    def test_critical_values(self):
        # against scipy.stats.binom.ppf / isf for 2 x Binomial(500, 1/2)
        law = nulls.fixed_points_law(2)
        dist = nulls.sum_distribution(law.pmf, 500)
        level = 1e-3
        c_lo = dist.lower_critical(level)
        c_hi = dist.upper_critical(level)

        def below(c):  # P(S <= c) = P(X <= floor(c/2))
            return stats.binom.cdf(c // 2, 500, 0.5)

        def above(c):  # P(S >= c) = P(X >= ceil(c/2))
            return stats.binom.sf(-(-c // 2) - 1, 500, 0.5)

        assert below(c_lo) <= level < below(c_lo + 1)
        assert above(c_hi) <= level < above(c_hi - 1)

    def test_bad_pmf(self):
        with pytest.raises(InputError, match="pmf"):
            nulls.sum_distribution(np.array([0.5, -0.1]), 3)


class TestSequentialClaim:
    @pytest.mark.parametrize("n", [3, 4])
    def test_consecutive_repeat_counts_are_iid_rencontres(self, n):
        # brute force over all (n!)^3 sequences of three decks: the repeat counts of the
        # pairs (1,2) and (2,3) are independent, each with the rencontres law
        perms = list(itertools.permutations(range(n)))
        joint = Counter()
        for a, b, c in itertools.product(perms, repeat=3):
            m1 = sum(x == y for x, y in zip(a, b, strict=True))
            m2 = sum(x == y for x, y in zip(b, c, strict=True))
            joint[m1, m2] += 1
        law = nulls.repeat_positions_law(n)
        f = math.factorial(n)
        for (m1, m2), count in joint.items():
            assert Fraction(count, f**3) == law.probability(m1) * law.probability(m2)
        assert sum(joint.values()) == f**3


def test_law_checks():
    with pytest.raises(InputError, match="no zero"):
        nulls.Law((0, 1), 1)
    with pytest.raises(InputError, match="add up"):
        nulls.Law((1, 1), 3)
    with pytest.raises(InputError, match="at least 1 card"):
        nulls.rising_law(0)
    assert nulls.Law.from_counts([0, 0, 2, 1, 0], 3, offset=1) == nulls.Law((2, 1), 3, 3)
