"""The audit battery: mergeable summaries of recorded decks, exact tests, Holm, effects.

Usage::

    summary = BatterySummary.empty(52, suits=deck.suit_codes(), colours=deck.colour_codes())
    for chunk in chunks:                       # in time order
        summary.update(chunk.relative, chunk.absolute, groups=chunk.table)
    result = summary.finish(alpha=0.01)        # AuditResult (frozen)
    payload = result.as_json(set_aside=reader.set_aside)

A summary keeps, per group and for all decks together, only what the tests need: a
histogram of every per-deck statistic, the position-by-card count matrix, the first and
last deck (for the sequential test across chunks), and, for "since when", each per-deck
statistic in time order (two bytes per deck and statistic). Chunks and groups therefore
combine exactly: ``a.merge(b)`` (``b`` recorded after ``a``) equals the summary of the
concatenated decks.

Tests, each against a uniformly random deck, independent from deck to deck (the null):

===================== ==================================== ============ =================
name                  per-deck statistic                   exact law    alternative
===================== ==================================== ============ =================
rising-sequences      rising sequences                     Eulerian     two-sided
descents              descents                             Eulerian     two-sided
fixed-points          cards at their reference position    rencontres   two-sided
cycles                cycles of the permutation            Stirling I   two-sided
inversions            Kendall distance to the reference    Mahonian     two-sided
successions           card i+1 directly below card i       A000255 row  two-sided
adjacent-pairs        reference neighbours still adjacent  A001100 row  two-sided
position-by-card      (n x n counts, chi-square)           asymptotic   greater
top-card-position     where the reference top card lands   uniform      two-sided
bottom-card-position  where the reference bottom card is   uniform      two-sided
colour-runs           runs of one colour                   runs DP      two-sided
suit-runs             runs of one suit                     runs DP      two-sided
guess-<strategy>      correct guesses with feedback        Stirling I   greater
repeat-positions      same card, same place as last deck   rencontres   greater
===================== ==================================== ============ =================

Every per-deck test compares the *sum* over the ``D`` decks with the exact ``D``-fold
convolution of its law (:func:`shufflecheck.audit.nulls.sum_p_value`, method ``exact``).
Two-sided tests double the smaller tail: a biased procedure can push these statistics
either way (riffles leave too few rising sequences, a reversal too many; strips leave too
many successions, reversals too few). The guessing game is one-sided because only an
excess of correct guesses is an advantage to a player, and the sequential test is
one-sided because a dependent machine repeats positions more often, not less. The
family-wise error over the tests that ran is controlled with Holm's step-down method ([1]_)
at ``alpha``; each group's battery controls its own family (groups are reported for
location, the overall battery carries the verdict).

References
----------
.. [1] S. Holm, "A simple sequentially rejective multiple test procedure", Scand. J.
       Statist. 6 (1979) 65-70.
"""

from __future__ import annotations

import copy
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from shufflecheck.audit import nulls
from shufflecheck.audit.guessing import DEFAULT_STRATEGIES, _play, check_strategies
from shufflecheck.audit.nulls import Law
from shufflecheck.audit.positions import position_counts, position_test
from shufflecheck.audit.results import (
    AuditResult,
    BatteryResult,
    Effect,
    SinceWhen,
    TestResult,
)
from shufflecheck.audit.statistics import (
    _adjacent_pairs,
    _card_position,
    _cycles,
    _descents,
    _fixed_points,
    _order_statistics,
    _runs,
    _successions,
    as_decks,
    category_codes,
)
from shufflecheck.audit.timeline import change_point, describe
from shufflecheck.common.checks import check_cards
from shufflecheck.common.errors import InputError

__all__ = [
    "MAX_GROUPS",
    "BatterySummary",
    "TestSpec",
    "battery_specs",
    "deck_values",
    "holm",
    "holm_log",
]

#: Largest number of distinct group values one summary accepts.
MAX_GROUPS = 1000

_LN10 = math.log(10.0)


@dataclass(frozen=True)
class TestSpec:
    """One test of the battery: its name, title, alternative and plain-language units."""

    __test__ = False  # not a pytest class

    name: str
    title: str
    alternative: str
    what: str
    unit: str


