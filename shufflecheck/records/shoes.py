"""Decks with repeated cards (shoes) and the features a game sees.

A *shoe* is a multiset of cards: ``copies[k]`` indistinguishable copies of each *kind*
``k``, the distinct cards of a :class:`~shufflecheck.records.cards.DeckDefinition` (for a
shoe of six packs: the 52 kinds of ``standard-52``, six copies each, 312 cards). A recorded
shoe is a *word*: the kind at each position, top first. Copies cannot be told apart in a
log, so a recorded shoe is validated by counting copies ("QH appears 5 times, 6 expected").

For simulation the ``n`` physical cards are labelled by their position in the shoe's
*reference order* (``reference_kinds[i]`` is the kind at reference position ``i``): for
``shoe(packs=6)`` the six packs stacked, each in new-deck order.

Features (:class:`Feature`) group kinds into the classes a game distinguishes:

``distinct``   every physical card on its own (copies told apart; simulation only)
``cards``      the card code (copies alike): the arrangement of the multiset
``rank``       A, 2, ..., 10, J, Q, K (suits ignored)
``blackjack``  A, 2, ..., 9, 10 with 10, J, Q and K alike
``baccarat``   value mod 10: 0 (10, J, Q, K), 1 (A), 2, ..., 9
``colour``     the colour of the suit
``suit``       the suit

Classes of the ranked features are ordered (A low; baccarat 0 first) so that "a card
followed by one of the next value" is defined. Cards that are not rank + suit (jokers) are
a class of their own per code in the rank-based features.  # common practice, no published source

Specifications accepted by :func:`load_shoe`: ``shoe(packs=6)`` (optionally
``shoe(packs=6, deck=FILE)`` for packs of another deck definition), or a deck definition
file with ``copies`` (see docs/formats-logs.md)::

    name = "house-shoe-6"
    copies = 6                      # every card of `cards` six times (six packs)
    cards = ["AS", "2S", ...]       # or per card: { code = "JK", copies = 2 }

References
----------
.. [1] T. Preston-Werner et al., *TOML v1.0.0* (2021), https://toml.io/en/v1.0.0.
"""

from __future__ import annotations

import os
import re
import sys
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.records.cards import (
    BUILT_IN_DECKS,
    RANKS,
    DeckDefinition,
    load_deck,
    with_file_dialect,
)
from shufflecheck.records.cards import DECK_FILE_KEYS as DISTINCT_DECK_KEYS

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised on Python 3.10 only
    import tomli as tomllib

__all__ = [
    "DECK_FILE_KEYS",
    "FEATURES",
    "Feature",
    "ShoeDefinition",
    "check_shoe_row",
    "copy_rows",
    "is_shoe_spec",
    "load_shoe",
    "shoe",
]

#: Feature name -> one-line description (the names accepted by ``--feature``).
FEATURES: dict[str, str] = {
    "distinct": "every physical card on its own (copies told apart)",
    "cards": "card codes, copies alike (the arrangement of the multiset)",
    "rank": "ranks A, 2, ..., 10, J, Q, K (suits ignored)",
    "blackjack": "values A, 2, ..., 9, 10 with 10, J, Q, K alike",
    "baccarat": "values mod 10: 0 (10, J, Q, K), 1 (A), 2, ..., 9",
    "colour": "colour of the suit",
    "suit": "suit",
}

_BLACKJACK = {r: ("10" if r in "TJQK" else ("A" if r == "A" else r)) for r in RANKS}
_BLACKJACK_ORDER = ("A", "2", "3", "4", "5", "6", "7", "8", "9", "10")
_BACCARAT = {r: ("0" if r in "TJQK" else ("1" if r == "A" else r)) for r in RANKS}
_BACCARAT_ORDER = tuple(str(v) for v in range(10))
_RANK_NAMES = {"T": "10"}
_MAX_COPIES = 64


