"""The audit battery: every statistic of the catalogue tested on a summary of decks, Holm.

Tests, each against a uniformly random deck, independent from deck to deck (the null); the
statistics and their exact laws are the records of :mod:`shufflecheck.stats.catalogue`.
Every per-deck test compares the *sum* over the ``D`` decks with the exact ``D``-fold
convolution of its law (:func:`shufflecheck.stats.nulls.sum_p_value`, method ``exact``).
Two-sided tests double the smaller tail: a biased procedure can push these statistics
either way (riffles leave too few rising sequences, a reversal too many; strips leave too
many successions, reversals too few). The guessing game is one-sided because only an
excess of correct guesses is an advantage to a player, and the sequential test is
one-sided because a dependent machine repeats positions more often, not less. The
position-by-card test is a chi-square test with an asymptotic or Monte Carlo null
(:mod:`shufflecheck.stats.positions`). The family-wise error over the tests that ran is
controlled with Holm's step-down method ([1]_) at ``alpha``; each group's battery controls
its own family (groups are reported for location, the overall battery carries the
verdict). When the battery flags and per-deck values were kept in time order, "since when"
is estimated on the most significant flagged statistic (:mod:`shufflecheck.stats.timeline`).

References
----------
.. [1] S. Holm, "A simple sequentially rejective multiple test procedure", Scand. J.
       Statist. 6 (1979) 65-70.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.common.numbers import percent
from shufflecheck.stats import nulls
from shufflecheck.stats.catalogue import Statistic
from shufflecheck.stats.effects import (
    class_position_effect,
    keyed_sum_effect,
    position_effect,
    sum_effect,
)
from shufflecheck.stats.guessing_bet import TILTS, bet_outcome
from shufflecheck.stats.holm import holm_log
from shufflecheck.stats.nulls import Law
from shufflecheck.stats.positions import class_position_test, position_test
from shufflecheck.stats.results import BatteryResult, Effect, SinceWhen, TestResult
from shufflecheck.stats.timeline import change_interval, change_point, describe

__all__ = ["Tallies", "run_battery"]

_LN10 = math.log(10.0)


@dataclass(frozen=True)
class Tallies:
    """What one set of decks (all decks, or one group) contributes to the tests.

    ``hist[name]`` counts the decks (or consecutive pairs) at each value of a per-deck
    statistic (for a statistic whose law depends on the deck, ``hist[name][key, value]``);
    ``positions[i, c]`` counts the decks with reference card ``c`` at position ``i`` (for
    shoes: with a card of class ``c``, and ``class_counts`` the cards of each class);
    ``series[name]`` holds per-deck values in time order (None when not kept).
    """

    decks: int
    hist: Mapping[str, np.ndarray]
    positions: np.ndarray
    series: Mapping[str, Sequence[np.ndarray]] | None = None
    class_counts: tuple[int, ...] | None = None
    class_names: tuple[str, ...] = ()


#: nominal level of the interval on a since-when start
SINCE_WHEN_LEVEL = 0.95


def run_battery(
    tallies: Tallies,
    statistics: Sequence[Statistic],
    laws: Mapping[str, Law | Mapping[int, Law]],
    *,
    alpha: float,
    position_method: str = "auto",
    resamples: int = 999,
    rng: np.random.Generator,
    since_when: bool = True,
    since_when_level: float = SINCE_WHEN_LEVEL,
) -> BatteryResult:
    """Test every statistic on ``tallies``; Holm at ``alpha``; since when if flagged.

    ``laws[name]`` is the exact per-deck law, or for a statistic with ``law_keys`` a
    mapping from key to law (the sum over decks is then tested against the exact
    convolution of the decks' own laws, :func:`~shufflecheck.stats.nulls.mixed_sum_p_value`).
    """
    cards = tallies.positions.shape[0]
    rows = []
    lows: dict[str, float] = {}  # natural log of the smaller end of a bracketed p-value
    skipped: list[tuple[str, str]] = []
    for stat in statistics:
        if stat.shape == "class-positions":
            assert tallies.class_counts is not None
            test = class_position_test(
                tallies.positions,
                tallies.decks,
                tallies.class_counts,
                method=position_method,
                resamples=resamples,
                rng=rng,
            )
            effect = class_position_effect(
                tallies.positions, tallies.decks, tallies.class_counts, tallies.class_names
            )
            rows.append((stat, test.statistic, test.log_p, test.method, test.detail, effect))
            continue
        if stat.law_keys is not None:
            keyed = laws[stat.name]
            assert isinstance(keyed, Mapping)
            table = tallies.hist[stat.name]
            parts = [
                (keyed[int(k)], int(table[k].sum())) for k in np.flatnonzero(table.sum(axis=1))
            ]
            count = sum(c for _, c in parts)
            if count == 0:
                skipped.append((stat.name, "no shoe with a reference to follow"))
                continue
            if all(law.low == law.high for law, _ in parts):
                skipped.append((stat.name, "constant on these shoes"))
                continue
            values = np.arange(table.shape[1], dtype=np.int64)
            total = int((table @ values).sum())
            log_p = nulls.mixed_sum_p_value(parts, total, stat.alternative)
            detail = (
                f"sum over {count} shoes against the exact convolution of each shoe's own law "
                f"({len(parts)} distinct laws; {stat.alternative})"
            )
            effect = keyed_sum_effect(stat, table, keyed)
            rows.append((stat, float(total), log_p, "exact", detail, effect))
            continue
        if stat.shape == "bet":
            row = _bet_row(stat, tallies.hist[stat.name], tallies.decks)
            if row is None:
                skipped.append((stat.name, "no guesses to test"))
            else:
                rows.append(row)
            continue
        if stat.shape == "positions":
            test = position_test(
                tallies.positions,
                tallies.decks,
                method=position_method,
                resamples=resamples,
                rng=rng,
            )
            effect = position_effect(tallies.positions, tallies.decks)
            rows.append((stat, test.statistic, test.log_p, test.method, test.detail, effect))
            continue
        law = laws[stat.name]
        if isinstance(law, nulls.LawBracket):
            found = _bracket_row(stat, law, tallies.hist[stat.name])
            if found is not None:
                rows.append(found[0])
                lows[stat.name] = found[1]
            continue
        assert isinstance(law, Law)
        hist = tallies.hist[stat.name]
        count = int(hist.sum())
        if count == 0:
            skipped.append((stat.name, "needs two consecutive decks in one group"))
            continue
        if law.low == law.high:
            skipped.append((stat.name, f"constant on decks of {cards} cards"))
            continue
        total = int(np.arange(hist.size, dtype=np.int64) @ hist)
        log_p = nulls.sum_p_value(law, count, total, stat.alternative)
        what = "pairs of consecutive decks" if stat.shape == "consecutive" else "decks"
        detail = (
            f"sum over {count} {what} against the exact {count}-fold convolution of the "
            f"per-deck law ({stat.alternative})"
        )
        rows.append((stat, float(total), log_p, "exact", detail, sum_effect(stat, hist, law)))
    adjusted = holm_log([row[2] for row in rows])
    level = math.log(alpha)
    tests = tuple(
        TestResult(
            name=stat.name,
            title=stat.title,
            statistic=value,
            log10_p_value=log_p / _LN10,
            log10_p_adjusted=float(adj) / _LN10,
            method=method,
            detail=detail,
            alternative=stat.alternative,
            effect=effect,
            flagged=bool(adj <= level),
            log10_p_value_low=None if stat.name not in lows else lows[stat.name] / _LN10,
        )
        for (stat, value, log_p, method, detail, effect), adj in zip(rows, adjusted, strict=True)
    )
    flagged = any(t.flagged for t in tests)
    when = None
    unit = "deck" if tallies.class_counts is None else "shoe"
    if flagged and since_when and tallies.series is not None:
        when = _since_when(tallies.series, tests, statistics, laws, unit, since_when_level)
    return BatteryResult(tallies.decks, alpha, flagged, tests, tuple(skipped), when, unit)


def _bracket_row(
    stat: Statistic, law: nulls.LawBracket, hist: np.ndarray
) -> tuple[tuple, float] | None:
    """The test of a statistic whose law is known to within a bound: the p-values of the
    exact laws stochastically below and above it bracket the true p-value; the larger end
    is the one tested (Holm uses it), so the test stays valid. Returns the row and the
    smaller end's natural log."""
    if stat.alternative == "two-sided":
        raise InputError(f"{stat.name}: a bracketed law supports one-sided tests only")
    count = int(hist.sum())
    if count == 0:
        return None
    total = int(np.arange(hist.size, dtype=np.int64) @ hist)
    ends = [
        nulls.sum_p_value(bound, count, total, stat.alternative)
        for bound in (law.lower_law, law.upper_law)
    ]
    low, high = min(ends), max(ends)
    detail = (
        f"sum over {count} shoes against the {count}-fold convolutions of two exact laws "
        f"below and above the per-shoe law, which is known to within {law.width:.2g} "
        f"({law.method}); p-value between {math.exp(low):.3g} and {math.exp(high):.3g}, the "
        f"larger reported ({stat.alternative})"
    )
    return (stat, float(total), high, "bound", detail, sum_effect(stat, hist, law)), low


def _bet_row(stat: Statistic, table: np.ndarray, decks: int) -> tuple | None:
    """The guessing game as a test martingale (:mod:`shufflecheck.stats.guessing_bet`): its
    p-value ``1/E`` is a bound, reported with method ``bound``."""
    if decks == 0 or not table.any():
        return None
    found = bet_outcome(table)
    extra = (found.right - found.chance) / decks
    se = math.sqrt(found.variance) / decks
    observed, expected = found.right / decks, found.chance / decks
    text = (
        f"{extra:+.3g} correct guesses per shoe beyond the chance of each guess "
        f"({observed:.4g} per shoe vs {expected:.4g} expected from the cards left at each guess)"
    )
    detail = (
        f"test martingale over {found.guesses:,} guesses of {decks:,} shoes: equal bets on "
        f"{len(TILTS)} tilts, e-value {math.exp(min(found.log_e, 700.0)):.3g} (best tilt "
        f"{found.tilt:g}); p-value 1/E, a bound with no null law needed ({stat.alternative})"
    )
    effect = Effect(extra, stat.unit, observed, expected, se, text)
    return (stat, float(found.right), found.log_p, "bound", detail, effect)


def _since_when(
    series: Mapping[str, Sequence[np.ndarray]],
    tests: tuple[TestResult, ...],
    statistics: Sequence[Statistic],
    laws: Mapping[str, Law],
    unit: str = "deck",
    level: float = SINCE_WHEN_LEVEL,
) -> SinceWhen | None:
    candidates = [
        t for t in tests if t.flagged and t.name in series and isinstance(laws[t.name], Law)
    ]
    if not candidates:
        return None
    best = min(candidates, key=lambda t: (t.log10_p_adjusted, t.log10_p_value))
    law = laws[best.name]
    assert isinstance(law, Law)
    values = np.concatenate(series[best.name]).astype(np.int64)
    mean0, var0 = float(law.mean), float(law.variance)
    direction = 1 if best.alternative == "greater" or best.effect.value >= 0 else -1
    point = change_point(values, mean0, var0, direction)
    interval = change_interval(values, mean0, var0, direction, level=level)
    stat = next(s for s in statistics if s.name == best.name)
    text = describe(point, values.size, stat.what, mean0, unit=unit)
    shown = percent(level)
    if interval.low == interval.high:
        text += f"; {shown} interval: {unit} {interval.low + 1:,} alone"
    else:
        text += f"; {shown} interval: {unit}s {interval.low + 1:,} to {interval.high + 1:,}"
    return SinceWhen(
        test=best.name,
        start=point.start + 1,
        decks_after=values.size - point.start,
        mean_before=point.mean_before,
        mean_after=point.mean_after,
        expected=mean0,
        statistic=point.statistic,
        method=(
            "estimate: likelihood-ratio (CUSUM) scan for a lasting mean shift, Gaussian "
            "working model with the exact null mean and variance; interval: the likelihood "
            f"set for the start at about {level} under that model, shift fixed at its estimate"
        ),
        text=text,
        low=interval.low + 1,
        high=interval.high + 1,
        level=level,
        series=tuple(values.tolist()),
    )
