"""Card codes and deck definitions: what a card is and what a deck is.

A *deck definition* lists the cards of a pack in a fixed order; the **label** of a card is
its index in that list (0-based). A recorded deck is an arrangement of those labels, top
card first: ``row[i]`` is the label of the card at position ``i`` (0 = top), as everywhere
in the package (see DEVELOPERS.md).

Card codes
----------
A code is a rank followed by a suit, compared without regard to case and to surrounding
spaces:

* rank ``A``, ``2``-``9``, ``T`` or ``10``, ``J``, ``Q``, ``K``;
* suit ``S``, ``H``, ``D``, ``C`` or a suit symbol ``♠ ♥ ♦ ♣`` (the outline symbols
  ``♤ ♡ ♢ ♧`` and an emoji/text variation selector after the symbol are accepted too).

The canonical code of a card is two ASCII characters, upper case, ``T`` for ten: ``AS``,
``TH``, ``QC`` (so ``10h``, ``Th`` and ``10♥`` are all ``TH``). Cards that are not rank +
suit (jokers, blanks) may be listed in a deck definition file under any code of their own
(no spaces, not only digits); such codes are matched case-insensitively too.

The built-in deck ``standard-52`` lists the 52 cards in new-deck order (spades A-K,
diamonds A-K, clubs K-A, hearts K-A)  # common practice, no published source
so label 0 is ``AS``, 12 ``KS``, 13 ``AD``, 26 ``KC``, 38 ``AC``, 39 ``KH`` and 51 ``AH``.

References
----------
.. [1] The Unicode Consortium, *The Unicode Standard*, chart "Miscellaneous Symbols"
       (U+2660-U+2667, playing card suits) and "Variation Selectors" (U+FE0E, U+FE0F).
.. [2] T. Preston-Werner et al., *TOML v1.0.0* (2021), https://toml.io/en/v1.0.0 (deck
       definition files).
"""

from __future__ import annotations

import os
import sys
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path
from typing import Literal

import numpy as np

from shufflecheck.common.checks import check_cards
from shufflecheck.common.errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised on Python 3.10 only
    import tomli as tomllib

__all__ = [
    "COLOURS",
    "RANKS",
    "STANDARD_52",
    "SUITS",
    "DeckDefinition",
    "Labels",
    "canonical_code",
    "integer_deck",
    "load_deck",
]

#: Ranks in the canonical spelling, ace low (``T`` is ten).
RANKS = "A23456789TJQK"
#: Suits in the canonical spelling.
SUITS = "SHDC"
#: Colour of each standard suit.
COLOURS = {"S": "black", "H": "red", "D": "red", "C": "black"}

#: How the cells of a log name cards: card codes, or integer labels numbered from 0
#: (``int0``), from 1 (``int1``) or from whichever of the two the file uses (``int``).
Labels = Literal["codes", "int", "int0", "int1"]
LABEL_MODES = ("codes", "int", "int0", "int1")

_SYMBOLS = {
    "♠": "S",
    "♤": "S",
    "♥": "H",
    "♡": "H",
    "♦": "D",
    "♢": "D",
    "♣": "C",
    "♧": "C",
}
_SELECTORS = ("\ufe0e", "\ufe0f")  # text / emoji presentation after a suit symbol
_ASCII_UPPER = {c: c - 32 for c in range(ord("a"), ord("z") + 1)}
_TRANSLATE = {
    **_ASCII_UPPER,
    **{ord(k): v for k, v in _SYMBOLS.items()},
    0xFE0E: None,
    0xFE0F: None,
}
_EXPECTED = "expected rank A,2-9,T/10,J,Q,K and suit S,H,D,C"
_MAX_CARDS = 32767  # labels are int16


def _normalise(token: str) -> str:
    """Strip, drop variation selectors, upper-case ASCII letters, suit symbols to letters."""
    return token.strip().translate(_TRANSLATE)


def _standard(normalised: str) -> str | None:
    """Canonical rank+suit code of a normalised token, or None if it is not one."""
    if len(normalised) == 3 and normalised.startswith("10"):
        rank, suit = "T", normalised[2]
    elif len(normalised) == 2:
        rank, suit = normalised[0], normalised[1]
    else:
        return None
    if rank in RANKS and suit in SUITS:
        return rank + suit
    return None


