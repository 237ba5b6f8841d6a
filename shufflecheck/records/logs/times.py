"""Times of recorded decks: one format per log, decided once, never guessed.

A time column is read with an explicit ``time_format`` (``strptime`` codes, e.g.
``%d/%m/%Y %H:%M``) or, without one, with the first format of this list that reads every
value of the first chunk: ISO 8601 (``2026-11-02T18:00:00``, with or without a UTC offset),
then dates with ``/``, ``-`` or ``.`` in day-month-year, month-day-year or year-month-day
order, each optionally followed by a 24-hour or 12-hour (``10:00 PM``) time, then times of
day alone. When a day-first and a month-first format both read every value
(``12/01/2026`` is the 12th of January or the 1st of December), the column is refused with
a message naming the ambiguity and ``time_format``: the tool never picks one silently. Once
decided, the format holds for the whole log; a later value it cannot read is an error
naming the row. Library warnings are never passed on to the user.

References
----------
.. [1] ISO 8601-1:2019, *Date and time -- Representations for information interchange*.
.. [2] The Open Group Base Specifications Issue 7, ``strptime`` (conversion
       specifications ``%d %m %Y %H %M %S %I %p``).
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence

import numpy as np
import pandas as pd

from shufflecheck.common.errors import InputError

__all__ = ["TimeReader", "candidate_formats"]

_DATES = {
    "day-first": ("%d/%m/%Y", "%d-%m-%Y", "%d.%m.%Y", "%d/%m/%y"),
    "month-first": ("%m/%d/%Y", "%m-%d-%Y", "%m.%d.%Y", "%m/%d/%y"),
    "year-first": ("%Y/%m/%d", "%Y.%m.%d"),
}
_CLOCKS = ("%H:%M", "%H:%M:%S", "%I:%M %p", "%I:%M:%S %p", "%I:%M%p")
_SAMPLE = 2000


def candidate_formats() -> list[tuple[str, str]]:
    """``(format, order)`` pairs tried when no format is given, in order of preference
    (ISO 8601 first; ``order`` is day-first, month-first, year-first or time-only)."""
    out: list[tuple[str, str]] = [("ISO8601", "iso")]
    for order, dates in _DATES.items():
        for date in dates:
            out.append((date, order))
            for sep in (" ", "T", ", "):
                out += [(f"{date}{sep}{clock}", order) for clock in _CLOCKS]
    out += [(clock, "time-only") for clock in _CLOCKS]
    return out


def _parse(values: pd.Series, fmt: str) -> pd.Series:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        if fmt == "ISO8601":
            return pd.to_datetime(values, format="ISO8601", errors="coerce", utc=True)
        return pd.to_datetime(values, format=fmt, errors="coerce")


def _reads_all(values: pd.Series, fmt: str) -> bool:
    return not _parse(values, fmt).isna().any()


class TimeReader:
    """Turns the text of a time column into nanosecond stamps (``int64``), chunk by chunk.

    Parameters
    ----------
    column : str
        The column's name (for messages).
    time_format : str, optional
        ``strptime`` format, or ``"ISO8601"``; None decides from the first chunk.
    where : str
        Prefix of messages (the log's name).
    """

    def __init__(self, column: str, time_format: str | None = None, where: str = "") -> None:
        self.column = column
        self.where = where
        self.format: str | None = time_format
        self.given = time_format is not None
        if time_format is not None and (not isinstance(time_format, str) or not time_format):
            raise InputError("time_format must be a strptime format text", argument="time_format")

    def _decide(self, values: pd.Series) -> str:
        sample = values.iloc[:_SAMPLE]
        if _reads_all(sample, "ISO8601"):
            return "ISO8601"
        # the formats that read the most values (a stray bad value is then reported at its
        # row by the caller, in the format that fits the rest)
        read = [(int(_parse(sample, f).notna().sum()), f, o) for f, o in candidate_formats()]
        best = max(count for count, _, _ in read)
        fits = [(f, o) for count, f, o in read if count == best and best > 0]
        if not fits:
            shown = values.iloc[0]
            raise InputError(
                f"{self.where}: {self.column} value {shown!r} is not a time in a format the "
                "reader knows (ISO 8601, day/month/year, month/day/year, year/month/day, "
                "times of day); give its format with {time_format} (e.g. '%d/%m/%Y %H:%M')",
                argument="time_format",
            )
        if fits[0][1] == "iso":
            return fits[0][0]
        orders = {order for _, order in fits}
        if "day-first" in orders and "month-first" in orders:
            day = next(f for f, o in fits if o == "day-first")
            month = next(f for f, o in fits if o == "month-first")
            differ = (_parse(sample, day) != _parse(sample, month)).to_numpy()
            example = sample.iloc[int(np.argmax(differ))] if differ.any() else sample.iloc[0]
            raise InputError(
                f"{self.where}: {self.column} values such as {example!r} read as day-first "
                f"({day}) and as month-first ({month}) alike; give the format with "
                "{time_format}",
                argument="time_format",
            )
        return fits[0][0]

    def stamps(self, values: pd.Series, rows: np.ndarray) -> np.ndarray:
        """Nanoseconds since 1970 (UTC where the text has an offset) for each value."""
        text = values.astype(str).str.strip()
        if len(text) == 0:
            return np.zeros(0, dtype=np.int64)
        if self.format is None:
            self.format = self._decide(text)
        parsed = _parse(text, self.format)
        bad = np.flatnonzero(parsed.isna().to_numpy())
        if bad.size:
            row = int(rows[bad[0]])
            how = "the given" if self.given else "this log's"
            raise InputError(
                f"{self.where} row {row}: {self.column} value {values.iloc[bad[0]]!r} does not "
                f"match {how} time format {self.format!r}; give the format with {{time_format}}",
                argument="time_format",
            )
        if getattr(parsed.dt, "tz", None) is not None:
            parsed = parsed.dt.tz_convert("UTC").dt.tz_localize(None)
        return parsed.to_numpy().astype("datetime64[ns]").astype(np.int64)


def first_backwards(stamps: Sequence[int] | np.ndarray, previous: int | None) -> int | None:
    """Index of the first stamp earlier than the one before it (``previous`` before all)."""
    values = np.asarray(stamps, dtype=np.int64)
    if previous is not None:
        values = np.concatenate([[previous], values])
    back = np.flatnonzero(np.diff(values) < 0)
    if not back.size:
        return None
    return int(back[0]) + (0 if previous is not None else 1)
