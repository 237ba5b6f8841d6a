"""The log reader: validated decks in chunks, bad rows quarantined or reported."""

from __future__ import annotations

import contextlib
import csv
import dataclasses
import os
import re
from collections import Counter
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from shufflecheck.common.errors import MARKED, InputError, marked_arguments, plain_markers
from shufflecheck.common.files import atomic_open, same_file
from shufflecheck.records.cards import LABEL_MODES, DeckDefinition, Labels, load_deck
from shufflecheck.records.logs._common import (
    DEFAULT_CHUNK_ROWS,
    FORMATS,
    QUARANTINE_HEADER,
    SEPARATORS,
    ColumnMap,
    LogChunk,
    LogFormat,
    LogSummary,
    SetAside,
)
from shufflecheck.records.logs._formats import (
    BadRow,
    RawChunk,
    csv_chunks,
    frame_chunks,
    jsonl_chunks,
    parquet_chunks,
)
from shufflecheck.records.logs._tokens import (
    detect_separator,
    map_tokens,
    permutation_rows,
    scan_spans,
    scan_text,
    split_order,
    split_texts,
)
from shufflecheck.records.orders import Arrangement, check_arrangement
from shufflecheck.records.shoes import ShoeDefinition, check_shoe_row, copy_rows, load_shoe

# --------------------------------------------------------------------------------------
# the reader

