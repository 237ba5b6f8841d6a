"""The fast kernels of issue 15 against the implementations they replaced.

Each check compares a fast path with a plain reference written out here (the project's
previous implementation, or the textbook recurrence): values must be identical (exact
integers, or floats to the last bit where the same integers are divided) or agree to the
stated tolerance.
"""

from __future__ import annotations

import json
import math
from fractions import Fraction
from functools import cache

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.core.characters import (
    character,
    character_table,
    group_eigenvalues,
    transposition_ratio,
)
from shufflecheck.core.counting import eulerian_row
from shufflecheck.core.distances import distances_from_groups
from shufflecheck.core.partitions import (
    content_sum,
    content_sums,
    dimension,
    log_dimensions,
    multiplicity_matrix,
    partitions,
    squared_dimension_sums,
)
from shufflecheck.models import riffle, transposition


def _eulerian_plain(n: int) -> tuple[int, ...]:
    # A(n, d) = (d + 1) A(n-1, d) + (n - d) A(n-1, d-1) (Comtet 1974, p. 243), whole rows
    row = [1]
    for m in range(2, n + 1):
        prev, row = row, [0] * m
        for d in range(m):
            row[d] = ((d + 1) * prev[d] if d < m - 1 else 0) + ((m - d) * prev[d - 1] if d else 0)
    return tuple(row)


def _riffle_reference(n: int, k: int, hands: int = 2):
    # the previous implementation: every Eulerian group through distances_from_groups
    a = hands**k
    numerators, value = [], math.comb(a + n - 1, n)
    for r in range(1, n + 1):
        numerators.append(value)
        value = value * (a - r) // (a + n - r) if a - r > 0 else 0
    return distances_from_groups(_eulerian_plain(n), numerators, a**n, math.factorial(n))


class TestEulerian:
    def test_half_rows_equal_whole_rows(self):
        for n in range(1, 120):
            assert eulerian_row(n) == _eulerian_plain(n)

    def test_no_recursion_limit(self):
        # the row of 2,000 used to recurse 2,000 deep; OEIS A008292: A(n, 0) = 1, A(n, 1) =
        # 2^n - n - 1, and the row sums to n!
        row = eulerian_row(2000)
        assert row[0] == row[-1] == 1
        assert row[1] == 2**2000 - 2001
        assert sum(row) == math.factorial(2000)


class TestRiffleCrossingPoint:
    @pytest.mark.parametrize("n", [2, 3, 7, 52, 133, 416])
    @pytest.mark.parametrize("hands", [2, 3])
    def test_identical_to_group_sums(self, n, hands):
        for k in range(1, 16):
            row = riffle.exact_distances(n, k, hands=hands)
            assert (row.total_variation, row.separation, row.kl_bits) == _riffle_reference(
                n, k, hands
            )

    def test_every_size_up_to_the_limit(self):
        curve = riffle.distance_curve(riffle.MAX_EXACT_CARDS, 3)
        assert [r.total_variation for r in curve.rows] == [1.0, 1.0, 1.0]
        row = riffle.exact_distances(600, 14)
        assert (row.total_variation, row.separation, row.kl_bits) == _riffle_reference(600, 14)


