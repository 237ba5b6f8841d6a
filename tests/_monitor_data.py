"""Invented logs for the monitoring tests: tables of a card room, simulated deck by deck.

Everything here is made up for the tests (as the demo's card room is): each table's decks
come from a procedure applied to the previous deck (as ``simulate_play`` does) or from
uniform numpy permutations (an ideal machine), with a time every ``every`` seconds.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from shufflecheck.models.procedures import parse_procedure
from shufflecheck.records.logs import write_log

START = np.datetime64("2026-11-02T18:00:00")


def table_decks(
    procedure: str | None,
    decks: int,
    *,
    seed: int,
    change: tuple[int, str | None] | None = None,
) -> np.ndarray:
    """``decks + 1`` recorded orders (the first is the starting order); every deck is the
    procedure applied to the deck before it, as ``simulate_play`` does. ``procedure`` None
    means an ideal machine (a uniform permutation); ``change=(k, other)`` a change of
    procedure from deck ``k`` on."""
    rng = np.random.default_rng(seed)

    def relative(spec: str | None, count: int) -> np.ndarray:
        if spec is None:
            return rng.permuted(np.tile(np.arange(52, dtype=np.int16), (count, 1)), axis=1)
        return parse_procedure(spec).sample(count, 52, rng=rng)

    if change is None:
        rel = relative(procedure, decks)
    else:
        start, other = change
        rel = np.concatenate([relative(procedure, start - 1), relative(other, decks - start + 1)])
    out = np.empty((decks + 1, 52), dtype=np.int16)
    out[0] = np.arange(52)
    for t in range(decks):
        out[t + 1] = out[t][rel[t]]
    return out


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
