"""How far from random a dealing procedure leaves the deck, repeated ``r = 1..R`` times.

For every repetition count the assessment gives, each number labelled:

* ``exact`` — when the whole repeated procedure is one exactly analysed model (a run of
  ideal riffles, random transpositions, top-to-random moves, cuts, shelf passes, ...),
  possibly with fixed rearrangements (pile deals) at either end, which change no distance;
* an upper ``bound`` — from the exactly analysed blocks inside it
  (:mod:`shufflecheck.models.blocks`) through the block inequalities of
  :mod:`shufflecheck.core.block_bounds`: with ``U`` uniform and independent blocks,
  ``B_1 * X * B_2 - U = (B_1 - U) * X * (B_2 - U)``, so every block either is absorbed
  (factor 1) or contributes its deviation (``2 TV``, its separation, or its chi-square
  distance through Young's and the Cauchy-Schwarz inequality); a further step never
  increases total variation or KL, and separation is submultiplicative ([1]);
* a ``conjectured`` upper bound — from the interleaving conjecture for separation
  (:mod:`shufflecheck.models.interleaving`), shown beside the rigorous numbers under its own
  label and never used to certify;
* a lower ``bound`` at a stated confidence, from Monte Carlo: the distance between the law
  of a statistic of the deck and its exact law under a uniform deck is a lower bound on the
  deck's total variation. The decks are simulated in two halves. On the first, each
  statistic's event is chosen (values the statistic takes more often than under uniform),
  one member of each family of alternatives is picked (guessing strategies, short-rise
  widths), and a likelihood-ratio score of the sequential ranks is fitted
  (:mod:`shufflecheck.stats.ranks`); on the second, each event's probability is bounded
  below with the exact Clopper–Pearson bound, Bonferroni-corrected over the statistics, so
  the bound is valid at the stated confidence ([2]). The event's uniform probability is
  exact (or, for the fitted score, a rigorous upper bound). Separation is at least TV, and
  KL (bits) at least ``2 TV^2 / ln 2`` (Pinsker's inequality, [3]);
* exploitability — an ``estimate``: the mean number of correct guesses per deck in the
  guessing game with feedback, for strategies suited to real procedures, against the exact
  uniform mean ``H_n`` ([4]); the best strategy is picked on the first half and measured on
  the second, with a normal confidence interval.

The simulation runs in chunks of decks, all repetition counts in one pass (each chunk is
shuffled once more per repetition), so memory stays bounded and results are reproducible
from the seed.

References
----------
.. [1] D. Aldous and P. Diaconis, "Strong uniform times and finite random walks", Adv. in
       Appl. Math. 8 (1987) 69-97.
.. [2] C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial limits
       illustrated in the case of the binomial", Biometrika 26 (1934) 404-413.
.. [3] T. M. Cover and J. A. Thomas, *Elements of Information Theory*, 2nd ed., Wiley,
       2006, Lemma 11.6.1 (Pinsker's inequality).
.. [4] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from shufflecheck.common.cautions import caution
from shufflecheck.common.checks import check_cards, check_confidence
from shufflecheck.common.distributions import clopper_pearson_lower, normal_quantile
from shufflecheck.common.errors import InputError
from shufflecheck.common.limits import limit
from shufflecheck.common.numbers import percent
from shufflecheck.common.quantity import Quantity
from shufflecheck.common.resources import check_memory
from shufflecheck.core.block_bounds import block_bounds
from shufflecheck.core.distances import DistanceRow
from shufflecheck.models.blocks import ProcedureBlocks, procedure_blocks
from shufflecheck.models.interleaving import conjectured_bounds
from shufflecheck.models.permute import CHUNK_DECKS, identity_decks
from shufflecheck.models.procedures import Procedure
from shufflecheck.stats.catalogue import (
    DeckContext,
    DeckView,
    Statistic,
    deck_bytes,
    lower_bound_statistics,
)
from shufflecheck.stats.ranks import RankScore, fit_rank_score, rank_bin_counts

__all__ = [
    "CAUTION",
    "RANK_SCORE",
    "Assessment",
    "AssessmentRow",
    "StatisticBound",
    "assess",
    "assessment_json",
    "assessment_work",
    "bound_statistics",
    "only_repeats",
    "rigorous_upper_bounds",
]

CAUTION = caution("the modelled procedure")

MAX_REPEATS = limit("repeats").high
MAX_DECKS = limit("assess_decks").high
#: memory a chunk of assessed decks may use while its statistics are computed (bytes)
CHUNK_BYTES = 1 << 31
#: name of the fitted likelihood-ratio score among the lower-bound statistics
RANK_SCORE = "rank-likelihood"
_RANK_TITLE = "likelihood-ratio score of the sequential ranks (fitted on the first half)"
#: the three metrics every row carries
METRICS = ("total_variation", "separation", "kl_bits")


@dataclass(frozen=True)
class StatisticBound:
    """One statistic's lower confidence bound on total variation at one repetition count
    (``statistic`` is its catalogue name, ``title`` its title); ``uniform_exact`` says
    whether the event's uniform probability is exact (else a rigorous upper bound)."""

    statistic: str
    title: str
    lower_bound: float
    event_probability_uniform: float
    event_count: int
    measured_decks: int
    uniform_exact: bool = True


