"""The Python API (shufflecheck.api): its documented examples run, and every input form
gives the result the command line gives."""

from __future__ import annotations

import doctest
import json
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import shufflecheck
from shufflecheck import api
from shufflecheck.common.errors import InputError
from shufflecheck.models.riffle import sample as riffles
from shufflecheck.records.logs import write_log

from ._cli import command_json

ROOT = Path(__file__).resolve().parents[1]
FLAGS = doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE


@pytest.fixture
def at_root():
    before = os.getcwd()
    os.chdir(ROOT)
    try:
        yield
    finally:
        os.chdir(before)


class TestDocumentedExamples:
    def test_walkthrough_page(self, at_root):
        # docs/python-api.md is a notebook-style session; every example is checked
        result = doctest.testfile(
            str(ROOT / "docs" / "python-api.md"), module_relative=False, optionflags=FLAGS
        )
        assert result.attempted > 30 and result.failed == 0

    def test_readme_section(self, at_root):
        result = doctest.testfile(str(ROOT / "README.md"), module_relative=False, optionflags=FLAGS)
        assert result.attempted >= 5 and result.failed == 0

    def test_docstrings(self):
        result = doctest.testmod(api, optionflags=FLAGS)
        assert result.attempted >= 8 and result.failed == 0


def chained(count: int, riffles_per_deck: int, seed: int) -> np.ndarray:
    moves = riffles(count, 52, riffles_per_deck, rng=seed)
    out = np.empty_like(moves)
    deck = np.arange(52)
    for k, move in enumerate(moves):
        deck = deck[move]
        out[k] = deck
    return out


def battery_tests(result) -> list[dict]:
    return result.to_dict()["tests"]


class TestInputForms:
    def test_array_frame_and_file_agree(self, tmp_path):
        decks = chained(120, 5, seed=9)
        tables = np.array(["A", "B", "C"])[np.arange(120) % 3]
        path = tmp_path / "log.csv"
        write_log(path, decks, columns={"table": tables})
        from_file = shufflecheck.audit(path, by="table")
        from_array = shufflecheck.audit(decks, by=tables)
        frame = pd.DataFrame({"table": tables, "order": [" ".join(map(str, d)) for d in decks]})
        from_frame = shufflecheck.audit(frame, by="table", labels="int0")
        assert battery_tests(from_file) == battery_tests(from_array) == battery_tests(from_frame)
        assert from_file.to_dict()["groups"] == from_array.to_dict()["groups"]
        # and the command line prints the same object's JSON
        cli = command_json("audit", path, "--by", "table")
        assert cli == json.loads(json.dumps(from_file.to_dict(), default=float))

    def test_per_deck_starting_orders(self):
        rng = np.random.default_rng(4)
        starts = rng.permuted(np.tile(np.arange(52), (200, 1)), axis=1)
        moves = riffles(200, 52, 2, rng=3)
        after = np.take_along_axis(starts, moves.astype(np.intp), axis=1)
        own = shufflecheck.audit(after, reference=starts)
        # relative to its own start each deck is exactly the riffle that made it, so the
        # audit equals that of the moves against the identity (DEVELOPERS.md conventions)
        plain = shufflecheck.audit(moves, reference="deck")
        relative_only = [
            "rising-sequences",
            "descents",
            "fixed-points",
            "cycles",
            "inversions",
            "successions",
            "adjacent-pairs",
            "position-by-card",
        ]
        a = {t["name"]: t for t in battery_tests(own) if t["name"] in relative_only}
        b = {t["name"]: t for t in battery_tests(plain) if t["name"] in relative_only}
        assert a.keys() == set(relative_only)
        for name in relative_only:  # statistic and p-value; Holm adjusts over the battery
            assert (a[name]["statistic"], a[name]["p_value"]) == (
                b[name]["statistic"],
                b[name]["p_value"],
            ), name
        assert own.tested == 200 and own.result.flagged

    def test_one_reference_order_for_all(self):
        decks = chained(50, 6, seed=1)
        order = np.arange(52)[::-1]
        result = shufflecheck.audit(decks, reference=order)
        assert result.tested == 50 and result.reference == " ".join(map(str, order))

    def test_one_based_labels(self):
        decks = chained(40, 6, seed=2)
        a = shufflecheck.audit(decks + 1, labels="int1")
        b = shufflecheck.audit(decks)
        assert battery_tests(a) == battery_tests(b)

    def test_smaller_decks_need_no_definition(self):
        decks = np.random.default_rng(0).permuted(np.tile(np.arange(10), (300, 1)), axis=1)
        result = shufflecheck.audit(decks)
        assert result.deck.size == 10 and result.tested == 299


class TestErrors:
    def test_not_an_array(self):
        with pytest.raises(InputError, match=r"decks must be a 2-D integer array"):
            shufflecheck.audit(np.zeros(52))

    def test_not_arrangements(self):
        decks = np.tile(np.arange(52), (3, 1))
        decks[1, 5] = decks[1, 6]
        with pytest.raises(InputError, match=r"decks row 2: card \d+ appears twice"):
            shufflecheck.audit(decks)

    def test_groups_one_per_deck(self):
        with pytest.raises(InputError, match=r"by: expected 3 values \(one per deck\), got 2"):
            shufflecheck.audit(np.tile(np.arange(52), (3, 1)), by=["A", "B"])

    def test_reference_shape(self):
        with pytest.raises(InputError, match=r"reference: expected shape \(52,\)"):
            shufflecheck.audit(np.tile(np.arange(52), (3, 1)), reference=np.zeros((2, 52), int))


class TestResults:
    def test_frames(self):
        curve = shufflecheck.mix("riffle", 52, steps=12)
        frame = curve.to_frame()
        assert list(frame.index) == list(range(1, 13)) and set(frame["kind"]) == {"exact"}
        assessment = shufflecheck.assess("riffle x2, cut", 52, repeats=3, decks=2000)
        assert list(assessment.to_frame().index) == [1, 2, 3]
        assert assessment.to_dict()["rows"][0]["repeats"] == 1

    @pytest.mark.slow  # two policy evaluations; the walkthrough runs policy() by default
    def test_policy_dict_is_the_cli_json(self, at_root):
        cli = command_json("policy", "data/demo/policy.toml")
        mine = json.loads(
            json.dumps(shufflecheck.policy("data/demo/policy.toml").to_dict(), default=float)
        )
        ideal = [p["minimum"] for p in mine["procedures"] if p["name"].startswith("Ideal")]
        assert ideal == [p["minimum"] for p in cli["procedures"] if p["name"].startswith("Ideal")]
        assert ideal == [9]  # Bayer & Diaconis 1992: 9 riffles for TV <= 0.1
        assert mine.keys() == cli.keys()

    def test_audit_is_the_api_function_and_stats_the_layer(self):
        import shufflecheck.stats.summary as summary

        assert shufflecheck.audit is shufflecheck.api.audit
        assert shufflecheck.stats.BatterySummary is summary.BatterySummary
        decks = np.random.default_rng(1).permuted(np.tile(np.arange(52), (30, 1)), axis=1)
        assert shufflecheck.audit(decks).tested == 29