def canonical_code(code: str) -> str:
    """The canonical spelling of a rank + suit card code, e.g. ``"10h"`` -> ``"TH"``.

    Raises :class:`InputError` with the accepted ranks and suits if ``code`` is not a
    rank + suit code (special cards such as jokers exist only inside a deck definition).
    """
    if not isinstance(code, str):
        raise InputError(f"card code must be text, got {code!r}")
    result = _standard(_normalise(code))
    if result is None:
        raise InputError(f"unknown card code {code.strip()!r}; {_EXPECTED}")
    return result


def _special_code(code: str, where: str) -> str:
    """Canonical form of a deck-specific code (a joker, a blank card)."""
    normalised = _normalise(code)
    if not normalised:
        raise InputError(f"{where}: empty card code")
    if any(ch.isspace() for ch in normalised) or any(ch in normalised for ch in ",\"'"):
        raise InputError(f"{where}: card code {code!r} contains a space, comma or quote")
    if normalised.isdigit():
        raise InputError(
            f"{where}: card code {code!r} is only digits (reserved for integer labels)"
        )
    if len(normalised) > 16:
        raise InputError(f"{where}: card code {code!r} is longer than 16 characters")
    return normalised


@dataclass(frozen=True)
class DeckDefinition:
    """The cards of a pack in label order, with suit and colour per label.

    Parameters
    ----------
    name : str
        Short name shown in reports and messages (e.g. ``"standard-52"``).
    cards : tuple of str
        Canonical codes; ``cards[label]`` is the card with that label (0-based).
    suits : tuple of (str or None)
        Suit letter (``S``, ``H``, ``D``, ``C`` or a deck-specific name) per label; ``None``
        where a suit is meaningless (jokers).
    colours : tuple of (str or None)
        Colour name per label (``black``, ``red``, or e.g. ``green`` in a four-colour pack);
        ``None`` where meaningless.
    description : str
        Free text from the definition file.
    source : str
        ``"built-in"`` or the file the definition was read from.

    Use :meth:`from_cards` to build one from codes (suits and colours derived), and
    :func:`load_deck` for the built-in deck or a TOML file.
    """

    name: str
    cards: tuple[str, ...]
    suits: tuple[str | None, ...]
    colours: tuple[str | None, ...]
    description: str = ""
    source: str = "built-in"
    _index: dict[str, int] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        where = f"deck {self.name!r}"
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError("a deck definition needs a non-empty name")
        n = len(self.cards)
        if not 1 <= n <= _MAX_CARDS:
            raise InputError(f"{where} has {n} cards; a deck has 1 to {_MAX_CARDS} cards")
        if len(self.suits) != n or len(self.colours) != n:
            raise InputError(f"{where}: suits and colours need one entry per card ({n})")
        index: dict[str, int] = {}
        for label, code in enumerate(self.cards):
            if not isinstance(code, str) or (_standard(code) or _special_code(code, where)) != code:
                raise InputError(f"{where}: card {label} code {code!r} is not canonical")
            if code in index:
                raise InputError(
                    f"{where}: card {code} is listed twice (entries {index[code] + 1} "
                    f"and {label + 1})"
                )
            index[code] = label
        object.__setattr__(self, "_index", index)

    @classmethod
    def from_cards(
        cls,
        name: str,
        cards: Sequence[str | Mapping[str, str]],
        *,
        description: str = "",
        source: str = "built-in",
    ) -> DeckDefinition:
        """Build a definition from codes, deriving suit and colour of rank + suit cards.

        Each entry is a code (``"AS"``, ``"10h"``, ``"Q♣"``, or a deck-specific code such as
        ``"RJ"``) or a mapping with key ``code`` and optional ``suit`` and ``colour`` that
        override the derived values (a joker has neither unless given).
        """
        where = f"deck {name!r}"
        codes: list[str] = []
        suits: list[str | None] = []
        colours: list[str | None] = []
        for number, entry in enumerate(cards, start=1):
            spot = f"{where} card {number}"
            if isinstance(entry, str):
                entry = {"code": entry}
            if not isinstance(entry, Mapping):
                raise InputError(f"{spot}: expected a code or a table with 'code', got {entry!r}")
            unknown = sorted(set(entry) - {"code", "suit", "colour"})
            if unknown:
                raise InputError(
                    f"{spot}: unknown key {unknown[0]!r}; allowed keys are code, suit, colour"
                )
            code = entry.get("code")
            if not isinstance(code, str):
                raise InputError(f"{spot}: 'code' must be text, got {code!r}")
            standard = _standard(_normalise(code))
            canonical = standard or _special_code(code, spot)
            suit = standard[1] if standard else None
            colour = COLOURS[suit] if suit else None
            for key in ("suit", "colour"):
                value = entry.get(key)
                if value is not None and (not isinstance(value, str) or not value.strip()):
                    raise InputError(f"{spot}: {key!r} must be non-empty text, got {value!r}")
            if entry.get("suit") is not None:
                suit = entry["suit"].strip()
            if entry.get("colour") is not None:
                colour = entry["colour"].strip().lower()
            codes.append(canonical)
            suits.append(suit)
            colours.append(colour)
        return cls(name, tuple(codes), tuple(suits), tuple(colours), description, source)

    @property
    def size(self) -> int:
        """Number of cards ``n``."""
        return len(self.cards)

    @property
    def special_codes(self) -> tuple[str, ...]:
        """Codes of the cards that are not rank + suit (jokers, blanks), in label order."""
        return tuple(c for c in self.cards if _standard(c) is None)

    def lookup(self, code: object) -> int | None:
        """Label of a card code in any accepted spelling, or ``None`` if it is not a card here."""
        if not isinstance(code, str):
            return None
        normalised = _normalise(code)
        canonical = _standard(normalised) or normalised
        return self._index.get(canonical)

    def code_problem(self, code: object, position: int | None = None) -> str:
        """Why ``code`` is not a card of this deck (one line; ``position`` 1-based)."""
        shown = code.strip() if isinstance(code, str) else code
        at = "" if position is None else f" at position {position}"
        if isinstance(code, str):
            standard = _standard(_normalise(code))
            if standard is not None:
                return f"card {standard}{at} is not in deck {self.name!r}"
            if _normalise(code).isdigit():
                return (
                    f"unknown card code {shown!r}{at}; {_EXPECTED} "
                    "(integer labels need labels='int')"
                )
        extra = self.special_codes
        more = ", ..." if len(extra) > 6 else ""
        tail = f" or one of {', '.join(extra[:6])}{more}" if extra else ""
        return f"unknown card code {shown!r}{at}; {_EXPECTED}{tail}"

    def label(self, code: str) -> int:
        """Label (0-based index) of a card code; :class:`InputError` if there is no such card.

        Examples
        --------
        >>> STANDARD_52.label("10h"), STANDARD_52.label("Q♣"), STANDARD_52.label("as")
        (42, 27, 0)
        """
        found = self.lookup(code)
        if found is None:
            raise InputError(self.code_problem(code))
        return found

    def code(self, label: int) -> str:
        """Canonical code of a label."""
        if not 0 <= int(label) < self.size:
            raise InputError(f"label {label} is out of range 0..{self.size - 1}")
        return self.cards[int(label)]

    def format_order(self, labels: Sequence[int] | np.ndarray) -> str:
        """Canonical codes of one arrangement, top first, separated by single spaces."""
        return " ".join(self.cards[int(x)] for x in labels)

    @cached_property
    def suit_names(self) -> tuple[str, ...]:
        """Distinct suits in order of first appearance (the codes of :meth:`suit_codes`)."""
        return tuple(dict.fromkeys(s for s in self.suits if s is not None))

    @cached_property
    def colour_names(self) -> tuple[str, ...]:
        """Distinct colours in order of first appearance (the codes of :meth:`colour_codes`)."""
        return tuple(dict.fromkeys(c for c in self.colours if c is not None))

    def suit_codes(self) -> np.ndarray:
        """``int8`` array, per label: index into :attr:`suit_names`, ``-1`` where no suit."""
        return _category_codes(self.suits, self.suit_names)

    def colour_codes(self) -> np.ndarray:
        """``int8`` array, per label: index into :attr:`colour_names`, ``-1`` where no colour."""
        return _category_codes(self.colours, self.colour_names)

    def spellings(self) -> dict[str, int]:
        """Every accepted spelling (upper-case ASCII, symbols kept) of every card -> label.

        Rank + suit cards: ranks with ``T`` and ``10``, suits as letters and as symbols
        (with and without a variation selector). Deck-specific codes: their canonical form.
        Lower-case spellings are covered by upper-casing the input first.
        """
        symbols: dict[str, list[str]] = {s: [s] for s in SUITS}
        for symbol, letter in _SYMBOLS.items():
            symbols[letter] += [symbol, *(symbol + sel for sel in _SELECTORS)]
        table: dict[str, int] = {}
        for label, code in enumerate(self.cards):
            if _standard(code) is None:
                table[code] = label
                continue
            ranks = ["T", "10"] if code[0] == "T" else [code[0]]
            for rank in ranks:
                for suit in symbols[code[1]]:
                    table[rank + suit] = label
        return table


