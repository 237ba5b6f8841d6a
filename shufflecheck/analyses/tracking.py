"""Tracking exposure: how far a segment of the discards (a *slug*) can be followed through an
imperfect shoe shuffle, in plain units.

A player who has seen a run of cards rich in tens (say) go into the discards wants to know
where those cards come out in the next shoe. For a procedure (simulated) or for recorded
shoes (before and after), the slug is the cards at reference positions
``start .. start + length - 1`` (1-based, top first) and the figures are:

* **spread**: per shoe, the smallest span of positions holding ``coverage`` (default 90%)
  of the slug's cards, against the same for a uniformly shuffled shoe;
* **window**: the chance that a window of ``window`` cards holds at least ``at_least`` of
  the slug's cards, where the window is placed

  - ``watched``: around where this shoe's slug went in (centred on the median position of
    its cards), as an observer who saw the slug go into the new shoe would place it;
  - ``fixed``: at the one position that works best for this procedure (chosen on half of
    the simulated shoes, measured on the other half, so the choice does not flatter it),

  against a uniform shoe (exact for a fixed window: hypergeometric; Monte Carlo for the
  watched rule, which looks at the shoe);
* from **recorded shoes**, where copies of a card cannot be told apart, the slug is the
  *multiset* of card codes at those reference positions and a window's catch is its overlap
  with that multiset (matching copies alike), compared with the same shoes reshuffled
  uniformly (a permutation reference, Monte Carlo).

Only dealt cards count: the window is placed among the positions the procedure deals
(burned cards and the cards behind the cut card are never seen,
:func:`shufflecheck.models.dealing.dealt_window`). Every figure is an estimate with its
interval (Clopper-Pearson for chances [1]_, normal for means) unless labelled exact. The
figures describe the modelled procedure or the recorded sample, not a particular dealer;
approval of dealing procedures belongs to the local regulator and accredited laboratories.

References
----------
.. [1] C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial limits
       illustrated in the case of the binomial", Biometrika 26 (1934) 404-413.
.. [2] J. I. Naus, "The distribution of the size of the maximum cluster of points on a
       line", J. Amer. Statist. Assoc. 60 (1965) 532-538 (scan statistics: the largest count
       of random points in a moving window).
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from shufflecheck.common.cautions import caution
from shufflecheck.common.checks import check_confidence, check_fraction, check_integer
from shufflecheck.common.distributions import (
    clopper_pearson,
    hypergeometric_pmf,
    hypergeometric_sf,
    normal_quantile,
)
from shufflecheck.common.errors import InputError
from shufflecheck.common.numbers import percent
from shufflecheck.common.quantity import Quantity
from shufflecheck.models.dealing import dealt_window
from shufflecheck.models.permute import CHUNK_DECKS, identity_decks
from shufflecheck.models.procedures import Procedure
from shufflecheck.records.shoes import ShoeDefinition

__all__ = [
    "CAUTION",
    "TrackingExposure",
    "chance_text",
    "recorded_exposure",
    "tracking_exposure",
    "tracking_json",
]

CAUTION = caution("the modelled procedure and the recorded shoes")
PLACEMENTS = ("watched", "fixed")


@dataclass(frozen=True)
class TrackingExposure:
    """Tracking figures for one slug, each a labelled number (see the module docstring)."""

    source: str  # the procedure text, or the log
    cards: int
    shoes: int
    slug: tuple[int, int]  # (start, length), start 1-based
    dealt: tuple[int, int]  # (first, stop), 0-based positions first .. stop - 1
    window: int
    at_least: int
    coverage: float
    confidence: float
    placement: str
    spread: Quantity
    spread_random: Quantity
    slug_dealt: Quantity
    chance: Quantity
    chance_random: Quantity
    best_start: int | None
    mean_caught: Quantity
    mean_caught_random: Quantity
    method: str
    notes: tuple[str, ...] = field(default_factory=tuple)
    #: per measured shoe, the slug cards caught by the window (for figures)
    caught: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64), compare=False)
    #: the catch's law in a random shoe (exact or simulated, as ``chance_random`` says)
    random_pmf: np.ndarray = field(default_factory=lambda: np.zeros(0), compare=False)

    def sentence(self) -> str:
        """What a tracker could do, in one sentence of plain units."""
        spread = (
            f"{percent(self.coverage)} of the slug lies within {self.spread.value:.0f} cards on "
            f"average, against {self.spread_random.value:.0f} in a random shoe"
        )
        if self.placement == "best":
            return (
                f"In the recorded shoes the best window of {self.window} cards held on average "
                f"{self.mean_caught.value:.1f} cards matching the slug's {self.slug[1]} codes "
                f"(copies alike), against {self.mean_caught_random.value:.1f} when the same "
                f"shoes are reshuffled at random; {spread}."
            )
        if self.placement == "watched":
            who = f"who saw where the slug went in and follows the {self.window} cards around it"
        else:
            last = (self.best_start or 1) + self.window - 1
            who = f"who always follows positions {self.best_start}-{last}"
        return (
            f"A tracker {who} catches at least {self.at_least} of the slug's {self.slug[1]} "
            f"cards in {_chance(self.chance)} of shoes ({self.chance.label_text}), "
            f"against {_chance(self.chance_random)} in a randomly shuffled shoe "
            f"({self.chance_random.label_text}); {spread}."
        )


def chance_text(p: float, upper: float | None = None) -> str:
    """A chance for people: ``37.4%``, ``0.31%``, ``1 in 12,000``; an estimate of 0 is said
    through the upper end of its interval (``fewer than 1 in 1,350``)."""
    if p <= 0:
        if upper is None or upper <= 0:
            return "none"
        return f"fewer than {chance_text(upper)}"
    if p >= 0.01:
        return f"{p:.1%}"
    if p >= 0.001:
        return f"{p:.2%}"
    odds = 1 / p
    return f"1 in {round(odds):,}" if odds < 1e7 else f"1 in {odds:.2g}"


def _chance(q: Quantity) -> str:
    upper = q.interval[1] if q.interval is not None else None
    return chance_text(float(q.value), upper)


def _check_slug(cards: int, slug: tuple[int, int]) -> tuple[int, int]:
    start, length = (int(x) for x in slug)
    if not 1 <= start or length < 1 or start - 1 + length > cards:
        raise InputError(
            f"slug {start}:{length} does not fit a shoe of {cards} cards (start 1..{cards})",
            argument="slug",
        )
    return start, length


def _spans(member: np.ndarray, keep: int) -> np.ndarray:
    """Per row, the smallest span of positions holding ``keep`` of the marked positions."""
    count, n = member.shape
    positions = np.sort(np.where(member, np.arange(n), n + np.arange(n)), axis=1)
    marked = member.sum(axis=1)
    out = np.full(count, n, dtype=np.int64)
    for row_marked in np.unique(marked):
        rows = np.flatnonzero(marked == row_marked)
        k = min(keep, int(row_marked))
        if k < 1:
            out[rows] = 0
            continue
        p = positions[rows, : int(row_marked)]
        widths = p[:, k - 1 :] - p[:, : p.shape[1] - k + 1] + 1
        out[rows] = widths.min(axis=1)
    return out


def _window_counts(member: np.ndarray, window: int, first: int, stop: int) -> np.ndarray:
    """``counts[d, s]``: marked cards at positions ``first + s .. first + s + window - 1``."""
    part = member[:, first:stop].astype(np.int32)
    cum = np.concatenate([np.zeros((part.shape[0], 1), np.int32), np.cumsum(part, axis=1)], 1)
    return cum[:, window:] - cum[:, :-window]


def _watched(member: np.ndarray, window: int, first: int, stop: int) -> np.ndarray:
    """Slug cards in a window centred on the median position of the dealt slug cards."""
    count = member.shape[0]
    counts = _window_counts(member, window, first, stop)
    dealt = member[:, first:stop]
    cum = np.cumsum(dealt, axis=1)
    total = cum[:, -1]
    median = np.argmax(cum >= np.maximum((total + 1) // 2, 1)[:, None], axis=1)
    starts = np.clip(median - window // 2, 0, counts.shape[1] - 1)
    out = counts[np.arange(count), starts]
    return np.where(total > 0, out, 0)


def _proportion(successes: int, trials: int, confidence: float, method: str) -> Quantity:
    return Quantity(
        successes / trials,
        "estimate",
        interval=clopper_pearson(successes, trials, confidence),
        confidence=confidence,
        method=f"{method}; Clopper-Pearson interval",
    )


def _mean(values: np.ndarray, confidence: float, method: str, unit: str = "cards") -> Quantity:
    mean = float(values.mean())
    se = float(values.std(ddof=1) / math.sqrt(values.size)) if values.size > 1 else 0.0
    z = normal_quantile(0.5 + confidence / 2)
    return Quantity(
        mean,
        "estimate",
        stderr=se,
        interval=(mean - z * se, mean + z * se),
        confidence=confidence,
        unit=unit,
        method=method,
    )


def _random_members(rng: np.random.Generator, count: int, n: int, length: int) -> np.ndarray:
    member = np.zeros((count, n), dtype=bool)
    chosen = np.argsort(rng.random((count, n)), axis=1)[:, :length]
    member[np.arange(count)[:, None], chosen] = True
    return member


def _check_common(window: int, at_least: int, coverage: float, confidence: float, dealt: int):
    check_integer(window, "window", low=1, high=dealt, why=f"{dealt} cards are dealt")
    check_integer(at_least, "at_least", low=1, high=window)
    check_fraction(coverage, "coverage", closed_high=True)
    check_confidence(confidence)


def tracking_exposure(
    procedure: Procedure,
    cards: int,
    *,
    slug: tuple[int, int] = (1, 52),
    window: int = 52,
    at_least: int = 26,
    placement: str = "watched",
    coverage: float = 0.9,
    shoes: int = 20_000,
    confidence: float = 0.95,
    rng: np.random.Generator | int | None = None,
    progress: Callable[[int], None] | None = None,
) -> TrackingExposure:
    """Tracking exposure of a procedure on a shoe of ``cards`` cards (simulated).

    Parameters
    ----------
    procedure : Procedure
        The shuffle (its cut card and burned cards decide the dealt positions).
    cards : int
        Cards in the shoe (312 for six packs; copies are told apart in a simulation).
    slug : (start, length)
        Reference positions of the slug, ``start`` 1-based (default the top 52 cards of the
        discards as picked up).
    window, at_least : int
        The observer's window (cards) and the catch that counts (slug cards in it).
    placement : {"watched", "fixed"}
        Where the window goes (module docstring).
    coverage : float
        Share of the slug the spread figure covers (default 0.9).
    shoes : int
        Simulated shoes (split in halves for the ``fixed`` placement).
    confidence : float
        Level of every interval.
    rng : Generator, int or None
        Seed or generator; everything is reproducible from it.
    progress : callable, optional
        Called with the number of shoes simulated so far.
    """
    if placement not in PLACEMENTS:
        raise InputError(
            f"placement must be watched or fixed, got {placement!r}", argument="placement"
        )
    check_integer(shoes, "shoes", low=100, high=10_000_000)
    procedure.check_cards(cards)
    start, length = _check_slug(cards, slug)
    first, stop = dealt_window(procedure.expanded(), cards)
    _check_common(window, at_least, coverage, confidence, stop - first)
    generator = np.random.default_rng(rng)
    keep = max(1, math.ceil(coverage * length))
    spans, caught, dealt_slug, window_counts = [], [], [], []
    done = 0
    for lo in range(0, shoes, CHUNK_DECKS):
        count = min(CHUNK_DECKS, shoes - lo)
        after = procedure.apply(identity_decks(count, cards), generator)
        member = (after >= start - 1) & (after < start - 1 + length)
        spans.append(_spans(member, keep))
        dealt_slug.append(member[:, first:stop].sum(axis=1))
        if placement == "watched":
            caught.append(_watched(member, window, first, stop))
        else:
            window_counts.append(_window_counts(member, window, first, stop))
        done += count
        if progress is not None:
            progress(done)
    span = np.concatenate(spans)
    how = f"Monte Carlo, {shoes:,} simulated shoes"
    notes = []
    best_start = None
    if placement == "watched":
        got = np.concatenate(caught)
        measured = got
        random_member = _random_members(generator, min(shoes, 200_000), cards, length)
        random_got = _watched(random_member, window, first, stop)
        chance_random = _proportion(
            int((random_got >= at_least).sum()),
            random_got.size,
            confidence,
            f"Monte Carlo, {random_got.size:,} uniform shoes, the same placement rule",
        )
        mean_random = _mean(random_got.astype(float), confidence, "Monte Carlo, uniform shoes")
        random_pmf = np.bincount(random_got, minlength=window + 1) / random_got.size
    else:
        table = np.concatenate(window_counts)
        half = np.arange(table.shape[0]) % 2
        choose = (table[half == 0] >= at_least).mean(axis=0)
        best = int(np.argmax(choose))
        best_start = first + best + 1
        measured = table[half == 1, best]
        how = f"{how}: window chosen on {int((half == 0).sum()):,}, measured on {measured.size:,}"
        chance_random = Quantity(
            hypergeometric_sf(at_least - 1, cards, length, window),
            "exact",
            method="hypergeometric: a fixed window of a uniform shoe",
        )
        mean_random = Quantity(
            window * length / cards, "exact", unit="cards", method="hypergeometric mean"
        )
        random_pmf = hypergeometric_pmf(np.arange(window + 1), cards, length, window)
        notes.append(f"the best fixed window starts at position {best_start} (1 = top)")
    chance = _proportion(int((measured >= at_least).sum()), measured.size, confidence, how)
    random_span = _spans(_random_members(generator, min(shoes, 200_000), cards, length), keep)
    if stop - first < cards:
        notes.append(
            f"only positions {first + 1}..{stop} are dealt (burned cards and the cut card); "
            "slug cards outside them are never seen"
        )
    return TrackingExposure(
        source=procedure.describe(),
        cards=cards,
        shoes=shoes,
        slug=(start, length),
        dealt=(first, stop),
        window=window,
        at_least=at_least,
        coverage=coverage,
        confidence=confidence,
        placement=placement,
        spread=_mean(span.astype(float), confidence, how),
        spread_random=_mean(
            random_span.astype(float),
            confidence,
            f"Monte Carlo, {random_span.size:,} uniform shoes",
        ),
        slug_dealt=_mean(np.concatenate(dealt_slug).astype(float), confidence, how),
        chance=chance,
        chance_random=chance_random,
        best_start=best_start,
        mean_caught=_mean(measured.astype(float), confidence, how),
        mean_caught_random=mean_random,
        method=how,
        notes=tuple(notes),
        caught=measured.astype(np.int64),
        random_pmf=np.asarray(random_pmf, dtype=float),
    )


def _overlaps(after: np.ndarray, segment_counts: np.ndarray, kinds: int, window: int) -> np.ndarray:
    """Per shoe and window start: cards of the window matched to the slug's multiset."""
    count, n = after.shape
    starts = n - window + 1
    out = np.zeros((count, starts), dtype=np.int32)
    rows = np.arange(count)
    inside = np.zeros((count, kinds), dtype=np.int32)
    for i in range(window):
        inside[rows, after[:, i]] += 1
    out[:, 0] = np.minimum(inside, segment_counts).sum(axis=1)
    for s in range(1, starts):
        leave, enter = after[:, s - 1], after[:, s + window - 1]
        before_l = np.minimum(inside[rows, leave], segment_counts[rows, leave])
        inside[rows, leave] -= 1
        delta = np.minimum(inside[rows, leave], segment_counts[rows, leave]) - before_l
        before_e = np.minimum(inside[rows, enter], segment_counts[rows, enter])
        inside[rows, enter] += 1
        delta += np.minimum(inside[rows, enter], segment_counts[rows, enter]) - before_e
        out[:, s] = out[:, s - 1] + delta
    return out


