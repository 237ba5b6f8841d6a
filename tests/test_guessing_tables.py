"""The guessing brackets computed in advance and shipped
(:mod:`shufflecheck.stats.guessing_tables`), checked against things outside the stored
file: the exact mean by the method of Diaconis & Graham (1981)
(:func:`~shufflecheck.stats.shoe_nulls.greedy_guessing_mean`), a coarse bracket computed
afresh (both must hold the truth, so every tail interval of one meets the other's), the
exact integer programme where it reaches, and (slow) every stored bracket recomputed."""

from __future__ import annotations

import json
import math
from fractions import Fraction

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.stats import guessing_tables, shoe_nulls
from shufflecheck.stats.nulls import Law, LawBracket

SIX_PACK = (96, *[24] * 9)


def blackjack_counts(packs: int) -> tuple[int, ...]:
    # nine values of four cards a pack, and the tens (10, J, Q, K) of sixteen a pack
    return (16 * packs, *[4 * packs] * 9)


class TestStoredFile:
    def test_every_composition_is_stored(self):
        stored = guessing_tables.stored_counts()
        for counts, _ in guessing_tables.TABLED:
            assert counts in stored
        assert {blackjack_counts(p) for p in (3, 4, 5, 6)} <= set(stored)

    @pytest.mark.parametrize("packs", [3, 4, 5, 6])
    def test_exact_mean_and_width(self, packs):
        # Diaconis & Graham's method for the mean, computed afresh, equals the stored exact
        # mean and lies within the stored bracket's exact mean bounds
        counts = blackjack_counts(packs)
        bracket = guessing_tables.stored_bracket(counts)
        assert bracket is not None
        exact = shoe_nulls.greedy_guessing_mean(counts)
        assert bracket.exact_mean == exact
        low, high = bracket.mean_bounds()
        assert low <= exact <= high
        assert float(high - low) < 1e-4
        assert bracket.set_aside < 3e-7  # the width docs/shoes.md states
        assert bracket.low == 16 * packs and bracket.high == 52 * packs
        assert "computed in advance" in bracket.method

    def test_any_order_of_counts(self):
        shuffled = [24] * 4 + [96] + [24] * 5
        assert guessing_tables.stored_bracket(shuffled) == guessing_tables.stored_bracket(SIX_PACK)
        assert guessing_tables.stored_bracket([5, 5, 5, 5, 5]) is None

    def test_agrees_with_a_coarse_bracket_computed_now(self):
        # both brackets hold the true law, so at every value their tail intervals meet,
        # and the stored one is the narrower
        stored = guessing_tables.stored_bracket(SIX_PACK)
        coarse = shoe_nulls.greedy_guessing_bracket(SIX_PACK, threshold=1e-8)
        assert stored is not None and stored.set_aside < coarse.set_aside / 1000
        for value in range(stored.low, stored.high + 1):
            for alternative in ("greater", "less"):
                a_lo, a_hi = stored.tail_bounds(value, alternative)
                b_lo, b_hi = coarse.tail_bounds(value, alternative)
                assert max(a_lo, b_lo) <= min(a_hi, b_hi) + 1e-15, (value, alternative)
                assert a_hi - a_lo <= b_hi - b_lo + 1e-15


class TestRecords:
    def test_round_trip_is_bit_for_bit(self):
        # one pack at a threshold that sets mass aside: through JSON text and back
        counts = blackjack_counts(1)
        bracket = shoe_nulls.greedy_guessing_bracket(counts, threshold=1e-6)
        assert bracket.set_aside > 0 and len(bracket.aside_high) > 1
        text = json.dumps(guessing_tables.bracket_record(counts, bracket, threshold=1e-6))
        back = guessing_tables.bracket_from_record(json.loads(text))
        assert back == bracket
        assert back.upper_law == bracket.upper_law and back.lower_law == bracket.lower_law

    def test_malformed_record(self):
        with pytest.raises(InputError, match="somewhere: not a stored guessing bracket"):
            guessing_tables.bracket_from_record({"kept": [1.0]}, "somewhere")

    def test_written_file_reads_back(self, tmp_path):
        # write_tables on a composition the exact programme reaches: the stored bracket
        # holds the exact law (tail by tail)
        counts = (6, 6, 3, 3, 1)
        path = guessing_tables.write_tables(tmp_path / "b.json", [(counts, 1e-6)])
        document = json.loads(path.read_text())
        assert document["format"] == guessing_tables.FORMAT
        (record,) = document["brackets"]
        bracket = guessing_tables.bracket_from_record(record)
        law = shoe_nulls.greedy_guessing_law(counts)
        for k in range(len(law.counts)):
            value = law.offset + k
            truth = Fraction(sum(law.counts[k:]), law.total)
            lo, hi = bracket.tail_bounds(value, "greater")
            assert Fraction(lo) <= truth <= Fraction(hi)


