"""Audit recorded logs: read and validate them, relate every deck to its reference, and run
the battery of tests (the glue between :mod:`shufflecheck.records.logs` and
:mod:`shufflecheck.audit`).

Logs are streamed in chunks; every test is built from mergeable summaries, so memory stays
bounded for logs of millions of decks, and a log split into parts (files of a folder, a
partitioned dataset) can be audited part by part and merged exactly
(:func:`scan_sources`, :func:`merge_parts`): the first deck of each group in a part is
compared with the last deck of that group in the part before when the parts are joined.
With ``time`` the decks must already be in time order (in each group, with ``by``;
checked, never re-sorted silently); the "since when" estimate is reported as the row and
the time of the first deck of the biased stretch.
"""

from __future__ import annotations

import dataclasses
import os
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from shufflecheck.audit import DEFAULT_STRATEGIES, AuditResult, BatterySummary
from shufflecheck.audit.power import detectable_shifts
from shufflecheck.audit.positions import MONTE_CARLO_BELOW
from shufflecheck.common.errors import InputError
from shufflecheck.records.cards import DeckDefinition, integer_deck, load_deck
from shufflecheck.records.logs import LogChunk, LogSummary, Reference, read_log
from shufflecheck.records.logs.sources import Source, log_sources
from shufflecheck.records.logs.times import TimeReader, first_backwards
from shufflecheck.records.orders import relative_to

__all__ = [
    "AuditOptions",
    "log_deck",
    "LogAudit",
    "Part",
    "audit_log",
    "finish_audit",
    "merge_parts",
    "scan_sources",
]

_ALL = "__all__"
_SHIFT = 40  # a deck's place: source index << _SHIFT | row


def place_of(source: int, row: int | np.ndarray) -> Any:
    """The place code of a row of a source (rows stay ordered across sources)."""
    return (np.int64(source) << _SHIFT) | row


def _split_place(code: int) -> tuple[int, int]:
    return int(code) >> _SHIFT, int(code) & ((1 << _SHIFT) - 1)


@dataclass(frozen=True)
class AuditOptions:
    """How every part of an audit is read and related (shared by all engines)."""

    deck: DeckDefinition
    reference: str = "previous"
    labels: str = "codes"
    fmt: str = "auto"
    by: str | None = None
    time: str | None = None
    time_format: str | None = None
    quarantine: Path | None = None
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES
    chunk_rows: int = 50_000
    order_column: str | None = None
    position_columns: str | tuple[str, ...] | None = None
    columns: str | tuple[str, ...] | None = None
    separator: str | None = None

    @property
    def parsed_reference(self) -> Reference:
        return Reference.parse(self.reference, self.deck, labels=self.labels)  # type: ignore[arg-type]

    def empty_summary(self) -> BatterySummary:
        deck = self.deck
        return BatterySummary.empty(
            deck.size,
            suits=deck.suit_codes() if deck.suit_names else None,
            colours=deck.colour_codes() if deck.colour_names else None,
            strategies=self.strategies,
        )


@dataclass
class _Head:
    """The first deck of a group in a part, used there only as a reference."""

    group: Any
    deck: np.ndarray
    place: int
    unreadable_before: bool
    position: int  # tested decks (all groups) of the part before it
    time: str | None


@dataclass
class Part:
    """What one or more consecutive sources contribute to an audit; parts merge exactly
    (:func:`merge_parts`, the later part second)."""

    summary: BatterySummary
    readers: list[LogSummary]
    tested: int = 0
    reference_only: int = 0
    after_set_aside: int = 0
    places: dict[Any, list[np.ndarray]] = field(default_factory=dict)
    times: dict[Any, list[np.ndarray]] = field(default_factory=dict)
    heads: list[_Head] = field(default_factory=list)
    tails: dict[Any, np.ndarray | None] = field(default_factory=dict)
    unreadable: bool = False
    first_time: dict[Any, tuple[int, int]] = field(default_factory=dict)  # group -> (ns, place)
    last_time: dict[Any, int] = field(default_factory=dict)
    time_format: str | None = None


