"""Card codes, deck definitions, the check of one arrangement, relative permutations."""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.records.cards import STANDARD_52, DeckDefinition, canonical_code, load_deck
from shufflecheck.records.orders import check_arrangement, integer_value, parse_order, relative_to

DATA = Path(__file__).resolve().parent.parent / "data" / "decks"
EXPECTED = "expected rank A,2-9,T/10,J,Q,K and suit S,H,D,C"


class TestCanonicalCode:
    @pytest.mark.parametrize(
        ("given", "canonical"),
        [
            ("AS", "AS"),
            ("as", "AS"),
            (" aS ", "AS"),
            ("10h", "TH"),
            ("Th", "TH"),
            ("tH", "TH"),
            ("10♥", "TH"),
            ("T♥\ufe0f", "TH"),  # emoji presentation selector after the symbol
            ("10♡", "TH"),
            ("Q♣", "QC"),
            ("q♧", "QC"),
            ("7♦", "7D"),
            ("k♠\ufe0e", "KS"),
            ("9c", "9C"),
        ],
    )
    def test_spellings(self, given, canonical):
        assert canonical_code(given) == canonical

    @pytest.mark.parametrize("bad", ["XS", "1S", "11H", "A", "ASS", "", "S A", "0S", "AX"])
    def test_unknown(self, bad):
        with pytest.raises(InputError, match="unknown card code") as info:
            canonical_code(bad)
        assert EXPECTED in str(info.value)

    def test_message_names_the_code(self):
        with pytest.raises(InputError) as info:
            canonical_code("XS")
        assert str(info.value) == f"unknown card code 'XS'; {EXPECTED}"


class TestStandard52:
    def test_new_deck_order(self):
        # new-deck order: spades A-K, diamonds A-K, clubs K-A, hearts K-A
        # common practice, no published source
        cards = STANDARD_52.cards
        assert STANDARD_52.size == 52 and len(set(cards)) == 52
        assert cards[:13] == tuple(r + "S" for r in "A23456789TJQK")
        assert cards[13:26] == tuple(r + "D" for r in "A23456789TJQK")
        assert cards[26:39] == tuple(r + "C" for r in "KQJT98765432A")
        assert cards[39:] == tuple(r + "H" for r in "KQJT98765432A")
        assert (cards[0], cards[12], cards[13], cards[26], cards[38], cards[39], cards[51]) == (
            "AS",
            "KS",
            "AD",
            "KC",
            "AC",
            "KH",
            "AH",
        )

    def test_suits_and_colours(self):
        suits = STANDARD_52.suit_codes()
        colours = STANDARD_52.colour_codes()
        assert STANDARD_52.suit_names == ("S", "D", "C", "H")
        assert STANDARD_52.colour_names == ("black", "red")
        assert np.bincount(suits).tolist() == [13, 13, 13, 13]
        assert np.bincount(colours).tolist() == [26, 26]
        for label, code in enumerate(STANDARD_52.cards):
            assert STANDARD_52.suits[label] == code[1]
            assert STANDARD_52.colours[label] == ("red" if code[1] in "HD" else "black")

    def test_label_lookup(self):
        assert STANDARD_52.label("10h") == STANDARD_52.label("TH") == 42
        assert STANDARD_52.label("Q♣") == 27
        assert STANDARD_52.code(51) == "AH"
        assert STANDARD_52.lookup("XS") is None
        assert STANDARD_52.lookup(7) is None

    def test_label_errors(self):
        with pytest.raises(InputError) as info:
            STANDARD_52.label("XS")
        assert str(info.value) == f"unknown card code 'XS'; {EXPECTED}"
        with pytest.raises(InputError, match=r"integer labels need labels='int'"):
            STANDARD_52.label("17")
        with pytest.raises(InputError, match=r"out of range 0\.\.51"):
            STANDARD_52.code(52)

    def test_every_spelling_resolves_to_its_label(self):
        # the vectorised reader's table must agree with the one-token lookup
        for spelling, label in STANDARD_52.spellings().items():
            assert STANDARD_52.lookup(spelling) == label
            assert STANDARD_52.lookup(spelling.lower()) == label

    def test_built_in_names(self):
        assert load_deck(None) is STANDARD_52
        assert load_deck("standard") is STANDARD_52
        assert load_deck("standard-52") is STANDARD_52
        assert load_deck(STANDARD_52) is STANDARD_52