class TestNull:
    def test_order_of_choice(self):
        one_pack = blackjack_counts(1)
        assert isinstance(guessing_tables.guessing_null(one_pack), Law)  # exact in budget
        stored = guessing_tables.guessing_null(SIX_PACK)
        assert isinstance(stored, LawBracket) and "computed in advance" in stored.method
        with pytest.raises(shoe_nulls.GuessingOutOfReach, match="budget"):
            guessing_tables.guessing_null(SIX_PACK, stored=False)
        computed = guessing_tables.guessing_null([5] * 5, budget=10, threshold=1e-9)
        assert isinstance(computed, LawBracket) and "computed in advance" not in computed.method


class TestSixPackAudit:
    """A six-pack read as blackjack values: the audit now plays the guessing game against
    the stored bracket (method ``bound``); a machine that deals all the tens of one shoe in
    six first is caught (about ten extra correct guesses in each of those shoes, measured by
    simulation), uniform shoes are not flagged."""

    @pytest.mark.parametrize("faulty", [False, True])
    def test_battery(self, faulty):
        import dataclasses

        from shufflecheck.records.shoes import shoe
        from shufflecheck.stats.catalogue import ShoeContext
        from shufflecheck.stats.summary import BatterySummary

        six = shoe(6)
        ctx = ShoeContext.of(six, "blackjack")
        assert not ctx.provides("guessing")  # the exact law is out of reach
        ctx = dataclasses.replace(ctx, guess_tables=True)
        assert ctx.provides("guessing")
        rng = np.random.default_rng(5)
        kinds = six.physical_kinds()
        words = kinds[np.argsort(rng.random((121, kinds.size)), axis=1)]
        if faulty:
            ten = int(np.argmax(ctx.class_counts))
            rows = words[1::6]
            is_ten = np.asarray(ctx.classes)[rows] == ten
            order = np.argsort(~is_ten, axis=1, kind="stable")  # all 96 tens on top
            words[1::6] = np.take_along_axis(rows, order, axis=1)
        summary = BatterySummary.empty(kinds.size, shoe=ctx)
        summary.update(words[1:], words[1:], references=words[:-1])
        result = summary.finish(rng=np.random.default_rng(0)).overall
        test = result.test("guess-most-frequent")
        assert test.method == "bound"
        assert "computed in advance" in test.detail or "known to within" in test.detail
        p = 10**test.log10_p_value
        # both ends of the p-value bracket, in the JSON too
        assert test.log10_p_value_low is not None
        assert test.log10_p_value_low <= test.log10_p_value
        record = test.as_json()
        assert record["p_value_low"] <= record["p_value"]
        if faulty:
            assert p < 1e-6
        else:
            assert p > 1e-3
        assert math.isclose(
            test.effect.expected, float(shoe_nulls.greedy_guessing_mean(SIX_PACK)), rel_tol=1e-12
        )


class TestSixPackPlan:
    """Power planning for six-pack shoes plans the guessing game against the end of the
    stored bracket that the audit tests with."""

    def _plan(self, faulty: bool):
        import dataclasses

        from shufflecheck.records.shoes import shoe
        from shufflecheck.stats import plan_shoes
        from shufflecheck.stats.catalogue import ShoeContext

        six = shoe(6)
        ctx = dataclasses.replace(ShoeContext.of(six, "blackjack"), guess_tables=True)
        kinds = six.physical_kinds()
        ten = int(np.argmax(ctx.class_counts))

        def sample(count, rng):
            words = kinds[np.argsort(rng.random((count + 1, kinds.size)), axis=1)]
            if faulty:  # every shoe deals all its tens first
                is_ten = np.asarray(ctx.classes)[words] == ten
                order = np.argsort(~is_ten, axis=1, kind="stable")
                words = np.take_along_axis(words, order, axis=1)
            return words

        return plan_shoes(sample, ctx, simulate=300, rng=3)

    def test_guessing_row_planned_against_the_bracket(self):
        plan = self._plan(faulty=True)
        (row,) = [r for r in plan.rows if r.test == "guess-most-frequent"]
        assert plan.bracketed == ("guessing game, most frequent value",)
        assert "upper end of a bracket" in plan.null_text()
        # about ten extra correct guesses per shoe against a spread of 1.55: a few shoes
        assert row.decks is not None and row.decks <= 5
        assert plan.as_json()["bracketed_nulls"] == ["guessing game, most frequent value"]

    def test_uniform_shoes_need_many(self):
        plan = self._plan(faulty=False)
        (row,) = [r for r in plan.rows if r.test == "guess-most-frequent"]
        assert row.decks is None or row.decks > 1000


@pytest.mark.slow
def test_stored_brackets_recomputed(tmp_path):
    # every stored bracket computed again from scratch (about ten minutes, 2.5 GB) equals
    # the stored one entry for entry; only the recorded CPU time may differ
    path = guessing_tables.write_tables(tmp_path / "again.json")
    again = json.loads(path.read_text())["brackets"]
    stored = json.loads(guessing_tables.default_path().read_text())["brackets"]
    assert len(again) == len(stored)
    for a, b in zip(again, stored, strict=True):
        a.pop("seconds")
        b.pop("seconds")
        assert a == b