#: arguments a row's problem may point to (marked ``{name}`` in the text)
_NAMED = MARKED


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
        deck: DeckDefinition | ShoeDefinition,
        labels: str,
        fmt: str,
        chunk_rows: int,
        quarantine: Path | None,
        columns: ColumnMap | None = None,
        separator: str | None = None,
        frame: pd.DataFrame | None = None,
        force: bool = True,
    ) -> None:
        self.path = path
        self._frame = frame
        self._force = force
        self.deck = deck
        # a shoe (repeated cards): rows are words of its kinds, checked by counting copies
        self._shoe = deck if isinstance(deck, ShoeDefinition) else None
        if self._shoe is not None and labels != "codes":
            raise InputError(f"{shown}: a shoe log names its cards by code (labels=codes)")
        if self._shoe is not None and columns is not None and columns.before is not None:
            raise InputError(
                f"{shown}: a starting-order column is for decks of distinct cards; a shoe "
                "is tested against the previous shoe, the first or a fixed order",
                argument="before_column",
            )
        self._shown = shown
        self._labels = labels
        self._fmt = fmt
        self._layout = fmt
        self._chunk_rows = chunk_rows
        self._quarantine = quarantine
        self._columns = columns or ColumnMap()
        self._separator_given = separator is not None
        self._separator: str | None = SEPARATORS[separator] if separator is not None else None
        self._separator_known = separator is not None
        self._order_column = "order"
        #: fraction of the file read so far (for progress bars)
        self.fraction = 0.0
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
            order_column=self._order_column,
            separator=next(k for k, v in SEPARATORS.items() if v == self._separator),
            separator_source="given" if self._separator_given else "detected",
            header="declared" if self._columns.names is not None else "read",
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
            None
            if chunks[0].before is None
            else np.concatenate([c.before for c in chunks if c.before is not None]),
        )

    # -- machinery ----------------------------------------------------------------------

    def _where(self, row: int) -> str:
        unit = "line" if self._fmt == "jsonl" else "row"
        return f"{self._shown} {unit} {row}"

    def _raw_chunks(self) -> Iterator[RawChunk]:
        if self._fmt == "jsonl":
            self._layout = "jsonl"
            self._order_column = self._columns.order or "order"
            yield from jsonl_chunks(self.path, self._shown, self._chunk_rows, self._columns)
            return
        if self._fmt == "frame":
            assert self._frame is not None
            source = frame_chunks(
                self._frame, self._shown, self.deck, self._chunk_rows, self._columns
            )
        elif self._fmt == "parquet":
            source = parquet_chunks(
                self.path, self._shown, self.deck, self._chunk_rows, self._columns
            )
        else:
            source = csv_chunks(
                self.path, self._shown, self._fmt, self.deck, self._chunk_rows, self._columns
            )
        layout, used, _, names = next(source)  # type: ignore[misc]
        self._layout = layout if self._fmt not in ("parquet", "frame") else self._fmt
        if layout == "csv":
            self._order_column = str(names[used[0]]).strip()
        else:
            self._order_column = f"positions {names[used[0]]}..{names[used[-1]]}"
        yield from source  # type: ignore[misc]  (delegated: no reference kept here)

    def _run(self) -> Iterator[LogChunk]:
        with contextlib.ExitStack() as stack:
            writer = None
            if self._quarantine is not None:
                handle = stack.enter_context(atomic_open(self._quarantine, "w", force=self._force))
                writer = csv.writer(handle, lineterminator="\n")
                writer.writerow(QUARANTINE_HEADER)
            seen = 0
            for raw in self._raw_chunks():
                self.fraction = raw.done
                chunk, bad = self._check(raw)
                seen += len(raw.rows) + len(raw.failed)
                self._blank += raw.blank
                del raw  # the raw text is not needed while the chunk is used
                if bad:
                    if writer is None:
                        first = bad[0]
                        named = marked_arguments(first.problem, _NAMED)
                        raise InputError(
                            f"{self._where(first.row)}: {first.problem}", argument=named or None
                        )
                    for item in bad:
                        problem = plain_markers(item.problem, _NAMED)
                        writer.writerow((item.row, item.reason, problem, item.raw))
                        self._reasons[item.reason] += 1
                self._decks += len(chunk)
                if len(chunk) or len(chunk.set_aside.rows):
                    yield chunk
            if seen == 0:
                below = "" if self._fmt in ("jsonl", "parquet") else " below the header"
                raise InputError(f"{self._shown}: no deck rows{below}")
            self._complete = True
            self.fraction = 1.0

    def _check(self, raw: RawChunk) -> tuple[LogChunk, list[BadRow]]:
        """Vectorised check of a raw chunk; rows it cannot vouch for get check_arrangement."""
        n = self.deck.size
        m = len(raw.rows)
        integer = self._labels != "codes"
        fast = None
        if raw.spans is not None:
            if not self._separator_known:
                self._tokens(raw.spans.texts()[:200], raw)  # detects the separator
            if self._separator is None and not integer:
                fast = scan_spans(raw.spans.buf, raw.spans.starts, raw.spans.ends, self.deck)
            if fast is None:
                raw = dataclasses.replace(raw, texts=raw.spans.texts(), spans=None)
        if fast is not None:
            values, counts = fast
            spans = raw.spans
            assert spans is not None
            tokens_of = lambda i: spans.text(i).split()  # noqa: E731
        elif raw.texts is not None:
            values, counts, tokens_of = self._tokens(raw.texts, raw)
        else:
            assert raw.flat is not None and raw.counts is not None
            values, counts = map_tokens(raw.flat, self.deck, integer), raw.counts
            tokens_of = raw.tokens_of
        starts = np.cumsum(counts) - counts
        full = np.flatnonzero(counts == n)
        if full.size == m and values.size == m * n:  # every row has n tokens: no gather
            grid = values.reshape(m, n)
        elif full.size:
            grid = values[starts[full, None] + np.arange(n)]
        else:
            grid = np.zeros((0, n), dtype=np.int64)
        # rows the fast path vouches for, per numbering (0 for card codes)
        bases = [self._base] if not integer or self._base is not None else [0, 1]
        fast: dict[int, np.ndarray] = {}
        labels_of = n if self._shoe is None else self._shoe.kind_count
        for base in bases:
            shifted = grid - (base or 0)
            ok = ((shifted >= 0) & (shifted < labels_of)).all(axis=1)
            if self._shoe is not None:
                ok[ok] = copy_rows(shifted[ok], self._shoe.copies_array())
            else:
                ok[ok] = permutation_rows(shifted[ok], n)
            fast[base or 0] = np.zeros(m, dtype=bool)
            fast[base or 0][full[ok]] = True
        checked: dict[int, Arrangement] = {}
        if integer and self._base is None:
            # the first valid row of the file fixes the numbering (fast or authoritative)
            doubtful = np.flatnonzero(~(fast[0] | fast[1]))
            for i in doubtful.tolist():
                checked[i] = check_arrangement(tokens_of(i), self.deck, labels="int")
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
            result = checked.get(i) or self._authoritative(tokens_of(i))
            if result.ok:
                good[i] = True
                decks[i] = result.labels
            else:
                kept = raw.columns.iloc[i].to_dict() if raw.columns.shape[1] else {}
                bad.append(
                    BadRow(
                        int(raw.rows[i]),
                        str(result.reason),
                        str(result.problem),
                        raw.raw_of(i),
                        kept,
                    )
                )
        before = None
        if raw.before is not None:
            before = self._before(raw, good, bad)
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
            before=None if before is None else before[keep],
        )
        return chunk, bad

    def _authoritative(self, tokens: list[object]) -> Arrangement:
        """The check behind every message about one row (copies counted for a shoe)."""
        if self._shoe is None:
            assert isinstance(self.deck, DeckDefinition)
            return check_arrangement(tokens, self.deck, labels=self._labels, base=self._base)
        kinds, reason, problem = check_shoe_row(tokens, self._shoe)
        return Arrangement(kinds, reason, problem)

    def _tokens(
        self, texts: Sequence[object], raw: RawChunk
    ) -> tuple[np.ndarray, np.ndarray, Callable[[int], list[object]]]:
        """Values and token counts of order texts, split at the file's separator."""
        integer = self._labels != "codes"
        strings = [t if isinstance(t, str) else "" for t in texts]
        if not self._separator_known:
            try:
                self._separator = detect_separator(strings, lambda i: int(raw.rows[i]))
            except InputError as exc:
                raise InputError(f"{self._shown}: {exc.template}", argument=exc.arguments) from None
            self._separator_known = any(t.strip() for t in strings)
        sep = self._separator
        if sep is None:
            values, counts = scan_text(strings, self.deck, integer)
        else:
            flat, counts = split_texts(strings, sep)
            values = map_tokens(flat, self.deck, integer)
        return values, counts, lambda i: split_order(strings[i], sep)

    def _before(self, raw: RawChunk, good: np.ndarray, bad: list[BadRow]) -> np.ndarray:
        """Each good row's starting order (the before column); rows whose starting order
        is not an arrangement of the deck are set aside (``good`` updated in place)."""
        n = self.deck.size
        cells = list(raw.before or ())
        out = np.zeros((len(cells), n), dtype=np.int16)
        if all(isinstance(c, str) or c is None for c in cells):
            values, counts, tokens_of = self._tokens(cells, raw)
        else:
            lists = [split_order(c, self._separator) for c in cells]
            flat = np.empty(sum(map(len, lists)), dtype=object)
            flat[:] = [t for tokens in lists for t in tokens]
            values = map_tokens(flat, self.deck, self._labels != "codes")
            counts = np.fromiter(map(len, lists), dtype=np.int64, count=len(lists))
            tokens_of = lists.__getitem__
        starts = np.cumsum(counts) - counts
        full = np.flatnonzero(good & (counts == n))
        grid = values[starts[full, None] + np.arange(n)] - (self._base or 0)
        ok = ((grid >= 0) & (grid < n)).all(axis=1)
        ok[ok] = permutation_rows(grid[ok], n)
        out[full[ok]] = grid[ok]
        doubtful = good.copy()
        doubtful[full[ok]] = False
        for i in np.flatnonzero(doubtful).tolist():
            result = check_arrangement(
                tokens_of(i), self.deck, labels=self._labels, base=self._base
            )
            if result.ok:
                out[i] = result.labels
                continue
            good[i] = False
            name = self._columns.before
            kept = raw.columns.iloc[i].to_dict() if raw.columns.shape[1] else {}
            bad.append(
                BadRow(
                    int(raw.rows[i]),
                    str(result.reason),
                    f"starting order ({name}): {result.problem}",
                    raw.raw_of(i),
                    kept,
                )
            )
        return out


