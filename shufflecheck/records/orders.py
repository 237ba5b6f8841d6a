"""Recorded orders: one arrangement checked against a deck definition, and relative decks.

:func:`check_arrangement` is the authoritative check behind every message about a row of a
log (what is wrong, in the order a person would look); :func:`parse_order` reads one order
given on the command line or in a file; :func:`relative_to` expresses decks in the labels of
their reference order.

References
----------
.. [1] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of Mathematical
       Statistics, Hayward, CA, 1988, ch. 3 (arrangements of a deck as permutations; composition
       with a reference order).
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from shufflecheck.common.errors import MARKED, InputError, marked_arguments
from shufflecheck.records.cards import DeckDefinition, Labels

__all__ = [
    "Arrangement",
    "check_arrangement",
    "integer_value",
    "parse_order",
    "relative_to",
]


@dataclass(frozen=True)
class Arrangement:
    """Outcome of checking one recorded arrangement against a deck definition.

    ``labels`` (``int16``, top first) when the arrangement is valid, else ``None`` and
    ``reason`` (a short code, see docs/formats-logs.md) with a one-line ``problem``.
    ``base`` is the numbering of integer labels that was used (0 or 1), ``None`` for codes.
    """

    labels: np.ndarray | None
    reason: str | None = None
    problem: str | None = None
    base: int | None = None

    @property
    def ok(self) -> bool:
        return self.labels is not None


def integer_value(token: object) -> int | None:
    """Value of an integer label (ASCII digits, or a JSON/Parquet integer), else ``None``.

    Booleans and floats are not integer labels (``true``, ``5.0`` are rejected).
    """
    if isinstance(token, (bool, np.bool_)):
        return None
    if isinstance(token, (int, np.integer)):
        return int(token)
    if isinstance(token, str):
        text = token.strip()
        if text.isascii() and text.isdigit():
            return int(text)
    return None


def _shown(token: object) -> str:
    return repr(token.strip()) if isinstance(token, str) else repr(token)


def _times(k: int) -> str:
    return "twice" if k == 2 else f"{k} times"


def _positions(where: list[int]) -> str:
    if len(where) > 6:  # a row of millions of cards still gets a one-line message
        return ", ".join(str(p + 1) for p in where[:5]) + f" and {len(where) - 5:,} more"
    text = [str(p + 1) for p in where]
    return text[0] if len(text) == 1 else ", ".join(text[:-1]) + " and " + text[-1]


def _missing_text(names: list[str]) -> str:
    shown = ", ".join(names[:3]) + (f" and {len(names) - 3} more" if len(names) > 3 else "")
    return f"{shown} {'is' if len(names) == 1 else 'are'} missing"


def _is_empty(token: object) -> bool:
    return token is None or (isinstance(token, str) and not token.strip())


def check_arrangement(
    tokens: Sequence[object],
    deck: DeckDefinition,
    *,
    labels: Labels = "codes",
    base: int | None = None,
) -> Arrangement:
    """Check that ``tokens`` (top first) are an arrangement of ``deck``; say why not.

    Problems are looked for in this order and the first found is reported, positions
    1-based as a person counts: an empty field (``empty-field``), a code that is not a card
    of the deck (``unknown-code``) or, for integer labels, a label that is not an integer
    (``not-integer``), outside the numbering (``out-of-range``) or a row using both 0 and
    ``n`` (``mixed-base``); then the number of cards (``wrong-length``) and repeated cards
    (``duplicate-card``).

    Parameters
    ----------
    tokens : sequence
        Card codes (text), or integer labels (text of digits or ints) when ``labels`` is
        an integer mode.
    deck : DeckDefinition
    labels : {"codes", "int", "int0", "int1"}
        ``int`` takes the numbering from ``base`` if given, else from the row itself
        (0-based if it holds 0, 1-based if it holds ``n``).
    base : 0, 1 or None
        Numbering already fixed for the file (integer modes only).
    """
    n = deck.size
    if not tokens:
        return Arrangement(None, "empty-order", "empty order field")
    values: list[int] = []
    if labels == "codes":
        for pos, token in enumerate(tokens):
            if _is_empty(token):
                return Arrangement(None, "empty-field", f"empty field at position {pos + 1}")
            found = deck.lookup(token)
            if found is None:
                return Arrangement(None, "unknown-code", deck.code_problem(token, pos + 1))
            values.append(found)
        used = None
    else:
        raw: list[int] = []
        for pos, token in enumerate(tokens):
            if _is_empty(token):
                return Arrangement(None, "empty-field", f"empty field at position {pos + 1}")
            value = integer_value(token)
            if value is None:
                return Arrangement(
                    None,
                    "not-integer",
                    f"label {_shown(token)} at position {pos + 1} is not an integer",
                )
            raw.append(value)
        fixed = {"int0": 0, "int1": 1}.get(labels)
        if fixed is None and 0 in raw and n in raw:
            return Arrangement(
                None,
                "mixed-base",
                f"labels mix 0-based and 1-based numbering (both 0 and {n} appear)",
            )
        if fixed is not None:
            used = fixed
        elif base is not None:
            used = base
        else:
            used = 1 if n in raw else 0
        for pos, value in enumerate(raw):
            if not used <= value < used + n:
                note = (
                    f" (this log numbers cards from {used}, as its first valid row shows)"
                    if fixed is None and base is not None
                    else ""
                )
                return Arrangement(
                    None,
                    "out-of-range",
                    f"label {value} at position {pos + 1} is out of range "
                    f"{used}..{used + n - 1}{note}",
                    used,
                )
        values = [v - used for v in raw]
    counts = Counter(values)
    twice = ""
    repeated = [label for label, k in counts.items() if k > 1]
    name = (lambda lab: deck.cards[lab]) if labels == "codes" else (lambda lab: str(lab + used))
    if repeated:
        first = min(repeated, key=values.index)
        where = [p for p, v in enumerate(values) if v == first]
        twice = f"card {name(first)} appears {_times(len(where))} (positions {_positions(where)})"
    missing = [name(lab) for lab in range(n) if lab not in counts]
    if len(values) != n:
        detail = twice if repeated else (_missing_text(missing) if missing else "")
        return Arrangement(
            None,
            "wrong-length",
            f"{len(values)} cards, deck {deck.name!r} has {n}" + (f"; {detail}" if detail else ""),
            used,
        )
    if repeated:
        return Arrangement(None, "duplicate-card", f"{twice}; {_missing_text(missing)}", used)
    return Arrangement(np.asarray(values, dtype=np.int16), base=used)


_ORDER_SPLIT = re.compile(r"\s+")
#: cells per block of the vectorised relabelling (about 5,000 decks of 52 cards)
_BLOCK_CELLS = 1 << 18


def parse_order(
    order: str | Sequence[object],
    deck: DeckDefinition,
    *,
    labels: Labels = "codes",
    where: str = "reference order",
) -> np.ndarray:
    """One arrangement (codes separated by whitespace, or a sequence) as labels, top first.

    Raises :class:`InputError` naming ``where`` and the problem (see
    :func:`check_arrangement`).

    Examples
    --------
    >>> deck = DeckDefinition.from_cards("tiny", ["AS", "2S", "3S"])
    >>> parse_order("3s as 2♠", deck).tolist()
    [2, 0, 1]
    """
    tokens = order.split() if isinstance(order, str) else list(order)
    checked = check_arrangement(tokens, deck, labels=labels)
    if not checked.ok:
        named = marked_arguments(str(checked.problem), MARKED) or None
        raise InputError(f"{where}: {checked.problem}", argument=named)
    assert checked.labels is not None
    return checked.labels


def relative_to(decks: np.ndarray, reference: np.ndarray) -> np.ndarray:
    """Each deck as a permutation relative to its reference deck.

    ``rel[d, i]`` is the position in ``reference[d]`` (0 = top) of the card at position
    ``i`` of ``decks[d]``. A deck equal to its reference gives the identity ``0..n-1``; if a
    deck was made from its reference by ``new[i] = old[source[i]]`` (DEVELOPERS.md), the
    result is ``source`` ([1], ch. 3: an arrangement read in the labels of the reference).

    Parameters
    ----------
    decks : ndarray, shape (D, n)
        Arrangements (labels top first).
    reference : ndarray, shape (n,) or (D, n)
        One reference order for all decks, or one per deck.

    Returns
    -------
    ndarray of int16, shape (D, n)

    Examples
    --------
    >>> relative_to(np.array([[2, 0, 1]]), np.array([1, 2, 0])).tolist()
    [[1, 2, 0]]
    """
    decks = np.asarray(decks)
    reference = np.asarray(reference)
    if decks.ndim != 2:
        raise InputError(f"decks must be a 2-d array (decks, cards), got shape {decks.shape}")
    count, n = decks.shape
    if reference.ndim == 1:
        if reference.shape[0] != n:
            raise InputError(f"reference has {reference.shape[0]} cards, decks have {n}")
        inverse = np.empty(n, dtype=np.int16)
        inverse[reference] = np.arange(n, dtype=np.int16)
        return inverse[decks]
    if reference.shape != decks.shape:
        raise InputError(f"reference shape {reference.shape} does not match decks {decks.shape}")
    # per block of rows, one flat scatter and one flat gather (row offsets added) in
    # native-width indices (numpy converts narrower ones first): the inverse of each
    # reference, then each deck read through it
    out = np.empty((count, n), dtype=np.int16)
    step = max(1, _BLOCK_CELLS // max(n, 1))
    ramp = np.tile(np.arange(n, dtype=np.int16), min(step, count))
    for lo in range(0, count, step):
        rows = min(step, count - lo)
        offsets = (np.arange(rows, dtype=np.intp) * n)[:, None]
        inverse = np.empty(rows * n, dtype=np.int16)
        inverse[(reference[lo : lo + rows].astype(np.intp) + offsets).ravel()] = ramp[: rows * n]
        out[lo : lo + rows] = inverse.take(decks[lo : lo + rows].astype(np.intp) + offsets)
    return out
