"""The shoe battery: catalogue records against brute force over every arrangement of a small
shoe, summaries that merge exactly, calibration on uniform shoes, detection of a grab
shuffle, and shoe logs read and validated by counting copies."""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction

import numpy as np
import pytest
from sympy.utilities.iterables import multiset_permutations

from shufflecheck.analyses.audit_log import audit_log
from shufflecheck.common.errors import InputError
from shufflecheck.models.procedures import parse_procedure, simulate_play
from shufflecheck.records.logs import read_log, write_log
from shufflecheck.records.shoes import check_shoe_row, load_shoe, shoe
from shufflecheck.stats.catalogue import DeckContext, DeckView, ShoeContext, battery_statistics
from shufflecheck.stats.shoe_statistics import check_words, class_position_counts, zone_counts
from shufflecheck.stats.summary import BatterySummary

COPIES = (2, 2, 1, 2)  # a small invented shoe: four kinds, seven cards


def all_words(copies) -> np.ndarray:
    letters = [k for k, c in enumerate(copies) for _ in range(c)]
    return np.array(list(multiset_permutations(letters)), dtype=np.int64)


def context(classes, names, ordered=True, segment=(0, 3), zones=(3, 3)) -> DeckContext:
    shoe_ctx = ShoeContext(COPIES, classes, names, "test", ordered, segment, zones)
    return DeckContext.checked(sum(COPIES), shoe=shoe_ctx)


def law_counts(law):
    return {law.offset + k: c for k, c in enumerate(law.counts) if c}


def law_probabilities(law):
    return {law.offset + k: Fraction(c, law.total) for k, c in enumerate(law.counts) if c}


def frequencies(values):
    counted = Counter(values.tolist())
    return {k: Fraction(v, len(values)) for k, v in counted.items()}


class TestRecordsAgainstBruteForce:
    @pytest.mark.parametrize(
        ("classes", "names"),
        [
            ((0, 1, 2, 3), ("a", "b", "c", "d")),
            ((0, 0, 1, 1), ("lo", "hi")),
            ((1, 0, 1, 0), ("x", "y")),
        ],
    )
    def test_per_shoe_records(self, classes, names):
        ctx = context(classes, names)
        words = all_words(COPIES)
        view = DeckView(words, words, ctx, reference=np.repeat(words[:1], len(words), axis=0))
        checked = 0
        for stat in battery_statistics(ctx):
            if stat.shape != "per-deck":
                continue
            values = stat.values(view)
            if stat.law_keys is not None:
                keys = stat.law_keys(view)
                assert len(set(keys.tolist())) == 1  # one reference: one law
                law = stat.keyed_law(ctx, int(keys[0]))
            else:
                law = stat.law(ctx)
            # brute force over all 7!/(2!2!1!2!) = 630 arrangements
            assert len(words) == 630
            assert frequencies(values) == law_probabilities(law), stat.name
            checked += 1
        assert checked >= 4

    def test_zone_law_for_every_reference(self):
        ctx = context((0, 1, 2, 3), ("a", "b", "c", "d"))
        stat = next(s for s in battery_statistics(ctx) if s.name == "segment-zone")
        words = all_words(COPIES)
        for ref in words[::97]:
            view = DeckView(words, words, ctx, reference=np.repeat(ref[None, :], len(words), 0))
            values, keys = stat.values(view), stat.law_keys(view)
            law = stat.keyed_law(ctx, int(keys[0]))
            assert frequencies(values) == law_probabilities(law)

    def test_first_appearance_records_with_equal_copies(self):
        # brute force: all 8!/2!^4 = 2,520 words of four codes x 2 copies, for several
        # references; with equal copies the first-appearance order is a uniform permutation
        copies = (2, 2, 2, 2)
        ctx = DeckContext.checked(
            8, shoe=ShoeContext(copies, (0, 1, 2, 3), tuple("abcd"), "cards", False, (0, 2), (2, 2))
        )
        stats = [s for s in battery_statistics(ctx) if s.name.startswith("first-appearance")]
        assert {s.name for s in stats} == {
            "first-appearance-rising",
            "first-appearance-successions",
        }
        words = all_words(copies)
        for ref in words[::523]:
            view = DeckView(words, words, ctx, reference=np.repeat(ref[None, :], len(words), 0))
            for stat in stats:
                assert frequencies(stat.values(view)) == law_probabilities(stat.law(ctx))

    def test_matches_between_shoes(self):
        ctx = context((0, 1, 2, 3), ("a", "b", "c", "d"))
        stat = next(s for s in battery_statistics(ctx) if s.name == "shoe-repeat-positions")
        words = all_words(COPIES)
        counted: Counter = Counter()
        for ref in words[::31]:
            pair_values = np.count_nonzero(words == ref, axis=1)
            counted.update(pair_values.tolist())
        law = stat.law(ctx)
        scale = len(words[::31])
        assert dict(counted) == {k: v * scale for k, v in law_counts(law).items()}

    def test_permutation_statistics_do_not_apply(self):
        names = {s.name for s in battery_statistics(context((0, 1, 2, 3), tuple("abcd")))}
        assert "rising-sequences" not in names and "value-runs" in names
        plain = {s.name for s in battery_statistics(DeckContext.checked(7))}
        assert "value-runs" not in plain

    def test_unordered_feature_has_no_successions(self):
        names = {s.name for s in battery_statistics(context((0, 1, 0, 1), ("x", "y"), False))}
        assert "value-successions" not in names


