"""The log reader: validated decks in chunks, bad rows quarantined or reported."""

from __future__ import annotations

import contextlib
import csv
import os
from collections import Counter
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pandas as pd

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import atomic_open
from shufflecheck.records.cards import LABEL_MODES, DeckDefinition, Labels, load_deck
from shufflecheck.records.logs._common import (
    DEFAULT_CHUNK_ROWS,
    FORMATS,
    QUARANTINE_HEADER,
    LogChunk,
    LogFormat,
    LogSummary,
    SetAside,
)
from shufflecheck.records.logs._formats import (
    BadRow,
    RawChunk,
    csv_chunks,
    jsonl_chunks,
    parquet_chunks,
)
from shufflecheck.records.logs._tokens import map_tokens, permutation_rows, scan_text
from shufflecheck.records.orders import Arrangement, check_arrangement

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

    def _raw_chunks(self) -> Iterator[RawChunk]:
        if self._fmt == "jsonl":
            self._layout = "jsonl"
            yield from jsonl_chunks(self.path, self._shown, self._chunk_rows)
            return
        if self._fmt == "parquet":
            source = parquet_chunks(self.path, self._shown, self.deck, self._chunk_rows)
        else:
            source = csv_chunks(self.path, self._shown, self._fmt, self.deck, self._chunk_rows)
        layout, _ = next(source)  # type: ignore[misc]
        self._layout = layout if self._fmt != "parquet" else "parquet"
        for raw in source:
            assert isinstance(raw, RawChunk)
            yield raw

    def _run(self) -> Iterator[LogChunk]:
        with contextlib.ExitStack() as stack:
            writer = None
            if self._quarantine is not None:
                handle = stack.enter_context(atomic_open(self._quarantine, "w"))
                writer = csv.writer(handle, lineterminator="\n")
                writer.writerow(QUARANTINE_HEADER)
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

    def _check(self, raw: RawChunk) -> tuple[LogChunk, list[BadRow]]:
        """Vectorised check of a raw chunk; rows it cannot vouch for get check_arrangement."""
        n = self.deck.size
        m = len(raw.rows)
        integer = self._labels != "codes"
        if raw.texts is not None:
            values, counts = scan_text(raw.texts, self.deck, integer)
        else:
            assert raw.flat is not None and raw.counts is not None
            values, counts = map_tokens(raw.flat, self.deck, integer), raw.counts
        starts = np.cumsum(counts) - counts
        full = np.flatnonzero(counts == n)
        grid = values[starts[full, None] + np.arange(n)] if full.size else np.zeros((0, n), int)
        # rows the fast path vouches for, per numbering (0 for card codes)
        bases = [self._base] if not integer or self._base is not None else [0, 1]
        fast: dict[int, np.ndarray] = {}
        for base in bases:
            shifted = grid - (base or 0)
            ok = ((shifted >= 0) & (shifted < n)).all(axis=1)
            ok[ok] = permutation_rows(shifted[ok], n)
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
                    BadRow(
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
