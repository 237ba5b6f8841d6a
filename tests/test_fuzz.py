"""Fuzzing as tests (issue 16): random and near-valid input to every reader and parser.

Every input must either be read into valid objects (decks that are arrangements of the
deck, rows in file order; a parsed procedure that can shuffle a deck) or be refused with
the project's :class:`InputError`; nothing else may escape. Each property runs briefly in
the default test run and for many more examples with ``--run-slow``.
"""

from __future__ import annotations

import gzip
import io
import json
import os
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.records.cards import STANDARD_52

#: examples per property in the default run and in the slow, long run
FAST, LONG = 40, 1500

CODES = list(STANDARD_52.cards)


def fuzz(*strategies):
    """``fuzz(strategy, ...)(body)``: the property ``body(self, *drawn)`` as two tests, a
    short default run (derandomized, so it is the same every time) and a long ``slow``
    one (``--run-slow``)."""

    def build(body):
        def variant(examples: int, slow: bool):
            @settings(
                max_examples=examples,
                deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
                derandomize=not slow,
            )
            @given(st.tuples(*strategies))
            def test(self, drawn):
                body(self, *drawn)

            return pytest.mark.slow(test) if slow else test

        return variant(FAST, False), variant(LONG, True)

    return build


# -------------------------------------------------------------------------------------
# strategies


@st.composite
def decks(draw, count=None):
    """Rows of card codes: arrangements of the 52-card deck (a few made slightly wrong)."""
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    count = draw(st.integers(1, 6)) if count is None else count
    rows = [list(np.array(CODES)[rng.permutation(52)]) for _ in range(count)]
    for row in rows:
        if draw(st.booleans()) and draw(st.booleans()):
            spot = draw(st.integers(0, 51))
            row[spot] = draw(st.sampled_from([*CODES, "", "XX", "10H", "as", "Z" * 40]))
    return rows


_SPECIAL = [b'"', b"\r", b"\n", b"\r\n", b",", b";", b"\t", b"\x00", b"\xff", b"\xef\xbb\xbf",
            b" ", b"{", b"}", b"[", b"]", b"-1", b"99999999999999999999999", b"\\"]  # fmt: skip


@st.composite
def mutated(draw, data: bytes):
    """``data`` with a few random edits: special bytes inserted, bytes deleted, a line
    repeated, the file cut short, random bytes appended."""
    out = bytearray(data)
    for _ in range(draw(st.integers(0, 6))):
        op = draw(st.sampled_from(["insert", "delete", "repeat", "cut", "garbage"]))
        at = draw(st.integers(0, max(0, len(out))))
        if op == "insert":
            out[at:at] = draw(st.sampled_from(_SPECIAL))
        elif op == "delete" and out:
            del out[at % len(out) : at % len(out) + draw(st.integers(1, 4))]
        elif op == "repeat":
            lines = bytes(out).split(b"\n")
            k = draw(st.integers(0, len(lines) - 1))
            lines.insert(k, lines[k])
            out = bytearray(b"\n".join(lines))
        elif op == "cut":
            del out[at:]
        else:
            out[at:at] = draw(st.binary(max_size=40))
    return bytes(out)


@st.composite
def csv_logs(draw):
    rows = draw(decks())
    if draw(st.booleans()):  # an order column, perhaps quoted, with other columns
        quote = draw(st.booleans())
        lines = ["deck,table,order"]
        for k, row in enumerate(rows):
            order = " ".join(row)
            lines.append(f'{k},T{k % 3},"{order}"' if quote else f"{k},T{k % 3},{order}")
    else:  # one column per position
        lines = [",".join(f"p{i}" for i in range(1, 53))] + [",".join(r) for r in rows]
    end = draw(st.sampled_from(["\n", "\r\n"]))
    return draw(mutated((end.join(lines) + end).encode()))


def json_values():
    scalars = st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=8)
    return st.recursive(
        scalars,
        lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner),
        max_leaves=8,
    )


