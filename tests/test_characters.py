"""Characters of S_n against handbook tables, the Frobenius formula (sympy), GAP, a naive
rim-hook implementation on Young diagrams, and the orthogonality relations."""

from __future__ import annotations

import functools
import itertools
import json
import math
import shutil
import subprocess
from fractions import Fraction

import numpy as np
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.core.characters import (
    INT64_MAX_N,
    _build_table,
    character,
    character_table,
    class_eigenvalues,
    group_eigenvalues,
    ratio,
    table_memory_estimate,
    transposition_ratio,
)
from shufflecheck.core.partitions import (
    class_size,
    conjugate,
    dimension,
    partition_sign,
    partitions,
    z,
)

# ---------------------------------------------------------------------------------------
# an independent, deliberately naive Murnaghan-Nakayama rule on Young diagrams


def _cells(shape):
    return {(i, j) for i, part in enumerate(shape) for j in range(part)}


def _is_border_strip(cells):
    if not cells:
        return False
    if any(
        (i + 1, j) in cells and (i, j + 1) in cells and (i + 1, j + 1) in cells for i, j in cells
    ):
        return False
    start = next(iter(cells))
    seen, todo = {start}, [start]
    while todo:
        i, j = todo.pop()
        for nb in ((i + 1, j), (i - 1, j), (i, j + 1), (i, j - 1)):
            if nb in cells and nb not in seen:
                seen.add(nb)
                todo.append(nb)
    return len(seen) == len(cells)


def _sub_shapes(shape, size):
    """All partitions nu contained in shape with |nu| = size."""

    def rec(i, bound, remaining):
        if i == len(shape):
            if remaining == 0:
                yield ()
            return
        for part in range(min(shape[i], bound, remaining), -1, -1):
            for rest in rec(i + 1, part, remaining - part):
                yield (part, *rest)

    for nu in rec(0, max(shape, default=0), size):
        yield tuple(p for p in nu if p)


def naive_character(shape, cycle_type):
    if not cycle_type:
        return 1 if sum(shape) == 0 else 0
    r, rest = cycle_type[0], cycle_type[1:]
    total = 0
    big = _cells(shape)
    for nu in _sub_shapes(shape, sum(shape) - r):
        strip = big - _cells(nu)
        if _is_border_strip(strip):
            height = len({i for i, _ in strip}) - 1
            total += (-1) ** height * naive_character(nu, rest)
    return total


# ---------------------------------------------------------------------------------------


class TestHandbookTables:
    """Small tables typed from memory of the standard textbook tables of S_3, S_4, S_5
    (rows = shapes, columns = classes, both in our reverse lexicographic order). They are
    confirmed independently below by the Frobenius formula and, where installed, GAP."""

    def test_s3(self):
        t = character_table(3)
        assert t.values.tolist() == [[1, 1, 1], [-1, 0, 2], [1, -1, 1]]

    def test_s4(self):
        t = character_table(4)
        # classes (4), (3,1), (2,2), (2,1,1), (1^4)
        assert t.values.tolist() == [
            [1, 1, 1, 1, 1],
            [-1, 0, -1, 1, 3],
            [0, -1, 2, 0, 2],
            [1, 0, -1, -1, 3],
            [-1, 1, 1, -1, 1],
        ]

    def test_s5(self):
        t = character_table(5)
        # classes (5), (4,1), (3,2), (3,1,1), (2,2,1), (2,1,1,1), (1^5)
        assert t.values.tolist() == [
            [1, 1, 1, 1, 1, 1, 1],
            [-1, 0, -1, 1, 0, 2, 4],
            [0, -1, 1, -1, 1, 1, 5],
            [1, 0, 0, 0, -2, 0, 6],
            [0, 1, -1, -1, 1, -1, 5],
            [-1, 0, 1, 1, 0, -2, 4],
            [1, -1, -1, 1, 1, -1, 1],
        ]
        assert t.class_sizes == (24, 30, 20, 20, 15, 10, 1)


@functools.cache
def _vandermonde_terms(length):
    """Vandermonde determinant as a list of (sign(w), exponent w(delta)), w in S_length."""
    delta = tuple(range(length - 1, -1, -1))
    terms = []
    for perm in itertools.permutations(range(length)):
        inversions = sum(perm[i] > perm[j] for i in range(length) for j in range(i + 1, length))
        terms.append(((-1) ** inversions, tuple(delta[perm[i]] for i in range(length))))
    return delta, terms


@functools.cache
def _power_sum_coefficients(cycle_type, length):
    """Monomial -> coefficient of p_mu(x_0..x_{l-1}), expanded with sympy.Poly."""
    xs = sympy.symbols(f"x0:{length}")
    poly = sympy.Poly(1, *xs)
    for part in cycle_type:
        poly = poly * sympy.Poly(sum(x**part for x in xs), *xs)
    return dict(zip(poly.monoms(), (int(c) for c in poly.coeffs()), strict=True))


