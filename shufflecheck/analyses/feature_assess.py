"""How far from random a procedure leaves what a game sees of a shoe: the feature of the
cards (blackjack values, colours, ...), repeated ``r = 1..R`` times.

The same questions as :func:`shufflecheck.analyses.assess.assess`, on a feature
(:mod:`shufflecheck.records.shoes`): the law of the shoe read through the feature, against
the uniform law of the feature's multiset (every arrangement of the values equally likely).

* **Upper bounds** (rigorous): the distinct-card figures of the procedure (exact for one
  exactly analysed block, the block inequalities otherwise, :mod:`shufflecheck.models.blocks`)
  bound the feature's, since the feature is a function of the arrangement; for a run of
  ideal riffles the feature's own figures of :mod:`shufflecheck.models.features` are used
  where they are smaller (exact separation for a start in value blocks, exact total
  variation for small or two-valued decks in blocks);
* **lower bounds** at a stated confidence (Monte Carlo): the split-sample method of the
  deck assessment on the statistics of the shoe battery that have an exact law under a
  uniform arrangement of the multiset (value runs and successions, the first-appearance
  order, the zone of the reference segment, the guessing game where its law is within
  reach), each read from the shoe's reference order; Bonferroni over them, Clopper-Pearson
  for each event ([1]); separation at least total variation, KL at least
  ``2 TV^2 / ln 2`` bits (Pinsker, [2]);
* **estimates of the exact total variation** (Monte Carlo, certifying nothing) for runs of
  ideal riffles where each word's exact chance is known (a start in three or more blocks or
  an alternating two-valued start, :mod:`shufflecheck.models.features`), from uniformly
  random words; they stop after the first below
  :data:`~shufflecheck.models.features.ESTIMATE_FLOOR`;
* **exploitability** (an estimate): correct guesses per shoe of a player who names a most
  frequent remaining value, against the exact mean for a random shoe
  (:func:`~shufflecheck.stats.shoe_nulls.greedy_guessing_mean`, [3]).

References
----------
.. [1] C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial limits
       illustrated in the case of the binomial", Biometrika 26 (1934) 404-413.
.. [2] T. M. Cover and J. A. Thomas, *Elements of Information Theory*, 2nd ed., Wiley,
       2006, Lemma 11.6.1.
.. [3] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from shufflecheck.analyses.assess import (
    MAX_DECKS,
    MAX_REPEATS,
    Assessment,
    AssessmentRow,
    StatisticBound,
    rigorous_upper_bounds,
)
from shufflecheck.common.checks import check_confidence, check_integer
from shufflecheck.common.distributions import clopper_pearson_lower, normal_quantile
from shufflecheck.common.numbers import percent
from shufflecheck.common.quantity import Quantity
from shufflecheck.core.distances import DistanceRow
from shufflecheck.models import features
from shufflecheck.models.blocks import procedure_blocks
from shufflecheck.models.permute import CHUNK_DECKS, identity_decks
from shufflecheck.models.procedures import Procedure
from shufflecheck.models.riffle import Riffle
from shufflecheck.records.shoes import ShoeDefinition
from shufflecheck.stats.catalogue import DeckContext, DeckView, ShoeContext, lower_bound_statistics
from shufflecheck.stats.shoe_nulls import greedy_guessing_mean
from shufflecheck.stats.shoe_statistics import greedy_scores

__all__ = ["GREEDY", "assess_feature", "feature_work"]

#: the guessing strategy of a feature assessment
GREEDY = "most-frequent"
_METRICS = ("total_variation", "separation", "kl_bits")


def _halves(decks: int) -> tuple[int, int]:
    first = (decks + 1) // 2
    return first, decks - first


def feature_work(decks: int, repeats: int) -> int:
    """Progress units of :func:`assess_feature` (one per chunk of shoes and repetition)."""
    return sum(-(-half // CHUNK_DECKS) for half in _halves(decks)) * repeats


def _riffle_packets(procedure: Procedure, repeats: int) -> int | None:
    """``a`` when ``repeats`` runs of the procedure are ideal riffles only (one
    ``a``-shuffle), else None."""
    steps = procedure.expanded(repeats)
    if not steps or not all(isinstance(s, Riffle) for s in steps):
        return None
    return math.prod(s.hands for s in steps)


def assess_feature(
    procedure: Procedure,
    shoe: ShoeDefinition,
    feature: str,
    *,
    repeats: int = 10,
    decks: int = 100_000,
    rng: np.random.Generator | int | None = None,
    confidence: float = 0.99,
    progress: Callable[[int], None] | None = None,
) -> Assessment:
    """Assess ``procedure`` on ``shoe`` read through ``feature`` for ``r = 1..repeats``.

    Parameters
    ----------
    procedure : Procedure
        The shoe procedure.
    shoe : ShoeDefinition
        The shoe; its reference order is the starting order of every simulated shoe.
    feature : str
        What the game sees (:data:`shufflecheck.records.shoes.FEATURES`; ``distinct`` is
        the deck assessment itself).
    repeats, decks, rng, confidence, progress
        As for :func:`shufflecheck.analyses.assess.assess` (``decks`` simulated shoes).
    """
    check_integer(repeats, "repeats", low=1, high=MAX_REPEATS)
    check_integer(decks, "decks", low=2, high=MAX_DECKS)
    check_confidence(confidence)
    n = shoe.size
    procedure.check_cards(n)
    context_shoe = ShoeContext.of(shoe, feature)
    context = DeckContext.checked(n, shoe=context_shoe)
    kinds = shoe.physical_kinds()
    start = kinds[None, :]
    # a feature that merges codes (values, colours) gets lower bounds only from statistics
    # of its own word; statistics of the codes bound the codes' distance, which is larger
    of_kind = shoe.feature(feature).of_kind
    merges = of_kind is not None and len(set(of_kind)) < len(of_kind)
    statistics = lower_bound_statistics(context, word_only=merges)
    reference_view = DeckView(start, start, context, reference=start)
    laws = []
    for stat in statistics:
        if stat.law_keys is not None:
            assert stat.keyed_law is not None
            laws.append(stat.keyed_law(context, int(stat.law_keys(reference_view)[0])))
        else:
            assert stat.law is not None
            laws.append(stat.law(context))
    width = max(law.high for law in laws) + 1 if laws else 1
    hist = np.zeros((repeats, len(statistics), 2, width), dtype=np.int64)
    class_counts = np.asarray(context_shoe.class_counts)
    classes = context_shoe.class_array()
    guess_sums = np.zeros((repeats, 2, 2))
    generator = np.random.default_rng(rng)
    halves = np.zeros(2, dtype=np.int64)
    done = 0
    for half, size in enumerate(_halves(decks)):
        for lo in range(0, size, CHUNK_DECKS):
            count = min(size, lo + CHUNK_DECKS) - lo
            halves[half] += count
            current = identity_decks(count, n)
            refs = np.broadcast_to(kinds, (count, n))
            for r in range(repeats):
                current = procedure.apply(current, generator)
                words = kinds[current]
                view = DeckView(words, words, context, reference=refs)
                for s, stat in enumerate(statistics):
                    assert stat.values is not None
                    hist[r, s, half] += np.bincount(stat.values(view), minlength=width)
                scores = greedy_scores(words, classes, class_counts).astype(np.float64)
                guess_sums[r, half] += (scores.sum(), (scores * scores).sum())
                done += 1
                if progress is not None:
                    progress(done)
    null_mean = float(greedy_guessing_mean(context_shoe.class_counts))
    start_classes = shoe.feature_classes(feature)
    own_rows = _own_rows(
        procedure, feature, start_classes, repeats, rng if isinstance(rng, int) else 0
    )
    rows = tuple(
        _row(
            procedure,
            shoe,
            feature,
            r,
            hist,
            laws,
            statistics,
            guess_sums,
            halves,
            null_mean,
            confidence,
            own_rows[r],
        )
        for r in range(repeats)
    )
    feat = shoe.feature(feature)
    notes = (
        f"Distances on the feature '{feature}' ({feat.title}) of {shoe.describe()}: upper "
        "bounds from the distinct cards (a feature is never farther) or the feature's own "
        "figures for ideal riffles; lower bounds from the statistics of the feature's word "
        "with exact laws, read from the shoe's reference order, or the feature's own sure "
        "figures for ideal riffles.",
    )
    seed = rng if isinstance(rng, int) else None
    return Assessment(
        procedure.describe(),
        procedure.name,
        n,
        decks,
        seed,
        confidence,
        rows,
        notes,
        feature=feature,
        deck=shoe.describe(),
    )


def _own_rows(
    procedure: Procedure, feature: str, start_classes: np.ndarray, repeats: int, seed: int
) -> list[features.FeatureDistances | None]:
    """The feature's own riffle distances (:func:`features.feature_distances`) for each
    ``r`` whose runs are ideal riffles only, None elsewhere; with a Monte Carlo estimate of
    the exact total variation (``seed``) where the start takes one, up to the first below
    :data:`features.ESTIMATE_FLOOR`."""
    out: list[features.FeatureDistances | None] = []
    samples = features.ESTIMATE_SAMPLES
    for r in range(repeats):
        packets = _riffle_packets(procedure, r + 1)
        if feature == "distinct" or packets is None:
            out.append(None)
            continue
        row = features.feature_distances(
            start_classes.tolist(), 1, hands=packets, samples=samples, seed=seed
        )
        found = row.total_variation_estimate
        if found is not None and found.value < features.ESTIMATE_FLOOR:
            samples = 0
        out.append(row)
    return out


def _row(
    procedure,
    shoe,
    feature,
    r,
    hist,
    laws,
    statistics,
    guess_sums,
    halves,
    null_mean,
    confidence,
    own: features.FeatureDistances | None = None,
) -> AssessmentRow:
    chosen, measured = (int(h) for h in halves)
    n = shoe.size
    z = normal_quantile(0.5 + confidence / 2)
    # upper bounds: the distinct cards, then the feature's own riffle figures
    split = procedure_blocks(procedure, r + 1, n)
    upper: dict[str, Quantity] = {}
    distinct = "distinct-card figure (a feature is never farther)"
    if split.whole is not None:
        for metric in _METRICS:
            value = split.whole.value(metric)
            if value is not None:
                upper[metric] = Quantity(
                    value,
                    "bound",
                    side="upper",
                    unit="bits" if metric == "kl_bits" else "",
                    method=f"{distinct}: exact for {split.whole.note or 'the whole procedure'}",
                )
    else:
        for metric, q in rigorous_upper_bounds(split).items():
            if metric in _METRICS:
                upper[metric] = Quantity(
                    q.value,
                    "bound",
                    side="upper",
                    unit=q.unit,
                    method=f"{distinct}: {q.method}",
                )
    exact: DistanceRow | None = None
    sure_low: Quantity | None = None  # a rigorous lower bound of the feature's own riffle law
    sure_separation: Quantity | None = None  # the feature's exact separation, where known
    if own is not None:  # ideal riffles only: the feature's own figures
        values = {m: own.value(m) for m in _METRICS}
        if all(q.kind == "exact" for q in values.values()):
            exact = DistanceRow(
                r + 1,
                values["total_variation"].value,
                values["separation"].value,
                values["kl_bits"].value,
                "exact",
                values["total_variation"].method,
            )
            upper = {}
        else:
            sure_low = own.total_variation_lower
            if values["separation"].kind == "exact":
                sure_separation = values["separation"]
            for metric, q in values.items():
                held = upper.get(metric)
                if held is None or q.value < held.value:
                    upper[metric] = Quantity(
                        q.value,
                        "bound",
                        side="upper",
                        unit=q.unit,
                        method=f"feature '{feature}': {q.method}",
                    )
    # lower bounds: split sample, Bonferroni over the statistics
    alpha_each = (1 - confidence) / max(len(statistics), 1)
    bounds = []
    for s, (stat, law) in enumerate(zip(statistics, laws, strict=True)):
        pmf = np.zeros(hist.shape[-1])
        pmf[law.offset : law.offset + len(law.counts)] = law.pmf
        first = hist[r, s, 0] / max(chosen, 1)
        event = first > pmf
        successes = int(hist[r, s, 1][event].sum())
        uniform = float(pmf[event].sum())
        low = clopper_pearson_lower(successes, measured, alpha_each)
        bounds.append(
            StatisticBound(
                stat.name, stat.title, max(0.0, low - uniform), uniform, successes, measured
            )
        )
    top = max(bounds, key=lambda b: b.lower_bound) if bounds else None
    tv_low = top.lower_bound if top is not None else 0.0
    note = (
        f"lower {percent(confidence)} confidence bound from {top.title if top else 'no statistic'} "
        f"(feature '{feature}', split sample of {chosen + measured:,} shoes)"
    )
    tv_lower = Quantity(tv_low, "bound", side="lower", confidence=confidence, method=note)
    if sure_low is not None and sure_low.value >= tv_low:  # sure, and at least as high
        tv_low, note = sure_low.value, f"feature '{feature}': {sure_low.method}"
        tv_lower = Quantity(tv_low, "bound", side="lower", method=note)
    sure = {} if tv_lower.confidence is None else {"confidence": confidence}
    lower = {
        "total_variation": tv_lower,
        "separation": Quantity(
            tv_low, "bound", side="lower", method=f"separation >= TV; {note}", **sure
        ),
        "kl_bits": Quantity(
            2 * tv_low**2 / math.log(2),
            "bound",
            side="lower",
            method=f"Pinsker's inequality, KL >= 2 TV^2 / ln 2; {note}",
            **sure,
            unit="bits",
        ),
    }

    if sure_separation is not None and sure_separation.value > lower["separation"].value:
        lower["separation"] = Quantity(
            sure_separation.value,
            "bound",
            side="lower",
            method=f"feature '{feature}': {sure_separation.method}",
        )

    def interval(total: float, squares: float, count: int) -> tuple[float, float, float]:
        mean = total / count
        variance = max(squares / count - mean * mean, 0.0) * count / max(count - 1, 1)
        se = math.sqrt(variance / count)
        return mean, se, z * se

    mean0, se0, hw0 = interval(*guess_sums[r, 0], chosen)
    mean1, se1, hw1 = interval(*guess_sums[r, 1], measured)
    guessing = {
        GREEDY: Quantity(
            mean0,
            "estimate",
            confidence=confidence,
            interval=(mean0 - hw0, mean0 + hw0),
            stderr=se0,
            method=f"Monte Carlo, the {chosen:,} shoes of the first half",
        )
    }
    extra = Quantity(
        mean1 - null_mean,
        "estimate",
        confidence=confidence,
        interval=(mean1 - null_mean - hw1, mean1 - null_mean + hw1),
        stderr=se1,
        method=f"naming a most frequent remaining value, measured on {measured:,} shoes "
        "against the exact mean for a random shoe",
    )
    return AssessmentRow(
        repeats=r + 1,
        exact=exact,
        upper=upper,
        upper_blocks=tuple(block.label for block in split.blocks),
        lower=lower,
        lower_by_statistic=tuple(bounds),
        guessing=guessing,
        best_strategy=GREEDY,
        extra_guesses=extra,
        uniform_guesses=null_mean,
        estimated=(
            {}
            if own is None or own.total_variation_estimate is None
            else {"total_variation": own.total_variation_estimate}
        ),
    )
