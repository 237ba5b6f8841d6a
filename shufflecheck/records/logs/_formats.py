"""Raw chunks of a log as each format delivers them: CSV (with an ``order`` column or one
column per position), JSON Lines and Parquet. Files are opened read-only.

References
----------
.. [1] Y. Shafranovich, "Common Format and MIME Type for Comma-Separated Values (CSV)
       Files", RFC 4180, 2005 (quoting; a record may span lines inside quotes).
.. [2] JSON Lines, https://jsonlines.org (one JSON value per line, UTF-8).
.. [3] Apache Parquet format specification, https://parquet.apache.org/docs/.
"""

from __future__ import annotations

import csv
import functools
import gzip
import io
import itertools
import json
import re
from collections import Counter
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

import numpy as np
import pandas as pd

from shufflecheck.common.errors import InputError, clip
from shufflecheck.records.cards import DeckDefinition
from shufflecheck.records.logs._common import POSITION_COLUMN, ColumnMap

# --------------------------------------------------------------------------------------
# raw chunks, as each format delivers them


@dataclass
class BadRow:
    row: int
    reason: str
    problem: str
    raw: str
    columns: dict[str, Any] | None  # kept columns, or None if the row could not be split


@dataclass(frozen=True)
class OrderSpans:
    """The order field of every row as a byte range of one buffer (no text made)."""

    buf: np.ndarray  # uint8
    starts: np.ndarray  # int64, per row
    ends: np.ndarray

    def text(self, i: int) -> str:
        return bytes(self.buf[self.starts[i] : self.ends[i]]).decode("utf-8")

    def texts(self) -> list[str]:
        data = self.buf.tobytes()
        return [
            data[a:b].decode("utf-8")
            for a, b in zip(self.starts.tolist(), self.ends.tolist(), strict=True)
        ]


@dataclass
class RawChunk:
    rows: np.ndarray
    columns: pd.DataFrame
    tokens_of: Callable[[int], list[object]]
    raw_of: Callable[[int], str]
    texts: Sequence[str] | None = None  # whitespace-separated order per row, or
    flat: np.ndarray | None = None  # every token of every row, with
    counts: np.ndarray | None = None  # tokens per row
    failed: list[BadRow] = field(default_factory=list)
    blank: int = 0
    before: Sequence[object] | None = None  # per row: the deck's own starting order
    done: float = 0.0  # fraction of the file read after this chunk (for progress)
    spans: OrderSpans | None = None  # the order field as bytes, instead of texts


def _decode(data: bytes) -> str:
    return data.decode("utf-8", "backslashreplace").rstrip("\r\n")


def _position_columns(names: Sequence[str], where: str) -> list[int] | None:
    """Indices of the position columns in numeric order, or None if there are none."""
    found: dict[int, int] = {}
    prefixes: set[str] = set()
    for index, name in enumerate(names):
        match = POSITION_COLUMN.match(name.strip())
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


def find_column(names: Sequence[str], wanted: str, where: str, argument: str) -> int:
    """Index of the column called ``wanted``: exactly, else the one equal up to case."""
    stripped = [str(n).strip() for n in names]
    if wanted.strip() in stripped:
        return stripped.index(wanted.strip())
    folded = [i for i, n in enumerate(stripped) if n.lower() == wanted.strip().lower()]
    if len(folded) == 1:
        return folded[0]
    raise InputError(
        f"{where}: no column {wanted!r} (given as {{{argument}}}; columns are: {_shown(names)})",
        argument=argument,
    )


def _shown(names: Sequence[str]) -> str:
    return ", ".join(map(str, names[:8])) + (", ..." if len(names) > 8 else "")


def _words_of(name: str) -> list[str]:
    return [w for w in re.split(r"[^0-9a-z]+", str(name).lower()) if w]


