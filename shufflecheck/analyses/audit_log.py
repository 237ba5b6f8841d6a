"""Audit one recorded log: read and validate it, relate every deck to its reference, and run
the battery of tests (the glue between :mod:`shufflecheck.records.logs` and
:mod:`shufflecheck.audit`).

The log is streamed in chunks; every test is built from mergeable summaries, so memory
stays bounded for logs of millions of decks. With ``time`` the log must already be in time
order (checked, never re-sorted silently): the "since when" estimate is reported as the row
and the time of the first deck of the biased stretch.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from shufflecheck.audit import DEFAULT_STRATEGIES, AuditResult, BatterySummary
from shufflecheck.common.errors import InputError
from shufflecheck.records.cards import DeckDefinition, integer_deck, load_deck
from shufflecheck.records.logs import LogSummary, Reference, read_log

__all__ = ["LogAudit", "audit_log", "log_deck"]


@dataclass(frozen=True)
class LogAudit:
    """The audit of one log, with what the reader saw and what the battery found."""

    path: Path
    deck: DeckDefinition
    reference: str
    by: str | None
    time: str | None
    result: AuditResult
    reader: LogSummary
    tested: int
    reference_only: int
    after_set_aside: int
    since_when_rows: dict[str, dict[str, Any]]
    positions: np.ndarray
    histograms: dict[str, np.ndarray]

    @property
    def set_aside(self) -> int:
        return self.reader.set_aside

    def since_when_place(self, group: str = "all") -> str:
        """``"row 1599, 2026-11-04T09:55:30"`` for the first deck of the since-when stretch
        of ``group`` (the time only with ``--time``); empty when there is none."""
        where = self.since_when_rows.get(group)
        if not where:
            return ""
        return f"row {where['row']}" + (f", {where['time']}" if "time" in where else "")

    def as_json(self) -> dict[str, Any]:
        """The JSON contract of ``shufflecheck audit --json``, plus reading details."""
        out = self.result.as_json(set_aside=self.set_aside)
        out["log"] = {
            "path": str(self.path),
            "format": self.reader.format,
            "deck": self.deck.name,
            "rows": self.reader.rows,
            "decks_read": self.reader.decks,
            "blank_rows": self.reader.blank_rows,
            "set_aside_reasons": dict(self.reader.reasons),
            "quarantine": str(self.reader.quarantine) if self.reader.quarantine else None,
            "reference": self.reference,
            "tested": self.tested,
            "reference_only": self.reference_only,
            "untested_after_set_aside": self.after_set_aside,
            "by": self.by,
            "time": self.time,
        }
        if self.since_when_rows:
            out["since_when_rows"] = self.since_when_rows
        return out


def log_deck(
    path: str | os.PathLike[str],
    *,
    deck: str | os.PathLike[str] | DeckDefinition | None = None,
    cards: int | None = None,
    labels: str = "codes",
) -> tuple[DeckDefinition, str]:
    """The deck a log's rows are arrangements of, and the label mode to read them with.

    Without a deck definition, a size other than 52 means a deck of that many cards known
    by integer labels; with one, its size must equal ``cards`` when both are given. The
    label mode ``cards`` is the same as ``codes``.
    """
    if deck is None and cards is not None and cards != 52:
        if not labels.startswith("int"):
            raise InputError(
                f"{path}: a {cards}-card deck needs a deck definition ({{deck}} FILE) for card "
                "codes, or integer labels ({labels} int)",
                argument=("deck", "labels"),
            )
        definition = integer_deck(cards)
    else:
        definition = load_deck(deck)
    if cards is not None and definition.size != cards:
        raise InputError(
            f"{path}: the deck definition {definition.name!r} has {definition.size} cards, "
            f"but {cards} were expected"
        )
    return definition, ("codes" if labels == "cards" else labels)


def audit_log(
    path: str | os.PathLike[str],
    *,
    reference: str = "previous",
    labels: str = "codes",
    fmt: str | None = None,
    deck: str | os.PathLike[str] | DeckDefinition | None = None,
    cards: int | None = None,
    by: str | None = None,
    time: str | None = None,
    alpha: float = 0.01,
    quarantine: str | os.PathLike[str] | None = None,
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES,
    chunk_rows: int = 50_000,
    rng: np.random.Generator | int | None = 0,
    progress: Callable[[int], None] | None = None,
) -> LogAudit:
    """Audit a recorded log against its reference orders (default: the previous deck).

    Parameters
    ----------
    path : path
        The log (CSV with an ``order`` column, wide CSV, JSON Lines, Parquet).
    reference : str
        ``previous`` (default: each deck against the deck before it in the log, of the same
        group when ``by`` is given), ``first`` (the first row is the reference and is not
        tested), or an explicit order (a string of codes or a file holding one).
    labels : {"codes", "int", "int0", "int1"}
        Card codes, or integer labels (``int`` detects 0- or 1-based numbering).
    fmt : str or None
        Log format (default: from the extension).
    deck : path, name or DeckDefinition, optional
        Deck definition (default: the built-in 52-card deck).
    cards : int or None
        Deck size. Without a deck definition, a size other than 52 means a deck of that many
        cards known by integer labels (``labels="int"``); with one, an error when its size
        differs.
    by : str or None
        Column to group results by (e.g. ``table``).
    time : str or None
        Column holding the time of each deck; the log must be in time order.
    alpha : float
        Family-wise error level (Holm), default 0.01.
    quarantine : path or None
        Write bad rows here with their reasons and audit the rest; without it the first bad
        row is an error.
    rng : Generator, int or None
        Randomness of Monte Carlo nulls (the position test when counts are small).
    progress : callable, optional
        Called with the number of rows read so far.
    """
    definition, labels = log_deck(path, deck=deck, cards=cards, labels=labels)
    reader = read_log(
        path,
        deck=definition,
        labels=labels,
        fmt=fmt or "auto",
        chunk_rows=chunk_rows,
        quarantine=quarantine,
    )
    ref = Reference.parse(reference, definition, labels=labels)
    stream = ref.stream(by=by)
    summary = BatterySummary.empty(
        definition.size,
        suits=definition.suit_codes() if definition.suit_names else None,
        colours=definition.colour_codes() if definition.colour_names else None,
        strategies=strategies,
    )
    order_rows: dict[Any, list[np.ndarray]] = {}
    order_times: dict[Any, list[np.ndarray]] = {}
    last_time: dict[str, object] = {}
    rows_read = 0
    for chunk in reader:
        rows_read += len(chunk) + len(chunk.set_aside.rows)
        if time is not None and len(chunk):
            _check_time_order(path, chunk, time, last_time)
        rel = stream.relative(chunk)
        if len(rel):
            index = np.searchsorted(chunk.rows, rel.rows)
            absolute = chunk.decks[index]
            groups = None
            if by is not None:
                groups = rel.columns[by].astype(str).to_numpy()
            summary.update(rel.relative, absolute, groups=groups)
            keys = ["__all__"] + ([] if groups is None else sorted(set(groups.tolist())))
            for key in keys:
                pick = slice(None) if key == "__all__" else np.nonzero(groups == key)[0]
                order_rows.setdefault(key, []).append(rel.rows[pick])
                if time is not None:
                    order_times.setdefault(key, []).append(
                        rel.columns[time].astype(str).to_numpy()[pick]
                    )
        if progress is not None:
            progress(rows_read)
    info = reader.summary
    if summary.decks == 0:
        raise InputError(
            f"{path}: no decks to test ({info.decks} read, {info.set_aside} set aside, "
            f"{stream.reference_only} used only as references)"
        )
    result = summary.finish(alpha, rng=rng)
    arrays = summary.as_arrays()
    return LogAudit(
        path=Path(path),
        deck=definition,
        reference=reference,
        by=by,
        time=time,
        result=result,
        reader=info,
        tested=stream.tested,
        reference_only=stream.reference_only,
        after_set_aside=stream.after_set_aside,
        since_when_rows=_since_when_rows(result, order_rows, order_times),
        positions=arrays["all/positions"],
        histograms={k.split("/", 2)[2]: v for k, v in arrays.items() if k.startswith("all/hist/")},
    )


def _check_time_order(path, chunk, column: str, last: dict[str, object]) -> None:
    if column not in chunk.columns:
        raise InputError(f"{path}: time column {column!r} is not in the log", argument="time")
    values = chunk.columns[column]
    import pandas as pd

    times = pd.to_datetime(values, errors="coerce", utc=True)
    bad = np.nonzero(times.isna().to_numpy())[0]
    if bad.size:
        row = int(chunk.rows[bad[0]])
        raise InputError(f"{path} row {row}: {column} value {values.iloc[bad[0]]!r} is not a time")
    stamps = times.dt.tz_localize(None).to_numpy().astype("datetime64[ns]").astype(np.int64)
    previous = last.get("time")
    if previous is not None:
        stamps_all = np.concatenate([[previous], stamps])
    else:
        stamps_all = stamps
    backwards = np.nonzero(np.diff(stamps_all) < 0)[0]
    if backwards.size:
        k = int(backwards[0]) - (1 if previous is not None else 0) + 1
        row = int(chunk.rows[k])
        raise InputError(
            f"{path} row {row}: {column} goes back in time; sort the log by {column} "
            "before auditing (it is never re-ordered silently)"
        )
    last["time"] = stamps[-1]


def _since_when_rows(result: AuditResult, rows: dict, times: dict) -> dict[str, dict[str, Any]]:
    """Row (and time) of the first deck of each 'since when' stretch."""
    out = {}
    targets = [("__all__", result.overall)] + [(str(k), b) for k, b in result.groups]
    for key, battery in targets:
        found = battery.since_when
        if found is None or key not in rows:
            continue
        ordered = np.concatenate(rows[key])
        k = found.start - 1
        if not 0 <= k < ordered.size:
            continue
        entry: dict[str, Any] = {"row": int(ordered[k])}
        if key in times:
            entry["time"] = str(np.concatenate(times[key])[k])
        out["all" if key == "__all__" else key] = entry
    return out
