"""The monitoring store: one SQLite file per fleet, no server (standard library ``sqlite3``).

Schema version 1 (docs/monitoring.md describes every column)::

    meta(key PRIMARY KEY, value)                    schema_version, created_at, created_by
    monitored_tables(id, name UNIQUE, deck, reference, plan, columns, decks,
                     origin_time, origin_digest, last_order, last_time, state,
                     created_at, updated_at)
    ingested_files(id, sha256 UNIQUE, path, bytes, rows, ingested_at)
    file_tables(file_id, table_id, first_row, last_row, decks_added, decks_known)
    deck_blocks(table_id, first_deck, count, file_id, first_time, last_time,
                rows, times, digests, stats, trace)   PRIMARY KEY (table_id, first_deck)

Arrays are stored as little-endian raw bytes: ``rows`` int64 (the file's row numbers),
``times`` int64 (nanoseconds since 1970-01-01 UTC), ``digests`` int64 (a 64-bit fingerprint
of each deck's order), ``stats`` a ``count x K`` matrix of the statistics named in the
table's ``columns`` (dtype there too), ``trace`` float32 ``count x 2`` (family log
e-value, largest detector CUSUM). ``state`` is the monitoring state as JSON.

Every ingest runs in one transaction (``BEGIN IMMEDIATE`` ... ``COMMIT``, rollback journal,
``synchronous=FULL``): a process killed mid-ingest leaves the file as it was before, and
SQLite rolls the hot journal back at the next open. The store never reads or writes the
logs themselves.
"""

from __future__ import annotations

import contextlib
import json
import os
import sqlite3
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from shufflecheck.common.errors import InputError

__all__ = ["SCHEMA_VERSION", "BlockRows", "MonitorStore", "TableRow"]

#: Version of the schema this code writes and reads.
SCHEMA_VERSION = 1

_SCHEMA = """
CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE monitored_tables (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL UNIQUE,
    deck TEXT NOT NULL,
    reference TEXT NOT NULL,
    plan TEXT NOT NULL,
    columns TEXT NOT NULL,
    decks INTEGER NOT NULL DEFAULT 0,
    origin_time INTEGER,
    origin_digest INTEGER,
    last_order BLOB,
    last_time INTEGER,
    state TEXT NOT NULL,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE TABLE ingested_files (
    id INTEGER PRIMARY KEY,
    sha256 TEXT NOT NULL UNIQUE,
    path TEXT NOT NULL,
    bytes INTEGER NOT NULL,
    rows INTEGER NOT NULL,
    ingested_at TEXT NOT NULL
);
CREATE TABLE file_tables (
    file_id INTEGER NOT NULL REFERENCES ingested_files(id),
    table_id INTEGER NOT NULL REFERENCES monitored_tables(id),
    first_row INTEGER NOT NULL,
    last_row INTEGER NOT NULL,
    decks_added INTEGER NOT NULL,
    decks_known INTEGER NOT NULL,
    PRIMARY KEY (file_id, table_id)
);
CREATE TABLE deck_blocks (
    table_id INTEGER NOT NULL REFERENCES monitored_tables(id),
    first_deck INTEGER NOT NULL,
    count INTEGER NOT NULL,
    file_id INTEGER NOT NULL REFERENCES ingested_files(id),
    first_time INTEGER NOT NULL,
    last_time INTEGER NOT NULL,
    rows BLOB NOT NULL,
    times BLOB NOT NULL,
    digests BLOB NOT NULL,
    stats BLOB NOT NULL,
    trace BLOB NOT NULL,
    PRIMARY KEY (table_id, first_deck)
);
CREATE INDEX deck_blocks_time ON deck_blocks (table_id, last_time);
"""


@dataclass(frozen=True)
class TableRow:
    """One monitored table as stored (JSON columns already parsed)."""

    id: int
    name: str
    deck: dict[str, Any]
    reference: str
    plan: dict[str, Any]
    columns: dict[str, Any]
    decks: int
    origin_time: int | None
    origin_digest: int | None
    last_order: np.ndarray | None
    last_time: int | None
    state: dict[str, Any] | None
    created_at: str
    updated_at: str


@dataclass(frozen=True)
class BlockRows:
    """Decks of one table read back from its blocks, in time order."""

    rows: np.ndarray
    times: np.ndarray
    digests: np.ndarray
    stats: np.ndarray
    trace: np.ndarray
    file_ids: np.ndarray


def _blob(array: np.ndarray, dtype: str) -> bytes:
    return np.ascontiguousarray(array, dtype=np.dtype(dtype).newbyteorder("<")).tobytes()


