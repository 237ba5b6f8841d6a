"""The statistic catalogue: one record per audit statistic, read by everything that tests.

Each :class:`Statistic` says what it measures (name, title, the noun phrase and unit of its
effect), how it is computed on a chunk of decks (``values``), its exact law under a
uniformly random deck (``law``, with the source of that law), the alternative it is tested
against, and how its effect is worded. The battery (:mod:`shufflecheck.audit.battery`),
the summaries it runs on (:mod:`shufflecheck.audit.summary`), power planning
(:mod:`shufflecheck.audit.power`) and the Monte Carlo lower bounds of an assessment
(:mod:`shufflecheck.analyses.assess`) all iterate over :func:`battery_statistics`, so a new
statistic is one record here, one law in :mod:`shufflecheck.audit.nulls` and one
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

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313 (rising sequences and their Eulerian law).
.. [2] R. P. Stanley, *Enumerative Combinatorics*, vol. 1, 2nd ed., Cambridge University
       Press, 2012 (descents, fixed points, cycles, inversions).
.. [3] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23 (the guessing game).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import cached_property
from typing import Literal

import numpy as np

from shufflecheck.audit import nulls, ranks, statistics
from shufflecheck.audit.guessing import DEFAULT_STRATEGIES, check_strategies, guess_scores_many
from shufflecheck.audit.nulls import Law
from shufflecheck.audit.statistics import as_decks, category_codes
from shufflecheck.common.errors import InputError

__all__ = [
    "Alternative",
    "DeckContext",
    "DeckView",
    "Shape",
    "Statistic",
    "battery_statistics",
    "catalogue",
    "deck_values",
    "guess_statistic",
    "law_sources",
    "lower_bound_statistics",
    "statistic",
]

Alternative = Literal["two-sided", "greater", "less"]
Shape = Literal["per-deck", "positions", "consecutive"]


@dataclass(frozen=True)
class DeckContext:
    """What a statistic may need besides the decks themselves.

    ``suits`` / ``colours`` are category codes per *absolute* label (as returned by
    :func:`~shufflecheck.audit.statistics.category_codes`), or None when the deck has none;
    ``strategies`` are the guessing strategies the battery plays.
    """

    cards: int
    suits: np.ndarray | None = None
    colours: np.ndarray | None = None
    strategies: tuple[str, ...] = DEFAULT_STRATEGIES

    @classmethod
    def checked(
        cls,
        cards: int,
        *,
        suits: object = None,
        colours: object = None,
        strategies: Sequence[str] = DEFAULT_STRATEGIES,
    ) -> DeckContext:
        """A context with its category codes and strategies checked."""
        return cls(
            int(cards),
            None if suits is None else category_codes(suits, cards, name="suits"),
            None if colours is None else category_codes(colours, cards, name="colours"),
            check_strategies(strategies),
        )

    def has(self, need: str | None) -> bool:
        return need is None or getattr(self, need) is not None


class DeckView:
    """One chunk of checked decks, with intermediate results shared between statistics
    (inversions and rising sequences in one pass; every strategy's guesses in one pass)."""

    def __init__(self, relative: np.ndarray, absolute: np.ndarray, context: DeckContext) -> None:
        self.relative = relative
        self.absolute = absolute
        self.context = context

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
        """Sequential ranks of :mod:`shufflecheck.audit.ranks` (one row per deck)."""
        return ranks.inverse_ranks(self.relative, check=False)

    @cached_property
    def guesses(self) -> dict[str, np.ndarray]:
        return guess_scores_many(self.relative, self.context.strategies, check=False)


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
    shape : {"per-deck", "positions", "consecutive"}
    values : callable or None
        ``values(view)``: one int per deck (per-deck) or per consecutive pair in the chunk
        (consecutive); None for ``positions``.
    law : callable or None
        ``law(context)``: exact per-deck (or per-pair) law under a uniform deck.
    law_source : str
        How that law is obtained, with its source (a table cell in reports).
    need : {"colours", "suits"} or None
        What the deck definition must provide for the statistic to apply.
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
    need: Literal["colours", "suits"] | None = None
    shown_offset: int = 0
    sentence: Callable[[Statistic, float, float], str] | None = None
    lower_bound: bool = False
    strategy: str | None = None
    family: str | None = None
    battery: bool = True

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


#: widths of the short-rise family (positions, roughly; see audit/ranks.py)
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


def guess_statistic(strategy: str) -> Statistic:
    """The guessing game with feedback played with ``strategy`` (one of
    :data:`~shufflecheck.audit.guessing.STRATEGIES`)."""
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
    """Every statistic, in report order (sequential test last, then the statistics used
    only for assessment lower bounds), whatever a deck provides."""
    guesses = (guess_statistic(s) for s in check_strategies(strategies))
    return (*_BASE, *guesses, _REPEAT, *_CYCLIC)


def battery_statistics(context: DeckContext) -> tuple[Statistic, ...]:
    """The audit battery's statistics that apply to decks of ``context``, in report order."""
    return tuple(s for s in catalogue(context.strategies) if s.battery and context.has(s.need))


def lower_bound_statistics(context: DeckContext) -> tuple[Statistic, ...]:
    """The statistics behind the Monte Carlo lower bounds of an assessment (per-deck, with
    an exact law), in catalogue order."""
    return tuple(
        s
        for s in catalogue(context.strategies)
        if s.lower_bound and context.has(s.need) and s.shape == "per-deck"
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