@dataclass(frozen=True)
class SmallLog:
    """An audit of fewer decks than its battery is built for, and what it can still see.

    ``needed`` is the size from which every test uses its intended null (the
    position-by-card test its chi-square law: ``5 n`` decks); ``detectable`` lists, per
    test, the smallest shift of the per-deck mean that the audit would flag with power
    ``power`` at this size (normal approximation to the exact laws; an estimate).
    """

    decks: int
    needed: int
    power: float
    detectable: tuple[tuple[str, str, Any], ...]

    def text(self) -> str:
        shown = "; ".join(f"{title}: {q.text()}" for _, title, q in self.detectable[:3])
        return (
            f"a small log: {self.decks:,} decks tested, fewer than the {self.needed:,} its "
            f"battery is built for; with power {self.power:g} it would flag only shifts of at "
            f"least {shown}"
        )

    def as_json(self) -> dict[str, Any]:
        return {
            "decks": self.decks,
            "needed": self.needed,
            "power": self.power,
            "text": self.text(),
            "detectable": [
                {"test": name, "title": title, **q.as_json()} for name, title, q in self.detectable
            ],
        }


@dataclass(frozen=True)
class LogAudit:
    """The audit of one log (or of a set of logs), with what the readers saw and what the
    battery found. ``to_dict()`` is the ``--json`` payload; ``to_frame()`` the tests as a
    table; ``groups_frame()`` one row per group."""

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
    sources: tuple[LogSummary, ...] = ()
    engine: str = "single process"
    time_format: str | None = None
    small: SmallLog | None = None

    @property
    def set_aside(self) -> int:
        return self.reader.set_aside

    def since_when_place(self, group: str = "all") -> str:
        """``"row 1599, 2026-11-04T09:55:30"`` for the first deck of the since-when stretch
        of ``group`` (the time only with ``--time``); empty when there is none."""
        where = self.since_when_rows.get(group)
        if not where:
            return ""
        text = (f"{where['file']} " if "file" in where else "") + f"row {where['row']}"
        return text + (f", {where['time']}" if "time" in where else "")

    def fleet(self) -> dict[str, Any] | None:
        """With ``by``: how many groups were flagged, the strongest findings, since when."""
        if not self.by:
            return None
        rows = []
        for key, battery in self.result.groups:
            worst = battery.by_adjusted_p()[0] if battery.tests else None
            rows.append(
                {
                    "group": str(key),
                    "decks": battery.decks,
                    "flagged": battery.flagged,
                    "flagged_tests": sum(t.flagged for t in battery.tests),
                    "strongest": worst.title if worst else None,
                    "log10_p_adjusted": worst.log10_p_adjusted if worst else None,
                    "effect": worst.effect.text if worst else None,
                    "since_when": self.since_when_place(str(key)) or None,
                }
            )
        flagged = sorted(
            (r for r in rows if r["flagged"]), key=lambda r: r["log10_p_adjusted"]
        )
        return {
            "by": self.by,
            "groups": len(rows),
            "flagged": len(flagged),
            "strongest": flagged[:5],
            "table": rows,
        }

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
            "time_format": self.time_format,
            "order_column": self.reader.order_column,
            "separator": self.reader.separator,
            "separator_source": self.reader.separator_source,
            "header": self.reader.header,
            "files": len(self.sources) or 1,
            "engine": self.engine,
        }
        if self.since_when_rows:
            out["since_when_rows"] = self.since_when_rows
        out["small_log"] = self.small.as_json() if self.small else None
        fleet = self.fleet()
        if fleet is not None:
            out["fleet"] = fleet
        return out

    def to_dict(self) -> dict[str, Any]:
        """Same as :meth:`as_json` (plain types; what ``--json`` prints)."""
        return self.as_json()

    def to_frame(self) -> pd.DataFrame:
        """The tests of the whole log, one row each, sorted by adjusted p-value."""
        return _tests_frame(self.result.overall)

    def groups_frame(self) -> pd.DataFrame:
        """One row per group (with ``by``): decks, flagged, strongest test, since when."""
        fleet = self.fleet()
        return pd.DataFrame(fleet["table"] if fleet else [])