def _layout(
    names: Sequence[str], fmt: str, deck: DeckDefinition, where: str, columns: ColumnMap
) -> tuple[str, list[int], int | None]:
    """('csv', [order index], before) or ('wide', [position indices], before) for a header.

    ``before`` is the index of the column holding each deck's own starting order, or None.
    Without a mapping the order column is ``order`` (any case), else the one column whose
    name has the word ``order`` in it (``Deck Order``); several such columns are refused
    with a message naming ``order_column``.
    """
    before = None
    if columns.before is not None:
        before = find_column(names, columns.before, where, "before_column")
    free = [i for i in range(len(names)) if i != before]
    if columns.order is not None:
        index = find_column(names, columns.order, where, "order_column")
        if index == before:
            raise InputError(f"{where}: the order column and the before column are the same")
        return "csv", [index], before
    if columns.positions is not None:
        wanted = list(columns.positions)
        if len(wanted) != deck.size:
            raise InputError(
                f"{where}: {len(wanted)} position columns given, deck {deck.name!r} has "
                f"{deck.size} cards",
                argument="position_columns",
            )
        return "wide", [find_column(names, w, where, "position_columns") for w in wanted], before
    order = [i for i in free if str(names[i]).strip().lower() == "order"]
    if len(order) > 1:
        raise InputError(
            f"{where}: more than one 'order' column; name the one to read with {{order_column}}",
            argument="order_column",
        )
    if fmt != "wide" and not order:
        order = [i for i in free if "order" in _words_of(names[i])]
        if len(order) > 1:
            shown = ", ".join(repr(str(names[i])) for i in order)
            raise InputError(
                f"{where}: several columns could hold the deck order ({shown}); name the one "
                "to read with {order_column} (and a starting order with a 'column:NAME' "
                "{reference})",
                argument=("order_column", "reference"),
            )
    if fmt != "wide" and order:
        return "csv", order, before
    candidates = [i for i in free if i not in order]
    headerless = InputError(
        f"{where} looks like a deck, not a header: the file has no header row; declare "
        "its columns with {columns} (e.g. 'deck,table,order' or 'table,p1..p52')",
        argument="columns",
    )
    try:
        positions = _position_columns([names[i] for i in candidates], where)
    except InputError:
        if _looks_like_data(names, deck):
            raise headerless from None
        raise
    if positions is not None:
        positions = [candidates[k] for k in positions]
        if len(positions) != deck.size:
            raise InputError(
                f"{where}: {len(positions)} position columns, deck {deck.name!r} has "
                f"{deck.size} cards"
            )
        return "wide", positions, before
    wanted = "position columns p1..pN" if fmt == "wide" else "an 'order' column"
    if _looks_like_data(names, deck):
        raise headerless
    advice = (
        "name the order column with {order_column} or the position columns with "
        "{position_columns} (see docs/formats-logs.md)"
    )
    raise InputError(
        f"{where}: missing {wanted} (columns are: {_shown(names)}); {advice}",
        argument=("order_column", "position_columns"),
        without_content=f"{where}: missing {wanted}; {advice}",
    )


