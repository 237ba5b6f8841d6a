"""The statistic catalogue: one record per audit statistic, read by everything that tests.

Each :class:`Statistic` says what it measures (name, title, the noun phrase and unit of its
effect), how it is computed on a chunk of decks (``values``), its exact law under a
uniformly random deck (``law``, with the source of that law), the alternative it is tested
against, and how its effect is worded. The battery (:mod:`shufflecheck.stats.battery`),
the summaries it runs on (:mod:`shufflecheck.stats.summary`), power planning
(:mod:`shufflecheck.stats.power`) and the Monte Carlo lower bounds of an assessment
(:mod:`shufflecheck.analyses.assess`) all iterate over :func:`battery_statistics`, so a new
statistic is one record here, one law in :mod:`shufflecheck.stats.nulls` and one
brute-force test.

Three shapes of statistic:

``per-deck``
    One integer per deck; the test compares the sum over the decks with the exact
    convolution of the per-deck law.
``positions``
    The position-by-card count matrix (a chi-square / G test; no per-deck values).
``consecutive``
    One integer per pair of consecutive decks (the sequential test); ``values`` gives the
    pairs inside a chunk and the summary joins chunks.

Catalogue (report order; the guessing game has one entry per strategy)::

    rising-sequences  descents  fixed-points  cycles  inversions  successions
    adjacent-pairs  position-by-card  top-card-position  bottom-card-position
    colour-runs (decks with colours)  suit-runs (decks with suits)
    guess-<strategy>  repeat-positions

and, for the lower bounds of assessments only (not in the audit battery; they read the
deck around a circle, so a cut changes nothing, and strips little)::

    cyclic-rising-sequences  cyclic-valleys  short-rises-4  short-rises-16

Statistics of one ``family`` (the guessing strategies; the short-rise widths) are
alternatives: an assessment picks one member on half of its simulated decks.

Shoes (decks with repeated cards, ``DeckContext.shoe`` set; the permutation statistics
above do not apply to them, since copies of a card cannot be told apart)::

    value-runs  value-successions (ordered features)  first-appearance-rising
    first-appearance-successions (equal copies)  value-positions
    segment-zone  guess-most-frequent (when its exact law is within reach)
    shoe-repeat-positions

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313 (rising sequences and their Eulerian law).
.. [2] R. P. Stanley, *Enumerative Combinatorics*, vol. 1, 2nd ed., Cambridge University
       Press, 2012 (descents, fixed points, cycles, inversions).
.. [3] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23 (the guessing game).
.. [4] J. Riordan, *An Introduction to Combinatorial Analysis*, Wiley, 1958 (rook
       polynomials: matches between two arrangements of a multiset).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import cached_property
from typing import Literal

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.records.shoes import ShoeDefinition
from shufflecheck.stats import (
    guessing_tables,
    nulls,
    ranks,
    shoe_nulls,
    shoe_statistics,
    statistics,
)
from shufflecheck.stats.guessing import DEFAULT_STRATEGIES, check_strategies, guess_scores_many
from shufflecheck.stats.nulls import Law
from shufflecheck.stats.statistics import as_decks, category_codes

__all__ = [
    "Alternative",
    "DeckContext",
    "DeckView",
    "Shape",
    "ShoeContext",
    "Statistic",
    "battery_statistics",
    "catalogue",
    "deck_bytes",
    "deck_values",
    "guess_statistic",
    "guessing_null_for",
    "law_sources",
    "lower_bound_statistics",
    "statistic",
]


def deck_bytes(cards: int) -> int:
    """Memory one deck of ``cards`` cards needs while the battery's statistics and guessing
    scores are computed on it, in bytes: ``cards * (8 + cards / 8)``.

    Measured from peak resident sizes (chunks of 16,384 to 65,536 simulated decks): about
    13 bytes per card at 52 cards, 46 at 416 and 30 at 2,000; the estimate stays above.
    """
    cards = max(int(cards), 2)
    return cards * (8 + cards // 8)


Alternative = Literal["two-sided", "greater", "less"]
Shape = Literal["per-deck", "positions", "class-positions", "consecutive", "bet"]
Need = Literal[
    "colours", "suits", "multiset", "ordered", "guessing", "guessing-bet", "equal-copies"
]


def default_segment(cards: int) -> tuple[int, int]:
    """The reference segment followed by default: its first pack (52 cards) in a shoe of
    three packs or more, else its top quarter."""
    length = 52 if cards >= 156 else max(1, cards // 4)
    return 0, length


@dataclass(frozen=True)
class ShoeContext:
    """What the shoe statistics need (one optional field of :class:`DeckContext`).

    ``copies[k]`` identical copies of kind ``k``; ``classes[k]`` the class of kind ``k``
    under the feature the game sees (``feature``; ``names`` of the classes; ``ordered``
    when the classes are values in order); ``segment = (start, length)`` the reference
    positions (0-based) whose cards the zone test follows into ``zones`` (widths of
    consecutive zones of the new shoe from the top); ``guess_budget`` the most states the
    exact law of the guessing game may take; beyond that budget the guessing game runs
    against a bracketed law, its p-value then a bound: with ``guess_tables`` the bracket
    computed in advance for these counts when one is stored
    (:mod:`~shufflecheck.stats.guessing_tables`: blackjack and baccarat values of 3 to 6
    packs), else, when ``guess_threshold`` is set, one computed now
    (:func:`~shufflecheck.stats.shoe_nulls.greedy_guessing_bracket` at that threshold);
    where none of these reaches, the game is played as a bet
    (:mod:`~shufflecheck.stats.guessing_bet`, need ``guessing-bet``).
    Audits and power planning (which plans against the end of the bracket the audit tests
    with); assessments' lower bounds and monitoring need exact laws.
    """

    copies: tuple[int, ...]
    classes: tuple[int, ...]
    names: tuple[str, ...]
    feature: str = "cards"
    ordered: bool = False
    segment: tuple[int, int] | None = None
    zones: tuple[int, ...] | None = None
    guess_budget: int = shoe_nulls.GREEDY_STATE_BUDGET
    guess_threshold: float | None = None
    guess_tables: bool = False

    def __post_init__(self) -> None:
        if len(self.classes) != len(self.copies) or not self.copies:
            raise InputError("a shoe context needs one class and one copy count per kind")
        if min(self.copies) < 1 or min(self.classes) < 0 or max(self.classes) >= len(self.names):
            raise InputError("shoe context: copies >= 1 and classes within the class names")
        n = self.cards
        segment = default_segment(n) if self.segment is None else tuple(self.segment)
        start, length = (int(x) for x in segment)
        if start < 0 or length < 1 or start + length > n:
            raise InputError(f"segment {segment} does not fit a shoe of {n} cards")
        object.__setattr__(self, "segment", (start, length))
        zones = self.zones
        if zones is None:
            zones = (length,) * (n // length)
        zones = tuple(int(w) for w in zones)
        if not zones or min(zones) < 1 or sum(zones) > n:
            raise InputError(f"zones {zones} must be positive widths within {n} cards")
        object.__setattr__(self, "zones", zones)

    @classmethod
    def of(
        cls,
        definition: ShoeDefinition,
        feature: str = "rank",
        *,
        segment: tuple[int, int] | None = None,
        zones: tuple[int, ...] | None = None,
    ) -> ShoeContext:
        """The context of a shoe definition read through ``feature`` (a feature of
        :data:`~shufflecheck.records.shoes.FEATURES` other than ``distinct``, which a log
        cannot show: copies are alike in a recorded shoe)."""
        feat = definition.feature(feature)
        if feat.of_kind is None:
            raise InputError(
                "a recorded shoe cannot tell copies apart: choose a feature other than "
                "distinct (cards, rank, blackjack, baccarat, colour, suit)",
                argument="feature",
            )
        return cls(
            tuple(definition.copies),
            tuple(feat.of_kind),
            tuple(feat.names),
            feat.name,
            feat.ordered,
            segment,
            zones,
        )

    @property
    def cards(self) -> int:
        return sum(self.copies)

    @property
    def class_counts(self) -> tuple[int, ...]:
        out = [0] * len(self.names)
        for k, c in enumerate(self.copies):
            out[self.classes[k]] += c
        return tuple(out)

    def class_array(self) -> np.ndarray:
        return np.asarray(self.classes, dtype=np.int64)

    def provides(self, need: str | None) -> bool:
        if need == "multiset":
            return True
        if need == "ordered":
            return self.ordered and len(self.names) > 1
        if need == "guessing":
            counts = self.class_counts
            if shoe_nulls.greedy_state_estimate(counts) <= self.guess_budget:
                return True
            if self.guess_tables and guessing_tables.stored_bracket(counts) is not None:
                return True
            return self.guess_threshold is not None and shoe_nulls.greedy_bracket_fits(counts)
        if need == "guessing-bet":  # the betting form, where the exact and bracketed are not
            return len(self.names) > 1 and not self.provides("guessing")
        if need == "equal-copies":
            return len(set(self.copies)) == 1 and len(self.copies) > 1
        return False


@dataclass(frozen=True)
class DeckContext:
    """What a statistic may need besides the decks themselves.

    ``suits`` / ``colours`` are category codes per *absolute* label (as returned by
    :func:`~shufflecheck.stats.statistics.category_codes`), or None when the deck has none;
    ``strategies`` are the guessing strategies the battery plays. ``shoe`` is set for decks
    with repeated cards (:class:`ShoeContext`): then only the statistics that need
    ``multiset`` (and ``ordered`` / ``guessing`` where the shoe provides them) apply, and
    decks are words of kind labels rather than permutations.
    """

    cards: int
    suits: np.ndarray | None = None
    colours: np.ndarray | None = None
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES
    shoe: ShoeContext | None = None

    @classmethod
    def checked(
        cls,
        cards: int,
        *,
        suits: object = None,
        colours: object = None,
        strategies: Sequence[str] = DEFAULT_STRATEGIES,
        shoe: ShoeContext | None = None,
    ) -> DeckContext:
        """A context with its category codes and strategies checked."""
        if shoe is not None and shoe.cards != cards:
            raise InputError(f"the shoe has {shoe.cards} cards, not {cards}")
        return cls(
            int(cards),
            None if suits is None else category_codes(suits, cards, name="suits"),
            None if colours is None else category_codes(colours, cards, name="colours"),
            check_strategies(strategies),
            shoe,
        )

    def has(self, need: str | None) -> bool:
        """Whether a statistic with this ``need`` applies to the decks of this context."""
        if self.shoe is not None:
            return self.shoe.provides(need)
        if need in ("multiset", "ordered", "guessing", "guessing-bet", "equal-copies"):
            return False
        return need is None or getattr(self, need) is not None


class DeckView:
    """One chunk of checked decks, with intermediate results shared between statistics
    (inversions and rising sequences in one pass; every strategy's guesses in one pass).

    For shoes, ``relative`` and ``absolute`` are the recorded words (kind labels) and
    ``reference`` the reference shoe of each row (for the zone test).
    """

    def __init__(
        self,
        relative: np.ndarray,
        absolute: np.ndarray,
        context: DeckContext,
        reference: np.ndarray | None = None,
    ) -> None:
        self.relative = relative
        self.absolute = absolute
        self.context = context
        self.reference = reference

    @cached_property
    def order(self) -> tuple[np.ndarray, np.ndarray]:
        return statistics.order_statistics(self.relative, check=False)

    @cached_property
    def rising(self) -> np.ndarray:
        """Rising sequences (with the inversions on the 64-bit path, alone otherwise)."""
        if statistics.bitmask_ok(self.relative.shape[1]):
            return self.order[1]
        return statistics.rising_only(self.relative, check=False)

    @cached_property
    def ranks(self) -> np.ndarray:
        """Sequential ranks of :mod:`shufflecheck.stats.ranks` (one row per deck)."""
        return ranks.inverse_ranks(self.relative, check=False)

    @cached_property
    def guesses(self) -> dict[str, np.ndarray]:
        return guess_scores_many(self.relative, self.context.strategies, check=False)

    @cached_property
    def first_appearances(self) -> tuple[np.ndarray, np.ndarray]:
        """Shoes: (first-appearance order relative to the reference, its rising sequences)."""
        shoe = self.context.shoe
        assert shoe is not None
        if self.reference is None:
            raise InputError("first-appearance tests need the reference shoe of every row")
        order = shoe_statistics.first_appearance_orders(
            self.absolute, self.reference, len(shoe.copies)
        )
        return order, statistics.order_statistics(order, check=False)[1]

    @cached_property
    def zones(self) -> tuple[np.ndarray, np.ndarray]:
        """Shoes: (cards of the reference segment's codes per zone, such cards per shoe)."""
        shoe = self.context.shoe
        assert shoe is not None and shoe.segment is not None and shoe.zones is not None
        if self.reference is None:
            raise InputError("the zone test needs the reference shoe of every recorded shoe")
        return shoe_statistics.zone_counts(
            self.absolute, self.reference, len(shoe.copies), shoe.segment, shoe.zones
        )


def _default_sentence(stat: Statistic, observed: float, expected: float) -> str:
    diff = observed - expected
    side = "below" if diff < 0 else "above"
    return (
        f"{stat.what} {abs(diff):.2g} {side} random on average "
        f"({observed:.3g} per deck vs {expected:.3g} expected)"
    )


@dataclass(frozen=True)
class Statistic:
    """One audit statistic.

    Attributes
    ----------
    name : str
        Identifier used in JSON, reports and options (``rising-sequences``).
    title : str
        Title in tables.
    alternative : {"two-sided", "greater", "less"}
        Direction of departure the test looks for.
    what : str
        Noun phrase for effect sentences ("rising sequences").
    unit : str
        Unit of the effect ("rising sequences per deck").
    shape : {"per-deck", "positions", "class-positions", "consecutive", "bet"}
    values : callable or None
        ``values(view)``: one int per deck (per-deck) or per consecutive pair in the chunk
        (consecutive); for ``bet`` one code per deck and guess
        (:func:`~shufflecheck.stats.shoe_statistics.greedy_steps`), tested by
        :mod:`~shufflecheck.stats.guessing_bet`; None for ``positions``.
    law : callable or None
        ``law(context)``: exact per-deck (or per-pair) law under a uniform deck.
    law_source : str
        How that law is obtained, with its source (a table cell in reports).
    need : str or None
        One of ``colours``, ``suits``, ``multiset``, ``ordered``, ``guessing``,
        ``guessing-bet``, ``equal-copies`` (or None).
        What the deck definition must provide for the statistic to apply (``multiset``:
        a shoe; ``ordered``: a shoe whose feature is an order of values; ``guessing``: a
        shoe whose guessing law is within reach; ``guessing-bet``: a shoe whose guessing law
        is not). None: decks of distinct cards.
    shown_offset : int
        Added to the mean before it is shown (1 for positions counted from 1 = top).
    sentence : callable or None
        ``sentence(stat, observed, expected)``: the effect in one sentence (means per deck,
        already shifted by ``shown_offset``); None for the generic sentence.
    lower_bound : bool
        Used for the Monte Carlo lower bounds on total variation of an assessment.
    strategy : str or None
        For the guessing game: the strategy played.
    family : str or None
        Statistics of one family are alternatives (one is picked for a lower bound).
    battery : bool
        Part of the audit battery (False: assessment lower bounds only).
    law_keys : callable or None
        ``law_keys(view)``: per deck, the key of its own exact law when the law depends on
        the deck (the zone test: on the reference segment); ``keyed_law(context, key)``
        is then that law and ``law`` is unused.
    needs_reference : bool
        The values need the reference shoe of every row.
    on_codes : bool
        Shoes: the values depend on which card code lies where, not only on the word the
        feature reads (first appearances, the reference segment's codes, codes repeated
        from the previous shoe). Such a statistic bounds the distance of the codes, so it
        gives no lower bound for a feature that merges codes (values, colours).
    """

    name: str
    title: str
    alternative: Alternative
    what: str
    unit: str
    shape: Shape = "per-deck"
    values: Callable[[DeckView], np.ndarray] | None = None
    law: Callable[[DeckContext], Law] | None = None
    law_source: str = ""
    need: Need | None = None
    shown_offset: int = 0
    sentence: Callable[[Statistic, float, float], str] | None = None
    lower_bound: bool = False
    strategy: str | None = None
    family: str | None = None
    battery: bool = True
    law_keys: Callable[[DeckView], np.ndarray] | None = None
    keyed_law: Callable[[DeckContext, int], Law] | None = None
    needs_reference: bool = False
    on_codes: bool = False

    def describe_effect(self, observed: float, expected: float) -> str:
        """The effect in one sentence (means as shown, i.e. after ``shown_offset``)."""
        words = self.sentence or _default_sentence
        return words(self, observed, expected)


def _position_sentence(which: str) -> Callable[[Statistic, float, float], str]:
    def sentence(stat: Statistic, observed: float, expected: float) -> str:
        return (
            f"the reference {which} card lands on average at position {observed:.3g} "
            f"({expected:.3g} expected; 1 = top)"
        )

    return sentence


def _repeat_sentence(stat: Statistic, observed: float, expected: float) -> str:
    return (
        f"{observed:.3g} positions per deck hold the same card as in the previous deck "
        f"vs {expected:.3g} expected"
    )


def _guess_sentence(strategy: str) -> Callable[[Statistic, float, float], str]:
    def sentence(stat: Statistic, observed: float, expected: float) -> str:
        diff = observed - expected
        word = "extra" if diff >= 0 else "fewer"
        return (
            f"{abs(diff):.2g} {word} correct guesses per deck with the {strategy} strategy "
            f"({observed:.3g} vs {expected:.3g} expected)"
        )

    return sentence


def _cards(law: Callable[[int], Law]) -> Callable[[DeckContext], Law]:
    return lambda context: law(context.cards)


_BASE: tuple[Statistic, ...] = (
    Statistic(
        "rising-sequences",
        "rising sequences",
        "two-sided",
        "rising sequences",
        "rising sequences per deck",
        values=lambda v: v.rising,
        law=_cards(nulls.rising_law),
        law_source="Eulerian numbers (OEIS A008292)",
        lower_bound=True,
    ),
    Statistic(
        "descents",
        "descents",
        "two-sided",
        "descents",
        "descents per deck",
        values=lambda v: statistics.descents(v.relative, check=False),
        law=_cards(nulls.descents_law),
        law_source="Eulerian numbers (OEIS A008292)",
    ),
    Statistic(
        "fixed-points",
        "fixed points (cards at their reference position)",
        "two-sided",
        "cards left at their reference position",
        "cards per deck",
        values=lambda v: statistics.fixed_points(v.relative, check=False),
        law=_cards(nulls.fixed_points_law),
        law_source="rencontres numbers (OEIS A008290)",
    ),
    Statistic(
        "cycles",
        "cycles of the arrangement",
        "two-sided",
        "cycles",
        "cycles per deck",
        values=lambda v: statistics.cycles(v.relative, check=False),
        law=_cards(nulls.cycles_law),
        law_source="unsigned Stirling numbers of the first kind (OEIS A132393)",
    ),
    Statistic(
        "inversions",
        "inversions (Kendall distance to the reference)",
        "two-sided",
        "Kendall distance to the reference",
        "pairs out of reference order per deck",
        values=lambda v: v.order[0],
        law=_cards(nulls.inversions_law),
        law_source="Mahonian numbers (OEIS A008302)",
    ),
    Statistic(
        "successions",
        "successions (card i+1 directly below card i)",
        "two-sided",
        "successions",
        "successions per deck",
        values=lambda v: statistics.successions(v.relative, check=False),
        law=_cards(nulls.successions_law),
        law_source="C(n-1, k) a(n-1-k) with a = OEIS A000255",
        lower_bound=True,
    ),
    Statistic(
        "adjacent-pairs",
        "reference neighbours still adjacent (either order)",
        "two-sided",
        "reference neighbours still adjacent",
        "pairs per deck",
        values=lambda v: statistics.adjacent_pairs(v.relative, check=False),
        law=_cards(nulls.adjacent_pairs_law),
        law_source="permutations by adjacencies (OEIS A001100)",
    ),
    Statistic(
        "position-by-card",
        "position-by-card counts (chi-square)",
        "greater",
        "position-by-card frequencies",
        "percentage points (largest cell excess)",
        shape="positions",
        law_source="chi-square with (n-1)^2 df, or a Monte Carlo null for few decks",
    ),
    Statistic(
        "top-card-position",
        "where the reference top card lands",
        "two-sided",
        "position of the reference top card",
        "positions (1 = top)",
        values=lambda v: statistics.card_position(v.relative, 0, check=False),
        law=_cards(nulls.card_position_law),
        law_source="uniform on the n positions",
        shown_offset=1,
        sentence=_position_sentence("top"),
        lower_bound=True,
    ),
    Statistic(
        "bottom-card-position",
        "where the reference bottom card lands",
        "two-sided",
        "position of the reference bottom card",
        "positions (1 = top)",
        values=lambda v: statistics.card_position(v.relative, -1, check=False),
        law=_cards(nulls.card_position_law),
        law_source="uniform on the n positions",
        shown_offset=1,
        sentence=_position_sentence("bottom"),
        lower_bound=True,
    ),
    Statistic(
        "colour-runs",
        "colour runs",
        "two-sided",
        "colour runs",
        "runs per deck",
        values=lambda v: statistics.runs(v.absolute, v.context.colours, check=False),
        law=lambda c: nulls.runs_law(np.bincount(c.colours)),
        law_source="runs of a multiset (inclusion-exclusion, exact integers)",
        need="colours",
    ),
    Statistic(
        "suit-runs",
        "suit runs",
        "two-sided",
        "suit runs",
        "runs per deck",
        values=lambda v: statistics.runs(v.absolute, v.context.suits, check=False),
        law=lambda c: nulls.runs_law(np.bincount(c.suits)),
        law_source="runs of a multiset (inclusion-exclusion, exact integers)",
        need="suits",
    ),
)


def _short_rises(width: int) -> Statistic:
    return Statistic(
        f"short-rises-{width}",
        f"short rises (card c+1 within about {width} free positions below card c)",
        "greater",
        f"short rises (width {width})",
        "short rises per deck",
        values=lambda v: ranks.short_rises(v.ranks, width),
        law=lambda c: ranks.short_rises_law(c.cards, width),
        law_source="independent uniform sequential ranks: a sum of Bernoulli(k/m), exact",
        lower_bound=True,
        family="short-rises",
        battery=False,
    )


#: widths of the short-rise family (positions, roughly; see stats/ranks.py)
SHORT_RISE_WIDTHS = (4, 16)

_CYCLIC: tuple[Statistic, ...] = (
    Statistic(
        "cyclic-rising-sequences",
        "rising sequences after the best cut (cyclic)",
        "two-sided",
        "rising sequences after the best cut",
        "rising sequences per deck",
        values=lambda v: statistics.cyclic_rising_sequences(v.relative, check=False),
        law=_cards(nulls.cyclic_rising_law),
        law_source="n A(n-1, k-1), Eulerian numbers (OEIS A008292) of n - 1 cards",
        lower_bound=True,
        battery=False,
    ),
    Statistic(
        "cyclic-valleys",
        "valleys, the deck read around a circle",
        "two-sided",
        "cyclic valleys",
        "valleys per deck",
        values=lambda v: statistics.cyclic_valleys(v.relative, check=False),
        law=_cards(nulls.cyclic_valleys_law),
        law_source="n V(n-1, k-1), arrangements by valleys (OEIS A008303) of n - 1 cards",
        lower_bound=True,
        battery=False,
    ),
    *(_short_rises(w) for w in SHORT_RISE_WIDTHS),
)

_REPEAT = Statistic(
    "repeat-positions",
    "same card at the same position as in the previous deck",
    "greater",
    "positions holding the previous deck's card",
    "positions per deck",
    shape="consecutive",
    values=lambda v: statistics.repeat_positions(v.absolute, check=False),
    law=_cards(nulls.repeat_positions_law),
    law_source="rencontres numbers (OEIS A008290): consecutive uniform decks",
    sentence=_repeat_sentence,
)


def _shoe(context: DeckContext) -> ShoeContext:
    assert context.shoe is not None
    return context.shoe


def _per_shoe_sentence(stat: Statistic, observed: float, expected: float) -> str:
    diff = observed - expected
    side = "below" if diff < 0 else "above"
    return (
        f"{stat.what} {abs(diff):.2g} {side} random on average "
        f"({observed:.4g} per shoe vs {expected:.4g} expected)"
    )


def _shoe_guess_sentence(stat: Statistic, observed: float, expected: float) -> str:
    diff = observed - expected
    word = "extra" if diff >= 0 else "fewer"
    return (
        f"{abs(diff):.2g} {word} correct guesses per shoe naming a most frequent remaining "
        f"value ({observed:.4g} vs {expected:.4g} expected)"
    )


def _zone_sentence(stat: Statistic, observed: float, expected: float) -> str:
    return (
        f"the busiest zone holds {observed:.3g} cards of the reference segment's codes per "
        f"shoe vs {expected:.3g} expected"
    )


def _shoe_repeat_sentence(stat: Statistic, observed: float, expected: float) -> str:
    return (
        f"{observed:.3g} positions per shoe hold the same card code as in the previous shoe "
        f"vs {expected:.3g} expected"
    )


_SHOE: tuple[Statistic, ...] = (
    Statistic(
        "value-runs",
        "value runs",
        "two-sided",
        "runs of equal values",
        "runs per shoe",
        values=lambda v: statistics.runs(v.absolute, _shoe(v.context).class_array(), check=False),
        law=lambda c: nulls.runs_law(_shoe(c).class_counts),
        law_source="runs of a multiset (inclusion-exclusion, exact integers)",
        need="multiset",
        sentence=_per_shoe_sentence,
        lower_bound=True,
    ),
    Statistic(
        "value-successions",
        "value successions (next value follows)",
        "two-sided",
        "value successions",
        "successions per shoe",
        values=lambda v: shoe_statistics.value_successions(
            v.absolute, _shoe(v.context).class_array()
        ),
        law=lambda c: shoe_nulls.value_successions_law(_shoe(c).class_counts),
        law_source="marked successions glued into units, inclusion-exclusion (exact integers)",
        need="ordered",
        sentence=_per_shoe_sentence,
        lower_bound=True,
    ),
    Statistic(
        "first-appearance-rising",
        "first-appearance order: rising sequences",
        "two-sided",
        "rising sequences of the first-appearance order",
        "rising sequences per shoe",
        values=lambda v: v.first_appearances[1],
        law=lambda c: nulls.rising_law(len(_shoe(c).copies)),
        law_source="Eulerian numbers over the codes (OEIS A008292): with equal copies the "
        "first-appearance order of a uniform shoe is a uniform permutation",
        need="equal-copies",
        sentence=_per_shoe_sentence,
        needs_reference=True,
        lower_bound=True,
        on_codes=True,
    ),
    Statistic(
        "first-appearance-successions",
        "first-appearance order: successions",
        "two-sided",
        "successions of the first-appearance order",
        "successions per shoe",
        values=lambda v: statistics.successions(v.first_appearances[0], check=False),
        law=lambda c: nulls.successions_law(len(_shoe(c).copies)),
        law_source="C(K-1, k) a(K-1-k), a = OEIS A000255, over the K codes",
        need="equal-copies",
        sentence=_per_shoe_sentence,
        needs_reference=True,
        on_codes=True,
    ),
    Statistic(
        "value-positions",
        "position-by-value counts (chi-square)",
        "greater",
        "position-by-value frequencies",
        "percentage points (largest cell excess)",
        shape="class-positions",
        law_source="multivariate hypergeometric cells: chi-square with (n-1)(V-1) df, or a "
        "Monte Carlo null for few shoes",
        need="multiset",
    ),
    Statistic(
        "segment-zone",
        "reference segment: busiest zone",
        "greater",
        "cards of the reference segment's codes in the busiest zone",
        "cards per shoe",
        values=lambda v: v.zones[0].max(axis=1),
        law_keys=lambda v: v.zones[1],
        keyed_law=lambda c, key: shoe_nulls.zone_maximum_law(
            _shoe(c).cards, int(key), _shoe(c).zones
        ),
        law_source="multivariate hypergeometric zone counts, maximum counted zone by zone "
        "(exact integers, per shoe)",
        sentence=_zone_sentence,
        need="multiset",
        lower_bound=True,
        on_codes=True,
    ),
    Statistic(
        "guess-most-frequent",
        "guessing game, most frequent value",
        "greater",
        "correct guesses naming a most frequent remaining value",
        "extra correct guesses per shoe",
        values=lambda v: shoe_statistics.greedy_scores(
            v.absolute, _shoe(v.context).class_array(), np.asarray(_shoe(v.context).class_counts)
        ),
        law=lambda c: guessing_null_for(_shoe(c)),
        law_source="dynamic programme over the remaining counts (exact integers); beyond its "
        "budget a bracket (the stage decomposition in floating point, for 3 to 6 packs of "
        "blackjack or baccarat values computed in advance and shipped; the mass set aside "
        "stated with the p-value, which is then a bound)",
        sentence=_shoe_guess_sentence,
        need="guessing",
        lower_bound=True,
    ),
    Statistic(
        "guess-most-frequent-bet",
        "guessing game, most frequent value (betting)",
        "greater",
        "correct guesses naming a most frequent remaining value",
        "extra correct guesses per shoe",
        shape="bet",
        values=lambda v: shoe_statistics.greedy_steps(
            v.absolute, _shoe(v.context).class_array(), np.asarray(_shoe(v.context).class_counts)
        ),
        law_source="none needed: a test martingale (each guess a Bernoulli of the chance the "
        "record shows, M/r; equal bets on 12 tilts; p = 1/E, a bound by Ville's inequality), "
        "for shoes whose exact or bracketed law is out of reach",
        need="guessing-bet",
    ),
)


def guessing_null_for(shoe: ShoeContext) -> nulls.Law | nulls.LawBracket:
    """The null of the greedy guessing game for ``shoe``: exact within its budget, else
    the bracket the shoe allows (stored with ``guess_tables``, computed with
    ``guess_threshold``)."""
    return guessing_tables.guessing_null(
        shoe.class_counts,
        budget=shoe.guess_budget,
        stored=shoe.guess_tables,
        threshold=shoe.guess_threshold,
    )


_SHOE_REPEAT = Statistic(
    "shoe-repeat-positions",
    "same code as the previous shoe, same position",
    "greater",
    "positions holding the previous shoe's card code",
    "positions per shoe",
    shape="consecutive",
    values=lambda v: statistics.repeat_positions(v.absolute, check=False),
    law=lambda c: shoe_nulls.matches_law(_shoe(c).copies),
    law_source="rook polynomial of the copies, inclusion-exclusion (exact integers)",
    sentence=_shoe_repeat_sentence,
    need="multiset",
    on_codes=True,
)


def guess_statistic(strategy: str) -> Statistic:
    """The guessing game with feedback played with ``strategy`` (one of
    :data:`~shufflecheck.stats.guessing.STRATEGIES`)."""
    (name,) = check_strategies((strategy,))
    return Statistic(
        f"guess-{name}",
        f"guessing game with feedback, {name} strategy",
        "greater",
        f"correct guesses ({name} strategy)",
        "extra correct guesses per deck",
        values=lambda v: v.guesses[name],
        law=_cards(nulls.guessing_law),
        law_source="unsigned Stirling numbers of the first kind: a sum of Bernoulli(1/j)",
        sentence=_guess_sentence(name),
        lower_bound=True,
        strategy=name,
        family="guessing",
    )


def catalogue(strategies: Sequence[str] = DEFAULT_STRATEGIES) -> tuple[Statistic, ...]:
    """Every statistic, in report order (sequential test last, then the shoe statistics,
    then the statistics used only for assessment lower bounds), whatever a deck provides."""
    guesses = (guess_statistic(s) for s in check_strategies(strategies))
    return (*_BASE, *guesses, _REPEAT, *_SHOE, _SHOE_REPEAT, *_CYCLIC)


def battery_statistics(context: DeckContext) -> tuple[Statistic, ...]:
    """The audit battery's statistics that apply to decks of ``context``, in report order."""
    return tuple(s for s in catalogue(context.strategies) if s.battery and context.has(s.need))


def lower_bound_statistics(
    context: DeckContext, *, word_only: bool = False
) -> tuple[Statistic, ...]:
    """The statistics behind the Monte Carlo lower bounds of an assessment (per-deck, with
    an exact law), in catalogue order; with ``word_only``, only those that are functions
    of the word a shoe's feature reads (a lower bound on that word's distance must not see
    more than the word)."""
    return tuple(
        s
        for s in catalogue(context.strategies)
        if s.lower_bound
        and context.has(s.need)
        and s.shape == "per-deck"
        and not (word_only and s.on_codes)
    )


def law_sources(statistics: Sequence[Statistic]) -> str:
    """The distinct sources of the exact laws of ``statistics``, in order, for a method note."""
    return "; ".join(dict.fromkeys(s.law_source for s in statistics if s.law is not None))


def statistic(name: str, strategies: Sequence[str] = DEFAULT_STRATEGIES) -> Statistic:
    """The statistic called ``name`` (``guess-<strategy>`` for any strategy)."""
    if name.startswith("guess-"):
        return guess_statistic(name[len("guess-") :])
    for s in catalogue(strategies):
        if s.name == name:
            return s
    known = ", ".join(s.name for s in catalogue(strategies))
    raise InputError(f"unknown statistic {name!r}; statistics: {known}", argument="statistic")


def deck_values(
    relative: np.ndarray,
    absolute: np.ndarray | None = None,
    *,
    suits: np.ndarray | None = None,
    colours: np.ndarray | None = None,
    strategies: Sequence[str] = DEFAULT_STRATEGIES,
) -> dict[str, np.ndarray]:
    """Every per-deck statistic of the battery, by name (``int64`` arrays, one per deck).

    ``suits`` / ``colours`` are per-label codes of the *absolute* labels (``absolute``
    defaults to ``relative``: the reference is then the deck definition's label order).
    """
    rel = as_decks(relative, name="relative decks")
    n = rel.shape[1]
    ab = rel if absolute is None else as_decks(absolute, cards=n, name="absolute decks")
    if ab.shape != rel.shape:
        raise InputError("absolute and relative decks must have the same shape")
    context = DeckContext.checked(n, suits=suits, colours=colours, strategies=strategies)
    view = DeckView(rel, ab, context)
    return {
        s.name: s.values(view)
        for s in battery_statistics(context)
        if s.shape == "per-deck" and s.values is not None
    }
