"""Procedure text, TOML procedure files, and composition of steps."""

from __future__ import annotations

import itertools
from collections import Counter

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.models.cut import Cut
from shufflecheck.models.overhand import Strip
from shufflecheck.models.procedures import load_procedure, parse_procedure, procedure_from_argument
from shufflecheck.models.riffle import Riffle

from . import _brute


class TestParse:
    def test_issue_example(self):
        proc = parse_procedure("riffle x3, strip(packets=5), riffle, cut")
        steps = [(item.step.keyword, item.times) for item in proc.items]
        assert steps == [("riffle", 3), ("strip", 1), ("riffle", 1), ("cut", 1)]
        assert proc.items[1].step == Strip(packets=5)
        assert [s.keyword for s in proc.expanded()] == ["riffle"] * 3 + ["strip", "riffle", "cut"]

    def test_spellings(self):
        a = parse_procedure("Riffle X3,cut")
        b = parse_procedure("riffle ×3 , cut")
        c = parse_procedure("riffle*3, cut")
        steps = [[(i.step, i.times) for i in p.items] for p in (a, b, c)]
        assert steps[0] == steps[1] == steps[2]
        assert [i.times for i in c.items] == [3, 1]

    def test_parameter_types(self):
        proc = parse_procedure(
            'riffle(hands=3) x2, cut(spread=4.5, least=4), pile(piles=4, pickup="forward")'
        )
        assert proc.items[0].step == Riffle(hands=3)
        assert proc.items[1].step == Cut(spread=4.5, least=4)
        assert proc.items[2].step.piles == 4

    def test_describe_round_trip(self):
        text = "riffle x3, strip(packets=5), riffle(hands=3), cut(spread=3)"
        proc = parse_procedure(text)
        again = parse_procedure(proc.describe())
        assert [(i.step, i.times) for i in again.items] == [(i.step, i.times) for i in proc.items]

    def test_runs_merge_repetitions(self):
        proc = parse_procedure("cut, riffle x2")
        assert [(s.keyword, t) for s, t in proc.runs(2)] == [
            ("cut", 1),
            ("riffle", 2),
            ("cut", 1),
            ("riffle", 2),
        ]
        proc = parse_procedure("riffle x2")
        assert [(s.keyword, t) for s, t in proc.runs(3)] == [("riffle", 6)]


class TestParseErrors:
    @pytest.mark.parametrize(
        ("text", "message"),
        [
            ("rifle x3", "unknown step 'rifle' at column 1; did you mean 'riffle'?"),
            ("riffle x3, strp", "unknown step 'strp' at column 12; did you mean 'strip'?"),
            ("riffle,, cut", "empty step (two commas in a row?) at column 8"),
            ("riffle, cut,", "the procedure ends with a comma; a step is missing at column 13"),
            ("riffle cut", "expected ',' between steps, found 'c' at column 8"),
            ("riffle x0", "the repeat count must be from 1 to 10,000, got 0 at column 8"),
            ("riffle(hands=two)", "riffle: hands must be an integer, got 'two' at column 14"),
            ("strip(packet=5)", "strip: unknown parameter 'packet'"),
            ("riffle(hands=3", "riffle: expected ',' or ')' after hands=3"),
            ("riffle(hands=2, hands=3)", "parameter hands given twice"),
            ("", "the procedure is empty"),
            ("3 riffles", "expected a step name, found '3' at column 1"),
        ],
    )
    def test_messages(self, text, message):
        with pytest.raises(InputError) as info:
            parse_procedure(text)
        assert message in str(info.value)
        assert "\n" not in str(info.value)

    def test_parameter_validation_names_the_step(self):
        with pytest.raises(
            InputError, match=r"must be an integer from 2 to 1,048,576, got 1 \(step at column 9\)"
        ):
            parse_procedure("cut x2, riffle(hands=1)")


class TestTomlFiles:
    def test_load(self, tmp_path):
        path = tmp_path / "house.toml"
        path.write_text(
            'name = "Main floor"\npacks = 2\nsteps = ["riffle x3", "strip(packets=5)", "cut"]\n'
        )
        proc = load_procedure(path)
        assert proc.name == "Main floor" and proc.cards == 104
        assert [i.step.keyword for i in proc.items] == ["riffle", "strip", "cut"]
        assert procedure_from_argument(str(path)).cards == 104

    @pytest.mark.parametrize(
        ("body", "message"),
        [
            ('name = "x"\nstep = "riffle"\n', "line 2: key 'step': unknown key"),
            (
                'name = "x"\ncards = 1\nsteps = "riffle"\n',
                "line 2: key 'cards': the number of cards must be an integer from 2 to 32,767",
            ),
            (
                'cards = 52\npacks = 6\nsteps = "riffle"\n',
                "line 2: key 'packs': give cards or packs",
            ),
            ('name = "x"\n', "key 'steps': missing"),
            ('steps = "rifle x3"\n', "line 1: key 'steps': unknown step 'rifle' at column 1"),
            ("steps = [1, 2]\n", "line 1: key 'steps': must be a string or a list of strings"),
            ('steps = "riffle\n', "invalid TOML"),
            ("", "the file is empty"),
        ],
    )
    def test_errors_name_file_line_and_key(self, tmp_path, body, message):
        path = tmp_path / "p.toml"
        path.write_text(body)
        with pytest.raises(InputError) as info:
            load_procedure(path)
        assert str(info.value).startswith(str(path))
        assert message in str(info.value)

    def test_missing_file(self):
        with pytest.raises(InputError, match="no such procedure file"):
            procedure_from_argument("nowhere/house.toml")


class TestComposition:
    def test_sample_is_the_composition_of_steps(self):
        # two riffles then a top-to-random move, on 4 cards: brute force over all 4! decks
        proc = parse_procedure("riffle x2, top-to-random")
        decks = proc.sample(60000, 4, rng=11)
        law = _brute.law_after(_brute.riffle_outcomes(4), 4, 2)
        ttr = _brute.top_to_random_outcomes(4)
        total = {}
        for deck, p in law.items():
            for source, _ in ttr:
                new = tuple(deck[s] for s in source)
                total[new] = total.get(new, 0) + p / 4
        observed = Counter(map(tuple, decks.tolist()))
        from scipy import stats

        perms = list(itertools.permutations(range(4)))
        expected = np.array([float(total.get(p, 0)) for p in perms]) * len(decks)
        keep = expected > 0
        assert sum(observed[p] for p, k in zip(perms, keep, strict=True) if not k) == 0
        obs = np.array([observed[p] for p in perms])[keep]
        assert stats.chisquare(obs, expected[keep]).pvalue > 1e-3

    def test_repeats(self):
        proc = parse_procedure("riffle")
        a = proc.sample(5, 10, repeats=3, rng=1)
        assert (np.sort(a, axis=1) == np.arange(10)).all()

    def test_deterministic(self):
        assert parse_procedure("pile(piles=4), weave").deterministic
        assert not parse_procedure("pile, riffle").deterministic
