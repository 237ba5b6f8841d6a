"""Files of recorded deck orders: read and validate them in chunks, write them, and turn
absolute orders into permutations relative to a reference order.

Formats (docs/formats-logs.md has the full description):

* ``csv`` -- one deck per row, a column ``order`` with the codes top to bottom separated by
  whitespace; every other column is kept.
* ``wide`` -- CSV with one column per position, headed ``p1..pN``, ``pos1..posN``,
  ``position1..positionN``, ``card1..cardN`` or ``1..N`` (taken in numeric order).
* ``jsonl`` -- one JSON object per line with an ``order`` list (or a text of codes).
* ``parquet`` -- an ``order`` column (list or text) or position columns; needs pyarrow.

Row numbers are the ones a person sees: in CSV the header is row 1 and the first deck row 2
(blank lines count, a quoted cell spanning lines stays one row), in JSON Lines the 1-based
line number, in Parquet the 1-based row index. A bad row raises :class:`InputError` naming
file, row and problem; with a quarantine file it is written there instead (row, reason,
problem, raw content) and reading goes on. Input files are opened read-only.

Reference orders (:class:`Reference`): ``previous`` is the default (each deck against the
deck before it in the log, of the same group when grouped; the first deck is only a
reference), ``first``, ``deck`` or an explicit order. :class:`ReferenceStream` turns chunks
into relative permutations (:func:`shufflecheck.records.orders.relative_to`) across chunk
boundaries.

References
----------
.. [1] Y. Shafranovich, "Common Format and MIME Type for Comma-Separated Values (CSV)
       Files", RFC 4180, 2005 (quoting; a record may span lines inside quotes).
.. [2] JSON Lines, https://jsonlines.org (one JSON value per line, UTF-8).
.. [3] Apache Parquet format specification, https://parquet.apache.org/docs/.
.. [4] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of Mathematical
       Statistics, Hayward, CA, 1988, ch. 3 (a deck relative to a reference order).
"""

from __future__ import annotations

from shufflecheck.records.logs._common import REASONS, LogChunk, LogFormat, LogSummary, SetAside
from shufflecheck.records.logs.reader import LogReader, column_names, read_frame, read_log
from shufflecheck.records.logs.reference import Reference, ReferenceStream, RelativeChunk
from shufflecheck.records.logs.writer import write_log

__all__ = [
    "REASONS",
    "LogChunk",
    "LogFormat",
    "LogReader",
    "LogSummary",
    "Reference",
    "ReferenceStream",
    "RelativeChunk",
    "SetAside",
    "column_names",
    "read_frame",
    "read_log",
    "write_log",
]
