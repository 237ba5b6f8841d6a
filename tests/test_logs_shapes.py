"""Logs as users keep them: column mapping, headerless files, separators inside the order
field, other spellings of cards, dialects, per-deck starting orders and time formats.

Every shape is either read (checked against the decks that were written) or refused with
a one-line message naming the option to use."""

from __future__ import annotations

import re
import unicodedata
import warnings

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.records.cards import RANKS, STANDARD_52, load_deck
from shufflecheck.records.logs import Reference, read_log

from ._cli import command_json, one_line_error, run

N = 52


def permutations(count: int, n: int = N, seed: int = 0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return rng.permuted(np.tile(np.arange(n, dtype=np.int16), (count, 1)), axis=1)


def spelled(row, style: str) -> list[str]:
    """Codes of one deck in another spelling (the reader must accept every one)."""
    out = []
    words = dict(
        zip(
            RANKS,
            "Ace Two Three Four Five Six Seven Eight Nine Ten Jack Queen King".split(),
            strict=True,
        )
    )
    suits = {"S": "Spades", "H": "Hearts", "D": "Diamonds", "C": "Clubs"}
    for label in row:
        code = STANDARD_52.cards[int(label)]
        rank, suit = code[0], code[1]
        if style == "suit-first":
            out.append(suit + ("10" if rank == "T" else rank))
        elif style == "names":
            out.append(f"{words[rank]} of {suits[suit]}")
        elif style == "symbols":
            out.append(("10" if rank == "T" else rank) + "♠♥♦♣"["SHDC".index(suit)])
        else:
            out.append(code)
    return out


def write(path, header, rows):
    path.write_text("".join(line + "\n" for line in ([header] if header else []) + rows), "utf-8")
    return path


def read(path, **kw):
    reader = read_log(path, **kw)
    return reader.read_all(), reader.summary


DECKS = permutations(6)


class TestColumns:
    def test_deck_order_column_found(self, tmp_path):
        # a spreadsheet's heading: the one column whose name has the word "order"
        rows = [f"{k},T7,{' '.join(spelled(d, 'codes'))}" for k, d in enumerate(DECKS)]
        path = write(tmp_path / "log.csv", "Deck No,Table,Deck Order", rows)
        chunk, summary = read(path)
        assert np.array_equal(chunk.decks, DECKS)
        assert summary.order_column == "Deck Order"
        assert list(chunk.columns.columns) == ["Deck No", "Table"]

    def test_two_candidates_refused_naming_the_option(self, tmp_path):
        rows = [f"{' '.join(spelled(d, 'codes'))},{' '.join(spelled(d, 'codes'))}" for d in DECKS]
        path = write(tmp_path / "log.csv", "Order In,Order Out", rows)
        message = one_line_error(run("audit", path))
        assert "several columns could hold the deck order ('Order In', 'Order Out')" in message
        assert "--order-column" in message and "--reference" in message
        chunk, summary = read(path, order_column="order out")  # any case
        assert np.array_equal(chunk.decks, DECKS) and summary.order_column == "Order Out"

    def test_unknown_order_column(self, tmp_path):
        path = write(tmp_path / "log.csv", "table,order", [f"T1,{' '.join(STANDARD_52.cards)}"])
        message = one_line_error(run("audit", path, "--order-column", "Deck Order"))
        assert message == (
            f"error: {path} row 1: no column 'Deck Order' (given as --order-column; columns "
            "are: table, order)"
        )

    def test_wide_positions_by_name(self, tmp_path):
        header = "table," + ",".join(f"c_{k:02d}" for k in range(1, N + 1))
        rows = ["T2," + ",".join(spelled(d, "codes")) for d in DECKS]
        path = write(tmp_path / "wide.csv", header, rows)
        message = one_line_error(run("audit", path))
        assert "--order-column" in message and "--position-columns" in message
        names = [f"c_{k:02d}" for k in range(1, N + 1)]
        chunk, summary = read(path, position_columns=names)
        assert np.array_equal(chunk.decks, DECKS)
        assert summary.order_column == "positions c_01..c_52"
        with pytest.raises(InputError, match="3 position columns given"):
            read(path, position_columns="c_01..c_03")

    def test_wide_card_n_headers_range(self, tmp_path):
        header = ",".join(f"Card {k}" for k in range(1, N + 1))
        rows = [",".join(spelled(d, "codes")) for d in DECKS]
        path = write(tmp_path / "wide.csv", header, rows)
        chunk, _ = read(path)  # Card 1..Card 52 are position columns by themselves
        assert np.array_equal(chunk.decks, DECKS)
        chunk, _ = read(path, position_columns="Card 1..Card 52")
        assert np.array_equal(chunk.decks, DECKS)


class TestHeaderless:
    def test_refused_naming_columns(self, tmp_path):
        rows = [f"{k},T7,{' '.join(spelled(d, 'codes'))}" for k, d in enumerate(DECKS)]
        path = write(tmp_path / "bare.csv", None, rows)
        message = one_line_error(run("audit", path))
        assert "looks like a deck, not a header: the file has no header row" in message
        assert "--columns" in message

    def test_declared_layout(self, tmp_path):
        rows = [f"{k},T7,{' '.join(spelled(d, 'codes'))}" for k, d in enumerate(DECKS)]
        path = write(tmp_path / "bare.csv", None, rows)
        chunk, summary = read(path, columns="deck,table,order")
        assert np.array_equal(chunk.decks, DECKS)
        assert chunk.rows.tolist() == [1, 2, 3, 4, 5, 6]  # no header: the first deck is row 1
        assert summary.header == "declared"
        assert chunk.columns["table"].tolist() == ["T7"] * 6

    def test_declared_wide_with_semicolons(self, tmp_path):
        rows = ["T7;" + ";".join(spelled(d, "codes")) for d in DECKS]
        path = write(tmp_path / "bare.csv", None, rows)
        chunk, _ = read(path, columns="table,p1..p52")
        assert np.array_equal(chunk.decks, DECKS)

    def test_bad_row_numbered_from_one(self, tmp_path):
        bad = list(spelled(DECKS[1], "codes"))
        bad[4] = bad[3]
        rows = [f"T7,{' '.join(spelled(DECKS[0], 'codes'))}", f"T7,{' '.join(bad)}"]
        path = write(tmp_path / "bare.csv", None, rows)
        with pytest.raises(InputError, match=r"bare.csv row 2: card \w\w appears twice"):
            read(path, columns="table,order")


class TestSeparators:
    @pytest.mark.parametrize(
        ("name", "char", "quote"),
        [("comma", ",", True), ("semicolon", ";", False), ("pipe", "|", False)],
    )
    def test_detected_and_reported(self, tmp_path, name, char, quote):
        rows = []
        for d in DECKS:
            order = (char + " ").join(spelled(d, "codes"))  # spaces after the separator too
            rows.append(f'T1,"{order}"' if quote else f"T1,{order}")
        path = write(tmp_path / "log.csv", "table,order", rows)
        chunk, summary = read(path)
        assert np.array_equal(chunk.decks, DECKS)
        assert (summary.separator, summary.separator_source) == (name, "detected")
        data = command_json("audit", path)
        assert data["log"]["separator"] == name

    def test_mixed_separators_refused(self, tmp_path):
        first = ";".join(spelled(DECKS[0], "codes"))
        second = "|".join(spelled(DECKS[1], "codes"))
        path = write(tmp_path / "log.csv", "table,order", [f"T1,{first}", f"T1,{second}"])
        message = one_line_error(run("audit", path))
        assert "semicolons (row 2) and pipes (row 3) between cards" in message
        assert "--separator" in message
        with pytest.raises(InputError, match=r"unknown card code"):
            read(path, separator="semicolon")  # row 3 is then one unknown code

    def test_given_separator_wins(self, tmp_path):
        rows = [f'T1,"{",".join(spelled(d, "codes"))}"' for d in DECKS]
        path = write(tmp_path / "log.csv", "table,order", rows)
        chunk, summary = read(path, separator="comma")
        assert np.array_equal(chunk.decks, DECKS) and summary.separator_source == "given"


class TestSpellings:
    @pytest.mark.parametrize("style", ["suit-first", "symbols"])
    def test_other_codes(self, tmp_path, style):
        rows = [f"T1,{' '.join(spelled(d, style))}" for d in DECKS]
        path = write(tmp_path / "log.csv", "table,order", rows)
        chunk, _ = read(path)
        assert np.array_equal(chunk.decks, DECKS)

    def test_names_with_a_separator(self, tmp_path):
        rows = [f"T1;{' | '.join(spelled(d, 'names'))}" for d in DECKS]
        path = write(tmp_path / "log.csv", "table;order", rows)
        chunk, summary = read(path)
        assert np.array_equal(chunk.decks, DECKS) and summary.separator == "pipe"

    def test_names_split_at_spaces_get_a_hint(self, tmp_path):
        rows = [f"T1,{' '.join(spelled(d, 'names'))}" for d in DECKS]
        path = write(tmp_path / "log.csv", "table,order", rows)
        message = one_line_error(run("audit", path))
        assert "spelled-out names such as 'Ace of Spades' need a separator" in message
        assert "--separator" in message

    def test_unicode_card_names(self):
        # the names of the Unicode "Playing Cards" block (U+1F0A1..U+1F0DE; The Unicode
        # Standard, chart "Playing Cards"): "PLAYING CARD ACE OF SPADES" and so on. The code
        # point gives the card independently: suit row S, H, D, C; rank column 1..14 with
        # 12 = knight (not in a 52-card pack)
        checked = 0
        for point in range(0x1F0A1, 0x1F0DF):
            name = unicodedata.name(chr(point), "")
            match = re.fullmatch(r"PLAYING CARD (\w+) OF (\w+)", name)
            if not match or match[1] == "KNIGHT":
                continue
            suit = "SHDC"[(point - 0x1F0A0) // 16]
            column = point % 16
            rank = "A23456789TJ?QK"[column - 1]
            assert STANDARD_52.lookup(f"{match[1]} of {match[2]}") == STANDARD_52.label(rank + suit)
            checked += 1
        assert checked == 52


class TestDialect:
    def test_reader_codes_in_a_toml(self, tmp_path):
        deck_file = tmp_path / "rig.toml"
        deck_file.write_text(
            'name = "rig-7"\ncards = "standard-52"\n'
            '[spelling]\nranks = { "1" = "A", "B" = "J", "D" = "Q" }\n'
            'suits = { "P" = "S", "E" = "H" }\n'
            '[codes]\n"XK" = "KD"\n',
            "utf-8",
        )
        deck = load_deck(deck_file)
        assert deck.label("1P") == deck.label("P1") == 0  # ace of spades, either order
        assert deck.label("DE") == STANDARD_52.label("QH")
        assert deck.label("xk") == STANDARD_52.label("KD")
        assert deck.cards == STANDARD_52.cards
        rows = ["T1," + " ".join(c.replace("AS", "1P") for c in spelled(d, "codes")) for d in DECKS]
        path = write(tmp_path / "log.csv", "table,order", rows)
        chunk, _ = read(path, deck=deck_file)
        assert np.array_equal(chunk.decks, DECKS)

    def test_dialect_clashing_with_standard_codes_refused(self, tmp_path):
        deck_file = tmp_path / "bad.toml"
        deck_file.write_text(
            'name = "x"\ncards = "standard-52"\n[spelling]\nranks = { "Q" = "K" }\n'
        )
        with pytest.raises(InputError, match=r"makes 'QS' mean KS, but it already means QS"):
            load_deck(deck_file)

    def test_dialect_reading_two_ways_refused(self):
        # X is both a rank (2) and a suit (hearts), Z both 3 and spades: "XZ" would be the
        # two of spades rank first and the three of hearts suit first
        with pytest.raises(InputError, match=r"spelling '(XZ|ZX)' would mean both"):
            STANDARD_52.with_dialect(ranks={"X": "2", "Z": "3"}, suits={"X": "H", "Z": "S"})

    def test_alias_meaning_another_card_refused(self):
        with pytest.raises(InputError, match=r"'AS' already means card AS, not KD"):
            STANDARD_52.with_dialect({"AS": "KD"})


def pass_log(tmp_path, layout: str, *, broken: int | None = None):
    """A lab log of 8 passes: each deck's starting order and its order after a known
    rearrangement ``source`` (``after[i] = before[source[i]]``)."""
    before = permutations(8, seed=11)
    source = permutations(8, seed=12)
    after = np.take_along_axis(before, source.astype(np.intp), axis=1)
    rows = []
    for k in range(8):
        b, a = " ".join(spelled(before[k], "codes")), " ".join(spelled(after[k], "codes"))
        if broken == k:
            a = a.replace(a[:2], "ZZ", 1)
        if layout == "column":
            rows.append(f"{k},{b},{a}")
        else:
            rows += [f"{k},before,{b}", f"{k},after,{a}"]
    header = "pass,before,after" if layout == "column" else "pass,stage,order"
    return write(tmp_path / f"{layout}.csv", header, rows), source


class TestStartingOrders:
    def test_before_column(self, tmp_path):
        path, source = pass_log(tmp_path, "column")
        reference = Reference.parse("column:before")
        chunk, _ = read(path, order_column="after", before_column="before")
        rel = reference.stream().relative(chunk)
        assert np.array_equal(rel.relative, source)  # DEVELOPERS.md: rel is the source map
        data = command_json(
            "audit", path, "--order-column", "after", "--reference", "column:before"
        )
        assert data["log"]["tested"] == 8 and data["log"]["reference_only"] == 0

    def test_bad_before_order_is_a_bad_row(self, tmp_path):
        path, _ = pass_log(tmp_path, "column")
        text = path.read_text().splitlines()
        text[3] = text[3].replace(",", ",XS ", 1)  # an unknown code in row 4's before order
        path.write_text("\n".join(text) + "\n")
        with pytest.raises(
            InputError, match=r"row 4: starting order \(before\): unknown card code 'XS'"
        ):
            read(path, order_column="after", before_column="before")

    def test_pairs(self, tmp_path):
        path, source = pass_log(tmp_path, "pairs")
        chunk, _ = read(path)
        stream = Reference.parse("pairs").stream()
        rel = stream.relative(chunk)
        assert np.array_equal(rel.relative, source)
        assert (stream.tested, stream.reference_only) == (8, 8)

    def test_pairs_with_a_set_aside_row(self, tmp_path):
        path, source = pass_log(tmp_path, "pairs", broken=2)
        reader = read_log(path, quarantine=tmp_path / "aside.csv")
        stream = Reference.parse("pairs").stream()
        rel = [stream.relative(c) for c in reader]
        relative = np.concatenate([r.relative for r in rel])
        assert np.array_equal(relative, np.delete(source, 2, axis=0))  # the pair stays apart
        assert (stream.tested, stream.after_set_aside) == (7, 0)

    def test_reference_help_lists_every_choice(self):
        text = " ".join(run("audit", "--help").stdout.split())
        for word in ("previous", "first", "deck", "column:NAME", "pairs"):
            assert word in text


def timed_log(tmp_path, times: list[str]):
    decks = permutations(len(times), seed=3)
    rows = [f"{t},{' '.join(spelled(d, 'codes'))}" for t, d in zip(times, decks, strict=True)]
    return write(tmp_path / "timed.csv", "recorded_at,order", rows)


class TestTimes:
    def test_ambiguous_date_refused(self, tmp_path):
        path = timed_log(
            tmp_path, ["12/01/2026 10:00 PM", "12/01/2026 10:05 PM", "12/02/2026 9:00 AM"]
        )
        with warnings.catch_warnings():
            warnings.simplefilter("error")  # no library warning may reach the user
            result = run("audit", path, "--time", "recorded_at")
        message = one_line_error(result)
        assert (
            "values such as '12/01/2026 10:00 PM' read as day-first (%d/%m/%Y %I:%M %p)" in message
        )
        assert (
            "and as month-first (%m/%d/%Y %I:%M %p) alike; give the format with --time-format"
            in message
        )

    def test_explicit_format(self, tmp_path):
        path = timed_log(
            tmp_path, ["12/01/2026 10:00 PM", "12/01/2026 10:05 PM", "13/01/2026 9:00 AM"]
        )
        data = command_json(
            "audit", path, "--time", "recorded_at", "--time-format", "%d/%m/%Y %I:%M %p"
        )
        assert data["log"]["time_format"] == "%d/%m/%Y %I:%M %p"
        # month-first would put 12/01 (1 December) after 12/02 ... no: it cannot read 13/01
        message = one_line_error(
            run("audit", path, "--time", "recorded_at", "--time-format", "%m/%d/%Y %I:%M %p")
        )
        assert "row 4: recorded_at value '13/01/2026 9:00 AM' does not match the given" in message

    def test_unambiguous_without_format(self, tmp_path):
        path = timed_log(tmp_path, ["30/11/2026 22:00", "01/12/2026 09:00", "02/12/2026 09:00"])
        data = command_json("audit", path, "--time", "recorded_at")
        assert data["log"]["time_format"] == "%d/%m/%Y %H:%M"

    def test_twelve_hour_times_backwards(self, tmp_path):
        path = timed_log(tmp_path, ["9:00 PM", "10:00 PM", "8:00 AM"])
        message = one_line_error(run("audit", path, "--time", "recorded_at"))
        assert "row 4: recorded_at goes back in time" in message


class TestSmallLog:
    def test_small_log_says_what_it_can_see(self, tmp_path):
        rows = [f"T1,{' '.join(spelled(d, 'codes'))}" for d in permutations(21, seed=4)]
        path = write(tmp_path / "log.csv", "table,order", rows)
        data = command_json("audit", path)
        small = data["small_log"]
        assert small["decks"] == 20 and small["needed"] == 5 * N
        kinds = {d["kind"] for d in small["detectable"]}
        assert kinds == {"bound"}
        guess = next(d for d in small["detectable"] if d["test"] == "guess-next-card")
        # at 20 decks the guessing test flags (power 0.9) only about 2+ extra correct guesses
        # per deck (its null standard deviation is 1.71: sqrt(H_52 - H_52^(2)))
        assert 1.5 < guess["value"] < 4.0
        assert "a small log: 20 decks tested" in run("audit", path).stdout

    def test_large_enough_log_has_no_note(self, tmp_path):
        rows = [f"T1,{' '.join(spelled(d, 'codes'))}" for d in permutations(262, seed=4)]
        path = write(tmp_path / "log.csv", "table,order", rows)
        assert command_json("audit", path)["small_log"] is None