@dataclass(frozen=True)
class Feature:
    """What a game sees of a card: a class per kind (and per physical card).

    ``of_kind[k]`` is the class of kind ``k`` (None for ``distinct``, whose classes are
    the physical cards); ``names[v]`` names class ``v``; ``ordered`` says whether the class
    order is a value order (value successions are defined).
    """

    name: str
    title: str
    of_kind: tuple[int, ...] | None
    names: tuple[str, ...]
    ordered: bool

    @property
    def size(self) -> int:
        """Number of classes."""
        return len(self.names)

    def kind_classes(self) -> np.ndarray:
        """``int16`` array: the class of every kind (not for ``distinct``)."""
        if self.of_kind is None:
            raise InputError("the distinct feature has no classes of kinds")
        return np.asarray(self.of_kind, dtype=np.int16)


@dataclass(frozen=True)
class ShoeDefinition:
    """A deck with repeated cards: kinds, copies of each, and the reference order.

    Parameters
    ----------
    name : str
        Shown in reports and messages (``shoe-6x52``).
    kinds : DeckDefinition
        The distinct cards (labels of kinds are its labels).
    copies : tuple of int
        ``copies[k]`` identical copies of kind ``k`` (>= 1 each).
    reference_kinds : tuple of int
        The kind at each position of the reference order (length ``n = sum(copies)``);
        physical card ``i`` of a simulation is the card at reference position ``i``.
    packs : int or None
        Number of packs when the shoe is ``packs`` copies of every kind.
    """

    name: str
    kinds: DeckDefinition
    copies: tuple[int, ...]
    reference_kinds: tuple[int, ...]
    packs: int | None = None
    description: str = ""
    source: str = "built-in"
    _features: dict[str, Feature] = field(
        init=False, repr=False, compare=False, default_factory=dict
    )

    def __post_init__(self) -> None:
        if len(self.copies) != self.kinds.size:
            raise InputError(f"shoe {self.name!r}: one copy count per kind is needed")
        if any(c < 1 or c > _MAX_COPIES for c in self.copies):
            raise InputError(f"shoe {self.name!r}: copies must be from 1 to {_MAX_COPIES} per card")
        counted = Counter(self.reference_kinds)
        if any(counted.get(k, 0) != c for k, c in enumerate(self.copies)) or len(counted) != len(
            self.copies
        ):
            raise InputError(f"shoe {self.name!r}: the reference order must hold every copy")
        if self.size > 32767:
            raise InputError(f"shoe {self.name!r} has {self.size} cards; at most 32,767")

    @property
    def size(self) -> int:
        """Number of cards ``n``."""
        return len(self.reference_kinds)

    @property
    def kind_count(self) -> int:
        """Number of distinct kinds."""
        return self.kinds.size

    def copies_array(self) -> np.ndarray:
        return np.asarray(self.copies, dtype=np.int64)

    def physical_kinds(self) -> np.ndarray:
        """``int16`` array: the kind of each physical card (its reference position)."""
        return np.asarray(self.reference_kinds, dtype=np.int16)

    def describe(self) -> str:
        """One line: ``shoe-6x52: 312 cards, 52 kinds x 6 copies``."""
        if len(set(self.copies)) == 1:
            made = f"{self.kind_count} kinds x {self.copies[0]} copies"
        else:
            made = f"{self.kind_count} kinds, {min(self.copies)} to {max(self.copies)} copies"
        return f"{self.name}: {self.size} cards, {made}"

    # -- features --------------------------------------------------------------------

    def feature(self, name: str) -> Feature:
        """The feature called ``name`` (one of :data:`FEATURES`)."""
        key = name.strip().lower() if isinstance(name, str) else name
        if key == "color":
            key = "colour"
        if key not in FEATURES:
            raise InputError(
                f"unknown feature {name!r}; features: {', '.join(FEATURES)}", argument="feature"
            )
        if key not in self._features:
            self._features[key] = self._build_feature(key)
        return self._features[key]

    def _build_feature(self, key: str) -> Feature:
        codes = self.kinds.cards
        title = FEATURES[key]
        if key == "distinct":
            return Feature(key, title, None, tuple(str(i) for i in range(self.size)), False)
        if key == "cards":
            return Feature(key, title, tuple(range(len(codes))), tuple(codes), False)
        if key in ("suit", "colour"):
            values = self.kinds.suits if key == "suit" else self.kinds.colours
            labels = [v if v is not None else c for v, c in zip(values, codes, strict=True)]
            names = tuple(dict.fromkeys(labels))
            index = {n: i for i, n in enumerate(names)}
            return Feature(key, title, tuple(index[x] for x in labels), names, False)
        table = {"rank": None, "blackjack": _BLACKJACK, "baccarat": _BACCARAT}[key]
        order = {
            "rank": tuple(_RANK_NAMES.get(r, r) for r in RANKS),
            "blackjack": _BLACKJACK_ORDER,
            "baccarat": _BACCARAT_ORDER,
        }[key]
        labels = []
        for code in codes:
            standard = len(code) == 2 and code[0] in RANKS and code not in self.kinds.special_codes
            if standard:
                rank = code[0]
                labels.append(_RANK_NAMES.get(rank, rank) if table is None else table[rank])
            else:
                labels.append(code)
        used = set(labels)
        names = tuple(x for x in order if x in used) + tuple(
            dict.fromkeys(x for x in labels if x not in order)
        )
        index = {n: i for i, n in enumerate(names)}
        return Feature(key, title, tuple(index[x] for x in labels), names, True)

    def feature_classes(self, name: str) -> np.ndarray:
        """``int16`` array: the class of each *physical* card under feature ``name``."""
        feat = self.feature(name)
        if feat.of_kind is None:
            return np.arange(self.size, dtype=np.int16)
        return np.asarray(feat.of_kind, dtype=np.int16)[self.physical_kinds()]

    def class_counts(self, name: str) -> tuple[int, ...]:
        """Cards of each class of feature ``name`` in the shoe."""
        feat = self.feature(name)
        if feat.of_kind is None:
            return (1,) * self.size
        out = [0] * feat.size
        for k, c in enumerate(self.copies):
            out[feat.of_kind[k]] += c
        return tuple(out)

    def feature_start(self, name: str) -> np.ndarray:
        """The reference order read through feature ``name`` (one class per position)."""
        return self.feature_classes(name)

    # -- codes -----------------------------------------------------------------------

    def lookup(self, code: object) -> int | None:
        """Kind of a card code in any accepted spelling (as the kinds' deck reads it)."""
        return self.kinds.lookup(code)

    def spellings(self) -> dict[str, int]:
        """Every accepted spelling of every kind -> kind (the log reader's token table)."""
        return self.kinds.spellings()

    def format_order(self, kinds: Sequence[int] | np.ndarray) -> str:
        """Canonical codes of one recorded shoe, top first, separated by single spaces."""
        return " ".join(self.kinds.cards[int(k)] for k in kinds)


