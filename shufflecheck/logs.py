"""Files of recorded deck orders: read and validate them in chunks, write them, and turn
absolute orders into permutations relative to a reference order.

Formats (docs/formats-logs.md has the full description):

* ``csv`` -- one deck per row, a column ``order`` with the codes top to bottom separated by
  whitespace; every other column is kept.
* ``wide`` -- CSV with one column per position, headed ``p1..pN``, ``pos1..posN``,
  ``position1..positionN``, ``card1..cardN`` or ``1..N`` (taken in numeric order).
* ``jsonl`` -- one JSON object per line with an ``order`` list (or a text of codes).
* ``parquet`` -- an ``order`` column (list or text) or position columns; needs pyarrow.

Row numbers are the ones a person sees: in CSV the header is row 1 and the first deck row 2
(blank lines count, a quoted cell spanning lines stays one row), in JSON Lines the 1-based
line number, in Parquet the 1-based row index. A bad row raises :class:`InputError` naming
file, row and problem; with a quarantine file it is written there instead (row, reason,
problem, raw content) and reading goes on. Input files are opened read-only.

Reference orders (:class:`Reference`): ``previous`` is the default (each deck against the
deck before it in the log, of the same group when grouped; the first deck is only a
reference), ``first``, ``deck`` or an explicit order. :class:`ReferenceStream` turns chunks
into relative permutations (:func:`shufflecheck.decks.relative_to`) across chunk boundaries.

References
----------
.. [1] Y. Shafranovich, "Common Format and MIME Type for Comma-Separated Values (CSV)
       Files", RFC 4180, 2005 (quoting; a record may span lines inside quotes).
.. [2] JSON Lines, https://jsonlines.org (one JSON value per line, UTF-8).
.. [3] Apache Parquet format specification, https://parquet.apache.org/docs/.
.. [4] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of Mathematical
       Statistics, Hayward, CA, 1988, ch. 3 (a deck relative to a reference order).
"""

from __future__ import annotations

import contextlib
import csv
import gzip
import io
import itertools
import json
import os
import re
from collections import Counter
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from typing import IO, Any, Literal

import numpy as np
import pandas as pd

from shufflecheck.decks import (
    LABEL_MODES,
    Arrangement,
    DeckDefinition,
    Labels,
    check_arrangement,
    integer_value,
    load_deck,
    parse_order,
    relative_to,
)
from shufflecheck.errors import InputError
from shufflecheck.fileio import atomic_open

__all__ = [
    "REASONS",
    "LogChunk",
    "LogFormat",
    "LogReader",
    "LogSummary",
    "Reference",
    "ReferenceStream",
    "RelativeChunk",
    "SetAside",
    "read_log",
    "write_log",
]

LogFormat = Literal["auto", "csv", "wide", "jsonl", "parquet"]
FORMATS = ("auto", "csv", "wide", "jsonl", "parquet")
DEFAULT_CHUNK_ROWS = 50_000

#: Reason codes of rows set aside (the ``reason`` column of a quarantine file).
REASONS = {
    "empty-order": "the order is empty",
    "empty-field": "a position is empty",
    "unknown-code": "a code that is not a card of the deck",
    "not-integer": "an integer label that is not an integer",
    "out-of-range": "an integer label outside 0..n-1 or 1..n",
    "mixed-base": "integer labels numbered both from 0 and from 1",
    "wrong-length": "more or fewer cards than the deck has",
    "duplicate-card": "a card appears more than once",
    "malformed-row": "a CSV row with the wrong number of fields, or not UTF-8 text",
    "malformed-json": "a line that is not a JSON object",
    "missing-order": "a JSON line without an 'order' key",
}

_POSITION = re.compile(r"^(p|pos|position|card)?[ _-]?(\d+)$", re.IGNORECASE)
_QUARANTINE_HEADER = ("row", "reason", "problem", "content")


# --------------------------------------------------------------------------------------
# results


@dataclass(frozen=True)
class SetAside:
    """Rows of one chunk that were set aside (only with a quarantine file).

    ``columns`` holds their kept columns where the row could be split into columns;
    ``readable[k]`` is False where it could not (a CSV row with the wrong number of fields,
    a line that is not JSON): the group of such a row is unknown.
    """

    rows: np.ndarray
    columns: pd.DataFrame
    readable: np.ndarray


@dataclass(frozen=True)
class LogChunk:
    """Valid decks of one chunk of a log, in file order.

    Attributes
    ----------
    decks : ndarray of int16, shape (rows, n)
        ``decks[k, i]`` is the label of the card at position ``i`` (0 = top) of deck ``k``.
    rows : ndarray of int64, shape (rows,)
        Row numbers as the user counts them (CSV: header = row 1; JSONL: line number;
        Parquet: 1-based row index).
    columns : pandas.DataFrame
        Every other column of those rows (index 0..rows-1). CSV cells are text as written
        (empty cells are ``""``); JSON and Parquet values keep their types.
    set_aside : SetAside
        Rows of this chunk set aside into the quarantine file (empty without one).
    """

    decks: np.ndarray
    rows: np.ndarray
    columns: pd.DataFrame
    set_aside: SetAside

    def __len__(self) -> int:
        return int(self.decks.shape[0])


@dataclass(frozen=True)
class LogSummary:
    """What reading a log did.

    ``decks`` valid decks returned; ``set_aside`` rows written to the quarantine file with
    per-reason counts in ``reasons`` (see :data:`REASONS`); ``blank_rows`` empty lines
    skipped (they hold no deck). ``labels`` is the numbering that was used (``codes``,
    ``int0``, ``int1``; ``int`` if no valid row fixed it) and ``base_row`` the row that
    fixed it in ``int`` mode. ``complete`` is False until the whole file was read.
    """

    path: str
    format: str
    deck: str
    labels: str
    decks: int
    set_aside: int
    reasons: dict[str, int]
    blank_rows: int
    quarantine: str | None
    base_row: int | None
    complete: bool

    @property
    def rows(self) -> int:
        """Every row seen below the header: decks + set aside + blank."""
        return self.decks + self.set_aside + self.blank_rows


# --------------------------------------------------------------------------------------
# fast token -> label mapping (vectorised); the authoritative check is check_arrangement


@dataclass(frozen=True)
class _Keys:
    table16: np.ndarray  # two-byte spellings (any ASCII case) -> label, -1 elsewhere
    keys: np.ndarray  # sorted uint64 keys of upper-cased spellings of 3..8 bytes
    labels: np.ndarray
    long: bool  # some spelling is longer than 8 bytes


def _key(data: bytes) -> int:
    return sum(b << (8 * j) for j, b in enumerate(data))


@cache
def _keys(deck: DeckDefinition) -> _Keys:
    table16 = np.full(1 << 16, -1, dtype=np.int16)
    keys: dict[int, int] = {}
    long = False
    for spelling, label in deck.spellings().items():
        data = spelling.encode("utf-8")
        if len(data) == 2:
            for a in {data[0], data[0] | 32 if 65 <= data[0] <= 90 else data[0]}:
                for b in {data[1], data[1] | 32 if 65 <= data[1] <= 90 else data[1]}:
                    table16[a | (b << 8)] = label
        elif len(data) <= 8:
            keys[_key(data)] = label
        else:
            long = True
    ordered = sorted(keys)
    return _Keys(
        table16,
        np.array(ordered, dtype=np.uint64),
        np.array([keys[k] for k in ordered], dtype=np.int32),
        long,
    )


def _is_separator(buf: np.ndarray) -> np.ndarray:
    # exactly the ASCII characters str.split() treats as whitespace
    return (buf == 32) | ((buf >= 9) & (buf <= 13)) | ((buf >= 28) & (buf <= 31))


