"""Synthetic logs of recorded deck orders (invented data for demonstrations and planning).

A dealing procedure is simulated deck after deck (:func:`shufflecheck.models.procedures.
simulated_chunks`) and written as a log that ``shufflecheck audit`` reads exactly as a
recorded one: a ``deck`` number, optionally a ``table`` and ``recorded_at`` times, then the
order. CSV and TSV logs are written block by block (a million decks never sit in memory at
once); JSON Lines logs are built whole.
"""

from __future__ import annotations

import datetime as dt
import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import check_output
from shufflecheck.models.permute import deck_dtype
from shufflecheck.models.procedures import Procedure, relative_chunks, simulate_play
from shufflecheck.records.cards import DeckDefinition, integer_deck, load_deck
from shufflecheck.records.logs.writer import LogWriter, write_log
from shufflecheck.records.shoes import ShoeDefinition, load_shoe

__all__ = ["SimulatedLog", "simulate_log"]


@dataclass(frozen=True)
class SimulatedLog:
    """What :func:`simulate_log` wrote."""

    out: str
    procedure: str
    cards: int
    decks: int
    rows: int
    seed: int
    reference: str
    change: dict | None
    labels: str
    repeats: int = 1  # runs of the procedure per deck


def simulate_log(
    out: str | os.PathLike[str],
    procedure: Procedure,
    *,
    cards: int | None = None,
    decks: int = 1000,
    seed: int = 1,
    repeats: int = 1,
    reference: str = "previous",
    change: tuple[int, Procedure] | None = None,
    deck: DeckDefinition | ShoeDefinition | str | os.PathLike[str] | None = None,
    table: str | None = None,
    start: str | None = None,
    every: int = 120,
    force: bool = True,
) -> SimulatedLog:
    """Simulate ``decks`` recorded decks after ``procedure`` and write them to ``out``.

    Parameters
    ----------
    out : path
        ``.csv``, ``.tsv`` or ``.jsonl`` log to write (replaced atomically).
    procedure : Procedure
        The dealing procedure (``repeats`` runs per deck; ``change=(k, other)`` switches to
        ``other`` from the ``k``-th simulated deck on).
    cards : int, optional
        Cards per deck; default the procedure's own count, else 52.
    deck : deck or shoe definition, optional
        Card codes; default the standard 52-card deck for 52 cards, else integer labels
        ``1..n``. A shoe (``shoe(packs=6)``, a deck file with copies) writes each physical
        card as its code, copies alike.
    table : str, optional
        A ``table`` column with this value on every row.
    start : str, optional
        ISO time of the first row: adds ``recorded_at``, ``every`` seconds apart.
    force : bool
        Replace an existing ``out`` (default); False refuses it, checked before any work
        and again, exclusively, when the file is put in place.

    Returns
    -------
    SimulatedLog
    """
    shoe = load_shoe(deck) if deck is not None else None
    n = cards if cards is not None else (procedure.cards or (shoe.size if shoe else 52))
    procedure.check_cards(n)
    definition: DeckDefinition | ShoeDefinition | None
    if shoe is not None:
        definition = shoe
    else:
        definition = load_deck(deck) if deck is not None else (load_deck() if n == 52 else None)
    if definition is not None and definition.size != n:
        raise InputError(
            f"deck definition has {definition.size} cards but {{cards}} is {n}", argument="cards"
        )
    first = None
    if start is not None:
        try:
            first = dt.datetime.fromisoformat(start)
        except ValueError:
            raise InputError(
                f"start {start!r} is not an ISO time like 2026-11-02T18:00", argument="start"
            ) from None
        try:
            first + dt.timedelta(seconds=every * decks)
        except OverflowError:
            raise InputError(
                f"{{start}} {start} with {decks:,} decks every {every:,} seconds runs past the "
                "end of the calendar (year 9999); choose an earlier {start} or a smaller {every}",
                argument=("start", "every"),
            ) from None
    labels = "codes" if definition is not None else "int1"
    check_output(
        out, force=force, size=_estimated_bytes(definition, n, decks, table, first is not None)
    )
    log_deck = definition if definition is not None else integer_deck(n)
    options = dict(rng=seed, reference=reference, repeats=repeats, change=change)
    target = Path(out)
    names = ["deck", *(["table"] if table is not None else []), *(["recorded_at"] * bool(first))]
    if target.suffix.lower() in (".csv", ".tsv"):
        # the rows of simulated_chunks, composed inside the writer: the card words are
        # looked up in the composition's last gather, straight into the text
        chunks = relative_chunks(procedure, n, decks, **options)
        with LogWriter(target, log_deck, names, labels=labels, check=False, force=force) as log:
            previous = np.arange(n, dtype=deck_dtype(n))
            log.write(previous[None, :], _columns(0, 1, table, first, every))
            row = 1
            for relative in chunks:
                columns = _columns(row, len(relative), table, first, every)
                if reference == "first":
                    log.write(relative, columns)
                else:
                    previous = log.write_composed(relative, previous, columns)
                row += len(relative)
    else:
        orders = simulate_play(procedure, n, decks, **options)
        write_log(
            target,
            orders,
            log_deck,
            _columns(0, decks + 1, table, first, every),
            labels=labels,
            force=force,
        )
    return SimulatedLog(
        out=str(out),
        procedure=procedure.describe(),
        cards=n,
        decks=decks,
        rows=decks + 1,
        seed=seed,
        reference=reference,
        change=None if change is None else {"from": change[0], "procedure": change[1].describe()},
        labels="codes" if definition is not None else "int (1..n)",
        repeats=repeats,
    )


def _estimated_bytes(
    definition: DeckDefinition | ShoeDefinition | None,
    cards: int,
    decks: int,
    table: str | None,
    timed: bool,
) -> int:
    """About how many bytes the log takes on disk (checked against the free space)."""
    if isinstance(definition, ShoeDefinition):
        words = list(definition.kinds.cards)
    elif definition is not None:
        words = list(definition.cards)
    else:
        words = [str(cards)]
    width = max(len(w.encode("utf-8")) for w in words) + 1
    extra = len(str(decks)) + 1 + (len(table) + 1 if table else 0) + (26 if timed else 0)
    return (decks + 1) * (cards * width + extra)


def _columns(
    row: int, count: int, table: str | None, first: dt.datetime | None, every: int
) -> dict[str, object]:
    """The kept columns of rows ``row .. row + count - 1``."""
    columns: dict[str, object] = {"deck": np.arange(row, row + count)}
    if table is not None:
        columns["table"] = np.full(count, table)
    if first is not None:
        columns["recorded_at"] = _times(first, every, row, count)
    return columns


def _times(first: dt.datetime, every: int, row: int, count: int) -> object:
    """ISO times (to the second) of rows ``row ..``: in numpy for naive times (the first and
    last are made in Python, so a time out of range fails as it would there)."""
    try:
        first + dt.timedelta(seconds=every * (row + count - 1))
    except OverflowError:
        raise InputError(
            f"recorded_at times from {first.isoformat()} every {every} s leave the calendar "
            "(year 1 to 9999)",
            argument="every",
        ) from None
    if first.tzinfo is None:
        base = np.datetime64(first.replace(microsecond=0), "s")
        steps = np.arange(row, row + count, dtype=np.int64) * every
        return np.datetime_as_string(base + steps.astype("timedelta64[s]"), unit="s")
    return [
        (first + dt.timedelta(seconds=every * i)).isoformat(timespec="seconds")
        for i in range(row, row + count)
    ]
