"""The battery: Holm against closed testing, exact merging of summaries, groups, the JSON
contract, "since when", and the verdict on plainly biased logs."""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.models import riffle
from shufflecheck.records.cards import STANDARD_52
from shufflecheck.stats import BatterySummary, holm
from shufflecheck.stats.holm import holm_log


def _uniform(rng, decks, n=52):
    return rng.permuted(np.tile(np.arange(n, dtype=np.int16), (decks, 1)), axis=1)


class TestHolm:
    def test_against_closed_testing(self):
        # brute force: Holm = closed testing with Bonferroni local tests (Holm 1979), so the
        # adjusted p-value of H_i is max over index sets I containing i of |I| min_{j in I} p_j
        rng = np.random.default_rng(0)
        for _ in range(40):
            m = int(rng.integers(1, 8))
            p = rng.uniform(0, 0.2, m) ** 2
            expected = []
            for i in range(m):
                worst = 0.0
                for size in range(1, m + 1):
                    for subset in itertools.combinations(range(m), size):
                        if i in subset:
                            worst = max(worst, min(1.0, size * min(p[j] for j in subset)))
                expected.append(worst)
            np.testing.assert_allclose(holm(p), expected, rtol=1e-12)

    def test_hand_example(self):
        # worked by hand: sorted 0.01, 0.02, 0.03, 0.5 -> 0.04, 0.06, 0.06, 0.5
        np.testing.assert_allclose(holm([0.03, 0.5, 0.01, 0.02]), [0.06, 0.5, 0.04, 0.06])

    def test_log_space_keeps_tiny_values(self):
        adj = holm_log([-5000.0, -3.0])
        assert adj[0] == pytest.approx(-5000.0 + math.log(2))
        assert adj[1] == pytest.approx(-3.0)

    def test_bad_p(self):
        with pytest.raises(InputError, match="p-values"):
            holm([0.5, 1.5])


class TestVerdicts:
    def test_uniform_decks_not_flagged_and_contract(self):
        rng = np.random.default_rng(42)
        summary = BatterySummary.empty(
            52, suits=STANDARD_52.suit_codes(), colours=STANDARD_52.colour_codes()
        )
        decks = _uniform(rng, 600)
        summary.update(decks, decks)
        result = summary.finish()
        assert not result.flagged and result.overall.since_when is None
        names = [t.name for t in result.tests]
        assert len(names) == 17 and names[0] == "rising-sequences"
        assert names[-1] == "repeat-positions"
        assert {t.method for t in result.tests} == {"exact", "asymptotic"}
        data = json.loads(json.dumps(result.as_json(set_aside=2)))
        assert {"decks", "set_aside", "alpha", "flagged", "tests", "groups"} <= set(data)
        assert data["decks"] == 600 and data["set_aside"] == 2 and data["groups"] == {}
        for test in data["tests"]:
            assert {"name", "statistic", "p_value", "p_adjusted", "method", "effect"} <= set(test)
            assert 0 < test["p_value"] <= test["p_adjusted"] <= 1
            assert test["effect"]["kind"] == "estimate" and test["effect"]["text"]

    def test_unshuffled_log_flagged_everywhere(self):
        decks = np.tile(np.arange(52, dtype=np.int16), (30, 1))
        summary = BatterySummary.empty(52)
        summary.update(decks)
        out = summary.finish(rng=0)
        assert out.flagged
        rising = out.overall.test("rising-sequences")
        assert rising.log10_p_value < -1000  # exact far below the double range
        assert rising.as_json()["p_below_floor"] and rising.as_json()["p_value"] == 1e-300
        assert "26 below random" in rising.effect.text
        guess = out.overall.test("guess-lowest-unseen")
        assert guess.effect.value == pytest.approx(52 - 4.5380, abs=1e-3)
        assert "extra correct guesses per deck" in guess.effect.text
        assert out.overall.verdict().startswith("FLAGGED")

    def test_four_riffles_flagged_from_20_decks(self):
        rng = np.random.default_rng(4)
        for _ in range(10):
            summary = BatterySummary.empty(52)
            summary.update(riffle.sample(20, 52, 4, rng=rng))
            assert summary.finish(rng=rng).flagged

    def test_small_decks_skip_constant_tests(self):
        summary = BatterySummary.empty(2)
        summary.update(np.array([[0, 1], [1, 0], [0, 1]]))
        out = summary.finish(rng=1)
        skipped = dict(out.overall.skipped)
        assert "adjacent-pairs" in skipped and "constant" in skipped["adjacent-pairs"]
        assert all(0 < t.p_value <= 1 for t in out.tests)

    def test_single_deck_has_no_sequential_test(self):
        summary = BatterySummary.empty(52)
        summary.update(np.arange(52)[None, ::-1].copy())
        out = summary.finish(rng=0)
        assert "repeat-positions" in dict(out.overall.skipped)


class TestSinceWhen:
    def test_bias_starting_mid_log(self):
        rng = np.random.default_rng(7)
        summary = BatterySummary.empty(52)
        summary.update(_uniform(rng, 250))
        summary.update(riffle.sample(150, 52, 6, rng=rng))
        out = summary.finish()
        when = out.overall.since_when
        assert out.flagged and when is not None
        assert when.test == "rising-sequences"
        assert abs(when.start - 251) <= 15  # an estimate; tolerance for noise
        assert when.mean_after < when.expected and "most likely began" in when.text

    def test_not_computed_without_series(self):
        summary = BatterySummary.empty(52, keep_series=False)
        summary.update(np.tile(np.arange(52), (10, 1)))
        assert summary.finish(rng=0).overall.since_when is None