def recorded_exposure(
    path: str | os.PathLike[str],
    shoe: ShoeDefinition,
    *,
    slug: tuple[int, int] = (1, 52),
    window: int = 52,
    at_least: int = 26,
    coverage: float = 0.9,
    confidence: float = 0.95,
    reshuffles: int = 5,
    fmt: str | None = None,
    by: str | None = None,
    rng: np.random.Generator | int | None = 0,
) -> TrackingExposure:
    """Tracking exposure seen in a log of recorded shoes: each shoe against the shoe before
    it (its discards). Copies are alike, so a window's catch is its overlap with the slug's
    multiset of codes; the baseline reshuffles each recorded shoe uniformly ``reshuffles``
    times. The window is placed where it catches most in each shoe (an upper figure: an
    observer does not know the best place in advance), and the spread figure is the
    smallest span of positions whose overlap reaches ``coverage`` of the slug."""
    from shufflecheck.records.logs import Reference, read_log

    n = shoe.size
    start, length = _check_slug(n, slug)
    _check_common(window, at_least, coverage, confidence, n)
    check_integer(reshuffles, "reshuffles", low=1, high=1000)
    generator = np.random.default_rng(rng)
    reader = read_log(path, deck=shoe, fmt=fmt or "auto")
    stream = Reference.parse("previous", shoe).stream(by=by, words=True)
    kinds = shoe.kind_count
    keep = max(1, math.ceil(coverage * length))
    best, best_random, spans, spans_random = [], [], [], []
    for chunk in reader:
        rel = stream.relative(chunk)
        if not len(rel):
            continue
        after = rel.relative.astype(np.int64)
        assert rel.reference is not None
        segment = rel.reference[:, start - 1 : start - 1 + length].astype(np.int64)
        counts = np.zeros((after.shape[0], kinds), dtype=np.int32)
        np.add.at(counts, (np.arange(after.shape[0])[:, None], segment), 1)
        table = _overlaps(after, counts, kinds, window)
        best.append(table.max(axis=1))
        spans.append(_overlap_spans(after, counts, keep))
        for _ in range(reshuffles):
            shuffled = np.take_along_axis(
                after, np.argsort(generator.random(after.shape), axis=1), 1
            )
            best_random.append(_overlaps(shuffled, counts, kinds, window).max(axis=1))
            spans_random.append(_overlap_spans(shuffled, counts, keep))
    if not best:
        raise InputError(f"{path}: no pair of consecutive shoes to follow a slug through")
    caught = np.concatenate(best)
    caught_random = np.concatenate(best_random)
    pairs = caught.size
    how = f"{pairs:,} recorded pairs of consecutive shoes, copies matched alike"
    base = f"the same shoes reshuffled uniformly {reshuffles} times each (Monte Carlo)"
    return TrackingExposure(
        source=os.fspath(path),
        cards=n,
        shoes=pairs,
        slug=(start, length),
        dealt=(0, n),
        window=window,
        at_least=at_least,
        coverage=coverage,
        confidence=confidence,
        placement="best",
        spread=_mean(np.concatenate(spans).astype(float), confidence, how),
        spread_random=_mean(np.concatenate(spans_random).astype(float), confidence, base),
        slug_dealt=Quantity(length, "exact", unit="cards", method="the whole shoe is recorded"),
        chance=_proportion(int((caught >= at_least).sum()), pairs, confidence, how),
        chance_random=_proportion(
            int((caught_random >= at_least).sum()), caught_random.size, confidence, base
        ),
        best_start=None,
        mean_caught=_mean(caught.astype(float), confidence, how),
        mean_caught_random=_mean(caught_random.astype(float), confidence, base),
        method=how,
        notes=(
            "copies of a card cannot be told apart in a log: a window's catch counts every "
            "card matching a code of the slug (up to the slug's copies), so a random shoe "
            "catches many by chance; compare with the reshuffled figure",
            "the window is placed where it catches most in each shoe, which no observer "
            "knows in advance: an upper figure for what tracking could gain",
        ),
        caught=caught.astype(np.int64),
        random_pmf=np.bincount(caught_random, minlength=window + 1) / caught_random.size,
    )


