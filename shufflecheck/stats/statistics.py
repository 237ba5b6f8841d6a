"""Per-deck statistics of recorded orders against their reference, vectorized over decks.

A batch of decks is an integer array of shape ``(decks, n)``; ``relative[d, i]`` is the
position in the reference deck (0-based) of the card at position ``i`` of deck ``d``, so the
identity row is the unshuffled deck. Every function returns one value per deck (``int64``)
and never loops over decks in Python: loops, where needed, run over the ``n`` positions,
with a deck's set of seen cards held as one 64-bit mask when ``n <= 63``.

Definitions (``p`` one deck, positions and labels 0-based):

* rising sequences: ``1 + #{c : card c+1 lies above card c}`` ([1]_);
* descents: ``#{i : p[i] > p[i+1]}``;
* fixed points: ``#{i : p[i] = i}``;
* cycles of ``p`` as a permutation;
* inversions (Kendall distance to the reference): ``#{i < j : p[i] > p[j]}``;
* successions: ``#{i : p[i+1] = p[i] + 1}`` (a card directly above its reference successor);
* adjacent pairs: ``#{i : |p[i+1] - p[i]| = 1}`` (reference neighbours still touching);
* card position: where a given reference card (the top one, the bottom one) now lies;
* runs: maximal blocks of consecutive cards of one category (suit or colour);
* repeat positions: positions holding the same card in two consecutive decks;
* cyclic rising sequences: ``#{c in Z_n : card c+1 (mod n) lies above card c}``, the
  rising sequences left after the best cut (the smallest number over the ``n`` rotations
  of the deck; every rotation has this number or one more);
* cyclic valleys: cards lower than both neighbours, the deck read around a circle (the
  bottom card's lower neighbour is the top card); a cut changes nothing.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313 (rising sequences).
.. [2] R. P. Stanley, *Enumerative Combinatorics*, vol. 1, 2nd ed., Cambridge University
       Press, 2012, sections 1.3-1.4 (descents, cycles, inversions).
"""

from __future__ import annotations

import numpy as np

from shufflecheck.common.errors import InputError

__all__ = [
    "adjacent_pairs",
    "as_decks",
    "bitmask_ok",
    "card_position",
    "card_positions",
    "category_codes",
    "cycles",
    "cyclic_rising_sequences",
    "cyclic_valleys",
    "descents",
    "fixed_points",
    "inversions",
    "repeat_positions",
    "rising_only",
    "rising_sequences",
    "runs",
    "smaller_above",
    "successions",
]

_ONE = np.uint64(1)
_CHUNK = 1 << 13


def bitmask_ok(n: int) -> bool:
    """Whether the 64-bit-mask fast path applies (``n <= 63`` and numpy has bit counts)."""
    return n <= 63 and hasattr(np, "bitwise_count")


def as_decks(decks: object, *, cards: int | None = None, name: str = "decks") -> np.ndarray:
    """Check that ``decks`` is a ``(decks, n)`` integer array whose rows are arrangements.

    Returns the array itself (no copy when it is already an integer ndarray). Raises
    :class:`InputError` naming the first bad row (1-based) otherwise.
    """
    arr = np.asarray(decks)
    if arr.ndim != 2:
        raise InputError(f"{name}: expected a 2-D array (decks, cards), got shape {arr.shape}")
    if arr.size and not np.issubdtype(arr.dtype, np.integer):
        raise InputError(f"{name}: expected integer card labels, got dtype {arr.dtype}")
    count, n = arr.shape
    if cards is not None and n != cards:
        raise InputError(f"{name}: expected {cards} cards per deck, got {n}")
    if count == 0:
        return arr.astype(np.int64) if not np.issubdtype(arr.dtype, np.integer) else arr
    if n == 0:
        raise InputError(f"{name}: a deck needs at least one card")
    for start in range(0, count, _CHUNK):
        block = arr[start : start + _CHUNK]
        bad = (block.min(axis=1) < 0) | (block.max(axis=1) >= n)
        if not bad.any():
            if bitmask_ok(n):
                masks = np.bitwise_or.reduce(_ONE << block.astype(np.uint64), axis=1)
                bad = masks != np.uint64((1 << n) - 1)
            else:
                bad = (np.sort(block, axis=1) != np.arange(n)).any(axis=1)
        if bad.any():
            row = start + int(np.argmax(bad))
            raise InputError(f"{name}: row {row + 1} is not an arrangement of labels 0..{n - 1}")
    return arr


def _count_true(mask: np.ndarray) -> np.ndarray:
    """True entries per row (``int64``); rows of fewer than 256 entries are summed as bytes,
    which numpy does faster than ``count_nonzero`` along short rows."""
    if mask.dtype == np.bool_ and mask.shape[1] < 256:
        return np.add.reduce(mask.view(np.uint8), axis=1, dtype=np.uint8).astype(np.int64)
    return np.count_nonzero(mask, axis=1).astype(np.int64)


