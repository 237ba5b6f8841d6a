"""Every job for shoes: assess, policy, power, simulate, mix, audit and track, on shoes and
features, through the library and the command line (JSON)."""

from __future__ import annotations

import json
import math
from fractions import Fraction

import numpy as np
import pytest

from shufflecheck.analyses.feature_assess import assess_feature
from shufflecheck.analyses.policy import evaluate_policy, load_policy
from shufflecheck.common.errors import InputError
from shufflecheck.models import features
from shufflecheck.models.procedures import parse_procedure
from shufflecheck.records.shoes import load_shoe, shoe
from shufflecheck.stats import shoe_nulls

from ._cli import run


@pytest.fixture(scope="module")
def tiny_shoe(tmp_path_factory):
    # an invented shoe of two codes, three copies each: six cards (exact word laws exist)
    path = tmp_path_factory.mktemp("tiny") / "tiny.toml"
    path.write_text('name = "tiny"\ncopies = 3\ncards = ["AS", "KH"]\n', encoding="utf-8")
    return load_shoe(path)


def reds_then_blacks(reds: str, blacks: str):
    """A one-pack deck of the red suits' cards in rank order above the black suits' (an
    invented test deck whose colour word starts in two blocks)."""
    from shufflecheck.records.cards import DeckDefinition

    ranks = "A23456789TJQK"
    cards = [r + s for s in reds for r in ranks] + [r + s for s in blacks for r in ranks]
    return shoe(1, DeckDefinition.from_cards("reds-then-blacks", cards))


class TestFeatureAssessment:
    def test_exact_for_a_small_deck_of_riffles(self, tiny_shoe):
        result = assess_feature(
            parse_procedure("riffle"), tiny_shoe, "cards", repeats=3, decks=2000, rng=3
        )
        start = tiny_shoe.feature_classes("cards").tolist()
        for row in result.rows:
            # exact: the arrangement law summed over all 6! orders (Bayer & Diaconis 1992)
            expected = features.feature_distances(start, row.repeats)
            assert row.exact is not None and row.exact.kind == "exact"
            assert row.exact.total_variation == pytest.approx(expected.total_variation.value)
            assert row.lower["total_variation"].value <= row.exact.total_variation + 1e-12
        assert result.feature == "cards" and result.deck.startswith("tiny")

    def test_bounds_for_a_shoe(self):
        result = assess_feature(
            parse_procedure("grab, cut"), shoe(6), "blackjack", repeats=2, decks=2000, rng=5
        )
        for row in result.rows:
            low = row.lower["total_variation"]
            assert low.kind == "bound" and low.side == "lower" and low.confidence == 0.99
            assert low.value > 0.5  # one grab pass from the packs in order: far from random
            up = row.upper.get("total_variation")
            assert up is None or (up.side == "upper" and up.value >= low.value)
            assert row.best_strategy == "most-frequent"
            assert row.uniform_guesses == pytest.approx(
                float(shoe_nulls.greedy_guessing_mean(shoe(6).class_counts("blackjack")))
            )

    def test_riffles_use_the_feature_figures(self):
        # 13 red above 13 black (two-valued blocks): exact TV on the colour word
        definition = reds_then_blacks("H", "S")
        result = assess_feature(
            parse_procedure("riffle"), definition, "colour", repeats=4, decks=1000, rng=1
        )
        row = result.rows[3]
        tv = row.upper["total_variation"]
        exact = features.two_valued_block_tv(13, 13, 16)
        assert tv.value == pytest.approx(float(exact)) and "exact" in tv.method

    def test_feature_lower_bounds_see_only_the_word(self):
        # regression: the first-appearance order of the 26 codes once gave a "lower bound"
        # of 0.988 on the colour word's distance after one riffle, whose exact value is
        # 0.498 (the codes are farther from random than their colours)
        definition = reds_then_blacks("H", "S")
        result = assess_feature(
            parse_procedure("riffle"), definition, "colour", repeats=3, decks=2000, rng=4
        )
        for row in result.rows:
            exact = float(features.two_valued_block_tv(13, 13, 2**row.repeats))
            assert row.lower["total_variation"].value <= exact
            assert "first-appearance" not in row.lower["total_variation"].method
        # the codes themselves (feature 'cards') keep the statistics of the codes
        from shufflecheck.stats.catalogue import (
            DeckContext,
            ShoeContext,
            lower_bound_statistics,
        )

        def names(feature, word_only):
            context = DeckContext.checked(26, shoe=ShoeContext.of(definition, feature))
            return {s.name for s in lower_bound_statistics(context, word_only=word_only)}

        assert "first-appearance-rising" in names("cards", False)
        assert "first-appearance-rising" not in names("colour", True)
        assert "segment-zone" not in names("colour", True)

    def test_full_colour_deck_gets_a_sure_lower_bound(self):
        # 26 red above 26 black: beyond the exact sum, the two-valued bracket
        # (models/two_valued.py, checked against brute force) gives both ends
        from shufflecheck.models.two_valued import two_valued_tv_bracket

        definition = reds_then_blacks("HD", "SC")
        result = assess_feature(
            parse_procedure("riffle"), definition, "colour", repeats=3, decks=1000, rng=2
        )
        for row in result.rows:
            found = two_valued_tv_bracket(26, 26, 2**row.repeats)
            low, up = row.lower["total_variation"], row.upper["total_variation"]
            assert low.value == pytest.approx(found.lower) and low.confidence is None
            assert up.value == pytest.approx(found.upper) and up.side == "upper"
            # the exact separation of a start in blocks closes the separation's range
            separation = float(features.block_separation((26, 26), 2**row.repeats))
            assert row.lower["separation"].value == pytest.approx(separation)
            assert row.upper["separation"].value == pytest.approx(separation)