class MonitorStore:
    """A monitoring store file (see the module notes). Use as a context manager."""

    def __init__(self, path: str | os.PathLike[str], *, create: bool = True) -> None:
        self.path = Path(path)
        if self.path.is_dir():
            raise InputError(f"store {self.path} is a folder, not a store file", argument="store")
        exists = self.path.exists()
        if not exists and not create:
            raise InputError(f"store {self.path} does not exist", argument="store")
        if not exists and not self.path.parent.exists():
            raise InputError(f"cannot create store {self.path}: its folder does not exist")
        try:
            self._db = sqlite3.connect(self.path, timeout=60.0, isolation_level=None)
            self._db.execute("PRAGMA journal_mode=DELETE")
            self._db.execute("PRAGMA synchronous=FULL")
            self._db.execute("PRAGMA foreign_keys=ON")
            found = self._db.execute(
                "SELECT name FROM sqlite_master WHERE type='table' AND name='meta'"
            ).fetchone()
        except sqlite3.DatabaseError as exc:
            raise InputError(f"store {self.path} is not a monitoring store: {exc}") from None
        if found is None:
            if exists and self.path.stat().st_size > 0:
                raise InputError(f"store {self.path} is an SQLite file without a monitoring schema")
            self._create()
        version = self.meta("schema_version")
        if version != str(SCHEMA_VERSION):
            raise InputError(
                f"store {self.path} has schema version {version}; this version of "
                f"shufflecheck reads version {SCHEMA_VERSION}"
            )

    def _create(self) -> None:
        from datetime import datetime, timezone

        from shufflecheck.common.version import __version__

        with self.transaction():
            for statement in _SCHEMA.split(";"):
                if statement.strip():
                    self._db.execute(statement)
            now = datetime.now(timezone.utc).isoformat(timespec="seconds")
            self._db.executemany(
                "INSERT INTO meta (key, value) VALUES (?, ?)",
                [
                    ("schema_version", str(SCHEMA_VERSION)),
                    ("created_at", now),
                    ("created_by", f"shufflecheck {__version__}"),
                ],
            )

    # ------------------------------------------------------------------ basics

    def close(self) -> None:
        self._db.close()

    def __enter__(self) -> MonitorStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @contextlib.contextmanager
    def transaction(self) -> Iterator[None]:
        """One atomic unit of work: everything inside is committed together or not at all."""
        if self._db.in_transaction:
            yield
            return
        self._db.execute("BEGIN IMMEDIATE")
        try:
            yield
        except BaseException:
            self._db.execute("ROLLBACK")
            raise
        self._db.execute("COMMIT")

    def meta(self, key: str) -> str | None:
        row = self._db.execute("SELECT value FROM meta WHERE key = ?", (key,)).fetchone()
        return None if row is None else str(row[0])

    # ------------------------------------------------------------------ tables

    _TABLE_COLUMNS = (
        "id, name, deck, reference, plan, columns, decks, origin_time, origin_digest, "
        "last_order, last_time, state, created_at, updated_at"
    )

    def _table(self, row: tuple) -> TableRow:
        order = None if row[9] is None else np.frombuffer(row[9], dtype="<i2").astype(np.int16)
        return TableRow(
            id=int(row[0]),
            name=str(row[1]),
            deck=json.loads(row[2]),
            reference=str(row[3]),
            plan=json.loads(row[4]),
            columns=json.loads(row[5]),
            decks=int(row[6]),
            origin_time=row[7],
            origin_digest=row[8],
            last_order=order,
            last_time=row[10],
            state=json.loads(row[11]) if row[11] else None,
            created_at=str(row[12]),
            updated_at=str(row[13]),
        )

    def table(self, name: str) -> TableRow | None:
        row = self._db.execute(
            f"SELECT {self._TABLE_COLUMNS} FROM monitored_tables WHERE name = ?", (name,)
        ).fetchone()
        return None if row is None else self._table(row)

    def tables(self) -> list[TableRow]:
        rows = self._db.execute(
            f"SELECT {self._TABLE_COLUMNS} FROM monitored_tables ORDER BY name"
        ).fetchall()
        return [self._table(r) for r in rows]

    def create_table(
        self,
        name: str,
        *,
        deck: dict[str, Any],
        reference: str,
        plan: dict[str, Any],
        columns: dict[str, Any],
        now: str,
    ) -> int:
        cursor = self._db.execute(
            "INSERT INTO monitored_tables (name, deck, reference, plan, columns, state, "
            "created_at, updated_at) VALUES (?, ?, ?, ?, ?, '', ?, ?)",
            (name, json.dumps(deck), reference, json.dumps(plan), json.dumps(columns), now, now),
        )
        return int(cursor.lastrowid)

    def update_table(
        self,
        table_id: int,
        *,
        decks: int,
        origin: tuple[int, int] | None,
        last_order: np.ndarray | None,
        last_time: int | None,
        state: dict[str, Any],
        now: str,
    ) -> None:
        self._db.execute(
            "UPDATE monitored_tables SET decks = ?, origin_time = ?, origin_digest = ?, "
            "last_order = ?, last_time = ?, state = ?, updated_at = ? WHERE id = ?",
            (
                int(decks),
                None if origin is None else int(origin[0]),
                None if origin is None else int(origin[1]),
                None if last_order is None else _blob(last_order, "i2"),
                None if last_time is None else int(last_time),
                json.dumps(state),
                now,
                table_id,
            ),
        )

    # ------------------------------------------------------------------ files

    def file_by_sha(self, sha256: str) -> dict[str, Any] | None:
        row = self._db.execute(
            "SELECT id, path, bytes, rows, ingested_at FROM ingested_files WHERE sha256 = ?",
            (sha256,),
        ).fetchone()
        if row is None:
            return None
        return {"id": row[0], "path": row[1], "bytes": row[2], "rows": row[3], "at": row[4]}

    def add_file(self, sha256: str, path: str, size: int, rows: int, now: str) -> int:
        cursor = self._db.execute(
            "INSERT INTO ingested_files (sha256, path, bytes, rows, ingested_at) "
            "VALUES (?, ?, ?, ?, ?)",
            (sha256, path, int(size), int(rows), now),
        )
        return int(cursor.lastrowid)

    def set_file_rows(self, file_id: int, rows: int) -> None:
        self._db.execute("UPDATE ingested_files SET rows = ? WHERE id = ?", (int(rows), file_id))

    def add_file_table(
        self, file_id: int, table_id: int, first_row: int, last_row: int, added: int, known: int
    ) -> None:
        self._db.execute(
            "INSERT INTO file_tables (file_id, table_id, first_row, last_row, decks_added, "
            "decks_known) VALUES (?, ?, ?, ?, ?, ?)",
            (file_id, table_id, int(first_row), int(last_row), int(added), int(known)),
        )

    def files(self, table_id: int | None = None) -> list[dict[str, Any]]:
        """Ingested files (of one table), oldest first, with their row ranges."""
        query = (
            "SELECT f.id, f.sha256, f.path, f.bytes, f.rows, f.ingested_at, t.name, "
            "ft.first_row, ft.last_row, ft.decks_added, ft.decks_known FROM ingested_files f "
            "LEFT JOIN file_tables ft ON ft.file_id = f.id "
            "LEFT JOIN monitored_tables t ON t.id = ft.table_id"
        )
        args: tuple = ()
        if table_id is not None:
            query += " WHERE ft.table_id = ?"
            args = (table_id,)
        keys = (
            "id sha256 path bytes rows ingested_at table first_row last_row decks_added decks_known"
        ).split()
        rows = self._db.execute(query + " ORDER BY f.id, t.name", args).fetchall()
        return [dict(zip(keys, r, strict=True)) for r in rows]

    # ------------------------------------------------------------------ decks

    def add_block(
        self,
        table_id: int,
        first_deck: int,
        file_id: int,
        *,
        rows: np.ndarray,
        times: np.ndarray,
        digests: np.ndarray,
        stats: np.ndarray,
        stats_dtype: str,
        trace: np.ndarray,
    ) -> None:
        count = int(rows.size)
        self._db.execute(
            "INSERT INTO deck_blocks (table_id, first_deck, count, file_id, first_time, "
            "last_time, rows, times, digests, stats, trace) VALUES (?,?,?,?,?,?,?,?,?,?,?)",
            (
                table_id,
                int(first_deck),
                count,
                file_id,
                int(times[0]),
                int(times[-1]),
                _blob(rows, "i8"),
                _blob(times, "i8"),
                _blob(digests.view(np.int64), "i8"),
                _blob(stats, stats_dtype),
                _blob(trace, "f4"),
            ),
        )

    def keys_between(self, table_id: int, low: int, high: int) -> tuple[np.ndarray, np.ndarray]:
        """Times and digests of the stored decks recorded from ``low`` to ``high`` (ns)."""
        rows = self._db.execute(
            "SELECT times, digests FROM deck_blocks WHERE table_id = ? AND last_time >= ? "
            "AND first_time <= ? ORDER BY first_deck",
            (table_id, int(low), int(high)),
        ).fetchall()
        if not rows:
            return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
        times = np.concatenate([np.frombuffer(r[0], dtype="<i8") for r in rows])
        digests = np.concatenate([np.frombuffer(r[1], dtype="<i8") for r in rows])
        keep = (times >= low) & (times <= high)
        return times[keep].astype(np.int64), digests[keep].astype(np.int64)

    def decks(self, table_id: int, columns: int, stats_dtype: str) -> BlockRows:
        """Every stored deck of a table, in time order."""
        rows = self._db.execute(
            "SELECT rows, times, digests, stats, trace, file_id, count FROM deck_blocks "
            "WHERE table_id = ? ORDER BY first_deck",
            (table_id,),
        ).fetchall()

        def cat(i: int, dtype: str, width: int | None = None) -> np.ndarray:
            parts = [np.frombuffer(r[i], dtype=np.dtype(dtype).newbyteorder("<")) for r in rows]
            if not parts:
                return np.zeros((0,) if width is None else (0, width), dtype=dtype)
            out = np.concatenate(parts).astype(dtype)
            return out if width is None else out.reshape(-1, width)

        file_ids = (
            np.concatenate([np.full(r[6], r[5], dtype=np.int64) for r in rows])
            if rows
            else np.zeros(0, dtype=np.int64)
        )
        return BlockRows(
            rows=cat(0, "i8"),
            times=cat(1, "i8"),
            digests=cat(2, "i8"),
            stats=cat(3, stats_dtype, columns),
            trace=cat(4, "f4", 2),
            file_ids=file_ids,
        )