class TestDeckFiles:
    def test_piquet_32(self):
        deck = load_deck(DATA / "piquet-32.toml")
        assert deck.size == 32 and deck.name == "lantern-piquet-32"
        assert deck.cards[:8] == ("AS", "KS", "QS", "JS", "TS", "9S", "8S", "7S")
        assert np.bincount(deck.suit_codes()).tolist() == [8, 8, 8, 8]
        with pytest.raises(InputError) as info:
            deck.label("2S")
        assert str(info.value) == "card 2S is not in deck 'lantern-piquet-32'"

    def test_stripped_36_with_symbols(self):
        deck = load_deck(DATA / "stripped-36.toml")
        assert deck.size == 36
        assert deck.cards[4] == "TS" and deck.label("10♠") == 4 and deck.label("6c") == 35
        assert deck.colour_names == ("black", "red")

    def test_jokers_54(self):
        deck = load_deck(DATA / "jokers-54.toml")
        assert deck.size == 54
        assert deck.cards[:52] == STANDARD_52.cards
        assert deck.cards[52:] == ("RJ", "BJ") and deck.special_codes == ("RJ", "BJ")
        assert deck.suits[52:] == (None, None) and deck.colours[52:] == ("red", "black")
        assert deck.suit_codes()[52:].tolist() == [-1, -1]
        assert deck.label("rj") == 52 and deck.label(" Bj ") == 53
        with pytest.raises(InputError) as info:
            deck.label("JK")
        assert str(info.value) == f"unknown card code 'JK'; {EXPECTED} or one of RJ, BJ"

    def test_every_spelling_of_a_file_deck(self):
        deck = load_deck(DATA / "jokers-54.toml")
        for spelling, label in deck.spellings().items():
            assert deck.lookup(spelling.lower()) == label

    @pytest.mark.parametrize(
        ("content", "message"),
        [
            ('name = "x"\ncards = [', "(deck definition): invalid TOML"),
            ('name = "x"\ncards = ["AS"]\ncolour = "red"', "unknown key 'colour'"),
            ('cards = ["AS"]', "'name' must be non-empty text"),
            ('name = "x"\ncards = "AS KS"', "is not a built-in deck (standard-52)"),
            ('name = "x"\ncards = []', "'cards' must be a non-empty list"),
            ('name = "x"\ncards = ["AS", "as"]', "card AS is listed twice (entries 1 and 2)"),
            ('name = "x"\ncards = ["AS", { code = "J", color = "red" }]', "unknown key 'color'"),
            ('name = "x"\ncards = ["AS", { suit = "S" }]', "'code' must be text"),
            ('name = "x"\ncards = ["AS", "12"]', "only digits"),
            ('name = "x"\ncards = ["AS", "A S"]', "contains a space"),
            ('name = "x"\ncards = ["AS", 3]', "expected a code or a table with 'code', got 3"),
        ],
    )
    def test_bad_files(self, tmp_path, content, message):
        path = tmp_path / "deck.toml"
        path.write_text(content, encoding="utf-8")
        with pytest.raises(InputError) as info:
            load_deck(path)
        assert str(info.value).startswith(str(path)) and message in str(info.value)

    def test_missing_file(self, tmp_path):
        with pytest.raises(InputError, match="neither a built-in deck"):
            load_deck(tmp_path / "nope.toml")

    def test_four_colour_override(self):
        deck = DeckDefinition.from_cards(
            "four-colour",
            ["AS", {"code": "AD", "colour": "Blue"}, {"code": "AC", "colour": "green"}],
        )
        assert deck.colours == ("black", "blue", "green")
        assert deck.colour_codes().tolist() == [0, 1, 2]


