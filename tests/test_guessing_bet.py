"""The guessing game as a test martingale (:mod:`shufflecheck.stats.guessing_bet`) for
shoes whose exact or bracketed null is out of reach.

Checked against: every arrangement of small multisets (enumerated by sympy's
``multiset_permutations``), where each tilt's martingale must average exactly 1 over the
uniform law; a plain re-implementation of the greedy player's chances; calibration on
uniform shoes (Ville's inequality: an e-value of 1/alpha or more at most alpha of the time);
and a dealer biased towards the greedy guess, which the test must flag."""

from __future__ import annotations

import math

import numpy as np
import pytest
from sympy.utilities.iterables import multiset_permutations

from shufflecheck.common.errors import InputError
from shufflecheck.records.shoes import shoe
from shufflecheck.stats.catalogue import ShoeContext
from shufflecheck.stats.guessing_bet import TILTS, bet_outcome, log_evalues, shoe_gains
from shufflecheck.stats.shoe_statistics import greedy_scores, greedy_step_cells, greedy_steps
from shufflecheck.stats.summary import BatterySummary


def tables(words: np.ndarray, counts: np.ndarray) -> list[np.ndarray]:
    rows, cols = greedy_step_cells(counts)
    codes = greedy_steps(words, np.arange(counts.size), counts)
    return [
        np.bincount(c.astype(np.int64), minlength=rows * cols).reshape(rows, cols) for c in codes
    ]


def uniform_words(counts, shoes: int, rng) -> np.ndarray:
    base = np.repeat(np.arange(len(counts)), counts)
    return base[np.argsort(rng.random((shoes, base.size)), axis=1)]


class TestMartingale:
    @pytest.mark.parametrize("counts", [(3, 2, 2), (2, 2, 2, 1), (4, 1, 1), (3, 3), (2, 2, 2, 2)])
    def test_mean_one_over_every_arrangement(self, counts):
        counts = np.array(counts)
        base = np.repeat(np.arange(counts.size), counts).tolist()
        words = np.array(list(multiset_permutations(base)))
        values = np.array([np.exp(log_evalues(t)) for t in tables(words, counts)])
        assert values.mean(axis=0) == pytest.approx(np.ones(len(TILTS)), rel=1e-12)

    def test_chances_against_a_plain_player(self):
        # the player re-implemented with explicit counts: M / r before each card, and
        # right when the card's class is the lowest of the most frequent ones
        counts = np.array([5, 3, 3, 2])
        rng = np.random.default_rng(1)
        words = uniform_words(counts, 40, rng)
        _, cols = greedy_step_cells(counts)
        codes = greedy_steps(words, np.arange(4), counts)
        for word, code in zip(words.tolist(), codes.tolist(), strict=True):
            left = counts.tolist()
            for i, card in enumerate(word):
                top = max(left)
                guess = left.index(top)
                assert code[i] == top * cols + 2 * (len(word) - i) + (card == guess)
                left[card] -= 1
        assert ((codes % 2).sum(axis=1) == greedy_scores(words, np.arange(4), counts)).all()

    def test_shoe_gains_add_up_to_the_table(self):
        counts = np.array([24] * 13)
        words = uniform_words(counts, 5, np.random.default_rng(2))
        _, cols = greedy_step_cells(counts)
        codes = greedy_steps(words, np.arange(13), counts)
        gains = shoe_gains(codes, cols)
        total = sum(tables(words, counts))
        assert gains.sum(axis=0) == pytest.approx(log_evalues(total), rel=1e-12)

    def test_bad_tables(self):
        with pytest.raises(InputError, match="shape"):
            log_evalues(np.zeros((3, 5)))
        bad = np.zeros((4, 8), dtype=int)
        bad[3, 2] = 1  # M = 3 with r = 1
        with pytest.raises(InputError, match="M <= r"):
            log_evalues(bad)