class TestSummary:
    def test_merge_equals_one_pass(self):
        ctx = ShoeContext.of(shoe(2), "blackjack")
        rng = np.random.default_rng(4)
        kinds = shoe(2).physical_kinds()
        words = kinds[np.argsort(rng.random((301, 104)), axis=1)]
        one = BatterySummary.empty(104, shoe=ctx)
        one.update(words[1:], words[1:], references=words[:-1])
        a = BatterySummary.empty(104, shoe=ctx)
        b = BatterySummary.empty(104, shoe=ctx)
        a.update(words[1:150], words[1:150], references=words[:149])
        b.update(words[150:], words[150:], references=words[149:-1])
        merged = a.merge(b)
        for key, value in one.as_arrays().items():
            assert (merged.as_arrays()[key] == value).all(), key
        r1, r2 = one.finish(), merged.finish()
        assert [t.log10_p_value for t in r1.overall.tests] == [
            t.log10_p_value for t in r2.overall.tests
        ]

    def test_calibration_on_uniform_shoes(self):
        # 400 audits of 60 uniform shoes of 2 packs: family-wise false alarms near alpha
        ctx = ShoeContext.of(shoe(2), "colour")
        kinds = shoe(2).physical_kinds()
        rng = np.random.default_rng(11)
        alarms = 0
        audits = 400
        for _ in range(audits):
            words = kinds[np.argsort(rng.random((61, 104)), axis=1)]
            summary = BatterySummary.empty(104, shoe=ctx, keep_series=False)
            summary.update(words[1:], words[1:], references=words[:-1])
            result = summary.finish(alpha=0.05, rng=rng, since_when=False)
            alarms += result.overall.flagged
        # Holm controls the family-wise rate at 0.05; allow 3 binomial standard errors
        assert alarms / audits <= 0.05 + 3 * math.sqrt(0.05 * 0.95 / audits)

    def test_grab_is_detected(self):
        ctx = ShoeContext.of(shoe(6), "cards")
        proc = parse_procedure("grab")
        orders = simulate_play(proc, 312, 400, rng=3)
        words = shoe(6).physical_kinds()[orders]
        summary = BatterySummary.empty(312, shoe=ctx)
        summary.update(words[1:], words[1:], references=words[:-1])
        result = summary.finish()
        assert result.overall.flagged
        assert result.overall.test("segment-zone").flagged
        assert result.overall.unit == "shoe" and "uniform shoe" in result.overall.verdict()

    @pytest.mark.parametrize("packs, feature", [(3, "rank"), (8, "blackjack"), (6, "rank")])
    def test_guessing_game_out_of_reach_runs_as_a_bet(self, packs, feature):
        # no exact law within budget and no stored bracket: the betting form runs instead
        definition = shoe(packs)
        ctx = ShoeContext.of(definition, feature)
        assert not ctx.provides("guessing") and ctx.provides("guessing-bet")
        rng = np.random.default_rng(5)
        words = definition.physical_kinds()[np.argsort(rng.random((11, definition.size)), axis=1)]
        summary = BatterySummary.empty(definition.size, shoe=ctx, keep_series=False)
        summary.update(words[1:], words[1:], references=words[:-1])
        result = summary.finish(since_when=False).overall
        assert "guess-most-frequent" not in dict(result.skipped)
        test = result.test("guess-most-frequent-bet")
        assert test.method == "bound" and test.alternative == "greater"
        assert 0 < 10**test.log10_p_value <= 1
        assert "beyond the chance of each guess" in test.effect.text
        assert not result.test("guess-most-frequent-bet").flagged

    def test_guessing_game_within_reach_is_not_a_bet(self):
        import dataclasses

        ctx = ShoeContext.of(shoe(6), "blackjack")
        stored = dataclasses.replace(ctx, guess_tables=True)  # as audits read it
        assert stored.provides("guessing") and not stored.provides("guessing-bet")
        assert ShoeContext.of(shoe(2), "rank").provides("guessing")  # exact within budget

    def test_words_are_checked(self):
        with pytest.raises(InputError, match=r"row 2: kind 0 appears 3 times, 2 expected"):
            check_words(np.array([[0, 0, 1, 1, 2, 3, 3], [0, 0, 0, 1, 2, 3, 3]]), np.array(COPIES))