def shoe(
    packs: int = 6, deck: DeckDefinition | str | os.PathLike[str] | None = None
) -> ShoeDefinition:
    """A shoe of ``packs`` packs of ``deck`` (default ``standard-52``), copies alike; the
    reference order is the packs stacked, each in the deck's own order."""
    if isinstance(packs, bool) or not isinstance(packs, int) or not 1 <= packs <= _MAX_COPIES:
        raise InputError(f"packs must be an integer from 1 to {_MAX_COPIES}, got {packs!r}")
    base = load_deck(deck)
    name = (
        f"shoe-{packs}x{base.size}" if base.name in ("standard-52",) else (f"{base.name}-x{packs}")
    )
    return ShoeDefinition(
        name,
        base,
        (packs,) * base.size,
        tuple(range(base.size)) * packs,
        packs=packs,
        description=f"{packs} packs of {base.name}, copies of a card alike",
        source=base.source if base.source != "built-in" else "built-in",
    )


_SHOE_SPEC = re.compile(r"^\s*shoe\s*(?:\((?P<args>[^()]*)\))?\s*$", re.IGNORECASE)


def is_shoe_spec(spec: object) -> bool:
    """True for text of the form ``shoe(packs=6)`` (or a bare ``shoe``: six packs)."""
    return isinstance(spec, str) and _SHOE_SPEC.match(spec) is not None


