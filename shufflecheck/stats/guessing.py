"""The guessing game with feedback: strategies for real procedures, and the exact null law.

A player names the next card of the deck, the card is shown, the player names the next, and
so on through the deck. Every strategy here names a card that has not been seen yet. Under a
uniformly random deck the card at position ``i`` (0-based) is then uniform among the
``n - i`` unseen cards whatever was seen before, so the guess is right with probability
``1/(n - i)`` independently of the earlier guesses: the number of correct guesses is a sum of
independent Bernoulli(1/j), ``j = 1..n``, whose exact law is ``stirling1_row(n) / n!`` with
mean ``H_n`` (4.54 for 52 cards) ([1]_, [2]_). Any excess over ``H_n`` is the strategy's
advantage, in correct guesses per deck.

Strategies (cards are labels in the reference order, 0 = the reference top card):

``next-card`` (riffles and cuts)
    Name the card that followed the last seen card in the reference, wrapping from the
    reference bottom card to the top one (a cut turns the reference into a cycle); if that
    card has been seen, or at the first card, fall back to ``longest-run``. After a riffle
    the deck interleaves packets that each keep reference order, and after a cut every card
    but one follows its predecessor.
``longest-run`` (riffles with many packets)
    Name the first card of the longest block of consecutive unseen reference cards (the
    lowest such block on ties). After ``k`` ideal riffles the next card comes from each of
    the ``2^k`` packets with probability proportional to the cards it has left ([3]_), and
    the unseen blocks are the packets' remainders.
``strip`` (strips and overhand shuffles)
    A strip takes packets off the top and drops them on a pile, reversing the order of the
    packets but not of the cards inside a packet. Name the card after the last seen one while
    it is unseen (the same packet goes on); at a packet's end name the card one packet-length
    above the packet just seen (packets of similar size), else the unseen card just above
    it, else the lowest unseen card. The first guess is the reference bottom card.
``lowest-unseen`` (naive baseline)
    Name the unseen card that came earliest in the reference: right every time on an
    unshuffled deck, and on a deck whose top stock was left alone.

All strategies are vectorized over decks: the loop runs over the ``n`` positions, with the
seen cards of every deck held as a 64-bit mask when ``n <= 63``. Scores alone (the audit's
need) take a shorter road there, since a guess is right exactly when it names the card
shown: the positions are read from the bottom up, where the unseen cards only gain one
card per step and the block holding it is read off two bit counts (of the unseen mask
and of its mirror image); ``longest-run`` then keeps the lowest longest block as one
16-bit key (length, then start) under a running maximum, and ``lowest-unseen`` is right
where a card is below every card after it. ``next-card`` is right where the card follows
the last one cyclically, or where the last one's successor was seen and ``longest-run``
is right; ``strip`` needs its packet, read from the top down. For larger decks the seen
(and, read backwards, the unseen) cards are kept as merged blocks of consecutive labels
(each block's end stored at its start and its start at its end), so every guess costs a
few array operations whatever ``n``: the lowest unseen card and the unseen card just above
the current packet come from the blocks of seen cards; the longest unseen block is
followed backwards from the end of the deck, where blocks only ever merge. The cost is
linear in ``decks x cards``.

References
----------
.. [1] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23.
.. [2] R. P. Stanley, *Enumerative Combinatorics*, vol. 1, 2nd ed., Cambridge University
       Press, 2012, Prop. 1.3.7 (the generating function ``prod_j (x + j - 1)``).
.. [3] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313 (a-shuffles: cards drop with probability proportional to
       packet size).
"""

from __future__ import annotations

from collections.abc import Iterable
from fractions import Fraction

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.core.counting import harmonic
from shufflecheck.stats.nulls import Law, guessing_law
from shufflecheck.stats.statistics import as_decks, bitmask_ok