class TestStatistics:
    def test_zone_counts_by_hand(self):
        words = np.array([[0, 1, 2, 3, 0, 1, 3]])
        refs = np.array([[3, 3, 0, 1, 0, 2, 1]])
        counts, marked = zone_counts(words, refs, 4, (0, 3), (3, 3))
        # segment kinds {3, 0}: positions 0, 3, 4, 6 of the shoe
        assert counts.tolist() == [[1, 2]] and marked.tolist() == [4]

    def test_class_positions(self):
        words = np.array([[0, 1, 2], [2, 1, 0]])
        got = class_position_counts(words, np.array([0, 1, 1]), 2)
        assert got.tolist() == [[1, 1], [0, 2], [1, 1]]


class TestShoeLogs:
    def test_definitions(self):
        six = load_shoe("shoe(packs=6)")
        assert six.size == 312 and six.copies == (6,) * 52 and six.packs == 6
        assert six.class_counts("blackjack") == (24,) * 9 + (96,)
        assert six.feature("baccarat").names[0] == "0"
        assert six.class_counts("baccarat")[0] == 96
        assert load_shoe("standard-52") is None
        with pytest.raises(InputError, match="unknown parameter 'decks'"):
            load_shoe("shoe(decks=6)")

    def test_deck_file_with_copies(self, tmp_path):
        path = tmp_path / "house.toml"
        path.write_text(
            'name = "house-mini"\ncopies = 2\ncards = ["AS", "KH", { code = "JK", copies = 3 }]\n',
            encoding="utf-8",
        )
        definition = load_shoe(path)
        assert definition.copies == (2, 2, 6) and definition.size == 10
        assert definition.feature("rank").names[-1] == "JK"

    def test_row_messages(self):
        six = shoe(6)
        codes = six.format_order(six.reference_kinds).split()
        codes[11] = "JH"  # a QS recorded as JH
        _, reason, problem = check_shoe_row(codes, six)
        assert reason == "wrong-copies"
        assert problem == "JH appears 7 times, 6 expected; QS appears 5 times, 6 expected"
        _, reason, problem = check_shoe_row(codes[:-1], six)
        assert reason == "wrong-length" and problem.startswith(
            "311 cards, shoe 'shoe-6x52' has 312"
        )

    def test_read_audit_and_quarantine(self, tmp_path):
        orders = simulate_play(parse_procedure("grab, grab"), 312, 60, rng=9)
        log = tmp_path / "shoes.csv"
        write_log(log, orders, "shoe(packs=6)", {"shoe": list(range(61))})
        lines = log.read_text(encoding="utf-8").splitlines()
        cells = lines[12].split(",")
        codes = cells[1].split()
        codes[0] = "QH" if codes[0] != "QH" else "KH"
        lines[12] = ",".join([cells[0], " ".join(codes)])
        bad = tmp_path / "bad.csv"
        bad.write_text("\n".join(lines) + "\n", encoding="utf-8")
        with pytest.raises(InputError, match=r"bad.csv row 13: .* appears 7 times, 6 expected"):
            read_log(bad, deck="shoe(packs=6)").read_all()
        quarantine = tmp_path / "aside.csv"
        result = audit_log(bad, deck="shoe(packs=6)", feature="blackjack", quarantine=quarantine)
        assert result.set_aside == 1 and "wrong-copies" in quarantine.read_text(encoding="utf-8")
        payload = result.as_json()
        assert payload["log"]["shoe"]["feature"] == "blackjack"
        names = {t["name"] for t in payload["tests"]}
        assert {"value-runs", "value-successions", "segment-zone"} <= names

    def test_feature_needs_a_shoe(self, tmp_path):
        log = tmp_path / "decks.csv"
        write_log(log, np.tile(np.arange(52), (3, 1)), None)
        with pytest.raises(InputError, match="apply to shoes"):
            audit_log(log, feature="blackjack")

    def test_shoe_file_in_a_dialect(self, tmp_path):
        path = tmp_path / "rig.toml"
        path.write_text(
            'name = "rig-shoe"\ncopies = 2\ncards = "standard-52"\n'
            '[spelling]\nranks = { "1" = "A", "B" = "J" }\n',
            encoding="utf-8",
        )
        definition = load_shoe(path)
        assert definition.size == 104 and definition.lookup("1S") == definition.lookup("AS")
        codes = definition.format_order(definition.reference_kinds).split()
        spelled = [c.replace("A", "1").replace("J", "B") for c in codes]
        kinds, reason, _ = check_shoe_row(spelled, definition)
        assert reason is None and (kinds == definition.physical_kinds()).all()
        log = tmp_path / "rig.csv"
        log.write_text("order\n" + " ".join(spelled) + "\n", encoding="utf-8")
        assert (read_log(log, deck=path).read_all().decks[0] == definition.physical_kinds()).all()

    def test_split_logs_equal_one_log(self, tmp_path):
        # a shoe log split over three files audits exactly as one file (the first shoe of
        # each file is tested against the last shoe of the file before)
        orders = simulate_play(parse_procedure("grab"), 104, 90, rng=3)
        whole = tmp_path / "whole.csv"
        write_log(whole, orders, "shoe(packs=2)", {"shoe": list(range(91))})
        lines = whole.read_text(encoding="utf-8").splitlines()
        folder = tmp_path / "parts"
        folder.mkdir()
        for k, (lo, hi) in enumerate([(1, 30), (30, 61), (61, 92)]):
            (folder / f"part{k}.csv").write_text(
                "\n".join([lines[0], *lines[lo:hi]]) + "\n", encoding="utf-8"
            )
        one = audit_log(whole, deck="shoe(packs=2)", feature="blackjack")
        parts = audit_log(folder, deck="shoe(packs=2)", feature="blackjack")
        assert parts.tested == one.tested == 90
        assert [(t.name, t.statistic, t.log10_p_value) for t in one.result.overall.tests] == [
            (t.name, t.statistic, t.log10_p_value) for t in parts.result.overall.tests
        ]

    def test_pairs_reference_and_no_column_reference(self, tmp_path):
        orders = simulate_play(parse_procedure("grab"), 104, 20, rng=5)
        log = tmp_path / "pairs.csv"
        write_log(log, orders, "shoe(packs=2)", {"shoe": list(range(21))})
        result = audit_log(log, deck="shoe(packs=2)", feature="colour", reference="pairs")
        assert result.tested == 10 and result.reference_only == 11  # the odd last row too
        with pytest.raises(InputError, match="column:' is for decks of distinct cards"):
            audit_log(log, deck="shoe(packs=2)", reference="column:before")

    def test_summary_survives_pickling(self):
        import pickle

        ctx = ShoeContext.of(shoe(2), "blackjack")
        summary = BatterySummary.empty(104, shoe=ctx)
        again = pickle.loads(pickle.dumps(summary))
        assert [s.name for s in again.statistics] == [s.name for s in summary.statistics]
        assert again.shoe == ctx