def _frobenius_character(shape, cycle_type):
    """chi^shape(cycle_type) = coefficient of x^(shape + delta) in Vandermonde * p_mu,
    with l = len(shape) variables, via sympy polynomials (Frobenius' formula)."""
    length = len(shape)
    delta, terms = _vandermonde_terms(length)
    coeffs = _power_sum_coefficients(tuple(cycle_type), length)
    target = tuple(shape[i] + delta[i] for i in range(length))
    total = 0
    for sign, exponent_w in terms:
        exponent = tuple(t - e for t, e in zip(target, exponent_w, strict=True))
        if min(exponent) >= 0:
            total += sign * coeffs.get(exponent, 0)
    return total


class TestFrobeniusFormula:
    @pytest.mark.parametrize("n", range(1, 9))
    def test_whole_table_entry_by_entry(self, n):
        t = character_table(n)
        for i, lam in enumerate(t.shapes):
            for j, mu in enumerate(t.classes):
                assert int(t.values[i, j]) == _frobenius_character(lam, mu), (lam, mu)


class TestNaiveRimHooks:
    @pytest.mark.parametrize("n", range(1, 9))
    def test_table(self, n):
        t = character_table(n)
        for i, lam in enumerate(t.shapes):
            for j, mu in enumerate(t.classes):
                assert int(t.values[i, j]) == naive_character(lam, mu)


def _gap_tables(max_n):
    """Run GAP once; one JSON object per line and per table (lines kept under 4096 chars
    by printing each list on its own line)."""
    script = "\n".join(
        [
            "SizeScreen([4096, 1000]);;",
            "for n in [1.." + str(max_n) + "] do",
            '  t := CharacterTable("Symmetric", n);;',
            '  Print("n ", n, "\\n");',
            '  for c in ClassParameters(t) do Print("class ", c[2], "\\n"); od;',
            '  for c in CharacterParameters(t) do Print("char ", c[2], "\\n"); od;',
            '  for x in Irr(t) do Print("row ", ValuesOfClassFunction(x), "\\n"); od;',
            "od;",
            "QUIT;",
        ]
    )
    out = subprocess.run(
        ["gap", "-q", "-b", "-o", "4g"],
        input=script,
        capture_output=True,
        text=True,
        timeout=600,
        check=True,
    ).stdout
    tables = []
    for line in out.splitlines():
        key, _, rest = line.partition(" ")
        if key == "n":
            tables.append({"n": int(rest), "classes": [], "characters": [], "values": []})
        elif key in ("class", "char", "row"):
            field = {"class": "classes", "char": "characters", "row": "values"}[key]
            tables[-1][field].append(json.loads(rest))
    return tables


@pytest.mark.skipif(shutil.which("gap") is None, reason="GAP (Debian gap-core) is not installed")
class TestAgainstGap:
    """GAP 4's library table CharacterTable("Symmetric", n), matched through its class and
    character parameters (partitions)."""

    def test_tables_up_to_12(self):
        tables = _gap_tables(12)
        assert [t["n"] for t in tables] == list(range(1, 13))
        for gap_table in tables:
            n = gap_table["n"]
            ours = character_table(n)
            col = {tuple(sorted(c, reverse=True)): k for k, c in enumerate(gap_table["classes"])}
            row = {tuple(sorted(c, reverse=True)): k for k, c in enumerate(gap_table["characters"])}
            for i, lam in enumerate(ours.shapes):
                gap_row = gap_table["values"][row[lam]]
                for j, mu in enumerate(ours.classes):
                    assert int(ours.values[i, j]) == gap_row[col[mu]], (n, lam, mu)


class TestOrthogonality:
    @pytest.mark.parametrize("n", range(1, 13))
    def test_rows_and_columns(self, n):
        t = character_table(n)
        v = t.values.astype(object)
        sizes = np.array(t.class_sizes, dtype=object)
        fact = math.factorial(n)
        p = len(t.shapes)
        assert ((v * sizes) @ v.T == fact * np.eye(p, dtype=object)).all()  # row orthogonality
        zs = np.array([z(mu) for mu in t.classes], dtype=object)
        assert (v.T @ v == np.diag(zs)).all()  # column orthogonality

    @pytest.mark.parametrize("n", range(1, 13))
    def test_conjugate_is_sign_times(self, n):
        t = character_table(n)
        index = {lam: i for i, lam in enumerate(t.shapes)}
        for i, lam in enumerate(t.shapes):
            k = index[conjugate(lam)]
            for j, mu in enumerate(t.classes):
                assert t.values[k, j] == partition_sign(mu) * t.values[i, j]

    def test_last_row_is_sign_first_is_trivial(self):
        t = character_table(7)
        assert (t.values[0] == 1).all()
        assert [int(v) for v in t.values[-1]] == [partition_sign(mu) for mu in t.classes]
        assert t.dimensions == tuple(dimension(lam) for lam in t.shapes)


