"""Per-shoe statistics of recorded shoes (decks with repeated cards), vectorized over shoes.

A batch of recorded shoes is an integer array ``words`` of shape ``(shoes, n)``:
``words[d, i]`` is the *kind* of the card at position ``i`` (0 = top), a label of the
shoe's distinct card codes (copies of a card share one kind). A *feature* groups kinds
into classes (``classes[kind]``: a value, a suit, a colour); the statistics below read the
classes of the cards top to bottom. Every function returns one ``int64`` value per shoe and
loops only over positions, never over shoes.

* :func:`value_successions` -- positions where a card is followed by one of the next class;
* runs of equal classes are :func:`shufflecheck.stats.statistics.runs`;
* :func:`class_position_counts` -- the ``(n, V)`` position-by-class count matrix;
* :func:`zone_counts` -- per shoe, the cards in each zone whose kind occurs in a segment of
  the reference shoe, and how many such cards the shoe holds;
* :func:`greedy_scores` -- correct guesses when always naming a most frequent remaining
  class (lowest class on ties); :func:`greedy_steps` -- each of those guesses with its
  chance under a uniform shoe (for the betting test of :mod:`shufflecheck.stats.guessing_bet`);
* :func:`first_appearance_orders` -- the order in which the codes first appear, relative
  to the reference shoe's (order kept from the previous shoe; a uniform permutation under
  the null when every code has the same number of copies);
* matches between consecutive shoes are :func:`shufflecheck.stats.statistics.repeat_positions`.

References
----------
.. [1] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23 (the greedy guessing strategy).
"""

from __future__ import annotations

import numpy as np

from shufflecheck.common.errors import InputError

__all__ = [
    "check_words",
    "class_position_counts",
    "first_appearance_orders",
    "first_appearance_ranks",
    "greedy_scores",
    "greedy_step_cells",
    "greedy_steps",
    "value_successions",
    "zone_counts",
]

_CHUNK = 1 << 14


def check_words(words: object, copies: np.ndarray, *, name: str = "shoes") -> np.ndarray:
    """Check that every row of ``words`` holds kind ``k`` exactly ``copies[k]`` times.

    Returns the array (no copy for an integer array); raises :class:`InputError` naming the
    first bad row (1-based) and the first kind with a wrong count.
    """
    arr = np.asarray(words)
    copies = np.asarray(copies, dtype=np.int64)
    kinds = copies.size
    n = int(copies.sum())
    if arr.ndim != 2 or arr.shape[1] != n:
        raise InputError(f"{name}: expected a 2-D array (shoes, {n}), got shape {arr.shape}")
    if arr.size and not np.issubdtype(arr.dtype, np.integer):
        raise InputError(f"{name}: expected integer kind labels, got dtype {arr.dtype}")
    for start in range(0, arr.shape[0], _CHUNK):
        block = arr[start : start + _CHUNK]
        if block.size and (block.min() < 0 or block.max() >= kinds):
            bad = np.flatnonzero((block.min(axis=1) < 0) | (block.max(axis=1) >= kinds))
            raise InputError(
                f"{name}: row {start + int(bad[0]) + 1} has a kind label outside 0..{kinds - 1}"
            )
        offsets = (np.arange(block.shape[0], dtype=np.int64) * kinds)[:, None]
        counts = np.bincount((block + offsets).ravel(), minlength=block.shape[0] * kinds)
        counts = counts.reshape(block.shape[0], kinds)
        wrong = (counts != copies).any(axis=1)
        if wrong.any():
            row = int(np.argmax(wrong))
            kind = int(np.argmax(counts[row] != copies))
            raise InputError(
                f"{name}: row {start + row + 1}: kind {kind} appears {int(counts[row, kind])} "
                f"times, {int(copies[kind])} expected"
            )
    return arr


def _classes_of(words: np.ndarray, classes: np.ndarray) -> np.ndarray:
    table = np.asarray(classes)
    small = table.astype(np.int16) if table.max(initial=0) < 32767 else table.astype(np.int64)
    return small[words]


def value_successions(words: np.ndarray, classes: np.ndarray) -> np.ndarray:
    """Positions ``i`` with ``class(i+1) = class(i) + 1`` per shoe (classes in feature order)."""
    out = np.zeros(words.shape[0], dtype=np.int64)
    for start in range(0, words.shape[0], _CHUNK):
        cls = _classes_of(words[start : start + _CHUNK], classes).astype(np.int32)
        out[start : start + _CHUNK] = np.count_nonzero(cls[:, 1:] - cls[:, :-1] == 1, axis=1)
    return out


