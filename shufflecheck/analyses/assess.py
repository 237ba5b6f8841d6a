"""How far from random a dealing procedure leaves the deck, repeated ``r = 1..R`` times.

For every repetition count the assessment gives, each number labelled:

* ``exact`` — when the whole repeated procedure is one exactly analysed model (a run of
  ideal riffles, random transpositions, top-to-random moves, cuts, ...), possibly with fixed
  rearrangements (pile deals) at either end, which change no distance;
* an upper ``bound`` — from the exactly analysed contiguous blocks inside it: a further
  step never increases total variation or KL divergence (``TV(mu * nu) <= TV(nu)``,
  ``H(XY) >= H(Y)``), and separation is submultiplicative over blocks
  (``s(mu * nu) <= s(mu) s(nu)``, [1]);
* a lower ``bound`` at a stated confidence, from Monte Carlo: the distance between the law
  of a statistic of the deck and its exact law under a uniform deck is a lower bound on the
  deck's total variation. The event is chosen on one half of the simulated decks (values
  the statistic takes more often than under uniform) and its probability is bounded below
  on the other half with the exact Clopper–Pearson bound, Bonferroni-corrected over the
  statistics, so the bound is valid at the stated confidence ([2]). Separation is at least
  TV, and KL (bits) at least ``2 TV^2 / ln 2`` (Pinsker's inequality, [3]);
* exploitability — an ``estimate``: the mean number of correct guesses per deck in the
  guessing game with feedback, for strategies suited to real procedures, against the exact
  uniform mean ``H_n`` ([4]); the best strategy is picked on one half and measured on the
  other, with a normal confidence interval.

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

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from shufflecheck.audit.catalogue import DeckContext, DeckView, Statistic, battery_statistics
from shufflecheck.common.cautions import caution
from shufflecheck.common.checks import check_cards, check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.quantity import Quantity
from shufflecheck.core.distances import DistanceRow
from shufflecheck.models.base import Step
from shufflecheck.models.permute import CHUNK_DECKS, identity_decks
from shufflecheck.models.procedures import Procedure
from shufflecheck.models.riffle import Riffle

__all__ = [
    "CAUTION",
    "Assessment",
    "AssessmentRow",
    "StatisticBound",
    "assess",
    "assessment_json",
    "assessment_work",
    "bound_statistics",
    "exact_blocks",
]

CAUTION = caution("the modelled procedure")

MAX_REPEATS = 100
MAX_DECKS = 50_000_000


@dataclass(frozen=True)
class StatisticBound:
    """One statistic's lower confidence bound on total variation at one repetition count
    (``statistic`` is its catalogue name, ``title`` its title)."""

    statistic: str
    title: str
    lower_bound: float
    event_probability_uniform: float
    event_count: int
    measured_decks: int


@dataclass(frozen=True)
class AssessmentRow:
    """Everything known about ``repeats`` runs of the procedure, each number labelled."""

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


@dataclass(frozen=True)
class Assessment:
    """The assessment of one procedure on ``cards`` cards for ``r = 1..R`` repetitions."""

    procedure: str
    name: str | None
    cards: int
    decks: int
    seed: int | None
    confidence: float
    rows: tuple[AssessmentRow, ...]
    notes: tuple[str, ...] = field(default_factory=tuple)


# ---------------------------------------------------------------------------------------
# exact blocks


def _block_row(steps: list[tuple[Step, int]], cards: int) -> tuple[str, DistanceRow | None]:
    """Exact distances of a run of equal steps, or of consecutive ideal riffles (an
    ``a``-shuffle with ``a`` the product of their packet counts, Bayer & Diaconis 1992)."""
    if all(isinstance(step, Riffle) for step, _ in steps):
        packets = 1
        for step, times in steps:
            packets *= step.hands**times
        total = sum(times for _, times in steps)
        label = f"riffle x{total}" if packets == 2**total else f"{packets}-shuffle"
        from shufflecheck.models import riffle

        if packets.bit_length() > riffle.MAX_EXACT_STEPS:
            return label, None
        return label, riffle.exact_distances(cards, 1, hands=packets)
    ((step, times),) = steps
    return (f"{step.describe()} x{times}" if times > 1 else step.describe()), step.exact_distances(
        cards, times
    )


def exact_blocks(
    procedure: Procedure, repeats: int, cards: int
) -> tuple[DistanceRow | None, list[tuple[str, DistanceRow]]]:
    """(exact distances of the whole repeated procedure or None, exact contiguous blocks).

    Blocks are maximal runs of equal exactly analysed steps (consecutive ideal riffles of
    any packet counts merge into one a-shuffle). Fixed rearrangements at either end of the
    whole sequence change no distance, so a single block between them is exact for all.
    """
    runs = procedure.runs(repeats)
    groups: list[list[tuple[Step, int]]] = []
    for step, times in runs:
        if (
            groups
            and isinstance(step, Riffle)
            and all(isinstance(s, Riffle) for s, _ in groups[-1])
        ):
            groups[-1].append((step, times))
        else:
            groups.append([(step, times)])
    blocks: list[tuple[str, DistanceRow]] = []
    exact_groups = []
    for group in groups:
        if all(step.deterministic for step, _ in group):
            exact_groups.append(None)
            continue
        label, row = _block_row(group, cards)
        exact_groups.append(row)
        if row is not None:
            blocks.append((label, row))
    # whole procedure: deterministic groups only at the ends, one exact group in between
    random_groups = [i for i, g in enumerate(groups) if not all(s.deterministic for s, _ in g)]
    whole: DistanceRow | None = None
    if not random_groups:
        fact = math.factorial(cards)
        whole = DistanceRow(
            repeats,
            1.0 - 1.0 / fact if cards < 171 else 1.0,
            1.0,
            math.log2(fact),
            "exact",
            "fixed rearrangement",
        )
    elif len(random_groups) == 1:
        row = exact_groups[random_groups[0]]
        if row is not None:
            whole = DistanceRow(
                repeats, row.total_variation, row.separation, row.kl_bits, "exact", row.note
            )
    return whole, blocks


def _upper_bounds(blocks: list[tuple[str, DistanceRow]]) -> dict[str, Quantity]:
    if not blocks:
        return {}
    tv_min = min(row.total_variation for _, row in blocks if row.total_variation is not None)
    sep_product = math.prod(row.separation for _, row in blocks if row.separation is not None)
    kl_values = [row.kl_bits for _, row in blocks if row.kl_bits is not None]
    names = ", ".join(label for label, _ in blocks)
    out = {
        "total_variation": Quantity(
            min(tv_min, sep_product),
            "bound",
            side="upper",
            method=f"smallest exact TV of a block, or the product of block separations ({names})",
        ),
        "separation": Quantity(
            sep_product, "bound", side="upper", method=f"product of block separations ({names})"
        ),
    }
    if kl_values:
        out["kl_bits"] = Quantity(
            min(kl_values), "bound", side="upper", method=f"smallest exact KL of a block ({names})"
        )
    return out


# ---------------------------------------------------------------------------------------
# Monte Carlo


def _clopper_pearson_lower(successes: int, trials: int, alpha: float) -> float:
    """One-sided lower confidence bound for a binomial probability (exact, [2])."""
    from scipy.stats import beta

    if successes <= 0 or trials <= 0:
        return 0.0
    return float(beta.ppf(alpha, successes, trials - successes + 1))


def bound_statistics(cards: int, strategies: tuple[str, ...]) -> tuple[Statistic, ...]:
    """The catalogue statistics behind the lower bounds (one per guessing strategy; the
    best strategy is chosen on the first half of the decks)."""
    context = DeckContext.checked(cards, strategies=strategies)
    return tuple(s for s in battery_statistics(context) if s.lower_bound)


def _bonferroni_count(statistics: tuple[Statistic, ...]) -> int:
    """Statistics that give a bound: the non-guessing ones and the one best strategy."""
    return sum(s.strategy is None for s in statistics) + 1


def _uniform_pmf(stat: Statistic, cards: int) -> np.ndarray:
    """Exact uniform-deck law of a statistic as floats indexed by value 0..n."""
    assert stat.law is not None
    law = stat.law(DeckContext(cards))
    pmf = np.zeros(cards + 1)
    pmf[law.offset : law.offset + len(law.counts)] = law.pmf
    return pmf


@dataclass
class _Tally:
    """Mergeable Monte Carlo summaries: per repetition count, per statistic and per half,
    histograms of values; per strategy and half, sums and sums of squares of scores."""

    context: DeckContext
    statistics: tuple[Statistic, ...]
    hist: np.ndarray  # (repeats, statistics, 2, n + 1)
    sums: np.ndarray  # (repeats, strategies, 2, 2)
    halves: np.ndarray  # decks in each half

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
            np.zeros(2, dtype=np.int64),
        )

    def add(self, r: int, relative: np.ndarray, half: np.ndarray) -> None:
        cards = relative.shape[1]
        view = DeckView(relative, relative, self.context)
        values = {}
        for s, stat in enumerate(self.statistics):
            assert stat.values is not None
            values[stat.name] = stat.values(view)
            cells = half * (cards + 1) + values[stat.name]
            self.hist[r, s] += np.bincount(cells, minlength=2 * (cards + 1)).reshape(2, -1)
        guesses = {stat.strategy: values[stat.name] for stat in self.statistics if stat.strategy}
        for g, name in enumerate(self.strategies):
            scores = guesses[name].astype(np.float64)
            for h in (0, 1):
                chosen = scores[half == h]
                self.sums[r, g, h] += (chosen.sum(), (chosen * chosen).sum())


def _mean_interval(
    total: float, squares: float, count: int, z: float
) -> tuple[float, float, float]:
    """(mean, standard error, half-width) of a sample known by its sum and sum of squares."""
    mean = total / count
    variance = max(squares / count - mean * mean, 0.0) * count / max(count - 1, 1)
    stderr = math.sqrt(variance / count)
    return mean, stderr, z * stderr


def assessment_work(decks: int, repeats: int) -> int:
    """Progress units :func:`assess` reports: one per (chunk of decks, repetition count)."""
    return -(-decks // CHUNK_DECKS) * repeats


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
        Simulated decks, split in two halves (even and odd deck numbers) for the lower
        bounds and the choice of the best guessing strategy.
    rng : Generator, int or None
        Seed or generator; the whole assessment is reproducible from it.
    confidence : float
        Confidence level of the lower bounds and of the guessing-score intervals.
    strategies : tuple of str, optional
        Guessing strategies (default: all of :data:`shufflecheck.audit.STRATEGIES`).
    progress : callable, optional
        Called with the number of (chunk, repetition) units done; there are
        :func:`assessment_work` of them.
    """
    from shufflecheck.audit.guessing import STRATEGIES, check_strategies

    check_integer(repeats, "repeats", low=1, high=MAX_REPEATS)
    check_integer(decks, "decks", low=2, high=MAX_DECKS)
    if not 0.5 <= confidence < 1:
        raise InputError(f"confidence must be in [0.5, 1), got {confidence}", argument="confidence")
    check_cards(cards)
    procedure.check_cards(cards)
    names = check_strategies(strategies if strategies is not None else tuple(STRATEGIES))
    generator = np.random.default_rng(rng)

    tally = _Tally.empty(repeats, cards, names)
    done = 0
    for start in range(0, decks, CHUNK_DECKS):
        stop = min(decks, start + CHUNK_DECKS)
        half = np.arange(start, stop) % 2
        tally.halves += np.bincount(half, minlength=2)
        current = identity_decks(stop - start, cards)
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

    decks = int(tally.halves.sum())
    z = _normal_quantile(0.5 + confidence / 2)
    whole, blocks = exact_blocks(procedure, r + 1, cards)
    names = tally.strategies
    guessing = {}
    for g, name in enumerate(names):
        total, squares = tally.sums[r, g].sum(axis=0)
        mean, stderr, hw = _mean_interval(total, squares, decks, z)
        guessing[name] = Quantity(
            mean,
            "estimate",
            confidence=confidence,
            interval=(mean - hw, mean + hw),
            stderr=stderr,
            method=f"Monte Carlo, {decks:,} decks",
        )
    # the best strategy is picked on half 0 and measured on half 1 (no selection bias)
    choose = tally.sums[r, :, 0, 0] / tally.halves[0]
    best_index = int(np.argmax(choose))
    best = names[best_index]
    measured = int(tally.halves[1])
    uniform_mean = float(harmonic(cards))
    mean1, stderr1, hw1 = _mean_interval(*tally.sums[r, best_index, 1], measured, z)
    extra = Quantity(
        mean1 - uniform_mean,
        "estimate",
        confidence=confidence,
        interval=(mean1 - uniform_mean - hw1, mean1 - uniform_mean + hw1),
        stderr=stderr1,
        method=(
            f"strategy '{best}' chosen on {int(tally.halves[0]):,} decks, measured on {measured:,}"
        ),
    )
    bounds = _statistic_bounds(tally, r, cards, best, confidence)
    top = max(bounds, key=lambda b: b.lower_bound)
    note = (
        f"lower {confidence:.0%} confidence bound from {top.title} "
        f"(split sample of {decks:,} decks)"
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
        ),
    }
    return AssessmentRow(
        repeats=r + 1,
        exact=whole,
        upper=_upper_bounds(blocks) if whole is None else {},
        upper_blocks=tuple(label for label, _ in blocks),
        lower=lower,
        lower_by_statistic=tuple(bounds),
        guessing=guessing,
        best_strategy=best,
        extra_guesses=extra,
        uniform_guesses=uniform_mean,
    )