@dataclass(frozen=True)
class AssessmentRow:
    """Everything known about ``repeats`` runs of the procedure, each number labelled.

    ``upper`` holds the rigorous upper bounds of the three metrics, ``upper_extra`` the
    bounds on the largest likelihood ratio ``n! max P`` and the chi-square distance,
    ``conjectured`` the figures of the interleaving conjecture (never bounds), and
    ``estimated`` Monte Carlo estimates of exact values where each word's chance is known
    (ideal riffles of a shoe read through a feature; never bounds).
    """

    repeats: int
    exact: DistanceRow | None
    upper: dict[str, Quantity]
    upper_blocks: tuple[str, ...]
    lower: dict[str, Quantity]
    lower_by_statistic: tuple[StatisticBound, ...]
    guessing: dict[str, Quantity]
    best_strategy: str
    extra_guesses: Quantity
    uniform_guesses: float
    upper_extra: dict[str, Quantity] = field(default_factory=dict)
    conjectured: dict[str, Quantity] = field(default_factory=dict)
    estimated: dict[str, Quantity] = field(default_factory=dict)


@dataclass(frozen=True)
class Assessment:
    """The assessment of one procedure on ``cards`` cards for ``r = 1..R`` repetitions.

    ``feature`` names what the distances are on: ``distinct`` (every card told apart) or,
    for a shoe assessed by :func:`shufflecheck.analyses.feature_assess.assess_feature`,
    the feature a game sees; ``deck`` then describes the shoe.
    """

    procedure: str
    name: str | None
    cards: int
    decks: int
    seed: int | None
    confidence: float
    rows: tuple[AssessmentRow, ...]
    notes: tuple[str, ...] = field(default_factory=tuple)
    feature: str = "distinct"
    deck: str | None = None

    def to_dict(self) -> dict:
        """The ``shufflecheck assess --json`` form (:func:`assessment_json`)."""
        return assessment_json(self)

    def to_frame(self):  # -> pandas.DataFrame
        """One row per repetition count: exact total variation where known, the rigorous
        upper and Monte Carlo lower bounds, and the guessing edge (with their kinds)."""
        import pandas as pd

        out = []
        for row in self.rows:
            upper = row.upper.get("total_variation")
            lower = row.lower.get("total_variation")
            out.append(
                {
                    "repeats": row.repeats,
                    "total_variation": None if row.exact is None else row.exact.total_variation,
                    "total_variation_kind": None if row.exact is None else row.exact.kind,
                    "upper_bound": None if upper is None else upper.value,
                    "lower_bound": None if lower is None else lower.value,
                    "best_strategy": row.best_strategy,
                    "extra_correct_guesses": row.extra_guesses.value,
                    "extra_correct_guesses_stderr": row.extra_guesses.stderr,
                }
            )
        return pd.DataFrame(out).set_index("repeats")


# ---------------------------------------------------------------------------------------
# exact blocks and rigorous upper bounds


def rigorous_upper_bounds(split: ProcedureBlocks) -> dict[str, Quantity]:
    """The block inequalities for one repeated procedure (empty without exact blocks).

    Keys: the three metrics, ``likelihood_ratio`` and ``chi_square``; the method text
    names the inequality and the blocks it used.
    """
    if not split.blocks:
        return {}
    figures = [block.figures(k + 1) for k, block in enumerate(split.blocks)]
    return dict(block_bounds(figures).bounds)