def _scan_text(
    texts: Sequence[str], deck: DeckDefinition, integer: bool
) -> tuple[np.ndarray, np.ndarray]:
    """Tokens of whitespace-separated texts -> (values, tokens per text), vectorised.

    ``values`` holds labels (codes) or raw integers (integer labels); ``-1`` marks a token
    the fast path cannot vouch for (the row is then checked by :func:`check_arrangement`).
    """
    joined = "\n".join(texts)
    if joined.count("\n") != len(texts) - 1 or "\r" in joined:
        joined = "\n".join(t.replace("\n", " ").replace("\r", " ") for t in texts)
    buf = np.frombuffer(joined.encode("utf-8", "surrogatepass") + b"\n", dtype=np.uint8)
    inside = ~_is_separator(buf)
    edge = np.empty(buf.size + 1, dtype=bool)
    edge[0] = inside[0]
    edge[-1] = inside[-1]
    np.not_equal(inside[1:], inside[:-1], out=edge[1:-1])
    bounds = np.flatnonzero(edge)
    starts, ends = bounds[0::2], bounds[1::2]
    before = np.searchsorted(starts, np.flatnonzero(buf == 10))
    counts = np.diff(before, prepend=0)
    lengths = ends - starts
    values = np.full(starts.size, -1, dtype=np.int64)
    if starts.size == 0:
        return values, counts
    last = buf.size - 1
    if integer:
        short = lengths <= 6
        total = np.zeros(starts.size, dtype=np.int64)
        digits = short.copy()
        for j in range(int(lengths[short].max(initial=0))):
            live = short & (lengths > j)
            byte = buf[np.minimum(starts + j, last)].astype(np.int64)
            digits &= ~live | ((byte >= 48) & (byte <= 57))
            total = np.where(live, total * 10 + (byte - 48), total)
        values[digits] = total[digits]
        return values, counts
    keys = _keys(deck)
    two = lengths == 2
    if two.any():
        s = starts[two]
        pair = buf[s].astype(np.int64) | (buf[s + 1].astype(np.int64) << 8)
        values[two] = keys.table16[pair]
    middle = np.flatnonzero((lengths > 2) & (lengths <= 8))
    if middle.size and keys.keys.size:
        s, length = starts[middle], lengths[middle]
        key = np.zeros(middle.size, dtype=np.uint64)
        for j in range(int(length.max())):
            byte = buf[np.minimum(s + j, last)]
            byte = np.where((byte >= 97) & (byte <= 122), byte - 32, byte).astype(np.uint64)
            key |= np.where(length > j, byte, 0).astype(np.uint64) << np.uint64(8 * j)
        at = np.minimum(np.searchsorted(keys.keys, key), keys.keys.size - 1)
        values[middle] = np.where(keys.keys[at] == key, keys.labels[at], -1)
    if keys.long:
        for k in np.flatnonzero(lengths > 8):
            token = bytes(buf[starts[k] : ends[k]]).decode("utf-8", "replace")
            found = deck.lookup(token)
            values[k] = -1 if found is None else found
    return values, counts


def _map_tokens(flat: np.ndarray, deck: DeckDefinition, integer: bool) -> np.ndarray:
    """One value per token of a flat array (text, ints, None) -> labels / raw integers, -1 bad."""
    if flat.dtype.kind in "iu":
        return flat.astype(np.int64) if integer else np.full(flat.size, -1, dtype=np.int64)
    if flat.size == 0:
        return np.zeros(0, dtype=np.int64)
    codes, uniques = pd.factorize(flat)
    if integer:
        mapped = [integer_value(u) for u in uniques]
    else:
        mapped = [deck.lookup(u) for u in uniques]
    table = np.array([-1 if v is None or v > 10**6 else v for v in mapped] + [-1], dtype=np.int64)
    return table[codes]  # code -1 (missing value) picks the final -1