class TestGuessingMean:
    @pytest.mark.parametrize("counts", [(5,) * 5, (2, 3, 1), (4, 1, 1, 2), (8,) * 9 + (32,)])
    def test_equals_the_law_mean(self, counts):
        assert (
            shoe_nulls.greedy_guessing_mean(counts) == shoe_nulls.greedy_guessing_law(counts).mean
        )

    def test_six_pack_blackjack(self):
        mean = shoe_nulls.greedy_guessing_mean([24] * 9 + [96])
        assert 96 < mean < 100 and isinstance(mean, Fraction)


POLICY = """
[policy]
title = "Shoe policy (invented)"
target = 0.1
simulate = 300
max_repeats = 2

[[procedure]]
name = "Hand grab"
deck = "shoe(packs=6)"
feature = "blackjack"
steps = "grab, cut"
house = 1

  [[procedure.log]]
  path = "shoes.csv"
"""


class TestPolicy:
    def test_shoe_procedure_and_log(self, tmp_path):
        from shufflecheck.models.procedures import simulate_play
        from shufflecheck.records.logs import write_log

        write_log(
            tmp_path / "shoes.csv",
            simulate_play(parse_procedure("grab, cut"), 312, 40, rng=2),
            "shoe(packs=6)",
        )
        path = tmp_path / "policy.toml"
        path.write_text(POLICY, encoding="utf-8")
        policy = load_policy(path)
        proc = policy.procedures[0]
        assert proc.cards == 312 and proc.feature == "blackjack"
        result = evaluate_policy(policy)
        decision = result.decisions[0]
        assert decision.assessment.feature == "blackjack"
        assert decision.standing == "fails"  # the lower bounds exclude one grab pass
        ((_, audit),) = decision.audits
        assert audit.shoe is not None and audit.result.overall.flagged
        if decision.settlement is not None and decision.settlement.audit is not None:
            assert decision.settlement.audit.unit == "shoes"

    @pytest.mark.parametrize(
        ("extra", "message"),
        [
            ('feature = "blackjack"', "a feature needs a shoe"),
            ('deck = "shoe(packs=6)"\nfeature = "values"', "unknown feature 'values'"),
            ('deck = "standard-52"', "not a shoe"),
            ('deck = "shoe(packs=6)"\ncards = 52', "the shoe has 312 cards, not 52"),
        ],
    )
    def test_errors_name_file_line_and_key(self, tmp_path, extra, message):
        path = tmp_path / "bad.toml"
        path.write_text(
            f'[policy]\ntarget = 0.1\n\n[[procedure]]\nsteps = "grab"\n{extra}\n', encoding="utf-8"
        )
        with pytest.raises(InputError, match=message) as info:
            load_policy(path)
        assert "bad.toml" in str(info.value)


