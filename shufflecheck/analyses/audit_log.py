"""Audit recorded logs: read and validate them, relate every deck to its reference, and run
the battery of tests (the glue between :mod:`shufflecheck.records.logs` and
:mod:`shufflecheck.stats`).

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
import math
import os
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from shufflecheck.analyses.fleet import audit_parts, dask_installed
from shufflecheck.analyses.log_parts import (
    ALL,
    AuditOptions,
    Part,
    deck_for,
    scan_frame,
    scan_sources,
    split_place,
)
from shufflecheck.common.checks import check_confidence
from shufflecheck.common.errors import InputError
from shufflecheck.common.resources import release_free_memory
from shufflecheck.records.cards import DeckDefinition
from shufflecheck.records.logs import LogSummary
from shufflecheck.records.logs.sources import log_sources
from shufflecheck.records.shoes import ShoeDefinition, load_shoe
from shufflecheck.stats import DEFAULT_STRATEGIES, AuditResult
from shufflecheck.stats.catalogue import ShoeContext
from shufflecheck.stats.positions import MONTE_CARLO_BELOW
from shufflecheck.stats.power import detectable_shifts

__all__ = [
    "DASK_FROM_BYTES",
    "LogAudit",
    "SmallLog",
    "audit_frame",
    "audit_log",
    "choose_engine",
    "finish_audit",
    "log_deck",
    "total_bytes",
]


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
    items: str = "decks"

    def highlights(self) -> tuple[tuple[str, str, Any], ...]:
        """The best guessing strategy, then rising sequences, then the most sensitive rest."""
        guess = [d for d in self.detectable if d[0].startswith("guess-")][:1]
        rising = [d for d in self.detectable if d[0] == "rising-sequences"]
        rest = [d for d in self.detectable if d not in guess and d not in rising]
        return tuple(guess + rising + rest)[:3]

    def text(self) -> str:
        shown = "; ".join(f"{title} by {q.text()}" for _, title, q in self.highlights())
        return (
            f"a small log: {self.decks:,} {self.items} tested, fewer than the {self.needed:,} its "
            f"battery is built for; with power {self.power:g} it flags only large "
            f"departures, e.g. a shift of {shown}"
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
    deck: DeckDefinition | ShoeDefinition
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
    shoe: ShoeContext | None = None

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
        flagged = sorted((r for r in rows if r["flagged"]), key=lambda r: r["log10_p_adjusted"])
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
        if self.shoe is not None:
            out["log"]["shoe"] = {
                "cards": self.shoe.cards,
                "kinds": len(self.shoe.copies),
                "copies": sorted(set(self.shoe.copies)),
                "feature": self.shoe.feature,
                "classes": list(self.shoe.names),
                "class_counts": list(self.shoe.class_counts),
                "segment": {"start": self.shoe.segment[0] + 1, "cards": self.shoe.segment[1]},
                "zones": list(self.shoe.zones),
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
    definition = deck_for(deck, cards, labels, os.fspath(path))
    return definition, ("codes" if labels == "cards" else labels)


def finish_audit(
    part: Part,
    options: AuditOptions,
    *,
    shown: str,
    paths: Sequence[Path],
    alpha: float,
    rng: np.random.Generator | int | None,
    engine: str = "single process",
    confidence: float = 0.95,
) -> LogAudit:
    """Run the battery on a part's summary and describe the audit."""
    info = _combined_reader(part.readers, shown)
    summary = part.summary
    if summary.decks == 0:
        raise InputError(
            f"{shown}: no decks to test ({info.decks} read, {info.set_aside} set aside, "
            f"{part.reference_only} used only as references)"
        )
    release_free_memory()  # the reading's freed pages, before the battery's convolutions
    result = summary.finish(alpha, rng=rng, since_when_level=confidence)
    arrays = summary.as_arrays()
    small = None
    needed = int(MONTE_CARLO_BELOW * options.deck.size)
    if options.shoe is not None:  # the position-by-value test: 5 expected per cell
        needed = math.ceil(MONTE_CARLO_BELOW * options.deck.size / min(options.shoe.class_counts))
    items = "decks" if options.shoe is None else "shoes"
    if summary.decks < needed:
        power = 0.9
        small = SmallLog(
            summary.decks,
            needed,
            power,
            detectable_shifts(
                summary.statistics, summary.laws, summary.decks, alpha, power, items=items
            ),
            items,
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
        shoe=options.shoe,
    )


