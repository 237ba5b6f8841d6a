"""The documented range of every numeric parameter, with the reason for it, in one table.

Each :class:`Limit` is checked up front (before any work starts) by the function that takes
the parameter, through :meth:`Limit.check`, so the message always says what is allowed and
why: ``decks must be an integer from 1 to 100,000,000, got 3,000,000,000 (the whole log is
built in memory before it is written)``. Messages name the library argument; the command
line names its option instead. ``docs/limits.md`` shows :func:`markdown_table` (a test
compares the two).

Limits that depend on a model's exact method (how many cards or steps an exact law can
handle) are listed with the models (``docs/models.md``); memory is estimated separately,
before large work, by :mod:`shufflecheck.common.resources`.
"""

from __future__ import annotations

from dataclasses import dataclass

from shufflecheck.common.checks import check_integer

__all__ = ["LIMITS", "Limit", "limit", "markdown_table"]


@dataclass(frozen=True)
class Limit:
    """The allowed integer range of one parameter.

    Attributes
    ----------
    key : str
        Identifier in :data:`LIMITS`.
    argument : str
        The library argument the messages name (the CLI shows its option instead).
    low, high : int
        Inclusive range.
    unit : str
        What is counted (for the documentation table).
    where : str
        Where users give it (options, file keys, procedure text).
    why : str
        The reason for the range, shown in the message.
    """

    key: str
    argument: str
    low: int
    high: int
    unit: str
    where: str
    why: str

    def check(self, value: object, *, name: str | None = None, prefix: str = "") -> int:
        """``value`` as an int inside the range, else an InputError naming the argument
        (the reason is given for values above the range, where it is not obvious)."""
        above = isinstance(value, int) and not isinstance(value, bool) and value > self.high
        return check_integer(
            value,
            name or self.argument,
            low=self.low,
            high=self.high,
            prefix=prefix,
            why=self.why if above else "",
        )


_ENTRIES = (
    Limit(
        "cards",
        "cards",
        2,
        32767,
        "cards per simulated deck",
        "simulate, track, procedure files: --cards, cards =, shoes",
        "card labels of simulated decks are 16-bit integers",
    ),
    Limit(
        "assess_cards",
        "cards",
        2,
        2000,
        "cards per assessed deck",
        "assess, policy files: --cards, cards =",
        "the exact laws behind an assessment's bounds grow faster than n^2 (about 25 s at "
        "2,000 cards); a shoe of 16 packs has 832 cards",
    ),
    Limit(
        "audit_cards",
        "cards",
        2,
        1000,
        "cards per audited deck",
        "audit, power, logs attached to a policy: --cards, deck definitions",
        "the exact law of the inversion count is a row of n^2/2 integers of log2 n! bits; "
        "1,000 cards take minutes and a few GB",
    ),
    Limit(
        "deck_cards",
        "cards",
        1,
        32767,
        "cards in a deck definition",
        "deck definition files (--deck)",
        "card labels are stored as 16-bit integers",
    ),
    Limit(
        "assess_decks",
        "decks",
        2,
        50_000_000,
        "simulated decks",
        "assess --simulate",
        "decks are simulated in chunks, so memory stays bounded, but the time grows with "
        "the number of decks",
    ),
    Limit(
        "policy_decks",
        "decks",
        100,
        10_000_000,
        "simulated decks per procedure",
        "policy files: simulate =",
        "every procedure of the policy is assessed with this many decks",
    ),
    Limit(
        "simulate_decks",
        "decks",
        1,
        100_000_000,
        "decks written to a log",
        "simulate --decks",
        "the whole log is built in memory before it is written",
    ),
    Limit(
        "power_simulate",
        "simulate",
        100,
        10_000_000,
        "simulated decks",
        "power --simulate",
        "the simulated decks are held in memory at once",
    ),
    Limit(
        "repeats",
        "repeats",
        1,
        100,
        "repetitions of a procedure",
        "assess --repeat, simulate --repeat, policy files: max_repeats =, house =",
        "each repetition count is assessed separately; 100 repetitions of any dealing "
        "procedure are far past the point where it stops changing",
    ),
    Limit(
        "power_repeats",
        "repeat",
        1,
        50,
        "repetitions of a procedure",
        "power --repeat",
        "every repetition count is planned with its own simulation",
    ),
    Limit(
        "step_times",
        "times",
        1,
        10_000,
        "repeats of one step",
        "procedure text: riffle x3",
        "no dealing procedure repeats one step more often; the simulation's time grows with "
        "the number of steps",
    ),
    Limit(
        "shelves",
        "shelves",
        1,
        1 << 19,
        "shelves of a shelf machine",
        "shelf(shelves=m), mix --shelves",
        "shelf counts above 2^19 leave the exact law's range; with more shelves than cards "
        "nearly every card has a shelf of its own already",
    ),
    Limit(
        "hands",
        "hands",
        2,
        1 << 20,
        "packets of an a-shuffle",
        "riffle(hands=a), mix --hands, spectrum --hands",
        "a packet label and a card label share one 64-bit sort key; with more packets "
        "than cards nearly every card is a packet of its own already",
    ),
    Limit(
        "max_steps",
        "max_steps",
        1,
        200_000,
        "steps shown",
        "mix --max-steps (each model's exact range is in docs/models.md)",
        "one row is computed per step; beyond, use Monte Carlo assessment (shufflecheck assess)",
    ),
    Limit(
        "every",
        "every",
        1,
        366 * 24 * 3600,
        "seconds between recorded decks",
        "simulate --every",
        "recorded times must go forward, since audit --time requires a log in time order; "
        "a year is the longest gap",
    ),
    Limit(
        "characters_n",
        "n",
        0,
        10_000,
        "degree n of S_n",
        "characters N",
        "single values need the shapes and classes written out; whole tables are refused "
        "far below this (their size grows like p(n)^2)",
    ),
)

#: every limit by key
LIMITS: dict[str, Limit] = {entry.key: entry for entry in _ENTRIES}


def limit(key: str) -> Limit:
    """The limit called ``key`` (see :data:`LIMITS`)."""
    return LIMITS[key]


def markdown_table() -> str:
    """The table of limits for ``docs/limits.md``."""
    lines = [
        "| parameter | range | given as | why |",
        "|---|---|---|---|",
    ]
    for entry in _ENTRIES:
        lines.append(
            f"| {entry.unit} | {entry.low:,} to {entry.high:,} | {entry.where} | {entry.why} |"
        )
    return "\n".join(lines)