@st.composite
def jsonl_logs(draw):
    lines = []
    for k, row in enumerate(draw(decks())):
        record = {"deck": k, "order": row if draw(st.booleans()) else " ".join(row)}
        if draw(st.booleans()):
            record["extra"] = draw(json_values())
        if draw(st.booleans()) and draw(st.booleans()):
            record["order"] = draw(json_values())
        lines.append(json.dumps(record))
    return draw(mutated(("\n".join(lines) + "\n").encode()))


@st.composite
def integer_jsonl_logs(draw):
    lines = []
    for row in draw(decks()):
        labels = [CODES.index(c) + 1 if c in CODES else 0 for c in row]
        if draw(st.booleans()):
            labels[draw(st.integers(0, 51))] = draw(
                st.sampled_from([-(2**70), 2**64, 2**31, -1, 0, 53, 10**30])
            )
        lines.append(json.dumps({"order": labels}))
    return draw(mutated(("\n".join(lines) + "\n").encode()))


# -------------------------------------------------------------------------------------
# the property of every reader


def _read(data: bytes, suffix: str, **options) -> None:
    """Read ``data`` as a log; it must give valid decks or raise InputError."""
    from shufflecheck.records.logs import read_log

    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / f"log{suffix}"
        path.write_bytes(data)
        try:
            reader = read_log(path, **options)
            rows = []
            for chunk in reader:
                decks = np.asarray(chunk.decks)
                n = reader.deck.size
                assert decks.shape[1] == n
                assert (np.sort(decks, axis=1) == np.arange(n)).all()  # arrangements only
                rows += chunk.rows.tolist()
            assert rows == sorted(rows) and len(set(rows)) == len(rows)
            assert reader.summary.complete
        except InputError as exc:
            assert "\n" not in str(exc)  # one line


class TestCsvReader:
    test_random_bytes, test_random_bytes_long = fuzz(st.binary(max_size=600))(
        lambda self, data: _read(data, ".csv")
    )
    test_bytes_after_a_header, test_bytes_after_a_header_long = fuzz(st.binary(max_size=600))(
        lambda self, data: _read(b"deck,order\n" + data, ".csv")
    )
    test_near_valid, test_near_valid_long = fuzz(csv_logs())(lambda self, data: _read(data, ".csv"))

    @given(csv_logs())
    @settings(max_examples=15, deadline=None)
    def test_near_valid_with_quarantine(self, data):
        with tempfile.TemporaryDirectory() as folder:
            _read(data, ".csv", quarantine=os.path.join(folder, "bad.csv"))

    @given(csv_logs())
    @settings(max_examples=15, deadline=None)
    def test_gzip(self, data):
        _read(gzip.compress(data), ".csv.gz")

    def test_known_quoting_cases(self):
        for data in [b'deck,order\n1,"AS\r2S"\n', b'"\r', b'order\n"AS 2S\rKS"\r\n', b'"\n\n"\r']:
            _read(data, ".csv")


