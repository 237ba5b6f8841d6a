"""Mergeable summaries of recorded decks for the audit battery.

Usage::

    summary = BatterySummary.empty(52, suits=deck.suit_codes(), colours=deck.colour_codes())
    for chunk in chunks:                       # in time order
        summary.update(chunk.relative, chunk.absolute, groups=chunk.table)
    result = summary.finish(alpha=0.01)        # AuditResult (frozen)
    payload = result.as_json(set_aside=reader.set_aside)

A summary keeps, per group and for all decks together, only what the tests need: a
histogram of every per-deck statistic of the catalogue, the position-by-card count matrix,
the first and last deck (for the sequential test across chunks), and, for "since when",
each per-deck statistic in time order (two bytes per deck and statistic). Chunks and
groups therefore combine exactly: ``a.merge(b)`` (``b`` recorded after ``a``) equals the
summary of the concatenated decks. :meth:`BatterySummary.finish` runs the battery
(:func:`shufflecheck.stats.battery.run_battery`) on each.

Shoes (decks with repeated cards) use the same summary with a
:class:`~shufflecheck.stats.catalogue.ShoeContext`: chunks are recorded words (kind labels,
copies counted by :func:`~shufflecheck.stats.shoe_statistics.check_words`) with the
reference shoe of every row, the position counts are by value, and a statistic whose law
depends on the shoe keeps a histogram per law key::

    summary = BatterySummary.empty(312, shoe=ShoeContext(copies, classes, names))
    summary.update(words, words, references=reference_words)
"""

from __future__ import annotations

import copy
import dataclasses
from collections.abc import Sequence

import numpy as np

from shufflecheck.common.checks import check_cards
from shufflecheck.common.errors import InputError
from shufflecheck.stats.battery import SINCE_WHEN_LEVEL, Tallies, run_battery
from shufflecheck.stats.catalogue import DeckContext, DeckView, ShoeContext, battery_statistics
from shufflecheck.stats.guessing import DEFAULT_STRATEGIES, check_strategies
from shufflecheck.stats.nulls import Law
from shufflecheck.stats.positions import position_counts
from shufflecheck.stats.results import AuditResult
from shufflecheck.stats.shoe_statistics import (
    check_words,
    class_position_counts,
    greedy_step_cells,
)
from shufflecheck.stats.statistics import as_decks

__all__ = ["MAX_GROUPS", "BatterySummary"]

#: Largest number of distinct group values one summary accepts.
MAX_GROUPS = 1000

_SEQUENTIAL_NAMES = frozenset({"repeat-positions", "shoe-repeat-positions"})


class _KeyedLaws(dict):
    """Exact laws of a statistic whose law depends on the deck, computed per key on demand."""

    def __init__(self, make) -> None:
        super().__init__()
        self._make = make

    def __missing__(self, key: int) -> Law:
        law = self._make(int(key))
        self[int(key)] = law
        return law