def _looks_like_data(names: Sequence[str], deck: DeckDefinition) -> bool:
    """True when a 'header' is made of card codes (a file without a header row)."""
    tokens = [t for name in names for t in re.split(r"[\s,;|]+", str(name)) if t]
    hits = sum(deck.lookup(t) is not None for t in tokens)
    digits = sum(t.isdigit() for t in tokens)
    return len(tokens) >= 3 and (hits >= max(3, len(tokens) // 2) or digits == len(tokens))


def _open_binary(path: Path) -> IO[bytes]:
    try:
        if path.suffix.lower() == ".gz":
            return gzip.open(path, "rb")
        return open(path, "rb")
    except OSError as exc:
        raise InputError(f"cannot read {path}: {exc.strerror or exc}") from None


def _fraction(handle: IO[bytes], path: Path) -> float:
    """How much of the file (on disk, compressed or not) has been read."""
    try:
        raw = getattr(handle, "fileobj", None) or handle
        size = path.stat().st_size
        return min(1.0, raw.tell() / size) if size else 1.0
    except (OSError, ValueError, AttributeError):
        return 0.0


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
        try:
            for _ in reader:
                end = start + reader.line_num
                begin = state["start"]
                if end - begin >= _SPAN and end < len(lines):
                    restart = begin
                    break
                records.append(b"".join(lines[begin:end]))
                state["start"] = end
        except csv.Error:
            # e.g. a carriage return alone inside an unquoted field: the record that
            # starts here cannot be read; its first line becomes a malformed row
            restart = state["start"]
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


def _declared_delimiter(line: str, width: int, path: Path) -> str:
    """The delimiter of a headerless file: the one that splits its first row into
    ``width`` fields (commas when none or several do)."""
    if ".tsv" in [s.lower() for s in path.suffixes]:
        return "\t"
    fitting = [d for d in (",", ";", "\t") if len(_csv_fields(line, d) or []) == width]
    return fitting[0] if len(fitting) == 1 else ","


def csv_chunks(
    path: Path, shown: str, fmt: str, deck: DeckDefinition, chunk_rows: int, columns: ColumnMap
) -> Iterator[RawChunk | tuple[str, list[int], int | None, list[str]]]:
    """Yield the layout first, then one RawChunk per block of about chunk_rows records.

    With ``columns.names`` the file has no header row: those are its columns and its
    first line is row 1, a deck.
    """
    headerless = columns.names is not None
    with _open_binary(path) as handle:
        try:
            first = handle.readline()
            header = first[3:] if first.startswith(b"\xef\xbb\xbf") else first
            pending = [header] if headerless else []  # a headerless file's row 1 is a deck
            if not first:
                raise InputError(f"{shown}: empty file")
            if not header.strip() and not headerless:
                raise InputError(f"{shown} row 1: empty; the first row must be the header")
            try:
                header_text = header.decode("utf-8")
            except UnicodeDecodeError:
                raise InputError(f"{shown} row 1: the header is not UTF-8 text") from None
            if headerless:
                assert columns.names is not None
                delimiter = _declared_delimiter(
                    header_text.rstrip("\r\n"), len(columns.names), path
                )
            else:
                delimiter = _sniff_delimiter(header_text, path)
            for _ in range(_SPAN if not headerless else 0):
                if not _still_open(header_text, delimiter):
                    break
                more = handle.readline()
                if not more:
                    break
                header_text += more.decode("utf-8", "replace")
        except (OSError, EOFError, gzip.BadGzipFile) as exc:
            raise InputError(f"cannot read {shown}: {exc}") from None
        where = f"{shown} row 1" if not headerless else f"{shown} (declared columns)"
        if headerless:
            names = list(columns.names or ())
        else:
            names = _csv_fields(header_text.rstrip("\r\n"), delimiter)
            if names is None:
                raise InputError(f"{where}: the header is not valid CSV (check its quotes)")
        names = [n.strip() for n in names]
        for k, name in enumerate(names):
            if not name:
                raise InputError(f"{where}: column {k + 1} of the header has no name")
        repeated = [n for n, c in Counter(names).items() if c > 1]
        if repeated:
            raise InputError(
                f"{where}: column {clip(repeated[0], 40)!r} appears twice in the header",
                without_content=f"{where}: a column name appears twice in the header",
            )
        layout, used, before = _layout(names, fmt, deck, where, columns)
        yield layout, used, before, names
        taken = [*used] + ([before] if before is not None else [])
        kept = [i for i in range(len(names)) if i not in taken]
        shape = _Shape(len(names), delimiter, layout, used, kept, [names[i] for i in kept], before)
        next_row = 1 if headerless else 2
        while True:
            try:
                lines = pending + list(itertools.islice(handle, chunk_rows - len(pending)))
                pending = []
                joined: bytes | None = b"".join(lines)
                quoted = b'"' in joined
                records = lines
                if quoted:
                    joined = None
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
            block = [_csv_block(records, rows, shape, quoted=quoted, joined=joined)]
            block[0].done = _fraction(handle, path)
            # keep no reference to this block's text here while the reader works on it
            # (popped as it is yielded), so it is freed before the next block is read
            del lines, records, joined, rows
            yield block.pop()


@dataclass(frozen=True)
class _Shape:
    width: int
    delimiter: str
    layout: str
    used: list[int]
    kept: list[int]
    kept_names: list[str]
    before: int | None = None


def _csv_fields(text: str, delimiter: str) -> list[str] | None:
    try:
        return next(csv.reader([text], delimiter=delimiter, strict=True), [])
    except csv.Error:
        return None


#: (line ends, delimiter offsets, index of each line's first delimiter) of a block
_Scan = tuple[np.ndarray, np.ndarray, np.ndarray]


def _plain_block(
    records: list[bytes], rows: np.ndarray, shape: _Shape, joined: bytes | None = None
) -> tuple[list[int], bytes, int, list[BadRow], _Scan | None] | None:
    """Check a block without quotes with array operations.

    Returns (indices of good records, their bytes joined, blank count, failed rows, and
    when every record is good the :data:`_Scan` of those bytes, else None), or None when
    some line needs the record-by-record loop (not UTF-8, a stray carriage return).
    ``joined``: the records already joined.
    """
    data = b"".join(records) if joined is None else joined
    if not data.isascii():  # ASCII is UTF-8; only other bytes need decoding to be checked
        try:
            data.decode("utf-8")
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
    first = np.searchsorted(sep, begins)  # each line's first delimiter
    fields = np.searchsorted(sep, ends) - first + 1
    single = np.flatnonzero(fields == 1)  # a blank line has no delimiter
    blank = np.zeros(len(records), dtype=bool)
    blank[single] = [not records[k].strip() for k in single.tolist()]
    wrong = ~blank & (fields != shape.width)
    failed = [
        BadRow(
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
        return good, b"".join(records[k] for k in good), int(blank.sum()), failed, None
    return good, data, int(blank.sum()), failed, (ends, sep, first)


def _field_spans(
    data: bytes,
    delimiter: str,
    field: int,
    width: int,
    scanned: _Scan | None = None,
) -> OrderSpans:
    """Byte range of field ``field`` in every line of ``data`` (lines known to have
    ``width`` fields and no quotes), without making text of it. ``scanned``: the line
    ends, delimiter offsets and first delimiter of each line of ``data`` when already
    found by :func:`_plain_block` (not searched again)."""
    buf = np.frombuffer(data, dtype=np.uint8)
    if not data:
        empty = np.zeros(0, dtype=np.int64)
        return OrderSpans(buf, empty, empty)
    if scanned is None:
        ends = np.flatnonzero(buf == 10)
        if not data.endswith(b"\n"):
            ends = np.append(ends, buf.size)
        sep = np.flatnonzero(buf == ord(delimiter))
    else:
        ends, sep, first = scanned
    begins = np.concatenate([[0], ends[:-1] + 1]).astype(np.int64)
    cr = (ends > begins) & (buf[np.maximum(ends - 1, 0)] == 13)
    line_end = ends - cr
    if scanned is None:
        first = np.searchsorted(sep, begins)
    start = begins if field == 0 else sep[first + field - 1] + 1
    stop = line_end if field == width - 1 else sep[first + field]
    return OrderSpans(buf, start.astype(np.int64), stop.astype(np.int64))


def _kept_frame(data: bytes, count: int, shape: _Shape) -> pd.DataFrame:
    """The kept columns of a block without quotes, as text (pyarrow's reader when it is
    installed, else pandas' C parser; neither makes text of the order field)."""
    if not shape.kept:
        return pd.DataFrame(index=range(count))
    try:
        import pyarrow as pa
        import pyarrow.csv as pacsv
    except ImportError:
        pa = None
    if pa is not None:
        names = [str(i) for i in range(shape.width)]
        try:
            table = pacsv.read_csv(
                pa.py_buffer(data if data.endswith(b"\n") else data + b"\n"),
                read_options=pacsv.ReadOptions(column_names=names, use_threads=False),
                parse_options=pacsv.ParseOptions(delimiter=shape.delimiter, quote_char=False),
                convert_options=pacsv.ConvertOptions(
                    column_types={names[i]: pa.string() for i in shape.kept},
                    include_columns=[names[i] for i in shape.kept],
                    strings_can_be_null=False,
                    quoted_strings_can_be_null=False,
                ),
            )
        except pa.ArrowException:  # pragma: no cover - the block was checked; pandas decides
            table = None
        if table is not None:
            frame = table.to_pandas()
            frame.columns = shape.kept_names
            return frame
    frame = pd.read_csv(
        io.BytesIO(data if data.endswith(b"\n") else data + b"\n"),
        sep=shape.delimiter,
        header=None,
        names=list(range(shape.width)),
        usecols=shape.kept,
        dtype=object,
        na_filter=False,
        skip_blank_lines=False,
        quoting=csv.QUOTE_NONE,
        engine="c",
        encoding="utf-8",
    )
    frame = frame[shape.kept]
    frame.columns = shape.kept_names
    return frame.reset_index(drop=True)


def _csv_block(
    records: list[bytes],
    rows: np.ndarray,
    shape: _Shape,
    *,
    quoted: bool,
    joined: bytes | None = None,
) -> RawChunk:
    plain = None if quoted else _plain_block(records, rows, shape, joined)
    if plain is not None and shape.layout == "csv" and shape.before is None:
        good, data, blank, failed, scanned = plain
        good_rows = rows[np.asarray(good, dtype=np.int64)] if good else np.zeros(0, dtype=np.int64)
        spans = _field_spans(data, shape.delimiter, shape.used[0], shape.width, scanned)
        return RawChunk(
            good_rows,
            _kept_frame(data, len(good), shape) if good else _empty_kept(shape),
            tokens_of=lambda i: spans.text(i).split(),
            raw_of=lambda i: _decode(records[good[i]]),
            spans=spans,
            failed=failed,
            blank=blank,
        )
    if plain is not None:
        good, data, blank, failed, _ = plain
        frame = _split_fields(data.decode("utf-8"), len(good), shape.width, shape.delimiter)
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
            failed.append(BadRow(row, "malformed-row", problem, _decode(body), None))
            continue
        if '"' in text:
            fields = _csv_fields(text, shape.delimiter)
            if fields is None:
                problem = "a quoted field is not closed, or has text after its closing quote"
                failed.append(BadRow(row, "malformed-row", problem, text, None))
                continue
            count = len(fields)
        elif b"\r" in body or b"\n" in body:
            failed.append(BadRow(row, "malformed-row", "a line break inside a row", text, None))
            continue
        else:
            count = body.count(sep) + 1
        if count != shape.width:
            problem = f"{count} fields, the header has {shape.width}"
            failed.append(BadRow(row, "malformed-row", problem, text, None))
            continue
        good.append(k)
        texts.append(text)
    frame = _split_fields(texts, len(texts), shape.width, shape.delimiter)
    return _csv_raw(frame, records, rows, good, shape, failed, blank)


def _empty_kept(shape: _Shape) -> pd.DataFrame:
    return pd.DataFrame({name: pd.Series([], dtype=object) for name in shape.kept_names})


def _csv_raw(
    frame: pd.DataFrame,
    records: list[bytes],
    rows: np.ndarray,
    good: list[int],
    shape: _Shape,
    failed: list[BadRow],
    blank: int,
) -> RawChunk:
    good_rows = rows[np.asarray(good, dtype=np.int64)] if good else np.zeros(0, dtype=np.int64)
    if shape.kept:
        columns = frame.iloc[:, shape.kept].reset_index(drop=True)
        columns.columns = shape.kept_names
    else:
        columns = pd.DataFrame(index=range(len(good)))

    def raw_of(i: int) -> str:
        return _decode(records[good[i]])

    before = None
    if shape.before is not None:
        before = frame.iloc[:, shape.before].to_numpy(dtype=object).tolist()
    if shape.layout == "csv":
        order = frame.iloc[:, shape.used[0]].to_numpy(dtype=object)
        return RawChunk(
            good_rows,
            columns,
            tokens_of=lambda i: order[i].split(),
            raw_of=raw_of,
            texts=order.tolist(),
            failed=failed,
            blank=blank,
            before=before,
        )
    cells = frame.iloc[:, shape.used].to_numpy(dtype=object)
    return RawChunk(
        good_rows,
        columns,
        tokens_of=lambda i: list(cells[i]),
        raw_of=raw_of,
        flat=cells.ravel(),
        counts=np.full(len(good), len(shape.used), dtype=np.int64),
        failed=failed,
        blank=blank,
        before=before,
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


#: integers beyond this size are never labels; they are range-checked before any
#: conversion to a machine integer (a JSON number may have any number of digits)
_LARGEST_LABEL = 1 << 31


def _token(value: object) -> object:
    """A token as the fast path sees it: text, or an int that fits 32 bits; anything else
    (bool, float, null, a list, an enormous int) becomes an impossible code, so the row is
    checked (and explained) one token at a time."""
    if type(value) is str:
        return value
    if type(value) is int and -_LARGEST_LABEL < value < _LARGEST_LABEL:
        return value
    return "\x00" + type(value).__name__


def _flatten(lists: list[list[object]]) -> tuple[np.ndarray, np.ndarray]:
    counts = np.fromiter(map(len, lists), dtype=np.int64, count=len(lists))
    tokens = list(itertools.chain.from_iterable(lists))
    kinds = set(map(type, tokens))
    if not kinds <= {str, int} or (
        int in kinds
        and any(type(t) is int and not -_LARGEST_LABEL < t < _LARGEST_LABEL for t in tokens)
    ):
        # bool and float compare equal to ints; make every other value an impossible code
        tokens = [_token(t) for t in tokens]
    flat = np.empty(len(tokens), dtype=object)
    flat[:] = tokens
    return flat, counts


_JSON_KIND = {"list": "array", "str": "text", "int": "number", "float": "number"}

#: deepest nesting of arrays and objects read from one JSON line (an order needs two)
MAX_JSON_DEPTH = 32


class _DuplicateKey(Exception):
    def __init__(self, key: str) -> None:
        super().__init__(key)
        self.key = key


def _unique_keys(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    value = dict(pairs)
    if len(value) != len(pairs):
        seen: set[str] = set()
        for key, _ in pairs:
            if key in seen:
                raise _DuplicateKey(key)
            seen.add(key)
    return value


def _json_depth(line: bytes) -> int:
    """Deepest nesting of arrays and objects in a JSON text (outside strings); cheap for
    ordinary lines, which hold far fewer brackets than the limit."""
    if line.count(b"[") + line.count(b"{") <= MAX_JSON_DEPTH:
        return 0
    depth = deepest = 0
    inside = escaped = False
    for byte in line:
        if inside:
            if escaped:
                escaped = False
            elif byte == 0x5C:  # backslash
                escaped = True
            elif byte == 0x22:  # quote
                inside = False
        elif byte == 0x22:
            inside = True
        elif byte in (0x5B, 0x7B):  # [ {
            depth += 1
            deepest = max(deepest, depth)
        elif byte in (0x5D, 0x7D):
            depth -= 1
    return deepest


#: a JSON escape of a UTF-16 surrogate (``\ud800`` to ``\udfff``): paired it is one
#: character, alone it is no Unicode text at all
_SURROGATE_ESCAPE = re.compile(rb"\\u[dD][89a-fA-F]")


def _lone_surrogate(value: Any) -> bool:
    """Whether a parsed JSON value holds a text (key or value) with a lone surrogate."""
    if isinstance(value, str):
        try:
            value.encode("utf-8")
        except UnicodeEncodeError:
            return True
        return False
    if isinstance(value, dict):
        return any(_lone_surrogate(k) or _lone_surrogate(v) for k, v in value.items())
    if isinstance(value, list):
        return any(_lone_surrogate(v) for v in value)
    return False


def _json_record(
    line: bytes, order_key: str = "order"
) -> tuple[list[object] | str, dict[str, Any] | None, tuple[str, str] | None]:
    """(order, other keys, None) of one JSON line, or (None, keys or None, (reason, problem)).

    Refused as malformed before or while parsing: nesting deeper than
    :data:`MAX_JSON_DEPTH` arrays and objects, a key given twice in one object (JSON [2]
    leaves duplicates undefined; the last would win silently), a number too long to read,
    a text escaping half of a surrogate pair (``"\\ud800"`` alone: JSON's grammar admits it,
    but it is no Unicode text and cannot be written back out).
    """
    depth = _json_depth(line)
    if depth > MAX_JSON_DEPTH:
        return [], None, ("malformed-json", f"nested {depth} deep; at most {MAX_JSON_DEPTH} levels")
    try:
        value = json.loads(line, object_pairs_hook=_unique_keys)
    except UnicodeDecodeError:
        return [], None, ("malformed-json", "not UTF-8 text")
    except json.JSONDecodeError as exc:
        return [], None, ("malformed-json", f"not valid JSON ({exc.msg} at column {exc.colno})")
    except _DuplicateKey as exc:
        return (
            [],
            None,
            ("malformed-json", f"key {clip(exc.key, 40)!r} appears twice in one object"),
        )
    except (ValueError, RecursionError) as exc:  # a number of more than 4,300 digits
        what = "a number too long to read" if "digits" in str(exc) else "a value too deep to read"
        return [], None, ("malformed-json", what)
    if _SURROGATE_ESCAPE.search(line) and _lone_surrogate(value):
        return (
            [],
            None,
            ("malformed-json", "a text holds half of a surrogate pair (\\ud800-\\udfff)"),
        )
    if not isinstance(value, dict):
        kind = _JSON_KIND.get(type(value).__name__, "true/false/null")
        return [], None, ("malformed-json", f"a line must be a JSON object, got {kind}")
    keys = [k for k in value if k == order_key] or [
        k for k in value if k.strip().lower() == order_key.strip().lower()
    ]
    if len(keys) != 1:
        many = f"more than one {order_key!r} key"
        return [], value, ("missing-order", many if keys else f"no {order_key!r} key")
    order = value.pop(keys[0])
    if isinstance(order, str):
        return order, value, None  # one text: split by the reader's separator
    if order is None or isinstance(order, list):
        return order or [], value, None
    problem = f"{order_key!r} must be a list of card codes or a text of codes"
    return [], value, ("malformed-row", problem)


def jsonl_chunks(
    path: Path, shown: str, chunk_rows: int, columns: ColumnMap | None = None
) -> Iterator[RawChunk]:
    columns = columns or ColumnMap()
    order_key = columns.order or "order"
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
            failed: list[BadRow] = []
            blank = 0
            rows: list[int] = []
            orders: list[list[object] | str] = []
            records: list[dict[str, Any]] = []
            raws: list[str] = []
            befores: list[object] = []
            for line in lines:
                line_no += 1
                if line_no == 1 and line.startswith(b"\xef\xbb\xbf"):
                    line = line[3:]
                if not line.strip():
                    blank += 1
                    continue
                text = _decode(line)
                order, value, problem = _json_record(line.strip(), order_key)
                if problem is None and columns.before is not None:
                    assert value is not None
                    start = value.pop(columns.before, None)
                    if not isinstance(start, (str, list)):
                        problem = (
                            "missing-order",
                            f"{columns.before!r} must hold the deck's starting order",
                        )
                    befores.append(start)
                if problem is not None:
                    failed.append(BadRow(line_no, problem[0], problem[1], text, value))
                    if columns.before is not None and len(befores) > len(rows):
                        befores.pop()
                    continue
                rows.append(line_no)
                orders.append(order)
                records.append(value)
                raws.append(text)
            texted = bool(orders) and all(isinstance(o, str) for o in orders)
            if not texted:  # lists, perhaps with a few texts: those split at whitespace
                orders = [o.split() if isinstance(o, str) else o for o in orders]
            flat, counts = _flatten([] if texted else orders)  # type: ignore[arg-type]
            yield RawChunk(
                np.asarray(rows, dtype=np.int64),
                pd.DataFrame(records, index=range(len(records))),
                tokens_of=lambda i, orders=orders: list(orders[i]),
                raw_of=lambda i, raws=raws: raws[i],
                texts=orders if texted else None,  # type: ignore[arg-type]
                flat=None if texted else flat,
                counts=None if texted else counts,
                failed=failed,
                blank=blank,
                before=befores if columns.before is not None else None,
                done=_fraction(handle, path),
            )


def parquet_chunks(
    path: Path, shown: str, deck: DeckDefinition, chunk_rows: int, columns: ColumnMap
) -> Iterator[RawChunk | tuple[str, list[int], int | None, list[str]]]:
    """The layout, then one RawChunk per row batch. A file pyarrow cannot decode (a
    corrupted page, a name that is not UTF-8) is an InputError wherever it shows."""
    inner = _parquet_chunks(path, shown, deck, chunk_rows, columns)
    while True:
        try:
            item = next(inner)
        except StopIteration:
            return
        except _unreadable() as exc:
            raise InputError(f"{shown}: not a readable Parquet file ({clip(exc, 200)})") from None
        yield item


@functools.cache
def _unreadable() -> tuple[type[BaseException], ...]:
    """What pyarrow raises for a file it cannot decode (imported only when Parquet is read)."""
    try:
        import pyarrow as pa
    except ImportError:  # pragma: no cover - the reader says pyarrow is needed
        return (OSError, UnicodeDecodeError)
    return (pa.ArrowException, OSError, UnicodeDecodeError)


def _parquet_chunks(
    path: Path, shown: str, deck: DeckDefinition, chunk_rows: int, columns: ColumnMap
) -> Iterator[RawChunk | tuple[str, list[int], int | None, list[str]]]:
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
    layout, used, before_index = _layout(names, "auto", deck, f"{shown} schema", columns)
    yield layout, used, before_index, names
    taken = [*used] + ([before_index] if before_index is not None else [])
    kept_names = [n for i, n in enumerate(names) if i not in taken]
    offset = 1
    batches = parquet.iter_batches(batch_size=chunk_rows)
    while True:
        try:
            batch = next(batches, None)
        except (OSError, pa.ArrowException) as exc:
            raise InputError(f"{shown}: not a readable Parquet file ({clip(exc, 200)})") from None
        if batch is None:
            return
        m = batch.num_rows
        rows = np.arange(offset, offset + m, dtype=np.int64)
        offset += m
        try:
            kept = (
                batch.select(kept_names).to_pandas() if kept_names else pd.DataFrame(index=range(m))
            )
        except (pa.ArrowException, ValueError, TypeError) as exc:
            raise InputError(f"{shown}: a column cannot be read ({clip(exc, 200)})") from None
        kept = kept.reset_index(drop=True)
        before = None
        if before_index is not None:
            before = batch.column(before_index).to_pylist()

        def raw_of(i: int, batch: Any = batch) -> str:
            try:
                row = batch.slice(i, 1).to_pylist()[0]
            except _unreadable():
                return "(a row pyarrow cannot decode)"
            return json.dumps(row, default=str, ensure_ascii=False)

        if layout == "csv":
            order = _plain_arrow(batch.column(used[0]))
            kind = order.type
            if pa.types.is_string(kind) or pa.types.is_large_string(kind):
                texts = [t or "" for t in order.to_pylist()]
                yield RawChunk(
                    rows,
                    kept,
                    tokens_of=lambda i, t=texts: t[i].split(),
                    raw_of=raw_of,
                    texts=texts,
                    before=before,
                    done=(offset - 1) / max(1, parquet.metadata.num_rows),
                )
                continue
            if not (pa.types.is_list(kind) or pa.types.is_large_list(kind)):
                raise InputError(
                    f"{shown}: column {names[used[0]]!r} has type {kind}; expected a list or "
                    "text of codes"
                )
            counts = pc.fill_null(pc.list_value_length(order), 0).to_numpy().astype(np.int64)
            values = pc.list_flatten(order)
            if pa.types.is_integer(values.type):
                flat = _label_integers(values)
            elif pa.types.is_string(values.type) or pa.types.is_large_string(values.type):
                flat = np.asarray(values.to_numpy(zero_copy_only=False), dtype=object)
            else:
                flat = _tokens(values.to_pylist())
            yield RawChunk(
                rows,
                kept,
                tokens_of=lambda i, o=order: _arrow_tokens(lambda: o[i].as_py() or []),
                raw_of=raw_of,
                flat=flat,
                counts=counts,
                before=before,
                done=(offset - 1) / max(1, parquet.metadata.num_rows),
            )
            continue
        cells = [_plain_arrow(batch.column(i)) for i in used]
        if all(pa.types.is_integer(c.type) for c in cells):
            grid = np.stack([_label_integers(c) for c in cells], axis=1)
        else:
            grid = np.stack([_tokens(c.to_pylist()) for c in cells], axis=1)
        yield RawChunk(
            rows,
            kept,
            tokens_of=lambda i, c=cells: _arrow_tokens(lambda: [x[i].as_py() for x in c]),
            raw_of=raw_of,
            flat=grid.ravel(),
            counts=np.full(m, len(used), dtype=np.int64),
            before=before,
            done=(offset - 1) / max(1, parquet.metadata.num_rows),
        )


def _arrow_tokens(read: Callable[[], list[object]]) -> list[object]:
    """The tokens of one Parquet row, or one impossible token when pyarrow cannot decode
    them (the row is then reported as bad, never as a crash)."""
    try:
        return read()
    except _unreadable():
        return ["\x00undecodable"]


def _plain_arrow(array: Any) -> Any:
    """A Parquet column with dictionary encoding or fixed-size lists as plain values."""
    import pyarrow as pa

    if pa.types.is_dictionary(array.type):
        array = array.dictionary_decode()
    if pa.types.is_fixed_size_list(array.type):
        array = array.cast(pa.list_(array.type.value_type))
    return array


def _label_integers(array: Any) -> np.ndarray:
    """Integer cells as int64 labels, range-checked before any conversion: nulls and
    values outside 32 bits become -1 (the row is then checked and explained token by
    token, with the original values)."""
    import pyarrow.compute as pc

    valid = np.asarray(pc.is_valid(array).to_numpy(zero_copy_only=False), dtype=bool)
    values = pc.fill_null(array, 0).to_numpy(zero_copy_only=False)
    if values.dtype.kind == "u":
        inside = values < _LARGEST_LABEL
    else:
        inside = (values > -_LARGEST_LABEL) & (values < _LARGEST_LABEL)
    out = np.full(values.shape, -1, dtype=np.int64)
    keep = valid & inside
    out[keep] = values[keep].astype(np.int64)
    return out


def _tokens(values: list[object]) -> np.ndarray:
    """A one-dimensional object array of tokens (see :func:`_token`)."""
    out = np.empty(len(values), dtype=object)
    out[:] = [_token(v) for v in values]
    return out


def frame_chunks(
    frame: pd.DataFrame, shown: str, deck: DeckDefinition, chunk_rows: int, columns: ColumnMap
) -> Iterator[RawChunk | tuple[str, list[int], int | None, list[str]]]:
    """A pandas DataFrame read like a file: an order column (texts or lists of codes or
    integer labels) or position columns; rows numbered 1.. in frame order."""
    names = [str(c) for c in frame.columns]
    if len(set(names)) != len(names):
        raise InputError(f"{shown}: column names must be distinct")
    layout, used, before_index = _layout(names, "auto", deck, shown, columns)
    yield layout, used, before_index, names
    taken = [*used] + ([before_index] if before_index is not None else [])
    kept_at = [i for i in range(len(names)) if i not in taken]
    total = max(1, len(frame))
    for lo in range(0, len(frame), chunk_rows):
        block = frame.iloc[lo : lo + chunk_rows]
        m = len(block)
        rows = np.arange(lo + 1, lo + 1 + m, dtype=np.int64)
        kept = block.iloc[:, kept_at].reset_index(drop=True)
        kept.columns = [names[i] for i in kept_at]
        before = None if before_index is None else block.iloc[:, before_index].tolist()

        def raw_of(i: int, block: pd.DataFrame = block) -> str:
            return json.dumps(block.iloc[i].to_dict(), default=str, ensure_ascii=False)

        done = min(1.0, (lo + m) / total)
        if layout == "csv":
            values = block.iloc[:, used[0]].tolist()
            if all(isinstance(v, str) for v in values):
                yield RawChunk(
                    rows,
                    kept,
                    tokens_of=lambda i, v=values: v[i].split(),
                    raw_of=raw_of,
                    texts=values,
                    before=before,
                    done=done,
                )
                continue
            lists = [
                []
                if v is None
                else (v.tolist() if hasattr(v, "tolist") else list(v))
                if not isinstance(v, str)
                else v.split()
                for v in values
            ]
            flat, counts = _flatten(lists)
            yield RawChunk(
                rows,
                kept,
                tokens_of=lambda i, v=lists: list(v[i]),
                raw_of=raw_of,
                flat=flat,
                counts=counts,
                before=before,
                done=done,
            )
            continue
        cells = block.iloc[:, used]
        grid = cells.to_numpy()
        if not np.issubdtype(grid.dtype, np.integer):
            grid = cells.to_numpy(dtype=object)
        else:
            grid = grid.astype(np.int64)
        yield RawChunk(
            rows,
            kept,
            tokens_of=lambda i, g=grid: list(g[i]),
            raw_of=raw_of,
            flat=grid.ravel(),
            counts=np.full(m, len(used), dtype=np.int64),
            before=before,
            done=done,
        )