__all__ = [
    "DEFAULT_STRATEGIES",
    "STRATEGIES",
    "guess_scores",
    "guess_scores_many",
    "guesses",
    "guessing_mean",
    "guessing_null",
    "guessing_variance",
]

#: Strategy name -> one-line description (see the module docstring for details).
STRATEGIES: dict[str, str] = {
    "next-card": "the card after the last seen one in the reference (cyclic), "
    "else the start of the longest unseen block (riffles, cuts)",
    "longest-run": "the start of the longest block of unseen reference cards (riffles)",
    "strip": "continue the packet; at its end, one packet-length above it (strips, overhand)",
    "lowest-unseen": "the unseen card earliest in the reference (naive baseline)",
}

#: Strategies the audit battery plays, in this order.
DEFAULT_STRATEGIES: tuple[str, ...] = ("next-card", "longest-run", "strip", "lowest-unseen")

_ONE = np.uint64(1)
_CHUNK = 1 << 14


def check_strategies(strategies: Iterable[str]) -> tuple[str, ...]:
    """Validate strategy names (duplicates removed, order kept)."""
    out = tuple(dict.fromkeys(strategies))
    for name in out:
        if name not in STRATEGIES:
            allowed = ", ".join(STRATEGIES)
            raise InputError(f"unknown guessing strategy {name!r}; choose from {allowed}")
    return out


def guessing_null(n: int) -> Law:
    """Exact law of the number of correct guesses on a uniform deck of ``n`` cards.

    ``counts[k]`` is ``c(n, offset + k)`` (unsigned Stirling numbers of the first kind) and
    ``total`` is ``n!``; the same for every strategy that names unseen cards.
    """
    return guessing_law(n)


def guessing_mean(n: int) -> Fraction:
    """Exact mean number of correct guesses under a uniform deck: ``H_n``."""
    return harmonic(n)


def guessing_variance(n: int) -> Fraction:
    """Exact variance under a uniform deck: ``sum_j (1/j)(1 - 1/j)``."""
    return sum((Fraction(1, j) * (1 - Fraction(1, j)) for j in range(1, n + 1)), Fraction(0))


def guess_scores(relative: np.ndarray, strategy: str = "next-card") -> np.ndarray:
    """Correct guesses per deck (``int64``, shape ``(decks,)``) for one strategy.

    Parameters
    ----------
    relative : (decks, n) int array
        ``relative[d, i]`` is the reference position of the card at position ``i``.
    strategy : str
        One of :data:`STRATEGIES`.
    """
    return guess_scores_many(relative, (strategy,))[strategy]


def guess_scores_many(
    relative: np.ndarray, strategies: Iterable[str] = DEFAULT_STRATEGIES, *, check: bool = True
) -> dict[str, np.ndarray]:
    """Correct guesses per deck for several strategies in one pass over the positions
    (``check=False`` skips the check of decks already checked once)."""
    names = check_strategies(strategies)
    decks = as_decks(relative, name="relative decks") if check else np.asarray(relative)
    return _play(decks, names, record=False)[0]


def guesses(relative: np.ndarray, strategy: str = "next-card") -> np.ndarray:
    """The card each strategy names at each position (``int64``, shape ``(decks, n)``)."""
    names = check_strategies((strategy,))
    decks = as_decks(relative, name="relative decks")
    return _play(decks, names, record=True)[1][strategy]