class TestTranspositionSpectrum:
    @pytest.mark.parametrize("n", [2, 3, 6, 11, 14])
    @pytest.mark.parametrize("hold", [None, 0.25, Fraction(1, 3)])
    def test_identical_to_shape_by_shape(self, n, hold):
        # the previous implementation: d_lambda^2 shape by shape (hook length formula)
        h = transposition.check_hold(n, hold)
        rows = []
        for lam in partitions(n):
            r = transposition_ratio(lam)
            value = h + (1 - h) * r if isinstance(h, Fraction) else h + (1 - h) * float(r)
            rows.append((lam, value, dimension(lam) ** 2))
        assert transposition.spectrum(n, hold=hold) == group_eigenvalues(rows)

    def test_hook_exponents_against_hook_lengths(self):
        # prime exponents of prod(hooks), checked against the hook lengths cell by cell
        from shufflecheck.core.partitions import hook_lengths, hook_product_exponents

        for n in (1, 2, 6, 13, 21):
            m = multiplicity_matrix(n)
            primes, exponents = hook_product_exponents(m)
            for row, e in zip(m, exponents, strict=True):
                shape = _state(row)
                product = math.prod(h for line in hook_lengths(shape) for h in line)
                assert product == math.prod(p**k for p, k in zip(primes, e.tolist(), strict=True))

    def test_squared_dimensions_by_content_sum(self):
        for n in (0, 1, 2, 3, 5, 17, 26):
            expected: dict[int, int] = {}
            for lam in partitions(n):
                c = content_sum(lam)
                expected[c] = expected.get(c, 0) + dimension(lam) ** 2
            assert squared_dimension_sums(n) == expected

    def test_exact_integers_in_json(self):
        rows = transposition.spectrum(40)
        assert all(type(r.multiplicity) is int for r in rows)
        assert sum(r.multiplicity for r in rows) == math.factorial(40)  # sum d^2 = n!

    def test_refused_up_front_beyond_the_limit(self):
        with pytest.raises(InputError, match=r"offered for 2\.\.64 cards"):
            transposition.spectrum(100)

    def test_bound_matches_float_dimensions(self):
        # the previous bound summed exp(2 ln d) per eigenvalue in floats (about 1e-13)
        n, h = 30, 1 / 30
        from scipy.special import logsumexp

        m = multiplicity_matrix(n)
        pairs = n * (n - 1) // 2
        eigen = h + (1 - h) * content_sums(m) / pairs
        keep = (m[:, n] != 1) & (eigen != 0)
        values, inverse = np.unique(np.abs(eigen[keep]), return_inverse=True)
        log_mult = 2 * log_dimensions(m)[keep]
        weights = np.array([logsumexp(log_mult[inverse == g]) for g in range(len(values))])
        for row in transposition.upper_bound_curve(n, 120):
            old = min(
                1.0, 0.5 * math.exp(0.5 * logsumexp(weights + 2 * row.steps * np.log(values)))
            )
            assert row.total_variation == pytest.approx(old, rel=1e-12)

    def test_one_chain_per_hold(self):
        chain = transposition.lumped_chain(9)
        assert transposition.lumped_chain(9, None) is chain
        assert transposition.lumped_chain(9, Fraction(1, 9)) is chain
        assert transposition.lumped_chain(9, 1 / 9) is chain