class TestCalibrationAndPower:
    def test_uniform_shoes_rarely_alarm(self):
        # 400 audits of 20 uniform shoes of 3 x 12 + 2 x 6 cards: P(E >= 20) <= 0.05
        counts = np.array([12, 12, 12, 6, 6])
        rng = np.random.default_rng(3)
        alarms = 0
        for _ in range(400):
            found = bet_outcome(sum(tables(uniform_words(counts, 20, rng), counts)))
            alarms += found.log_p <= math.log(0.05)
        assert alarms / 400 <= 0.05 + 3 * math.sqrt(0.05 * 0.95 / 400)

    def test_a_dealer_favouring_the_guess_is_flagged(self):
        # each card is of the greedy guess's class with 1.5 times its fair weight
        counts = np.array([12] * 13)
        rng = np.random.default_rng(4)
        shoes = []
        for _ in range(60):
            left = counts.astype(float).copy()
            word = []
            for _ in range(int(counts.sum())):
                weight = left.copy()
                weight[int(np.argmax(left))] *= 1.5
                card = int(rng.choice(13, p=weight / weight.sum()))
                word.append(card)
                left[card] -= 1
            shoes.append(word)
        found = bet_outcome(sum(tables(np.array(shoes), counts)))
        assert found.right > found.chance
        assert found.log_p < math.log(1e-6)


class TestInTheAudit:
    def test_merge_equals_one_pass(self):
        definition = shoe(3)
        ctx = ShoeContext.of(definition, "rank")
        words = definition.physical_kinds()[
            np.argsort(np.random.default_rng(6).random((121, definition.size)), axis=1)
        ]
        one = BatterySummary.empty(definition.size, shoe=ctx)
        one.update(words[1:], words[1:], references=words[:-1])
        a = BatterySummary.empty(definition.size, shoe=ctx)
        b = BatterySummary.empty(definition.size, shoe=ctx)
        a.update(words[1:60], words[1:60], references=words[:59])
        b.update(words[60:], words[60:], references=words[59:-1])
        merged = a.merge(b)
        for key, value in one.as_arrays().items():
            assert (merged.as_arrays()[key] == value).all(), key
        first = one.finish().overall.test("guess-most-frequent-bet")
        second = merged.finish().overall.test("guess-most-frequent-bet")
        assert first.log10_p_value == second.log10_p_value

    def test_power_plans_it(self):
        from shufflecheck.stats import power

        ctx = ShoeContext.of(shoe(3), "rank")
        kinds = shoe(3).physical_kinds()

        def sample(count, generator):
            return kinds[np.argsort(generator.random((count + 1, kinds.size)), axis=1)]

        plan = power.plan_shoes(sample, ctx, simulate=200, rng=np.random.default_rng(8))
        row = next(r for r in plan.rows if r.test == "guess-most-frequent-bet")
        assert row.decks is None  # uniform shoes: nothing to detect
        assert "betting guessing game needs none" in plan.null_text()


def test_audit_command_runs_it(tmp_path):
    import json

    from typer.testing import CliRunner

    from shufflecheck.cli import app

    runner = CliRunner()
    log = tmp_path / "shoes.csv"
    made = runner.invoke(
        app,
        ["simulate", "riffle x7", "--deck", "shoe(packs=6)", "--decks", "30", "--out", str(log)],
    )
    assert made.exit_code == 0, made.output
    result = runner.invoke(app, ["audit", str(log), "--deck", "shoe(packs=6)", "--json"])
    assert result.exit_code == 0, result.output
    payload = json.loads(result.output)
    test = next(t for t in payload["tests"] if t["name"] == "guess-most-frequent-bet")
    assert test["method"] == "bound"
    assert all(s["name"] != "guess-most-frequent" for s in payload["skipped"])
    flat = " ".join(
        runner.invoke(app, ["audit", str(log), "--deck", "shoe(packs=6)"]).output.split()
    )
    assert "guessing game, most frequent value (betting)" in flat
    # the report: no score histogram for it (it keeps a table of guesses and has no law),
    # its p-value labelled a bound in the figure
    from shufflecheck.report.figures import keep_drawn

    folder = tmp_path / "report"
    with keep_drawn() as drawn:
        written = runner.invoke(
            app, ["audit", str(log), "--deck", "shoe(packs=6)", "--report", str(folder)]
        )
    assert written.exit_code == 0, written.output
    assert "guessing game, most frequent value (betting)" in (folder / "report.md").read_text()
    names = [name for name, _ in drawn]
    assert "pvalues" in names and "guessing" not in names
    figure = dict(drawn)["pvalues"]
    labels = [t.get_text() for t in figure.axes[0].texts]
    assert any("(bound)" in text for text in labels)