class _State:
    """What one group (or all decks) contributes to the tests."""

    def __init__(
        self, lengths: dict[str, int | tuple[int, int]], shape: tuple[int, int], series: bool
    ) -> None:
        self.decks = 0
        self.hist = {name: np.zeros(size, dtype=np.int64) for name, size in lengths.items()}
        self.positions = np.zeros(shape, dtype=np.int64)
        self.first: np.ndarray | None = None
        self.last: np.ndarray | None = None
        self.series: dict[str, list[np.ndarray]] | None = (
            {
                name: []
                for name, size in lengths.items()
                if name not in _SEQUENTIAL_NAMES and not isinstance(size, tuple)
            }
            if series
            else None
        )

    def copy(self) -> _State:
        out = copy.copy(self)
        out.hist = {k: v.copy() for k, v in self.hist.items()}
        out.positions = self.positions.copy()
        out.series = None if self.series is None else {k: list(v) for k, v in self.series.items()}
        return out

    def add(self, values: dict, positions: np.ndarray, count: int, dtypes: dict) -> None:
        self.decks += count
        for name, v in values.items():
            hist = self.hist[name]
            if isinstance(v, tuple):  # (values, law keys)
                cells = v[1].astype(np.int64) * hist.shape[1] + v[0]
                hist += np.bincount(cells, minlength=hist.size).reshape(hist.shape)
                continue
            if v.ndim == 2:  # codes of cells, one per deck and step (a table, no series)
                flat = np.bincount(v.reshape(-1).astype(np.int64), minlength=hist.size)
                hist += flat.reshape(hist.shape)
                continue
            hist += np.bincount(v, minlength=hist.size)
            if self.series is not None:
                self.series[name].append(v.astype(dtypes[name]))
        self.positions += positions

    def add_sequence(self, ab: np.ndarray) -> np.ndarray:
        """Repeat-position counts of consecutive decks (with the last deck seen before)."""
        if self.last is not None:
            ab_all = np.concatenate([self.last[None, :], ab])
        else:
            ab_all = ab
        matches = np.count_nonzero(ab_all[1:] == ab_all[:-1], axis=1)
        self.add_matches(matches)
        if self.first is None:
            self.first = ab[0].copy()
        self.last = ab[-1].copy()
        return matches

    def add_matches(self, matches: np.ndarray) -> None:
        hist = self.hist[self.sequential]
        hist += np.bincount(matches, minlength=hist.size)

    @property
    def sequential(self) -> str:
        return next(name for name in self.hist if name in _SEQUENTIAL_NAMES)

    def absorb(self, other: _State, sequential: bool) -> int | None:
        """Add ``other`` (recorded after ``self``); returns the boundary pair's count."""
        self.decks += other.decks
        for name in self.hist:
            self.hist[name] += other.hist[name]
        self.positions += other.positions
        if self.series is not None and other.series is not None:
            for name in self.series:
                self.series[name].extend(other.series[name])
        cross = None
        if sequential:
            if self.last is not None and other.first is not None:
                cross = int(np.count_nonzero(self.last == other.first))
                self.hist[self.sequential][cross] += 1
            if self.first is None:
                self.first = None if other.first is None else other.first.copy()
            if other.last is not None:
                self.last = other.last.copy()
        return cross


def _same(a: np.ndarray | None, b: np.ndarray | None) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return a.shape == b.shape and bool(np.array_equal(a, b))


def _python_key(value: object) -> object:
    return value.item() if isinstance(value, np.generic) else value