def _since_when_rows(
    result: AuditResult, places: dict, times: dict, paths: Sequence[Path]
) -> dict[str, dict[str, Any]]:
    """Row (file, time) of the first deck of each 'since when' stretch."""
    out = {}
    targets = [(ALL, result.overall)] + [(str(k), b) for k, b in result.groups]
    for key, battery in targets:
        found = battery.since_when
        if found is None or key not in places:
            continue
        ordered = np.concatenate(places[key])
        k = found.start - 1
        if not 0 <= k < ordered.size:
            continue
        source, row = split_place(int(ordered[k]))
        entry: dict[str, Any] = {"row": row}
        if len(paths) > 1:
            entry["file"] = str(paths[source])
        if key in times:
            entry["time"] = str(np.concatenate(times[key])[k])
        out["all" if key == ALL else key] = entry
    return out


# --------------------------------------------------------------------------------------
# the entry point


def audit_log(
    path: str | os.PathLike[str] | Sequence[str | os.PathLike[str]],
    *,
    reference: str = "previous",
    labels: str = "codes",
    fmt: str | None = None,
    deck: str | os.PathLike[str] | DeckDefinition | ShoeDefinition | None = None,
    cards: int | None = None,
    feature: str | None = None,
    segment: tuple[int, int] | None = None,
    by: str | None = None,
    time: str | None = None,
    time_format: str | None = None,
    alpha: float = 0.01,
    quarantine: str | os.PathLike[str] | None = None,
    force: bool = True,
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
    confidence: float = 0.95,
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
    deck : path, name, DeckDefinition or ShoeDefinition, optional
        Deck definition (default: the built-in 52-card deck); a reader's own card codes
        are a ``[codes]`` / ``[spelling]`` table in its file. ``shoe(packs=6)`` or a deck
        file with ``copies`` for a shoe (repeated cards), whose rows are checked by counting
        copies and tested with the shoe battery.
    cards : int or None
        Deck size. Without a deck definition, a size other than 52 means a deck of that many
        cards known by integer labels (``labels="int"``); with one, an error when its size
        differs.
    feature : str or None
        Shoes: what the game sees of a card (``rank`` by default; ``blackjack``,
        ``baccarat``, ``cards``, ``colour``, ``suit``); the value tests read it.
    segment : (start, length) or None
        Shoes: reference positions (1-based start) followed by the zone test (default: the
        reference's first 52 cards).
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
    force : bool
        Replace existing quarantine files (default); False refuses them.
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
    confidence : float
        Nominal level of the interval on a since-when start (default 0.95; a policy passes
        its own ``confidence``).
    """
    check_confidence(confidence)
    sources = log_sources(path)
    shown = os.fspath(path) if isinstance(path, (str, os.PathLike)) else f"{len(sources)} logs"
    definition, shoe, chunk_rows = _definition(
        deck, cards, labels, shown, feature, segment, chunk_rows
    )
    options = AuditOptions(
        deck=definition,
        shoe=shoe,
        reference=reference,
        labels="codes" if labels == "cards" else labels,
        fmt=fmt or "auto",
        by=by,
        time=time,
        time_format=time_format,
        quarantine=None if quarantine is None else Path(quarantine),
        force=force,
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
        part, used = audit_parts(
            sources, options, scheduler=scheduler, workers=workers, progress=progress
        )
        return finish_audit(
            part,
            options,
            shown=shown,
            paths=paths,
            alpha=alpha,
            rng=rng,
            engine=used,
            confidence=confidence,
        )
    part = scan_sources(sources, options, progress=progress)
    return finish_audit(
        part, options, shown=shown, paths=paths, alpha=alpha, rng=rng, confidence=confidence
    )


def _definition(
    deck: Any,
    cards: int | None,
    labels: str,
    shown: str,
    feature: str | None,
    segment: tuple[int, int] | None,
    chunk_rows: int,
) -> tuple[DeckDefinition | ShoeDefinition, ShoeContext | None, int]:
    """The deck (or shoe) of an audit, the shoe battery's context, and the rows per chunk
    (for a shoe, scaled so that a chunk holds about as many cards as for 52-card decks)."""
    shoe = load_shoe(deck) if deck is not None else None
    if shoe is None:
        if feature is not None or segment is not None:
            raise InputError(
                "a feature and a segment apply to shoes (decks with repeated cards); give the "
                "shoe as the deck, e.g. shoe(packs=6)",
                argument=("feature", "deck"),
            )
        return deck_for(deck, cards, labels, shown), None, chunk_rows
    if cards is not None and cards != shoe.size:
        raise InputError(f"{shown}: the shoe {shoe.name!r} has {shoe.size} cards, not {cards}")
    if labels not in ("codes", "cards"):
        raise InputError(f"{shown}: a shoe log names its cards by code", argument="labels")
    span = None if segment is None else (int(segment[0]) - 1, int(segment[1]))
    # an audit may test the guessing game against a bracket computed in advance
    context = dataclasses.replace(
        ShoeContext.of(shoe, feature or "rank", segment=span), guess_tables=True
    )
    return shoe, context, max(1000, chunk_rows * 52 // shoe.size)


def audit_frame(
    frame: pd.DataFrame,
    *,
    reference: str = "previous",
    labels: str = "codes",
    deck: str | os.PathLike[str] | DeckDefinition | ShoeDefinition | None = None,
    cards: int | None = None,
    feature: str | None = None,
    segment: tuple[int, int] | None = None,
    by: str | None = None,
    time: str | None = None,
    time_format: str | None = None,
    alpha: float = 0.01,
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES,
    chunk_rows: int = 50_000,
    rng: np.random.Generator | int | None = 0,
    order_column: str | None = None,
    position_columns: str | Sequence[str] | None = None,
    separator: str | None = None,
    name: str = "data frame",
) -> LogAudit:
    """Audit the decks of a pandas DataFrame, read like a log (:func:`audit_log` for the
    arguments; ``by``, ``time`` and ``column:NAME`` references name its columns)."""
    definition, shoe, chunk_rows = _definition(
        deck, cards, labels, name, feature, segment, chunk_rows
    )
    options = AuditOptions(
        deck=definition,
        shoe=shoe,
        reference=reference,
        labels="codes" if labels == "cards" else labels,
        by=by,
        time=time,
        time_format=time_format,
        strategies=tuple(strategies),
        chunk_rows=chunk_rows,
        order_column=order_column,
        position_columns=position_columns
        if position_columns is None or isinstance(position_columns, str)
        else tuple(position_columns),
        separator=separator,
    )
    options.parsed_reference  # noqa: B018 - a bad reference fails before any reading
    part = scan_frame(frame, options, name=name)
    return finish_audit(part, options, shown=name, paths=[Path(name)], alpha=alpha, rng=rng)


#: With ``engine="auto"``, several logs of at least this many bytes go to Dask.
DASK_FROM_BYTES = 64 * 2**20


def choose_engine(
    path: str | os.PathLike[str] | Sequence[str | os.PathLike[str]],
    engine: str = "auto",
    scheduler: str | None = None,
) -> str:
    """``single`` or ``dask`` for ``engine="auto"``: Dask when a scheduler is given, or when
    there are several files of at least :data:`DASK_FROM_BYTES` together and dask is
    installed (starting a cluster costs seconds); one process otherwise."""
    if engine != "auto":
        return engine
    if scheduler is not None:
        return "dask"
    try:
        sources = log_sources(path)
    except InputError:
        return "single"  # the audit itself says what is wrong
    if len(sources) < 2 or sum(s.size for s in sources) < DASK_FROM_BYTES:
        return "single"
    return "dask" if dask_installed() else "single"


def total_bytes(path: str | os.PathLike[str] | Iterable[str | os.PathLike[str]]) -> int:
    """Bytes of the logs an audit of ``path`` reads (the total of its progress)."""
    try:
        return sum(s.size for s in log_sources(path))  # type: ignore[arg-type]
    except InputError:
        return 0