def _category_codes(values: tuple[str | None, ...], names: tuple[str, ...]) -> np.ndarray:
    where = {name: k for k, name in enumerate(names)}
    return np.array([where.get(v, -1) if v is not None else -1 for v in values], dtype=np.int8)


def _new_deck_order() -> tuple[str, ...]:
    # new-deck order as packs are commonly sold: spades A-K, diamonds A-K, clubs K-A,
    # hearts K-A  # common practice, no published source
    up = RANKS
    down = RANKS[::-1]
    return tuple(
        [r + "S" for r in up]
        + [r + "D" for r in up]
        + [r + "C" for r in down]
        + [r + "H" for r in down]
    )


#: The built-in 52-card deck in new-deck order (label 0 = ``AS`` ... 51 = ``AH``).
STANDARD_52 = DeckDefinition.from_cards(
    "standard-52",
    _new_deck_order(),
    description="52 cards in new-deck order: spades A-K, diamonds A-K, clubs K-A, hearts K-A",
)

_BUILT_IN = {"standard": STANDARD_52, "standard-52": STANDARD_52}


def load_deck(spec: DeckDefinition | str | os.PathLike[str] | None = None) -> DeckDefinition:
    """The deck a log is checked against: built-in by name, or read from a TOML file.

    Parameters
    ----------
    spec : DeckDefinition, str, path or None
        ``None``, ``"standard"`` or ``"standard-52"`` for the built-in 52-card deck; a path
        to a deck definition file (TOML, see docs/formats-logs.md); or a definition, which
        is returned as it is.

    File format (TOML [2])::

        name = "house-piquet-32"
        description = "optional free text"
        cards = ["AS", "KS", "QS", { code = "RJ", colour = "red" }, ...]

    Each entry of ``cards`` is a code or an inline table with ``code`` and optional
    ``suit`` and ``colour``; the label of a card is its index in ``cards``.
    """
    if isinstance(spec, DeckDefinition):
        return spec
    if spec is None:
        return STANDARD_52
    text = os.fspath(spec)
    if text in _BUILT_IN:
        return _BUILT_IN[text]
    path = Path(text)
    if not path.is_file():
        raise InputError(
            f"deck {text!r} is neither a built-in deck (standard-52) nor an existing file"
        )
    try:
        with open(path, "rb") as handle:
            data = tomllib.load(handle)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{text}: not a valid TOML deck definition ({exc})") from None
    except OSError as exc:
        raise InputError(f"{text}: cannot read deck definition ({exc.strerror})") from None
    unknown = sorted(set(data) - {"name", "description", "cards"})
    if unknown:
        raise InputError(
            f"{text}: unknown key {unknown[0]!r}; a deck definition has name, description, cards"
        )
    name = data.get("name")
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"{text}: 'name' must be non-empty text")
    cards = data.get("cards")
    if not isinstance(cards, list) or not cards:
        raise InputError(f"{text}: 'cards' must be a non-empty list of card codes")
    description = data.get("description", "")
    if not isinstance(description, str):
        raise InputError(f"{text}: 'description' must be text")
    try:
        return DeckDefinition.from_cards(name.strip(), cards, description=description, source=text)
    except InputError as exc:
        raise InputError(f"{text}: {exc}") from None


def integer_deck(cards: int) -> DeckDefinition:
    """A deck of ``cards`` cards without suits, for logs written with integer labels.

    Its codes (``C1`` .. ``Cn``) only name the cards in messages; logs of such a deck are
    read with ``labels="int"`` (0..n-1 or 1..n).
    """
    check_cards(cards)
    return DeckDefinition.from_cards(
        f"integers-{cards}",
        [f"C{k}" for k in range(1, cards + 1)],
        description=f"{cards} cards known by integer labels",
    )