def _tests_frame(battery: Any) -> pd.DataFrame:
    return pd.DataFrame(
        [
            {
                "test": t.name,
                "title": t.title,
                "statistic": t.statistic,
                "p_value": t.p_value,
                "p_adjusted": t.p_adjusted,
                "log10_p_adjusted": t.log10_p_adjusted,
                "method": t.method,
                "flagged": t.flagged,
                "effect": t.effect.value,
                "effect_unit": t.effect.unit,
                "effect_stderr": t.effect.standard_error,
            }
            for t in battery.by_adjusted_p()
        ]
    )


# --------------------------------------------------------------------------------------
# reading parts


def _deck_for(deck: Any, cards: int | None, labels: str, where: str) -> DeckDefinition:
    if deck is None and cards is not None and cards != 52:
        if not labels.startswith("int"):
            raise InputError(
                f"{where}: a {cards}-card deck needs a deck definition ({{deck}} FILE) for card "
                "codes, or integer labels ({labels} int)",
                argument=("deck", "labels"),
            )
        definition = integer_deck(cards)
    else:
        definition = load_deck(deck)
    if cards is not None and definition.size != cards:
        raise InputError(
            f"{where}: the deck definition {definition.name!r} has {definition.size} cards, "
            f"but {cards} were expected"
        )
    return definition


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
    definition = _deck_for(deck, cards, labels, os.fspath(path))
    return definition, ("codes" if labels == "cards" else labels)


def _quarantine_for(options: AuditOptions, source: Source, several: bool) -> Path | None:
    if options.quarantine is None:
        return None
    if not several:
        return options.quarantine
    folder = options.quarantine
    folder.mkdir(parents=True, exist_ok=True)
    name = "__".join([f"{k}={v}" for k, v in source.constants] + [source.path.name])
    return folder / f"{name}.set-aside.csv"


def _with_constants(chunk: LogChunk, source: Source, index: int) -> LogChunk:
    """The chunk with rows as places (ordered across sources) and partition keys as columns."""
    columns, aside = chunk.columns, chunk.set_aside.columns
    if source.constants:
        columns = columns.copy()
        aside = aside.copy()
        for key, value in source.constants:
            if key not in columns.columns:
                columns[key] = value
                aside[key] = value
    return dataclasses.replace(
        chunk,
        rows=place_of(index, chunk.rows),
        columns=columns,
        set_aside=dataclasses.replace(
            chunk.set_aside, rows=place_of(index, chunk.set_aside.rows), columns=aside
        ),
    )


def _group_keys(chunk_columns: pd.DataFrame, by: str | None, rows: int) -> np.ndarray | None:
    if by is None:
        return None
    return chunk_columns[by].astype(str).to_numpy() if rows else np.zeros(0, dtype=object)


