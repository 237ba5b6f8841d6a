"""One recorded hand riffle, read off exactly, and its probability under the hand riffle.

**Reading a riffle.** A riffle cuts the deck into a top packet of ``c`` cards (left hand)
and a bottom packet of ``n - c`` cards (right hand) and interleaves them, each packet
keeping its order. Relative to the deck before it, the deck after one riffle is therefore
an interleaving of ``0..c-1`` and ``c..n-1``: it has at most two rising sequences ([1]).
Conversely, an arrangement with exactly two rising sequences is one interleaving of one
cut: the cut ``c`` is the first label of the second rising sequence, and the hand of every
card (the *drop word*) is read off its label (``>= c``: right hand). An arrangement with
one rising sequence is the unchanged deck: every cut, with the drop sequence that puts the
whole top packet above the bottom packet, gives it, so its cut is not seen. Three or more
rising sequences cannot come from one riffle (:data:`NOT_ONE_RIFFLE`).

**The likelihood** ([2], the project's hand-riffle model,
:class:`shufflecheck.models.hand_riffle.HandRiffle`). With parameters ``spread`` (None:
binomial cut; a number ``s``: the discretised normal curve centred on ``n/2``) and
``clump`` (``k``), the probability of a riffle with cut ``c`` and drop word ``w`` is

    P(c) * P(first drop) * prod over later drops of P(drop | cards held, last hand)

where the first card falls from the left with chance ``c/n``, and afterwards, with ``a``
cards in the hand that dropped last and ``b`` in the other (both ``> 0``), the same hand
drops again with chance ``k a / (k a + b)`` and the other with ``b / (k a + b)``; when one
hand is empty the other drops surely. The unchanged deck has probability
``sum_c P(c) q(c)``, where ``q(0) = q(n) = 1`` and, for ``0 < c < n``, ``q(c)`` is the
chance that the first ``n - c`` drops all come from the right hand:

    q(c) = (n - c)/n * prod_{a=1}^{n-c-1} k a / (k a + c).

For ``clump = 1`` and a binomial cut (the Gilbert-Shannon-Reeds riffle) every riffle that
changes the deck has probability ``2^-n`` and the unchanged deck ``(n + 1) 2^-n``
(eq. (1) of [1] with ``a = 2``); the tests check both.

The cut law of the likelihood is the discretised normal curve before the sampler rounds its
weights to integers (``w(c) = exp(-(c - n/2)^2 / (2 s^2))``, normalised on ``0..n``): the
sampler's integer weights agree with it to ``2^-40`` of the largest weight, and cuts that
the rounding makes impossible (more than about 7.4 spreads from the middle) keep their
tiny positive probability here, so one outlying cut never makes a fit impossible.

**Sufficient statistics** (:class:`RiffleCounts`, mergeable by addition): the cuts read
off, the number of unchanged decks, the first hand of each riffle by cut, and a table over
``(a, b)`` of the drops made with both hands holding cards, with how many of them came from
the hand that dropped last. The log-likelihood is a sum over that table:
``repeats * log(k) - sum visits * log(k a + b)`` plus terms free of ``k``. The table also
counts the *packets* (maximal runs of cards from one hand) and their lengths.

**The ideal riffle's laws of what is read off** (exact integers, used by the tests of the
ideal riffle): given that the deck changed, the cut has law ``(C(n,c) - 1)/(2^n - n - 1)``;
given the cut, every drop word except the unchanged deck's is equally likely, so the number
of packets has the law of runs of two kinds ([3]) with the unchanged deck's word (two
packets) taken out, and the expected number of packets of each length is a count of words.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [2] E. N. Gilbert, "Theory of shuffling", Bell Laboratories technical memorandum, 1955;
       J. Reeds, unpublished manuscript, 1981 (the GSR riffle, the case clump = 1).
.. [3] A. Wald and J. Wolfowitz, "On a test whether two samples are from the same
       population", Ann. Math. Statist. 11 (1940) 147-162 (runs of two kinds).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cache, lru_cache

import numpy as np

from shufflecheck.common.checks import check_cards
from shufflecheck.common.errors import InputError
from shufflecheck.models.cut import check_spread
from shufflecheck.models.hand_riffle import check_clump
from shufflecheck.models.permute import invert

__all__ = [
    "NOT_ONE_RIFFLE",
    "UNCHANGED",
    "DecodedRiffles",
    "RiffleCounts",
    "changed_cut_counts",
    "cut_log_law",
    "decode_riffles",
    "drop_log_likelihood",
    "log_likelihood",
    "packet_count_row",
    "packet_length_totals",
    "riffle_log_probabilities",
    "tally_riffles",
    "unchanged_given_cut",
    "unchanged_log_probability",
]

#: ``DecodedRiffles.cuts`` of a deck left as it was (the cut is not seen)
UNCHANGED = -1
#: ``DecodedRiffles.cuts`` of an arrangement with three or more rising sequences
NOT_ONE_RIFFLE = -2
#: rows tallied at once (bounds the memory of the per-drop arrays)
_BLOCK_ROWS = 16_384


@dataclass(frozen=True)
class DecodedRiffles:
    """What each relative arrangement shows, read off exactly.

    Attributes
    ----------
    rising : ndarray of int64, shape (D,)
        Rising sequences of each arrangement (1: unchanged, 2: one riffle that changed the
        deck, 3 or more: not one riffle).
    cuts : ndarray of int64, shape (D,)
        Cards in the top packet (``1..n-1``) where read off; :data:`UNCHANGED` or
        :data:`NOT_ONE_RIFFLE` otherwise.
    right : ndarray of bool, shape (D, n)
        ``right[d, i]``: the card at position ``i`` (0 = top) came from the right hand (the
        bottom packet). All False on rows whose cut is not read off.
    """

    rising: np.ndarray
    cuts: np.ndarray
    right: np.ndarray

    def __len__(self) -> int:
        return int(self.rising.shape[0])

    @property
    def cards(self) -> int:
        return int(self.right.shape[1])

    @property
    def one_riffle(self) -> np.ndarray:
        """Rows that one riffle can give (at most two rising sequences)."""
        return self.rising <= 2


def decode_riffles(relative: np.ndarray) -> DecodedRiffles:
    """Read the cut and the drop word off each relative arrangement (vectorised).

    Parameters
    ----------
    relative : ndarray of int, shape (D, n)
        ``relative[d, i]`` is the position, in the deck before the riffle, of the card at
        position ``i`` after it (each row a permutation of ``0..n-1``; see
        :class:`shufflecheck.records.logs.RelativeChunk`).

    Returns
    -------
    DecodedRiffles
    """
    rel = np.asarray(relative)
    if rel.ndim != 2 or not np.issubdtype(rel.dtype, np.integer):
        raise InputError("relative arrangements must be a 2-D integer array (decks x cards)")
    decks, n = rel.shape
    check_cards(n)
    where = invert(rel)  # where[d, v]: position of label v
    starts = where[:, 1:] < where[:, :-1]  # label v+1 above label v: a new rising sequence
    rising = 1 + starts.sum(axis=1, dtype=np.int64)
    cuts = np.full(decks, NOT_ONE_RIFFLE, dtype=np.int64)
    cuts[rising == 1] = UNCHANGED
    two = rising == 2
    cuts[two] = starts[two].argmax(axis=1) + 1
    right = np.zeros((decks, n), dtype=bool)
    right[two] = rel[two] >= cuts[two, None]
    return DecodedRiffles(rising, cuts, right)


# ---------------------------------------------------------------------------------------
# sufficient statistics


@dataclass(frozen=True)
class RiffleCounts:
    """Sufficient statistics of a log of riffles of ``cards`` cards (add two to merge).

    Attributes
    ----------
    cards : int
    cuts : ndarray of int64, shape (n + 1,)
        Riffles that changed the deck, by cut (cards in the top packet).
    unchanged : int
        Riffles that left the deck as it was (their cut is not seen).
    first_right : ndarray of int64, shape (n + 1,)
        Of the riffles with cut ``c``, those whose first card fell from the right hand.
    visits : ndarray of int64, shape (n + 1, n + 1)
        ``visits[a, b]``: drops made while the hand that dropped last held ``a`` cards and
        the other ``b`` (both > 0).
    repeats : ndarray of int64, shape (n + 1, n + 1)
        Those of them where the same hand dropped again.
    packets : int
        Packets (maximal runs of cards from one hand) over the riffles that changed the deck.
    packet_lengths : ndarray of int64, shape (n + 1,)
        Packets of each length (index = length in cards).
    packets_squared : int
        Sum over those riffles of the square of their number of packets (for the spread).
    """

    cards: int
    cuts: np.ndarray
    unchanged: int
    first_right: np.ndarray
    visits: np.ndarray
    repeats: np.ndarray
    packets: int
    packet_lengths: np.ndarray
    packets_squared: int = 0
    _cache: dict = field(default_factory=dict, init=False, compare=False, repr=False)

    @classmethod
    def empty(cls, cards: int) -> RiffleCounts:
        n = check_cards(cards)
        zeros = np.zeros(n + 1, dtype=np.int64)
        table = np.zeros((n + 1, n + 1), dtype=np.int64)
        return cls(n, zeros, 0, zeros.copy(), table, table.copy(), 0, zeros.copy(), 0)

    def __add__(self, other: RiffleCounts) -> RiffleCounts:
        if not isinstance(other, RiffleCounts) or other.cards != self.cards:
            raise InputError("only counts of riffles of the same deck size can be added")
        return RiffleCounts(
            self.cards,
            self.cuts + other.cuts,
            self.unchanged + other.unchanged,
            self.first_right + other.first_right,
            self.visits + other.visits,
            self.repeats + other.repeats,
            self.packets + other.packets,
            self.packet_lengths + other.packet_lengths,
            self.packets_squared + other.packets_squared,
        )

    @property
    def changed(self) -> int:
        """Riffles that changed the deck (their cut and drops are read off)."""
        return int(self.cuts.sum())

    @property
    def riffles(self) -> int:
        """Every riffle counted, changed or unchanged."""
        return self.changed + self.unchanged

    @property
    def drops_with_choice(self) -> int:
        """Drops made while both hands held cards (after the first drop of a riffle)."""
        return int(self.visits.sum())

    @property
    def repeated_drops(self) -> int:
        return int(self.repeats.sum())

    def drop_table(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """``(a, b, visits, repeats)`` over the cells with visits, as float arrays."""
        if "table" not in self._cache:
            a, b = np.nonzero(self.visits)
            self._cache["table"] = (
                a.astype(float),
                b.astype(float),
                self.visits[a, b].astype(float),
                self.repeats[a, b].astype(float),
            )
        return self._cache["table"]

    def first_drop_log(self) -> float:
        """Log-probability of the first drops (from the left with chance ``c/n``), free of
        both parameters."""
        if "first" not in self._cache:
            n = self.cards
            left_first = self.cuts - self.first_right
            c = np.flatnonzero(self.cuts)  # only cuts 1..n-1 are ever read off
            self._cache["first"] = float(
                left_first[c] @ np.log(c / n) + self.first_right[c] @ np.log((n - c) / n)
            )
        return self._cache["first"]


def tally_riffles(
    decoded: DecodedRiffles, groups: np.ndarray | None = None, n_groups: int = 1
) -> list[RiffleCounts]:
    """Sufficient statistics of the riffles in ``decoded``, one :class:`RiffleCounts` per group.

    Rows that are not one riffle are not counted (the caller reports them). ``groups[d]``
    in ``0..n_groups-1`` puts row ``d`` in a group (default: one group); used to tally many
    simulated logs at once.
    """
    n = decoded.cards
    size = n + 1
    rows = len(decoded)
    g_all = np.zeros(rows, dtype=np.int64) if groups is None else np.asarray(groups, np.int64)
    if g_all.shape != (rows,) or (rows and (g_all.min() < 0 or g_all.max() >= n_groups)):
        raise InputError(f"groups must hold one group number in 0..{n_groups - 1} per row")
    cuts = np.zeros(n_groups * size, dtype=np.int64)
    first_right = np.zeros(n_groups * size, dtype=np.int64)
    visits = np.zeros(n_groups * size * size, dtype=np.int64)
    repeats = np.zeros(n_groups * size * size, dtype=np.int64)
    packets = np.zeros(n_groups, dtype=np.int64)
    squares = np.zeros(n_groups, dtype=np.int64)
    lengths = np.zeros(n_groups * size, dtype=np.int64)
    unchanged = np.bincount(g_all[decoded.rising == 1], minlength=n_groups)
    changed = np.flatnonzero(decoded.rising == 2)
    k = np.arange(n, dtype=np.int32)
    for start in range(0, changed.size, _BLOCK_ROWS):
        pick = changed[start : start + _BLOCK_ROWS]
        c = decoded.cuts[pick].astype(np.int32)
        g = g_all[pick]
        bottom_up = decoded.right[pick, ::-1]  # drop k is position n-1-k
        # right-hand cards dropped before drop k (k >= 1), and the cards each hand holds then
        before = np.cumsum(bottom_up[:, :-1], axis=1, dtype=np.int32)
        right_held = (n - c)[:, None] - before
        left_held = c[:, None] - k[None, 1:] + before
        last = bottom_up[:, :-1]
        same = bottom_up[:, 1:] == last
        choice = (left_held > 0) & (right_held > 0)
        a = np.where(last, right_held, left_held)
        b = left_held + right_held - a
        # one code per drop with a choice: (group, a, b, same hand again)
        code = (((g[:, None] * size + a) * size + b) * 2 + same)[choice]
        both = np.bincount(code, minlength=2 * visits.size)
        visits += both[0::2] + both[1::2]
        repeats += both[1::2]
        key = g * size + c
        cuts += np.bincount(key, minlength=cuts.size)
        first_right += np.bincount(key[bottom_up[:, 0]], minlength=first_right.size)
        switches = ~same
        runs = 1 + switches.sum(axis=1, dtype=np.int64)
        packets += np.bincount(g, weights=runs, minlength=n_groups).astype(np.int64)
        squares += np.bincount(g, weights=runs * runs, minlength=n_groups).astype(np.int64)
        begins = np.ones(bottom_up.shape, dtype=bool)
        begins[:, 1:] = switches
        ends = np.ones(bottom_up.shape, dtype=bool)
        ends[:, :-1] = switches
        first = np.flatnonzero(begins)
        long = np.flatnonzero(ends) - first + 1
        lengths += np.bincount(g[first // n] * size + long, minlength=lengths.size)
    out = []
    for j in range(n_groups):
        cells = slice(j * size * size, (j + 1) * size * size)
        one = slice(j * size, (j + 1) * size)
        out.append(
            RiffleCounts(
                n,
                cuts[one].copy(),
                int(unchanged[j]),
                first_right[one].copy(),
                visits[cells].reshape(size, size).copy(),
                repeats[cells].reshape(size, size).copy(),
                int(packets[j]),
                lengths[one].copy(),
                int(squares[j]),
            )
        )
    return out


# ---------------------------------------------------------------------------------------
# the likelihood


def cut_log_law(cards: int, spread: float | None) -> np.ndarray:
    """Natural logs of ``P(c)``, ``c = 0..n``, under the hand riffle's cut law.

    ``spread=None``: binomial ``C(n, c) 2^-n``. A number ``s``: the discretised normal
    curve ``exp(-(c - n/2)^2 / (2 s^2))`` normalised on ``0..n`` (unrounded; see the module
    notes); ``s = 0`` puts all the mass on the middle cut(s).
    """
    from scipy.special import gammaln, logsumexp  # scipy on first use: keeps --help quick

    n = check_cards(cards)
    check_spread(spread, "hand-riffle")
    c = np.arange(n + 1, dtype=float)
    if spread is None:
        return gammaln(n + 1) - gammaln(c + 1) - gammaln(n - c + 1) - n * math.log(2.0)
    squares = (c - n / 2) ** 2
    nearest = squares == squares.min()
    if spread == 0 or 2.0 * spread * spread == 0:
        out = np.full(n + 1, -np.inf)
        out[nearest] = -math.log(int(nearest.sum()))
        return out
    z = -(squares - squares.min()) / (2.0 * spread * spread)
    return z - logsumexp(z)


def _log_clump(clump: float) -> float:
    return math.log(clump) if clump > 0 else -math.inf


def unchanged_log_probability(cards: int, spread: float | None, clump: float) -> float:
    """``log P(unchanged deck) = log sum_c P(c) q(c)`` (module notes)."""
    n = check_cards(cards)
    from scipy.special import logsumexp

    if clump != math.inf:
        clump = check_clump(clump)
    return float(logsumexp(cut_log_law(n, spread) + _unchanged_given_cut(n, float(clump))))


def unchanged_given_cut(cards: int, clump: float) -> np.ndarray:
    """``log q(c)``, ``c = 0..n``: the chance, given the cut, of the drop sequence that leaves
    the deck unchanged (``clump = inf``: the limit, a hand dropping until it is empty).
    Read-only array."""
    return _unchanged_given_cut(check_cards(cards), float(clump))


@lru_cache(maxsize=256)
def _unchanged_given_cut(n: int, clump: float) -> np.ndarray:
    out = np.zeros(n + 1)
    if n < 2:
        return out
    c = np.arange(1, n, dtype=float)[:, None]  # 1..n-1
    a = np.arange(1, n, dtype=float)[None, :]  # right-hand cards held, 1..n-1
    used = a <= (n - 1 - c)
    if clump == math.inf:
        terms = np.zeros_like(a * c)
    else:
        with np.errstate(divide="ignore"):
            terms = _log_clump(clump) + np.log(a) - np.log(clump * a + c)
    inner = np.where(used, terms, 0.0).sum(axis=1)
    out[1:n] = np.log((n - c[:, 0]) / n) + inner
    out.flags.writeable = False
    return out


def drop_log_likelihood(counts: RiffleCounts, clump: float) -> float:
    """Log-likelihood of the drops of the riffles that changed the deck, given their cuts.

    ``R log k + sum R_ab log a + S_ab log b - N_ab log(k a + b)`` over the drop table
    (``N`` visits, ``R`` repeats, ``S = N - R`` switches), plus the first drops. ``clump``
    may be ``inf`` (a hand drops until it is empty), the limit of large clumps.
    """
    a, b, visits, repeats = counts.drop_table()
    switches = visits - repeats
    total = counts.first_drop_log()
    if clump == math.inf:
        return total if not switches.sum() else -math.inf
    clump = check_clump(clump)
    if clump == 0:
        return total if not repeats.sum() else -math.inf
    return total + float(
        repeats.sum() * math.log(clump)
        + repeats @ np.log(a)
        + switches @ np.log(b)
        - visits @ np.log(clump * a + b)
    )


def log_likelihood(counts: RiffleCounts, spread: float | None, clump: float) -> float:
    """Log-likelihood (natural log) of a log of riffles under ``hand-riffle(spread, clump)``.

    The sum over riffles of the log-probability of each relative arrangement (riffles that
    are not one riffle are not in ``counts``); equal to the sum of
    :func:`riffle_log_probabilities` over the same rows.
    """
    n = counts.cards
    log_cut = cut_log_law(n, spread)
    seen = counts.cuts > 0
    if np.any(np.isneginf(log_cut[seen])):
        return -math.inf
    total = float(counts.cuts[seen] @ log_cut[seen]) + drop_log_likelihood(counts, clump)
    if counts.unchanged:
        total += counts.unchanged * unchanged_log_probability(n, spread, clump)
    return total


def riffle_log_probabilities(
    relative: np.ndarray, spread: float | None = None, clump: float = 1.0
) -> np.ndarray:
    """Natural log of the probability of each relative arrangement after one hand riffle.

    Computed row by row from the decoded cut and drops (independently of the tallies behind
    :func:`log_likelihood`); ``-inf`` for arrangements one riffle cannot give.
    """
    clump = check_clump(clump)
    decoded = decode_riffles(relative)
    n = decoded.cards
    out = np.full(len(decoded), -np.inf)
    out[decoded.rising == 1] = unchanged_log_probability(n, spread, clump)
    rows = np.flatnonzero(decoded.rising == 2)
    if not rows.size:
        return out
    c = decoded.cuts[rows]
    bottom_up = decoded.right[rows, ::-1]
    k = np.arange(n)
    before = np.cumsum(bottom_up, axis=1) - bottom_up
    left_held = c[:, None] - (k - before)
    right_held = (n - c)[:, None] - before
    first = np.where(bottom_up[:, 0], (n - c) / n, c / n)
    last, now = bottom_up[:, :-1], bottom_up[:, 1:]
    held_l, held_r = left_held[:, 1:].astype(float), right_held[:, 1:].astype(float)
    a = np.where(last, held_r, held_l)
    b = np.where(last, held_l, held_r)
    choice = (held_l > 0) & (held_r > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        same = np.log(clump * a) - np.log(clump * a + b)
        other = np.log(b) - np.log(clump * a + b)
        step = np.where(now == last, same, other)
    if clump == 0:  # both weights 0 only when one hand is empty (no choice then)
        step = np.where(now == last, -np.inf, 0.0)
    drops = np.where(choice, step, 0.0).sum(axis=1)
    out[rows] = cut_log_law(n, spread)[c] + np.log(first) + drops
    return out


# ---------------------------------------------------------------------------------------
# the ideal riffle's laws of what is read off


def _comb(n: int, k: int) -> int:
    return math.comb(n, k) if 0 <= k <= n and n >= 0 else 0


@cache
def changed_cut_counts(cards: int) -> tuple[int, ...]:
    """``C(n, c) - 1`` for ``c = 0..n``: under the ideal riffle, the cut of a riffle that
    changed the deck has law ``counts[c] / (2^n - n - 1)``."""
    n = check_cards(cards)
    return tuple(math.comb(n, c) - 1 for c in range(n + 1))


@cache
def packet_count_row(cut: int, cards: int) -> tuple[int, ...]:
    """``row[r]``: drop words with ``cut`` left-hand cards and ``r`` packets, ``r = 0..n``,
    leaving out the unchanged deck's word (which has 2 packets).

    Wald-Wolfowitz counts ([3]): ``2 C(c-1, j-1) C(m-1, j-1)`` words with ``2j`` runs and
    ``C(c-1, j-1) C(m-1, j) + C(c-1, j) C(m-1, j-1)`` with ``2j + 1`` (``m = n - c``). Under the
    ideal riffle the row divided by ``C(n, c) - 1`` is the law of the number of packets of a
    riffle that changed the deck, given its cut.
    """
    n = check_cards(cards)
    c, m = int(cut), n - int(cut)
    if not 0 < c < n:
        raise InputError(f"a riffle that changed the deck has a cut in 1..{n - 1}, got {cut}")
    row = [0] * (n + 1)
    for r in range(2, n + 1):
        j = r // 2
        if r % 2 == 0:
            row[r] = 2 * _comb(c - 1, j - 1) * _comb(m - 1, j - 1)
        else:
            row[r] = _comb(c - 1, j - 1) * _comb(m - 1, j) + _comb(c - 1, j) * _comb(m - 1, j - 1)
    row[2] -= 1  # the unchanged deck
    return tuple(row)


def _runs_of_length(ones: int, zeros: int, length: int) -> int:
    """Maximal runs of exactly ``length`` ones, summed over all words of ``ones`` ones and
    ``zeros`` zeros: interior runs (a zero on each side), runs at one end, the whole word."""
    n = ones + zeros
    if length > ones or length < 1:
        return 0
    if length == n:
        return 1
    inside = (n - length - 1) * _comb(n - length - 2, ones - length) if zeros >= 2 else 0
    at_end = 2 * _comb(n - length - 1, ones - length)
    return inside + at_end


@cache
def packet_length_totals(cut: int, cards: int) -> tuple[int, ...]:
    """``totals[l]``: packets of length ``l`` (``l = 0..n``), summed over every drop word with
    ``cut`` left-hand cards except the unchanged deck's. Under the ideal riffle,
    ``totals[l] / (C(n, c) - 1)`` is the expected number of packets of length ``l`` in a
    riffle that changed the deck, given its cut."""
    n = check_cards(cards)
    c, m = int(cut), n - int(cut)
    if not 0 < c < n:
        raise InputError(f"a riffle that changed the deck has a cut in 1..{n - 1}, got {cut}")
    totals = [_runs_of_length(c, m, ell) + _runs_of_length(m, c, ell) for ell in range(n + 1)]
    totals[c] -= 1  # the unchanged deck: one left-hand packet of c cards ...
    totals[m] -= 1  # ... and one right-hand packet of m cards
    return tuple(totals)
