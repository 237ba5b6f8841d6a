"""Continuous monitoring of tables and machines: ingest logs into a store, keep anytime-valid
evidence and change detectors per table, and report the fleet.

The glue between the log reader (:mod:`shufflecheck.records.logs`), the monitoring
mathematics (:mod:`shufflecheck.stats.monitoring`) and the store
(:mod:`shufflecheck.stores.monitor_store`):

* :func:`ingest_log` reads one log (never modifying it) and adds its new decks to their
  tables in **one transaction**: a file already ingested (same SHA-256) adds nothing, and
  decks of an overlapping file that the store already holds (same time and same order) are
  recognised and skipped; a deck older than a table's newest stored deck that the store
  does not hold is an error, since e-processes need decks in time order.
* :func:`fleet_status` reads every table back: evidence now, alarms, the change-point set,
  a timeline, and a one-look retrospective audit of all stored decks for comparison.

Decks are related to the previous deck of the same table (the pickup order, the audit's
default reference), across files: the store keeps each table's last order.
"""

from __future__ import annotations

import json
import math
import os
import time as clock
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import sha256_file
from shufflecheck.records.cards import DeckDefinition, load_deck
from shufflecheck.records.logs import read_log
from shufflecheck.stats.battery import Tallies, run_battery
from shufflecheck.stats.catalogue import DeckContext, battery_statistics
from shufflecheck.stats.detector import ChangeSet
from shufflecheck.stats.guessing import DEFAULT_STRATEGIES
from shufflecheck.stats.monitoring import Monitor, MonitorPlan
from shufflecheck.stats.results import BatteryResult
from shufflecheck.stores.monitor_store import MonitorStore, TableRow

__all__ = [
    "FleetIngest",
    "FleetStatus",
    "IngestResult",
    "TableIngest",
    "TableStatus",
    "evidence_words",
    "fleet_status",
    "ingest_log",
    "ingest_logs",
]

#: Stored deck blocks hold at most this many decks (one chunk of the reader at most).
BLOCK_DECKS = 50_000
_LN10 = math.log(10.0)
_MULTIPLIERS = np.random.default_rng(0x5EC).integers(1, 2**63, size=4096, dtype=np.int64) | 1


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


def deck_digests(decks: np.ndarray) -> np.ndarray:
    """A 64-bit fingerprint of every deck's order (rows of ``decks``), vectorized.

    ``sum_i (label_i + 1) * m_i`` modulo 2^64 with fixed odd random multipliers ``m_i``: two
    different orders of one deck share a fingerprint with chance about 2^-64.
    """
    d = np.asarray(decks, dtype=np.int64) + 1
    n = d.shape[1]
    if n > _MULTIPLIERS.size:
        raise InputError(f"decks of more than {_MULTIPLIERS.size} cards cannot be monitored")
    with np.errstate(over="ignore"):
        return (d.astype(np.uint64) * _MULTIPLIERS[:n].astype(np.uint64)).sum(
            axis=1, dtype=np.uint64
        )


def _deck_json(deck: DeckDefinition) -> dict[str, Any]:
    return {
        "name": deck.name,
        "cards": list(deck.cards),
        "suits": list(deck.suits),
        "colours": list(deck.colours),
    }


def _deck_from_json(data: dict[str, Any]) -> DeckDefinition:
    return DeckDefinition(
        data["name"],
        tuple(data["cards"]),
        tuple(data["suits"]),
        tuple(data["colours"]),
        source="store",
    )


def _context(deck: DeckDefinition, strategies: tuple[str, ...]) -> DeckContext:
    return DeckContext.checked(
        deck.size,
        suits=deck.suit_codes() if deck.suit_names else None,
        colours=deck.colour_codes() if deck.colour_names else None,
        strategies=strategies,
    )


# ------------------------------------------------------------------------------ ingest