def _statistic_bounds(
    tally: _Tally, r: int, cards: int, best: str, confidence: float
) -> list[StatisticBound]:
    """Split-sample lower confidence bounds on TV, one per statistic (Bonferroni over the
    statistics that give a bound): the event is where half 0 over-represents a value."""
    alpha_each = (1 - confidence) / _bonferroni_count(tally.statistics)
    measured = int(tally.halves[1])
    bounds = []
    for s, stat in enumerate(tally.statistics):
        if stat.strategy is not None and stat.strategy != best:
            continue
        pmf = _uniform_pmf(stat, cards)
        event = tally.hist[r, s, 0] / tally.halves[0] > pmf
        successes = int(tally.hist[r, s, 1][event].sum())
        uniform = float(pmf[event].sum())
        lower_p = _clopper_pearson_lower(successes, measured, alpha_each)
        bounds.append(
            StatisticBound(
                stat.name, stat.title, max(0.0, lower_p - uniform), uniform, successes, measured
            )
        )
    return bounds


def _normal_quantile(p: float) -> float:
    from scipy.stats import norm

    return float(norm.ppf(p))


def assessment_json(result: Assessment) -> dict:
    """The JSON form of an :class:`Assessment` (``shufflecheck assess --json``)."""

    def distances(row):
        if row is None:
            return None
        return {
            "total_variation": row.total_variation,
            "separation": row.separation,
            "kl_bits": row.kl_bits,
            "kind": row.kind,
        }

    rows = []
    for row in result.rows:
        rows.append(
            {
                "repeats": row.repeats,
                "exact": distances(row.exact),
                "upper_bound": {k: q.as_json() for k, q in row.upper.items()},
                "upper_bound_blocks": list(row.upper_blocks),
                "lower_bound": {k: q.as_json() for k, q in row.lower.items()},
                "lower_bound_by_statistic": [
                    {
                        "statistic": b.statistic,
                        "title": b.title,
                        "total_variation_lower_bound": b.lower_bound,
                        "event_probability_uniform": b.event_probability_uniform,
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
        "decks": result.decks,
        "seed": result.seed,
        "confidence": result.confidence,
        "rows": rows,
        "notes": list(result.notes),
        "caution": CAUTION,
    }
