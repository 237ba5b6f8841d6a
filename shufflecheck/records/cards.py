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

The suit may also come first (``HA``, ``H10``, ``♥Q``): rank and suit letters are disjoint,
so a two-part code reads one way only. Cards may be spelled out in English (``Ace of
Spades``, ``10 of hearts``, ``Queen of Clubs``; words compared without regard to case and to
runs of spaces).

A *dialect* is a reader's own spelling of cards (``SPA`` for the ace of spades, ``P`` for
spades): the ``[codes]`` and ``[spelling]`` tables of a deck definition file add such
spellings as aliases of the deck's cards (:meth:`DeckDefinition.with_dialect`). An alias
names a card by its code, never by a position, so the same table serves a deck in which a
card has several copies.

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
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from functools import cached_property
from pathlib import Path
from typing import Literal

import numpy as np

from shufflecheck.common.checks import check_cards
from shufflecheck.common.errors import MARKED, InputError, marked_arguments
from shufflecheck.common.limits import limit
from shufflecheck.common.tomlfiles import parse_toml

__all__ = [
    "BUILT_IN_DECKS",
    "COLOURS",
    "DECK_FILE_KEYS",
    "RANKS",
    "STANDARD_52",
    "SUITS",
    "DeckDefinition",
    "Labels",
    "canonical_code",
    "integer_deck",
    "load_deck",
    "with_file_dialect",
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
_MAX_CARDS = limit("deck_cards").high  # labels are int16

#: English rank words and suit names (singular and plural) of spelled-out cards
_RANK_WORDS = {
    "ACE": "A",
    "TWO": "2",
    "THREE": "3",
    "FOUR": "4",
    "FIVE": "5",
    "SIX": "6",
    "SEVEN": "7",
    "EIGHT": "8",
    "NINE": "9",
    "TEN": "T",
    "JACK": "J",
    "QUEEN": "Q",
    "KING": "K",
    **{str(k): str(k) for k in range(2, 10)},
    "10": "T",
    **{r: r for r in RANKS},
}
_SUIT_WORDS = {
    "SPADE": "S",
    "SPADES": "S",
    "HEART": "H",
    "HEARTS": "H",
    "DIAMOND": "D",
    "DIAMONDS": "D",
    "CLUB": "C",
    "CLUBS": "C",
}
#: words of spelled-out names, for the hint when they arrive split at spaces
NAME_WORDS = frozenset(_RANK_WORDS) | frozenset(_SUIT_WORDS) | {"OF"}


def _normalise(token: str) -> str:
    """Strip, drop variation selectors, upper-case ASCII letters, suit symbols to letters;
    runs of inner whitespace become one space (spelled-out names)."""
    out = token.strip().translate(_TRANSLATE)
    return " ".join(out.split()) if " " in out or "\t" in out else out


def _standard(normalised: str) -> str | None:
    """Canonical rank+suit code of a normalised token, or None if it is not one.

    Accepts rank first (``AS``, ``10S``), suit first (``SA``, ``S10``) and English names
    (``ACE OF SPADES``); rank and suit letters are disjoint, so no token reads two ways.
    """
    size = len(normalised)
    if size == 2:
        a, b = normalised[0], normalised[1]
        if a in RANKS and b in SUITS:
            return a + b
        if a in SUITS and b in RANKS:
            return b + a
        return None
    if size == 3:
        if normalised.startswith("10") and normalised[2] in SUITS:
            return "T" + normalised[2]
        if normalised.endswith("10") and normalised[0] in SUITS:
            return "T" + normalised[0]
        return None
    if " OF " in normalised:
        rank, _, suit = normalised.partition(" OF ")
        r, s = _RANK_WORDS.get(rank), _SUIT_WORDS.get(suit)
        if r is not None and s is not None:
            return r + s
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
    aliases : tuple of (str, str)
        A reader's own spellings: pairs ``(alias, card code)``, the alias in normalised
        form (upper-case ASCII, single spaces). An alias names a card by its code, not by
        its label, so a deck with several copies of a card can share the same table.

    Use :meth:`from_cards` to build one from codes (suits and colours derived),
    :meth:`with_dialect` to add a reader's spellings, and :func:`load_deck` for the
    built-in deck or a TOML file.
    """

    name: str
    cards: tuple[str, ...]
    suits: tuple[str | None, ...]
    colours: tuple[str | None, ...]
    description: str = ""
    source: str = "built-in"
    aliases: tuple[tuple[str, str], ...] = ()
    _index: dict[str, int] = field(init=False, repr=False, compare=False)
    _alias: dict[str, int] = field(init=False, repr=False, compare=False)

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
        alias: dict[str, int] = {}
        for spelling, code in self.aliases:
            if code not in index:
                raise InputError(f"{where}: alias {spelling!r} names card {code}, not in the deck")
            if _normalise(spelling) != spelling or not spelling:
                raise InputError(f"{where}: alias {spelling!r} is not in normalised form")
            if spelling.isdigit():
                raise InputError(
                    f"{where}: alias {spelling!r} is only digits (reserved for integer labels)"
                )
            means = _standard(spelling) or (spelling if spelling in index else None)
            if means is not None and means != code:
                raise InputError(
                    f"{where}: alias {spelling!r} for {code} already means card {means}"
                )
            if alias.get(spelling, index[code]) != index[code]:
                other = self.cards[alias[spelling]]
                raise InputError(
                    f"{where}: spelling {spelling!r} would mean both {other} and {code}"
                )
            alias[spelling] = index[code]
        object.__setattr__(self, "_alias", alias)

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
        found = self._index.get(canonical)
        return self._alias.get(normalised) if found is None else found

    def with_dialect(
        self,
        codes: Mapping[str, str] | None = None,
        *,
        ranks: Mapping[str, str] | None = None,
        suits: Mapping[str, str] | None = None,
        where: str | None = None,
    ) -> DeckDefinition:
        """This deck with a reader's own spellings added as aliases.

        Parameters
        ----------
        codes : mapping, optional
            Whole codes: ``{"SPA": "AS", "JK1": "RJ"}`` (alias -> a card of the deck, in any
            accepted spelling).
        ranks, suits : mapping, optional
            Extra spellings of ranks (``{"1": "A", "B": "J"}``) and suits (``{"P": "S"}``);
            every rank + suit card gets each combination, rank first and suit first.
        where : str, optional
            Prefix of error messages (default: the deck's name).

        Two cards sharing a spelling, or an alias that already means another card, raise
        :class:`InputError` naming it, so a dialect never makes a file read two ways.
        """
        spot = where or f"deck {self.name!r}"
        pairs: dict[str, str] = dict(self.aliases)

        def add(spelling: str, code: str, table: str) -> None:
            key = _normalise(spelling)
            if not key:
                raise InputError(f"{spot}: [{table}] has an empty spelling")
            if key in pairs and pairs[key] != code:
                raise InputError(
                    f"{spot}: [{table}] spelling {spelling!r} would mean both {pairs[key]} "
                    f"and {code}"
                )
            means = _standard(key) or (key if key in self._index else None)
            if means == code:
                return  # already a spelling of the card
            if means is not None:
                raise InputError(
                    f"{spot}: [{table}] {spelling!r} already means card {means}, not {code}"
                )
            pairs[key] = code

        for alias, target in (codes or {}).items():
            found = self.lookup(target) if isinstance(target, str) else None
            if found is None:
                raise InputError(f"{spot}: [codes] {alias!r} = {target!r}: not a card of the deck")
            code = self.cards[found]
            means = _standard(_normalise(alias))
            if means is not None and means != code:
                raise InputError(
                    f"{spot}: [codes] {alias!r} already means card {means}, not {code}"
                )
            add(alias, code, "codes")
        rank_spellings = {r: [r] + (["10"] if r == "T" else []) for r in RANKS}
        suit_spellings = {s_: [s_] for s_ in SUITS}
        for table, extra, letters, spellings in (
            ("spelling.ranks", ranks, RANKS, rank_spellings),
            ("spelling.suits", suits, SUITS, suit_spellings),
        ):
            for alias, letter in (extra or {}).items():
                if not isinstance(letter, str) or _normalise(letter) not in letters:
                    raise InputError(
                        f"{spot}: [{table}] {alias!r} = {letter!r}: expected one of "
                        f"{', '.join(letters)}"
                    )
                spellings[_normalise(letter)].append(_normalise(alias))
        if ranks or suits:
            for code in self.cards:
                if _standard(code) is None:
                    continue
                for r in rank_spellings[code[0]]:
                    for s_ in suit_spellings[code[1]]:
                        for spelling in (r + s_, s_ + r):
                            means = _standard(spelling)
                            if means is not None and means != code:
                                raise InputError(
                                    f"{spot}: [spelling] makes {spelling!r} mean {code}, but "
                                    f"it already means {means}; choose other spellings"
                                )
                            if means is None:
                                add(spelling, code, "spelling")
        return replace(self, aliases=tuple(sorted(pairs.items())))

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
                    "(integer labels need {labels=int})"
                )
            if _normalise(code) in NAME_WORDS and len(_normalise(code)) > 2:
                return (
                    f"unknown card code {shown!r}{at}; spelled-out names such as 'Ace of "
                    "Spades' need a separator between cards other than a space (a comma, "
                    "semicolon or pipe; see {separator})"
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
            problem = self.code_problem(code)
            raise InputError(problem, argument=marked_arguments(problem, MARKED) or None)
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
                    table[suit + rank] = label  # suit first
        for spelling, label in self._alias.items():
            if " " not in spelling:
                table[spelling] = label
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
#: names of the built-in decks
BUILT_IN_DECKS = tuple(_BUILT_IN)


#: the keys of a deck definition file of distinct cards (a shoe's file adds ``copies``)
DECK_FILE_KEYS = ("name", "description", "cards", "codes", "spelling")


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
    ``suit`` and ``colour``; the label of a card is its index in ``cards``. ``cards`` may
    instead name a built-in deck (``cards = "standard-52"``). A reader's own spellings
    (a dialect, :meth:`DeckDefinition.with_dialect`) go in two optional tables::

        [codes]                       # whole codes: alias = card
        "SPA" = "AS"
        [spelling]                    # parts: every combination, rank or suit first
        ranks = { "1" = "A", "B" = "J" }
        suits = { "P" = "S" }
    """
    if isinstance(spec, DeckDefinition):
        return spec
    if spec is None:
        return STANDARD_52
    text = os.fspath(spec)
    if text in _BUILT_IN:
        return _BUILT_IN[text]
    if text.strip().lower().startswith("shoe"):
        raise InputError(
            f"deck {text!r} is a shoe of repeated cards; this needs a deck of distinct cards "
            "(shoes are read by audit, assess, policy, power, simulate, mix and track)"
        )
    path = Path(text)
    if not path.is_file():
        raise InputError(
            f"deck {text!r} is neither a built-in deck (standard-52) nor an existing file"
        )
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(f"{text}: cannot read deck definition ({exc.strerror})") from None
    try:
        content = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(
            f"{text}: a deck definition must be UTF-8 text (byte {exc.start + 1} is not)"
        ) from None
    data = parse_toml(content.removeprefix("\ufeff"), f"{text} (deck definition)")
    if "copies" in data:
        raise InputError(
            f"{text}: this deck definition has copies (a shoe of repeated cards); this needs "
            "a deck of distinct cards (shoes are read by audit, assess, policy, power, "
            "simulate, mix and track)"
        )
    unknown = sorted(set(data) - set(DECK_FILE_KEYS))
    if unknown:
        raise InputError(
            f"{text}: unknown key {unknown[0]!r}; a deck definition has name, description, "
            "cards, codes, spelling"
        )
    name = data.get("name")
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"{text}: 'name' must be non-empty text")
    cards = data.get("cards")
    if isinstance(cards, str):
        if cards not in _BUILT_IN:
            raise InputError(f"{text}: 'cards' = {cards!r} is not a built-in deck (standard-52)")
        cards = list(_BUILT_IN[cards].cards)
    if not isinstance(cards, list) or not cards:
        raise InputError(
            f"{text}: 'cards' must be a non-empty list of card codes or a built-in deck's name"
        )
    description = data.get("description", "")
    if not isinstance(description, str):
        raise InputError(f"{text}: 'description' must be text")
    try:
        deck = DeckDefinition.from_cards(name.strip(), cards, description=description, source=text)
        return with_file_dialect(deck, data, text)
    except InputError as exc:
        raise InputError(f"{text}: {exc}") from None


def with_file_dialect(
    deck: DeckDefinition, data: Mapping[str, object], text: str
) -> DeckDefinition:
    """``deck`` with the ``[codes]`` and ``[spelling]`` tables of its TOML file ``data``
    (the reader's own card codes; also used for the kinds of a shoe file)."""
    codes = _text_table(data, "codes", text)
    spelling = data.get("spelling", {})
    if not isinstance(spelling, dict) or set(spelling) - {"ranks", "suits"}:
        raise InputError(f"{text}: [spelling] may hold only the tables ranks and suits")
    ranks = _text_table(spelling, "ranks", text)
    suits = _text_table(spelling, "suits", text)
    if codes or ranks or suits:
        deck = deck.with_dialect(codes, ranks=ranks, suits=suits, where=f"deck {deck.name!r}")
    return deck


def _text_table(data: Mapping[str, object], key: str, where: str) -> dict[str, str]:
    table = data.get(key, {})
    if not isinstance(table, dict) or not all(isinstance(v, str) for v in table.values()):
        raise InputError(f"{where}: [{key}] must be a table of text values (spelling = card)")
    return dict(table)


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
