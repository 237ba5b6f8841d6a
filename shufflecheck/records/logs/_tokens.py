"""Fast token -> label mapping for whole chunks (vectorised); the authoritative check of a
row is :func:`shufflecheck.records.orders.check_arrangement`."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import cache

import numpy as np
import pandas as pd

from shufflecheck.common.errors import InputError
from shufflecheck.records.cards import DeckDefinition
from shufflecheck.records.orders import integer_value

# --------------------------------------------------------------------------------------
# fast token -> label mapping (vectorised); the authoritative check is check_arrangement


@dataclass(frozen=True)
class _Keys:
    table16: np.ndarray  # two-byte spellings (any ASCII case) -> label, -1 elsewhere
    keys: np.ndarray  # sorted uint64 keys of upper-cased spellings of 3..8 bytes
    labels: np.ndarray
    long: bool  # some spelling is longer than 8 bytes


def _key(data: bytes) -> int:
    return sum(b << (8 * j) for j, b in enumerate(data))


@cache
def _keys(deck: DeckDefinition) -> _Keys:
    table16 = np.full(1 << 16, -1, dtype=np.int16)
    keys: dict[int, int] = {}
    long = False
    for spelling, label in deck.spellings().items():
        data = spelling.encode("utf-8")
        if len(data) == 2:
            for a in {data[0], data[0] | 32 if 65 <= data[0] <= 90 else data[0]}:
                for b in {data[1], data[1] | 32 if 65 <= data[1] <= 90 else data[1]}:
                    table16[a | (b << 8)] = label
        elif len(data) <= 8:
            keys[_key(data)] = label
        else:
            long = True
    ordered = sorted(keys)
    return _Keys(
        table16,
        np.array(ordered, dtype=np.uint64),
        np.array([keys[k] for k in ordered], dtype=np.int32),
        long,
    )


def _is_separator(buf: np.ndarray) -> np.ndarray:
    # exactly the ASCII characters str.split() treats as whitespace
    return (buf == 32) | ((buf >= 9) & (buf <= 13)) | ((buf >= 28) & (buf <= 31))


def scan_text(
    texts: Sequence[str], deck: DeckDefinition, integer: bool
) -> tuple[np.ndarray, np.ndarray]:
    """Tokens of whitespace-separated texts -> (values, tokens per text), vectorised.

    ``values`` holds labels (codes) or raw integers (integer labels); ``-1`` marks a token
    the fast path cannot vouch for (the row is then checked by :func:`check_arrangement`).
    """
    joined = "\n".join(texts)
    if joined.count("\n") != len(texts) - 1 or "\r" in joined:
        joined = "\n".join(t.replace("\n", " ").replace("\r", " ") for t in texts)
    buf = np.frombuffer(joined.encode("utf-8", "surrogatepass") + b"\n", dtype=np.uint8)
    inside = ~_is_separator(buf)
    edge = np.empty(buf.size + 1, dtype=bool)
    edge[0] = inside[0]
    edge[-1] = inside[-1]
    np.not_equal(inside[1:], inside[:-1], out=edge[1:-1])
    bounds = np.flatnonzero(edge)
    starts, ends = bounds[0::2], bounds[1::2]
    before = np.searchsorted(starts, np.flatnonzero(buf == 10))
    counts = np.diff(before, prepend=0)
    lengths = ends - starts
    values = np.full(starts.size, -1, dtype=np.int64)
    if starts.size == 0:
        return values, counts
    last = buf.size - 1
    if integer:
        short = lengths <= 6
        total = np.zeros(starts.size, dtype=np.int64)
        digits = short.copy()
        for j in range(int(lengths[short].max(initial=0))):
            live = short & (lengths > j)
            byte = buf[np.minimum(starts + j, last)].astype(np.int64)
            digits &= ~live | ((byte >= 48) & (byte <= 57))
            total = np.where(live, total * 10 + (byte - 48), total)
        values[digits] = total[digits]
        return values, counts
    keys = _keys(deck)
    two = lengths == 2
    if two.any():
        s = starts[two]
        pair = buf[s].astype(np.int64) | (buf[s + 1].astype(np.int64) << 8)
        values[two] = keys.table16[pair]
    middle = np.flatnonzero((lengths > 2) & (lengths <= 8))
    if middle.size and keys.keys.size:
        s, length = starts[middle], lengths[middle]
        key = np.zeros(middle.size, dtype=np.uint64)
        for j in range(int(length.max())):
            byte = buf[np.minimum(s + j, last)]
            byte = np.where((byte >= 97) & (byte <= 122), byte - 32, byte).astype(np.uint64)
            key |= np.where(length > j, byte, 0).astype(np.uint64) << np.uint64(8 * j)
        at = np.minimum(np.searchsorted(keys.keys, key), keys.keys.size - 1)
        values[middle] = np.where(keys.keys[at] == key, keys.labels[at], -1)
    if keys.long:
        for k in np.flatnonzero(lengths > 8):
            token = bytes(buf[starts[k] : ends[k]]).decode("utf-8", "replace")
            found = deck.lookup(token)
            values[k] = -1 if found is None else found
    return values, counts


#: cells per block of the vectorised checks (a block of 52-card rows is about 5,000 rows)
_BLOCK_CELLS = 1 << 18


def map_tokens(flat: np.ndarray, deck: DeckDefinition, integer: bool) -> np.ndarray:
    """One value per token of a flat array (text, ints, None) -> labels / raw integers, -1 bad."""
    if flat.dtype.kind in "iu":
        return flat.astype(np.int64) if integer else np.full(flat.size, -1, dtype=np.int64)
    if flat.size == 0:
        return np.zeros(0, dtype=np.int64)
    codes, uniques = pd.factorize(flat)
    if integer:
        mapped = [integer_value(u) for u in uniques]
    else:
        mapped = [deck.lookup(u) for u in uniques]
    table = np.array([-1 if v is None or v > 10**6 else v for v in mapped] + [-1], dtype=np.int64)
    return table[codes]  # code -1 (missing value) picks the final -1


def permutation_rows(labels: np.ndarray, n: int) -> np.ndarray:
    """Rows of ``labels`` (values already in 0..n-1) holding every label exactly once."""
    m = labels.shape[0]
    if n <= 63 and labels.shape[1] == n and hasattr(np, "bitwise_count"):
        # n values in 0..n-1 whose bits together fill all n bits: each label once (in
        # blocks of rows, so the 64-bit masks stay a few MB whatever the chunk)
        full = np.empty(m, dtype=bool)
        block = max(1, _BLOCK_CELLS // n)
        for lo in range(0, m, block):
            part = labels[lo : lo + block].astype(np.int64)
            masks = np.bitwise_or.reduce(np.left_shift(1, part, out=part), axis=1)
            full[lo : lo + block] = masks == (1 << n) - 1
        return full
    ok = np.zeros(m, dtype=bool)
    step = max(1, (1 << 22) // max(n, 1))  # about 4M cells at a time
    for lo in range(0, m, step):
        part = labels[lo : lo + step]
        rows = part.shape[0]
        offsets = (np.arange(rows, dtype=np.int32) * n)[:, None]
        flat = (part.astype(np.int32) + offsets).ravel()
        ok[lo : lo + rows] = (np.bincount(flat, minlength=rows * n).reshape(rows, n) == 1).all(1)
    return ok


# --------------------------------------------------------------------------------------
# separators between the cards of one order field

_CANDIDATES = {",": "comma", ";": "semicolon", "|": "pipe"}


def detect_separator(texts: Sequence[str], first_row: Callable[[int], int]) -> str | None:
    """The separator between cards in order fields: one of ``, ; |`` or None (whitespace).

    Looks at the first 200 non-empty texts. A text holding none of the candidates is
    separated by spaces; two different candidates in the file are refused
    (:class:`InputError` naming ``separator``), never guessed.
    """
    seen: dict[str, int] = {}
    looked = 0
    for i, text in enumerate(texts):
        if looked >= 200:
            break
        if not isinstance(text, str) or not text.strip():
            continue
        looked += 1
        for char in _CANDIDATES:
            if char in text and char not in seen:
                seen[char] = first_row(i)
    if len(seen) > 1:
        shown = " and ".join(f"{_CANDIDATES[c]}s (row {r})" for c, r in seen.items())
        raise InputError(
            f"the order fields hold {shown} between cards; give the separator with "
            "{separator} (space, comma, semicolon or pipe)",
            argument="separator",
        )
    return next(iter(seen), None)


def split_order(text: object, separator: str | None) -> list[object]:
    """The tokens of one order field (``separator`` None: any run of whitespace)."""
    if not isinstance(text, str):
        return [] if text is None else list(text)  # type: ignore[call-overload]
    if separator is None or not text.strip():
        return list(text.split())
    return list(text.split(separator))


def split_texts(texts: Sequence[str], separator: str) -> tuple[np.ndarray, np.ndarray]:
    """Every token of order fields split at ``separator`` -> (flat tokens, tokens per row)."""
    full = [bool(t.strip()) for t in texts]
    counts = np.fromiter(
        (t.count(separator) + 1 if f else 0 for t, f in zip(texts, full, strict=True)),
        dtype=np.int64,
        count=len(texts),
    )
    joined = separator.join(t for t, f in zip(texts, full, strict=True) if f)
    tokens = joined.split(separator) if counts.sum() else []
    flat = np.empty(len(tokens), dtype=object)
    flat[:] = tokens
    return flat, counts


def scan_spans(
    buf: np.ndarray, starts: np.ndarray, ends: np.ndarray, deck: DeckDefinition
) -> tuple[np.ndarray, np.ndarray] | None:
    """Card codes of order fields given as byte ranges of ``buf``, when every field is
    ``n`` two-byte codes separated by single spaces (what ``write_log`` writes): one
    gather and one table lookup, no text made. None when some field is written otherwise
    (the caller then splits texts)."""
    n = deck.size
    width = 3 * n - 1
    if starts.size == 0 or not ((ends - starts) == width).all():
        return None
    table = _keys(deck).table16  # int16 labels, -1 for anything else
    m = starts.size
    steps = np.arange(0, width, 3, dtype=np.intp)  # first byte of each code in a field
    values = np.empty((m, n), dtype=np.int16)
    block = max(1, _BLOCK_CELLS // n)  # in blocks of rows: the byte offsets stay a few MB
    for lo in range(0, m, block):
        # native-width offsets and take(): numpy gathers fastest with them (about half
        # the time of 32-bit offsets, which it converts first)
        at = starts[lo : lo + block, None].astype(np.intp) + steps
        if n > 1 and not (buf.take(at[:, :-1] + 2) == 32).all():
            return None
        pairs = buf.take(at).astype(np.uint16)
        pairs |= buf.take(at + 1).astype(np.uint16) << 8
        values[lo : lo + block] = table.take(pairs)
    return values.ravel(), np.full(m, n, dtype=np.int64)