def _overlap_spans(after: np.ndarray, segment_counts: np.ndarray, keep: int) -> np.ndarray:
    """Smallest span of consecutive positions whose overlap with the slug's multiset reaches
    ``keep`` cards (``n`` when none does): two pointers per shoe, all shoes at once."""
    count, n = after.shape
    rows = np.arange(count)
    inside = np.zeros(segment_counts.shape, dtype=np.int32)
    left = np.zeros(count, dtype=np.int64)
    right = np.zeros(count, dtype=np.int64)  # window is left .. right - 1
    overlap = np.zeros(count, dtype=np.int64)
    best = np.full(count, n, dtype=np.int64)
    for _ in range(2 * n + 1):
        grow = (overlap < keep) & (right < n)
        shrink = overlap >= keep
        if not (grow.any() or shrink.any()):
            break
        best = np.where(shrink, np.minimum(best, right - left), best)
        g = rows[grow]
        card = after[g, right[g]]
        overlap[g] += inside[g, card] < segment_counts[g, card]
        inside[g, card] += 1
        right[g] += 1
        s = rows[shrink]
        card = after[s, left[s]]
        inside[s, card] -= 1
        overlap[s] -= inside[s, card] < segment_counts[s, card]
        left[s] += 1
    return best


def tracking_json(result: TrackingExposure) -> dict[str, Any]:
    """The JSON form of :class:`TrackingExposure` (``shufflecheck track --json``)."""
    return {
        "source": result.source,
        "cards": result.cards,
        "shoes": result.shoes,
        "slug": {"start": result.slug[0], "cards": result.slug[1]},
        "dealt_positions": {"first": result.dealt[0] + 1, "last": result.dealt[1]},
        "window": result.window,
        "at_least": result.at_least,
        "placement": result.placement,
        "best_window_start": result.best_start,
        "coverage": result.coverage,
        "confidence": result.confidence,
        "spread_cards": result.spread.as_json(),
        "spread_cards_random": result.spread_random.as_json(),
        "slug_cards_dealt": result.slug_dealt.as_json(),
        "chance_at_least": result.chance.as_json(),
        "chance_at_least_random": result.chance_random.as_json(),
        "mean_caught": result.mean_caught.as_json(),
        "mean_caught_random": result.mean_caught_random.as_json(),
        "method": result.method,
        "sentence": result.sentence(),
        "notes": list(result.notes),
        "caution": CAUTION,
    }