class BatterySummary:
    """Mergeable summary of recorded decks for the audit battery (mutable accumulator).

    Build with :meth:`empty`, feed chunks in time order with :meth:`update`, combine with
    :meth:`merge`, and compute the tests with :meth:`finish`.
    """

    def __init__(
        self,
        n: int,
        *,
        suits: np.ndarray | None,
        colours: np.ndarray | None,
        strategies: tuple[str, ...],
        keep_series: bool,
        shoe: ShoeContext | None = None,
    ) -> None:
        self.n = n
        self.suits = suits
        self.colours = colours
        self.strategies = strategies
        self.keep_series = keep_series
        self.shoe = shoe
        self._catalogue()
        self._dtypes = {
            name: np.int16 if not isinstance(size, tuple) and size <= 32767 else np.int32
            for name, size in self._lengths.items()
        }
        self._positions_shape = (n, n) if shoe is None else (n, len(shoe.names))
        self._overall = _State(self._lengths, self._positions_shape, keep_series)
        self._groups: dict[object, _State] = {}
        self._grouped: bool | None = None

    def __getstate__(self) -> dict:
        # the catalogue's records and laws follow from the context: rebuilt, not shipped
        # (a summary crosses processes when parts of an audit run on a cluster)
        state = self.__dict__.copy()
        for key in ("context", "statistics", "laws"):
            state.pop(key, None)
        return state

    def __setstate__(self, state: dict) -> None:
        self.__dict__.update(state)
        self._catalogue()

    def _catalogue(self) -> None:
        """The context, the battery's records and their laws (from n, suits, colours,
        strategies and shoe)."""
        n, shoe = self.n, self.shoe
        self.context = DeckContext.checked(
            n, suits=self.suits, colours=self.colours, strategies=self.strategies, shoe=shoe
        )
        #: the statistics of the battery, in report order (from the catalogue)
        self.statistics = battery_statistics(self.context)
        #: exact null law of each statistic with one (all but the position tests); for a
        #: statistic whose law depends on the deck, a mapping key -> law
        self.laws: dict[str, Law | _KeyedLaws] = {}
        self._lengths: dict[str, int | tuple[int, int]] = {}
        for stat in self.statistics:
            if stat.keyed_law is not None:
                make = stat.keyed_law
                self.laws[stat.name] = _KeyedLaws(lambda key, make=make: make(self.context, key))
                assert shoe is not None and shoe.zones is not None
                self._lengths[stat.name] = (n + 1, max(shoe.zones) + 1)
            elif stat.law is not None:
                law = stat.law(self.context)
                self.laws[stat.name] = law
                self._lengths[stat.name] = law.high + 1
            elif stat.shape == "bet":  # a table of guesses by (M, 2 r + X), no law
                assert shoe is not None
                self._lengths[stat.name] = greedy_step_cells(np.asarray(shoe.class_counts))

    @classmethod
    def empty(
        cls,
        n: int,
        *,
        suits: np.ndarray | None = None,
        colours: np.ndarray | None = None,
        strategies: Sequence[str] = DEFAULT_STRATEGIES,
        keep_series: bool = True,
        shoe: ShoeContext | None = None,
    ) -> BatterySummary:
        """An empty summary for decks of ``n`` cards.

        Parameters
        ----------
        n : int
            Cards per deck (>= 2).
        suits, colours : (n,) int arrays or None
            Category code of each *absolute* card label (negative: no suit, e.g. a joker),
            as from a deck definition; None when the deck has none (those tests are left
            out).
        strategies : sequence of str
            Guessing strategies to play (:data:`shufflecheck.stats.guessing.STRATEGIES`).
        keep_series : bool
            Keep per-deck values in time order for "since when" (2 bytes/deck/statistic).
        shoe : ShoeContext or None
            For shoes (decks with repeated cards): copies, the feature's classes, the
            followed segment and zones; chunks are then words with their references.
        """
        n = check_cards(int(n) if isinstance(n, np.integer) else n, prefix="an audit: ")
        suit_arr = None if suits is None else np.asarray(suits).copy()
        colour_arr = None if colours is None else np.asarray(colours).copy()
        return cls(
            int(n),
            suits=suit_arr,
            colours=colour_arr,
            strategies=check_strategies(strategies),
            keep_series=bool(keep_series),
            shoe=shoe,
        )

    @property
    def decks(self) -> int:
        """Decks summarised so far."""
        return self._overall.decks

    def group_keys(self) -> tuple[object, ...]:
        """Group values seen so far, in a stable order."""
        return tuple(sorted(self._groups, key=lambda k: (type(k).__name__, k)))

    def update(
        self,
        relative: np.ndarray,
        absolute: np.ndarray | None = None,
        *,
        groups: Sequence[object] | np.ndarray | None = None,
        check: bool = True,
        references: np.ndarray | None = None,
    ) -> None:
        """Add a chunk of decks, given in time order.

        Parameters
        ----------
        relative : (k, n) int array
            Each row: reference positions of the cards, top to bottom.
        absolute : (k, n) int array or None
            Each row: absolute card labels (of the deck definition), for colour and suit
            runs and the sequential test; None means the labels of ``relative``.
        groups : length-k sequence or None
            Group value of each deck (e.g. the table); all chunks must either give groups
            or not.
        check : bool
            Check that the rows are arrangements (``False`` for decks a log reader has
            already validated and related to their references).
        references : (k, n) int array or None
            Shoes only: the reference shoe (kind labels) of every row, for the zone test.
        """
        if self.shoe is not None:
            copies = np.asarray(self.shoe.copies)
            rel = check_words(relative, copies, name="shoes")
            ab = rel if absolute is None else check_words(absolute, copies, name="shoes")
            if references is not None:
                references = check_words(references, copies, name="reference shoes")
        elif check:
            rel = as_decks(relative, cards=self.n, name="relative decks")
            ab = (
                rel if absolute is None else as_decks(absolute, cards=self.n, name="absolute decks")
            )
        else:
            rel = np.asarray(relative)
            ab = rel if absolute is None else np.asarray(absolute)
            if rel.ndim != 2 or rel.shape[1] != self.n:
                raise InputError(f"relative decks: expected {self.n} cards per deck")
        if ab.shape != rel.shape:
            raise InputError(
                f"absolute decks: expected shape {rel.shape} like the relative decks, "
                f"got {ab.shape}"
            )
        count = rel.shape[0]
        if count == 0:
            return
        grouped = groups is not None
        if self._grouped is not None and self._grouped != grouped:
            raise InputError("give groups for every chunk of an audit or for none")
        if references is not None and references.shape != ab.shape:
            raise InputError(f"references: expected shape {ab.shape}, got {references.shape}")
        view = DeckView(rel, ab, self.context, reference=references)
        values: dict = {}
        for stat in self.statistics:
            if stat.shape not in ("per-deck", "bet") or stat.values is None:
                continue
            if (stat.law_keys is not None or stat.needs_reference) and references is None:
                continue
            if stat.law_keys is not None:
                values[stat.name] = (stat.values(view), stat.law_keys(view))
            else:
                values[stat.name] = stat.values(view)
        if not grouped:
            self._grouped = False
            self._overall.add(values, self._position_counts(rel, ab), count, self._dtypes)
            self._overall.add_sequence(ab)
            return
        labels = np.asarray(groups)
        if labels.shape != (count,):
            raise InputError(f"groups: expected {count} values (one per deck), got {labels.shape}")
        try:
            keys, index = np.unique(labels, return_inverse=True)
        except TypeError as exc:
            raise InputError("groups: values must be all numbers or all text") from exc
        new = [_python_key(k) for k in keys]
        if len(set(self._groups) | set(new)) > MAX_GROUPS:
            raise InputError(f"groups: more than {MAX_GROUPS} distinct values")
        self._grouped = True
        self._overall.add(values, self._position_counts(rel, ab), count, self._dtypes)
        all_matches = []
        for g, key in enumerate(new):
            pick = np.nonzero(index == g)[0]
            state = self._groups.get(key)
            if state is None:
                state = self._groups[key] = _State(
                    self._lengths, self._positions_shape, self.keep_series
                )
            picked = {
                k: (v[0][pick], v[1][pick]) if isinstance(v, tuple) else v[pick]
                for k, v in values.items()
            }
            state.add(picked, self._position_counts(rel[pick], ab[pick]), pick.size, self._dtypes)
            all_matches.append(state.add_sequence(ab[pick]))
        self._overall.add_matches(np.concatenate(all_matches))

    def _position_counts(self, rel: np.ndarray, ab: np.ndarray) -> np.ndarray:
        if self.shoe is None:
            return position_counts(rel, self.n)
        return class_position_counts(ab, self.shoe.class_array(), len(self.shoe.names))

    def _compatible(self, other: BatterySummary) -> None:
        same = (
            self.n == other.n
            and self.strategies == other.strategies
            and self.keep_series == other.keep_series
            and _same(self.suits, other.suits)
            and _same(self.colours, other.colours)
            and self.shoe == other.shoe
        )
        if not same:
            raise InputError("cannot merge summaries of different decks or batteries")
        if None not in (self._grouped, other._grouped) and self._grouped != other._grouped:
            raise InputError("cannot merge a grouped summary with an ungrouped one")

    def copy(self) -> BatterySummary:
        """An independent copy."""
        out = copy.copy(self)
        out._overall = self._overall.copy()
        out._groups = {k: v.copy() for k, v in self._groups.items()}
        return out

    def merge(self, other: BatterySummary, *, in_place: bool = False) -> BatterySummary:
        """A new summary of ``self``'s decks followed in time by ``other``'s.

        With ``in_place`` the result is ``self``, extended (folding many parts into one
        summary then costs the size of each part, not of the whole so far).
        """
        self._compatible(other)
        out = self if in_place else self.copy()
        if other._grouped is None:
            return out
        if out._grouped is None:
            out._grouped = other._grouped
        if not other._grouped:
            out._overall.absorb(other._overall, sequential=True)
            return out
        out._overall.absorb(other._overall, sequential=False)
        for key, state in other._groups.items():
            mine = out._groups.get(key)
            if mine is None:
                out._groups[key] = state.copy()
                continue
            cross = mine.absorb(state, sequential=True)
            if cross is not None:
                out._overall.hist[out._overall.sequential][cross] += 1
        if len(out._groups) > MAX_GROUPS:
            raise InputError(f"groups: more than {MAX_GROUPS} distinct values")
        return out

    def merge_front(self, front: BatterySummary, positions: Sequence[int]) -> BatterySummary:
        """``front.merge(self)``, but with ``front``'s decks standing, in the time order of
        all decks, before the decks of ``self`` at ``positions`` (one sorted index into
        ``self``'s decks per deck of ``front``; ``0`` for all gives ``front.merge(self)``).

        Each group's decks of ``front`` must come before that group's decks of ``self``
        (as the first deck of a group in a later chunk does); only the order of all decks
        together, which the "since when" scan of the whole log reads, needs the positions.
        """
        out = front.merge(self)
        if len(positions) != front.decks:
            raise InputError(f"positions: expected {front.decks} values, got {len(positions)}")
        series = out._overall.series
        if series is None or not front.decks:
            return out
        assert front._overall.series is not None and self._overall.series is not None
        for name in series:
            empty = np.zeros(0, dtype=self._dtypes[name])
            mine = self._overall.series[name]
            theirs = front._overall.series[name]
            series[name] = [
                np.insert(
                    np.concatenate(mine) if mine else empty,
                    np.asarray(positions, dtype=np.intp),
                    np.concatenate(theirs) if theirs else empty,
                )
            ]
        return out

    def as_arrays(self) -> dict[str, np.ndarray]:
        """The summary's content as plain arrays (for checks and debugging)."""
        out: dict[str, np.ndarray] = {}
        states = [("all", self._overall)] + [(repr(k), self._groups[k]) for k in self.group_keys()]
        for label, state in states:
            out[f"{label}/decks"] = np.array([state.decks])
            out[f"{label}/positions"] = state.positions
            for name, hist in state.hist.items():
                out[f"{label}/hist/{name}"] = hist
            if state.series is not None:
                for name, parts in state.series.items():
                    out[f"{label}/series/{name}"] = (
                        np.concatenate(parts) if parts else np.zeros(0, dtype=np.int16)
                    )
        return out

    def finish(
        self,
        alpha: float = 0.01,
        *,
        position_method: str = "auto",
        resamples: int = 999,
        rng: np.random.Generator | int | None = None,
        since_when: bool = True,
        since_when_level: float = SINCE_WHEN_LEVEL,
    ) -> AuditResult:
        """Run the battery on all decks and on each group.

        Parameters
        ----------
        alpha : float
            Family-wise error level for Holm's method (default 0.01).
        position_method : {"auto", "asymptotic", "monte-carlo"}
            Null of the position-by-card test; ``auto`` simulates when ``D/n < 5``.
        resamples : int
            Simulated audits for a Monte Carlo null.
        rng : Generator, int or None
            Randomness for Monte Carlo nulls (nothing else here draws).
        since_when : bool
            Estimate where a bias began when the battery flags (needs ``keep_series``).
        """
        if not isinstance(alpha, (int, float)) or not 0 < alpha < 1:
            raise InputError(
                f"alpha must lie strictly between 0 and 1, got {alpha!r}", argument="alpha"
            )
        if self._overall.decks == 0:
            raise InputError("no decks to audit")
        generator = np.random.default_rng(rng)

        def battery(state: _State):
            return run_battery(
                Tallies(
                    state.decks,
                    state.hist,
                    state.positions,
                    state.series,
                    None if self.shoe is None else self.shoe.class_counts,
                    () if self.shoe is None else self.shoe.names,
                ),
                self.statistics,
                self.laws,
                alpha=float(alpha),
                position_method=position_method,
                resamples=resamples,
                rng=generator,
                since_when=since_when,
                since_when_level=since_when_level,
            )

        overall = battery(self._overall)
        groups = tuple((key, battery(self._groups[key])) for key in self.group_keys())
        extra = self._not_applicable()
        if extra:
            overall = dataclasses.replace(overall, skipped=overall.skipped + extra)
        return AuditResult(overall, groups)

    def _not_applicable(self) -> tuple[tuple[str, str], ...]:
        """Shoe tests left out for this shoe, with the reason (reported as not run)."""
        if self.shoe is None:
            return ()
        out = []
        if not self.shoe.provides("ordered"):
            out.append(("value-successions", f"the classes of {self.shoe.feature} have no order"))
        if not self.shoe.provides("guessing") and not self.shoe.provides("guessing-bet"):
            from shufflecheck.stats.shoe_nulls import greedy_state_estimate

            states = greedy_state_estimate(self.shoe.class_counts)
            out.append(
                (
                    "guess-most-frequent",
                    f"its exact null law would take about {states:,} count states, beyond the "
                    f"budget of {self.shoe.guess_budget:,}, and no bracket of it is stored",
                )
            )
        return tuple(out)