def scan_sources(
    sources: Sequence[Source],
    options: AuditOptions,
    *,
    first_index: int = 0,
    several: bool | None = None,
    progress: Callable[[int], None] | None = None,
) -> Part:
    """Read ``sources`` one after another with one reference stream: a :class:`Part`.

    ``first_index`` is the index of ``sources[0]`` among all sources of the audit (places
    stay ordered across parts); ``progress`` gets the bytes of the files read so far.
    """
    reference = options.parsed_reference
    stream = reference.stream(by=options.by)
    part = Part(options.empty_summary(), [])
    several = len(sources) > 1 if several is None else several
    times = None
    if options.time is not None:
        times = TimeReader(options.time, options.time_format, where="")
    done = 0
    for offset, source in enumerate(sources):
        index = first_index + offset
        reader = read_log(
            source.path,
            deck=options.deck,
            labels=options.labels,  # type: ignore[arg-type]
            fmt=options.fmt,  # type: ignore[arg-type]
            chunk_rows=options.chunk_rows,
            quarantine=_quarantine_for(options, source, several),
            order_column=options.order_column,
            position_columns=options.position_columns,
            before_column=reference.column if reference.kind == "column" else None,
            columns=options.columns,
            separator=options.separator,
        )
        for raw_chunk in reader:
            chunk = _with_constants(raw_chunk, source, index)
            if times is not None and len(chunk):
                times.where = str(source.path)
                _check_times(part, chunk, options, times)
            heads_before = len(stream.heads)
            rel = stream.relative(chunk)
            for group, deck, place, unreadable in stream.heads[heads_before:]:
                stamp = None
                if options.time is not None:
                    k = int(np.searchsorted(chunk.rows, place))
                    stamp = str(chunk.columns[options.time].iloc[k])
                position = part.tested + int(np.searchsorted(rel.rows, place))
                part.heads.append(_Head(group, deck, place, unreadable, position, stamp))
            if len(rel):
                index_in = np.searchsorted(chunk.rows, rel.rows)
                absolute = chunk.decks[index_in]
                groups = _group_keys(rel.columns, options.by, len(rel))
                part.summary.update(rel.relative, absolute, groups=groups)
                part.tested += len(rel)
                keys = [_ALL] + ([] if groups is None else sorted(set(groups.tolist())))
                for key in keys:
                    pick = slice(None) if key == _ALL else np.nonzero(groups == key)[0]
                    part.places.setdefault(key, []).append(rel.rows[pick])
                    if options.time is not None:
                        part.times.setdefault(key, []).append(
                            rel.columns[options.time].astype(str).to_numpy()[pick]
                        )
            if progress is not None:
                progress(done + int(reader.fraction * source.size))
        done += source.size
        part.readers.append(reader.summary)
    part.reference_only = stream.reference_only
    part.after_set_aside = stream.after_set_aside
    part.tails = stream.tails() if reference.kind == "previous" else {}
    part.unreadable = stream.saw_unreadable
    part.time_format = None if times is None else times.format
    return part


def _check_times(part: Part, chunk: LogChunk, options: AuditOptions, times: TimeReader) -> None:
    """Decks in time order, in each group with ``by``; first and last time per group kept."""
    column = options.time
    assert column is not None
    if column not in chunk.columns:
        raise InputError(
            f"{times.where}: time column {column!r} is not in the log", argument="time"
        )
    rows = chunk.rows & ((1 << _SHIFT) - 1)
    if options.by is not None and options.by not in chunk.columns:
        shown = ", ".join(map(str, chunk.columns.columns)) or "none"
        raise InputError(f"no column {options.by!r} to group by (columns: {shown})")
    stamps = times.stamps(chunk.columns[column], rows)
    groups = _group_keys(chunk.columns, options.by, len(chunk))
    keys = [None] if groups is None else list(dict.fromkeys(groups.tolist()))
    for key in keys:
        pick = np.arange(len(stamps)) if key is None else np.flatnonzero(groups == key)
        values = stamps[pick]
        back = first_backwards(values, part.last_time.get(key))
        if back is not None:
            row = int(rows[pick[back]])
            scope = "" if key is None else f" (in {options.by} {key})"
            raise InputError(
                f"{times.where} row {row}: {column} goes back in time{scope}; sort the log by "
                f"{column} before auditing (it is never re-ordered silently)"
            )
        part.first_time.setdefault(key, (int(values[0]), int(chunk.rows[pick[0]])))
        part.last_time[key] = int(values[-1])


# --------------------------------------------------------------------------------------
# merging parts


