"""Writing logs that :func:`~shufflecheck.records.logs.read_log` reads back exactly (atomically)."""

from __future__ import annotations

import contextlib
import csv
import functools
import io
import itertools
import json
import os
import re
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import atomic_open
from shufflecheck.records.cards import DeckDefinition, load_deck
from shufflecheck.records.shoes import ShoeDefinition, load_shoe

if TYPE_CHECKING:  # pandas is imported where a column needs it
    import pandas as pd

# --------------------------------------------------------------------------------------
# writing


def _checked_decks(decks: np.ndarray, deck: DeckDefinition | ShoeDefinition) -> np.ndarray:
    array = np.asarray(decks)
    n = deck.size
    if array.ndim != 2 or array.shape[1] != n or array.dtype.kind not in "iu":
        raise InputError(
            f"decks must be an integer array of shape (decks, {n}), got {array.dtype} {array.shape}"
        )
    ok = _arrangement_rows(array, n)
    if not ok.all():
        k = int(np.argmin(ok))
        raise InputError(f"deck {k} (0-based) is not an arrangement of deck {deck.name!r}")
    return array


def _arrangement_rows(array: np.ndarray, n: int) -> np.ndarray:
    """Rows holding every label 0..n-1 exactly once, in blocks of rows (small copies).

    Up to 64 cards: the OR of ``2^label`` over a row is ``2^n - 1`` exactly when all ``n``
    labels occur among its ``n`` cells, i.e. each once (a negative label wraps to a shift
    of 64 or more, which numpy defines as 0, so it adds no bit; one in n..63 adds a bit
    above the mask). Beyond 64 cards: a row's sorted labels are 0..n-1.
    """
    ok = np.empty(array.shape[0], dtype=bool)
    step = max(1, (1 << 22) // max(n, 1))  # about 4M cells at a time
    if 0 < n <= 64:
        full, one = np.uint64((1 << n) - 1), np.uint64(1)
        for lo in range(0, array.shape[0], step):
            bits = np.left_shift(one, array[lo : lo + step], dtype=np.uint64, casting="unsafe")
            ok[lo : lo + step] = np.bitwise_or.reduce(bits, axis=1) == full
        return ok
    labels = np.arange(n, dtype=array.dtype)
    for lo in range(0, array.shape[0], step):
        ok[lo : lo + step] = (np.sort(array[lo : lo + step], axis=1) == labels).all(axis=1)
    return ok


def _columns_frame(columns: Any, rows: int) -> pd.DataFrame:
    import pandas as pd

    if columns is None:
        return pd.DataFrame(index=range(rows))
    frame = (
        columns.reset_index(drop=True)
        if isinstance(columns, pd.DataFrame)
        else pd.DataFrame(dict(columns))
    )
    if len(frame) != rows:
        raise InputError(f"columns have {len(frame)} rows, decks have {rows}")
    clash = [c for c in frame.columns if str(c).strip().lower() == "order"]
    if clash:
        raise InputError("a kept column may not be called 'order'")
    return frame


def _order_texts(decks: np.ndarray, words: list[str]) -> list[str]:
    """Each deck as words separated by single spaces (vectorised when widths are equal)."""
    encoded = [w.encode("utf-8") for w in words]
    width = len(encoded[0])
    n = decks.shape[1]
    if all(len(e) == width for e in encoded):
        cells = np.array([e + b" " for e in encoded], dtype=f"S{width + 1}")
        block = cells[decks].view(np.uint8).reshape(decks.shape[0], n * (width + 1))
        line = np.ascontiguousarray(block[:, :-1])
        return [x.decode("utf-8") for x in line.view(f"S{n * (width + 1) - 1}").ravel()]
    table = np.array(words, dtype=object)
    return [" ".join(row) for row in table[decks].tolist()]


def write_log(
    path: str | os.PathLike[str],
    decks: np.ndarray,
    deck: DeckDefinition | ShoeDefinition | str | os.PathLike[str] | None = None,
    columns: pd.DataFrame | Mapping[str, Sequence[Any]] | None = None,
    *,
    labels: Literal["codes", "int0", "int1"] = "codes",
    force: bool = True,
) -> Path:
    """Write decks as a log that :func:`read_log` reads back exactly (atomically).

    ``.csv`` writes the kept ``columns`` then ``order`` (canonical codes separated by single
    spaces, or integer labels with ``labels="int0"``/``"int1"``); ``.jsonl``/``.ndjson``
    writes one object per line with the columns and an ``order`` list.

    Parameters
    ----------
    path : path
        Output file (replaced atomically if it exists).
    decks : ndarray, shape (D, n)
        Arrangements, labels of ``deck`` top first (for a shoe: physical cards, labelled
        by their reference position; each is written as its card code, copies alike).
    deck : DeckDefinition, ShoeDefinition, name or path, optional
        Default: built-in ``standard-52``; ``shoe(packs=6)`` and deck files with ``copies``
        give shoes.
    columns : DataFrame or mapping of column -> values, optional
        Other columns, one value per deck (no column may be called ``order``).
    labels : {"codes", "int0", "int1"}
    force : bool
        Replace an existing file (default); False refuses it, checked again (exclusively)
        when the file is put in place, so two runs cannot both write it.
    """
    shoe = load_shoe(deck) if deck is not None else None
    definition: DeckDefinition | ShoeDefinition = shoe if shoe is not None else load_deck(deck)
    array = _checked_decks(decks, definition)
    target = Path(path)
    suffix = target.suffix.lower()
    json_lines = suffix in (".jsonl", ".ndjson")
    if json_lines:
        frame = _columns_frame(columns, array.shape[0])
    else:
        kept = _kept_columns(columns, array.shape[0])
    words = _label_words(definition, labels)
    block = 100_000
    if json_lines:
        with atomic_open(target, "w", force=force) as handle:
            for start in range(0, array.shape[0], block):
                part = array[start : start + block]
                records = frame.iloc[start : start + block].to_dict("records")
                for record, row in zip(records, part.tolist(), strict=True):
                    clean = {str(k): _json_value(v) for k, v in record.items()}
                    order = (
                        [words[x] for x in row]
                        if labels == "codes"
                        else [x + (1 if labels == "int1" else 0) for x in row]
                    )
                    clean["order"] = order
                    handle.write(json.dumps(clean, ensure_ascii=False, allow_nan=False) + "\n")
        return target
    if suffix not in (".csv", ".tsv"):
        raise InputError(f"cannot write a log as {target.name}: use .csv, .tsv or .jsonl")
    names = [name for name, _ in kept]
    with LogWriter(target, definition, names, labels=labels, check=False, force=force) as log:
        for start in range(0, array.shape[0], block):
            stop = start + block
            log.write(array[start:stop], {n: _rows_of(v, start, stop) for n, v in kept})
    return target


def _label_words(definition: DeckDefinition | ShoeDefinition, labels: str) -> list[str]:
    if labels not in ("codes", "int0", "int1"):
        raise InputError(f"labels {labels!r} is not one of codes, int0, int1")
    if isinstance(definition, ShoeDefinition):
        if labels != "codes":
            raise InputError("a shoe log names its cards by code (labels='codes')")
        return [definition.kinds.cards[k] for k in definition.reference_kinds]
    if labels == "codes":
        return list(definition.cards)
    base = 1 if labels == "int1" else 0
    return [str(k + base) for k in range(definition.size)]


class LogWriter:
    """A CSV or TSV log written block by block, for logs too large to hold at once.

    ``columns`` names the kept columns (written before ``order``); each :meth:`write`
    gives a block of decks and one value per deck for every column. The file appears
    (atomically, by rename) when the ``with`` block ends without an error; the bytes are
    those :func:`write_log` writes for the same rows. ``check=False`` skips the check that
    every row is an arrangement, for decks built as compositions of sampled permutations;
    ``force=False`` refuses an existing file (checked again, exclusively, at the rename).

    Examples
    --------
    >>> with LogWriter("log.csv", columns=["deck"]) as log:  # doctest: +SKIP
    ...     log.write(decks, {"deck": range(len(decks))})
    """

    def __init__(
        self,
        path: str | os.PathLike[str],
        deck: DeckDefinition | ShoeDefinition | str | os.PathLike[str] | None = None,
        columns: Sequence[str] = (),
        *,
        labels: Literal["codes", "int0", "int1"] = "codes",
        check: bool = True,
        force: bool = True,
    ) -> None:
        self.path = Path(path)
        self.force = force
        suffix = self.path.suffix.lower()
        if suffix not in (".csv", ".tsv"):
            raise InputError(
                f"cannot write a log block by block as {self.path.name}: use .csv or .tsv"
            )
        shoe = load_shoe(deck) if deck is not None else None
        self.deck: DeckDefinition | ShoeDefinition = shoe if shoe is not None else load_deck(deck)
        self.columns = [str(c) for c in columns]
        if any(c.strip().lower() == "order" for c in self.columns):
            raise InputError("a kept column may not be called 'order'")
        self.words = _label_words(self.deck, labels)
        self.codes = _fixed_codes(self.words)
        self.delimiter = "\t" if suffix == ".tsv" else ","
        self.check = check
        self.rows = 0
        self._stack: contextlib.ExitStack | None = None
        self._handle: Any = None

    def __enter__(self) -> LogWriter:
        stack = contextlib.ExitStack()
        self._handle = stack.enter_context(atomic_open(self.path, "wb", force=self.force))
        self._stack = stack
        header = io.StringIO()
        csv.writer(header, delimiter=self.delimiter, lineterminator="\n").writerow(
            [*self.columns, "order"]
        )
        self._handle.write(header.getvalue().encode("utf-8"))
        return self

    def __exit__(self, *exc: Any) -> bool:
        stack, self._stack, self._handle = self._stack, None, None
        return bool(stack is not None and stack.__exit__(*exc))

    def write(self, decks: np.ndarray, columns: Mapping[str, Sequence[Any]] | None = None) -> None:
        """Append ``decks`` (shape ``(k, n)``) with one value per deck of each column."""
        if self._handle is None:
            raise RuntimeError("LogWriter.write outside its with block")
        part = _checked_decks(decks, self.deck) if self.check else np.asarray(decks)
        fields = self._fields(columns, len(part))
        if len(part):
            self._write_rows(part, fields)

    def _fields(self, columns: Mapping[str, Sequence[Any]] | None, count: int) -> list[Any]:
        """The kept columns as CSV fields, checked: the log's columns, one value per deck."""
        given = dict(columns or {})
        if set(given) != set(self.columns):
            raise InputError(
                f"columns {sorted(given)} do not match the log's columns {self.columns}"
            )
        values = [_column_values(given[name]) for name in self.columns]
        if any(len(v) != count for v in values):
            raise InputError(f"columns must have one value for each of the {count} decks")
        return [_csv_field(v, self.delimiter) for v in values]

    def _write_rows(self, part: np.ndarray, fields: list[Any]) -> None:
        runs = _equal_width_runs(fields, len(part))
        if self.codes is not None and runs is not None:
            for lo, hi in runs:  # rows of one width: one byte matrix each
                matrix = _csv_rows(
                    part[lo:hi], [f.rows(lo, hi) for f in fields], self.codes, self.delimiter
                )
                self._handle.write(matrix)
        else:
            orders = _order_lines(part, self.words)
            cells_here = [f.cells() for f in fields]
            # one flat list of pieces, joined once: cell, separator, ..., order line
            stride = 2 * len(cells_here) + 1
            pieces: list[bytes] = [self.delimiter.encode()] * (len(orders) * stride)
            for k, cells in enumerate(cells_here):
                pieces[2 * k :: stride] = cells
            pieces[stride - 1 :: stride] = orders
            self._handle.write(b"".join(pieces))
        self.rows += len(part)

    def write_composed(
        self,
        relative: np.ndarray,
        initial: np.ndarray,
        columns: Mapping[str, Sequence[Any]] | None = None,
    ) -> np.ndarray:
        """Append the decks ``C_t[i] = C_{t-1}[relative_t[i]]`` (``C_0 = initial``), the
        running composition of :func:`~shufflecheck.models.procedures.running_composition`,
        with one value per deck of each column; returns the last deck.

        The same bytes as ``write(running_composition(relative, initial=initial), columns)``;
        where the rows have one width and the card words fit 1, 2, 4 or 8 bytes, the words
        are looked up inside the composition's last gather, straight into the text (the
        decks themselves are never built).
        """
        from shufflecheck.models.procedures import composed_lookup, running_composition

        if self._handle is None:
            raise RuntimeError("LogWriter.write_composed outside its with block")
        relative = np.asarray(relative)
        fields = self._fields(columns, len(relative))
        runs = _equal_width_runs(fields, len(relative)) if len(relative) else None
        width = None if self.codes is None else self.codes.dtype.itemsize - 1
        if self.check or runs is None or width not in (1, 2, 4, 8):
            decks = running_composition(relative, initial=initial)
            if len(decks):
                self._write_rows(_checked_decks(decks, self.deck) if self.check else decks, fields)
            return decks[-1].copy() if len(decks) else np.asarray(initial).copy()
        assert self.codes is not None
        words = _code_words(self.codes)
        last = np.asarray(initial)
        for lo, hi in runs:  # rows of one width: one byte matrix each
            matrix, target = _csv_frame(
                hi - lo,
                relative.shape[1],
                [f.rows(lo, hi) for f in fields],
                self.codes,
                self.delimiter,
            )
            last = composed_lookup(relative[lo:hi], words, target, initial=last)
            self._handle.write(matrix)
        self.rows += len(relative)
        return last


# --------------------------------------------------------------------------------------
# CSV text as byte matrices: rows of equal width are filled column by column


def _kept_columns(columns: Any, rows: int) -> list[tuple[str, Any]]:
    """The kept columns as (name, values): integer columns as numpy arrays, others as
    pandas Series (formatted as before); the same checks as :func:`_columns_frame`."""
    if columns is None:
        return []
    if isinstance(columns, Mapping):
        items = list(columns.items())
    elif hasattr(columns, "reset_index") and hasattr(columns, "columns"):  # a DataFrame
        frame = columns.reset_index(drop=True)
        items = [(name, frame[name]) for name in frame.columns]
    else:
        items = list(dict(columns).items())
    lengths = {len(values) for _, values in items}
    if lengths and lengths != {rows}:
        raise InputError(f"columns have {max(lengths - {rows})} rows, decks have {rows}")
    if any(str(name).strip().lower() == "order" for name, _ in items):
        raise InputError("a kept column may not be called 'order'")
    kept: list[tuple[str, Any]] = []
    for name, values in items:
        kept.append((str(name), _column_values(values)))
    return kept


def _rows_of(values: Any, start: int, stop: int) -> Any:
    return values[start:stop] if isinstance(values, np.ndarray) else values.iloc[start:stop]


def _column_values(values: Any) -> Any:
    """Integer columns (arrays, Series, lists of ints, ranges) and text arrays as numpy
    arrays, everything else as a pandas Series (formatted as a DataFrame column is)."""
    if isinstance(values, range):
        return np.arange(values.start, values.stop, values.step)
    dtype = getattr(values, "dtype", None)
    if isinstance(dtype, np.dtype) and dtype.kind in "iu" and np.ndim(values) == 1:
        return np.asarray(values)  # an integer array or Series
    if isinstance(values, np.ndarray) and values.dtype.kind == "U" and values.ndim == 1:
        return values
    if isinstance(values, (list, tuple)) and set(map(type, values)) == {int}:
        array = np.asarray(values)
        if array.dtype.kind in "iu":  # else beyond 64 bits: formatted by pandas
            return array
    import pandas as pd

    if isinstance(values, pd.Series):
        return values.reset_index(drop=True)
    return pd.Series(values)


class _Field:
    """One kept column of a block: ``cells()`` as bytes, or ``rows(lo, hi)`` as a byte
    matrix for a run of rows of equal width; ``widths`` per row (None: not fixed)."""

    def __init__(self, cells: list[bytes], matrix: np.ndarray | None) -> None:
        self._cells = cells
        self._matrix = matrix  # (rows, width) uint8 when every cell has one width
        self.widths = None if matrix is None else np.full(len(cells), matrix.shape[1])

    def cells(self) -> list[bytes]:
        cells = self._cells
        return cells.tolist() if isinstance(cells, _LazyCells) else cells

    def rows(self, lo: int, hi: int) -> np.ndarray:
        return self._matrix[lo:hi]


class _IntField:
    """An integer column: decimal digits computed in numpy, width per row."""

    _POWERS = np.array([10**k for k in range(1, 20)], dtype=np.uint64)

    def __init__(self, values: np.ndarray) -> None:
        values = np.asarray(values)
        self.negative = values < 0 if values.dtype.kind == "i" else None
        if self.negative is not None and self.negative.any():
            if values.min() == np.iinfo(values.dtype).min:  # |min| does not fit
                self.magnitude = None
            else:
                self.magnitude = np.abs(values.astype(np.int64)).astype(np.uint64)
        else:
            self.negative = None
            self.magnitude = values.astype(np.uint64)
        self.values = values
        if self.magnitude is None:
            self.widths = None
            return
        digits = np.searchsorted(self._POWERS, self.magnitude, side="right") + 1
        self.widths = digits if self.negative is None else digits + self.negative

    def cells(self) -> list[bytes]:
        return self.values.astype("S21").tolist()

    def rows(self, lo: int, hi: int) -> np.ndarray:
        width = int(self.widths[lo])
        out = np.empty((hi - lo, width), dtype=np.uint8)
        rest = self.magnitude[lo:hi].copy()
        for k in range(width - 1, -1, -1):
            out[:, k] = rest % 10 + 48
            rest //= 10
        if self.negative is not None:
            out[self.negative[lo:hi], 0] = ord("-")
        return out


def _csv_field(values: Any, delimiter: str) -> _Field | _IntField:
    if isinstance(values, np.ndarray) and values.dtype.kind in "iu":
        return _IntField(values)
    if isinstance(values, np.ndarray):  # text: fixed width without quoting, in numpy
        field = _text_field(values, delimiter)
        if field is not None:
            return field
        import pandas as pd

        values = pd.Series(values, dtype=object)
    cells = [cell.encode("utf-8") for cell in _csv_cells(values, delimiter).tolist()]
    widths = set(map(len, cells))
    if len(widths) == 1 and 0 not in widths:
        matrix = np.frombuffer(b"".join(cells), dtype=np.uint8).reshape(len(cells), -1)
        return _Field(cells, matrix)
    return _Field(cells, None)


def _text_field(values: np.ndarray, delimiter: str) -> _Field | None:
    """ASCII text of one width that needs no quoting, as a byte matrix (None otherwise)."""
    try:
        encoded = values.astype("S")
    except UnicodeEncodeError:
        return None
    width = encoded.dtype.itemsize
    if len(encoded) == 0 or width == 0:
        return None
    if (np.strings.str_len(encoded) != width).any():
        return None
    for special in {'"', "\r", "\n", delimiter}:
        if (np.strings.find(encoded, special.encode()) >= 0).any():
            return None
    matrix = encoded.view(np.uint8).reshape(len(encoded), width)
    return _Field(_LazyCells(matrix), matrix)


class _LazyCells:
    """The cells of a byte matrix as bytes, built only if asked for."""

    def __init__(self, matrix: np.ndarray) -> None:
        self.matrix = matrix

    def __len__(self) -> int:
        return len(self.matrix)

    def tolist(self) -> list[bytes]:
        return self.matrix.view(f"S{self.matrix.shape[1]}").ravel().tolist()


def _equal_width_runs(fields: list, rows: int) -> list[tuple[int, int]] | None:
    """Maximal runs of rows whose every field has one width; None when a field has no
    fixed form or the runs are too short to pay (then the rows are joined as bytes)."""
    widths = [f.widths for f in fields]
    if any(w is None for w in widths):
        return None
    cuts = np.zeros(max(rows - 1, 0), dtype=bool)
    for w in widths:
        cuts |= w[1:] != w[:-1]
    edges = [0, *(np.flatnonzero(cuts) + 1).tolist(), rows]
    if len(edges) - 1 > max(1, rows // 64):
        return None
    return [(lo, hi) for lo, hi in itertools.pairwise(edges) if hi > lo]


def _fixed_codes(words: list[str]) -> np.ndarray | None:
    """Card words followed by a space as one fixed-width byte code each (None when the
    words differ in length)."""
    encoded = [w.encode("utf-8") for w in words]
    width = len(encoded[0])
    if not all(len(e) == width for e in encoded):
        return None
    return np.array([e + b" " for e in encoded], dtype=f"S{width + 1}")


def _csv_rows(
    decks: np.ndarray, columns: list[np.ndarray], codes: np.ndarray, delimiter: str
) -> np.ndarray:
    """Rows of equal width as one byte matrix: the cells, separators, the order words and
    a newline (the last word's space)."""
    out, target = _csv_frame(decks.shape[0], decks.shape[1], columns, codes, delimiter)
    if target is not None:
        # the words gathered as unsigned integers into a strided view (one step per card)
        target[...] = _code_words(codes)[decks]
    else:
        position = out.shape[1] - decks.shape[1] * codes.dtype.itemsize
        out[:, position:].view(codes.dtype)[...] = codes[decks]
        out[:, -1] = ord("\n")
    return out


def _code_words(codes: np.ndarray) -> np.ndarray:
    """The card words of ``codes`` (without their space) as unsigned integers of their width."""
    width = codes.dtype.itemsize - 1
    return np.frombuffer(b"".join(c[:width] for c in codes.tolist()), f"u{width}")


def _csv_frame(
    rows: int, cards: int, columns: list[np.ndarray], codes: np.ndarray, delimiter: str
) -> tuple[np.ndarray, np.ndarray | None]:
    """The byte matrix of :func:`_csv_rows` with the cells, separators, the spaces after
    the words and the newlines in place, and (for words of 1, 2, 4 or 8 bytes) the strided
    view of unsigned integers where the words go (None otherwise: nothing but the cells
    written)."""
    front = sum(c.shape[1] + 1 for c in columns)
    out = np.empty((rows, front + cards * codes.dtype.itemsize), np.uint8)
    position = 0
    for cells in columns:
        out[:, position : position + cells.shape[1]] = cells
        position += cells.shape[1]
        out[:, position] = ord(delimiter)
        position += 1
    code_width = codes.dtype.itemsize - 1  # the word, then its space
    if code_width not in (1, 2, 4, 8):
        return out, None
    out[:, position + code_width :: code_width + 1] = ord(" ")
    target = np.ndarray(
        (rows, cards), f"u{code_width}", out, position, (out.strides[0], code_width + 1)
    )
    out[:, -1] = ord("\n")
    return out, target


def _order_lines(decks: np.ndarray, words: list[str]) -> list[bytes]:
    """Each deck as UTF-8 words separated by single spaces, ending in a newline."""
    encoded = [w.encode("utf-8") for w in words]
    width = len(encoded[0])
    n = decks.shape[1]
    if all(len(e) == width for e in encoded):
        cells = np.array([e + b" " for e in encoded], dtype=f"S{width + 1}")
        block = np.ascontiguousarray(cells[decks]).view(np.uint8).reshape(decks.shape[0], -1)
        block[:, -1] = ord("\n")
        return block.view(f"S{n * (width + 1)}").ravel().tolist()
    return [(text + "\n").encode("utf-8") for text in _order_texts(decks, words)]


def _csv_cells(values: pd.Series, delimiter: str) -> np.ndarray:
    """One column as CSV cells: text, quoted where RFC 4180 [1] needs it; missing -> empty."""
    text = values.astype(object).where(values.notna(), "").map(str)
    special = text.str.contains(f'["\r\n{re.escape(delimiter)}]', regex=True)
    if special.any():
        text[special] = '"' + text[special].str.replace('"', '""', regex=False) + '"'
    return text.to_numpy(dtype=object)


@functools.cache
def _timestamp_type() -> type:
    import pandas as pd

    return pd.Timestamp


def _json_value(value: Any) -> Any:
    if hasattr(value, "item") and not isinstance(value, (list, dict, str)):
        value = value.item()
    if isinstance(value, float) and value != value:
        return None
    if isinstance(value, _timestamp_type()):
        return value.isoformat()
    return value