_BASE_SPECS = (
    TestSpec(
        "rising-sequences",
        "rising sequences",
        "two-sided",
        "rising sequences",
        "rising sequences per deck",
    ),
    TestSpec("descents", "descents", "two-sided", "descents", "descents per deck"),
    TestSpec(
        "fixed-points",
        "fixed points (cards at their reference position)",
        "two-sided",
        "cards left at their reference position",
        "cards per deck",
    ),
    TestSpec("cycles", "cycles of the arrangement", "two-sided", "cycles", "cycles per deck"),
    TestSpec(
        "inversions",
        "inversions (Kendall distance to the reference)",
        "two-sided",
        "Kendall distance to the reference",
        "pairs out of reference order per deck",
    ),
    TestSpec(
        "successions",
        "successions (card i+1 directly below card i)",
        "two-sided",
        "successions",
        "successions per deck",
    ),
    TestSpec(
        "adjacent-pairs",
        "reference neighbours still adjacent (either order)",
        "two-sided",
        "reference neighbours still adjacent",
        "pairs per deck",
    ),
    TestSpec(
        "position-by-card",
        "position-by-card counts (chi-square)",
        "greater",
        "position-by-card frequencies",
        "percentage points (largest cell excess)",
    ),
    TestSpec(
        "top-card-position",
        "where the reference top card lands",
        "two-sided",
        "position of the reference top card",
        "positions (1 = top)",
    ),
    TestSpec(
        "bottom-card-position",
        "where the reference bottom card lands",
        "two-sided",
        "position of the reference bottom card",
        "positions (1 = top)",
    ),
)
_COLOUR_SPEC = TestSpec("colour-runs", "colour runs", "two-sided", "colour runs", "runs per deck")
_SUIT_SPEC = TestSpec("suit-runs", "suit runs", "two-sided", "suit runs", "runs per deck")
_REPEAT_SPEC = TestSpec(
    "repeat-positions",
    "same card at the same position as in the previous deck",
    "greater",
    "positions holding the previous deck's card",
    "positions per deck",
)


def _guess_spec(strategy: str) -> TestSpec:
    return TestSpec(
        f"guess-{strategy}",
        f"guessing game with feedback, {strategy} strategy",
        "greater",
        f"correct guesses ({strategy} strategy)",
        "extra correct guesses per deck",
    )


def battery_specs(
    *, colours: bool, suits: bool, strategies: Sequence[str] = DEFAULT_STRATEGIES
) -> tuple[TestSpec, ...]:
    """The tests of a battery, in report order (sequential test last)."""
    specs = list(_BASE_SPECS)
    if colours:
        specs.append(_COLOUR_SPEC)
    if suits:
        specs.append(_SUIT_SPEC)
    specs.extend(_guess_spec(s) for s in check_strategies(strategies))
    specs.append(_REPEAT_SPEC)
    return tuple(specs)


def holm_log(log_p: Sequence[float]) -> np.ndarray:
    """Holm step-down adjusted p-values, in natural logs (exact at any magnitude).

    ``adj_(i) = max_{j <= i} min(1, (m - j + 1) p_(j))`` over the p-values sorted upwards
    ([1], eq. on p. 66).
    """
    values = np.asarray(log_p, dtype=float)
    m = values.size
    out = np.empty(m)
    running = -math.inf
    for rank, i in enumerate(np.argsort(values, kind="stable")):
        running = max(running, min(0.0, math.log(m - rank) + float(values[i])))
        out[i] = running
    return out


def holm(p_values: Sequence[float]) -> np.ndarray:
    """Holm step-down adjusted p-values (floats in [0, 1])."""
    p = np.asarray(p_values, dtype=float)
    if p.size and (np.any(p < 0) or np.any(p > 1) or not np.isfinite(p).all()):
        raise InputError("p-values must lie in [0, 1]")
    with np.errstate(divide="ignore"):
        return np.exp(holm_log(np.log(p)))


def _laws(
    n: int, colours: np.ndarray | None, suits: np.ndarray | None, strategies: tuple[str, ...]
) -> dict[str, Law]:
    laws = {
        "rising-sequences": nulls.rising_law(n),
        "descents": nulls.descents_law(n),
        "fixed-points": nulls.fixed_points_law(n),
        "cycles": nulls.cycles_law(n),
        "inversions": nulls.inversions_law(n),
        "successions": nulls.successions_law(n),
        "adjacent-pairs": nulls.adjacent_pairs_law(n),
        "top-card-position": nulls.card_position_law(n),
        "bottom-card-position": nulls.card_position_law(n),
    }
    if colours is not None:
        laws["colour-runs"] = nulls.runs_law(np.bincount(colours))
    if suits is not None:
        laws["suit-runs"] = nulls.runs_law(np.bincount(suits))
    for s in strategies:
        laws[f"guess-{s}"] = nulls.guessing_law(n)
    laws["repeat-positions"] = nulls.repeat_positions_law(n)
    return laws