def _permutation_rows(labels: np.ndarray, n: int) -> np.ndarray:
    """Rows of ``labels`` (values already in 0..n-1) holding every label exactly once."""
    m = labels.shape[0]
    ok = np.zeros(m, dtype=bool)
    step = max(1, (1 << 22) // max(n, 1))  # about 4M cells at a time
    for lo in range(0, m, step):
        part = labels[lo : lo + step]
        rows = part.shape[0]
        offsets = (np.arange(rows, dtype=np.int32) * n)[:, None]
        flat = (part.astype(np.int32) + offsets).ravel()
        ok[lo : lo + rows] = (np.bincount(flat, minlength=rows * n).reshape(rows, n) == 1).all(1)
    return ok


# --------------------------------------------------------------------------------------
# raw chunks, as each format delivers them


@dataclass
class _Bad:
    row: int
    reason: str
    problem: str
    raw: str
    columns: dict[str, Any] | None  # kept columns, or None if the row could not be split


@dataclass
class _Raw:
    rows: np.ndarray
    columns: pd.DataFrame
    tokens_of: Callable[[int], list[object]]
    raw_of: Callable[[int], str]
    texts: Sequence[str] | None = None  # whitespace-separated order per row, or
    flat: np.ndarray | None = None  # every token of every row, with
    counts: np.ndarray | None = None  # tokens per row
    failed: list[_Bad] = field(default_factory=list)
    blank: int = 0


def _decode(data: bytes) -> str:
    return data.decode("utf-8", "backslashreplace").rstrip("\r\n")


def _position_columns(names: Sequence[str], where: str) -> list[int] | None:
    """Indices of the position columns in numeric order, or None if there are none."""
    found: dict[int, int] = {}
    prefixes: set[str] = set()
    for index, name in enumerate(names):
        match = _POSITION.match(name.strip())
        if match:
            number = int(match.group(2))
            prefixes.add((match.group(1) or "").lower())
            if number in found:
                raise InputError(f"{where}: position {number} has two columns")
            found[number] = index
    if not found:
        return None
    if len(prefixes) > 1:
        shown = ", ".join(sorted(f"{p or ''}N" for p in prefixes))
        raise InputError(f"{where}: position columns are named in different ways ({shown})")
    missing = [k for k in range(1, len(found) + 1) if k not in found]
    if missing:
        raise InputError(
            f"{where}: position columns must be numbered 1..N; position {missing[0]} is missing"
        )
    return [found[k] for k in range(1, len(found) + 1)]


def _layout(
    names: Sequence[str], fmt: str, deck: DeckDefinition, where: str
) -> tuple[str, list[int]]:
    """('csv', [order index]) or ('wide', [position indices]) for a header."""
    order = [i for i, name in enumerate(names) if name.strip().lower() == "order"]
    if len(order) > 1:
        raise InputError(f"{where}: more than one 'order' column")
    if fmt != "wide" and order:
        return "csv", order
    positions = _position_columns([n for i, n in enumerate(names) if i not in order], where)
    if positions is not None:
        kept = [i for i in range(len(names)) if i not in order]
        positions = [kept[k] for k in positions]
        if len(positions) != deck.size:
            raise InputError(
                f"{where}: {len(positions)} position columns, deck {deck.name!r} has "
                f"{deck.size} cards"
            )
        return "wide", positions
    shown = ", ".join(names[:8]) + (", ..." if len(names) > 8 else "")
    wanted = "position columns p1..pN" if fmt == "wide" else "an 'order' column"
    raise InputError(f"{where}: missing {wanted} (columns are: {shown}); see docs/formats-logs.md")


def _open_binary(path: Path) -> IO[bytes]:
    try:
        if path.suffix.lower() == ".gz":
            return gzip.open(path, "rb")
        return open(path, "rb")
    except OSError as exc:
        raise InputError(f"cannot read {path}: {exc.strerror or exc}") from None


def _sniff_delimiter(header: str, path: Path) -> str:
    if ".tsv" in [s.lower() for s in path.suffixes]:
        return "\t"
    counts = {d: header.count(d) for d in (",", ";", "\t")}
    best = max(counts, key=lambda d: counts[d])
    return best if counts[best] > counts[","] else ","


_SPAN = 64  # most physical lines one quoted CSV record may span


def _csv_records(lines: list[bytes], delimiter: str) -> tuple[list[bytes], bool]:
    """Group physical lines into CSV records as the csv module reads them [1].

    A quoted field may hold line breaks; a line that opens a quote not closed within
    :data:`_SPAN` lines stays a record of its own (reported as malformed) and the lines
    after it are read as rows. The flag is True when the last record is still open at the
    end of ``lines`` (the caller then reads more lines).
    """
    text = [line.decode("utf-8", "surrogateescape") for line in lines]
    records: list[bytes] = []
    start = 0
    while start < len(lines):
        state = {"start": start}

        def feed(first: int = start, state: dict[str, int] = state) -> Iterator[str]:
            for k in range(first, len(lines)):
                if k - state["start"] >= _SPAN:
                    return
                yield text[k]

        reader = csv.reader(feed(), delimiter=delimiter)
        restart = None
        for _ in reader:
            end = start + reader.line_num
            begin = state["start"]
            if end - begin >= _SPAN and end < len(lines):
                restart = begin
                break
            records.append(b"".join(lines[begin:end]))
            state["start"] = end
        if restart is None:
            break
        records.append(lines[restart])  # an unclosed quote: this line alone, malformed
        start = restart + 1
    last = records[-1].decode("utf-8", "surrogateescape") if records else ""
    return records, _still_open(last, delimiter)


def _still_open(text: str, delimiter: str) -> bool:
    """True if ``text`` ends inside a quoted field (more lines belong to the record)."""
    try:
        list(csv.reader([text], delimiter=delimiter, strict=True))
    except csv.Error as exc:
        return "unexpected end of data" in str(exc)
    return False


def _csv_chunks(
    path: Path, shown: str, fmt: str, deck: DeckDefinition, chunk_rows: int
) -> Iterator[_Raw | tuple[str, list[int]]]:
    """Yield the layout first, then one _Raw per block of about chunk_rows records."""
    with _open_binary(path) as handle:
        try:
            first = handle.readline()
            header = first[3:] if first.startswith(b"\xef\xbb\xbf") else first
            if not first:
                raise InputError(f"{shown}: empty file")
            if not header.strip():
                raise InputError(f"{shown} row 1: empty; the first row must be the header")
            try:
                header_text = header.decode("utf-8")
            except UnicodeDecodeError:
                raise InputError(f"{shown} row 1: the header is not UTF-8 text") from None
            delimiter = _sniff_delimiter(header_text, path)
            for _ in range(_SPAN):
                if not _still_open(header_text, delimiter):
                    break
                more = handle.readline()
                if not more:
                    break
                header_text += more.decode("utf-8", "replace")
        except (OSError, EOFError, gzip.BadGzipFile) as exc:
            raise InputError(f"cannot read {shown}: {exc}") from None
        where = f"{shown} row 1"
        names = _csv_fields(header_text.rstrip("\r\n"), delimiter)
        if names is None:
            raise InputError(f"{where}: the header is not valid CSV (check its quotes)")
        names = [n.strip() for n in names]
        for k, name in enumerate(names):
            if not name:
                raise InputError(f"{where}: column {k + 1} of the header has no name")
        repeated = [n for n, c in Counter(names).items() if c > 1]
        if repeated:
            raise InputError(f"{where}: column {repeated[0]!r} appears twice in the header")
        layout, used = _layout(names, fmt, deck, where)
        yield layout, used
        kept = [i for i in range(len(names)) if i not in used]
        shape = _Shape(len(names), delimiter, layout, used, kept, [names[i] for i in kept])
        next_row = 2
        while True:
            try:
                lines = list(itertools.islice(handle, chunk_rows))
                quoted = any(b'"' in line for line in lines)
                records = lines
                if quoted:
                    records, still_open = _csv_records(lines, delimiter)
                    for _ in range(_SPAN):
                        more = handle.readline() if still_open else b""
                        if not more:
                            break
                        lines.append(more)
                        records, still_open = _csv_records(lines, delimiter)
            except (OSError, EOFError, gzip.BadGzipFile) as exc:
                raise InputError(f"cannot read {shown}: {exc}") from None
            if not lines:
                return
            rows = np.arange(next_row, next_row + len(records), dtype=np.int64)
            next_row += len(records)
            yield _csv_block(records, rows, shape, quoted=quoted)


@dataclass(frozen=True)
class _Shape:
    width: int
    delimiter: str
    layout: str
    used: list[int]
    kept: list[int]
    kept_names: list[str]


def _csv_fields(text: str, delimiter: str) -> list[str] | None:
    try:
        return next(csv.reader([text], delimiter=delimiter, strict=True), [])
    except csv.Error:
        return None


def _plain_block(
    records: list[bytes], rows: np.ndarray, shape: _Shape
) -> tuple[list[int], str, int, list[_Bad]] | None:
    """Check a block without quotes with array operations.

    Returns (indices of good records, their text joined, blank count, failed rows), or None
    when some line needs the record-by-record loop (not UTF-8, a stray carriage return).
    """
    data = b"".join(records)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        return None
    buf = np.frombuffer(data, dtype=np.uint8)
    ends = np.flatnonzero(buf == 10)
    if not data.endswith(b"\n"):
        ends = np.append(ends, buf.size)
    if ends.size != len(records):
        return None
    begins = np.concatenate([[0], ends[:-1] + 1])
    returns = np.flatnonzero(buf == 13)
    if returns.size and not np.isin(returns + 1, ends).all():
        return None
    sep = np.flatnonzero(buf == ord(shape.delimiter))
    fields = np.searchsorted(sep, ends) - np.searchsorted(sep, begins) + 1
    single = np.flatnonzero(fields == 1)  # a blank line has no delimiter
    blank = np.zeros(len(records), dtype=bool)
    blank[single] = [not records[k].strip() for k in single.tolist()]
    wrong = ~blank & (fields != shape.width)
    failed = [
        _Bad(
            int(rows[k]),
            "malformed-row",
            f"{int(fields[k])} fields, the header has {shape.width}",
            _decode(records[k]),
            None,
        )
        for k in np.flatnonzero(wrong).tolist()
    ]
    good = np.flatnonzero(~blank & ~wrong).tolist()
    if len(good) != len(records):
        text = "".join(records[k].decode("utf-8") for k in good)
    return good, text, int(blank.sum()), failed


def _csv_block(records: list[bytes], rows: np.ndarray, shape: _Shape, *, quoted: bool) -> _Raw:
    plain = None if quoted else _plain_block(records, rows, shape)
    if plain is not None:
        good, joined, blank, failed = plain
        frame = _split_fields(joined, len(good), shape.width, shape.delimiter)
        return _csv_raw(frame, records, rows, good, shape, failed, blank)
    failed = []
    blank = 0
    good = []
    texts: list[str] = []
    sep = shape.delimiter.encode()
    for k, record in enumerate(records):
        body = record.rstrip(b"\r\n")
        if not body.strip():
            blank += 1
            continue
        row = int(rows[k])
        try:
            text = body.decode("utf-8")
        except UnicodeDecodeError as exc:
            problem = f"not UTF-8 text (byte {exc.start + 1} of the row)"
            failed.append(_Bad(row, "malformed-row", problem, _decode(body), None))
            continue
        if '"' in text:
            fields = _csv_fields(text, shape.delimiter)
            if fields is None:
                problem = "a quoted field is not closed, or has text after its closing quote"
                failed.append(_Bad(row, "malformed-row", problem, text, None))
                continue
            count = len(fields)
        elif b"\r" in body or b"\n" in body:
            failed.append(_Bad(row, "malformed-row", "a line break inside a row", text, None))
            continue
        else:
            count = body.count(sep) + 1
        if count != shape.width:
            problem = f"{count} fields, the header has {shape.width}"
            failed.append(_Bad(row, "malformed-row", problem, text, None))
            continue
        good.append(k)
        texts.append(text)
    frame = _split_fields(texts, len(texts), shape.width, shape.delimiter)
    return _csv_raw(frame, records, rows, good, shape, failed, blank)


def _csv_raw(
    frame: pd.DataFrame,
    records: list[bytes],
    rows: np.ndarray,
    good: list[int],
    shape: _Shape,
    failed: list[_Bad],
    blank: int,
) -> _Raw:
    good_rows = rows[np.asarray(good, dtype=np.int64)] if good else np.zeros(0, dtype=np.int64)
    if shape.kept:
        columns = frame.iloc[:, shape.kept].reset_index(drop=True)
        columns.columns = shape.kept_names
    else:
        columns = pd.DataFrame(index=range(len(good)))

    def raw_of(i: int) -> str:
        return _decode(records[good[i]])

    if shape.layout == "csv":
        order = frame.iloc[:, shape.used[0]].to_numpy(dtype=object)
        return _Raw(
            good_rows,
            columns,
            tokens_of=lambda i: order[i].split(),
            raw_of=raw_of,
            texts=order.tolist(),
            failed=failed,
            blank=blank,
        )
    cells = frame.iloc[:, shape.used].to_numpy(dtype=object)
    return _Raw(
        good_rows,
        columns,
        tokens_of=lambda i: list(cells[i]),
        raw_of=raw_of,
        flat=cells.ravel(),
        counts=np.full(len(good), len(shape.used), dtype=np.int64),
        failed=failed,
        blank=blank,
    )


def _split_fields(texts: str | list[str], count: int, width: int, delimiter: str) -> pd.DataFrame:
    """Fields of ``count`` records already known to have ``width`` fields, kept as text.

    ``texts`` is the records joined (no quotes anywhere: the C parser splits them), or a
    list of records (parsed one by one with the csv module, which follows RFC 4180 [1]).
    """
    if count == 0:
        return pd.DataFrame({k: pd.Series([], dtype=object) for k in range(width)})
    if isinstance(texts, str):
        frame = pd.read_csv(
            io.StringIO(texts if texts.endswith("\n") else texts + "\n"),
            sep=delimiter,
            header=None,
            names=list(range(width)),
            dtype=object,
            na_filter=False,
            skip_blank_lines=False,
            quoting=csv.QUOTE_NONE,
            engine="c",
        )
        if len(frame) != count:  # pragma: no cover - guarded by _plain_block
            raise AssertionError("CSV block split into an unexpected number of rows")
        return frame
    fields = [_csv_fields(t, delimiter) or [""] * width for t in texts]
    return pd.DataFrame(fields, columns=list(range(width)), dtype=object)


def _flatten(lists: list[list[object]]) -> tuple[np.ndarray, np.ndarray]:
    counts = np.fromiter(map(len, lists), dtype=np.int64, count=len(lists))
    tokens = list(itertools.chain.from_iterable(lists))
    kinds = set(map(type, tokens))
    if not kinds <= {str, int}:
        # bool and float compare equal to ints; make every other value an impossible code
        tokens = [t if type(t) in (str, int) else "\x00" + repr(t) for t in tokens]
    flat = np.empty(len(tokens), dtype=object)
    flat[:] = tokens
    return flat, counts


_JSON_KIND = {"list": "array", "str": "text", "int": "number", "float": "number"}


def _json_record(
    line: bytes,
) -> tuple[list[object], dict[str, Any] | None, tuple[str, str] | None]:
    """(order, other keys, None) of one JSON line, or (None, keys or None, (reason, problem))."""
    try:
        value = json.loads(line)
    except UnicodeDecodeError:
        return [], None, ("malformed-json", "not UTF-8 text")
    except json.JSONDecodeError as exc:
        return [], None, ("malformed-json", f"not valid JSON ({exc.msg} at column {exc.colno})")
    if not isinstance(value, dict):
        kind = _JSON_KIND.get(type(value).__name__, "true/false/null")
        return [], None, ("malformed-json", f"a line must be a JSON object, got {kind}")
    keys = [k for k in value if k.strip().lower() == "order"]
    if len(keys) != 1:
        return (
            [],
            value,
            ("missing-order", "more than one 'order' key" if keys else "no 'order' key"),
        )
    order = value.pop(keys[0])
    if isinstance(order, str):
        return order.split(), value, None
    if order is None or isinstance(order, list):
        return order or [], value, None
    problem = "'order' must be a list of card codes or a text of codes"
    return [], value, ("malformed-row", problem)


def _jsonl_chunks(path: Path, shown: str, chunk_rows: int) -> Iterator[_Raw]:
    with _open_binary(path) as handle:
        line_no = 0
        seen_any = False
        while True:
            try:
                lines = list(itertools.islice(handle, chunk_rows))
            except (OSError, EOFError, gzip.BadGzipFile) as exc:
                raise InputError(f"cannot read {shown}: {exc}") from None
            if not lines:
                if not seen_any:
                    raise InputError(f"{shown}: empty file")
                return
            seen_any = True
            failed: list[_Bad] = []
            blank = 0
            rows: list[int] = []
            orders: list[list[object]] = []
            records: list[dict[str, Any]] = []
            raws: list[str] = []
            for line in lines:
                line_no += 1
                if line_no == 1 and line.startswith(b"\xef\xbb\xbf"):
                    line = line[3:]
                if not line.strip():
                    blank += 1
                    continue
                text = _decode(line)
                order, value, problem = _json_record(line.strip())
                if problem is not None:
                    failed.append(_Bad(line_no, problem[0], problem[1], text, value))
                    continue
                rows.append(line_no)
                orders.append(order)
                records.append(value)
                raws.append(text)
            flat, counts = _flatten(orders)
            yield _Raw(
                np.asarray(rows, dtype=np.int64),
                pd.DataFrame(records, index=range(len(records))),
                tokens_of=lambda i, orders=orders: list(orders[i]),
                raw_of=lambda i, raws=raws: raws[i],
                flat=flat,
                counts=counts,
                failed=failed,
                blank=blank,
            )


def _parquet_chunks(
    path: Path, shown: str, deck: DeckDefinition, chunk_rows: int
) -> Iterator[_Raw | tuple[str, list[int]]]:
    try:
        import pyarrow as pa
        import pyarrow.compute as pc
        import pyarrow.parquet as pq
    except ImportError:
        raise InputError(
            f"{shown}: reading Parquet needs pyarrow (pip install pyarrow); "
            "or convert the log to CSV or JSON Lines"
        ) from None
    try:
        parquet = pq.ParquetFile(path)
    except (OSError, pa.ArrowException) as exc:
        raise InputError(f"{shown}: not a readable Parquet file ({exc})") from None
    names = list(parquet.schema_arrow.names)
    layout, used = _layout(names, "auto", deck, f"{shown} schema")
    yield layout, used
    kept_names = [n for i, n in enumerate(names) if i not in used]
    offset = 1
    for batch in parquet.iter_batches(batch_size=chunk_rows):
        m = batch.num_rows
        rows = np.arange(offset, offset + m, dtype=np.int64)
        offset += m
        columns = (
            batch.select(kept_names).to_pandas() if kept_names else pd.DataFrame(index=range(m))
        )
        columns = columns.reset_index(drop=True)

        def raw_of(i: int, batch: Any = batch) -> str:
            return json.dumps(batch.slice(i, 1).to_pylist()[0], default=str, ensure_ascii=False)

        if layout == "csv":
            order = batch.column(used[0])
            kind = order.type
            if pa.types.is_string(kind) or pa.types.is_large_string(kind):
                texts = [t or "" for t in order.to_pylist()]
                yield _Raw(
                    rows,
                    columns,
                    tokens_of=lambda i, t=texts: t[i].split(),
                    raw_of=raw_of,
                    texts=texts,
                )
                continue
            if not (pa.types.is_list(kind) or pa.types.is_large_list(kind)):
                raise InputError(
                    f"{shown}: column 'order' has type {kind}; expected a list or text of codes"
                )
            counts = pc.fill_null(pc.list_value_length(order), 0).to_numpy().astype(np.int64)
            values = pc.list_flatten(order)
            if pa.types.is_integer(values.type):
                flat = pc.fill_null(values, -1).to_numpy().astype(np.int64)
            else:
                flat = np.asarray(values.to_numpy(zero_copy_only=False), dtype=object)
            yield _Raw(
                rows,
                columns,
                tokens_of=lambda i, o=order: o[i].as_py() or [],
                raw_of=raw_of,
                flat=flat,
                counts=counts,
            )
            continue
        cells = [batch.column(i) for i in used]
        if all(pa.types.is_integer(c.type) for c in cells):
            grid = np.stack(
                [pc.fill_null(c, -1).to_numpy().astype(np.int64) for c in cells], axis=1
            )
        else:
            grid = np.stack([np.asarray(c.to_pylist(), dtype=object) for c in cells], axis=1)
        yield _Raw(
            rows,
            columns,
            tokens_of=lambda i, c=cells: [x[i].as_py() for x in c],
            raw_of=raw_of,
            flat=grid.ravel(),
            counts=np.full(m, len(used), dtype=np.int64),
        )


# --------------------------------------------------------------------------------------
# the reader


def _format_of(path: Path, fmt: str) -> str:
    if fmt not in FORMATS:
        raise InputError(f"format {fmt!r} is not one of {', '.join(FORMATS)}")
    if fmt != "auto":
        return fmt
    suffixes = [s.lower() for s in path.suffixes]
    if suffixes and suffixes[-1] == ".gz":
        suffixes = suffixes[:-1]
    last = suffixes[-1] if suffixes else ""
    if last in (".csv", ".tsv", ".txt"):
        return "csv"
    if last in (".jsonl", ".ndjson"):
        return "jsonl"
    if last in (".parquet", ".pq"):
        return "parquet"
    raise InputError(
        f"cannot tell the format of {path} from its extension; give the format "
        "(csv, wide, jsonl or parquet)"
    )


class LogReader:
    """Reads one log in chunks; iterate once for :class:`LogChunk` objects, then look at
    :attr:`summary`. Made by :func:`read_log`."""

    def __init__(
        self,
        path: Path,
        shown: str,
        deck: DeckDefinition,
        labels: str,
        fmt: str,
        chunk_rows: int,
        quarantine: Path | None,
    ) -> None:
        self.path = path
        self.deck = deck
        self._shown = shown
        self._labels = labels
        self._fmt = fmt
        self._layout = fmt
        self._chunk_rows = chunk_rows
        self._quarantine = quarantine
        self._base: int | None = {"int0": 0, "int1": 1}.get(labels)
        self._base_row: int | None = None
        self._decks = 0
        self._blank = 0
        self._reasons: Counter[str] = Counter()
        self._complete = False
        self._started = False

    # -- public -------------------------------------------------------------------------

    def __iter__(self) -> Iterator[LogChunk]:
        if self._started:
            raise RuntimeError("a LogReader can be iterated only once; call read_log again")
        self._started = True
        return self._run()

    @property
    def summary(self) -> LogSummary:
        """Counts so far (``complete`` once the whole file was read)."""
        labels = self._labels
        if labels == "int" and self._base is not None:
            labels = f"int{self._base}"
        return LogSummary(
            path=self._shown,
            format=self._layout,
            deck=self.deck.name,
            labels=labels,
            decks=self._decks,
            set_aside=sum(self._reasons.values()),
            reasons=dict(sorted(self._reasons.items())),
            blank_rows=self._blank,
            quarantine=None if self._quarantine is None else str(self._quarantine),
            base_row=self._base_row,
            complete=self._complete,
        )

    def read_all(self) -> LogChunk:
        """Read the whole log into one chunk (for small logs and tests)."""
        chunks = list(self)
        n = self.deck.size
        if not chunks:
            empty = pd.DataFrame()
            return LogChunk(
                np.zeros((0, n), dtype=np.int16),
                np.zeros(0, dtype=np.int64),
                empty,
                SetAside(np.zeros(0, dtype=np.int64), empty, np.zeros(0, dtype=bool)),
            )
        return LogChunk(
            np.concatenate([c.decks for c in chunks]),
            np.concatenate([c.rows for c in chunks]),
            pd.concat([c.columns for c in chunks], ignore_index=True),
            SetAside(
                np.concatenate([c.set_aside.rows for c in chunks]),
                pd.concat([c.set_aside.columns for c in chunks], ignore_index=True),
                np.concatenate([c.set_aside.readable for c in chunks]),
            ),
        )

    # -- machinery ----------------------------------------------------------------------

    def _where(self, row: int) -> str:
        unit = "line" if self._fmt == "jsonl" else "row"
        return f"{self._shown} {unit} {row}"

    def _raw_chunks(self) -> Iterator[_Raw]:
        if self._fmt == "jsonl":
            self._layout = "jsonl"
            yield from _jsonl_chunks(self.path, self._shown, self._chunk_rows)
            return
        if self._fmt == "parquet":
            source = _parquet_chunks(self.path, self._shown, self.deck, self._chunk_rows)
        else:
            source = _csv_chunks(self.path, self._shown, self._fmt, self.deck, self._chunk_rows)
        layout, _ = next(source)  # type: ignore[misc]
        self._layout = layout if self._fmt != "parquet" else "parquet"
        for raw in source:
            assert isinstance(raw, _Raw)
            yield raw

    def _run(self) -> Iterator[LogChunk]:
        with contextlib.ExitStack() as stack:
            writer = None
            if self._quarantine is not None:
                handle = stack.enter_context(atomic_open(self._quarantine, "w"))
                writer = csv.writer(handle, lineterminator="\n")
                writer.writerow(_QUARANTINE_HEADER)
            seen = 0
            for raw in self._raw_chunks():
                chunk, bad = self._check(raw)
                seen += len(raw.rows) + len(raw.failed)
                self._blank += raw.blank
                if bad:
                    if writer is None:
                        first = bad[0]
                        raise InputError(f"{self._where(first.row)}: {first.problem}")
                    for item in bad:
                        writer.writerow((item.row, item.reason, item.problem, item.raw))
                        self._reasons[item.reason] += 1
                self._decks += len(chunk)
                if len(chunk) or len(chunk.set_aside.rows):
                    yield chunk
            if seen == 0:
                below = "" if self._fmt in ("jsonl", "parquet") else " below the header"
                raise InputError(f"{self._shown}: no deck rows{below}")
            self._complete = True

    def _check(self, raw: _Raw) -> tuple[LogChunk, list[_Bad]]:
        """Vectorised check of a raw chunk; rows it cannot vouch for get check_arrangement."""
        n = self.deck.size
        m = len(raw.rows)
        integer = self._labels != "codes"
        if raw.texts is not None:
            values, counts = _scan_text(raw.texts, self.deck, integer)
        else:
            assert raw.flat is not None and raw.counts is not None
            values, counts = _map_tokens(raw.flat, self.deck, integer), raw.counts
        starts = np.cumsum(counts) - counts
        full = np.flatnonzero(counts == n)
        grid = values[starts[full, None] + np.arange(n)] if full.size else np.zeros((0, n), int)
        # rows the fast path vouches for, per numbering (0 for card codes)
        bases = [self._base] if not integer or self._base is not None else [0, 1]
        fast: dict[int, np.ndarray] = {}
        for base in bases:
            shifted = grid - (base or 0)
            ok = ((shifted >= 0) & (shifted < n)).all(axis=1)
            ok[ok] = _permutation_rows(shifted[ok], n)
            fast[base or 0] = np.zeros(m, dtype=bool)
            fast[base or 0][full[ok]] = True
        checked: dict[int, Arrangement] = {}
        if integer and self._base is None:
            # the first valid row of the file fixes the numbering (fast or authoritative)
            doubtful = np.flatnonzero(~(fast[0] | fast[1]))
            for i in doubtful.tolist():
                checked[i] = check_arrangement(raw.tokens_of(i), self.deck, labels="int")
            found = [(int(raw.rows[np.argmax(ok)]), b) for b, ok in fast.items() if ok.any()]
            found += [(int(raw.rows[i]), c.base) for i, c in checked.items() if c.ok]
            if found:
                self._base_row, self._base = min(found)
                checked = {i: c for i, c in checked.items() if c.ok and c.base == self._base}
        key = 0 if self._base is None else self._base
        good = fast.get(key, np.zeros(m, dtype=bool)).copy()
        decks = np.zeros((m, n), dtype=np.int16)
        decks[good] = grid[good[full]] - key
        bad = list(raw.failed)
        for i in np.flatnonzero(~good).tolist():
            result = checked.get(i) or check_arrangement(
                raw.tokens_of(i), self.deck, labels=self._labels, base=self._base
            )
            if result.ok:
                good[i] = True
                decks[i] = result.labels
            else:
                kept = raw.columns.iloc[i].to_dict() if raw.columns.shape[1] else {}
                bad.append(
                    _Bad(
                        int(raw.rows[i]),
                        str(result.reason),
                        str(result.problem),
                        raw.raw_of(i),
                        kept,
                    )
                )
        bad.sort(key=lambda b: b.row)
        keep = np.flatnonzero(good)
        names = list(raw.columns.columns)
        names += list(dict.fromkeys(k for b in bad for k in (b.columns or {}) if k not in names))
        set_aside = SetAside(
            np.asarray([b.row for b in bad], dtype=np.int64),
            pd.DataFrame([b.columns or {} for b in bad], columns=names, index=range(len(bad))),
            np.asarray([b.columns is not None for b in bad], dtype=bool),
        )
        chunk = LogChunk(
            decks=decks[keep],
            rows=raw.rows[keep],
            columns=raw.columns.iloc[keep].reset_index(drop=True),
            set_aside=set_aside,
        )
        return chunk, bad


def read_log(
    path: str | os.PathLike[str],
    *,
    deck: DeckDefinition | str | os.PathLike[str] | None = None,
    labels: Labels = "codes",
    fmt: LogFormat = "auto",
    chunk_rows: int = DEFAULT_CHUNK_ROWS,
    quarantine: str | os.PathLike[str] | None = None,
) -> LogReader:
    """Open a log of recorded deck orders for reading in chunks.

    Parameters
    ----------
    path : path
        The log (``.csv``, ``.tsv``, ``.txt``, ``.jsonl``, ``.ndjson``, ``.parquet``; any of
        the text formats may be gzip-compressed, ``.csv.gz``). Opened read-only.
    deck : DeckDefinition, name or path, optional
        The deck every row must be an arrangement of (default: built-in ``standard-52``).
    labels : {"codes", "int", "int0", "int1"}
        Cells are card codes, or integer labels numbered from 0 (``int0``), from 1
        (``int1``) or from whichever the file uses (``int``: the first valid row fixes the
        numbering for the whole file; a later row numbered the other way is an error).
    fmt : {"auto", "csv", "wide", "jsonl", "parquet"}
        ``auto`` decides from the extension; CSV then uses the ``order`` column if there is
        one, else position columns. ``wide`` forces position columns.
    chunk_rows : int
        Rows per chunk (memory grows with it; the default suits 52-card decks).
    quarantine : path, optional
        Without it the first bad row raises :class:`InputError`. With it, bad rows are
        written there (CSV: row, reason, problem, content; atomically, when reading
        finishes) and reading goes on; the file is written even when no row is bad.

    Returns
    -------
    LogReader
        Iterate it for :class:`LogChunk` objects; then ``.summary`` is a
        :class:`LogSummary`.

    Examples
    --------
    >>> reader = read_log("log.csv", quarantine="bad-rows.csv")  # doctest: +SKIP
    >>> for chunk in reader:  # doctest: +SKIP
    ...     ...  # chunk.decks, chunk.rows, chunk.columns
    >>> reader.summary.set_aside  # doctest: +SKIP
    """
    source = Path(path)
    shown = os.fspath(path)
    if labels not in LABEL_MODES:
        raise InputError(f"labels {labels!r} is not one of {', '.join(LABEL_MODES)}")
    if isinstance(chunk_rows, bool) or not isinstance(chunk_rows, int) or chunk_rows < 1:
        raise InputError(f"chunk_rows must be a positive integer, got {chunk_rows!r}")
    if not source.exists():
        raise InputError(f"cannot read {shown}: no such file")
    if source.is_dir():
        raise InputError(f"cannot read {shown}: it is a folder, not a log file")
    kind = _format_of(source, fmt)
    target = None
    if quarantine is not None:
        target = Path(quarantine)
        if target.exists() and target.resolve() == source.resolve():
            raise InputError(f"quarantine file {target} is the log itself; choose another path")
    return LogReader(source, shown, load_deck(deck), labels, kind, chunk_rows, target)


# --------------------------------------------------------------------------------------
# writing


def _checked_decks(decks: np.ndarray, deck: DeckDefinition) -> np.ndarray:
    array = np.asarray(decks)
    n = deck.size
    if array.ndim != 2 or array.shape[1] != n or array.dtype.kind not in "iu":
        raise InputError(
            f"decks must be an integer array of shape (decks, {n}), got {array.dtype} {array.shape}"
        )
    inside = ((array >= 0) & (array < n)).all(axis=1)
    ok = inside.copy()
    ok[inside] = _permutation_rows(array[inside] if not inside.all() else array, n)
    if not ok.all():
        k = int(np.argmin(ok))
        raise InputError(f"deck {k} (0-based) is not an arrangement of deck {deck.name!r}")
    return array


def _columns_frame(columns: Any, rows: int) -> pd.DataFrame:
    if columns is None:
        return pd.DataFrame(index=range(rows))
    frame = (
        columns.reset_index(drop=True)
        if isinstance(columns, pd.DataFrame)
        else pd.DataFrame(dict(columns))
    )
    if len(frame) != rows:
        raise InputError(f"columns have {len(frame)} rows, decks have {rows}")
    clash = [c for c in frame.columns if str(c).strip().lower() == "order"]
    if clash:
        raise InputError("a kept column may not be called 'order'")
    return frame


def _order_texts(decks: np.ndarray, words: list[str]) -> list[str]:
    """Each deck as words separated by single spaces (vectorised when widths are equal)."""
    encoded = [w.encode("utf-8") for w in words]
    width = len(encoded[0])
    n = decks.shape[1]
    if all(len(e) == width for e in encoded):
        cells = np.array([e + b" " for e in encoded], dtype=f"S{width + 1}")
        block = cells[decks].view(np.uint8).reshape(decks.shape[0], n * (width + 1))
        line = np.ascontiguousarray(block[:, :-1])
        return [x.decode("utf-8") for x in line.view(f"S{n * (width + 1) - 1}").ravel()]
    table = np.array(words, dtype=object)
    return [" ".join(row) for row in table[decks].tolist()]


def write_log(
    path: str | os.PathLike[str],
    decks: np.ndarray,
    deck: DeckDefinition | str | os.PathLike[str] | None = None,
    columns: pd.DataFrame | Mapping[str, Sequence[Any]] | None = None,
    *,
    labels: Literal["codes", "int0", "int1"] = "codes",
) -> Path:
    """Write decks as a log that :func:`read_log` reads back exactly (atomically).

    ``.csv`` writes the kept ``columns`` then ``order`` (canonical codes separated by single
    spaces, or integer labels with ``labels="int0"``/``"int1"``); ``.jsonl``/``.ndjson``
    writes one object per line with the columns and an ``order`` list.

    Parameters
    ----------
    path : path
        Output file (replaced atomically if it exists).
    decks : ndarray, shape (D, n)
        Arrangements, labels of ``deck`` top first.
    deck : DeckDefinition, name or path, optional
        Default: built-in ``standard-52``.
    columns : DataFrame or mapping of column -> values, optional
        Other columns, one value per deck (no column may be called ``order``).
    labels : {"codes", "int0", "int1"}
    """
    definition = load_deck(deck)
    array = _checked_decks(decks, definition)
    frame = _columns_frame(columns, array.shape[0])
    target = Path(path)
    suffix = target.suffix.lower()
    if labels not in ("codes", "int0", "int1"):
        raise InputError(f"labels {labels!r} is not one of codes, int0, int1")
    if labels == "codes":
        words = list(definition.cards)
    else:
        base = 1 if labels == "int1" else 0
        words = [str(k + base) for k in range(definition.size)]
    block = 100_000
    if suffix in (".jsonl", ".ndjson"):
        with atomic_open(target, "w") as handle:
            for start in range(0, array.shape[0], block):
                part = array[start : start + block]
                records = frame.iloc[start : start + block].to_dict("records")
                for record, row in zip(records, part.tolist(), strict=True):
                    clean = {str(k): _json_value(v) for k, v in record.items()}
                    order = (
                        [words[x] for x in row]
                        if labels == "codes"
                        else [x + (1 if labels == "int1" else 0) for x in row]
                    )
                    clean["order"] = order
                    handle.write(json.dumps(clean, ensure_ascii=False, allow_nan=False) + "\n")
        return target
    if suffix not in (".csv", ".tsv"):
        raise InputError(f"cannot write a log as {target.name}: use .csv, .tsv or .jsonl")
    delimiter = "\t" if suffix == ".tsv" else ","
    with atomic_open(target, "w") as handle:
        writer = csv.writer(handle, delimiter=delimiter, lineterminator="\n")
        writer.writerow([*map(str, frame.columns), "order"])
        for start in range(0, array.shape[0], block):
            lines = np.array(_order_texts(array[start : start + block], words), dtype=object)
            for name in reversed(frame.columns):
                cells = _csv_cells(frame[name].iloc[start : start + block], delimiter)
                lines = cells + delimiter + lines
            handle.write("\n".join(lines.tolist()) + "\n")
    return target


def _csv_cells(values: pd.Series, delimiter: str) -> np.ndarray:
    """One column as CSV cells: text, quoted where RFC 4180 [1] needs it; missing -> empty."""
    text = values.astype(object).where(values.notna(), "").map(str)
    special = text.str.contains(f'["\r\n{re.escape(delimiter)}]', regex=True)
    if special.any():
        text[special] = '"' + text[special].str.replace('"', '""', regex=False) + '"'
    return text.to_numpy(dtype=object)


def _json_value(value: Any) -> Any:
    if hasattr(value, "item") and not isinstance(value, (list, dict, str)):
        value = value.item()
    if isinstance(value, float) and value != value:
        return None
    if isinstance(value, pd.Timestamp):
        return value.isoformat()
    return value


# --------------------------------------------------------------------------------------
# reference orders and relative permutations


@dataclass(frozen=True)
class Reference:
    """What each deck is compared with: the order before the procedure.

    ``kind`` is ``previous`` (the default: each deck against the deck before it in the log,
    the pickup order; with grouping, the previous deck of the same group), ``first`` (the
    first deck of the log, or of each group, is the reference and is not tested) or
    ``order`` (one fixed order, ``order``, for every deck; all decks are tested).
    """

    kind: Literal["previous", "first", "order"] = "previous"
    order: np.ndarray | None = None
    source: str = "previous"

    @classmethod
    def parse(
        cls,
        spec: str | os.PathLike[str] | None,
        deck: DeckDefinition | str | os.PathLike[str] | None = None,
        *,
        labels: Labels = "codes",
    ) -> Reference:
        """``previous`` (default), ``first``, ``deck`` (the definition's own order, e.g. a new
        pack), a file holding one order, or an order written out (codes separated by
        spaces). Integer labels follow ``labels`` like the log."""
        definition = load_deck(deck)
        text = "previous" if spec is None else os.fspath(spec)
        keyword = text.strip().lower()
        if keyword in ("previous", "first"):
            return cls(keyword, None, keyword)  # type: ignore[arg-type]
        if keyword == "deck":
            order = np.arange(definition.size, dtype=np.int16)
            return cls("order", order, f"deck order of {definition.name}")
        path = Path(text)
        try:
            is_file = path.is_file()
        except OSError:  # e.g. a written-out order too long to be a file name
            is_file = False
        if is_file:
            try:
                content = path.read_text(encoding="utf-8-sig")
            except (OSError, UnicodeDecodeError) as exc:
                raise InputError(f"cannot read reference order {text}: {exc}") from None
            lines = [ln.split("#", 1)[0] for ln in content.splitlines()]
            tokens = " ".join(lines).split()
            order = parse_order(tokens, definition, labels=labels, where=text)
            return cls("order", order, f"order in {text}")
        if any(ch.isspace() for ch in text.strip()):
            order = parse_order(text, definition, labels=labels, where="reference order")
            return cls("order", order, "given order")
        raise InputError(
            f"reference {text!r} is not previous, first, deck, an existing file or an order "
            f"of {definition.size} card codes separated by spaces"
        )

    def stream(self, by: str | None = None) -> ReferenceStream:
        """A stateful converter of chunks to relative permutations (see ReferenceStream)."""
        return ReferenceStream(self, by)


@dataclass(frozen=True)
class RelativeChunk:
    """Tested decks of one chunk as permutations relative to their references.

    ``relative[k, i]`` is the position in the reference deck of the card at position ``i``
    of deck ``k`` (identity = unchanged). ``rows`` are the decks' row numbers,
    ``reference_rows`` the row of each reference deck (``0`` for a fixed order), and
    ``columns`` their kept columns.
    """

    relative: np.ndarray
    rows: np.ndarray
    reference_rows: np.ndarray
    columns: pd.DataFrame

    def __len__(self) -> int:
        return int(self.relative.shape[0])


class ReferenceStream:
    """Turns successive :class:`LogChunk` objects into :class:`RelativeChunk` objects.

    ``previous``: each deck against the previous deck of its group (of the log when not
    grouped); the last deck of every group is carried to the next chunk, so chunk
    boundaries change nothing. A row set aside breaks the chain: the next deck of its
    group (of every group, if the row could not be read far enough to know its group) has
    no known reference and is not tested. ``first``: the first deck of each group is the
    reference of the group's later decks; if a row that may belong to the group was set
    aside before it, :class:`InputError` (the reference is unknown). A fixed order: every
    deck is tested against it.

    Counters after use: ``tested``, ``reference_only`` (decks that only served as a
    reference) and ``after_set_aside`` (decks without a reference because the row before
    them was set aside).
    """

    def __init__(self, reference: Reference, by: str | None = None) -> None:
        self.reference = reference
        self.by = by
        self.tested = 0
        self.reference_only = 0
        self.after_set_aside = 0
        self._ids: dict[Any, int] = {}
        self._carry: dict[int, tuple[np.ndarray, int]] = {}  # group -> (deck, row)
        self._broken: set[int] = set()  # groups whose last row was set aside
        self._first_unknown: int | None = None  # first: earliest unreadable row set aside
        self._first_gap: dict[int, int] = {}  # first: group -> earliest row set aside

    def _group_ids(self, values: pd.Series) -> np.ndarray:
        try:
            codes, uniques = pd.factorize(values.astype(object))
        except TypeError:
            raise InputError(f"column {self.by!r} holds values that cannot group rows") from None
        keys = [*list(uniques), None]  # code -1 (missing value) -> the group None
        table = np.array([self._ids.setdefault(k, len(self._ids)) for k in keys], dtype=np.int64)
        return table[codes]

    def _groups(self, columns: pd.DataFrame, rows: int) -> np.ndarray:
        if self.by is None or rows == 0:
            return np.zeros(rows, dtype=np.int64)
        if self.by not in columns.columns:
            shown = ", ".join(map(str, columns.columns)) or "none"
            raise InputError(f"no column {self.by!r} to group by (columns: {shown})")
        return self._group_ids(columns[self.by])

    def relative(self, chunk: LogChunk) -> RelativeChunk:
        """Relative permutations of the tested decks of ``chunk``, in row order."""
        decks, rows = chunk.decks, chunk.rows
        n = decks.shape[1]
        if self.reference.kind == "order":
            order = self.reference.order
            assert order is not None
            if order.shape[0] != n:
                raise InputError(f"reference order has {order.shape[0]} cards, decks have {n}")
            self.tested += len(rows)
            zero = np.zeros(len(rows), dtype=np.int64)
            return RelativeChunk(relative_to(decks, order), rows, zero, chunk.columns)
        groups = self._groups(chunk.columns, len(rows))
        aside = chunk.set_aside
        readable = aside.readable.astype(bool)
        if self.by is not None and self.by not in aside.columns.columns:
            readable = np.zeros_like(readable)  # their group cannot be known
        known = aside.rows[readable]
        known_groups = self._groups(
            aside.columns.loc[readable].reset_index(drop=True), int(readable.sum())
        )
        unknown = np.sort(aside.rows[~readable])
        if self.reference.kind == "first":
            picked, refs, ref_rows = self._first(decks, rows, groups, known, known_groups, unknown)
        else:
            picked, refs, ref_rows = self._previous(
                decks, rows, groups, known, known_groups, unknown
            )
        self.tested += len(picked)
        return RelativeChunk(
            relative_to(decks[picked], refs) if len(picked) else np.zeros((0, n), np.int16),
            rows[picked],
            ref_rows,
            chunk.columns.iloc[picked].reset_index(drop=True),
        )

    def _previous(
        self,
        decks: np.ndarray,
        rows: np.ndarray,
        groups: np.ndarray,
        known: np.ndarray,
        known_groups: np.ndarray,
        unknown: np.ndarray,
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        m = decks.shape[0]
        # events: decks (index k >= 0) and rows set aside of a known group (index -1)
        ev_row = np.concatenate([rows, known])
        ev_group = np.concatenate([groups, known_groups])
        ev_index = np.concatenate([np.arange(m), np.full(len(known), -1)])
        order = np.lexsort((ev_row, ev_group))
        ev_row, ev_group, ev_index = ev_row[order], ev_group[order], ev_index[order]
        is_deck = ev_index >= 0
        e = len(order)
        same = np.zeros(e, dtype=bool)
        same[1:] = ev_group[1:] == ev_group[:-1]
        ref = np.full(e, -1, dtype=np.int64)  # index into decks, or m + k into carried decks
        ref_row = np.zeros(e, dtype=np.int64)
        after_gap = np.zeros(e, dtype=bool)
        prev_deck = np.zeros(e, dtype=bool)
        prev_deck[1:] = same[1:] & is_deck[:-1]
        ref[1:] = np.where(prev_deck[1:], ev_index[:-1], -1)
        ref_row[1:] = np.where(prev_deck[1:], ev_row[:-1], 0)
        after_gap[1:] = same[1:] & ~is_deck[:-1]
        carried: list[np.ndarray] = []
        for k in np.flatnonzero(~same).tolist():
            g = int(ev_group[k])
            if g in self._carry:
                deck, row = self._carry[g]
                ref[k], ref_row[k] = m + len(carried), row
                carried.append(deck)
            elif g in self._broken:
                after_gap[k] = True
        has_ref = is_deck & (ref >= 0)
        if unknown.size:
            # a row of unknown group between a deck and its reference breaks the chain
            between = np.searchsorted(unknown, ev_row) - np.searchsorted(unknown, ref_row, "right")
            cut = has_ref & (between > 0)
            after_gap |= cut
            has_ref &= ~cut
        # carry the last event of every group to the next chunk
        last = np.ones(e, dtype=bool)
        last[:-1] = ev_group[1:] != ev_group[:-1]
        for k in np.flatnonzero(last).tolist():
            g = int(ev_group[k])
            if is_deck[k]:
                self._carry[g] = (decks[ev_index[k]].copy(), int(ev_row[k]))
                self._broken.discard(g)
            else:
                self._carry.pop(g, None)
                self._broken.add(g)
        if unknown.size:
            cutoff = int(unknown[-1])
            for g in [g for g, (_, row) in self._carry.items() if row < cutoff]:
                del self._carry[g]
                self._broken.add(g)
        broken = is_deck & ~has_ref & after_gap
        self.after_set_aside += int(broken.sum())
        self.reference_only += int((is_deck & ~has_ref & ~after_gap).sum())
        tested = np.flatnonzero(has_ref)
        back = np.argsort(ev_index[tested], kind="stable")
        tested = tested[back]
        pool = np.concatenate([decks, np.stack(carried)]) if carried else decks
        return ev_index[tested], pool[ref[tested]], ref_row[tested]

    def _first(
        self,
        decks: np.ndarray,
        rows: np.ndarray,
        groups: np.ndarray,
        known: np.ndarray,
        known_groups: np.ndarray,
        unknown: np.ndarray,
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        m, n = decks.shape
        for row, g in zip(known.tolist(), known_groups.tolist(), strict=True):
            self._first_gap.setdefault(int(g), int(row))
        if unknown.size and self._first_unknown is None:
            self._first_unknown = int(unknown[0])
        present, first_index = np.unique(groups, return_index=True)
        tested = np.ones(m, dtype=bool)
        for g, k in zip(present.tolist(), first_index.tolist(), strict=True):
            if g in self._carry:
                continue
            row = int(rows[k])
            gaps = [r for r in (self._first_gap.get(g), self._first_unknown) if r is not None]
            if gaps and min(gaps) < row:
                scope = "the log" if self.by is None else f"its group in column {self.by!r}"
                raise InputError(
                    f"reference 'first': row {min(gaps)} was set aside before the first deck "
                    f"of {scope} (row {row}), so the reference is unknown; give an explicit "
                    "reference order instead"
                )
            self._carry[g] = (decks[k].copy(), row)
            tested[k] = False
        self.reference_only += int(m - tested.sum())
        picked = np.flatnonzero(tested)
        if not picked.size:
            return picked, np.zeros((0, n), np.int16), np.zeros(0, np.int64)
        refs = np.stack([self._carry[int(g)][0] for g in groups[picked]])
        ref_rows = np.array([self._carry[int(g)][1] for g in groups[picked]], dtype=np.int64)
        return picked, refs, ref_rows