@dataclass(frozen=True)
class TableIngest:
    """What one ingest did to one table."""

    table: str
    decks_added: int
    decks_known: int
    first_row: int
    last_row: int
    decks_tested: int
    family_alarm: dict[str, Any] | None
    change_alarm: dict[str, Any] | None
    new_table: bool

    def as_json(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class IngestResult:
    """One file ingested into a store (``already``: the same file was ingested before)."""

    store: Path
    path: Path
    sha256: str
    already: dict[str, Any] | None
    rows: int
    tables: tuple[TableIngest, ...]
    seconds: float

    @property
    def decks_added(self) -> int:
        return sum(t.decks_added for t in self.tables)

    def as_json(self) -> dict[str, Any]:
        return {
            "store": str(self.store),
            "file": str(self.path),
            "sha256": self.sha256,
            "already_ingested": self.already,
            "rows": self.rows,
            "decks_added": self.decks_added,
            "tables": [t.as_json() for t in self.tables],
            "seconds": self.seconds,
        }


@dataclass(frozen=True)
class _ReadOptions:
    """How the logs of one ingest are read (sent with each file to a worker)."""

    deck: DeckDefinition
    labels: str
    fmt: str
    chunk_rows: int
    time: str
    table: str | None
    by: str | None


@dataclass(frozen=True)
class _Piece:
    """The decks of one table in one chunk of a log, in file order."""

    table: str
    decks: np.ndarray
    rows: np.ndarray
    times: np.ndarray
    digests: np.ndarray


@dataclass(frozen=True)
class _Work:
    """New decks of one table to test: ``decks`` (absolute labels) follow ``previous``."""

    decks: np.ndarray
    previous: np.ndarray
    rows: np.ndarray
    times: np.ndarray
    digests: np.ndarray
    first_deck: int


@dataclass
class _Table:
    """A table while files are being ingested (``table_id`` None: not in the store yet)."""

    row: TableRow
    table_id: int | None
    monitor: Monitor | None
    names: tuple[str, ...]
    dtype: str
    last_order: np.ndarray | None
    last_time: int | None
    origin: tuple[int, int] | None
    stored_last_time: int | None
    decks: int
    #: (file number, times, digests) of decks tested in this run and not yet committed
    batch_keys: list[tuple[int, np.ndarray, np.ndarray]] | None = None
    #: number of the file being checked (a run of many files)
    file_number: int = 0
    known_pairs: set[tuple[int, int]] | None = None
    added: int = 0
    known: int = 0
    first_row: int | None = None
    last_row: int = 0
    new_table: bool = False
    seen_new: bool = False
    alarms_before: tuple[Any, Any] = (None, None)

    def start_file(self) -> None:
        """Reset what is counted per file (a table met again in a later file)."""
        self.stored_last_time = self.last_time
        self.known_pairs = None
        self.added = self.known = 0
        self.first_row = None
        self.last_row = 0
        self.new_table = False
        self.seen_new = False


def _times(path: Path, chunk, column: str) -> np.ndarray:
    if column not in chunk.columns:
        raise InputError(f"{path}: time column {column!r} is not in the log", argument="time")
    values = chunk.columns[column]
    stamps = pd.to_datetime(values, errors="coerce", utc=True)
    bad = np.flatnonzero(stamps.isna().to_numpy())
    if bad.size:
        row = int(chunk.rows[bad[0]])
        raise InputError(f"{path} row {row}: {column} value {values.iloc[bad[0]]!r} is not a time")
    return stamps.dt.tz_localize(None).to_numpy().astype("datetime64[ns]").astype(np.int64)


def _time_text(ns: int) -> str:
    return str(np.datetime64(int(ns), "ns").astype("datetime64[s]"))


def _open_reader(source: Path, options: _ReadOptions):
    return read_log(
        source,
        deck=options.deck,
        labels=options.labels,
        fmt=options.fmt,
        chunk_rows=options.chunk_rows,
    )


def _pieces(source: Path, reader, options: _ReadOptions) -> Iterator[tuple[int, list[_Piece]]]:
    """Chunk by chunk: (rows read so far, the chunk's decks split by table, tables in the
    order they first appear in the chunk); validation errors raise as they are met."""
    rows_read = 0
    for chunk in reader:
        rows_read += len(chunk)
        if len(chunk) == 0:
            yield rows_read, []
            continue
        times = _times(source, chunk, options.time)
        names = _table_names(source, chunk, options.table, options.by)
        pieces = []
        for name in pd.unique(names):
            pick = np.flatnonzero(names == name)
            decks = chunk.decks[pick]
            pieces.append(
                _Piece(
                    str(name),
                    decks,
                    chunk.rows[pick],
                    times[pick],
                    deck_digests(decks).view(np.int64),
                )
            )
        yield rows_read, pieces


def ingest_log(
    store: str | os.PathLike[str],
    path: str | os.PathLike[str],
    *,
    table: str | None = None,
    by: str | None = None,
    time: str = "recorded_at",
    deck: str | os.PathLike[str] | DeckDefinition | None = None,
    labels: str = "codes",
    fmt: str | None = None,
    plan: MonitorPlan | None = None,
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES,
    chunk_rows: int = BLOCK_DECKS,
    progress: Callable[[int], None] | None = None,
) -> IngestResult:
    """Add the new decks of one log to their tables in a monitoring store (one process;
    :func:`ingest_logs` ingests many logs, optionally on a Dask cluster).

    Parameters
    ----------
    store : path
        The store file (SQLite; created when missing).
    path : path
        The log (any format the reader takes); opened read-only.
    table, by : str or None
        The table every deck belongs to, or the column naming each deck's table (default:
        the column ``table`` when the log has one).
    time : str
        Column with the time of each deck (any format pandas reads; UTC when no zone is
        given). Within a table, times must not go backwards.
    deck : path, name or DeckDefinition, optional
        Deck definition (default built-in 52-card deck); must match the table's.
    plan : MonitorPlan or None
        Levels for a new table (default ``MonitorPlan()``); for an existing table it must
        be None or equal to the table's plan (levels cannot change once data were seen).
    progress : callable, optional
        Called with the number of rows read so far.

    Returns
    -------
    IngestResult
    """
    start = clock.perf_counter()
    source = Path(path)
    if not source.is_file():
        raise InputError(f"cannot read {source}: no such file")
    options = _read_options(table, by, time, deck, labels, fmt, chunk_rows)
    digest = sha256_file(source)
    size = source.stat().st_size
    with MonitorStore(store) as db:
        seen = db.file_by_sha(digest)
        if seen is not None:
            return IngestResult(
                Path(store), source, digest, seen, 0, (), clock.perf_counter() - start
            )
        reader = _open_reader(source, options)
        tables: dict[str, _Table] = {}
        rows_read = 0
        now = _now()
        with db.transaction():
            seen = db.file_by_sha(digest)  # again, under the lock: another ingest may have won
            if seen is not None:
                return IngestResult(
                    Path(store), source, digest, seen, 0, (), clock.perf_counter() - start
                )
            file_id = db.add_file(digest, str(source), size, 0, now)
            for rows_read, pieces in _pieces(source, reader, options):
                for piece in pieces:
                    state = tables.get(piece.table)
                    if state is None:
                        state = tables[piece.table] = _open_table(
                            db, piece.table, options.deck, plan, strategies, now
                        )
                    work = _select(db, source, state, piece)
                    if work is not None:
                        assert state.monitor is not None and state.table_id is not None
                        stats, trace = _test(state.monitor, state.names, work)
                        _add_block(db, state.table_id, file_id, state.dtype, work, stats, trace)
                if progress is not None:
                    progress(rows_read)
            if not tables:
                raise InputError(f"{source}: no decks to ingest")
            results = []
            for state in tables.values():
                assert state.monitor is not None
                results.append(
                    _write_table(
                        db, file_id, state, state.monitor.state(), state.alarms_before, now
                    )
                )
            db.set_file_rows(file_id, rows_read)
    return IngestResult(
        Path(store), source, digest, None, rows_read, tuple(results), clock.perf_counter() - start
    )


def _read_options(table, by, time, deck, labels, fmt, chunk_rows) -> _ReadOptions:
    if table is not None and by is not None:
        raise InputError("give a table name or a column of table names, not both")
    return _ReadOptions(
        deck=load_deck(deck),
        labels=labels,
        fmt=fmt or "auto",
        chunk_rows=min(chunk_rows, BLOCK_DECKS),
        time=time,
        table=table,
        by=by,
    )


def _add_block(
    db: MonitorStore,
    table_id: int,
    file_id: int,
    dtype: str,
    work: _Work,
    stats: np.ndarray,
    trace: np.ndarray,
) -> None:
    db.add_block(
        table_id,
        work.first_deck,
        file_id,
        rows=work.rows,
        times=work.times,
        digests=work.digests,
        stats=stats,
        stats_dtype=dtype,
        trace=trace,
    )


def _write_table(
    db: MonitorStore,
    file_id: int,
    state: _Table,
    monitor_state: dict[str, Any],
    before: tuple[Any, Any],
    now: str,
) -> TableIngest:
    """The table's row after one file, the file's row range for it, and what it did."""
    assert state.table_id is not None
    db.update_table(
        state.table_id,
        decks=state.decks,
        origin=state.origin,
        last_order=state.last_order,
        last_time=state.last_time,
        state=monitor_state,
        now=now,
    )
    db.add_file_table(
        file_id, state.table_id, state.first_row or 0, state.last_row, state.added, state.known
    )
    return TableIngest(
        table=state.row.name,
        decks_added=state.added,
        decks_known=state.known,
        first_row=state.first_row or 0,
        last_row=state.last_row,
        decks_tested=state.decks,
        family_alarm=monitor_state["family_alarm"] if before[0] is None else None,
        change_alarm=monitor_state["change_alarm"] if before[1] is None else None,
        new_table=state.new_table,
    )


def _table_names(path: Path, chunk, table: str | None, by: str | None) -> np.ndarray:
    if table is not None:
        if not str(table).strip():
            raise InputError("a table name must not be empty", argument="table")
        return np.full(len(chunk), str(table), dtype=object)
    column = by or "table"
    if column not in chunk.columns:
        if by is None:
            raise InputError(
                f"{path}: no column 'table'; name the table ({{table}} NAME) or the column "
                "holding it ({by} COLUMN)",
                argument=("table", "by"),
            )
        raise InputError(f"{path}: column {column!r} is not in the log", argument="by")
    values = chunk.columns[column].astype(str).to_numpy(dtype=object)
    empty = np.flatnonzero(np.char.str_len(values.astype(str)) == 0)
    if empty.size:
        raise InputError(f"{path} row {int(chunk.rows[empty[0]])}: no table in column {column!r}")
    return values


def _open_table(
    db: MonitorStore,
    name: str,
    definition: DeckDefinition,
    plan: MonitorPlan | None,
    strategies: tuple[str, ...],
    now: str,
    *,
    create: bool = True,
    probes: dict[Any, Monitor] | None = None,
) -> _Table:
    """A table of the store, checked against this ingest's deck and plan. A table the store
    does not hold is created (``create``) or only described, to be created when the file
    that first holds it is committed; with ``create`` it also gets its :class:`Monitor`."""
    row = db.table(name)
    new = row is None
    if row is None:
        chosen = plan or MonitorPlan()
        key = (tuple(definition.cards), tuple(strategies))
        probe = None if probes is None else probes.get(key)
        if probe is None:
            probe = Monitor(_context(definition, strategies), chosen)
            if probes is not None:
                probes[key] = probe
        dtype = "i4" if any(v == np.int32 for v in probe.dtypes.values()) else "i2"
        described = dict(
            deck=_deck_json(definition),
            reference="previous",
            plan=chosen.as_json(),
            columns={"statistics": list(probe.dtypes), "dtype": dtype, "strategies": strategies},
        )
        if create:
            table_id = db.create_table(name, **described, now=now)
            row = db.table(name)
            assert row is not None and row.id == table_id
        else:
            row = TableRow(
                id=-1,
                name=name,
                **json.loads(json.dumps(described)),  # as the store gives it back
                decks=0,
                origin_time=None,
                origin_digest=None,
                last_order=None,
                last_time=None,
                state=None,
                created_at=now,
                updated_at=now,
            )
    stored_deck = _deck_from_json(row.deck)
    if tuple(stored_deck.cards) != tuple(definition.cards):
        raise InputError(
            f"table {name!r} is monitored with the deck {stored_deck.name!r}; this log was read "
            f"with {definition.name!r}",
            argument="deck",
        )
    stored_plan = MonitorPlan(**row.plan)
    if plan is not None and plan != stored_plan:
        raise InputError(
            f"table {name!r} is monitored at alpha {stored_plan.alpha}, arl "
            f"{stored_plan.arl:g}, confidence {stored_plan.confidence} since it was created; "
            "levels cannot change once decks were seen (start a new store or table)",
            argument=("alpha", "arl", "confidence"),
        )
    monitor = None
    if create:
        context = _context(stored_deck, tuple(row.columns["strategies"]))
        monitor = Monitor(context, stored_plan, row.state)
    out = _Table(
        row=row,
        table_id=None if new and not create else row.id,
        monitor=monitor,
        names=tuple(row.columns["statistics"]),
        dtype=row.columns["dtype"],
        last_order=row.last_order,
        last_time=row.last_time,
        origin=None if row.origin_time is None else (row.origin_time, row.origin_digest),
        stored_last_time=row.last_time,
        decks=row.decks,
        new_table=new,
    )
    if monitor is not None:
        out.alarms_before = (monitor.family_alarm, monitor.change_alarm)
    return out


def _known_mask(
    db: MonitorStore,
    path: Path,
    state: _Table,
    times: np.ndarray,
    digests: np.ndarray,
    rows: np.ndarray,
) -> np.ndarray:
    """Which decks the store already holds; errors for decks out of time order."""
    limit = state.stored_last_time
    if limit is None:
        return np.zeros(times.size, dtype=bool)
    old = times <= limit
    if not old.any():
        return old
    if state.known_pairs is None:
        low = int(times[old].min())
        if state.table_id is not None:
            kt, kd = db.keys_between(state.table_id, low, limit)
        else:
            kt = kd = np.zeros(0, dtype=np.int64)
        if state.origin is not None and low <= state.origin[0] <= limit:
            kt = np.r_[state.origin[0], kt]
            kd = np.r_[state.origin[1], kd]
        for _, bt, bd in state.batch_keys or ():
            keep = (bt >= low) & (bt <= limit)
            kt = np.r_[kt, bt[keep]]
            kd = np.r_[kd, bd[keep]]
        state.known_pairs = set(zip(kt.tolist(), kd.tolist(), strict=True))
    pairs = state.known_pairs
    known = old.copy()
    for k in np.flatnonzero(old):
        known[k] = (int(times[k]), int(digests[k])) in pairs
    stray = np.flatnonzero(old & ~known)
    if stray.size:
        k = int(stray[0])
        raise InputError(
            f"{path} row {int(rows[k])}: table {state.row.name!r} already holds decks up to "
            f"{_time_text(limit)}, and this deck ({_time_text(int(times[k]))}) is not among "
            "them; a log must continue a table's decks in time order"
        )
    return known


def _select(db: MonitorStore, path: Path, state: _Table, piece: _Piece) -> _Work | None:
    """The decks of a piece the store does not hold yet, checked for time order, with the
    deck each follows; moves the table's bookkeeping (last deck, counts) past them. The
    monitor itself is not touched (:func:`_test` runs it on the returned work)."""
    decks, rows, times, digests = piece.decks, piece.rows, piece.times, piece.digests
    if state.first_row is None:
        state.first_row = int(rows[0])
    state.last_row = int(rows[-1])
    known = _known_mask(db, path, state, times, digests, rows)
    if known.any():
        last_known = int(np.flatnonzero(known)[-1])
        if state.seen_new or not known[: last_known + 1].all():
            raise InputError(
                f"{path} row {int(rows[last_known])}: this deck of table {state.row.name!r} is "
                "already stored but comes after decks that are not; the file does not "
                "continue the table's log"
            )
        state.known += int(known.sum())
    fresh = ~known
    if not fresh.any():
        return None
    decks = decks[fresh]
    rows = rows[fresh]
    times = times[fresh]
    digests = digests[fresh]
    chain = times if state.last_time is None else np.r_[state.last_time, times]
    back = np.flatnonzero(np.diff(chain) < 0)
    if back.size:
        k = int(back[0]) + (0 if state.last_time is not None else 1)
        raise InputError(
            f"{path} row {int(rows[k])}: the time of table {state.row.name!r} goes back "
            f"({_time_text(int(times[k]))}); sort the log by time (it is never re-ordered)"
        )
    state.seen_new = True
    if state.last_order is None:
        # the table's very first deck is only the reference of the next one
        state.origin = (int(times[0]), int(digests[0]))
        state.last_order = decks[0].astype(np.int16)
        state.last_time = int(times[0])
        state.added += 1
        decks, rows, times, digests = decks[1:], rows[1:], times[1:], digests[1:]
        if decks.shape[0] == 0:
            return None
    work = _Work(decks, state.last_order, rows, times, digests, state.decks + 1)
    count = int(decks.shape[0])
    if state.batch_keys is not None:
        state.batch_keys.append((state.file_number, times, digests))
    state.last_order = decks[-1].astype(np.int16)
    state.last_time = int(times[-1])
    state.added += count
    state.decks += count
    return work


def _test(monitor: Monitor, names: tuple[str, ...], work: _Work) -> tuple[np.ndarray, np.ndarray]:
    """Feed a table's new decks to its monitor: (per-deck statistics in the stored column
    order, per-deck trace: family log e-value and largest CUSUM)."""
    decks, previous = work.decks, work.previous
    # relative[t, i] = position in deck t-1 of the card at position i of deck t
    refs = np.concatenate([previous[None, :], decks[:-1]]).astype(np.intp)
    k, n = decks.shape
    inverse = np.empty((k, n), dtype=np.int16)
    inverse[np.arange(k)[:, None], refs] = np.arange(n, dtype=np.int16)
    relative = np.take_along_axis(inverse, decks.astype(np.intp), axis=1)
    absolute = decks.astype(np.int16)
    trace = monitor.update(relative, absolute, previous)
    stats = np.stack([trace.values[n] for n in names], axis=1)
    return stats, np.stack([trace.family_log_e, trace.detector], axis=1)


# ------------------------------------------------------------------------------ many logs


def ingest_logs(
    store: str | os.PathLike[str],
    paths: Sequence[str | os.PathLike[str]],
    *,
    table: str | None = None,
    by: str | None = None,
    time: str = "recorded_at",
    deck: str | os.PathLike[str] | DeckDefinition | None = None,
    labels: str = "codes",
    fmt: str | None = None,
    plan: MonitorPlan | None = None,
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES,
    chunk_rows: int = BLOCK_DECKS,
    engine: str = "single",
    scheduler: str | None = None,
    workers: int | None = None,
    processes: bool = True,
    progress: Callable[[int], None] | None = None,
) -> FleetIngest:
    """Ingest many logs, in the order given, each file in one transaction.

    With ``engine="single"`` the files are ingested one after another by
    :func:`ingest_log`. With ``engine="dask"`` the work runs on a Dask cluster (an existing
    one at ``scheduler``, else a local one of ``workers`` workers, as processes unless
    ``processes`` is False): every file is read, validated and split by table as its own
    task, several files at once; each table's decks of a file are then tested (statistics,
    e-processes, change detectors) as one task that waits for the same table's task of the
    file before, so different tables run side by side while each table sees its decks in
    time order. Only this process writes the store, one transaction per file, in the order
    given; the store ends exactly as after ingesting the files one by one (same decks,
    values, states, alarms and row ranges). A file whose reading or checks fail leaves the
    files before it committed and raises, as the one-by-one ingest would.

    ``progress`` is called with the bytes of logs done so far. Other parameters as for
    :func:`ingest_log`.

    Returns
    -------
    FleetIngest
        One :class:`IngestResult` per file, in order, and where the work ran.
    """
    start = clock.perf_counter()
    sources = [Path(p) for p in paths]
    if not sources:
        raise InputError("no logs to ingest")
    for source in sources:
        if not source.is_file():
            raise InputError(f"cannot read {source}: no such file")
    if engine not in ("single", "dask"):
        raise InputError(f"engine must be single or dask, got {engine!r}", argument="engine")
    kwargs: dict[str, Any] = dict(
        table=table,
        by=by,
        time=time,
        deck=deck,
        labels=labels,
        fmt=fmt,
        plan=plan,
        strategies=strategies,
        chunk_rows=chunk_rows,
    )
    if engine == "single":
        results = []
        done = 0
        for source in sources:
            results.append(ingest_log(store, source, **kwargs))  # type: ignore[arg-type]
            done += source.stat().st_size
            if progress is not None:
                progress(done)
        return FleetIngest(tuple(results), "single process", {}, clock.perf_counter() - start)
    from shufflecheck.engines.dask import session

    options = _read_options(table, by, time, deck, labels, fmt, chunk_rows)
    with session(scheduler, workers, processes) as cluster:
        results = _ingest_on_cluster(
            cluster, Path(store), sources, options, plan, tuple(strategies), progress
        )
        peaks = cluster.worker_peak_mb()
        where = cluster.cluster.describe()
    return FleetIngest(tuple(results), where, peaks, clock.perf_counter() - start)


@dataclass(frozen=True)
class FleetIngest:
    """Many logs ingested: one result per file in the order given, where the work ran
    (``engine``), each Dask worker's peak resident memory in MB, and the wall time."""

    files: tuple[IngestResult, ...]
    engine: str
    worker_peak_mb: dict[str, float]
    seconds: float

    def as_json(self) -> dict[str, Any]:
        return {
            "engine": self.engine,
            "files": [r.as_json() for r in self.files],
            "decks_added": sum(r.decks_added for r in self.files),
            "worker_peak_mb": self.worker_peak_mb,
            "seconds": self.seconds,
        }


def _error_state(exc: InputError) -> tuple[str, tuple[str, ...], str]:
    return exc.template, exc.arguments, exc.without_content


def _error_from(state: tuple[str, tuple[str, ...], str]) -> InputError:
    template, arguments, without = state
    return InputError(template, argument=arguments or None, without_content=without)


def _read_task(task: tuple[Path, _ReadOptions, frozenset[str]]) -> dict[str, Any]:
    """On a worker: hash a log and, unless the store holds that file, read and validate
    it, split by table. Errors come back as data (rebuilt as :class:`InputError`)."""
    source, options, stored = task
    out: dict[str, Any] = {"chunks": [], "rows": 0, "error": None}
    try:
        out["sha256"] = sha256_file(source)
        out["bytes"] = source.stat().st_size
        if out["sha256"] in stored:
            return out
        reader = _open_reader(source, options)
        for rows_read, pieces in _pieces(source, reader, options):
            out["rows"] = rows_read
            out["chunks"].append(pieces)
    except InputError as exc:
        out["error"] = _error_state(exc)
    return out


def _update_task(
    before: dict[str, Any], spec: tuple[Any, ...], works: list[_Work]
) -> dict[str, Any]:
    """On a worker: one table's new decks of one file through its monitor, from the state
    the table's previous task (or the store) left."""
    deck_json, strategies, plan_json, names = spec
    context = _context(_deck_from_json(deck_json), tuple(strategies))
    monitor = Monitor(context, MonitorPlan(**plan_json), before["state"])
    blocks = [_test(monitor, names, work) for work in works]
    return {"state": monitor.state(), "blocks": blocks}


@dataclass
class _FileJob:
    """One file between its checks and its commit."""

    source: Path
    sha256: str
    size: int
    rows: int = 0
    already: bool = False
    now: str = ""
    number: int = 0  # the file's place in the run
    #: tables in the order they first appear, with what the commit needs of each
    tables: dict[str, tuple[_Table, dict[str, Any], Any]] = field(default_factory=dict)
    #: (table, work) in file order, the order the one-by-one ingest writes blocks
    works: list[tuple[str, _Work]] = field(default_factory=list)
    #: per table, what the store must hold when the file is committed (decks tested, last
    #: time), as the checks of this file found it
    expect: dict[str, tuple[int, int | None]] = field(default_factory=dict)


def _ingest_on_cluster(
    cluster,
    store: Path,
    sources: list[Path],
    options: _ReadOptions,
    plan: MonitorPlan | None,
    strategies: tuple[str, ...],
    progress: Callable[[int], None] | None,
) -> list[IngestResult]:
    from collections import deque

    start = clock.perf_counter()
    results: list[IngestResult] = []
    with MonitorStore(store) as db:
        stored = frozenset(f["sha256"] for f in db.files())
        ahead = max(2, 2 * cluster.cluster.workers)
        reads: deque = deque()
        queued = 0

        def refill() -> None:
            nonlocal queued
            while queued < len(sources) and len(reads) < ahead:
                reads.append(cluster.submit(_read_task, (sources[queued], options, stored)))
                queued += 1

        tables: dict[str, _Table] = {}
        chain: dict[str, Any] = {}  # table -> its last task (or the stored state)
        committed: dict[str, dict[str, Any] | None] = {}  # table -> state in the store
        probes: dict[Any, Monitor] = {}
        pending: deque[_FileJob] = deque()
        seen: set[str] = set()
        done_bytes = 0

        def commit(job: _FileJob) -> None:
            nonlocal done_bytes
            results.append(_commit(db, job, cluster, committed, start))
            done_bytes += job.size
            if progress is not None:
                progress(done_bytes)

        def flush(block: bool) -> None:
            while pending and (
                block or all(cluster.done(t[2]) for t in pending[0].tables.values())
            ):
                commit(pending.popleft())

        refill()
        for number, source in enumerate(sources):
            read = cluster.result(reads.popleft())
            refill()
            if read["error"] is not None and "sha256" not in read:
                flush(True)
                raise _error_from(read["error"])
            job = _FileJob(source, read["sha256"], read["bytes"], read["rows"], now=_now())
            job.number = number
            if read["sha256"] in stored or read["sha256"] in seen:
                job.already = True
                pending.append(job)
                flush(False)
                continue
            seen.add(read["sha256"])
            try:
                _plan_file(
                    db,
                    job,
                    read,
                    tables,
                    chain,
                    committed,
                    probes,
                    options,
                    plan,
                    strategies,
                    cluster,
                )
            except InputError:
                flush(True)
                raise
            pending.append(job)
            flush(False)
        flush(True)
    return results


def _plan_file(
    db: MonitorStore,
    job: _FileJob,
    read: dict[str, Any],
    tables: dict[str, _Table],
    chain: dict[str, Any],
    committed: dict[str, dict[str, Any] | None],
    probes: dict[Any, Monitor],
    options: _ReadOptions,
    plan: MonitorPlan | None,
    strategies: tuple[str, ...],
    cluster,
) -> None:
    """The checks of one file on this process (which decks are new, time order), exactly
    as :func:`ingest_log` makes them, and one test task per table of the file."""
    here: dict[str, _Table] = {}
    for pieces in read["chunks"]:
        for piece in pieces:
            state = here.get(piece.table)
            if state is None:
                state = tables.get(piece.table)
                if state is not None:
                    state.start_file()
                if state is None:
                    state = tables[piece.table] = _open_table(
                        db,
                        piece.table,
                        options.deck,
                        plan,
                        strategies,
                        job.now,
                        create=False,
                        probes=probes,
                    )
                    state.batch_keys = []
                    chain[piece.table] = {"state": state.row.state}
                    committed[piece.table] = state.row.state
                here[piece.table] = state
                state.file_number = job.number
                job.expect[piece.table] = (state.decks, state.last_time)
            work = _select(db, job.source, state, piece)
            if work is not None:
                job.works.append((piece.table, work))
    if read["error"] is not None:
        raise _error_from(read["error"])
    if not here:
        raise InputError(f"{job.source}: no decks to ingest")
    for name, state in here.items():
        row = state.row
        spec = (row.deck, tuple(row.columns["strategies"]), row.plan, state.names)
        works = [w for t, w in job.works if t == name]
        task = cluster.submit(_update_task, chain[name], spec, works)
        chain[name] = task
        snapshot = {
            "decks": state.decks,
            "origin": state.origin,
            "last_order": state.last_order,
            "last_time": state.last_time,
            "first_row": state.first_row,
            "last_row": state.last_row,
            "added": state.added,
            "known": state.known,
        }
        job.tables[name] = (state, snapshot, task)
    # drop the decks themselves: the tasks have them; the commit needs rows, times, digests
    job.works = [
        (t, _Work(w.decks[:0], w.previous[:0], w.rows, w.times, w.digests, w.first_deck))
        for t, w in job.works
    ]


def _commit(
    db: MonitorStore,
    job: _FileJob,
    cluster,
    committed: dict[str, dict[str, Any] | None],
    start: float,
) -> IngestResult:
    """Write one file's results in one transaction (this process is the store's only
    writer); the tables must be as the checks of this file found them."""
    if job.already:
        seen = db.file_by_sha(job.sha256)
        return IngestResult(
            db.path, job.source, job.sha256, seen, 0, (), clock.perf_counter() - start
        )
    outputs = {name: cluster.result(task) for name, (_, _, task) in job.tables.items()}
    with db.transaction():
        if db.file_by_sha(job.sha256) is not None:
            raise _changed(db, job)
        file_id = db.add_file(job.sha256, str(job.source), job.size, 0, job.now)
        for name, (state, snapshot, _) in job.tables.items():
            row = db.table(name)
            decks, last_time = job.expect[name]
            if (row is None) != (state.table_id is None) or (
                row is not None and (row.decks, row.last_time) != (decks, last_time)
            ):
                raise _changed(db, job)
            if state.table_id is None:
                state.table_id = db.create_table(
                    name,
                    deck=state.row.deck,
                    reference=state.row.reference,
                    plan=state.row.plan,
                    columns=state.row.columns,
                    now=job.now,
                )
                snapshot["new_table"] = True
        blocks = {name: iter(out["blocks"]) for name, out in outputs.items()}
        for name, work in job.works:
            stats, trace = next(blocks[name])
            state = job.tables[name][0]
            assert state.table_id is not None
            _add_block(db, state.table_id, file_id, state.dtype, work, stats, trace)
        tables = []
        for name, (state, snapshot, _) in job.tables.items():
            before = committed[name] or {}
            view = _Table(
                row=state.row,
                table_id=state.table_id,
                monitor=None,
                names=state.names,
                dtype=state.dtype,
                last_order=snapshot["last_order"],
                last_time=snapshot["last_time"],
                origin=snapshot["origin"],
                stored_last_time=None,
                decks=snapshot["decks"],
                added=snapshot["added"],
                known=snapshot["known"],
                first_row=snapshot["first_row"],
                last_row=snapshot["last_row"],
                new_table=bool(snapshot.get("new_table")),
            )
            after = outputs[name]["state"]
            alarms = (before.get("family_alarm"), before.get("change_alarm"))
            tables.append(_write_table(db, file_id, view, after, alarms, job.now))
            committed[name] = after
            # the store holds this file's decks now: later checks find them there
            assert state.batch_keys is not None
            state.batch_keys = [k for k in state.batch_keys if k[0] > job.number]
        db.set_file_rows(file_id, job.rows)
    return IngestResult(
        db.path, job.source, job.sha256, None, job.rows, tuple(tables), clock.perf_counter() - start
    )


def _changed(db: MonitorStore, job: _FileJob) -> InputError:
    return InputError(
        f"store {db.path} changed while {job.source} was being ingested (another ingest "
        "wrote to it); nothing of this file was added: ingest it again"
    )


# ------------------------------------------------------------------------------ status


def evidence_words(log_e: float, alpha: float) -> str:
    """The family evidence in plain words (Ville's inequality makes ``1/E`` a bound)."""
    e = math.exp(min(log_e, 700.0))
    if log_e >= math.log(1 / alpha):
        return (
            f"alarm: evidence {_e_text(log_e)} has reached the alarm level {1 / alpha:g}; a "
            f"uniformly random machine gets this far with probability at most {alpha:g}"
        )
    if e <= 1:
        return (
            f"no evidence against a random machine (e-value {_e_text(log_e)}; the alarm level "
            f"is {1 / alpha:g})"
        )
    return (
        f"evidence {_e_text(log_e)} against a random machine: a random machine ever reaches "
        f"this with probability at most {1 / e:.2g}; the alarm level is {1 / alpha:g}"
    )


def _e_text(log_e: float) -> str:
    if log_e > 30 * _LN10:
        return f"10^{log_e / _LN10:.0f}"
    e = math.exp(log_e)
    return f"{e:.3g}"


@dataclass(frozen=True)
class TableStatus:
    """Everything the dashboard shows about one table."""

    name: str
    decks: int
    files: int
    created_at: str
    last_ingest: str
    first_time: str | None
    last_time: str | None
    plan: MonitorPlan
    family_log_e: float
    max_family_log_e: float
    evidence: str
    family_alarm: dict[str, Any] | None
    per_statistic: dict[str, float]
    detector_level: float
    detector_threshold: float
    detector_leader: str
    change_alarm: dict[str, Any] | None
    change_at_alarm: ChangeSet | None
    change_now: ChangeSet | None
    change_rows: dict[str, Any] | None
    timeline: dict[str, list]
    retrospective: BatteryResult | None
    retrospective_rows: dict[str, Any] | None

    def as_json(self) -> dict[str, Any]:
        def cs(found: ChangeSet | None) -> dict[str, Any] | None:
            if found is None:
                return None
            return {
                **found.__dict__,
                "kind": "estimate",
                "method": "confidence set under the working model that the decks after the "
                "change follow the alarming alternative; the side before the change holds "
                "without it (Ville); coverage measured by simulation (docs/monitoring.md)",
            }

        retro = None
        if self.retrospective is not None:
            r = self.retrospective
            retro = {
                "decks": r.decks,
                "flagged": r.flagged,
                "alpha": r.alpha,
                "strongest": min(r.tests, key=lambda t: t.log10_p_adjusted).name,
                "log10_p_adjusted": min(t.log10_p_adjusted for t in r.tests),
                "since_when": None
                if r.since_when is None
                else {"deck": r.since_when.start, "test": r.since_when.test, "kind": "estimate"},
                "rows": self.retrospective_rows,
                "note": "one look at all stored decks (fixed-sample Holm battery); valid for "
                "a single look, not for repeated reading",
            }
        return {
            "table": self.name,
            "decks": self.decks,
            "files": self.files,
            "created_at": self.created_at,
            "last_ingest": self.last_ingest,
            "first_deck_time": self.first_time,
            "last_deck_time": self.last_time,
            "plan": self.plan.as_json(),
            "evidence": {
                "e_value": _json_e(self.family_log_e),
                "log10_e_value": self.family_log_e / _LN10,
                "max_log10_e_value": self.max_family_log_e / _LN10,
                "alarm_level": 1 / self.plan.alpha,
                "words": self.evidence,
                "alarm": self.family_alarm,
                "kind": "exact",
                "method": "average of betting e-processes against exact per-deck laws",
                "guarantee": {
                    "kind": "bound",
                    "statement": "P(ever reaching 1/alpha | uniformly random machine) <= "
                    "alpha, however often read (Ville's inequality)",
                },
                "per_statistic_log10_e": {k: v / _LN10 for k, v in self.per_statistic.items()},
            },
            "change": {
                "cusum_now": self.detector_level,
                "cusum_alarm_level": self.detector_threshold,
                "leading_statistic": self.detector_leader,
                "alarm": self.change_alarm,
                "arl_lower_bound": self.plan.arl,
                "set_at_alarm": cs(self.change_at_alarm),
                "set_now": cs(self.change_now),
                "set_rows": self.change_rows,
                "kind": "exact",
                "method": "CUSUM e-detectors on tilted exact laws",
                "guarantee": {
                    "kind": "bound",
                    "statement": "mean number of decks to a false change alarm on a uniformly "
                    "random machine >= arl_lower_bound",
                },
            },
            "timeline": self.timeline,
            "retrospective": retro,
        }


def _json_e(log_e: float) -> float | str:
    return math.exp(log_e) if log_e < 700 else "inf"


@dataclass(frozen=True)
class FleetStatus:
    """Every table of a store."""

    store: Path
    schema_version: int
    generated_at: str
    tables: tuple[TableStatus, ...]

    def as_json(self) -> dict[str, Any]:
        from shufflecheck.common.cautions import caution

        return {
            "store": str(self.store),
            "schema_version": self.schema_version,
            "generated_at": self.generated_at,
            "tables": [t.as_json() for t in self.tables],
            "caution": caution("the monitored decks"),
        }


def _downsample(decks: np.ndarray, trace: np.ndarray, points: int) -> dict[str, list]:
    if decks.size == 0:
        return {"deck": [], "log10_e": [], "cusum": []}
    if decks.size <= points:
        pick = np.arange(decks.size)
    else:
        pick = np.unique(np.r_[np.linspace(0, decks.size - 1, points).astype(int)])
    # keep the running maximum of the detector inside each bin (peaks must not vanish)
    cusum = trace[:, 1].astype(float)
    bins = np.searchsorted(pick, np.arange(decks.size), side="left")
    peak = np.full(pick.size, -np.inf)
    np.maximum.at(peak, np.minimum(bins, pick.size - 1), cusum)
    return {
        "deck": decks[pick].tolist(),
        "log10_e": (trace[pick, 0].astype(float) / _LN10).round(4).tolist(),
        "cusum": np.round(peak, 4).tolist(),
    }


def table_status(
    db: MonitorStore, row: TableRow, *, points: int = 600, retrospective: bool = True
) -> TableStatus:
    """The status of one stored table (see :class:`TableStatus`); ``retrospective`` runs
    the one-look battery on all stored decks too (for comparison)."""
    plan = MonitorPlan(**row.plan)
    deck = _deck_from_json(row.deck)
    context = _context(deck, tuple(row.columns["strategies"]))
    monitor = Monitor(context, plan, row.state)
    names = tuple(row.columns["statistics"])
    stored = db.decks(row.id, len(names), row.columns["dtype"])
    decks = np.arange(1, stored.rows.size + 1)
    files = db.files(row.id)
    paths = {int(f["id"]): str(f["path"]) for f in files}
    change_at = change_now = None
    change_rows = None
    if monitor.change_alarm is not None:
        column = stored.stats[:, names.index(monitor.change_alarm["statistic"])]
        change_at = monitor.change_set(column, upto=int(monitor.change_alarm["deck"]))
        change_now = monitor.change_set(column)
        change_rows = {
            "low": _place(stored, change_now.low, paths),
            "high": _place(stored, change_now.high, paths),
            "best": _place(stored, change_now.best, paths),
        }
    retro = None
    retro_rows = None
    if stored.rows.size and retrospective:
        retro = _retrospective(monitor, names, stored.stats, row.state or {}, plan.alpha)
        if retro.since_when is not None:
            retro_rows = _place(stored, retro.since_when.start, paths)
    lead_name, _, level = monitor.detector_level() if monitor.decks else ("", 0, 0.0)
    return TableStatus(
        name=row.name,
        decks=monitor.decks,
        files=len(paths),
        created_at=row.created_at,
        last_ingest=row.updated_at,
        first_time=_time_text(int(stored.times[0])) if stored.times.size else None,
        last_time=None if row.last_time is None else _time_text(row.last_time),
        plan=plan,
        family_log_e=monitor.family_log_e,
        max_family_log_e=monitor.max_family_log_e,
        evidence=evidence_words(monitor.family_log_e, plan.alpha)
        if monitor.family_alarm is None
        else evidence_words(max(monitor.max_family_log_e, math.log(1 / plan.alpha)), plan.alpha),
        family_alarm=monitor.family_alarm,
        per_statistic={n: monitor.log_e(n) for n in monitor.names},
        detector_level=level,
        detector_threshold=monitor.threshold,
        detector_leader=lead_name,
        change_alarm=monitor.change_alarm,
        change_at_alarm=change_at,
        change_now=change_now,
        change_rows=change_rows,
        timeline=_downsample(decks, stored.trace, points),
        retrospective=retro,
        retrospective_rows=retro_rows,
    )


def _place(stored, deck: int, paths: dict[int, str]) -> dict[str, Any]:
    """Where a deck came from: its file, row and time."""
    k = int(deck) - 1
    return {
        "deck": int(deck),
        "file": paths.get(int(stored.file_ids[k]), ""),
        "row": int(stored.rows[k]),
        "time": _time_text(int(stored.times[k])),
    }


def _retrospective(monitor: Monitor, names, stats, state, alpha) -> BatteryResult:
    """The fixed-sample battery on all stored decks, from the stored per-deck values."""
    laws = monitor.laws
    hist = {}
    series = {}
    for j, name in enumerate(names):
        x = stats[:, j].astype(np.int64)
        x = x[x >= 0]
        hist[name] = np.bincount(x, minlength=laws[name].high + 1)
        if name != "repeat-positions":
            series[name] = [x]
    statistics = tuple(
        s for s in battery_statistics(monitor.context) if s.name in laws or s.shape == "positions"
    )
    positions = np.asarray(state.get("position", {}).get("counts"), dtype=np.int64)
    decks = int(stats.shape[0])
    return run_battery(
        Tallies(decks, hist, positions, series),
        statistics,
        laws,
        alpha=alpha,
        position_method="auto",
        rng=np.random.default_rng(0),
    )


def fleet_status(
    store: str | os.PathLike[str], *, points: int = 600, retrospective: bool = True
) -> FleetStatus:
    """Every table of a store, for the dashboard and ``--json`` (``points``: timeline
    points per table; ``retrospective``: include the one-look battery of all decks)."""
    with MonitorStore(store, create=False) as db:
        version = int(db.meta("schema_version") or 0)
        tables = tuple(
            table_status(db, row, points=points, retrospective=retrospective) for row in db.tables()
        )
    return FleetStatus(Path(store), version, _now(), tables)