# ---------------------------------------------------------------------------------------
# Monte Carlo


def bound_statistics(cards: int, strategies: tuple[str, ...]) -> tuple[Statistic, ...]:
    """The catalogue statistics behind the lower bounds (families of alternatives, such as
    one statistic per guessing strategy, count once: their member is picked on the first
    half of the decks)."""
    context = DeckContext.checked(cards, strategies=strategies)
    return lower_bound_statistics(context)


def _bonferroni_count(statistics: tuple[Statistic, ...], fitted: bool) -> int:
    """Bounds that are tested: one per statistic outside a family, one per family, and the
    fitted score."""
    families = {s.family for s in statistics if s.family is not None}
    return sum(s.family is None for s in statistics) + len(families) + int(fitted)


def _uniform_pmf(stat: Statistic, cards: int) -> np.ndarray:
    """Exact uniform-deck law of a statistic as floats indexed by value 0..n."""
    assert stat.law is not None
    law = stat.law(DeckContext(cards))
    pmf = np.zeros(cards + 1)
    pmf[law.offset : law.offset + len(law.counts)] = law.pmf
    return pmf


def _halves(decks: int) -> tuple[int, int]:
    """Decks in the first half (choices and fits) and the second (the bounds)."""
    first = (decks + 1) // 2
    return first, decks - first