def merge_parts(a: Part, b: Part, options: AuditOptions, paths: Sequence[Path]) -> Part:
    """The part of ``a``'s decks followed by ``b``'s, exactly as one stream would read them.

    The first deck of each group in ``b`` (a reference only there) is compared with the
    last deck of its group in ``a`` and tested, unless a set-aside row broke the chain.
    ``paths`` are the files of the audit by source index (for messages).
    """
    kind = options.parsed_reference.kind
    if kind in ("first", "pairs"):
        raise InputError(
            f"reference {kind!r} relates decks across the whole log and cannot be merged from "
            "parts; audit these logs in one process (engine 'single')",
            argument="reference",
        )
    for key, (stamp, place) in b.first_time.items():
        last = a.last_time.get(key)
        if last is not None and stamp < last:
            source, row = _split_place(place)
            scope = "" if key is None else f" (in {options.by} {key})"
            raise InputError(
                f"{paths[source]} row {row}: {options.time} goes back in time{scope}; sort "
                f"the logs by {options.time} before auditing (they are never re-ordered)"
            )
    tested: list[_Head] = []
    broken = 0
    rest: list[_Head] = []
    for head in sorted(b.heads, key=lambda h: h.place):
        if head.group in a.tails:
            if a.tails[head.group] is None or head.unreadable_before:
                broken += 1
            else:
                tested.append(head)
        else:
            rest.append(head)
    summary_b = b.summary
    if tested:
        front = options.empty_summary()
        decks = np.stack([h.deck for h in tested])
        refs = np.stack([a.tails[h.group] for h in tested])  # type: ignore[misc]
        groups = None if options.by is None else np.array([str(h.group) for h in tested])
        front.update(relative_to(decks, refs), decks, groups=groups)
        summary_b = b.summary.merge_front(front, [h.position for h in tested])
    places = _splice(a.places, b.places, tested, lambda h: np.array([h.place]))
    times = (
        _splice(a.times, b.times, tested, lambda h: np.array([h.time], dtype=object))
        if options.time is not None
        else {}
    )
    tails = {g: None for g in a.tails} if b.unreadable else dict(a.tails)
    tails.update(b.tails)
    # the heads of b still untested: their place in the merged order of tested decks
    # counts a's decks and the heads of b tested now that stand before them
    heads = list(a.heads) + [
        dataclasses.replace(
            h,
            unreadable_before=h.unreadable_before or a.unreadable,
            position=h.position
            + a.tested
            + sum((t.position, t.place) < (h.position, h.place) for t in tested),
        )
        for h in rest
    ]
    first_time = dict(a.first_time)
    for key, value in b.first_time.items():
        first_time.setdefault(key, value)
    return Part(
        summary=a.summary.merge(summary_b),
        readers=a.readers + b.readers,
        tested=a.tested + b.tested + len(tested),
        reference_only=a.reference_only + b.reference_only - len(tested) - broken,
        after_set_aside=a.after_set_aside + b.after_set_aside + broken,
        places=places,
        times=times,
        heads=heads,
        tails=tails,
        unreadable=a.unreadable or b.unreadable,
        first_time=first_time,
        last_time={**a.last_time, **b.last_time},
        time_format=a.time_format or b.time_format,
    )


def _splice(
    a: dict[Any, list[np.ndarray]],
    b: dict[Any, list[np.ndarray]],
    tested: list[_Head],
    value: Callable[[_Head], np.ndarray],
) -> dict[Any, list[np.ndarray]]:
    """``a`` then ``b`` per key, with the tested heads inserted where they stand in ``b``."""
    out = {k: list(v) for k, v in a.items()}
    inserted: dict[Any, list[tuple[int, np.ndarray]]] = {}
    for h in tested:
        inserted.setdefault(_ALL, []).append((h.position, value(h)))
        if h.group is not None:
            inserted.setdefault(str(h.group), []).append((0, value(h)))
    for key in set(b) | set(inserted):
        mine = np.concatenate(b[key]) if key in b and b[key] else None
        extra = inserted.get(key, [])
        if extra:
            at = [p for p, _ in extra]
            values = np.concatenate([v for _, v in extra])
            base = mine if mine is not None else values[:0]
            mine = np.insert(base, np.asarray(at, dtype=np.intp), values)
        if mine is not None:
            out.setdefault(key, []).append(mine)
    return out


# --------------------------------------------------------------------------------------
# finishing


def _combined_reader(readers: Sequence[LogSummary], shown: str) -> LogSummary:
    if len(readers) == 1:
        return dataclasses.replace(readers[0], path=shown)
    reasons: dict[str, int] = {}
    for r in readers:
        for k, v in r.reasons.items():
            reasons[k] = reasons.get(k, 0) + v
    formats = sorted({r.format for r in readers})
    first = readers[0]
    return dataclasses.replace(
        first,
        path=shown,
        format=f"{'/'.join(formats)} ({len(readers)} files)",
        decks=sum(r.decks for r in readers),
        set_aside=sum(r.set_aside for r in readers),
        reasons=dict(sorted(reasons.items())),
        blank_rows=sum(r.blank_rows for r in readers),
        quarantine=None if first.quarantine is None else str(Path(first.quarantine).parent),
        complete=all(r.complete for r in readers),
    )