def _play(
    decks: np.ndarray, names: tuple[str, ...], *, record: bool, force_generic: bool = False
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    count, n = decks.shape
    scores = {name: np.zeros(count, dtype=np.int64) for name in names}
    picks = {name: np.zeros((count, n), dtype=np.int64) for name in names} if record else {}
    if count == 0 or not names:
        return scores, picks
    if force_generic:
        play = _play_generic
    elif bitmask_ok(n) and not record:
        for start in range(0, count, _CHUNK):
            stop = min(count, start + _CHUNK)
            found = _score_bitmask(np.ascontiguousarray(decks[start:stop].T), names)
            for name in names:
                scores[name][start:stop] = found[name]
        return scores, picks
    else:
        play = _play_bitmask if bitmask_ok(n) else _play_blocks
    for start in range(0, count, _CHUNK):
        stop = min(count, start + _CHUNK)
        cols = np.ascontiguousarray(decks[start:stop].T).astype(np.int64)
        out = play(cols, names, record)
        for name in names:
            scores[name][start:stop] = out[name][0]
            if record:
                picks[name][start:stop] = out[name][1].T
    return scores, picks


def _low_bit(x: np.ndarray) -> np.ndarray:
    """Index of the lowest set bit of each nonzero uint64."""
    return np.bitwise_count((x & (~x + _ONE)) - _ONE).astype(np.int64)


def _high_bit(x: np.ndarray) -> np.ndarray:
    """Index of the highest set bit of each uint64 (-1 for zero)."""
    if x.size and int(x.max()) < (1 << 53):  # exact as a double: read its exponent
        return np.frexp(x.astype(np.float64))[1].astype(np.int64) - 1
    y = x | (x >> np.uint64(1))
    for s in (2, 4, 8, 16, 32):
        y |= y >> np.uint64(s)
    return np.bitwise_count(y).astype(np.int64) - 1


def _longest_run(unseen: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Lowest start and length of a longest block of consecutive set bits (bitmask of
    unseen cards; length 0 where none is set)."""
    levels = [unseen]  # levels[j]: bit u set iff bits u .. u + 2^j - 1 are all set
    span = 1
    while 2 * span <= n:
        a = levels[-1]
        levels.append(a & (a >> np.uint64(span)))
        span *= 2
    cur = unseen.copy()  # bit u: a run of length >= length starts at u (length >= 1)
    length = np.ones(unseen.shape, dtype=np.uint64)
    for j in range(len(levels) - 1, -1, -1):
        step = np.uint64(1 << j)
        cand = cur & (levels[j] >> length)
        hit = cand != 0
        cur = np.where(hit, cand, cur)
        length = np.where(hit, length + step, length)
    length = np.where(unseen != 0, length, np.uint64(0))
    return _low_bit(cur), length.astype(np.int64)


def _longest_run_start(unseen: np.ndarray, n: int) -> np.ndarray:
    """Lowest start of a longest block of consecutive set bits (bitmask of unseen cards)."""
    return _longest_run(unseen, n)[0]


def _play_bitmask(
    cols: np.ndarray, names: tuple[str, ...], record: bool
) -> dict[str, tuple[np.ndarray, np.ndarray | None]]:
    n, count = cols.shape
    full = np.uint64((1 << n) - 1)
    seen = np.zeros(count, dtype=np.uint64)
    last = np.full(count, n - 1, dtype=np.int64)  # a virtual last card: reference bottom
    run_start = np.full(count, n, dtype=np.int64)  # the strip's virtual run before the top
    run_len = np.ones(count, dtype=np.int64)
    score = {name: np.zeros(count, dtype=np.int64) for name in names}
    picked = {name: np.zeros((n, count), dtype=np.int64) for name in names} if record else {}
    want_run = "next-card" in names or "longest-run" in names
    # the longest unseen block, kept up to date: seeing a card outside it leaves it the
    # lowest longest block (other blocks only shrink), so only decks whose card fell inside
    # it are recomputed
    best_start = np.zeros(count, dtype=np.int64)
    best_len = np.full(count, n, dtype=np.int64)
    for i in range(n):
        card = cols[i]
        unseen = ~seen & full
        longest = best_start
        lowest = _low_bit(unseen)
        for name in names:
            if name == "longest-run":
                guess = longest
            elif name == "lowest-unseen":
                guess = lowest
            elif name == "next-card":
                nxt = (last + 1) % n
                free = ((unseen >> nxt.astype(np.uint64)) & _ONE) != 0
                guess = longest if i == 0 else np.where(free, nxt, longest)
            else:  # strip
                guess = _strip_guess_bitmask(unseen, last, run_start, run_len, lowest, n, i)
            score[name] += guess == card
            if record:
                picked[name][i] = guess
        # observe the card
        follows = card == last + 1
        if i == 0:
            follows = np.zeros(count, dtype=bool)
        run_len = np.where(follows, run_len + 1, 1)
        run_start = np.where(follows, run_start, card)
        last = card
        seen |= _ONE << card.astype(np.uint64)
        if want_run and i < n - 1:
            hit = np.flatnonzero((card >= best_start) & (card < best_start + best_len))
            if hit.size:
                best_start = best_start.copy()
                best_start[hit], best_len[hit] = _longest_run(~seen[hit] & full, n)
    return {name: (score[name], picked.get(name)) for name in names}


def _score_bitmask(cols: np.ndarray, names: tuple[str, ...]) -> dict[str, np.ndarray]:
    """Correct guesses per deck (``int64``) for ``n <= 63``: the same scores as
    :func:`_play_bitmask` without naming the guesses (``cols[i]``: the cards at position
    ``i``, one per deck)."""
    n, m = cols.shape
    c8 = cols.astype(np.uint8)
    c64 = c8.astype(np.uint64)
    score = {name: np.zeros(m, dtype=np.uint8) for name in names}
    want_next = "next-card" in names
    want_longest = "longest-run" in names
    want_low = "lowest-unseen" in names or "strip" in names
    t = np.empty(m, dtype=np.uint64)  # scratch rows
    up = np.empty(m, dtype=np.uint64)
    down = np.empty(m, dtype=np.uint64)
    key = np.zeros(m, dtype=np.uint16)
    k = np.empty(m, dtype=np.uint16)
    low = np.full(m, 255, dtype=np.uint8)
    low_hit = np.empty((n, m), dtype=bool)  # the card is the lowest unseen one
    unseen = np.zeros(m, dtype=np.uint64)  # bit c: card c lies at this position or below
    mirror = np.zeros(m, dtype=np.uint64)  # the same set, bit n - 1 - c for card c
    top, top_bit, mask6 = np.uint64(n - 1), np.uint64(1 << (n - 1)), np.uint16(63)
    # per card, as 16-bit words: 61 - c (wrapping) and 63 - c, for the key below
    key_offset = (61 - c8.astype(np.int16)).astype(np.uint16)
    key_back = (63 - c8.astype(np.int16)).astype(np.uint16)
    if want_next:  # the cyclic successor of each card: the top card follows the bottom one
        successor = c8 + np.uint8(1)
        successor[successor == n] = 0
        succeeds = np.zeros((n, m), dtype=bool)  # the card follows the last one cyclically
        np.equal(c8[1:], successor[:-1], out=succeeds[1:])
    for i in range(n - 1, -1, -1):
        c = c64[i]
        np.left_shift(_ONE, c, out=t)
        unseen |= t
        if want_low:
            np.minimum(low, c8[i], out=low)
            np.equal(low, c8[i], out=low_hit[i])
        if "lowest-unseen" in names:
            score["lowest-unseen"] += low_hit[i]
        if not (want_next or want_longest):
            continue
        # the unseen block holding c: (ones of unseen from bit c up) = pu - 1, (ones of
        # mirror from bit n - 1 - c up) = pd - 1; it starts at c + 2 - pd, has pu + pd - 3
        # cards; key = 64 * (pu + pd) + 63 - start is largest for the lowest longest block
        np.right_shift(top_bit, c, out=t)
        mirror |= t
        np.right_shift(unseen, c, out=up)
        np.add(up, _ONE, out=t)
        up ^= t
        pu = np.bitwise_count(up)
        np.subtract(top, c, out=t)
        np.right_shift(mirror, t, out=down)
        np.add(down, _ONE, out=t)
        down ^= t
        pd = np.bitwise_count(down)
        pu += pd
        np.left_shift(pu, 6, out=k, dtype=np.uint16)
        k += pd
        k += key_offset[i]
        np.maximum(key, k, out=key)
        np.bitwise_and(key, mask6, out=k)
        longest_hit = k == key_back[i]  # 63 - start == 63 - c
        if want_longest:
            score["longest-run"] += longest_hit
        if want_next:
            if i == 0:
                score["next-card"] += longest_hit
                continue
            nxt = successor[i - 1].astype(np.uint64)
            np.right_shift(unseen, nxt, out=t)
            t &= _ONE
            # right when the successor is shown; else, once it was seen, as longest-run
            score["next-card"] += succeeds[i] | (longest_hit & (t == 0))
    if "strip" in names:
        _score_strip(c64, low_hit, score["strip"])
    return {name: score[name].astype(np.int64) for name in names}


def _score_strip(c64: np.ndarray, low_hit: np.ndarray, out: np.ndarray) -> None:
    """Add the strip's correct guesses to ``out``, from the top down (``low_hit``: where
    the card shown is the lowest unseen one)."""
    n, m = c64.shape
    t = np.empty(m, dtype=np.uint64)
    up = np.empty(m, dtype=np.uint64)
    out += c64[0] == n - 1  # the first guess: the reference bottom card
    unseen = np.full(m, (1 << n) - 1, dtype=np.uint64)
    unseen ^= _ONE << c64[0]
    run = np.ones(m, dtype=np.uint64)  # cards in the packet ending at the last card
    follows = np.empty(m, dtype=np.uint64)
    for i in range(1, n):
        c = c64[i]
        nxt = c64[i - 1] + _ONE  # shifts by n or more give 0: a seen card
        np.equal(c, nxt, out=follows, casting="unsafe")
        np.right_shift(unseen, nxt, out=t)
        t &= _ONE
        stop = t == 0  # the packet's next card was seen (or there is none)
        start = nxt - run  # the packet's lowest card
        jump = start - run  # one packet-length above; wraps when negative (seen)
        np.right_shift(unseen, jump, out=t)
        t &= _ONE
        jump_hit = c == jump  # (then that card is unseen)
        jump_seen = t == 0
        np.left_shift(_ONE, start, out=t)
        t -= _ONE
        t &= unseen  # the unseen cards above the packet (in reference order)
        np.right_shift(t, c, out=up)  # c is the highest of them when this is 1
        above = (up == _ONE) | ((t == 0) & low_hit[i])
        # right: the packet goes on; else the jump; else the card above the packet
        above &= jump_seen
        above |= jump_hit
        above &= stop
        above |= follows != 0
        out += above
        run *= follows
        run += _ONE
        np.left_shift(_ONE, c, out=t)
        unseen ^= t


def _strip_guess_bitmask(
    unseen: np.ndarray,
    last: np.ndarray,
    run_start: np.ndarray,
    run_len: np.ndarray,
    lowest: np.ndarray,
    n: int,
    i: int,
) -> np.ndarray:
    nxt = last + 1
    cont = (nxt < n) & (((unseen >> np.minimum(nxt, n - 1).astype(np.uint64)) & _ONE) != 0)
    if i == 0:
        cont[:] = False
    jump = run_start - run_len
    jump_ok = (jump >= 0) & (((unseen >> np.maximum(jump, 0).astype(np.uint64)) & _ONE) != 0)
    below = unseen & ((_ONE << np.minimum(run_start, n).astype(np.uint64)) - _ONE)
    above_block = _high_bit(below)
    guess = np.where(above_block >= 0, above_block, lowest)
    guess = np.where(jump_ok, jump, guess)
    return np.where(cont, nxt, guess)


def _play_generic(
    cols: np.ndarray, names: tuple[str, ...], record: bool
) -> dict[str, tuple[np.ndarray, np.ndarray | None]]:
    n, count = cols.shape
    rows = np.arange(count)
    idx = np.arange(n)
    seen = np.zeros((count, n), dtype=bool)
    low = np.zeros(count, dtype=np.int64)
    last = np.full(count, n - 1, dtype=np.int64)
    run_start = np.full(count, n, dtype=np.int64)
    run_len = np.ones(count, dtype=np.int64)
    score = {name: np.zeros(count, dtype=np.int64) for name in names}
    picked = {name: np.zeros((n, count), dtype=np.int64) for name in names} if record else {}
    want_run = "next-card" in names or "longest-run" in names
    for i in range(n):
        card = cols[i]
        longest = None
        if want_run:
            marks = np.maximum.accumulate(np.where(seen, idx, -1), axis=1)
            ending = np.where(seen, 0, idx - marks)  # length of the unseen run ending here
            end = np.argmax(ending, axis=1)
            longest = end - ending[rows, end] + 1
        for name in names:
            if name == "longest-run":
                guess = longest
            elif name == "lowest-unseen":
                guess = low
            elif name == "next-card":
                nxt = (last + 1) % n
                free = ~seen[rows, nxt]
                guess = longest if i == 0 else np.where(free, nxt, longest)
            else:
                guess = _strip_guess_generic(seen, last, run_start, run_len, low, n, i)
            score[name] += guess == card
            if record:
                picked[name][i] = guess
        follows = (card == last + 1) & (i > 0)
        run_len = np.where(follows, run_len + 1, 1)
        run_start = np.where(follows, run_start, card)
        last = card
        seen[rows, card] = True
        if i < n - 1:  # advance the lowest unseen card past seen ones
            todo = np.nonzero(seen[rows, low])[0]
            while todo.size:
                low[todo] += 1
                todo = todo[seen[todo, low[todo]]]
    return {name: (score[name], picked.get(name)) for name in names}


#: decks per block of the linear-time path (its tables stay in cache)
_BLOCK_DECKS = 4096


def _merge(
    present: np.ndarray, start_at: np.ndarray, end_at: np.ndarray, base: np.ndarray, card
) -> tuple[np.ndarray, np.ndarray]:
    """Add ``card`` to each deck's blocks of consecutive labels; return the merged block
    ``(start, end)``. Tables are flat, one row of ``n + 2`` cells per deck starting at
    ``base``; label ``c`` sits in cell ``c + 1`` (cells 0 and ``n + 1`` stay empty).
    ``start_at`` and ``end_at`` start at -1 and are only ever written at the ends of a
    block, so (``card`` being new) ``start_at`` of label ``card - 1`` is >= 0 exactly when
    that label is in a block, and then it is that block's end."""
    cell = base + card
    start = start_at[cell]  # label card - 1
    start = np.where(start >= 0, start, card)
    end = end_at[cell + 2]  # label card + 1
    end = np.where(end >= 0, end, card)
    present[cell + 1] = True
    end_at[base + start + 1] = end
    start_at[base + end + 1] = start
    return start, end


def _play_blocks(
    cols: np.ndarray, names: tuple[str, ...], record: bool
) -> dict[str, tuple[np.ndarray, np.ndarray | None]]:
    """The strategies in linear time, block by block of decks (same guesses as
    :func:`_play_generic`)."""
    n, count = cols.shape
    score = {name: np.zeros(count, dtype=np.int64) for name in names}
    picked = {name: np.zeros((n, count), dtype=np.int64) for name in names} if record else {}
    for first in range(0, count, _BLOCK_DECKS):
        part = slice(first, min(count, first + _BLOCK_DECKS))
        found = _play_blocks_part(cols[:, part].astype(np.int16), names, record)
        for name in names:
            score[name][part] = found[name][0]
            if record:
                picked[name][:, part] = found[name][1]
    return {name: (score[name], picked.get(name)) for name in names}


def _play_blocks_part(
    cols: np.ndarray, names: tuple[str, ...], record: bool
) -> dict[str, tuple[np.ndarray, np.ndarray | None]]:
    n, count = cols.shape
    base = (np.arange(count) * (n + 2)).astype(np.int64)
    score = {name: np.zeros(count, dtype=np.int64) for name in names}
    picked = {name: np.zeros((n, count), dtype=np.int64) for name in names} if record else {}

    def note(name: str, i: int, guess: np.ndarray) -> None:
        score[name] += guess == cols[i]
        if record:
            picked[name][i] = guess

    def tables() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        size = count * (n + 2)
        return np.zeros(size, bool), np.full(size, -1, np.int16), np.full(size, -1, np.int16)

    if "lowest-unseen" in names or "strip" in names:
        seen, start_at, end_at = tables()
        top = base + 1  # cell of label 0
        last = np.full(count, n - 1, dtype=np.int16)
        run_start = np.full(count, n, dtype=np.int16)
        run_len = np.ones(count, dtype=np.int16)
        block_start = np.full(count, n, dtype=np.int16)  # of the block holding the last card
        for i in range(n):
            card = cols[i]
            lowest = np.where(seen[top], end_at[top] + 1, 0)  # label 0 starts its block
            if "lowest-unseen" in names:
                note("lowest-unseen", i, lowest)
            if "strip" in names:
                nxt = last + 1
                cont = (nxt < n) & ~seen[base + np.minimum(nxt, n - 1) + 1]
                if i == 0:
                    cont[:] = False
                jump = run_start - run_len
                jump_ok = (jump >= 0) & ~seen[base + np.maximum(jump, 0) + 1]
                # the unseen card just above the current packet: above its seen block
                above = block_start - 1
                guess = np.where(jump_ok, jump, np.where(above >= 0, above, lowest))
                note("strip", i, np.where(cont, nxt, guess))
            follows = (card == last + 1) & (i > 0)
            run_len = np.where(follows, run_len + 1, 1).astype(np.int16)
            run_start = np.where(follows, run_start, card)
            last = card
            block_start, _ = _merge(seen, start_at, end_at, base, card)
    if "longest-run" in names or "next-card" in names:
        unseen, start_at, end_at = tables()
        longest_len = np.zeros(count, dtype=np.int16)
        longest = np.zeros(count, dtype=np.int16)
        for i in range(n - 1, -1, -1):
            card = cols[i]
            start, end = _merge(unseen, start_at, end_at, base, card)
            length = end - start + 1
            tie = (length == longest_len) & (start < longest)
            longest = np.where((length > longest_len) | tie, start, longest)
            longest_len = np.maximum(longest_len, length)
            if "longest-run" in names:
                note("longest-run", i, longest)
            if "next-card" in names:
                if i == 0:
                    note("next-card", i, longest)
                else:
                    nxt = (cols[i - 1] + 1) % n
                    note("next-card", i, np.where(unseen[base + nxt + 1], nxt, longest))
    return {name: (score[name], picked.get(name)) for name in names}


def _strip_guess_generic(
    seen: np.ndarray,
    last: np.ndarray,
    run_start: np.ndarray,
    run_len: np.ndarray,
    low: np.ndarray,
    n: int,
    i: int,
) -> np.ndarray:
    rows = np.arange(seen.shape[0])
    nxt = last + 1
    cont = (nxt < n) & ~seen[rows, np.minimum(nxt, n - 1)]
    if i == 0:
        cont[:] = False
    jump = run_start - run_len
    jump_ok = (jump >= 0) & ~seen[rows, np.maximum(jump, 0)]
    below = ~seen & (np.arange(n) < run_start[:, None])
    has = below.any(axis=1)
    above_block = np.where(has, n - 1 - np.argmax(below[:, ::-1], axis=1), -1)
    guess = np.where(above_block >= 0, above_block, low)
    guess = np.where(jump_ok, jump, guess)
    return np.where(cont, nxt, guess)