def read_log(
    path: str | os.PathLike[str],
    *,
    deck: DeckDefinition | ShoeDefinition | str | os.PathLike[str] | None = None,
    labels: Labels = "codes",
    fmt: LogFormat = "auto",
    chunk_rows: int = DEFAULT_CHUNK_ROWS,
    quarantine: str | os.PathLike[str] | None = None,
    order_column: str | None = None,
    position_columns: str | Sequence[str] | None = None,
    before_column: str | None = None,
    columns: str | Sequence[str] | None = None,
    separator: str | None = None,
    force: bool = True,
) -> LogReader:
    """Open a log of recorded deck orders for reading in chunks.

    Parameters
    ----------
    path : path
        The log (``.csv``, ``.tsv``, ``.txt``, ``.jsonl``, ``.ndjson``, ``.parquet``; any of
        the text formats may be gzip-compressed, ``.csv.gz``). Opened read-only.
    deck : DeckDefinition, ShoeDefinition, name or path, optional
        The deck every row must be an arrangement of (default: built-in ``standard-52``);
        a shoe (``shoe(packs=6)``, a deck file with ``copies``) is checked by counting the
        copies of every card, and its rows are words of the shoe's kinds.
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
    order_column : str, optional
        The column (JSON key) holding the orders, e.g. ``"Deck Order"``. Without it:
        ``order`` in any case, else the one column whose name has the word "order".
    position_columns : str or sequence of str, optional
        The position columns of a wide file, top first: names, or one text such as
        ``"Card 1..Card 52"`` or ``"c1,c2,c3"`` (see :func:`column_names`).
    before_column : str, optional
        A column holding each deck's own starting order (same codes and separator as the
        orders); chunks then carry it as ``before``. A row whose starting order is not an
        arrangement of the deck is a bad row like any other.
    columns : str or sequence of str, optional
        The file has no header row; these are its columns in order (``"deck,table,order"``
        or ``"table,p1..p52"``). Its first line is row 1.
    separator : {"space", "comma", "semicolon", "pipe"}, optional
        Between the cards inside an order field (``space``: any run of spaces or tabs).
        Default: detected from the first rows (none of ``, ; |``: spaces; two of them: an
        error asking for this argument).
        Spelled-out names (``Ace of Spades``) need one other than spaces.
    force : bool
        Replace an existing quarantine file (default); with False an existing one is an
        error, checked again when the file is put in place (two runs cannot both write it).

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
        if target.exists() and same_file(target, source):
            raise InputError(f"quarantine file {target} is the log itself; choose another path")
        if target.is_dir():
            raise InputError(f"cannot write quarantine file {target}: it is a folder")
    if separator is not None and separator not in SEPARATORS:
        raise InputError(
            f"separator {separator!r} is not one of {', '.join(SEPARATORS)}", argument="separator"
        )
    mapping = ColumnMap(
        order=order_column,
        positions=None
        if position_columns is None
        else column_names(position_columns, argument="position_columns"),
        before=before_column,
        names=None if columns is None else column_names(columns, argument="columns"),
    )
    if mapping.names is not None and kind in ("jsonl", "parquet"):
        raise InputError(
            f"{shown}: declared columns are for CSV files without a header row; {kind} "
            "names its own",
            argument="columns",
        )
    return LogReader(
        source,
        shown,
        _definition(deck),
        labels,
        kind,
        chunk_rows,
        target,
        mapping,
        separator,
        force=force,
    )


def _definition(
    deck: DeckDefinition | ShoeDefinition | str | os.PathLike[str] | None,
) -> DeckDefinition | ShoeDefinition:
    """The deck or shoe a log's rows are checked against."""
    definition = load_shoe(deck) if deck is not None else None
    if definition is None:
        definition = load_deck(deck)  # type: ignore[arg-type]
    return definition