def _parse_shoe_spec(text: str) -> ShoeDefinition:
    match = _SHOE_SPEC.match(text)
    assert match is not None
    packs: int = 6
    deck: str | None = None
    args = (match.group("args") or "").strip()
    for part in filter(None, (p.strip() for p in args.split(","))):
        if "=" not in part:
            raise InputError(f"deck {text!r}: write shoe(packs=6) or shoe(packs=6, deck=FILE)")
        key, value = (x.strip() for x in part.split("=", 1))
        key = key.lower()
        if key == "packs":
            if not re.fullmatch(r"\d+", value):
                raise InputError(f"deck {text!r}: packs must be a whole number, got {value!r}")
            packs = int(value)
        elif key == "deck":
            deck = value.strip("\"'")
        else:
            raise InputError(f"deck {text!r}: unknown parameter {key!r} (packs, deck)")
    return shoe(packs, deck)


def load_shoe(spec: ShoeDefinition | str | os.PathLike[str]) -> ShoeDefinition | None:
    """A shoe from ``shoe(packs=6)``, a deck definition file with ``copies``, or a
    :class:`ShoeDefinition`; None when ``spec`` names a deck without repeated cards."""
    if isinstance(spec, ShoeDefinition):
        return spec
    if isinstance(spec, DeckDefinition) or spec is None:
        return None
    text = os.fspath(spec)
    if is_shoe_spec(text):
        return _parse_shoe_spec(text)
    path = Path(text)
    if not path.is_file() or path.suffix.lower() != ".toml":
        return None
    try:
        with open(path, "rb") as handle:
            data = tomllib.load(handle)
    except (OSError, tomllib.TOMLDecodeError, UnicodeDecodeError, RecursionError):
        return None  # load_deck reports the problem (nesting too deep, not UTF-8, ...)
    cards = data.get("cards")
    per_card = isinstance(cards, list) and any(isinstance(c, dict) and "copies" in c for c in cards)
    if "copies" not in data and not per_card:
        return None
    return _shoe_from_file(text, data)


#: the keys of a deck definition file, a shoe's included (``copies``)
DECK_FILE_KEYS = (*DISTINCT_DECK_KEYS, "copies")


def _shoe_from_file(text: str, data: dict) -> ShoeDefinition:
    unknown = sorted(set(data) - set(DECK_FILE_KEYS))
    if unknown:
        raise InputError(
            f"{text}: unknown key {unknown[0]!r}; a deck definition has name, description, "
            "cards, copies, codes, spelling"
        )
    whole = data.get("copies", 1)
    if isinstance(whole, bool) or not isinstance(whole, int) or not 1 <= whole <= _MAX_COPIES:
        raise InputError(f"{text}: 'copies' must be a whole number from 1 to {_MAX_COPIES}")
    cards = data.get("cards")
    if isinstance(cards, str):  # a built-in deck's cards, e.g. "standard-52"
        if cards not in BUILT_IN_DECKS:
            raise InputError(f"{text}: 'cards' = {cards!r} is not a built-in deck (standard-52)")
        cards = list(load_deck(cards).cards)
    if not isinstance(cards, list) or not cards:
        raise InputError(
            f"{text}: 'cards' must be a non-empty list of card codes or a built-in deck's name"
        )
    plain: list[object] = []
    each: list[int] = []
    for number, entry in enumerate(cards, start=1):
        if isinstance(entry, dict) and "copies" in entry:
            value = entry["copies"]
            if isinstance(value, bool) or not isinstance(value, int) or not 1 <= value <= 64:
                raise InputError(
                    f"{text}: card {number}: 'copies' must be a whole number from 1 to "
                    f"{_MAX_COPIES}"
                )
            each.append(value * whole)
            entry = {k: v for k, v in entry.items() if k != "copies"}
        else:
            each.append(whole)
        plain.append(entry)
    name = data.get("name")
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"{text}: 'name' must be non-empty text")
    description = data.get("description", "")
    if not isinstance(description, str):
        raise InputError(f"{text}: 'description' must be text")
    try:
        base = DeckDefinition.from_cards(name.strip(), plain, description=description, source=text)
        base = with_file_dialect(base, data, text)
    except InputError as exc:
        raise InputError(f"{text}: {exc}") from None
    if all(c == whole for c in each):
        reference = tuple(range(base.size)) * whole
        packs = whole
    else:  # copies of a card next to each other, in the order listed
        reference = tuple(k for k, c in enumerate(each) for _ in range(c))
        packs = None
    return ShoeDefinition(
        name.strip(),
        base,
        tuple(each),
        reference,
        packs=packs,
        description=description,
        source=text,
    )