def deck_values(
    relative: np.ndarray,
    absolute: np.ndarray | None = None,
    *,
    suits: np.ndarray | None = None,
    colours: np.ndarray | None = None,
    strategies: Sequence[str] = DEFAULT_STRATEGIES,
) -> dict[str, np.ndarray]:
    """Every per-deck statistic of the battery, by test name (``int64`` arrays).

    ``suits`` / ``colours`` are per-label codes of the *absolute* labels (``absolute``
    defaults to ``relative``: the reference is then the deck definition's label order).
    """
    rel = as_decks(relative, name="relative decks")
    n = rel.shape[1]
    ab = rel if absolute is None else as_decks(absolute, cards=n, name="absolute decks")
    if ab.shape != rel.shape:
        raise InputError("absolute and relative decks must have the same shape")
    suit_codes = None if suits is None else category_codes(suits, n, name="suits")
    colour_codes = None if colours is None else category_codes(colours, n, name="colours")
    return _deck_values(rel, ab, suit_codes, colour_codes, check_strategies(strategies))


def _deck_values(
    rel: np.ndarray,
    ab: np.ndarray,
    suit_codes: np.ndarray | None,
    colour_codes: np.ndarray | None,
    strategies: tuple[str, ...],
) -> dict[str, np.ndarray]:
    n = rel.shape[1]
    inv, rise = _order_statistics(rel)
    out = {
        "rising-sequences": rise,
        "descents": _descents(rel),
        "fixed-points": _fixed_points(rel),
        "cycles": _cycles(rel),
        "inversions": inv,
        "successions": _successions(rel),
        "adjacent-pairs": _adjacent_pairs(rel),
        "top-card-position": _card_position(rel, 0),
        "bottom-card-position": _card_position(rel, n - 1),
    }
    if colour_codes is not None:
        out["colour-runs"] = _runs(ab, colour_codes)
    if suit_codes is not None:
        out["suit-runs"] = _runs(ab, suit_codes)
    scores = _play(rel, strategies, record=False)[0]
    for s in strategies:
        out[f"guess-{s}"] = scores[s]
    return out