def read_frame(
    frame: pd.DataFrame,
    *,
    deck: DeckDefinition | ShoeDefinition | str | os.PathLike[str] | None = None,
    labels: Labels = "codes",
    chunk_rows: int = DEFAULT_CHUNK_ROWS,
    order_column: str | None = None,
    position_columns: str | Sequence[str] | None = None,
    before_column: str | None = None,
    separator: str | None = None,
    name: str = "data frame",
) -> LogReader:
    """Read a pandas DataFrame of recorded orders like a log file (see :func:`read_log`).

    The frame has an order column (texts of codes, or lists of codes or integer labels)
    or position columns; other columns are kept. Rows are numbered 1, 2, ... in frame
    order, and a bad row raises :class:`InputError` naming ``name`` and the row.
    """
    if not isinstance(frame, pd.DataFrame):
        raise InputError(f"{name}: expected a pandas DataFrame, got {type(frame).__name__}")
    if labels not in LABEL_MODES:
        raise InputError(f"labels {labels!r} is not one of {', '.join(LABEL_MODES)}")
    if separator is not None and separator not in SEPARATORS:
        raise InputError(
            f"separator {separator!r} is not one of {', '.join(SEPARATORS)}", argument="separator"
        )
    mapping = ColumnMap(
        order=order_column,
        positions=None
        if position_columns is None
        else column_names(position_columns, argument="position_columns"),
        before=before_column,
    )
    return LogReader(
        Path(name),
        name,
        _definition(deck),
        labels,
        "frame",
        chunk_rows,
        None,
        mapping,
        separator,
        frame=frame,
    )


_RANGE = re.compile(
    r"^(?P<prefix>.*?)(?P<low>\d+)\s*\.\.\s*(?P=prefix)?(?P<high>\d+)(?P<suffix>.*)$"
)


def column_names(spec: str | Sequence[str], *, argument: str = "columns") -> tuple[str, ...]:
    """Column names from a list or from one text: names separated by commas, where an item
    ``p1..p52`` (or ``Card 1..Card 52``) stands for every name in that numbered range.

    Examples
    --------
    >>> column_names("deck, table, p1..p3")
    ('deck', 'table', 'p1', 'p2', 'p3')
    >>> column_names("Card 1..Card 2")
    ('Card 1', 'Card 2')
    """
    items = [spec] if isinstance(spec, str) else list(spec)
    out: list[str] = []
    for item in items:
        if not isinstance(item, str):
            raise InputError(
                f"{argument}: column names must be text, got {item!r}", argument=argument
            )
        parts = item.split(",") if isinstance(spec, str) else [item]
        for part in parts:
            name = part.strip()
            if not name:
                raise InputError(f"{argument}: an empty column name in {spec!r}", argument=argument)
            match = _RANGE.match(name)
            if match and ".." in name:
                low, high = int(match["low"]), int(match["high"])
                if not 0 <= low <= high or high - low > 100_000:
                    raise InputError(
                        f"{argument}: range {name!r} must count upwards", argument=argument
                    )
                prefix, suffix = match["prefix"], match["suffix"]
                out += [f"{prefix}{k}{suffix}" for k in range(low, high + 1)]
            else:
                out.append(name)
    return tuple(out)