class TestCheckArrangement:
    deck = DeckDefinition.from_cards("five", ["AS", "2S", "3S", "4S", "5S"])

    def check(self, tokens, **kw):
        return check_arrangement(tokens, self.deck, **kw)

    def test_valid(self):
        got = self.check(["5s", "AS", "3♠", "2S", "4s"])
        assert got.ok and got.labels.tolist() == [4, 0, 2, 1, 3] and got.labels.dtype == np.int16

    @pytest.mark.parametrize(
        ("tokens", "reason", "problem"),
        [
            ([], "empty-order", "empty order field"),
            (["AS", "", "3S", "4S", "5S"], "empty-field", "empty field at position 2"),
            (
                ["AS", "2S", "XS", "4S", "5S"],
                "unknown-code",
                f"unknown card code 'XS' at position 3; {EXPECTED}",
            ),
            (
                ["AS", "2S", "3S", "4S", "KD"],
                "unknown-code",
                "card KD at position 5 is not in deck 'five'",
            ),
            (
                ["AS", "2S", "3S", "4S"],
                "wrong-length",
                "4 cards, deck 'five' has 5; 5S is missing",
            ),
            (
                ["AS", "2S", "3S", "4S", "5S", "AS"],
                "wrong-length",
                "6 cards, deck 'five' has 5; card AS appears twice (positions 1 and 6)",
            ),
            (
                ["AS", "2S", "AS", "4S", "5S"],
                "duplicate-card",
                "card AS appears twice (positions 1 and 3); 3S is missing",
            ),
            (
                ["AS", "AS", "AS", "4S", "5S"],
                "duplicate-card",
                "card AS appears 3 times (positions 1, 2 and 3); 2S, 3S are missing",
            ),
        ],
    )
    def test_problems(self, tokens, reason, problem):
        got = self.check(tokens)
        assert not got.ok and got.reason == reason and got.problem == problem

    def test_integer_bases(self):
        zero = self.check(["4", "0", "2", "1", "3"], labels="int")
        one = self.check(["5", "1", "3", "2", "4"], labels="int")
        assert zero.base == 0 and one.base == 1
        assert zero.labels.tolist() == one.labels.tolist() == [4, 0, 2, 1, 3]
        assert self.check([4, 0, 2, 1, 3], labels="int0").ok  # JSON integers

    @pytest.mark.parametrize(
        ("tokens", "kw", "reason", "problem"),
        [
            (
                ["0", "1", "2", "3", "5"],
                {"labels": "int"},
                "mixed-base",
                "labels mix 0-based and 1-based numbering (both 0 and 5 appear)",
            ),
            (
                ["1", "2", "x3", "4", "5"],
                {"labels": "int"},
                "not-integer",
                "label 'x3' at position 3 is not an integer",
            ),
            (
                ["1", "2", "3", "4", "5.0"],
                {"labels": "int"},
                "not-integer",
                "label '5.0' at position 5 is not an integer",
            ),
            (
                [1, 2, True, 4, 5],
                {"labels": "int"},
                "not-integer",
                "label True at position 3 is not an integer",
            ),
            (
                ["1", "2", "3", "4", "6"],
                {"labels": "int1"},
                "out-of-range",
                "label 6 at position 5 is out of range 1..5",
            ),
            (
                ["1", "2", "3", "4", "5"],
                {"labels": "int0"},
                "out-of-range",
                "label 5 at position 5 is out of range 0..4",
            ),
            (
                ["1", "2", "3", "4", "5"],
                {"labels": "int", "base": 0},
                "out-of-range",
                "label 5 at position 5 is out of range 0..4 "
                "(this log numbers cards from 0, as its first valid row shows)",
            ),
            (
                ["1", "1", "3", "4", "5"],
                {"labels": "int"},
                "duplicate-card",
                "card 1 appears twice (positions 1 and 2); 2 is missing",
            ),
        ],
    )
    def test_integer_problems(self, tokens, kw, reason, problem):
        got = self.check(tokens, **kw)
        assert not got.ok and got.reason == reason and got.problem == problem

    def test_integer_value(self):
        assert integer_value("007") == 7 and integer_value(np.int64(3)) == 3
        assert integer_value(True) is None and integer_value(2.0) is None
        assert integer_value("-1") is None and integer_value("５") is None

    def test_parse_order(self):
        assert parse_order("3s as 2♠ 5S 4s", self.deck).tolist() == [2, 0, 1, 4, 3]
        with pytest.raises(InputError) as info:
            parse_order("AS AS 3S 4S 5S", self.deck, where="ref.txt")
        assert (
            str(info.value) == "ref.txt: card AS appears twice (positions 1 and 2); 2S is missing"
        )


def _brute_relative(deck, ref):
    # definition read directly: the position in the reference of each card of the deck
    return [list(ref).index(card) for card in deck]


class TestRelativeTo:
    def test_identity(self):
        decks = np.array([np.random.default_rng(1).permutation(52)] * 3, dtype=np.int16)
        assert (relative_to(decks, decks) == np.arange(52)).all()

    def test_all_pairs_in_s4(self):
        # brute force over all 4! x 4! (deck, reference) pairs
        perms = np.array(list(itertools.permutations(range(4))), dtype=np.int16)
        decks = np.repeat(perms, len(perms), axis=0)
        refs = np.tile(perms, (len(perms), 1))
        got = relative_to(decks, refs)
        want = [_brute_relative(d, r) for d, r in zip(decks.tolist(), refs.tolist(), strict=True)]
        assert got.tolist() == want
        # one permutation per (deck, reference) pair, each permutation reached 24 times
        codes = got.astype(np.int64) @ (4 ** np.arange(4))
        assert np.unique(codes, return_counts=True)[1].tolist() == [24] * 24

    @settings(max_examples=50, deadline=None)
    @given(st.integers(1, 30), st.integers(1, 8), st.integers(0, 2**32 - 1))
    def test_against_brute_force(self, n, count, seed):
        rng = np.random.default_rng(seed)
        decks = rng.permuted(np.tile(np.arange(n, dtype=np.int16), (count, 1)), axis=1)
        refs = rng.permuted(np.tile(np.arange(n, dtype=np.int16), (count, 1)), axis=1)
        got = relative_to(decks, refs)
        assert got.dtype == np.int16
        for d in range(count):
            assert got[d].tolist() == _brute_relative(decks[d], refs[d])
        one = relative_to(decks, refs[0])
        for d in range(count):
            assert one[d].tolist() == _brute_relative(decks[d], refs[0])

    def test_physical_shuffle_gives_source(self):
        # new[i] = old[source[i]] (DEVELOPERS.md): relative to old, the deck reads `source`
        rng = np.random.default_rng(7)
        old = rng.permutation(52).astype(np.int16)[None, :]
        source = rng.permutation(52).astype(np.int16)[None, :]
        new = np.take_along_axis(old, source.astype(np.intp), axis=1)
        assert (relative_to(new, old) == source).all()

    def test_shape_errors(self):
        with pytest.raises(InputError, match="reference has 3 cards"):
            relative_to(np.zeros((2, 4), np.int16), np.arange(3))
        with pytest.raises(InputError, match="2-d array"):
            relative_to(np.arange(4), np.arange(4))