# --------------------------------------------------------------------------------------
# checking recorded shoes


def copy_rows(labels: np.ndarray, copies: np.ndarray) -> np.ndarray:
    """Rows of ``labels`` (kind labels already in ``0..K-1``) holding kind ``k`` exactly
    ``copies[k]`` times."""
    copies = np.asarray(copies, dtype=np.int64)
    kinds = copies.size
    m = labels.shape[0]
    ok = np.zeros(m, dtype=bool)
    step = max(1, (1 << 22) // max(labels.shape[1], 1))
    for lo in range(0, m, step):
        part = labels[lo : lo + step].astype(np.int64)
        rows = part.shape[0]
        offsets = (np.arange(rows, dtype=np.int64) * kinds)[:, None]
        counted = np.bincount((part + offsets).ravel(), minlength=rows * kinds)
        ok[lo : lo + rows] = (counted.reshape(rows, kinds) == copies).all(axis=1)
    return ok


def _times(k: int) -> str:
    return "once" if k == 1 else ("twice" if k == 2 else f"{k} times")


def check_shoe_row(
    tokens: Sequence[object], definition: ShoeDefinition
) -> tuple[np.ndarray | None, str | None, str | None]:
    """Check one recorded shoe (codes, top first): ``(kinds, None, None)`` when valid, else
    ``(None, reason, problem)`` with the first problem a person would look for: an empty
    field, an unknown code, the number of cards, then copies counted
    (``QH appears 5 times, 6 expected``)."""
    n = definition.size
    if not tokens:
        return None, "empty-order", "empty order field"
    kinds = definition.kinds
    values: list[int] = []
    for pos, token in enumerate(tokens):
        if token is None or (isinstance(token, str) and not token.strip()):
            return None, "empty-field", f"empty field at position {pos + 1}"
        found = kinds.lookup(token)
        if found is None:
            return None, "unknown-code", kinds.code_problem(token, pos + 1)
        values.append(found)
    counted = Counter(values)
    wrong = [k for k in range(kinds.size) if counted.get(k, 0) != definition.copies[k]]
    detail = ""
    if wrong:
        # in the order of first appearance (missing kinds last), at most two named
        first = {v: p for p, v in reversed(list(enumerate(values)))}
        wrong.sort(key=lambda k: (first.get(k, n), k))
        parts = []
        for k in wrong[:2]:
            got = counted.get(k, 0)
            shown = _times(got) if got else "nowhere"
            parts.append(f"{kinds.cards[k]} appears {shown}, {definition.copies[k]} expected")
        more = f" (and {len(wrong) - 2} more cards)" if len(wrong) > 2 else ""
        detail = "; ".join(parts) + more
    if len(values) != n:
        tail = f"; {detail}" if detail else ""
        return None, "wrong-length", f"{len(values)} cards, shoe {definition.name!r} has {n}{tail}"
    if wrong:
        return None, "wrong-copies", detail
    return np.asarray(values, dtype=np.int16), None, None