class TestSingleValues:
    @pytest.mark.parametrize("n", [9, 13, 16])
    def test_single_values_match_table(self, n):
        t = character_table(n)
        rng = np.random.default_rng(n)
        for _ in range(60):
            i, j = rng.integers(len(t.shapes), size=2)
            assert character(t.shapes[i], t.classes[j]) == t.values[i, j]

    def test_cycle_type_order_is_free(self):
        assert character((4, 3, 1), (1, 3, 2, 2)) == character((4, 3, 1), (3, 2, 2, 1))

    def test_equal_parts_closed_form_against_naive(self):
        # r-quotient closed form (classes with all parts equal) vs naive rim hooks
        for n, r in [(6, 2), (6, 3), (8, 2), (8, 4), (9, 3)]:
            mu = (r,) * (n // r)
            for lam in partitions(n):
                assert character(lam, mu) == naive_character(lam, mu), (lam, mu)

    def test_large_n_dimension_and_hook(self):
        lam = (30, 25, 20, 15, 10)
        assert character(lam, (1,) * 100) == dimension(lam)
        # a hook shape at the full cycle: (-1)^(leg length) (hook rule)
        assert character((60,) + (1,) * 40, (100,)) == 1
        assert character((61,) + (1,) * 39, (100,)) == -1
        assert character((50, 50), (100,)) == 0

    def test_transposition_ratio_content_formula(self):
        for n in range(2, 12):
            tau = (2,) + (1,) * (n - 2)
            for lam in partitions(n):
                assert transposition_ratio(lam) == ratio(lam, tau)

    def test_int64_limit(self):
        # the largest dimension bounds every entry: below 2^63 up to S_35, above it at S_36
        assert max(dimension(lam) for lam in partitions(INT64_MAX_N)) < 2**63
        assert max(dimension(lam) for lam in partitions(INT64_MAX_N + 1)) >= 2**63

    def test_object_path_matches_int64(self):
        a = _build_table(11, object_values=False)
        b = _build_table(11, object_values=True)
        assert b.values.dtype == object
        assert (a.values.astype(object) == b.values).all()


@st.composite
def shape_and_classes(draw):
    n = draw(st.integers(min_value=1, max_value=10))
    shapes = partitions(n)
    lam = draw(st.sampled_from(shapes))
    nu = draw(st.sampled_from(shapes))
    return n, lam, nu


class TestProperties:
    @given(shape_and_classes())
    @settings(max_examples=60, deadline=None)
    def test_random_row_orthogonality(self, data):
        n, lam, nu = data
        total = sum(Fraction(character(lam, mu) * character(nu, mu), z(mu)) for mu in partitions(n))
        assert total == (1 if lam == nu else 0)

    @given(shape_and_classes())
    @settings(max_examples=60, deadline=None)
    def test_integrality_and_bound(self, data):
        _, lam, mu = data
        value = character(lam, mu)
        assert isinstance(value, int)
        assert abs(value) <= dimension(lam)
        # class sum is an algebraic integer: |C| chi / d is an integer (central character)
        assert (class_size(mu) * value) % dimension(lam) == 0


class TestEigenvalues:
    @pytest.mark.parametrize("n", [3, 4, 5])
    def test_transposition_against_numpy(self, n):
        # build the full n! x n! transition matrix of the two-hands transposition shuffle
        perms = list(itertools.permutations(range(n)))
        index = {p: i for i, p in enumerate(perms)}
        matrix = np.zeros((len(perms), len(perms)))
        for p in perms:
            for a in range(n):
                for b in range(n):
                    q = list(p)
                    q[a], q[b] = q[b], q[a]
                    matrix[index[p], index[tuple(q)]] += 1 / n**2
        numeric = np.sort(np.linalg.eigvalsh(matrix))
        h = Fraction(1, n)
        rows = class_eigenvalues(n, {(1,) * n: h, (2,) + (1,) * (n - 2): 1 - h})
        ours = np.sort(np.repeat([float(v) for _, v, _ in rows], [m for _, _, m in rows]))
        assert np.allclose(numeric, ours, atol=1e-12)

    def test_grouping(self):
        rows = class_eigenvalues(4, {(1, 1, 1, 1): Fraction(1, 4), (2, 1, 1): Fraction(3, 4)})
        grouped = group_eigenvalues(rows)
        assert sum(e.multiplicity for e in grouped) == math.factorial(4)
        assert grouped[0].value == 1 and grouped[0].shapes == ((4,),)

    def test_three_cycles(self):
        # the uniform 3-cycle walk: eigenvalue chi(3-cycle)/d; trivial block gives 1
        rows = class_eigenvalues(5, {(3, 1, 1): 1})
        assert rows[0][1] == 1
        assert rows[3][1] == Fraction(0, 6)


class TestBadInput:
    def test_size_mismatch(self):
        with pytest.raises(InputError, match="both must partition the same n"):
            character((3, 1), (2, 1))

    def test_not_a_partition(self):
        with pytest.raises(InputError, match="weakly decreasing"):
            character((1, 2), (2, 1))

    def test_too_large(self):
        with pytest.raises(InputError, match="S_40 has 37338 x 37338 entries"):
            character_table(40)
        assert table_memory_estimate(28) == (3718 * 3718 * 8, "int64")

    def test_weights(self):
        with pytest.raises(InputError, match="sum to 1"):
            class_eigenvalues(3, {(1, 1, 1): Fraction(1, 2)})
        with pytest.raises(InputError, match="negative"):
            class_eigenvalues(3, {(1, 1, 1): Fraction(3, 2), (3,): Fraction(-1, 2)})