class TestCommandLine:
    def test_assess(self):
        result = run(
            "assess",
            "grab",
            "--deck",
            "shoe(packs=6)",
            "--feature",
            "blackjack",
            "--repeat",
            "1",
            "--simulate",
            "500",
            "--json",
        )
        assert result.exit_code == 0, result.output
        payload = json.loads(result.stdout)
        assert payload["feature"] == "blackjack" and payload["cards"] == 312

    def test_assess_feature_needs_a_shoe(self):
        result = run("assess", "riffle", "--feature", "blackjack", "--simulate", "100")
        assert result.exit_code == 2 and "give the shoe as the --deck" in result.stderr

    def test_power(self):
        result = run(
            "power",
            "grab",
            "--deck",
            "shoe(packs=6)",
            "--feature",
            "blackjack",
            "--simulate",
            "500",
            "--json",
        )
        assert result.exit_code == 0, result.output
        payload = json.loads(result.stdout)
        assert payload["feature"] == "blackjack"
        rows = {r["test"]: r["decks"] for r in payload["plans"][0]["rows"]}
        assert rows["segment-zone"] is not None and rows["segment-zone"] < 100

    def test_simulate_and_audit(self, tmp_path):
        out = tmp_path / "shoes.csv"
        result = run(
            "simulate", "grab", "--deck", "shoe(packs=6)", "--decks", "30", "--out", str(out)
        )
        assert result.exit_code == 0, result.output
        assert "30 simulated shoes" in result.stdout
        audit = run("audit", str(out), "--deck", "shoe(packs=6)", "--feature", "baccarat", "--json")
        assert audit.exit_code == 0, audit.output
        payload = json.loads(audit.stdout)
        assert payload["log"]["shoe"]["feature"] == "baccarat"
        assert payload["log"]["shoe"]["classes"][0] == "0"

    def test_audit_bad_copies(self, tmp_path):
        out = tmp_path / "shoes.csv"
        run("simulate", "grab", "--deck", "shoe(packs=2)", "--decks", "3", "--out", str(out))
        lines = out.read_text(encoding="utf-8").splitlines()
        cells = lines[2].split(",")
        codes = cells[1].split()
        codes[0] = "QH" if codes[0] != "QH" else "KH"
        lines[2] = f"{cells[0]},{' '.join(codes)}"
        out.write_text("\n".join(lines) + "\n", encoding="utf-8")
        result = run("audit", str(out), "--deck", "shoe(packs=2)")
        assert result.exit_code == 2
        assert "row 3:" in result.stderr and "appears 3 times, 2 expected" in result.stderr

    def test_mix_on_a_feature(self):
        result = run(
            "mix", "riffle", "--feature", "colour", "--start", "blocks", "-k", "3", "--json"
        )
        assert result.exit_code == 0, result.output
        payload = json.loads(result.stdout)
        assert payload["feature"] == "colour" and payload["start"] == "blocks"
        separation = payload["rows"][2]["separation"]
        assert separation["kind"] == "exact"
        exact = features.block_separation([26, 26], 8)
        assert separation["value"] == pytest.approx(float(exact))

    def test_mix_says_distinct(self):
        result = run("mix", "riffle", "-k", "2")
        assert result.exit_code == 0 and "Feature: distinct cards" in result.stdout
        payload = json.loads(run("mix", "riffle", "-k", "2", "--json").stdout)
        assert payload["feature"] == "distinct"

    def test_track(self, tmp_path):
        result = run(
            "track",
            "grab",
            "--simulate",
            "2000",
            "--placement",
            "fixed",
            "--json",
            "--report",
            str(tmp_path / "report"),
        )
        assert result.exit_code == 0, result.output
        payload = json.loads(result.stdout)
        chance = payload["chance_at_least"]
        assert chance["kind"] == "estimate" and chance["interval"][0] > 0.4
        assert payload["chance_at_least_random"]["kind"] == "exact"
        # a fixed window of a uniform shoe: P(hypergeometric(312, 52, 52) >= 26)
        from scipy.stats import hypergeom

        assert payload["chance_at_least_random"]["value"] == pytest.approx(
            float(hypergeom(312, 52, 52).sf(25)), rel=1e-9
        )
        assert (tmp_path / "report" / "report.html").exists()
        assert "not a certification" in payload["caution"]

    def test_track_needs_one_source(self):
        result = run("track")
        assert result.exit_code == 2 and "PROCEDURE" in result.stderr


class TestPythonApi:
    def test_audit_an_array_of_kind_labels(self):
        import shufflecheck

        two = shoe(2)
        rng = np.random.default_rng(1)
        words = two.physical_kinds()[np.argsort(rng.random((120, 104)), axis=1)]
        result = shufflecheck.audit(words, deck="shoe(packs=2)", feature="colour")
        assert result.tested == 119 and not result.result.flagged
        assert result.to_dict()["log"]["shoe"]["feature"] == "colour"
        fixed = shufflecheck.audit(
            words, deck="shoe(packs=2)", feature="colour", reference=two.physical_kinds()
        )
        assert fixed.tested == 120
        with pytest.raises(InputError, match="kind labels"):
            shufflecheck.audit(words + 60, deck="shoe(packs=2)")

    def test_assess_and_power_on_a_feature(self):
        import shufflecheck

        result = shufflecheck.assess(
            "grab", deck="shoe(packs=2)", feature="blackjack", repeats=2, decks=2000
        )
        assert result.feature == "blackjack" and len(result.to_frame()) == 2
        plan = shufflecheck.power("grab", deck="shoe(packs=2)", feature="colour", simulate=300)
        assert plan.cards == 104 and plan.best().decks is not None
        with pytest.raises(InputError, match="for shoes"):
            shufflecheck.assess("riffle", feature="blackjack")


def test_tracking_span_of_a_random_shoe():
    # the smallest span holding 47 of 52 random positions of 312: its Monte Carlo mean
    # (the baseline of every tracking figure) against a direct simulation by sorting
    from shufflecheck.analyses.tracking import tracking_exposure

    rng = np.random.default_rng(0)
    positions = np.sort(np.argsort(rng.random((20000, 312)), axis=1)[:, :52], axis=1)
    direct = (positions[:, 46:] - positions[:, :6] + 1).min(axis=1).mean()
    result = tracking_exposure(parse_procedure("riffle x20"), 312, shoes=20000, rng=1)
    se = result.spread_random.stderr
    assert math.isclose(result.spread_random.value, direct, abs_tol=6 * se + 0.5)