class _State:
    """What one group (or all decks) contributes to the tests."""

    def __init__(self, lengths: dict[str, int], n: int, series: bool) -> None:
        self.decks = 0
        self.hist = {name: np.zeros(size, dtype=np.int64) for name, size in lengths.items()}
        self.positions = np.zeros((n, n), dtype=np.int64)
        self.first: np.ndarray | None = None
        self.last: np.ndarray | None = None
        self.series: dict[str, list[np.ndarray]] | None = (
            {name: [] for name in lengths if name != "repeat-positions"} if series else None
        )

    def copy(self) -> _State:
        out = copy.copy(self)
        out.hist = {k: v.copy() for k, v in self.hist.items()}
        out.positions = self.positions.copy()
        out.series = None if self.series is None else {k: list(v) for k, v in self.series.items()}
        return out

    def add(self, values: dict[str, np.ndarray], rel: np.ndarray, dtypes: dict) -> None:
        self.decks += rel.shape[0]
        for name, v in values.items():
            self.hist[name] += np.bincount(v, minlength=self.hist[name].size)
            if self.series is not None:
                self.series[name].append(v.astype(dtypes[name]))
        self.positions += position_counts(rel, self.positions.shape[0])

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
        hist = self.hist["repeat-positions"]
        hist += np.bincount(matches, minlength=hist.size)

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
                self.hist["repeat-positions"][cross] += 1
            if self.first is None:
                self.first = None if other.first is None else other.first.copy()
            if other.last is not None:
                self.last = other.last.copy()
        return cross


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
    ) -> None:
        self.n = n
        self.suits = suits
        self.colours = colours
        self.strategies = strategies
        self.keep_series = keep_series
        self._suit_codes = None if suits is None else category_codes(suits, n, name="suits")
        self._colour_codes = None if colours is None else category_codes(colours, n, name="colours")
        self.specs = battery_specs(
            colours=colours is not None, suits=suits is not None, strategies=strategies
        )
        self.laws = _laws(n, self._colour_codes, self._suit_codes, strategies)
        self._lengths = {name: law.high + 1 for name, law in self.laws.items()}
        self._dtypes = {
            name: np.int16 if size <= 32767 else np.int32 for name, size in self._lengths.items()
        }
        self._overall = _State(self._lengths, n, keep_series)
        self._groups: dict[object, _State] = {}
        self._grouped: bool | None = None

    @classmethod
    def empty(
        cls,
        n: int,
        *,
        suits: np.ndarray | None = None,
        colours: np.ndarray | None = None,
        strategies: Sequence[str] = DEFAULT_STRATEGIES,
        keep_series: bool = True,
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
            Guessing strategies to play (:data:`shufflecheck.audit.guessing.STRATEGIES`).
        keep_series : bool
            Keep per-deck values in time order for "since when" (2 bytes/deck/statistic).
        """
        check_cards(n, prefix="an audit: ")
        suit_arr = None if suits is None else np.asarray(suits).copy()
        colour_arr = None if colours is None else np.asarray(colours).copy()
        return cls(
            int(n),
            suits=suit_arr,
            colours=colour_arr,
            strategies=check_strategies(strategies),
            keep_series=bool(keep_series),
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
        """
        rel = as_decks(relative, cards=self.n, name="relative decks")
        ab = rel if absolute is None else as_decks(absolute, cards=self.n, name="absolute decks")
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
        values = _deck_values(rel, ab, self._suit_codes, self._colour_codes, self.strategies)
        if not grouped:
            self._grouped = False
            self._overall.add(values, rel, self._dtypes)
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
        self._overall.add(values, rel, self._dtypes)
        all_matches = []
        for g, key in enumerate(new):
            pick = np.nonzero(index == g)[0]
            state = self._groups.get(key)
            if state is None:
                state = self._groups[key] = _State(self._lengths, self.n, self.keep_series)
            state.add({k: v[pick] for k, v in values.items()}, rel[pick], self._dtypes)
            all_matches.append(state.add_sequence(ab[pick]))
        self._overall.add_matches(np.concatenate(all_matches))

    def _compatible(self, other: BatterySummary) -> None:
        same = (
            self.n == other.n
            and self.strategies == other.strategies
            and self.keep_series == other.keep_series
            and _same(self.suits, other.suits)
            and _same(self.colours, other.colours)
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

    def merge(self, other: BatterySummary) -> BatterySummary:
        """A new summary of ``self``'s decks followed in time by ``other``'s."""
        self._compatible(other)
        out = self.copy()
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
                out._overall.hist["repeat-positions"][cross] += 1
        if len(out._groups) > MAX_GROUPS:
            raise InputError(f"groups: more than {MAX_GROUPS} distinct values")
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
            raise InputError(f"alpha must lie strictly between 0 and 1, got {alpha!r}")
        if self._overall.decks == 0:
            raise InputError("no decks to audit")
        generator = np.random.default_rng(rng)
        options = (float(alpha), position_method, resamples, generator, since_when)
        overall = self._battery(self._overall, *options)
        groups = tuple(
            (key, self._battery(self._groups[key], *options)) for key in self.group_keys()
        )
        return AuditResult(overall, groups)

    # ------------------------------------------------------------------ the tests

    def _battery(
        self,
        state: _State,
        alpha: float,
        position_method: str,
        resamples: int,
        rng: np.random.Generator,
        since_when: bool,
    ) -> BatteryResult:
        rows = []
        skipped: list[tuple[str, str]] = []
        for spec in self.specs:
            if spec.name == "position-by-card":
                test = position_test(
                    state.positions,
                    state.decks,
                    method=position_method,
                    resamples=resamples,
                    rng=rng,
                )
                effect = _position_effect(state.positions, state.decks)
                rows.append((spec, test.statistic, test.log_p, test.method, test.detail, effect))
                continue
            law = self.laws[spec.name]
            hist = state.hist[spec.name]
            count = int(hist.sum())
            if count == 0:
                skipped.append((spec.name, "needs two consecutive decks in one group"))
                continue
            if law.low == law.high:
                skipped.append((spec.name, f"constant on decks of {self.n} cards"))
                continue
            total = int(np.arange(hist.size, dtype=np.int64) @ hist)
            log_p = nulls.sum_p_value(law, count, total, spec.alternative)
            what = "pairs of consecutive decks" if spec.name == "repeat-positions" else "decks"
            detail = (
                f"sum over {count} {what} against the exact {count}-fold convolution of the "
                f"per-deck law ({spec.alternative})"
            )
            effect = _sum_effect(spec, hist, law)
            rows.append((spec, float(total), log_p, "exact", detail, effect))
        adjusted = holm_log([row[2] for row in rows])
        level = math.log(alpha)
        tests = tuple(
            TestResult(
                name=spec.name,
                title=spec.title,
                statistic=stat,
                log10_p_value=log_p / _LN10,
                log10_p_adjusted=float(adj) / _LN10,
                method=method,
                detail=detail,
                alternative=spec.alternative,
                effect=effect,
                flagged=bool(adj <= level),
            )
            for (spec, stat, log_p, method, detail, effect), adj in zip(rows, adjusted, strict=True)
        )
        flagged = any(t.flagged for t in tests)
        when = None
        if flagged and since_when and state.series is not None:
            when = self._since_when(state, tests)
        return BatteryResult(state.decks, alpha, flagged, tests, tuple(skipped), when)

    def _since_when(self, state: _State, tests: tuple[TestResult, ...]) -> SinceWhen | None:
        assert state.series is not None
        candidates = [t for t in tests if t.flagged and t.name in state.series]
        if not candidates:
            return None
        best = min(candidates, key=lambda t: (t.log10_p_adjusted, t.log10_p_value))
        law = self.laws[best.name]
        parts = state.series[best.name]
        series = np.concatenate(parts).astype(np.int64)
        mean0, var0 = float(law.mean), float(law.variance)
        direction = 1 if best.alternative == "greater" or best.effect.value >= 0 else -1
        point = change_point(series, mean0, var0, direction)
        spec = next(s for s in self.specs if s.name == best.name)
        return SinceWhen(
            test=best.name,
            start=point.start + 1,
            decks_after=series.size - point.start,
            mean_before=point.mean_before,
            mean_after=point.mean_after,
            expected=mean0,
            statistic=point.statistic,
            method=(
                "estimate: likelihood-ratio (CUSUM) scan for a lasting mean shift, Gaussian "
                "working model with the exact null mean and variance; no confidence interval"
            ),
            text=describe(point, series.size, spec.what, mean0),
        )


def _same(a: np.ndarray | None, b: np.ndarray | None) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return a.shape == b.shape and bool(np.array_equal(a, b))


def _ordinal(k: int) -> str:
    suffix = "th" if 10 <= k % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(k % 10, "th")
    return f"{k}{suffix}"


def _sum_effect(spec: TestSpec, hist: np.ndarray, law: Law) -> Effect:
    count = int(hist.sum())
    values = np.arange(hist.size, dtype=float)
    observed = float(values @ hist) / count
    spread = float(((values - observed) ** 2) @ hist) / (count - 1) if count > 1 else 0.0
    se = math.sqrt(spread / count)
    expected = float(law.mean)
    diff = observed - expected
    name = spec.name
    if name.startswith("guess-"):
        strategy = name[len("guess-") :]
        word = "extra" if diff >= 0 else "fewer"
        text = (
            f"{abs(diff):.2g} {word} correct guesses per deck with the {strategy} strategy "
            f"({observed:.3g} vs {expected:.3g} expected)"
        )
    elif name in ("top-card-position", "bottom-card-position"):
        which = "top" if name.startswith("top") else "bottom"
        observed += 1.0
        expected += 1.0
        text = (
            f"the reference {which} card lands on average at position {observed:.3g} "
            f"({expected:.3g} expected; 1 = top)"
        )
    elif name == "repeat-positions":
        text = (
            f"{observed:.3g} positions per deck hold the same card as in the previous deck "
            f"vs {expected:.3g} expected"
        )
    else:
        side = "below" if diff < 0 else "above"
        text = (
            f"{spec.what} {abs(diff):.2g} {side} random on average "
            f"({observed:.3g} per deck vs {expected:.3g} expected)"
        )
    return Effect(diff, spec.unit, observed, expected, se, text)


def _position_effect(counts: np.ndarray, decks: int) -> Effect:
    n = counts.shape[0]
    freq = counts / decks
    dev = freq - 1.0 / n
    i, c = np.unravel_index(int(np.argmax(np.abs(dev))), dev.shape)
    f = float(freq[i, c])
    value = 100.0 * float(dev[i, c])
    se = 100.0 * math.sqrt(max(f * (1 - f), 0.0) / decks)
    text = (
        f"largest departure: the {_ordinal(int(c) + 1)} card of the reference lies at position "
        f"{int(i) + 1} in {100 * f:.3g}% of decks vs {100 / n:.3g}% expected"
    )
    return Effect(value, "percentage points (largest cell)", 100 * f, 100.0 / n, se, text)