def assessment_chunk(cards: int) -> int:
    """Decks simulated at once: :data:`CHUNK_DECKS`, fewer for long decks so that a chunk
    stays within :data:`CHUNK_BYTES` (a function of ``cards`` only, so results stay
    reproducible from the seed on any machine)."""
    return max(1, min(CHUNK_DECKS, CHUNK_BYTES // deck_bytes(max(cards, 2))))


def assessment_work(decks: int, repeats: int, cards: int = 52) -> int:
    """Progress units :func:`assess` reports: one per (chunk of decks, repetition count),
    the two halves chunked separately."""
    chunk = assessment_chunk(cards)
    return sum(-(-half // chunk) for half in _halves(decks)) * repeats


@dataclass
class _Tally:
    """Mergeable Monte Carlo summaries, per repetition count: histograms of every
    statistic's values on each half; sums and sums of squares of every strategy's scores
    on the first half and of the chosen strategy's on the second; the ranks' bin counts on
    the first half; the fitted score's event count on the second."""

    context: DeckContext
    statistics: tuple[Statistic, ...]
    hist: np.ndarray  # (repeats, statistics, 2, n + 1)
    sums: np.ndarray  # (repeats, strategies, 2, 2)
    rank_counts: list[np.ndarray | None]
    scores: list[RankScore | None]
    score_events: np.ndarray  # (repeats,)
    halves: np.ndarray
    best: list[str] = field(default_factory=list)

    @property
    def strategies(self) -> tuple[str, ...]:
        return self.context.strategies

    @classmethod
    def empty(cls, repeats: int, cards: int, strategies: tuple[str, ...]) -> _Tally:
        context = DeckContext.checked(cards, strategies=strategies)
        stats = bound_statistics(cards, strategies)
        return cls(
            context,
            stats,
            np.zeros((repeats, len(stats), 2, cards + 1), dtype=np.int64),
            np.zeros((repeats, len(strategies), 2, 2)),
            [None] * repeats,
            [None] * repeats,
            np.zeros(repeats, dtype=np.int64),
            np.zeros(2, dtype=np.int64),
        )

    def add(self, r: int, relative: np.ndarray, half: int) -> None:
        cards = relative.shape[1]
        if half == 0:
            context = self.context
        else:  # only the strategy chosen on the first half is played on the second
            context = DeckContext(cards, strategies=(self.best[r],))
        view = DeckView(relative, relative, context)
        for s, stat in enumerate(self.statistics):
            if stat.strategy is not None and stat.strategy not in context.strategies:
                continue
            assert stat.values is not None
            values = stat.values(view)
            self.hist[r, s, half] += np.bincount(values, minlength=cards + 1)
            if stat.strategy is not None:
                g = self.strategies.index(stat.strategy)
                scores = values.astype(np.float64)
                self.sums[r, g, half] += (scores.sum(), (scores * scores).sum())
        if cards < 3:
            return
        if half == 0:
            counts = rank_bin_counts(view.ranks)
            previous = self.rank_counts[r]
            self.rank_counts[r] = counts if previous is None else previous + counts
        else:
            score = self.scores[r]
            if score is not None:
                self.score_events[r] += int(
                    np.count_nonzero(score.scores(view.ranks) >= score.threshold)
                )

    def fit(self) -> None:
        """Choices made on the first half: best strategy, fitted score, per count."""
        choose = self.sums[:, :, 0, 0] / max(int(self.halves[0]), 1)
        self.best = [self.strategies[int(np.argmax(choose[r]))] for r in range(choose.shape[0])]
        cards = self.context.cards
        for r, counts in enumerate(self.rank_counts):
            self.scores[r] = fit_rank_score(counts, cards) if counts is not None else None


def _mean_interval(
    total: float, squares: float, count: int, z: float
) -> tuple[float, float, float]:
    """(mean, standard error, half-width) of a sample known by its sum and sum of squares."""
    mean = total / count
    variance = max(squares / count - mean * mean, 0.0) * count / max(count - 1, 1)
    stderr = math.sqrt(variance / count)
    return mean, stderr, z * stderr


def assess(
    procedure: Procedure,
    cards: int,
    *,
    repeats: int = 10,
    decks: int = 100_000,
    rng: np.random.Generator | int | None = None,
    confidence: float = 0.99,
    strategies: tuple[str, ...] | None = None,
    progress: Callable[[int], None] | None = None,
) -> Assessment:
    """Assess ``procedure`` on ``cards`` cards for ``r = 1..repeats`` repetitions.

    Parameters
    ----------
    procedure : Procedure
        The dealing procedure (see :mod:`shufflecheck.models.procedures`).
    cards : int
        Deck size (52; 312 for a six-deck shoe treated as distinct cards).
    repeats : int
        Largest repetition count ``R``.
    decks : int
        Simulated decks, split in two halves: the first ``ceil(decks/2)`` for the choices
        (events, family members, the fitted score, the best guessing strategy), the rest
        for the bounds and the measured guessing edge.
    rng : Generator, int or None
        Seed or generator; the whole assessment is reproducible from it.
    confidence : float
        Confidence level of the lower bounds and of the guessing-score intervals.
    strategies : tuple of str, optional
        Guessing strategies (default: all of :data:`shufflecheck.stats.STRATEGIES`).
    progress : callable, optional
        Called with the number of (chunk, repetition) units done; there are
        :func:`assessment_work` of them.

    The cost is linear in ``decks x cards x repeats`` (every statistic is computed in
    a bounded number of passes over each deck).
    """
    from shufflecheck.stats.guessing import STRATEGIES, check_strategies

    limit("repeats").check(repeats)
    limit("assess_decks").check(decks)
    limit("assess_cards").check(cards)
    check_confidence(confidence)
    check_cards(cards)
    procedure.check_cards(cards)
    names = check_strategies(strategies if strategies is not None else tuple(STRATEGIES))
    chunk = assessment_chunk(cards)
    check_memory(
        min(decks, chunk) * deck_bytes(cards),
        f"{min(decks, chunk):,} decks of {cards} cards assessed at once",
        argument="decks",
        advice="free some memory, or use fewer {decks} or fewer cards",
    )
    generator = np.random.default_rng(rng)

    tally = _Tally.empty(repeats, cards, names)
    done = 0
    for half, size in enumerate(_halves(decks)):
        if half == 1:
            tally.fit()
        for start in range(0, size, chunk):
            count = min(size, start + chunk) - start
            tally.halves[half] += count
            current = identity_decks(count, cards)
            for r in range(repeats):
                current = procedure.apply(current, generator)
                tally.add(r, current, half)
                done += 1
                if progress is not None:
                    progress(done)
    rows = tuple(_row(procedure, cards, r, tally, confidence) for r in range(repeats))
    notes = []
    if procedure.deterministic:
        notes.append(
            "Every step of this procedure is a fixed rearrangement: by itself it mixes nothing, "
            "and a player who knows the pickup order can name every card."
        )
    seed = rng if isinstance(rng, int) else None
    return Assessment(
        procedure.describe(), procedure.name, cards, decks, seed, confidence, rows, tuple(notes)
    )


def _row(
    procedure: Procedure, cards: int, r: int, tally: _Tally, confidence: float
) -> AssessmentRow:
    from shufflecheck.core.counting import harmonic

    chosen, measured = (int(h) for h in tally.halves)
    z = normal_quantile(0.5 + confidence / 2)
    split = procedure_blocks(procedure, r + 1, cards)
    whole = split.whole
    names = tally.strategies
    best = tally.best[r]
    guessing = {}
    for g, name in enumerate(names):
        total, squares = tally.sums[r, g, 0]
        mean, stderr, hw = _mean_interval(total, squares, chosen, z)
        guessing[name] = Quantity(
            mean,
            "estimate",
            confidence=confidence,
            interval=(mean - hw, mean + hw),
            stderr=stderr,
            method=f"Monte Carlo, the {chosen:,} decks of the first half",
        )
    best_index = names.index(best)
    uniform_mean = float(harmonic(cards))
    mean1, stderr1, hw1 = _mean_interval(*tally.sums[r, best_index, 1], measured, z)
    extra = Quantity(
        mean1 - uniform_mean,
        "estimate",
        confidence=confidence,
        interval=(mean1 - uniform_mean - hw1, mean1 - uniform_mean + hw1),
        stderr=stderr1,
        method=f"strategy '{best}' chosen on {chosen:,} decks, measured on {measured:,}",
    )
    bounds = _statistic_bounds(tally, r, cards, best, confidence)
    top = max(bounds, key=lambda b: b.lower_bound)
    note = (
        f"lower {percent(confidence)} confidence bound from {top.title} "
        f"(split sample of {chosen + measured:,} decks)"
    )
    tv_low = top.lower_bound
    lower = {
        "total_variation": Quantity(
            tv_low, "bound", side="lower", confidence=confidence, method=note
        ),
        "separation": Quantity(
            tv_low, "bound", side="lower", confidence=confidence, method=f"separation >= TV; {note}"
        ),
        "kl_bits": Quantity(
            2 * tv_low**2 / math.log(2),
            "bound",
            side="lower",
            confidence=confidence,
            method=f"Pinsker's inequality, KL >= 2 TV^2 / ln 2; {note}",
            unit="bits",
        ),
    }
    upper_all = rigorous_upper_bounds(split) if whole is None else {}
    return AssessmentRow(
        repeats=r + 1,
        exact=whole,
        upper={k: q for k, q in upper_all.items() if k in METRICS},
        upper_blocks=tuple(block.label for block in split.blocks),
        lower=lower,
        lower_by_statistic=tuple(bounds),
        guessing=guessing,
        best_strategy=best,
        extra_guesses=extra,
        uniform_guesses=uniform_mean,
        upper_extra={k: q for k, q in upper_all.items() if k not in METRICS},
        conjectured=_conjectured(split, cards, upper_all),
    )


def _conjectured(
    split: ProcedureBlocks, cards: int, upper: dict[str, Quantity]
) -> dict[str, Quantity]:
    """The conjecture's figures where they say more than the rigorous bounds (by more than
    the last shown digit: at least 0.1% below them)."""
    out = {}
    for metric, value in conjectured_bounds(split, cards).items():
        rigorous = upper.get(metric)
        if rigorous is None or value.value < 0.999 * rigorous.value:
            out[metric] = value
    return out


def _statistic_bounds(
    tally: _Tally, r: int, cards: int, best: str, confidence: float
) -> list[StatisticBound]:
    """Split-sample lower confidence bounds on TV, Bonferroni over the bounds tested: the
    event is where the first half over-represents a value (or, for the fitted score, a
    score at least the threshold chosen from the fit)."""
    score = tally.scores[r]
    alpha_each = (1 - confidence) / _bonferroni_count(tally.statistics, score is not None)
    chosen, measured = (int(h) for h in tally.halves)
    candidates: dict[str, tuple[float, StatisticBound]] = {}
    bounds = []
    for s, stat in enumerate(tally.statistics):
        if stat.strategy is not None and stat.strategy != best:
            continue
        pmf = _uniform_pmf(stat, cards)
        first = tally.hist[r, s, 0] / max(chosen, 1)
        event = first > pmf
        successes = int(tally.hist[r, s, 1][event].sum())
        uniform = float(pmf[event].sum())
        lower_p = clopper_pearson_lower(successes, measured, alpha_each)
        found = StatisticBound(
            stat.name, stat.title, max(0.0, lower_p - uniform), uniform, successes, measured
        )
        if stat.family is None or stat.strategy is not None:
            bounds.append(found)
            continue
        # a family member is picked on the first half: the largest excess there
        excess = float(first[event].sum() - uniform)
        held = candidates.get(stat.family)
        if held is None or excess > held[0]:
            candidates[stat.family] = (excess, found)
    bounds.extend(found for _, found in candidates.values())
    if score is not None:
        uniform = score.uniform_probability()
        successes = int(tally.score_events[r])
        lower_p = clopper_pearson_lower(successes, measured, alpha_each)
        bounds.append(
            StatisticBound(
                RANK_SCORE,
                _RANK_TITLE,
                max(0.0, lower_p - uniform),
                uniform,
                successes,
                measured,
                uniform_exact=False,
            )
        )
    return bounds


def only_repeats(result: Assessment, counts: list[int] | tuple[int, ...]) -> Assessment:
    """``result`` keeping the rows of the repetition counts ``counts`` only (an assessment
    of ``r = 1..R`` holds every count up to ``R``; ``assess -r 4-6`` shows 4, 5 and 6)."""
    wanted = set(counts)
    missing = wanted - {row.repeats for row in result.rows}
    if missing:
        raise InputError(
            f"repeats {min(missing)} was not assessed (the assessment covers 1 to "
            f"{len(result.rows)})",
            argument="repeats",
        )
    return dataclasses.replace(
        result, rows=tuple(row for row in result.rows if row.repeats in wanted)
    )


def assessment_json(result: Assessment) -> dict:
    """The JSON form of an :class:`Assessment` (``shufflecheck assess --json``)."""

    def distances(row):
        if row is None:
            return None
        out = {
            "total_variation": row.total_variation,
            "separation": row.separation,
            "kl_bits": row.kl_bits,
            "kind": row.kind,
        }
        for metric in ("total_variation", "separation"):  # 1 - value in exact integers
            gap = getattr(row, f"{metric}_below_one", None)
            if gap is not None:
                out[f"{metric}_below_one"] = gap
        return out

    rows = []
    for row in result.rows:
        rows.append(
            {
                "repeats": row.repeats,
                "exact": distances(row.exact),
                "upper_bound": {k: q.as_json() for k, q in row.upper.items()},
                "upper_bound_extra": {k: q.as_json() for k, q in row.upper_extra.items()},
                "upper_bound_blocks": list(row.upper_blocks),
                "conjectured": {k: q.as_json() for k, q in row.conjectured.items()},
                "estimated": {k: q.as_json() for k, q in row.estimated.items()},
                "lower_bound": {k: q.as_json() for k, q in row.lower.items()},
                "lower_bound_by_statistic": [
                    {
                        "statistic": b.statistic,
                        "title": b.title,
                        "total_variation_lower_bound": b.lower_bound,
                        "event_probability_uniform": b.event_probability_uniform,
                        "event_probability_uniform_kind": (
                            "exact" if b.uniform_exact else "upper bound"
                        ),
                        "event_count": b.event_count,
                        "measured_decks": b.measured_decks,
                    }
                    for b in row.lower_by_statistic
                ],
                "guessing": {
                    "uniform_mean": row.uniform_guesses,
                    "uniform_method": "exact: H_n, sum of Bernoulli(1/j)",
                    "strategies": {k: q.as_json() for k, q in row.guessing.items()},
                    "best_strategy": row.best_strategy,
                    "extra_correct_guesses_per_deck": row.extra_guesses.as_json(),
                },
            }
        )
    return {
        "procedure": result.procedure,
        "name": result.name,
        "cards": result.cards,
        "feature": result.feature,
        "deck": result.deck,
        "decks": result.decks,
        "seed": result.seed,
        "confidence": result.confidence,
        "rows": rows,
        "notes": list(result.notes),
        "caution": CAUTION,
    }