class TestJsonLinesReader:
    test_random_bytes, test_random_bytes_long = fuzz(st.binary(max_size=600))(
        lambda self, data: _read(data, ".jsonl")
    )
    test_near_valid, test_near_valid_long = fuzz(jsonl_logs())(
        lambda self, data: _read(data, ".jsonl")
    )
    test_integer_labels, test_integer_labels_long = fuzz(integer_jsonl_logs())(
        lambda self, data: _read(data, ".jsonl", labels="int")
    )

    def test_known_cases(self):
        _read(b'{"order":' + b"[" * 100_000 + b"]" * 100_000 + b"}\n", ".jsonl")
        _read(b'{"order": [' + b"9" * 5000 + b"]}\n", ".jsonl", labels="int")
        with pytest.raises(InputError, match="key 'order' appears twice"):
            _read_strict(b'{"order": ["AS"], "order": ["2S"]}\n', ".jsonl")

    @pytest.mark.parametrize(
        "line",
        [
            b'{"order": "AS", "extra": "\\ud800"}',  # half a surrogate pair in a kept value
            b'{"ord\\udfffer": "AS"}',  # in a key
            b'{"order": "AS", "x": [{"y": "a\\uDBFFb"}]}',  # nested, upper-case hex
        ],
    )
    def test_half_a_surrogate_pair(self, line, tmp_path):
        # regression (found by the long fuzz run): a JSON escape of half a surrogate pair
        # parses to a text that is no Unicode and escaped as UnicodeEncodeError
        from shufflecheck.records.logs import read_log

        deck = " ".join(CODES)
        good = json.dumps({"order": deck}).encode()
        with pytest.raises(InputError, match="line 2: a text holds half of a surrogate pair"):
            _read_strict(good + b"\n" + line + b"\n", ".jsonl")
        path = tmp_path / "log.jsonl"
        path.write_bytes(good + b"\n" + line + b"\n" + good + b"\n")
        reader = read_log(path, quarantine=tmp_path / "set-aside.csv")
        assert sum(len(chunk) for chunk in reader) == 2
        assert reader.summary.set_aside == 1
        assert "half of a surrogate pair" in (tmp_path / "set-aside.csv").read_text()
        pair = json.dumps({"order": deck, "note": "\U0001f600"}).encode()  # a whole pair: fine
        assert b"\\ud83d\\ude00" in pair
        _read_strict(pair + b"\n", ".jsonl")


def _read_strict(data: bytes, suffix: str, **options) -> None:
    from shufflecheck.records.logs import read_log

    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / f"log{suffix}"
        path.write_bytes(data)
        for _ in read_log(path, **options):
            pass


@st.composite
def parquet_tables(draw):
    import pyarrow as pa

    rows = draw(decks())
    labels = [[CODES.index(c) + 1 if c in CODES else 0 for c in row] for row in rows]
    kind = draw(st.sampled_from(["text", "list", "ints", "uints", "dict", "wide", "wide-ints"]))
    if kind == "text":
        columns = {"order": pa.array([" ".join(r) for r in rows])}
    elif kind == "list":
        columns = {"order": pa.array(rows, pa.list_(pa.string()))}
    elif kind in ("ints", "uints"):
        huge = 2**63 + 5 if kind == "uints" else -(2**40)
        big = [[*r[:-1], huge] for r in labels]
        chosen = big if draw(st.booleans()) else labels
        columns = {
            "order": pa.array(chosen, pa.list_(pa.uint64() if kind == "uints" else pa.int64()))
        }
    elif kind == "dict":
        columns = {"order": pa.array([" ".join(r) for r in rows]).dictionary_encode()}
    elif kind == "wide":
        columns = {f"p{i + 1}": pa.array([r[i] for r in rows]) for i in range(52)}
    else:
        columns = {f"p{i + 1}": pa.array([r[i] for r in labels], pa.uint32()) for i in range(52)}
    if draw(st.booleans()):
        columns["extra"] = pa.array([draw(st.integers(-(2**63), 2**63 - 1)) for _ in rows])
    return pa.table(columns), kind


class TestParquetReader:
    test_random_bytes, test_random_bytes_long = fuzz(st.binary(max_size=600))(
        lambda self, data: _read(data, ".parquet")
    )

    @staticmethod
    def _table_bytes(table) -> bytes:
        import pyarrow.parquet as pq

        buffer = io.BytesIO()
        pq.write_table(table, buffer)
        return buffer.getvalue()

    def _tables(self, drawn):
        table, kind = drawn
        labels = "int" if kind in ("ints", "uints", "wide-ints") else "codes"
        _read(self._table_bytes(table), ".parquet", labels=labels)

    test_tables, test_tables_long = fuzz(parquet_tables())(_tables)

    def _corrupted(self, drawn, data):
        table, _ = drawn
        raw = bytearray(self._table_bytes(table))
        for _ in range(data.draw(st.integers(1, 5))):
            at = data.draw(st.integers(0, len(raw) - 1))
            raw[at] = data.draw(st.integers(0, 255))
        _read(bytes(raw), ".parquet")

    test_corrupted, test_corrupted_long = fuzz(parquet_tables(), st.data())(_corrupted)