def class_position_counts(words: np.ndarray, classes: np.ndarray, size: int) -> np.ndarray:
    """``(n, size)`` int64 matrix: ``counts[i, v]`` shoes with a card of class ``v`` at ``i``."""
    n = words.shape[1]
    out = np.zeros(n * size, dtype=np.int64)
    base = np.arange(n, dtype=np.int64) * size
    step = max(1, (1 << 20) // max(n, 1))
    for start in range(0, words.shape[0], step):
        cls = _classes_of(words[start : start + step], classes).astype(np.int64) + base
        out += np.bincount(cls.ravel(), minlength=n * size)
    return out.reshape(n, size)


def zone_counts(
    words: np.ndarray,
    references: np.ndarray,
    kinds: int,
    segment: tuple[int, int],
    zones: tuple[int, ...],
) -> tuple[np.ndarray, np.ndarray]:
    """Cards of the reference segment's kinds, per zone of each shoe.

    Parameters
    ----------
    words, references : (shoes, n) int arrays
        Each shoe and its reference shoe (kind labels).
    kinds : int
        Number of distinct kinds.
    segment : (start, length)
        The reference positions ``start .. start + length - 1`` (0-based) whose cards are
        followed.
    zones : tuple of int
        Widths of consecutive zones of the new shoe from the top.

    Returns
    -------
    (counts, marked) : ((shoes, zones) int64 array, (shoes,) int64 array)
        ``counts[d, z]`` cards of zone ``z`` whose kind occurs in the segment of shoe
        ``d``'s reference; ``marked[d]`` such cards in the whole shoe.
    """
    start, length = segment
    shoes, n = words.shape
    edges = np.concatenate([[0], np.cumsum(zones)])
    counts = np.zeros((shoes, len(zones)), dtype=np.int64)
    marked = np.zeros(shoes, dtype=np.int64)
    for lo in range(0, shoes, _CHUNK):
        ref = references[lo : lo + _CHUNK, start : start + length].astype(np.int64)
        m = ref.shape[0]
        present = np.zeros((m, kinds), dtype=bool)
        present[np.arange(m)[:, None], ref] = True
        hit = np.take_along_axis(present, words[lo : lo + _CHUNK].astype(np.int64), axis=1)
        cum = np.concatenate([np.zeros((m, 1), dtype=np.int64), np.cumsum(hit, axis=1)], axis=1)
        counts[lo : lo + _CHUNK] = cum[:, edges[1:]] - cum[:, edges[:-1]]
        marked[lo : lo + _CHUNK] = cum[:, n]
    return counts, marked


def greedy_scores(words: np.ndarray, classes: np.ndarray, class_counts: np.ndarray) -> np.ndarray:
    """Correct guesses per shoe for a player who names a most frequent remaining class
    (the lowest such class on ties) before each card and then sees it.

    Every class ``c`` holds the key ``remaining[c] * V + (V - 1 - c)`` (``V`` classes):
    keys are distinct, the largest names the guess, and a card is guessed right exactly
    when its class holds the largest key. Keys are kept class by class (one contiguous row
    of all shoes per class), so each position costs one maximum over ``V`` rows and one
    gather and scatter of the cards' keys.
    """
    return _greedy_pass(words, classes, class_counts, steps=False)


def greedy_steps(words: np.ndarray, classes: np.ndarray, class_counts: np.ndarray) -> np.ndarray:
    """Every guess of :func:`greedy_scores`, one cell per shoe and position: ``(shoes, n)``
    codes ``cell = M * 2 (n + 1) + 2 r + X`` of the largest remaining count ``M`` before the
    card, the cards remaining ``r = n - i`` (the guess is right with chance ``M / r`` under
    a uniform shoe, whatever came before) and ``X = 1`` when the guess was right. The
    codes fit :func:`greedy_step_cells` ``(M + 1) x 2 (n + 1)`` cells."""
    return _greedy_pass(words, classes, class_counts, steps=True)


def greedy_step_cells(class_counts: np.ndarray) -> tuple[int, int]:
    """Shape ``(largest count + 1, 2 (n + 1))`` of the table the codes of
    :func:`greedy_steps` index (row ``M``, column ``2 r + X``)."""
    counts = np.asarray(class_counts, dtype=np.int64)
    return int(counts.max(initial=0)) + 1, 2 * (int(counts.sum()) + 1)


def _greedy_pass(
    words: np.ndarray, classes: np.ndarray, class_counts: np.ndarray, *, steps: bool
) -> np.ndarray:
    counts = np.asarray(class_counts, dtype=np.int64)
    k = counts.size
    n = words.shape[1] if words.ndim == 2 else 0
    rows, cols = greedy_step_cells(counts)
    code = np.uint16 if rows * cols <= 1 << 16 else np.uint32
    out = np.zeros(
        (words.shape[0], n) if steps else words.shape[0], dtype=code if steps else np.int64
    )
    if k == 0 or words.shape[0] == 0:
        return out
    top = (int(counts.max()) + 1) * k
    wide = np.int16 if top < 1 << 15 else np.int32 if top < 1 << 31 else np.int64
    start_keys = (counts * k + (k - 1 - np.arange(k))).astype(wide)
    for start in range(0, words.shape[0], _CHUNK):
        cls = _classes_of(words[start : start + _CHUNK], classes)
        m, n = cls.shape
        key = np.repeat(start_keys[:, None], m, axis=1)  # (classes, shoes)
        flat = key.reshape(-1)
        # flat index of each card's key, position by position: (n, shoes)
        at = cls.T.astype(np.intp) * m + np.arange(m, dtype=np.intp)
        score = np.zeros(m, dtype=np.int64)
        best = np.empty(m, dtype=wide)
        for i in range(n):
            np.max(key, axis=0, out=best)
            where = at[i]
            mine = flat[where]
            right = mine == best
            if steps:
                # the largest remaining count is the best key's count: key // V
                out[start : start + m, i] = (best // k).astype(code) * cols + 2 * (n - i) + right
            else:
                score += right
            flat[where] = mine - k
        if not steps:
            out[start : start + m] = score
    return out


def first_appearance_ranks(references: np.ndarray, kinds: int) -> np.ndarray:
    """``(shoes, kinds)``: the rank of every kind in the order of its first appearance in
    each reference shoe (0 = the code of the reference's top card)."""
    count, n = references.shape
    if count == 0:
        return np.zeros((0, kinds), dtype=np.intp)
    # Shoes hold one multiset: a stable sort of each row groups its copies kind by kind,
    # and the first position of each group is the kind's first appearance.
    order = np.argsort(references, axis=1, kind="stable")
    copies = np.bincount(references[0].astype(np.int64), minlength=kinds)
    grouped = np.take_along_axis(references, order, axis=1)
    if (
        copies.size == kinds
        and np.array_equal(
            grouped, np.broadcast_to(np.repeat(np.arange(kinds), copies), grouped.shape)
        )
        and (copies > 0).all()
    ):
        offsets = np.concatenate([[0], np.cumsum(copies)[:-1]])
        first = order[:, offsets]
    else:  # rows of different multisets (or absent kinds): the direct minimum
        first = np.full((count, kinds), n, dtype=np.int64)
        rows = np.repeat(np.arange(count), n)
        positions = np.tile(np.arange(n, dtype=np.int64), count)
        np.minimum.at(first, (rows, references.ravel().astype(np.int64)), positions)
    return np.argsort(np.argsort(first, axis=1, kind="stable"), axis=1, kind="stable")


def first_appearance_orders(words: np.ndarray, references: np.ndarray, kinds: int) -> np.ndarray:
    """``(shoes, kinds)`` permutations: the codes in the order they first appear in each
    shoe, written as their ranks of first appearance in its reference shoe.

    With equal copies of every code, the order of first appearance of a uniformly random
    shoe is a uniformly random order of the codes, independent of the reference, so this is
    a uniform permutation under the null and the permutation statistics apply with their
    exact laws.
    """
    count = words.shape[0]
    out = np.zeros((count, kinds), dtype=np.int16)
    # one reference for every shoe (a broadcast row, as in a simulation from one starting
    # order): its ranks are found once
    shared = None
    if references.ndim == 2 and references.shape[0] > 1 and references.strides[0] == 0:
        shared = first_appearance_ranks(references[:1], kinds)
    for start in range(0, count, _CHUNK):
        if shared is None:
            ranks = first_appearance_ranks(references[start : start + _CHUNK], kinds)
        else:
            ranks = np.broadcast_to(shared, (min(count, start + _CHUNK) - start, kinds))
        own = first_appearance_ranks(words[start : start + _CHUNK], kinds)
        order = np.argsort(own, axis=1)  # the kinds in the order they first appear here
        out[start : start + _CHUNK] = np.take_along_axis(ranks, order, axis=1)
    return out