class TestGroups:
    def test_groups_and_overall(self):
        rng = np.random.default_rng(3)
        good = _uniform(rng, 300)
        bad = riffle.sample(300, 52, 5, rng=rng)
        decks = np.empty((600, 52), dtype=np.int16)
        decks[0::2], decks[1::2] = good, bad
        tables = np.array(["table 3", "table 7"] * 300)
        summary = BatterySummary.empty(52)
        summary.update(decks[:250], groups=tables[:250])
        summary.update(decks[250:], groups=tables[250:])
        out = summary.finish()
        assert out.flagged
        assert not out.group("table 3").flagged and out.group("table 7").flagged
        assert out.group("table 7").decks == 300
        data = out.as_json()
        assert set(data["groups"]) == {"table 3", "table 7"}
        assert data["groups"]["table 7"]["flagged"] is True
        # sequential pairs stay inside a table: 299 per table
        seq = out.group("table 3").test("repeat-positions")
        assert "299 pairs" in seq.detail
        assert "598 pairs" in out.overall.test("repeat-positions").detail

    def test_mixing_grouped_and_ungrouped_is_refused(self):
        summary = BatterySummary.empty(5)
        summary.update(np.tile(np.arange(5), (3, 1)))
        with pytest.raises(InputError, match="groups for every chunk"):
            summary.update(np.tile(np.arange(5), (3, 1)), groups=["a", "b", "a"])

    def test_group_errors(self):
        summary = BatterySummary.empty(5)
        with pytest.raises(InputError, match="expected 3 values"):
            summary.update(np.tile(np.arange(5), (3, 1)), groups=["a", "b"])
        with pytest.raises(InputError, match="all numbers or all text"):
            summary.update(np.tile(np.arange(5), (2, 1)), groups=np.array([1, "x"], dtype=object))


@st.composite
def _log(draw):
    n = draw(st.integers(3, 9))
    count = draw(st.integers(2, 14))
    rows = draw(st.lists(st.permutations(list(range(n))), min_size=count, max_size=count))
    rel = np.array(rows, dtype=np.int16)
    shift = draw(st.permutations(list(range(n))))
    ab = np.array(shift, dtype=np.int16)[rel]  # absolute = reference order after relative
    grouped = draw(st.booleans())
    groups = (
        np.array(
            draw(st.lists(st.sampled_from(["t1", "t2", "t3"]), min_size=count, max_size=count))
        )
        if grouped
        else None
    )
    cut = draw(st.integers(1, count - 1))
    return n, rel, ab, groups, cut


def _summary(n):
    suits = np.array([k % 3 for k in range(n)])
    colours = np.array([(k % 3) % 2 for k in range(n)])
    return BatterySummary.empty(n, suits=suits, colours=colours)


@settings(max_examples=40, deadline=None)
@given(_log())
def test_merge_equals_concatenation(case):
    n, rel, ab, groups, cut = case
    whole = _summary(n)
    whole.update(rel, ab, groups=groups)
    first, second = _summary(n), _summary(n)
    first.update(rel[:cut], ab[:cut], groups=None if groups is None else groups[:cut])
    second.update(rel[cut:], ab[cut:], groups=None if groups is None else groups[cut:])
    merged = first.merge(second)
    a, b = whole.as_arrays(), merged.as_arrays()
    assert set(a) == set(b)
    for key in a:
        np.testing.assert_array_equal(a[key], b[key], err_msg=key)
    # the inputs are left as they were
    assert first.decks == cut and second.decks == rel.shape[0] - cut
    # chunked updates of one summary agree too
    chunked = _summary(n)
    chunked.update(rel[:cut], ab[:cut], groups=None if groups is None else groups[:cut])
    chunked.update(rel[cut:], ab[cut:], groups=None if groups is None else groups[cut:])
    c = chunked.as_arrays()
    for key in a:
        np.testing.assert_array_equal(a[key], c[key], err_msg=key)
    ra, rb = whole.finish(rng=0), merged.finish(rng=0)
    assert [t.log10_p_value for t in ra.tests] == [t.log10_p_value for t in rb.tests]


def test_merge_refuses_different_batteries():
    with pytest.raises(InputError, match="cannot merge"):
        BatterySummary.empty(5).merge(BatterySummary.empty(6))
    with pytest.raises(InputError, match="cannot merge"):
        BatterySummary.empty(5).merge(BatterySummary.empty(5, strategies=("strip",)))


def test_finish_errors():
    with pytest.raises(InputError, match="no decks"):
        BatterySummary.empty(5).finish()
    summary = BatterySummary.empty(5)
    summary.update(np.tile(np.arange(5), (3, 1)))
    with pytest.raises(InputError, match="alpha"):
        summary.finish(alpha=1.5)
    with pytest.raises(InputError, match="cards must be at least 2"):
        BatterySummary.empty(1)
    with pytest.raises(InputError, match="expected 5 cards"):
        summary.update(np.tile(np.arange(6), (3, 1)))
    with pytest.raises(InputError, match="absolute decks"):
        summary.update(np.tile(np.arange(5), (3, 1)), np.tile(np.arange(5), (2, 1)))