def finish_audit(
    part: Part,
    options: AuditOptions,
    *,
    shown: str,
    paths: Sequence[Path],
    alpha: float,
    rng: np.random.Generator | int | None,
    engine: str = "single process",
) -> LogAudit:
    """Run the battery on a part's summary and describe the audit."""
    info = _combined_reader(part.readers, shown)
    summary = part.summary
    if summary.decks == 0:
        raise InputError(
            f"{shown}: no decks to test ({info.decks} read, {info.set_aside} set aside, "
            f"{part.reference_only} used only as references)"
        )
    result = summary.finish(alpha, rng=rng)
    arrays = summary.as_arrays()
    small = None
    needed = int(MONTE_CARLO_BELOW * options.deck.size)
    if summary.decks < needed:
        power = 0.9
        small = SmallLog(
            summary.decks,
            needed,
            power,
            detectable_shifts(summary.statistics, summary.laws, summary.decks, alpha, power),
        )
    return LogAudit(
        path=Path(shown),
        deck=options.deck,
        reference=options.reference,
        by=options.by,
        time=options.time,
        result=result,
        reader=info,
        tested=part.tested,
        reference_only=part.reference_only,
        after_set_aside=part.after_set_aside,
        since_when_rows=_since_when_rows(result, part.places, part.times, paths),
        positions=arrays["all/positions"],
        histograms={k.split("/", 2)[2]: v for k, v in arrays.items() if k.startswith("all/hist/")},
        sources=tuple(part.readers) if len(part.readers) > 1 else (),
        engine=engine,
        time_format=part.time_format,
        small=small,
    )


def _since_when_rows(
    result: AuditResult, places: dict, times: dict, paths: Sequence[Path]
) -> dict[str, dict[str, Any]]:
    """Row (file, time) of the first deck of each 'since when' stretch."""
    out = {}
    targets = [(_ALL, result.overall)] + [(str(k), b) for k, b in result.groups]
    for key, battery in targets:
        found = battery.since_when
        if found is None or key not in places:
            continue
        ordered = np.concatenate(places[key])
        k = found.start - 1
        if not 0 <= k < ordered.size:
            continue
        source, row = _split_place(int(ordered[k]))
        entry: dict[str, Any] = {"row": row}
        if len(paths) > 1:
            entry["file"] = str(paths[source])
        if key in times:
            entry["time"] = str(np.concatenate(times[key])[k])
        out["all" if key == _ALL else key] = entry
    return out


# --------------------------------------------------------------------------------------
# the entry point