def _reference_chain(n: int, hold: float) -> dict[tuple[int, ...], dict[tuple[int, ...], float]]:
    # the lumped chain written out cycle type by cycle type (Diaconis & Shahshahani 1981,
    # Section 2): a transposition merges two cycles of lengths s, t (s t transpositions per
    # pair of cycles) or splits an L-cycle into j and L - j (L transpositions for j < L/2,
    # L/2 for j = L/2); each transposition has probability (1 - hold) / C(n, 2)
    pairs = n * (n - 1) // 2
    chain: dict[tuple[int, ...], dict[tuple[int, ...], float]] = {}
    for mu in partitions(n):
        counts: dict[tuple[int, ...], int] = {}
        cycles = list(mu)
        for i in range(len(cycles)):
            for j in range(i + 1, len(cycles)):
                rest = cycles[:i] + cycles[i + 1 : j] + cycles[j + 1 :] + [cycles[i] + cycles[j]]
                nu = tuple(sorted(rest, reverse=True))
                counts[nu] = counts.get(nu, 0) + cycles[i] * cycles[j]
            length = cycles[i]
            for part in range(1, length // 2 + 1):
                rest = cycles[:i] + cycles[i + 1 :] + [part, length - part]
                nu = tuple(sorted(rest, reverse=True))
                counts[nu] = counts.get(nu, 0) + (length if 2 * part < length else part)
        row = {nu: c * ((1.0 - hold) / pairs) for nu, c in counts.items()}
        row[mu] = row.get(mu, 0.0) + hold
        chain[mu] = row  # source mu -> destination nu
    return chain


def _state(row: np.ndarray) -> tuple[int, ...]:
    return tuple(s for s in range(len(row) - 1, 0, -1) for _ in range(int(row[s])))


def _previous_distances(law, uniform, z_values):
    # the previous distance pass, written out (TV, separation, KL bits)
    from scipy.special import xlogy

    tv = 0.5 * float(np.abs(law - uniform).sum())
    t = law * z_values
    separation = float(max(0.0, 1.0 - t.min()))
    kl = float(np.dot(law, np.log(np.maximum(t, 1e-300)))) / math.log(2)
    if kl < 1e-3:
        u = t - 1.0
        if float(np.abs(u).max()) < 1e-3:
            f = u * u * (0.5 + u * (-1.0 / 6.0 + u * (1.0 / 12.0 - u / 20.0)))
        else:
            f = xlogy(t, t) - u
            near = np.abs(u) < 1e-3
            un = u[near]
            f[near] = un * un * (0.5 + un * (-1.0 / 6.0 + un * (1.0 / 12.0 - un / 20.0)))
        kl = float(np.dot(uniform, f)) / math.log(2)
    return tv, separation, kl


class TestLumpedChain:
    @pytest.mark.parametrize("n", [2, 3, 4, 7, 10, 13])
    @pytest.mark.parametrize("hold", [None, 0.0, 0.3])
    def test_transitions_equal_the_written_out_chain(self, n, hold):
        # built without lookups (merges paired by row order): every transition probability
        # must equal the cycle-type-by-cycle-type chain exactly
        chain = transposition.lumped_chain(n, hold)
        h = float(transposition.check_hold(n, hold))
        reference = _reference_chain(n, h)
        states = [_state(row) for row in chain.multiplicities]
        assert sorted(states) == sorted(reference)
        dense = chain.matrix.toarray()
        for col, mu in enumerate(states):
            got = {states[r]: dense[r, col] for r in np.flatnonzero(dense[:, col])}
            expected = {nu: v for nu, v in reference[mu].items() if v != 0.0}
            assert got == expected
        # states run by rank n - (number of cycles), the identity first
        ranks = [n - len(mu) for mu in states]
        assert ranks == sorted(ranks) and chain.identity == 0
        assert chain.rank_ends.tolist() == np.cumsum(np.bincount(ranks, minlength=n)).tolist()

    def test_leading_rows_equal_whole_products(self):
        # products restricted to the states a walk from the identity can reach are the
        # whole products bit for bit
        chain = transposition.lumped_chain(26)
        whole = np.zeros(chain.matrix.shape[0])
        whole[chain.identity] = 1.0
        short = whole.copy()
        for k in range(1, 40):
            whole, short = chain.step(whole), chain.advance(short, k)
            assert np.array_equal(whole, short)
            reach = chain.rank_ends[min(k, 25)]
            assert not whole[reach:].any()

    @pytest.mark.parametrize(
        ("n", "hold", "steps"), [(30, None, 200), (18, 0.0, 120), (22, 0.3, 90)]
    )
    def test_rows_equal_the_previous_distance_pass(self, n, hold, steps):
        chain = transposition.lumped_chain(n, hold)
        uniform, z_values = chain.uniform, np.exp(chain.log_z)
        rows = transposition.distance_curve(n, steps, hold=hold, bound=False).rows
        law = np.zeros(len(uniform))
        law[chain.identity] = 1.0
        for k, row in enumerate(rows, start=1):
            law = chain.step(law)
            np.putmask(law, law < 1e-300, 0.0)
            expected = _previous_distances(law, uniform, z_values)
            got = (row.total_variation, row.separation, row.kl_bits)
            assert got == pytest.approx(expected, rel=1e-12, abs=1e-15), k


class TestTopToRandomChain:
    @pytest.mark.parametrize(
        ("n", "k"), [(2, 8), (3, 12), (7, 300), (13, 200), (52, 600), (180, 400)]
    )
    def test_chain_equals_exact_integers(self, n, k):
        # the double-precision chain on the number of distinct cards drawn against the
        # exact Stirling-number rows: within the stated bound, and near 1e-14 relative
        from shufflecheck.models import top_to_random as ttr

        exact, exact_bounds = ttr._integer_rows(n, k, None)
        chain, chain_bounds = ttr._chain_rows(n, k, None)
        bound = ttr.chain_error(n, k)
        for a, b, ab, bb in zip(exact, chain, exact_bounds, chain_bounds, strict=True):
            for x, y in ((a.total_variation, b.total_variation), (a.separation, b.separation)):
                assert abs(x - y) <= bound
                assert y == pytest.approx(x, rel=1e-12, abs=1e-300)
            assert abs(a.kl_bits - b.kl_bits) <= bound * (1 + a.kl_bits)
            assert b.kl_bits == pytest.approx(a.kl_bits, rel=2e-11, abs=1e-300)
            assert bb.total_variation == pytest.approx(ab.total_variation, rel=1e-12, abs=1e-300)
            assert b.kind == "exact" and "double precision" in b.note

    @pytest.mark.parametrize(("n", "k"), [(7, 300), (13, 200), (52, 600), (180, 400)])
    def test_chain_gaps_below_one_equal_the_integers(self, n, k):
        # 1 - TV and 1 - separation where the float rounds the value to 1 (summed in logs
        # by the chain) against the exact integers' gaps; after one step 1 - TV = n/n!
        # (n equally likely insertions), e.g. 1/51! for 52 cards
        from shufflecheck.models import top_to_random as ttr

        exact, _ = ttr._integer_rows(n, k, None)
        chain, _ = ttr._chain_rows(n, k, None)
        assert chain[0].below_one("total_variation") == pytest.approx(
            n / math.factorial(n), rel=1e-9
        )
        for a, b in zip(exact, chain, strict=True):
            for metric in ("total_variation", "separation"):
                x, y = a.below_one(metric), b.below_one(metric)
                if x == 0:  # exactly 1 (an arrangement of probability 0)
                    assert y == 0, (metric, b.steps)
                elif x > 1e-300:  # within the double range
                    assert y == pytest.approx(x, rel=1e-9), (metric, b.steps)
                else:  # positive, below the double range
                    assert 0 < y <= 1e-290, (metric, b.steps)

    def test_chain_never_prints_a_distance_of_one(self):
        # 312 cards (a six-pack shoe): the first steps are within 1e-300 of 1
        from shufflecheck.common.numbers import format_number
        from shufflecheck.models import top_to_random as ttr

        chain, _ = ttr._chain_rows(312, 3, None)
        for row in chain:
            gap = row.below_one("total_variation")
            assert gap > 0
            assert format_number(row.total_variation, below_one=gap) != "1"

    def test_method_by_work_and_the_defaults_fit(self):
        from shufflecheck.models import default_max_steps
        from shufflecheck.models import top_to_random as ttr

        assert ttr.curve_method(52, default_max_steps("top-to-random", 52)) == "integers"
        assert ttr.curve_method(52, 20_000) == "chain"
        steps = default_max_steps("top-to-random", 2000)  # within the limits
        assert steps == 22_803 <= ttr.MAX_CHAIN_STEPS  # ceil(1.5 n ln n)
        calls = []
        curve = ttr.distance_curve(2000, steps, progress=calls.append)
        assert calls == list(range(1, steps + 1))
        assert curve.rows[-1].total_variation < 2e-4 < curve.rows[steps // 2].total_variation
        assert "double precision" in curve.source
        with pytest.raises(InputError, match="200,000 steps"):
            ttr.distance_curve(52, ttr.MAX_CHAIN_STEPS + 1)


class TestCharacters:
    def test_table_equals_single_values(self):
        # two independent algorithms: the table's sparse rim-hook matrices and the
        # memoised recursion of character()
        table = character_table(13)
        for i, lam in enumerate(table.shapes):
            for j, mu in enumerate(table.classes):
                assert table.values[i, j] == character(lam, mu)

    @pytest.mark.parametrize(
        ("shape", "cycle_type"),
        [
            ((9, 7, 5, 3, 1), (3,) * 6 + (2,) * 2 + (1,) * 3),
            ((8, 8, 4, 4, 1), (7, 7, 5, 5, 1)),
            ((10, 6, 6, 2, 1), (5, 5, 3, 3, 3, 2, 2, 2)),
            ((12, 5, 4, 3, 1), (4,) * 5 + (3,) * 1 + (1,) * 2),
            ((6, 5, 4, 3, 2, 2, 2, 1), (2,) * 12 + (1,)),
        ],
    )
    def test_single_values_against_plain_recursion(self, shape, cycle_type):
        assert character(shape, cycle_type) == _plain_character(shape, cycle_type)

    def test_every_value_of_small_groups(self):
        # level-by-level rule, early exits and closed forms against the plain recursion
        for n in range(0, 10):
            for lam in partitions(n):
                for mu in partitions(n):
                    assert character(lam, mu) == _plain_character(lam, mu), (lam, mu)

    @pytest.mark.parametrize("block", [(2,) * 12, (3,) * 8, (4,) * 6, (6,) * 4, (5,) * 4 + (4,)])
    def test_closing_blocks_of_equal_parts(self, block):
        # the closed form for r^k (r-quotient, sign from the beads' final order) on every
        # shape of 24 cells, with and without parts before the block
        for lam in partitions(24):
            for mu in (block + (1,) * (24 - sum(block)), (24 - sum(block), *block)):
                mu = tuple(p for p in mu if p)
                assert character(lam, mu) == _plain_character(lam, mu), (lam, mu)

    def test_arguments_in_any_form(self):
        # the fast argument path and the checked one agree; bad input still names the part
        assert character([4, 2, 1], [1, 2, 4]) == character((4, 2, 1), (4, 2, 1))
        assert character((), ()) == 1
        for shape, cycle_type, message in [
            ((3, 1.5), (4.5,), "not an integer"),
            ((2, 3), (5,), "weakly decreasing"),
            ((3, 0), (3,), "positive"),
            ((3,), (3, 0), "positive"),
            ((3,), (2.5, 0.5), "not an integer"),
        ]:
            with pytest.raises(InputError, match=message):
                character(shape, cycle_type)


def _plain_character(shape, cycle_type) -> int:
    # Murnaghan-Nakayama on beta-sets (James & Kerber 1981, 2.4.7), parts largest first,
    # memoised on (beads, parts used): no closed forms, no reordering
    parts = tuple(sorted(cycle_type, reverse=True))
    start = frozenset(p + len(shape) - 1 - i for i, p in enumerate(shape))

    @cache
    def chi(beads: frozenset[int], k: int) -> int:
        if k == len(parts):
            return 1
        r, total = parts[k], 0
        for b in beads:
            if b >= r and b - r not in beads:
                sign = -1 if sum(1 for c in beads if b - r < c < b) % 2 else 1
                total += sign * chi((beads - {b}) | {b - r}, k + 1)
        return total

    return chi(start, 0)


class TestJson:
    def test_one_pass_equals_cleaning_round_trip(self):
        from shufflecheck.cli._app import _clean, _json_default, to_json

        payload = {"a": [1, 2.5, Fraction(1, 3)], "b": {"c": np.int64(4), 5: (1, 2)}}
        slow = json.dumps(_clean(json.loads(json.dumps(payload, default=_json_default))), indent=2)
        assert to_json(payload) == slow
        assert json.loads(to_json({"x": float("inf")})) == {"x": "inf"}


class TestSimulatedLogs:
    @pytest.mark.parametrize("count", [0, 1, 2, 3, 10, 99, 1000])
    def test_blocked_composition_equals_deck_by_deck(self, count):
        from shufflecheck.models.procedures import running_composition

        rng = np.random.default_rng(count)
        relative = np.argsort(rng.random((count, 9)), axis=1).astype(np.int16)
        expected, current = np.empty_like(relative), np.arange(9)
        for t in range(count):  # the previous loop: deck_t = deck_{t-1}[relative_t]
            current = current[relative[t]]
            expected[t] = current
        assert (running_composition(relative) == expected).all()

    @pytest.mark.parametrize("reference", ["previous", "first"])
    @pytest.mark.parametrize(
        ("decks", "change", "repeats"),
        [(1, None, 1), (5, None, 2), (70_000, None, 1), (70_000, 1, 1), (70_000, 3, 1)],
    )
    def test_simulated_play_equals_whole_array_composition(self, reference, decks, change, repeats):
        # the previous implementation: every relative permutation drawn first (one
        # Procedure.sample per segment), then composed deck by deck onto the one before
        from shufflecheck.models.procedures import parse_procedure, simulate_play

        procedure, other = parse_procedure("riffle x2, cut"), parse_procedure("strip")
        generator = np.random.default_rng(decks)
        if change is None:
            relative = procedure.sample(decks, 20, repeats, rng=generator)
        else:
            relative = np.concatenate(
                [
                    procedure.sample(change - 1, 20, repeats, rng=generator),
                    other.sample(decks - change + 1, 20, repeats, rng=generator),
                ]
            )
        expected = np.empty((decks + 1, 20), dtype=relative.dtype)
        expected[0] = np.arange(20)
        for t in range(decks):
            expected[t + 1] = relative[t] if reference == "first" else expected[t][relative[t]]
        got = simulate_play(
            procedure,
            20,
            decks,
            rng=decks,
            reference=reference,
            repeats=repeats,
            change=None if change is None else (change, other),
        )
        assert got.dtype == expected.dtype and np.array_equal(got, expected)

    def test_arrangement_check_finds_every_bad_row(self):
        from shufflecheck.records.logs.writer import _arrangement_rows

        rng = np.random.default_rng(5)
        decks = np.argsort(rng.random((500, 52)), axis=1).astype(np.int16)
        decks[7, 3] = decks[7, 4]  # a repeated card
        decks[11, 0] = 52  # out of range
        decks[13, 5] = -1
        assert np.nonzero(~_arrangement_rows(decks, 52))[0].tolist() == [7, 11, 13]
        wide = np.argsort(rng.random((50, 70)), axis=1).astype(np.int16)  # sorting above 64
        wide[3, 1] = wide[3, 2]
        assert np.nonzero(~_arrangement_rows(wide, 70))[0].tolist() == [3]
        small = np.argsort(rng.random((50, 9)), axis=1).astype(np.uint8)
        small[4, 0] = 60  # a label in 9..63 sets a bit above the mask
        small[5, 0] = 200  # shifts of 64 and more add no bit
        assert np.nonzero(~_arrangement_rows(small, 9))[0].tolist() == [4, 5]

    @pytest.mark.parametrize(
        "start", ["2026-11-02T18:00", "2026-11-02T18:00:07.900001", "1969-12-31T23:59:59.5"]
    )
    @pytest.mark.parametrize("every", [120, 1, -90])
    def test_recorded_times_equal_python_datetimes(self, start, every):
        import datetime as dt

        from shufflecheck.analyses.simulate import _times

        first = dt.datetime.fromisoformat(start)
        expected = [
            (first + dt.timedelta(seconds=every * i)).isoformat(timespec="seconds")
            for i in range(500, 900)
        ]
        assert list(_times(first, every, 500, 400)) == expected

    def test_recorded_times_out_of_the_calendar(self):
        import datetime as dt

        from shufflecheck.analyses.simulate import _times

        with pytest.raises(InputError, match="leave the calendar"):
            _times(dt.datetime(9999, 12, 31), 3600, 0, 100)

    def test_block_writer_equals_whole_writer(self, tmp_path):
        from shufflecheck.records.logs import write_log
        from shufflecheck.records.logs.writer import LogWriter

        rng = np.random.default_rng(11)
        decks = np.argsort(rng.random((2500, 52)), axis=1).astype(np.int16)
        columns = {"deck": list(range(2500)), "table": ["T1"] * 1000 + ['T "2"'] * 1500}
        whole = write_log(tmp_path / "whole.csv", decks, None, columns)
        with LogWriter(tmp_path / "blocks.csv", columns=["deck", "table"]) as log:
            for lo in (0, 7, 999, 1000, 2500):
                hi = {0: 7, 7: 999, 999: 1000, 1000: 2500, 2500: 2500}[lo]
                log.write(decks[lo:hi], {"deck": range(lo, hi), "table": columns["table"][lo:hi]})
            assert not (tmp_path / "blocks.csv").exists()  # appears on close
        assert (tmp_path / "blocks.csv").read_bytes() == whole.read_bytes()
        bad = decks[:3].copy()
        bad[1, 0] = bad[1, 1]
        with pytest.raises(InputError, match="deck 1"):
            with LogWriter(tmp_path / "bad.csv", columns=["deck"]) as log:
                log.write(bad, {"deck": [0, 1, 2]})
        assert not (tmp_path / "bad.csv").exists()
        with pytest.raises(InputError, match="do not match"):
            with LogWriter(tmp_path / "bad.csv", columns=["deck"]) as log:
                log.write(decks[:3], {"table": ["a", "b", "c"]})

    @pytest.mark.parametrize("suffix", [".csv", ".tsv"])
    def test_log_bytes_equal_a_plain_csv_writer(self, tmp_path, suffix):
        # the byte matrices (integer digits, fixed-width cells, codes gathered as
        # integers) against Python's csv module writing the same rows one by one
        import csv
        import io

        from shufflecheck.records.cards import integer_deck, load_deck
        from shufflecheck.records.logs import write_log

        rng = np.random.default_rng(9)
        rows = 3000
        decks = np.argsort(rng.random((rows, 52)), axis=1).astype(np.int16)
        columns = {
            "deck": list(range(rows)),
            "signed": (rng.integers(-(10**6), 10**6, rows)).tolist(),
            "big": [10**15 + i for i in range(rows)],
            "table": ['T "7", east'] * (rows // 2) + ["T\t8"] * (rows - rows // 2),
            "clock": [f"2026-11-02T18:{i % 60:02d}:00" for i in range(rows)],
            "gap": [1.5, None, "x"] * (rows // 3),
        }
        delimiter = "\t" if suffix == ".tsv" else ","
        for deck, labels, words in [
            (load_deck(), "codes", list(load_deck().cards)),
            (integer_deck(52), "int1", [str(k + 1) for k in range(52)]),
        ]:
            path = write_log(tmp_path / f"log{suffix}", decks, deck, columns, labels=labels)
            text = io.StringIO()
            writer = csv.writer(text, delimiter=delimiter, lineterminator="\n")
            writer.writerow([*columns, "order"])
            for r in range(rows):
                cells = ["" if columns[c][r] is None else str(columns[c][r]) for c in columns]
                writer.writerow([*cells, " ".join(words[x] for x in decks[r])])
            assert path.read_bytes() == text.getvalue().encode("utf-8"), labels

    def test_log_text_round_trips(self, tmp_path):
        from shufflecheck.records.logs import read_log, write_log

        rng = np.random.default_rng(6)
        decks = np.argsort(rng.random((300, 52)), axis=1).astype(np.int16)
        columns = {"deck": list(range(300)), "table": ['T "7", east'] * 300}
        path = write_log(tmp_path / "log.csv", decks, None, columns)
        text = path.read_text(encoding="utf-8").splitlines()
        assert text[0] == "deck,table,order"
        assert text[1].startswith('0,"T ""7"", east",')
        assert (read_log(path).read_all().decks == decks).all()
