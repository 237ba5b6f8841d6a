"""Result objects of log reading, the reason codes of set-aside rows, and shared constants."""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

LogFormat = Literal["auto", "csv", "wide", "jsonl", "parquet"]
FORMATS = ("auto", "csv", "wide", "jsonl", "parquet")
DEFAULT_CHUNK_ROWS = 50_000

#: Reason codes of rows set aside (the ``reason`` column of a quarantine file).
REASONS = {
    "empty-order": "the order is empty",
    "empty-field": "a position is empty",
    "unknown-code": "a code that is not a card of the deck",
    "not-integer": "an integer label that is not an integer",
    "out-of-range": "an integer label outside 0..n-1 or 1..n",
    "mixed-base": "integer labels numbered both from 0 and from 1",
    "wrong-length": "more or fewer cards than the deck has",
    "duplicate-card": "a card appears more than once",
    "malformed-row": "a CSV row with the wrong number of fields, or not UTF-8 text",
    "malformed-json": "a line that is not a JSON object",
    "missing-order": "a JSON line without an 'order' key",
}

POSITION_COLUMN = re.compile(r"^(p|pos|position|card)?[ _-]?(\d+)$", re.IGNORECASE)
QUARANTINE_HEADER = ("row", "reason", "problem", "content")


#: Separators between the cards of one order field, by name (``space``: any run of spaces or tabs).
SEPARATORS = {"space": None, "comma": ",", "semicolon": ";", "pipe": "|"}


@dataclass(frozen=True)
class ColumnMap:
    """Where a log keeps what the reader needs (None: found as docs/formats-logs.md says).

    ``order`` names the column of card orders; ``positions`` the position columns of a
    wide file, top first; ``before`` a column with each deck's own starting order;
    ``names`` declares the columns of a file without a header row.
    """

    order: str | None = None
    positions: tuple[str, ...] | None = None
    before: str | None = None
    names: tuple[str, ...] | None = None


# --------------------------------------------------------------------------------------
# results


@dataclass(frozen=True)
class SetAside:
    """Rows of one chunk that were set aside (only with a quarantine file).

    ``columns`` holds their kept columns where the row could be split into columns;
    ``readable[k]`` is False where it could not (a CSV row with the wrong number of fields,
    a line that is not JSON): the group of such a row is unknown.
    """

    rows: np.ndarray
    columns: pd.DataFrame
    readable: np.ndarray


@dataclass(frozen=True)
class LogChunk:
    """Valid decks of one chunk of a log, in file order.

    Attributes
    ----------
    decks : ndarray of int16, shape (rows, n)
        ``decks[k, i]`` is the label of the card at position ``i`` (0 = top) of deck ``k``.
    rows : ndarray of int64, shape (rows,)
        Row numbers as the user counts them (CSV: header = row 1; JSONL: line number;
        Parquet: 1-based row index).
    columns : pandas.DataFrame
        Every other column of those rows (index 0..rows-1). CSV cells are text as written
        (empty cells are ``""``); JSON and Parquet values keep their types.
    set_aside : SetAside
        Rows of this chunk set aside into the quarantine file (empty without one).
    before : ndarray of int16, shape (rows, n), or None
        Each deck's own starting order (labels, top first), when the log has a before
        column (``before_column``); None otherwise.
    """

    decks: np.ndarray
    rows: np.ndarray
    columns: pd.DataFrame
    set_aside: SetAside
    before: np.ndarray | None = None

    def __len__(self) -> int:
        return int(self.decks.shape[0])


@dataclass(frozen=True)
class LogSummary:
    """What reading a log did.

    ``decks`` valid decks returned; ``set_aside`` rows written to the quarantine file with
    per-reason counts in ``reasons`` (see :data:`REASONS`); ``blank_rows`` empty lines
    skipped (they hold no deck). ``labels`` is the numbering that was used (``codes``,
    ``int0``, ``int1``; ``int`` if no valid row fixed it) and ``base_row`` the row that
    fixed it in ``int`` mode. ``complete`` is False until the whole file was read.
    ``order_column`` is the column the orders were read from (or ``positions 1..N``),
    ``separator`` the separator between cards inside an order field and whether it was
    ``detected`` or ``given``; ``header`` is ``read`` or ``declared`` (no header row).
    """

    path: str
    format: str
    deck: str
    labels: str
    decks: int
    set_aside: int
    reasons: dict[str, int]
    blank_rows: int
    quarantine: str | None
    base_row: int | None
    complete: bool
    order_column: str = "order"
    separator: str = "space"
    separator_source: str = "detected"
    header: str = "read"

    @property
    def rows(self) -> int:
        """Every row seen below the header: decks + set aside + blank."""
        return self.decks + self.set_aside + self.blank_rows