def audit_log(
    path: str | os.PathLike[str] | Sequence[str | os.PathLike[str]],
    *,
    reference: str = "previous",
    labels: str = "codes",
    fmt: str | None = None,
    deck: str | os.PathLike[str] | DeckDefinition | None = None,
    cards: int | None = None,
    by: str | None = None,
    time: str | None = None,
    time_format: str | None = None,
    alpha: float = 0.01,
    quarantine: str | os.PathLike[str] | None = None,
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES,
    chunk_rows: int = 50_000,
    rng: np.random.Generator | int | None = 0,
    progress: Callable[[int], None] | None = None,
    order_column: str | None = None,
    position_columns: str | Sequence[str] | None = None,
    columns: str | Sequence[str] | None = None,
    separator: str | None = None,
    engine: str = "single",
    scheduler: str | None = None,
    workers: int | None = None,
) -> LogAudit:
    """Audit recorded logs against their reference orders (default: the previous deck).

    Parameters
    ----------
    path : path, folder, glob pattern, or a sequence of them
        The log (CSV with an order column, wide CSV, JSON Lines, Parquet); a folder of logs
        or a Parquet dataset partitioned by ``key=value`` folders (the keys become
        columns, e.g. ``table``); or a pattern such as ``logs/*.csv``. Several files are
        read in sorted order as one log.
    reference : str
        ``previous`` (default: each deck against the deck before it, of the same group when
        ``by`` is given), ``first``, ``deck``, ``column:NAME`` (each deck's own starting
        order in column NAME), ``pairs`` (rows alternate before/after), or an explicit
        order (a string of codes or a file holding one); see
        :class:`~shufflecheck.records.logs.Reference`.
    labels : {"codes", "int", "int0", "int1"}
        Card codes, or integer labels (``int`` detects 0- or 1-based numbering).
    fmt : str or None
        Log format (default: from the extension).
    deck : path, name or DeckDefinition, optional
        Deck definition (default: the built-in 52-card deck); a reader's own card codes
        are a ``[codes]`` / ``[spelling]`` table in its file.
    cards : int or None
        Deck size. Without a deck definition, a size other than 52 means a deck of that many
        cards known by integer labels (``labels="int"``); with one, an error when its size
        differs.
    by : str or None
        Column to group results by (e.g. ``table``); each group is tested on its own and a
        fleet summary says how many groups were flagged.
    time : str or None
        Column holding the time of each deck; decks must be in time order (per group with
        ``by``).
    time_format : str or None
        ``strptime`` format of the time column; without it the format is decided from the
        first values, and an ambiguous date (day-first or month-first) is an error.
    alpha : float
        Family-wise error level (Holm), default 0.01.
    quarantine : path or None
        Write bad rows here with their reasons and audit the rest (a folder, one file per
        log, when there are several logs); without it the first bad row is an error.
    rng : Generator, int or None
        Randomness of Monte Carlo nulls (the position test when counts are small).
    progress : callable, optional
        Called with the number of bytes of the logs read so far.
    order_column, position_columns, columns, separator
        Where the orders are and how they are written; see
        :func:`shufflecheck.records.logs.read_log`.
    engine : {"single", "dask"}
        ``single`` reads everything in this process; ``dask`` audits each file as its own
        part on a Dask cluster and merges the parts (the same result to the last digit).
    scheduler : str, optional
        Address of an existing Dask scheduler (implies ``engine="dask"``); without it the
        Dask engine starts a local cluster on this machine's cores.
    workers : int, optional
        Workers of the local cluster (default: one per core).
    """
    sources = log_sources(path)
    shown = os.fspath(path) if isinstance(path, (str, os.PathLike)) else f"{len(sources)} logs"
    definition = _deck_for(deck, cards, labels, shown)
    options = AuditOptions(
        deck=definition,
        reference=reference,
        labels="codes" if labels == "cards" else labels,
        fmt=fmt or "auto",
        by=by,
        time=time,
        time_format=time_format,
        quarantine=None if quarantine is None else Path(quarantine),
        strategies=tuple(strategies),
        chunk_rows=chunk_rows,
        order_column=order_column,
        position_columns=position_columns
        if position_columns is None or isinstance(position_columns, str)
        else tuple(position_columns),
        columns=columns if columns is None or isinstance(columns, str) else tuple(columns),
        separator=separator,
    )
    options.parsed_reference  # noqa: B018 - a bad reference fails before any reading
    paths = [s.path for s in sources]
    if engine not in ("single", "dask"):
        raise InputError(f"engine {engine!r} is not one of single, dask", argument="engine")
    if scheduler is not None or engine == "dask":
        from shufflecheck.analyses.fleet import audit_parts

        part, used = audit_parts(
            sources, options, scheduler=scheduler, workers=workers, progress=progress
        )
        return finish_audit(
            part, options, shown=shown, paths=paths, alpha=alpha, rng=rng, engine=used
        )
    part = scan_sources(sources, options, progress=progress)
    return finish_audit(part, options, shown=shown, paths=paths, alpha=alpha, rng=rng)


def total_bytes(path: str | os.PathLike[str] | Iterable[str | os.PathLike[str]]) -> int:
    """Bytes of the logs an audit of ``path`` reads (the total of its progress)."""
    try:
        return sum(s.size for s in log_sources(path))  # type: ignore[arg-type]
    except InputError:
        return 0
