"""Parts of an audit: what one or more consecutive log files contribute, and how parts
merge exactly.

:func:`scan_sources` reads files one after another with one reference stream and keeps a
:class:`Part`: the mergeable battery summary, where each tested deck stands (for "since
when"), the first deck of each group (a reference only, so far) and the last one (for the
next part). :func:`merge_parts` joins two consecutive parts: the first deck of each group
of the later part is compared with the last deck of that group in the earlier part and
tested, unless a set-aside row broke the chain, so merged parts equal one stream over the
same files, to the last digit (the Dask engine, :mod:`shufflecheck.analyses.fleet`, relies
on it).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import write_failure
from shufflecheck.common.limits import limit
from shufflecheck.common.resources import check_memory
from shufflecheck.records.cards import DeckDefinition, integer_deck, load_deck
from shufflecheck.records.logs import LogChunk, LogSummary, Reference, read_frame, read_log
from shufflecheck.records.logs.sources import Source
from shufflecheck.records.logs.times import TimeReader, first_backwards
from shufflecheck.records.orders import relative_to
from shufflecheck.records.shoes import ShoeDefinition
from shufflecheck.stats import DEFAULT_STRATEGIES, BatterySummary
from shufflecheck.stats.catalogue import ShoeContext
from shufflecheck.stats.nulls import law_bytes

__all__ = [
    "ALL",
    "AuditOptions",
    "Head",
    "Part",
    "deck_for",
    "merge_parts",
    "place_of",
    "scan_frame",
    "scan_sources",
    "split_place",
]

ALL = "__all__"
_SHIFT = 40  # a deck's place: source index << _SHIFT | row


def place_of(source: int, row: int | np.ndarray) -> Any:
    """The place code of a row of a source (rows stay ordered across sources)."""
    return (np.int64(source) << _SHIFT) | row


def split_place(code: int) -> tuple[int, int]:
    return int(code) >> _SHIFT, int(code) & ((1 << _SHIFT) - 1)


@dataclass(frozen=True)
class AuditOptions:
    """How every part of an audit is read and related (shared by all engines).

    For a shoe (``deck`` a :class:`ShoeDefinition`), ``shoe`` is the battery's context
    (feature, segment) and decks are related to their references as words, not as
    permutations.
    """

    deck: DeckDefinition | ShoeDefinition
    reference: str = "previous"
    labels: str = "codes"
    fmt: str = "auto"
    by: str | None = None
    time: str | None = None
    time_format: str | None = None
    quarantine: Path | None = None
    force: bool = True  # replace existing quarantine files
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES
    chunk_rows: int = 50_000
    order_column: str | None = None
    position_columns: str | tuple[str, ...] | None = None
    columns: str | tuple[str, ...] | None = None
    separator: str | None = None
    shoe: ShoeContext | None = None

    @property
    def parsed_reference(self) -> Reference:
        return Reference.parse(self.reference, self.deck, labels=self.labels)  # type: ignore[arg-type]

    def empty_summary(self) -> BatterySummary:
        deck = self.deck
        if self.shoe is not None:
            return BatterySummary.empty(deck.size, shoe=self.shoe)
        assert isinstance(deck, DeckDefinition)
        return BatterySummary.empty(
            deck.size,
            suits=deck.suit_codes() if deck.suit_names else None,
            colours=deck.colour_codes() if deck.colour_names else None,
            strategies=self.strategies,
        )


@dataclass
class Head:
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
    heads: list[Head] = field(default_factory=list)
    tails: dict[Any, np.ndarray | None] = field(default_factory=dict)
    unreadable: bool = False
    first_time: dict[Any, tuple[int, int]] = field(default_factory=dict)  # group -> (ns, place)
    last_time: dict[Any, int] = field(default_factory=dict)
    time_format: str | None = None


# --------------------------------------------------------------------------------------
# reading parts


def deck_for(deck: Any, cards: int | None, labels: str, where: str) -> DeckDefinition:
    """The deck of an audit, within the audit's range of deck sizes and the memory its
    exact laws need (checked before any reading)."""
    if cards is not None:
        limit("audit_cards").check(cards)
    if deck is None and cards is not None and cards != 52:
        if not labels.startswith("int"):
            raise InputError(
                f"{where}: a {cards}-card deck needs a deck definition ({{deck}} FILE) for card "
                "codes, or integer labels ({labels=int})",
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
    if cards is None:
        limit("audit_cards").check(
            definition.size, name=f"deck {definition.name!r}: its number of cards"
        )
    check_memory(
        law_bytes(definition.size),
        f"the exact laws of the tests for decks of {definition.size} cards",
        advice="audit decks of fewer cards",
    )
    return definition


def quarantine_path(quarantine: Path, source: Source, several: bool) -> Path:
    """Where the rows set aside from ``source`` go: ``quarantine`` itself for one log, a
    file ``KEY=VALUE__NAME.set-aside.csv`` inside the folder ``quarantine`` for several."""
    if not several:
        return quarantine
    name = "__".join([f"{k}={v}" for k, v in source.constants] + [source.path.name])
    return quarantine / f"{name}.set-aside.csv"


def _quarantine_for(options: AuditOptions, source: Source, several: bool) -> Path | None:
    if options.quarantine is None:
        return None
    if several:
        try:
            options.quarantine.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise write_failure(options.quarantine, exc) from None
    return quarantine_path(options.quarantine, source, several)


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
    several = len(sources) > 1 if several is None else several

    def readers() -> Iterator[tuple[int, Source, Any]]:
        for offset, source in enumerate(sources):
            reader = read_log(
                source.path,
                deck=options.deck,
                labels=options.labels,  # type: ignore[arg-type]
                fmt=options.fmt,  # type: ignore[arg-type]
                chunk_rows=options.chunk_rows,
                quarantine=_quarantine_for(options, source, several),
                force=options.force,
                order_column=options.order_column,
                position_columns=options.position_columns,
                before_column=reference.column if reference.kind == "column" else None,
                columns=options.columns,
                separator=options.separator,
            )
            yield first_index + offset, source, reader

    return _scan(readers(), options, progress)


def scan_frame(frame: pd.DataFrame, options: AuditOptions, *, name: str = "data frame") -> Part:
    """A :class:`Part` of the decks of a pandas DataFrame (rows numbered 1, 2, ...)."""
    reference = options.parsed_reference
    reader = read_frame(
        frame,
        deck=options.deck,
        labels=options.labels,  # type: ignore[arg-type]
        chunk_rows=options.chunk_rows,
        order_column=options.order_column,
        position_columns=options.position_columns,
        before_column=reference.column if reference.kind == "column" else None,
        separator=options.separator,
        name=name,
    )
    return _scan(iter([(0, Source(Path(name)), reader)]), options, None)


def _scan(
    readers: Iterator[tuple[int, Source, Any]],
    options: AuditOptions,
    progress: Callable[[int], None] | None,
) -> Part:
    reference = options.parsed_reference
    stream = reference.stream(by=options.by, words=options.shoe is not None)
    part = Part(options.empty_summary(), [])
    times = None
    if options.time is not None:
        times = TimeReader(options.time, options.time_format, where="")
    done = 0
    for index, source, reader in readers:
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
                part.heads.append(Head(group, deck, place, unreadable, position, stamp))
            if len(rel):
                groups = _group_keys(rel.columns, options.by, len(rel))
                if options.shoe is not None:  # shoes: the words and their reference words
                    part.summary.update(
                        rel.relative, rel.relative, groups=groups, references=rel.reference
                    )
                else:
                    index_in = np.searchsorted(chunk.rows, rel.rows)
                    absolute = chunk.decks[index_in]
                    part.summary.update(rel.relative, absolute, groups=groups, check=False)
                part.tested += len(rel)
                keys = [ALL] + ([] if groups is None else sorted(set(groups.tolist())))
                for key in keys:
                    pick = slice(None) if key == ALL else np.nonzero(groups == key)[0]
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


def merge_parts(
    a: Part, b: Part, options: AuditOptions, paths: Sequence[Path], *, in_place: bool = False
) -> Part:
    """The part of ``a``'s decks followed by ``b``'s, exactly as one stream would read them.

    The first deck of each group in ``b`` (a reference only there) is compared with the
    last deck of its group in ``a`` and tested, unless a set-aside row broke the chain.
    ``paths`` are the files of the audit by source index (for messages). With
    ``in_place``, ``a``'s summary and lists are extended rather than copied (``a`` is then
    used up: a fold over many parts stays linear in their number).
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
            source, row = split_place(place)
            scope = "" if key is None else f" (in {options.by} {key})"
            raise InputError(
                f"{paths[source]} row {row}: {options.time} goes back in time{scope}; sort "
                f"the logs by {options.time} before auditing (they are never re-ordered)"
            )
    tested: list[Head] = []
    broken = 0
    rest: list[Head] = []
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
        if options.shoe is not None:
            front.update(decks, decks, groups=groups, references=refs)
        else:
            front.update(relative_to(decks, refs), decks, groups=groups)
        summary_b = b.summary.merge_front(front, [h.position for h in tested])
    places = _splice(a.places, b.places, tested, lambda h: np.array([h.place]), in_place)
    times = (
        _splice(a.times, b.times, tested, lambda h: np.array([h.time], dtype=object), in_place)
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
        summary=a.summary.merge(summary_b, in_place=in_place),
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
    tested: list[Head],
    value: Callable[[Head], np.ndarray],
    in_place: bool = False,
) -> dict[Any, list[np.ndarray]]:
    """``a`` then ``b`` per key, with the tested heads inserted where they stand in ``b``."""
    out = a if in_place else {k: list(v) for k, v in a.items()}
    inserted: dict[Any, list[tuple[int, np.ndarray]]] = {}
    for h in tested:
        inserted.setdefault(ALL, []).append((h.position, value(h)))
        if h.group is not None:
            inserted.setdefault(str(h.group), []).append((0, value(h)))
    for key in set(b) | set(inserted):
        mine = np.concatenate(b[key]) if b.get(key) else None
        extra = inserted.get(key, [])
        if extra:
            at = [p for p, _ in extra]
            values = np.concatenate([v for _, v in extra])
            base = mine if mine is not None else values[:0]
            mine = np.insert(base, np.asarray(at, dtype=np.intp), values)
        if mine is not None:
            out.setdefault(key, []).append(mine)
    return out
