"""Reading, validating and writing logs of recorded deck orders; reference orders."""

from __future__ import annotations

import csv
import gzip
import io
import json
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import sha256_file
from shufflecheck.records.cards import STANDARD_52, DeckDefinition, load_deck
from shufflecheck.records.logs import REASONS, Reference, read_log, write_log
from shufflecheck.records.orders import relative_to

DATA = Path(__file__).resolve().parent.parent / "data" / "decks"
EXPECTED = "expected rank A,2-9,T/10,J,Q,K and suit S,H,D,C"
TMP = settings(suppress_health_check=[HealthCheck.function_scoped_fixture], deadline=None)


def permutations(count: int, n: int, seed: int = 0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return rng.permuted(np.tile(np.arange(n, dtype=np.int16), (count, 1)), axis=1)


def codes(row, deck=STANDARD_52) -> str:
    return " ".join(deck.cards[x] for x in row)


def read(path, **kw):
    reader = read_log(path, **kw)
    chunk = reader.read_all()
    return chunk, reader.summary


def quarantined(path) -> list[dict[str, str]]:
    with open(path, newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


# --------------------------------------------------------------------------------------


@st.composite
def decks_and_definition(draw):
    size = draw(st.integers(1, 52))
    chosen = draw(st.permutations(STANDARD_52.cards))[:size]
    jokers = draw(st.sampled_from([[], ["RJ"], ["RJ", "BJ"], ["JOKER-LONG-CODE"]]))
    deck = DeckDefinition.from_cards("random", [*chosen, *jokers])
    count = draw(st.integers(1, 12))
    seed = draw(st.integers(0, 2**32 - 1))
    return deck, permutations(count, deck.size, seed)


class TestRoundTrip:
    @TMP
    @given(decks_and_definition(), st.integers(1, 5), st.sampled_from([".csv", ".jsonl", ".tsv"]))
    def test_write_then_read(self, tmp_path, case, chunk_rows, suffix):
        deck, decks = case
        count = len(decks)
        columns = {
            "table": [f"T{k % 3}" for k in range(count)],
            "dealer": [f"Dealer {k}, shift {k % 2}" for k in range(count)],  # commas get quoted
            "deck_id": list(range(count)),
        }
        path = tmp_path / f"log{suffix}"
        write_log(path, decks, deck, columns)
        chunk, summary = read(path, deck=deck, chunk_rows=chunk_rows)
        assert chunk.decks.dtype == np.int16
        assert np.array_equal(chunk.decks, decks)
        # a parsed deck is always a permutation of the deck's labels
        assert (np.sort(chunk.decks, axis=1) == np.arange(deck.size)).all()
        first = 1 if suffix == ".jsonl" else 2
        assert chunk.rows.tolist() == list(range(first, first + count))
        assert chunk.columns["table"].tolist() == columns["table"]
        assert chunk.columns["dealer"].tolist() == columns["dealer"]
        ids = chunk.columns["deck_id"].tolist()
        assert ids == (columns["deck_id"] if suffix == ".jsonl" else list(map(str, range(count))))
        assert summary.decks == count and summary.set_aside == 0 and summary.complete

    @TMP
    @given(decks_and_definition(), st.sampled_from(["int0", "int1"]), st.booleans())
    def test_integer_labels(self, tmp_path, case, labels, jsonl):
        deck, decks = case
        path = tmp_path / ("log.jsonl" if jsonl else "log.csv")
        write_log(path, decks, deck, labels=labels)
        for mode in (labels, "int"):
            chunk, summary = read(path, deck=deck, labels=mode, chunk_rows=3)
            if mode == "int" and deck.size == 1:
                # a one-card deck holds either 0 or 1: the numbering is what the file shows
                continue
            assert np.array_equal(chunk.decks, decks)
            assert summary.labels == labels

    def test_no_columns(self, tmp_path):
        decks = permutations(5, 52, seed=3)
        write_log(tmp_path / "plain.csv", decks)
        assert (tmp_path / "plain.csv").read_text().splitlines()[0] == "order"
        chunk, _ = read(tmp_path / "plain.csv")
        assert np.array_equal(chunk.decks, decks) and chunk.columns.shape == (5, 0)

    def test_write_errors(self, tmp_path):
        good = permutations(2, 52)
        bad = good.copy()
        bad[1, 0] = bad[1, 1]
        with pytest.raises(InputError, match=r"deck 1 \(0-based\) is not an arrangement"):
            write_log(tmp_path / "x.csv", bad)
        with pytest.raises(InputError, match="shape"):
            write_log(tmp_path / "x.csv", good[:, :10])
        with pytest.raises(InputError, match="columns have 3 rows, decks have 2"):
            write_log(tmp_path / "x.csv", good, columns={"a": [1, 2, 3]})
        with pytest.raises(InputError, match="may not be called 'order'"):
            write_log(tmp_path / "x.csv", good, columns={"Order": [1, 2]})
        with pytest.raises(InputError, match=r"use \.csv, \.tsv or \.jsonl"):
            write_log(tmp_path / "x.xlsx", good)
        assert not list(tmp_path.iterdir())  # nothing half-written


class TestCodesInLogs:
    def test_spellings(self, tmp_path):
        deck = permutations(1, 52, seed=5)[0]
        canonical = codes(deck)
        variants = []
        for k, code in enumerate(canonical.split()):
            rank, suit = code
            rank = "10" if rank == "T" and k % 2 else rank
            suit = {"S": "♠", "H": "♥", "D": "♦", "C": "♣"}[suit] if k % 3 == 0 else suit
            variants.append((rank + suit).lower() if k % 4 == 1 else rank + suit)
        path = tmp_path / "log.csv"
        path.write_text("order\n" + "  ".join(variants) + "\t\n" + canonical + "\n", "utf-8")
        chunk, _ = read(path)
        assert chunk.decks.tolist() == [deck.tolist(), deck.tolist()]

    def test_jokers_deck(self, tmp_path):
        deck = load_deck(DATA / "jokers-54.toml")
        decks = permutations(4, 54, seed=9)
        text = "order\n" + "\n".join(codes(d, deck).lower() for d in decks) + "\n"
        (tmp_path / "j.csv").write_text(text, encoding="utf-8")
        chunk, _ = read(tmp_path / "j.csv", deck=DATA / "jokers-54.toml")
        assert np.array_equal(chunk.decks, decks)

    def test_stripped_36_symbols(self, tmp_path):
        deck = load_deck(DATA / "stripped-36.toml")
        decks = permutations(3, 36, seed=2)
        text = "order\n" + "\n".join(
            " ".join(deck.cards[x].replace("T", "10").replace("S", "♠") for x in d) for d in decks
        )
        (tmp_path / "s.csv").write_text(text + "\n", encoding="utf-8")
        chunk, _ = read(tmp_path / "s.csv", deck=deck)
        assert np.array_equal(chunk.decks, decks)


class TestCsvText:
    def test_layout_variants(self, tmp_path):
        decks = permutations(3, 52, seed=4)
        lines = [f"{k};T{k};{codes(d)}" for k, d in enumerate(decks)]
        (tmp_path / "semi.csv").write_text("id;table;order\n" + "\n".join(lines), "utf-8")
        chunk, _ = read(tmp_path / "semi.csv")
        assert np.array_equal(chunk.decks, decks) and chunk.columns["table"].tolist() == [
            "T0",
            "T1",
            "T2",
        ]
        crlf = "\ufeffid,order\r\n" + "".join(f"{k},{codes(d)}\r\n" for k, d in enumerate(decks))
        (tmp_path / "crlf.csv").write_bytes(crlf.encode("utf-8"))
        chunk, _ = read(tmp_path / "crlf.csv")
        assert np.array_equal(chunk.decks, decks) and list(chunk.columns) == ["id"]
        with gzip.open(tmp_path / "log.csv.gz", "wt", encoding="utf-8") as handle:
            handle.write("id,order\n" + "".join(f"{k},{codes(d)}\n" for k, d in enumerate(decks)))
        chunk, _ = read(tmp_path / "log.csv.gz")
        assert np.array_equal(chunk.decks, decks)

    def test_row_numbers_count_blank_lines_and_quoted_line_breaks(self, tmp_path):
        decks = permutations(3, 52, seed=6)
        text = (
            "note,order\n"
            f'"two\nlines",{codes(decks[0])}\n'  # row 2 spans two lines
            "\n"  # row 3: blank
            f"plain,{codes(decks[1])}\n"  # row 4
            f'"said ""hi""",{codes(decks[2])}\n'  # row 5
        )
        (tmp_path / "log.csv").write_text(text, encoding="utf-8")
        chunk, summary = read(tmp_path / "log.csv", chunk_rows=2)
        assert chunk.rows.tolist() == [2, 4, 5]
        assert chunk.columns["note"].tolist() == ["two\nlines", "plain", 'said "hi"']
        assert summary.blank_rows == 1 and summary.rows == 4

    def test_cells_kept_as_text(self, tmp_path):
        d = codes(permutations(1, 52)[0])
        (tmp_path / "log.csv").write_text(f"table,recorded_at,order\n07,,{d}\n", "utf-8")
        chunk, _ = read(tmp_path / "log.csv")
        assert chunk.columns.iloc[0].tolist() == ["07", ""]


class TestWideCsv:
    @pytest.mark.parametrize("prefix", ["p", "pos", "Position_", "card", ""])
    def test_position_columns_in_numeric_order(self, tmp_path, prefix):
        deck = load_deck(DATA / "piquet-32.toml")
        decks = permutations(4, 32, seed=8)
        order = np.random.default_rng(0).permutation(32)  # columns stored out of order
        header = ["table", *(f"{prefix}{k + 1}" for k in order)]
        rows = [[f"T{r}", *(deck.cards[d[k]] for k in order)] for r, d in enumerate(decks)]
        path = tmp_path / "wide.csv"
        with open(path, "w", newline="", encoding="utf-8") as handle:
            csv.writer(handle).writerows([header, *rows])
        chunk, summary = read(path, deck=deck, chunk_rows=3)
        assert np.array_equal(chunk.decks, decks)
        assert summary.format == "wide" and list(chunk.columns) == ["table"]

    @pytest.mark.parametrize(
        ("header", "message"),
        [
            ("p1,p2,p4", "position columns must be numbered 1..N; position 3 is missing"),
            ("p1,pos2,p3", "position columns are named in different ways"),
            ("p1,p2", "2 position columns, deck 'standard-52' has 52 cards"),
            ("table,dealer", "missing an 'order' column (columns are: table, dealer)"),
            ("a,a,order", "column 'a' appears twice in the header"),
            ("a,,order", "column 2 of the header has no name"),
        ],
    )
    def test_header_errors(self, tmp_path, header, message):
        path = tmp_path / "log.csv"
        path.write_text(header + "\nx,y,z\n", encoding="utf-8")
        with pytest.raises(InputError) as info:
            read(path)
        assert str(info.value).startswith(f"{path} row 1: ") and message in str(info.value)

    def test_wide_forced_and_txt(self, tmp_path):
        deck = DeckDefinition.from_cards("three", ["AS", "2S", "3S"])
        path = tmp_path / "log.txt"
        path.write_text("order,pos1,pos2,pos3\nnote,3S,AS,2S\n", encoding="utf-8")
        chunk, summary = read(path, deck=deck, fmt="wide")
        assert chunk.decks.tolist() == [[2, 0, 1]] and summary.format == "wide"
        assert chunk.columns["order"].tolist() == ["note"]  # kept as an ordinary column

    def test_empty_cell(self, tmp_path):
        deck = DeckDefinition.from_cards("three", ["AS", "2S", "3S"])
        path = tmp_path / "wide.csv"
        path.write_text("p1,p2,p3\nAS,2S,3S\n3S,,AS\n", encoding="utf-8")
        with pytest.raises(InputError) as info:
            read(path, deck=deck)
        assert str(info.value) == f"{path} row 3: empty field at position 2"


class TestJsonLines:
    def test_lists_text_and_kept_keys(self, tmp_path):
        decks = permutations(3, 52, seed=10)
        lines = [
            json.dumps({"table": 7, "order": [STANDARD_52.cards[x] for x in decks[0]]}),
            "",
            json.dumps({"order": codes(decks[1]).lower(), "table": 8, "meta": {"a": 1}}),
            json.dumps({"table": None, "Order": [STANDARD_52.cards[x] for x in decks[2]]}),
        ]
        (tmp_path / "log.jsonl").write_text("\n".join(lines) + "\n", encoding="utf-8")
        chunk, summary = read(tmp_path / "log.jsonl", chunk_rows=2)
        assert np.array_equal(chunk.decks, decks)
        assert chunk.rows.tolist() == [1, 3, 4] and summary.blank_rows == 1
        assert chunk.columns["table"].tolist()[:2] == [7, 8]
        assert chunk.columns["meta"].tolist()[1] == {"a": 1}

    def test_integer_lists(self, tmp_path):
        decks = permutations(2, 52, seed=11)
        lines = [json.dumps({"order": (d + 1).tolist()}) for d in decks]
        (tmp_path / "log.jsonl").write_text("\n".join(lines), encoding="utf-8")
        chunk, summary = read(tmp_path / "log.jsonl", labels="int")
        assert np.array_equal(chunk.decks, decks) and summary.labels == "int1"

    @pytest.mark.parametrize(
        ("line", "problem"),
        [
            ('{"order": ["AS", ', "not valid JSON (Expecting value at column 17)"),
            ('["AS"]', "a line must be a JSON object, got array"),
            ('{"table": 3}', "no 'order' key"),
            ('{"order": 5}', "'order' must be a list of card codes or a text of codes"),
            ('{"order": []}', "empty order field"),
            ('{"order": null}', "empty order field"),
        ],
    )
    def test_bad_lines(self, tmp_path, line, problem):
        good = json.dumps({"order": codes(permutations(1, 52)[0]).split()})
        path = tmp_path / "log.jsonl"
        path.write_text(f"{good}\n{good}\n{line}\n", encoding="utf-8")
        with pytest.raises(InputError) as info:
            read(path)
        assert str(info.value) == f"{path} line 3: {problem}"

    def test_booleans_and_floats_are_not_labels(self, tmp_path):
        good = list(range(5))
        path = tmp_path / "log.jsonl"
        rows = [good, [0, 1, 2, 3, 4.0], [4, 3, 2, 1, True], [0, 1, 2, 3, 4]]
        path.write_text("\n".join(json.dumps({"order": r}) for r in rows), encoding="utf-8")
        deck = DeckDefinition.from_cards("five", ["AS", "2S", "3S", "4S", "5S"])
        chunk, _ = read(path, deck=deck, labels="int0", quarantine=tmp_path / "q.csv")
        assert chunk.rows.tolist() == [1, 4]
        bad = quarantined(tmp_path / "q.csv")
        assert [b["problem"] for b in bad] == [
            "label 4.0 at position 5 is not an integer",
            "label True at position 5 is not an integer",
        ]


class TestParquet:
    def test_list_text_and_wide(self, tmp_path):
        pa = pytest.importorskip("pyarrow")
        pq = pytest.importorskip("pyarrow.parquet")
        decks = permutations(7, 52, seed=12)
        names = [[STANDARD_52.cards[x] for x in d] for d in decks]
        table = pa.table({"table": [f"T{k % 2}" for k in range(7)], "order": names})
        pq.write_table(table, tmp_path / "list.parquet", row_group_size=3)
        chunk, summary = read(tmp_path / "list.parquet", chunk_rows=2)
        assert np.array_equal(chunk.decks, decks) and chunk.rows.tolist() == list(range(1, 8))
        assert chunk.columns["table"].tolist()[:2] == ["T0", "T1"] and summary.format == "parquet"
        pq.write_table(pa.table({"order": [" ".join(n) for n in names]}), tmp_path / "text.pq")
        assert np.array_equal(read(tmp_path / "text.pq")[0].decks, decks)
        ints = pa.table({"order": [(d + 1).tolist() for d in decks]})
        pq.write_table(ints, tmp_path / "ints.parquet")
        chunk, summary = read(tmp_path / "ints.parquet", labels="int")
        assert np.array_equal(chunk.decks, decks) and summary.labels == "int1"
        wide = pa.table({f"p{k + 1}": decks[:, k].astype(np.int64) for k in range(52)})
        pq.write_table(wide, tmp_path / "wide.parquet")
        assert np.array_equal(read(tmp_path / "wide.parquet", labels="int0")[0].decks, decks)

    def test_bad_row_number(self, tmp_path):
        pa = pytest.importorskip("pyarrow")
        pq = pytest.importorskip("pyarrow.parquet")
        names = [[STANDARD_52.cards[x] for x in d] for d in permutations(3, 52)]
        names[2][5] = None
        pq.write_table(pa.table({"order": names}), tmp_path / "x.parquet")
        with pytest.raises(InputError) as info:
            read(tmp_path / "x.parquet")
        assert str(info.value) == f"{tmp_path / 'x.parquet'} row 3: empty field at position 6"

    def test_without_pyarrow(self, tmp_path, monkeypatch):
        for name in ("pyarrow", "pyarrow.compute", "pyarrow.parquet"):
            monkeypatch.setitem(sys.modules, name, None)  # import now raises ImportError
        (tmp_path / "x.parquet").write_bytes(b"PAR1")
        with pytest.raises(InputError) as info:
            read(tmp_path / "x.parquet")
        assert str(info.value) == (
            f"{tmp_path / 'x.parquet'}: reading Parquet needs pyarrow (pip install pyarrow); "
            "or convert the log to CSV or JSON Lines"
        )

    def test_not_parquet(self, tmp_path):
        pytest.importorskip("pyarrow")
        (tmp_path / "x.parquet").write_text("order\nAS\n")
        with pytest.raises(InputError, match="not a readable Parquet file"):
            read(tmp_path / "x.parquet")


class TestIntegerLabels:
    def write(self, tmp_path, rows):
        path = tmp_path / "int.csv"
        path.write_text("order\n" + "\n".join(" ".join(map(str, r)) for r in rows) + "\n")
        return path

    def test_auto_detect_per_file(self, tmp_path):
        decks = permutations(4, 52, seed=13)
        assert read(self.write(tmp_path, decks), labels="int")[1].labels == "int0"
        assert read(self.write(tmp_path, decks + 1), labels="int")[1].labels == "int1"

    def test_later_row_numbered_the_other_way(self, tmp_path):
        decks = permutations(4, 52, seed=14)
        rows = [decks[0] + 1, decks[1] + 1, decks[2], decks[3] + 1]  # row 4 numbered from 0
        path = self.write(tmp_path, rows)
        with pytest.raises(InputError) as info:
            read(path, labels="int", chunk_rows=2)
        assert str(info.value).startswith(f"{path} row 4: label 0 at position ")
        assert str(info.value).endswith(
            "is out of range 1..52 (this log numbers cards from 1, as its first valid row shows)"
        )

    def test_first_valid_row_decides(self, tmp_path):
        decks = permutations(3, 52, seed=15)
        broken = (decks[0] + 1).tolist()
        broken[3] = broken[4]  # row 2: duplicate, numbering not settled by it
        path = self.write(tmp_path, [broken, decks[1], decks[2]])
        chunk, summary = read(path, labels="int", quarantine=tmp_path / "q.csv")
        assert summary.labels == "int0" and summary.base_row == 3
        assert chunk.rows.tolist() == [3, 4]

    def test_mixed_row(self, tmp_path):
        row = list(range(52))
        row[7] = 52
        path = self.write(tmp_path, [row])
        with pytest.raises(InputError) as info:
            read(path, labels="int")
        assert str(info.value) == (
            f"{path} row 2: labels mix 0-based and 1-based numbering (both 0 and 52 appear)"
        )

    def test_explicit_base(self, tmp_path):
        decks = permutations(2, 52, seed=16)
        path = self.write(tmp_path, decks)
        assert np.array_equal(read(path, labels="int0")[0].decks, decks)
        with pytest.raises(InputError, match=r"row 2: label 0 at position \d+ is out of range"):
            read(path, labels="int1")


# --------------------------------------------------------------------------------------
# malformed logs: every kind gives its one-line message with file and row


def _good_rows(count: int, seed: int = 20) -> list[str]:
    return [codes(d) for d in permutations(count, 52, seed)]


def _issue_example() -> tuple[str, str]:
    # the issue's example: row 18, card 7D at positions 3 and 40
    cards = list(STANDARD_52.cards)
    at7d = cards.index("7D")
    cards[at7d], cards[2] = cards[2], cards[at7d]
    missing = cards[39]
    cards[39] = "7D"
    return " ".join(cards), missing


class TestMalformed:
    def run(self, tmp_path, body: str, header: str = "order", name: str = "log.csv", **kw):
        path = tmp_path / name
        path.write_text(header + "\n" + body if header else body, encoding="utf-8")
        with pytest.raises(InputError) as info:
            read(path, **kw)
        return str(info.value), path

    def test_issue_example(self, tmp_path):
        row, missing = _issue_example()
        body = "\n".join([*_good_rows(16), row]) + "\n"
        message, path = self.run(tmp_path, body)
        assert message == (
            f"{path} row 18: card 7D appears twice (positions 3 and 40); {missing} is missing"
        )

    @pytest.mark.parametrize(
        ("mutate", "problem"),
        [
            (lambda t: [*t[:5], "XS", *t[6:]], f"unknown card code 'XS' at position 6; {EXPECTED}"),
            (lambda t: t[:-1], "51 cards, deck 'standard-52' has 52; {last} is missing"),
            (
                lambda t: [*t, t[0]],
                "53 cards, deck 'standard-52' has 52; card {first} appears twice "
                "(positions 1 and 53)",
            ),
            (
                lambda t: t[:10],
                "10 cards, deck 'standard-52' has 52; {missing} and 39 more are missing",
            ),
        ],
    )  # fmt: skip
    def test_row_problems(self, tmp_path, mutate, problem):
        rows = _good_rows(4)
        tokens = rows[2].split()
        rows[2] = " ".join(mutate(tokens))
        message, path = self.run(tmp_path, "\n".join(rows) + "\n")
        kept = set(tokens[:10])
        missing = ", ".join([c for c in STANDARD_52.cards if c not in kept][:3])  # label order
        expected = problem.format(last=tokens[-1], first=tokens[0], missing=missing)
        assert message == f"{path} row 4: {expected}"

    def test_empty_order(self, tmp_path):
        rows = [f"T1,{r}" for r in _good_rows(3)]
        rows[1] = "T1,  "
        message, path = self.run(tmp_path, "\n".join(rows), header="table,order")
        assert message == f"{path} row 3: empty order field"

    def test_non_integer_label(self, tmp_path):
        row = " ".join(str(k) for k in range(51)) + " 5l"
        message, path = self.run(tmp_path, row + "\n", labels="int")
        assert message == f"{path} row 2: label '5l' at position 52 is not an integer"

    def test_empty_file(self, tmp_path):
        message, path = self.run(tmp_path, "", header="")
        assert message == f"{path}: empty file"
        message, path = self.run(tmp_path, "", header="", name="log.jsonl")
        assert message == f"{path}: empty file"

    def test_header_only(self, tmp_path):
        message, path = self.run(tmp_path, "")
        assert message == f"{path}: no deck rows below the header"
        message, path = self.run(tmp_path, "\n\n")
        assert message == f"{path}: no deck rows below the header"

    def test_missing_order_column(self, tmp_path):
        message, path = self.run(tmp_path, "1,2\n", header="table,cards")
        assert message == (
            f"{path} row 1: missing an 'order' column (columns are: table, cards); name the "
            "order column with order_column or the position columns with position_columns "
            "(see docs/formats-logs.md)"
        )

    def test_wrong_number_of_fields(self, tmp_path):
        rows = [f"T1,{r}" for r in _good_rows(3)]
        rows[1] = "T1,extra," + rows[1][3:]
        message, path = self.run(tmp_path, "\n".join(rows), header="table,order")
        assert message == f"{path} row 3: 3 fields, the header has 2"

    def test_unclosed_quote(self, tmp_path):
        rows = [f"T1,{r}" for r in _good_rows(3)]
        rows[0] = '"T1,' + rows[0][3:]
        message, path = self.run(tmp_path, "\n".join(rows), header="table,order")
        assert message == (
            f"{path} row 2: a quoted field is not closed, or has text after its closing quote"
        )

    def test_not_utf8(self, tmp_path):
        path = tmp_path / "log.csv"
        rows = _good_rows(2)
        path.write_bytes(("order\n" + rows[0] + "\n").encode() + b"\xff\xfe\n" + rows[1].encode())
        with pytest.raises(InputError) as info:
            read(path)
        assert str(info.value) == f"{path} row 3: not UTF-8 text (byte 1 of the row)"

    def test_file_errors(self, tmp_path):
        with pytest.raises(InputError, match="no such file"):
            read_log(tmp_path / "nope.csv")
        with pytest.raises(InputError, match="it is a folder"):
            read_log(tmp_path)
        (tmp_path / "log.dat").write_text("order\n")
        with pytest.raises(InputError, match="cannot tell the format of"):
            read_log(tmp_path / "log.dat")
        with pytest.raises(InputError, match="labels 'ints' is not one of"):
            read_log(tmp_path / "log.dat", labels="ints")
        with pytest.raises(InputError, match="format 'xml' is not one of"):
            read_log(tmp_path / "log.dat", fmt="xml")
        with pytest.raises(InputError, match="chunk_rows must be a positive integer"):
            read_log(tmp_path / "log.dat", fmt="csv", chunk_rows=0)


class TestQuarantine:
    def make(self, tmp_path):
        rows = [f"T{k % 2},{r}" for k, r in enumerate(_good_rows(12, seed=30))]
        tokens = rows[3].split(",")[1].split()
        rows[3] = "T1," + " ".join(tokens[:-1])  # row 5: a card missing
        rows[6] = rows[6].replace(rows[6].split()[4], "ZZ")  # row 8: unknown code
        rows[8] = "T0,too,many"  # row 10: fields
        rows[10] = ""  # row 12: blank
        path = tmp_path / "log.csv"
        path.write_text("table,order\n" + "\n".join(rows) + "\n", encoding="utf-8")
        return path, tokens[-1]

    def test_bad_rows_set_aside(self, tmp_path):
        path, missing = self.make(tmp_path)
        digest = sha256_file(path)
        target = tmp_path / "aside.csv"
        chunk, summary = read(path, quarantine=target, chunk_rows=4)
        assert chunk.rows.tolist() == [2, 3, 4, 6, 7, 9, 11, 13]
        assert summary.decks == 8 and summary.set_aside == 3 and summary.blank_rows == 1
        assert summary.reasons == {"malformed-row": 1, "unknown-code": 1, "wrong-length": 1}
        assert summary.rows == 12 and summary.quarantine == str(target)
        bad = quarantined(target)
        assert [(b["row"], b["reason"]) for b in bad] == [
            ("5", "wrong-length"),
            ("8", "unknown-code"),
            ("10", "malformed-row"),
        ]
        assert bad[0]["problem"] == f"51 cards, deck 'standard-52' has 52; {missing} is missing"
        assert bad[2]["content"] == "T0,too,many"
        lines = path.read_text(encoding="utf-8").splitlines()
        assert [b["content"] for b in bad] == [lines[4], lines[7], lines[9]]
        assert set(REASONS) >= {b["reason"] for b in bad}
        assert sha256_file(path) == digest  # the input is never modified
        # the kept columns of set-aside rows travel with them where they could be read
        assert chunk.set_aside.rows.tolist() == [5, 8, 10]
        assert chunk.set_aside.readable.tolist() == [True, True, False]
        assert chunk.set_aside.columns["table"].tolist()[:2] == ["T1", "T0"]

    def test_written_even_when_nothing_is_bad(self, tmp_path):
        path = tmp_path / "log.csv"
        write_log(path, permutations(3, 52))
        read(path, quarantine=tmp_path / "q.csv")
        assert (tmp_path / "q.csv").read_text() == "row,reason,problem,content\n"

    def test_not_the_input_itself(self, tmp_path):
        path = tmp_path / "log.csv"
        write_log(path, permutations(3, 52))
        with pytest.raises(InputError, match="is the log itself"):
            read_log(path, quarantine=path)

    def test_file_level_error_leaves_no_quarantine(self, tmp_path):
        path = tmp_path / "log.csv"
        path.write_text("table\n1\n")
        with pytest.raises(InputError, match="missing an 'order' column"):
            read(path, quarantine=tmp_path / "q.csv")
        assert sorted(p.name for p in tmp_path.iterdir()) == ["log.csv"]

    def test_abandoned_reading_writes_nothing(self, tmp_path):
        path = tmp_path / "log.csv"
        write_log(path, permutations(10, 52))
        reader = read_log(path, quarantine=tmp_path / "q.csv", chunk_rows=2)
        iterator = iter(reader)
        next(iterator)
        iterator.close()
        assert not reader.summary.complete
        assert sorted(p.name for p in tmp_path.iterdir()) == ["log.csv"]
        with pytest.raises(RuntimeError, match="only once"):
            iter(reader)


_TOKENS = [*STANDARD_52.cards[:6], "10h", "♠", "XS", "", "0", "52", "7", "AS AS", '"', ",", "é"]


@st.composite
def junk_rows(draw):
    good = [codes(d) for d in permutations(3, 52, draw(st.integers(0, 1000)))]
    rows = []
    for _ in range(draw(st.integers(1, 12))):
        kind = draw(st.integers(0, 4))
        if kind == 0:
            rows.append(draw(st.sampled_from(good)))
        elif kind == 1:
            text = st.text(st.characters(blacklist_characters="\r\n"), max_size=40)
            rows.append(draw(text))
        elif kind == 2:
            rows.append(" ".join(draw(st.lists(st.sampled_from(_TOKENS), max_size=60))))
        elif kind == 3:
            tokens = draw(st.sampled_from(good)).split()
            rows.append(" ".join(tokens[: draw(st.integers(0, 60))]))
        else:
            tokens = draw(st.sampled_from(good)).split()
            k = draw(st.integers(0, 51))
            tokens[k] = draw(st.sampled_from(_TOKENS))
            rows.append(" ".join(tokens))
    return rows


class TestJunk:
    @TMP
    @given(
        junk_rows(),
        st.sampled_from(["codes", "int"]),
        st.integers(1, 5),
        st.sampled_from(["csv", "wide", "jsonl"]),
    )
    def test_only_input_errors_and_counts_add_up(self, tmp_path, rows, labels, chunk_rows, fmt):
        jsonl = fmt == "jsonl"
        path = tmp_path / ("junk.jsonl" if jsonl else "junk.csv")
        if jsonl:
            text = "\n".join(r if r.startswith("{") else json.dumps({"order": r}) for r in rows)
        elif fmt == "wide":
            header = ",".join(f"p{k}" for k in range(1, 53))
            text = header + "\n" + "\n".join(",".join(r.split(" ")) for r in rows)
        else:
            text = "id,order\n" + "\n".join(f"{k},{r}" for k, r in enumerate(rows))
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        try:
            read(path, labels=labels, chunk_rows=chunk_rows)
        except InputError as exc:
            assert "\n" not in str(exc) and str(exc).startswith(str(path))
        target = tmp_path / "q.csv"
        try:
            chunk, summary = read(path, labels=labels, chunk_rows=chunk_rows, quarantine=target)
        except InputError as exc:  # only a file-level problem may still stop the reading:
            # no deck rows, an empty file, or order fields whose separator is ambiguous (a
            # setting of the whole file: refused with the rows and the option that settles
            # it; hypothesis found a JSONL order field ";," here)
            message = str(exc)
            ambiguous = "between cards; give the separator with" in message
            assert "no deck rows" in message or "empty file" in message or ambiguous
            return
        bad = quarantined(target)
        assert summary.decks == len(chunk) and summary.set_aside == len(bad)
        seen = set(chunk.rows.tolist()) | {int(b["row"]) for b in bad}
        assert len(seen) == summary.decks + summary.set_aside  # no row counted twice
        # rows as a spreadsheet counts them: records by the csv module's reading [RFC 4180]
        records = text.count("\n") + 1 if jsonl else len(list(csv.reader(io.StringIO(text)))) - 1
        assert summary.rows == records
        assert (np.sort(chunk.decks, axis=1) == np.arange(52)).all()
        assert all(b["reason"] in REASONS for b in bad)


# --------------------------------------------------------------------------------------
# reference orders


def _brute_previous(decks, groups):
    """Expected (rows, reference rows, relative) for 'previous' by a plain loop."""
    last: dict[object, int] = {}
    out = []
    for k, g in enumerate(groups):
        if g in last:
            ref = decks[last[g]]
            out.append((k, last[g], [list(ref).index(c) for c in decks[k]]))
        last[g] = k
    return out


def _all_relative(path, reference, by=None, **kw):
    reader = read_log(path, **kw)
    stream = reference.stream(by=by)
    parts = [stream.relative(chunk) for chunk in reader]
    return parts, stream


class TestReferencePrevious:
    @settings(TMP, max_examples=40)
    @given(st.integers(1, 30), st.integers(1, 7), st.integers(1, 4), st.integers(0, 10**6))
    def test_against_a_loop_across_chunks_and_groups(
        self, tmp_path, count, chunk_rows, ngroups, seed
    ):
        decks = permutations(count, 52, seed)
        groups = np.random.default_rng(seed).integers(0, ngroups, count)
        path = tmp_path / "log.csv"
        write_log(path, decks, columns={"table": [f"T{g}" for g in groups]})
        for by in (None, "table"):
            parts, stream = _all_relative(
                path, Reference.parse("previous"), by=by, chunk_rows=chunk_rows
            )
            want = _brute_previous(decks, groups if by else np.zeros(count))
            got_rows = np.concatenate([p.rows for p in parts]).tolist()
            got_refs = np.concatenate([p.reference_rows for p in parts]).tolist()
            got_rel = np.concatenate([p.relative for p in parts]).tolist()
            assert got_rows == [k + 2 for k, _, _ in want]
            assert got_refs == [r + 2 for _, r, _ in want]
            assert got_rel == [rel for _, _, rel in want]
            assert stream.tested == len(want)
            assert stream.reference_only == count - len(want)

    @TMP
    @given(
        st.lists(st.sampled_from(["deck", "deck", "deck", "short", "fields"]), max_size=25),
        st.integers(1, 6),
        st.integers(0, 10**6),
    )
    def test_set_aside_rows_against_a_loop(self, tmp_path, kinds, chunk_rows, seed):
        rng = np.random.default_rng(seed)
        decks = permutations(len(kinds), 52, seed)
        tables = rng.integers(0, 3, len(kinds)).tolist()
        lines = []
        for kind, table, deck in zip(kinds, tables, decks, strict=True):
            text = codes(deck)
            lines.append(
                {"deck": f"T{table},{text}", "short": f"T{table},{text[:-3]}", "fields": "T,x,y"}[
                    kind
                ]
            )
        path = tmp_path / "log.csv"
        path.write_text("table,order\n" + "\n".join(lines) + "\n", encoding="utf-8")
        # the rule read directly: a set-aside row breaks its group's chain (every chain if
        # its group cannot be read)
        last: dict[int, int | None] = {}
        want = []
        for k, (kind, table) in enumerate(zip(kinds, tables, strict=True)):
            if kind == "fields":
                last = dict.fromkeys(last)
            elif kind == "short":
                last[table] = None
            else:
                if last.get(table) is not None:
                    want.append((k + 2, last[table] + 2))
                last[table] = k
        try:
            parts, stream = _all_relative(
                path,
                Reference(),
                by="table",
                quarantine=tmp_path / "q.csv",
                chunk_rows=chunk_rows,
            )
        except InputError as exc:
            assert "no deck rows" in str(exc) and set(kinds) <= {"short", "fields"}
            return
        rows = np.concatenate([p.rows for p in parts]).tolist() if parts else []
        refs = np.concatenate([p.reference_rows for p in parts]).tolist() if parts else []
        assert list(zip(rows, refs, strict=True)) == want
        for part in parts:
            expect = relative_to(decks[part.rows - 2], decks[part.reference_rows - 2])
            assert np.array_equal(part.relative, expect)
        good = kinds.count("deck")
        assert stream.tested + stream.reference_only + stream.after_set_aside == good

    def test_set_aside_rows_break_the_chain(self, tmp_path):
        decks = permutations(8, 52, seed=40)
        tables = ["A", "B", "A", "B", "A", "B", "A", "B"]
        rows = [f"{t},{codes(d)}" for t, d in zip(tables, decks, strict=True)]
        rows[2] = "A," + codes(decks[2])[:-3]  # row 4 (table A) set aside, readable
        rows[5] = "B,x,y"  # row 7: unreadable, group unknown
        path = tmp_path / "log.csv"
        path.write_text("table,order\n" + "\n".join(rows) + "\n", encoding="utf-8")
        parts, stream = _all_relative(
            path,
            Reference.parse("previous"),
            by="table",
            quarantine=tmp_path / "q.csv",
            chunk_rows=3,
        )
        tested = np.concatenate([p.rows for p in parts]).tolist()
        refs = np.concatenate([p.reference_rows for p in parts]).tolist()
        # A: rows 2, 6 (after a gap), 8 (after the unknown row 7); B: 3, 5, 9 (after row 7)
        assert list(zip(tested, refs, strict=True)) == [(5, 3)]
        assert stream.reference_only == 2 and stream.after_set_aside == 3
        rel = np.concatenate([p.relative for p in parts])
        assert np.array_equal(rel, relative_to(decks[[3]], decks[[1]]))

    def test_chunk_of_only_bad_json_lines(self, tmp_path):
        decks = permutations(3, 52, seed=43)
        lines = [
            json.dumps({"table": "A", "order": codes(decks[0])}),
            json.dumps({"table": "A"}),  # line 2: no order, alone in its chunk
            json.dumps({"table": "A", "order": codes(decks[1])}),
            json.dumps({"table": "A", "order": codes(decks[2])}),
        ]
        (tmp_path / "log.jsonl").write_text("\n".join(lines), encoding="utf-8")
        parts, stream = _all_relative(
            tmp_path / "log.jsonl",
            Reference(),
            by="table",
            quarantine=tmp_path / "q.csv",
            chunk_rows=1,
        )
        assert [p.rows.tolist() for p in parts] == [[], [], [], [4]]
        assert (stream.reference_only, stream.after_set_aside, stream.tested) == (1, 1, 1)

    def test_missing_group_column(self, tmp_path):
        path = tmp_path / "log.csv"
        write_log(path, permutations(3, 52), columns={"table": [1, 2, 3]})
        with pytest.raises(InputError, match=r"no column 'dealer' to group by \(columns: table\)"):
            _all_relative(path, Reference(), by="dealer")


class TestReferenceFixed:
    def test_first(self, tmp_path):
        decks = permutations(6, 52, seed=41)
        path = tmp_path / "log.csv"
        write_log(path, decks, columns={"table": ["A", "B", "A", "A", "B", "B"]})
        parts, stream = _all_relative(path, Reference.parse("first"), chunk_rows=4)
        rel = np.concatenate([p.relative for p in parts])
        assert np.array_equal(rel, relative_to(decks[1:], decks[0]))
        assert stream.reference_only == 1 and stream.tested == 5
        parts, _ = _all_relative(path, Reference.parse("first"), by="table", chunk_rows=4)
        got = np.concatenate([p.reference_rows for p in parts]).tolist()
        assert np.concatenate([p.rows for p in parts]).tolist() == [4, 5, 6, 7]
        assert got == [2, 2, 3, 3]

    def test_first_row_set_aside(self, tmp_path):
        rows = _good_rows(3)
        rows[0] = rows[0][:-3]
        path = tmp_path / "log.csv"
        path.write_text("order\n" + "\n".join(rows) + "\n")
        reader = read_log(path, quarantine=tmp_path / "q.csv")
        stream = Reference.parse("first").stream()
        with pytest.raises(
            InputError, match="row 2 was set aside before the first deck of the log"
        ):
            for chunk in reader:
                stream.relative(chunk)

    def test_explicit_orders(self, tmp_path):
        decks = permutations(4, 52, seed=42)
        path = tmp_path / "log.csv"
        write_log(path, decks)
        reference = decks[0][::-1].copy()
        text = codes(reference)
        (tmp_path / "ref.txt").write_text("# new pack as loaded\n" + text.replace(" ", "\n"))
        for spec in (text, str(tmp_path / "ref.txt"), text.lower()):
            parts, stream = _all_relative(path, Reference.parse(spec), chunk_rows=3)
            rel = np.concatenate([p.relative for p in parts])
            assert np.array_equal(rel, relative_to(decks, reference)) and stream.tested == 4
        spaced = tmp_path / "reference order.txt"  # a file name with a space
        spaced.write_text(text)
        assert np.array_equal(Reference.parse(spaced).order, reference)
        parts, _ = _all_relative(path, Reference.parse("deck"))
        assert np.array_equal(np.concatenate([p.relative for p in parts]), decks)

    def test_explicit_integer_order(self):
        ref = Reference.parse(" ".join(str(k) for k in range(52, 0, -1)), labels="int")
        assert ref.order.tolist() == list(range(51, -1, -1))

    @pytest.mark.parametrize(
        ("spec", "message"),
        [
            (
                "sideways",
                "reference 'sideways' is not previous, first, deck, column:NAME, pairs, an "
                "existing file",
            ),
            ("AS KS", "reference order: 2 cards, deck 'standard-52' has 52"),
        ],
    )
    def test_parse_errors(self, spec, message):
        with pytest.raises(InputError, match=message):
            Reference.parse(spec)

    def test_default_is_previous(self):
        assert Reference.parse(None).kind == "previous" and Reference().kind == "previous"


def test_columns_frame_index_is_reset(tmp_path):
    decks = permutations(3, 52)
    frame = pd.DataFrame({"a": [1, 2, 3]}, index=[10, 20, 30])
    write_log(tmp_path / "log.jsonl", decks, columns=frame)
    chunk, _ = read(tmp_path / "log.jsonl")
    assert chunk.columns["a"].tolist() == [1, 2, 3]