def _signed(p: np.ndarray) -> np.ndarray:
    """Labels as a signed type wide enough for differences (no copy when already signed)."""
    if np.issubdtype(p.dtype, np.signedinteger):
        return p
    return p.astype(np.int64)


def _chunked(fn, p: np.ndarray) -> np.ndarray:
    """Apply a per-deck function block by block (bounded temporaries, cache friendly)."""
    out = np.zeros(p.shape[0], dtype=np.int64)
    for start in range(0, p.shape[0], _CHUNK):
        out[start : start + _CHUNK] = fn(p[start : start + _CHUNK])
    return out


def _relative(relative: object, check: bool) -> np.ndarray:
    return as_decks(relative, name="relative decks") if check else np.asarray(relative)


def descents(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Descents per deck: positions where a card lies directly above a reference-earlier one.

    Every statistic here checks its decks first (:func:`as_decks`); ``check=False`` skips
    that for arrays already checked once (the battery checks each chunk once).
    """
    return _descents(_relative(relative, check))


def _descents(p: np.ndarray) -> np.ndarray:
    return _chunked(lambda b: _count_true(b[:, :-1] > b[:, 1:]), p)


def fixed_points(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Cards per deck still at their reference position."""
    return _fixed_points(_relative(relative, check))


def _fixed_points(p: np.ndarray) -> np.ndarray:
    labels = np.arange(p.shape[1])
    return _chunked(lambda b: _count_true(b == labels), p)


def successions(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Successions per deck: card ``c`` directly above card ``c + 1`` (reference order kept)."""
    return _successions(_relative(relative, check))


def _successions(p: np.ndarray) -> np.ndarray:
    return _chunked(lambda b: _count_true(b[:, 1:] - b[:, :-1] == 1), _signed(p))


def adjacent_pairs(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Reference neighbours ``{c, c+1}`` still next to each other, in either order."""
    return _adjacent_pairs(_relative(relative, check))


def _adjacent_pairs(p: np.ndarray) -> np.ndarray:
    return _chunked(lambda b: _count_true(np.abs(b[:, 1:] - b[:, :-1]) == 1), _signed(p))


def card_position(relative: np.ndarray, card: int, *, check: bool = True) -> np.ndarray:
    """Position (0 = top) of reference card ``card`` in each deck (``-1``: the last card)."""
    p = _relative(relative, check)
    if card < 0:
        card += p.shape[1]
    if not 0 <= card < p.shape[1]:
        raise InputError(f"card label must be in 0..{p.shape[1] - 1}, got {card}")
    return _card_position(p, card)


def _card_position(p: np.ndarray, card: int) -> np.ndarray:
    return _chunked(lambda b: np.argmax(b == card, axis=1), p)


def _order_scan(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Inversions and rising sequences in one pass over positions (bitmask fast path)."""
    count, n = p.shape
    inv = np.zeros(count, dtype=np.int64)
    rising = np.ones(count, dtype=np.int64)
    for start in range(0, count, _CHUNK):
        cols = np.ascontiguousarray(p[start : start + _CHUNK].T).astype(np.uint64)
        seen = np.zeros(cols.shape[1], dtype=np.uint64)
        acc_inv = np.zeros(cols.shape[1], dtype=np.int64)
        acc_rise = np.zeros(cols.shape[1], dtype=np.uint64)
        for i in range(n):
            c = cols[i]
            above = (seen >> c) >> _ONE  # seen cards later in the reference than c
            acc_inv += np.bitwise_count(above)
            acc_rise += above & _ONE  # card c + 1 already seen: c + 1 lies above c
            seen |= _ONE << c
        inv[start : start + _CHUNK] = acc_inv
        rising[start : start + _CHUNK] += acc_rise.astype(np.int64)
    return inv, rising


def _inverse(p: np.ndarray) -> np.ndarray:
    count, n = p.shape
    out = np.empty(count * n, dtype=np.int64)
    cells = (np.arange(count, dtype=np.int64)[:, None] * n + p).ravel()
    out[cells] = np.tile(np.arange(n, dtype=np.int64), count)
    return out.reshape(count, n)


def smaller_above(where: np.ndarray) -> np.ndarray:
    """``L[d, j] = #{u < j : where[d, u] < where[d, j]}`` (``int64``): for card positions
    ``where``, the cards of lower label lying above card ``j``.

    The positions already placed are bits of ``ceil(n/64)`` 64-bit words per deck, with the
    count of set bits in the words before each word kept beside them: one query is a word
    read and a bit count, one insertion a bit set and one add over the deck's few words.
    """
    count, n = where.shape
    width = (n + 63) // 64
    out = np.zeros((count, n), dtype=np.int64)
    words = np.zeros(count * width, dtype=np.uint64)
    before = np.zeros((count, width), dtype=np.int32)  # set bits in the words before
    flat = before.reshape(-1)
    base = np.arange(count, dtype=np.int64) * width
    word_index = np.arange(width)
    cols = where.T.astype(np.int64)
    for j in range(n):
        p = cols[j]
        word_of = p >> 6
        bit = _ONE << (p & 63).astype(np.uint64)
        cell = base + word_of
        word = words[cell]
        out[:, j] = flat[cell] + np.bitwise_count(word & (bit - _ONE))
        words[cell] = word | bit
        if width > 1:
            before += word_index > word_of[:, None]
    return out


def _order_words(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Inversions and rising sequences for decks of more than 63 cards, linear in the cards
    up to the word count: ``inversions = sum_j (j - L_j)`` with ``L`` from
    :func:`smaller_above` on the inverse arrangement."""
    count, n = p.shape
    inv = np.zeros(count, dtype=np.int64)
    rising = np.zeros(count, dtype=np.int64)
    total = n * (n - 1) // 2
    for start in range(0, count, 1 << 12):
        where = _inverse(p[start : start + (1 << 12)])
        inv[start : start + (1 << 12)] = total - smaller_above(where).sum(axis=1)
        rising[start : start + (1 << 12)] = 1 + _count_true(where[:, 1:] < where[:, :-1])
    return inv, rising


def _order_generic(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    count, n = p.shape
    inv = np.zeros(count, dtype=np.int64)
    for k in range(1, n):
        inv += _count_true(p[:, :-k] > p[:, k:])
    where = _inverse(p)
    rising = 1 + _count_true(where[:, 1:] < where[:, :-1])
    return inv, rising


def order_statistics(
    relative: np.ndarray, *, force_generic: bool = False, check: bool = True
) -> tuple[np.ndarray, np.ndarray]:
    """``(inversions, rising sequences)`` per deck, sharing one pass over the positions."""
    return _order_statistics(_relative(relative, check), force_generic)


def _order_statistics(p: np.ndarray, force_generic: bool = False) -> tuple[np.ndarray, np.ndarray]:
    if p.shape[0] == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    if force_generic:
        return _order_generic(p)
    if bitmask_ok(p.shape[1]):
        return _order_scan(p)
    return _order_words(p)


def inversions(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Inversions per deck: pairs of cards in the opposite of reference order (Kendall)."""
    return order_statistics(relative, check=check)[0]


def rising_sequences(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Rising sequences per deck: ``1 + #{c : card c+1 lies above card c}``."""
    return order_statistics(relative, check=check)[1]


def card_positions(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Where each reference card lies: ``out[d, c]`` is the position of card ``c`` in deck
    ``d`` (the inverse arrangement), ``int64``."""
    return _inverse(_relative(relative, check))


def rising_only(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Rising sequences without the inversions: one pass over the inverse arrangement
    (the cheap path for decks of more than 63 cards)."""
    p = _relative(relative, check)
    return _chunked(lambda b: 1 + _count_true(np.diff(_inverse(b), axis=1) < 0), p)


def cyclic_rising_sequences(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Cyclic rising sequences per deck: ``#{c in Z_n : card (c + 1) mod n lies above c}``.

    This is the smallest number of rising sequences over the ``n`` cuts of the deck
    (docs/methods.md): a cut moves the bottom of the reference cycle, so it undoes a cut.
    """
    p = _relative(relative, check)

    def count(b: np.ndarray) -> np.ndarray:
        where = _inverse(b)
        wrap = (where[:, 0] < where[:, -1]).astype(np.int64)
        # a single card is one rising sequence (for n >= 2 the count is at least 1)
        return np.maximum(_count_true(np.diff(where, axis=1) < 0) + wrap, 1)

    return _chunked(count, p)


def cyclic_valleys(relative: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Cyclic valleys per deck: positions whose card is below both neighbours, the deck read
    around a circle (top and bottom are neighbours), so unchanged by a cut."""
    p = _relative(relative, check)

    def count(b: np.ndarray) -> np.ndarray:
        before = np.roll(b, 1, axis=1)
        after = np.roll(b, -1, axis=1)
        return _count_true((before > b) & (b < after))

    return _chunked(count, _signed(p))


def _cycles_walk(p: np.ndarray) -> np.ndarray:
    """Cycles by walking each deck's permutation once, lowest unvisited label first
    (labels as bytes, the visited labels as one 64-bit mask per deck)."""
    count, n = p.shape
    out = np.zeros(count, dtype=np.int64)
    for start in range(0, count, _CHUNK):
        block = p[start : start + _CHUNK]
        m = block.shape[0]
        flat = block.astype(np.uint8).ravel()
        base = np.arange(m, dtype=np.int64) * n
        visited = np.zeros(m, dtype=np.uint64)
        bit = np.empty(m, dtype=np.uint64)
        cur = np.zeros(m, dtype=np.uint8)
        head = np.zeros(m, dtype=np.uint8)
        acc = np.zeros(m, dtype=np.uint8)
        for step in range(n):
            np.left_shift(_ONE, cur, out=bit, casting="unsafe")
            visited |= bit
            nxt = flat.take(base + cur)
            closed = nxt == head
            acc += closed
            if step < n - 1:
                # the lowest unvisited label: the trailing ones of the visited mask
                np.add(visited, _ONE, out=bit)
                bit ^= visited
                lowest = np.bitwise_count(bit)
                lowest -= np.uint8(1)
                # where closed, both move to it (byte arithmetic wraps consistently)
                head += closed * (lowest - head)
                cur = nxt + closed * (lowest - nxt)
        out[start : start + _CHUNK] = acc
    return out


def _cycles_doubling(p: np.ndarray) -> np.ndarray:
    """Cycles by pointer doubling: the minimum label over each orbit, counted where it is."""
    count, n = p.shape
    out = np.zeros(count, dtype=np.int64)
    labels = np.arange(n)
    rounds = max(1, int(np.ceil(np.log2(n)))) if n > 1 else 1
    for start in range(0, count, _CHUNK):
        jump = p[start : start + _CHUNK].astype(np.intp)
        low = np.broadcast_to(labels, jump.shape).copy()
        for _ in range(rounds):
            low = np.minimum(low, np.take_along_axis(low, jump, axis=1))
            jump = np.take_along_axis(jump, jump, axis=1)
        out[start : start + _CHUNK] = _count_true(low == labels)
    return out


def cycles(relative: np.ndarray, *, force_generic: bool = False, check: bool = True) -> np.ndarray:
    """Cycles per deck of the arrangement read as a permutation ``i -> p[i]``."""
    return _cycles(_relative(relative, check), force_generic)


def _cycles(p: np.ndarray, force_generic: bool = False) -> np.ndarray:
    if p.shape[0] == 0:
        return np.zeros(0, dtype=np.int64)
    if bitmask_ok(p.shape[1]) and not force_generic:
        return _cycles_walk(p)
    return _cycles_doubling(p)


def category_codes(categories: object, n: int, *, name: str = "categories") -> np.ndarray:
    """Check a per-label category array (suits or colours) of length ``n``.

    Negative entries mean "no category" (jokers): each such card is a category of its own,
    so it always ends a run. Returns ``int64`` codes with those cards renumbered apart.
    """
    arr = np.asarray(categories)
    if arr.shape != (n,) or (arr.size and not np.issubdtype(arr.dtype, np.integer)):
        raise InputError(f"{name}: expected {n} integer codes (one per card label)")
    codes = arr.astype(np.int64).copy()
    loose = np.nonzero(codes < 0)[0]
    top = int(codes.max()) + 1 if (codes >= 0).any() else 0
    codes[loose] = top + np.arange(loose.size)
    return codes


def runs(decks: np.ndarray, categories: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Runs of equal category (suit or colour) from top to bottom, per deck.

    ``decks`` holds labels indexing ``categories`` (absolute card labels for a deck
    definition's suits); ``categories`` as accepted by :func:`category_codes` (with
    ``check=False``: codes already returned by it).
    """
    if not check:
        return _runs(np.asarray(decks), np.asarray(categories))
    p = as_decks(decks, name="decks")
    return _runs(p, category_codes(categories, p.shape[1]))


def _runs(p: np.ndarray, codes: np.ndarray) -> np.ndarray:
    small = codes.astype(np.int16) if codes.max(initial=0) < 32767 else codes

    def count(b: np.ndarray) -> np.ndarray:
        cat = small.take(b.astype(np.intp))  # take() with native indices: the fast gather
        return 1 + _count_true(cat[:, 1:] != cat[:, :-1])

    return _chunked(count, p)


def repeat_positions(decks: np.ndarray, *, check: bool = True) -> np.ndarray:
    """Positions holding the same card in consecutive rows: ``out[t]`` compares rows
    ``t`` and ``t + 1`` (length ``decks - 1``)."""
    p = as_decks(decks, name="decks") if check else np.asarray(decks)
    if p.shape[0] < 2:
        return np.zeros(0, dtype=np.int64)
    out = np.zeros(p.shape[0] - 1, dtype=np.int64)
    for start in range(0, p.shape[0] - 1, _CHUNK):
        stop = min(p.shape[0] - 1, start + _CHUNK)
        out[start:stop] = _count_true(p[start + 1 : stop + 1] == p[start:stop])
    return out
