"""Writing logs that :func:`~shufflecheck.records.logs.read_log` reads back exactly (atomically)."""

from __future__ import annotations

import csv
import io
import json
import os
import re
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import atomic_open
from shufflecheck.records.cards import DeckDefinition, load_deck
from shufflecheck.records.shoes import ShoeDefinition, load_shoe

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
    """Rows holding every label 0..n-1 exactly once: a row's sorted labels are 0..n-1
    (sorted in blocks of rows, so the copy stays small)."""
    ok = np.empty(array.shape[0], dtype=bool)
    labels = np.arange(n, dtype=array.dtype)
    step = max(1, (1 << 22) // max(n, 1))  # about 4M cells at a time
    for lo in range(0, array.shape[0], step):
        ok[lo : lo + step] = (np.sort(array[lo : lo + step], axis=1) == labels).all(axis=1)
    return ok


def _columns_frame(columns: Any, rows: int) -> pd.DataFrame:
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
    """
    shoe = load_shoe(deck) if deck is not None else None
    definition: DeckDefinition | ShoeDefinition = shoe if shoe is not None else load_deck(deck)
    array = _checked_decks(decks, definition)
    frame = _columns_frame(columns, array.shape[0])
    target = Path(path)
    suffix = target.suffix.lower()
    if labels not in ("codes", "int0", "int1"):
        raise InputError(f"labels {labels!r} is not one of codes, int0, int1")
    if isinstance(definition, ShoeDefinition):
        if labels != "codes":
            raise InputError("a shoe log names its cards by code (labels='codes')")
        words = [definition.kinds.cards[k] for k in definition.reference_kinds]
    elif labels == "codes":
        words = list(definition.cards)
    else:
        base = 1 if labels == "int1" else 0
        words = [str(k + base) for k in range(definition.size)]
    block = 100_000
    if suffix in (".jsonl", ".ndjson"):
        with atomic_open(target, "w") as handle:
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
    delimiter = "\t" if suffix == ".tsv" else ","
    header = io.StringIO()
    csv.writer(header, delimiter=delimiter, lineterminator="\n").writerow(
        [*map(str, frame.columns), "order"]
    )
    separator = delimiter.encode()
    with atomic_open(target, "wb") as handle:
        handle.write(header.getvalue().encode("utf-8"))
        for start in range(0, array.shape[0], block):
            orders = _order_lines(array[start : start + block], words)
            columns_here = [
                _csv_cell_bytes(frame[name].iloc[start : start + block], delimiter)
                for name in frame.columns
            ]
            # one flat list of pieces, joined once: cell, separator, ..., order line
            pieces: list[bytes] = [separator] * (len(orders) * (2 * len(columns_here) + 1))
            stride = 2 * len(columns_here) + 1
            for k, cells in enumerate(columns_here):
                pieces[2 * k :: stride] = cells
            pieces[stride - 1 :: stride] = orders
            handle.write(b"".join(pieces))
    return target


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


def _csv_cell_bytes(values: pd.Series, delimiter: str) -> list[bytes]:
    """One column as UTF-8 CSV cells (integers without gaps formatted in one numpy pass)."""
    if isinstance(values.dtype, np.dtype) and values.dtype.kind in "iu":
        return values.to_numpy().astype("S21").tolist()
    return [cell.encode("utf-8") for cell in _csv_cells(values, delimiter).tolist()]


def _csv_cells(values: pd.Series, delimiter: str) -> np.ndarray:
    """One column as CSV cells: text, quoted where RFC 4180 [1] needs it; missing -> empty."""
    text = values.astype(object).where(values.notna(), "").map(str)
    special = text.str.contains(f'["\r\n{re.escape(delimiter)}]', regex=True)
    if special.any():
        text[special] = '"' + text[special].str.replace('"', '""', regex=False) + '"'
    return text.to_numpy(dtype=object)


def _json_value(value: Any) -> Any:
    if hasattr(value, "item") and not isinstance(value, (list, dict, str)):
        value = value.item()
    if isinstance(value, float) and value != value:
        return None
    if isinstance(value, pd.Timestamp):
        return value.isoformat()
    return value
