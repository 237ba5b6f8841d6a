"""Invented logs for the monitoring tests: tables of a card room, simulated deck by deck.

Everything here is made up for the tests (as the demo's card room is): each table's decks
come from ``simulate_play`` (every deck is the procedure applied to the previous one) or
from uniform numpy permutations (an ideal machine), with a time every ``every`` seconds.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from shufflecheck.models.procedures import parse_procedure, simulate_play
from shufflecheck.records.logs import write_log

START = np.datetime64("2026-11-02T18:00:00")


def table_decks(
    procedure: str | None,
    decks: int,
    *,
    seed: int,
    change: tuple[int, str] | None = None,
) -> np.ndarray:
    """``decks + 1`` recorded orders (the first is the starting order); ``procedure`` None
    means an ideal machine (uniform permutations), ``change=(k, other)`` a fault from deck
    ``k`` on."""
    rng = np.random.default_rng(seed)
    if procedure is None:
        out = np.empty((decks + 1, 52), dtype=np.int16)
        out[0] = np.arange(52)
        out[1:] = rng.permuted(np.tile(np.arange(52, dtype=np.int16), (decks, 1)), axis=1)
        return out
    first = parse_procedure(procedure)
    other = None if change is None else (change[0], parse_procedure(change[1]))
    return simulate_play(first, 52, decks, rng=rng, change=other)


def frame(name: str, decks: np.ndarray, *, every: int, offset: int = 0) -> pd.DataFrame:
    """One table's decks as rows (table, recorded_at, deck array)."""
    times = START + np.timedelta64(offset, "s") + np.arange(len(decks)) * np.timedelta64(every, "s")
    return pd.DataFrame(
        {"table": name, "recorded_at": times, "index": np.arange(len(decks))}
    ).assign(order=list(decks))


def write_frame(path: Path, rows: pd.DataFrame) -> Path:
    """Write rows (sorted by time) as a CSV log with table and recorded_at columns."""
    rows = rows.sort_values(["recorded_at", "table"], kind="stable")
    decks = np.stack(rows["order"].to_numpy()).astype(np.int16)
    stamps = pd.to_datetime(rows["recorded_at"]).dt.strftime("%Y-%m-%dT%H:%M:%S")
    return write_log(
        path,
        decks,
        columns={"table": rows["table"].tolist(), "recorded_at": stamps.tolist()},
    )


def write_days(folder: Path, rows: pd.DataFrame, *, prefix: str = "day") -> list[Path]:
    """One log per calendar day (every table's decks of that day), in day order."""
    days = pd.to_datetime(rows["recorded_at"]).dt.floor("D")
    paths = []
    for k, (_, part) in enumerate(rows.groupby(days, sort=True)):
        paths.append(write_frame(folder / f"{prefix}-{k + 1:02d}.csv", part))
    return paths