# -------------------------------------------------------------------------------------
# TOML files and procedure text

_TOML_PIECES = [
    "name = ", "cards = ", "decks = ", "steps = ", "[policy]", "[[procedure]]",
    "[[procedure.log]]", "target = ", "house = ", "path = ", "max_repeats = ", '"riffle x3"',
    '"riffle, strip(packets=5), cut"', "52", "1e400", "99999999999999999999", "-1", "0",
    "[", "]", "{", "}", '"', "'''", "=", ",", "\n", "# c", "true", "2026-01-01T00:00:00",
    '["AS", "2S"]', "{ code = \"RJ\" }", "\\u0000", "\t",
]  # fmt: skip

toml_text = st.lists(st.sampled_from(_TOML_PIECES), max_size=30).map("".join) | st.text(
    max_size=200
)


def _load_toml_file(text: str, loader) -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "input.toml"
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        try:
            loader(path)
        except InputError as exc:
            assert "\n" not in str(exc)


class TestTomlFiles:
    def _all_loaders(self, text):
        from shufflecheck.analyses.policy import load_policy
        from shufflecheck.common.tomlfiles import load_toml
        from shufflecheck.models.procedures import load_procedure
        from shufflecheck.records.cards import load_deck

        for loader in (load_toml, load_procedure, load_deck, load_policy):
            _load_toml_file(text, loader)

    test_text, test_text_long = fuzz(toml_text)(_all_loaders)

    def _raw_bytes(self, data):
        from shufflecheck.models.procedures import load_procedure
        from shufflecheck.records.cards import load_deck

        with tempfile.TemporaryDirectory() as folder:
            path = Path(folder) / "input.toml"
            path.write_bytes(data)
            for loader in (load_procedure, load_deck):
                try:
                    loader(path)
                except InputError:
                    pass

    test_bytes, test_bytes_long = fuzz(st.binary(max_size=300))(_raw_bytes)


_PROCEDURE_PIECES = [
    "riffle", "strip", "cut", "shelf", "pile", "transposition", "top-to-random",
    "hand-riffle", "weave", "overhand", "(", ")", ",", "=", " ", "x", "×", "*", "3", "0",
    "-1", "1e300", "nan", "inf", "99999999999999999999", "hands", "packets", "size",
    "shelves", "spread", "least", "clump", "piles", "pickup", "hold", "stack", "faro",
    "random", "fixed", "in", "out", '"', "'", "none", "0.5",
]  # fmt: skip

procedure_text = st.lists(st.sampled_from(_PROCEDURE_PIECES), max_size=16).map("".join) | st.text(
    max_size=60
)


class TestProcedureText:
    def _parse(self, text):
        from shufflecheck.models.procedures import parse_procedure

        try:
            procedure = parse_procedure(text)
        except InputError as exc:
            assert "\n" not in str(exc)
            return
        # a parsed procedure is a valid object: it shuffles decks into arrangements
        try:
            procedure.check_cards(52)
            out = procedure.sample(3, 52, rng=0)
        except InputError:
            return
        assert out.shape == (3, 52)
        assert (np.sort(out, axis=1) == np.arange(52)).all()

    test_text, test_text_long = fuzz(procedure_text)(_parse)


class TestCommandLine:
    """End to end: random input files never end in an internal error (exit code 3)."""

    @given(st.binary(max_size=300), st.sampled_from([".csv", ".jsonl", ".parquet", ".toml"]))
    @settings(max_examples=25, deadline=None, derandomize=True)
    def test_audit_and_assess_exit_0_or_2(self, data, suffix):
        from tests._cli import run

        with tempfile.TemporaryDirectory() as folder:
            path = Path(folder) / f"input{suffix}"
            path.write_bytes(data)
            command = (
                ("assess", path, "-r", 1, "--simulate", 100)
                if suffix == ".toml"
                else ("audit", path)
            )
            result = run(*command)
            assert result.exit_code in (0, 2), result.output
            if result.exit_code == 2:
                assert len(result.stderr.strip().splitlines()) == 1
