"""Power planning: how many recorded decks each test needs to detect a procedure.

For a procedure given as a sampler of relative decks, every per-deck statistic of the
battery is simulated on ``simulate`` decks; its empirical law stands in for the procedure's
law (an *estimate*). For a candidate number of decks ``D``:

* the critical values come from the exact null law of the sum over ``D`` decks
  (:func:`shufflecheck.stats.nulls.sum_distribution` on the exact per-deck law), at the
  level ``alpha / m`` for ``m`` tests in the battery, halved per tail for two-sided tests:
  a single test that clears it flags the battery under Holm's method whatever the others
  do (Holm's first step, [1]_);
* the power is the chance that the sum under the procedure's (empirical) law, convolved
  ``D`` times, falls beyond them.

The smallest ``D`` with power at least the target is found by bisection, starting from the
normal-approximation value ``((z_a s0 + z_b s1) / |mu1 - mu0|)^2``. The position-by-card
test uses the noncentral chi-square approximation with a noncentrality estimated from the
simulated position frequencies ([2]_), and the sequential test treats consecutive pairs of
independently sampled decks as independent (they share one deck each; an approximation).
The relative standard error of each ``D`` is about twice that of the estimated shift of
the mean, ``2 se(mu1) / |mu1 - mu0|``; a test is reported as not detecting the procedure
when the simulated shift is within 4 standard errors of zero.

**Uncertainty of the count.** ``D`` is an estimate: it rests on the shift of the mean
estimated from the simulated decks. Its confidence interval at level ``c`` carries the
Monte Carlo interval of that shift, ``|shift| -+ z se`` with ``z = Phi^-1((1 + c) / 2)``,
over to the count through the scaling of the normal approximation, ``D ~ |shift|^-2``
(``D ~ delta^-1`` for the position tests, whose shift ``delta = ||M - J/n||^2`` is already
squared): ``D_low = D (|shift| / (|shift| + z se))^2`` and ``D_high = D (|shift| / (|shift|
- z se))^2``, rounded outward to whole decks (no upper end when ``|shift| <= z se``). The
uncertainty of the procedure's standard deviation, second order, is left out.

References
----------
.. [1] S. Holm, "A simple sequentially rejective multiple test procedure", Scand. J.
       Statist. 6 (1979) 65-70.
.. [2] P. B. Patnaik, "The non-central chi-square and F-distributions and their
       applications", Biometrika 36 (1949) 202-232.
.. [3] F. P. Cantelli, "Sui confini della probabilità", Atti del Congresso Internazionale
       dei Matematici, Bologna 1928, vol. 6, 47-59 (the one-sided Chebyshev inequality).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from shufflecheck.common.checks import check_confidence, check_fraction, check_integer
from shufflecheck.common.distributions import (
    chi_square_upper_quantile,
    noncentral_chi_square_sf,
    normal_quantile,
    normal_upper_quantile,
)
from shufflecheck.common.errors import InputError
from shufflecheck.common.limits import limit
from shufflecheck.common.quantity import Kind, Quantity
from shufflecheck.common.resources import check_memory
from shufflecheck.stats.catalogue import (
    DeckContext,
    DeckView,
    ShoeContext,
    Statistic,
    battery_statistics,
    deck_bytes,
)
from shufflecheck.stats.guessing import DEFAULT_STRATEGIES
from shufflecheck.stats.guessing_bet import TILTS, shoe_gains
from shufflecheck.stats.nulls import Law, LawBracket, law_bytes, sum_distribution
from shufflecheck.stats.positions import position_counts
from shufflecheck.stats.shoe_statistics import greedy_step_cells
from shufflecheck.stats.statistics import as_decks

__all__ = [
    "PowerPlan",
    "PowerRow",
    "detectable_shifts",
    "plan_decks",
    "plan_shoes",
    "sum_test_power",
]

Sampler = Callable[[int, np.random.Generator], np.ndarray]

#: A shift counts as detectable when it exceeds this many standard errors of the simulation
#: (a uniform sampler then shows a spurious shift in a test with chance about 6e-5).
_RESOLUTION = 4.0


@dataclass(frozen=True)
class PowerRow:
    """Decks one test needs (an estimate), or None with the reason in ``note``."""

    test: str
    title: str
    decks: int | None
    power: float | None
    shift: float
    shift_standard_error: float
    relative_standard_error: float | None
    kind: Kind
    detail: str
    note: str
    exponent: float = 2.0
    offset: int = 0

    def decks_interval(self, confidence: float = 0.95) -> tuple[int, float] | None:
        """Confidence interval ``(low, high)`` of the decks needed at level ``confidence``,
        from the Monte Carlo interval of the estimated shift (module notes): whole decks,
        rounded outward; ``high`` is ``inf`` when the shift's interval reaches zero. None
        when no count was found."""
        if self.decks is None:
            return None
        check_confidence(confidence)
        z = normal_upper_quantile((1 - confidence) / 2)
        size = abs(self.shift)
        spread = z * self.shift_standard_error
        base = self.decks - self.offset  # pairs of consecutive decks count one less
        low = base * (size / (size + spread)) ** self.exponent
        high = base * (size / (size - spread)) ** self.exponent if size > spread else math.inf
        low_decks = max(1, math.floor(low)) + self.offset
        high_decks = math.ceil(high) + self.offset if math.isfinite(high) else math.inf
        return min(low_decks, self.decks), max(high_decks, self.decks)

    def decks_quantity(
        self, confidence: float = 0.95, *, simulated: int | None = None, unit: str = "decks"
    ) -> Quantity | None:
        """The decks needed as a labelled estimate (an integer count with its interval at
        ``confidence``); None when no test count was found."""
        found = self.decks_interval(confidence)
        if found is None:
            return None
        source = f" from {simulated:,} simulated {unit}" if simulated else ""
        return Quantity(
            self.decks,
            "estimate",
            interval=(float(found[0]), float(found[1])),
            confidence=confidence,
            unit=unit,
            count=True,
            method=f"estimate{source}; interval from the Monte Carlo error of the shift",
        )

    def as_json(self, confidence: float = 0.95) -> dict[str, Any]:
        interval = self.decks_interval(confidence)
        return {
            "test": self.test,
            "title": self.title,
            "decks": self.decks,
            "decks_interval": None
            if interval is None
            else [interval[0], interval[1] if math.isfinite(interval[1]) else None],
            "confidence": confidence,
            "power": self.power,
            "shift_per_deck": self.shift,
            "shift_standard_error": self.shift_standard_error,
            "relative_standard_error": self.relative_standard_error,
            "kind": self.kind,
            "method": self.detail,
            "note": self.note,
        }


@dataclass(frozen=True)
class PowerPlan:
    """Decks needed per test to flag a procedure at family-wise ``alpha`` with ``power``."""

    cards: int
    alpha: float
    power: float
    tests_in_battery: int
    per_test_level: float
    simulated_decks: int
    rows: tuple[PowerRow, ...]
    confidence: float = 0.95
    #: tests whose null is a bracketed law, planned against the end the audit tests with
    bracketed: tuple[str, ...] = ()

    def null_text(self) -> str:
        """How the null laws were obtained, in one phrase."""
        text = "null laws exact"
        if self.bracketed:
            text += (
                ", or for "
                + ", ".join(f"'{t}'" for t in self.bracketed)
                + " the upper end of a bracket computed in advance (what the audit tests with)"
            )
        if any(r.test == "guess-most-frequent-bet" for r in self.rows):
            text += "; the betting guessing game needs none (a test martingale)"
        return text

    def best(self) -> PowerRow | None:
        """The test needing the fewest decks (None if no test detects the procedure)."""
        found = [r for r in self.rows if r.decks is not None]
        return min(found, key=lambda r: r.decks) if found else None

    def as_json(self) -> dict[str, Any]:
        best = self.best()
        return {
            "cards": self.cards,
            "alpha": self.alpha,
            "power": self.power,
            "tests_in_battery": self.tests_in_battery,
            "per_test_level": self.per_test_level,
            "simulated_decks": self.simulated_decks,
            "confidence": self.confidence,
            "fewest_decks": None if best is None else best.decks,
            "fewest_decks_test": None if best is None else best.test,
            "bracketed_nulls": list(self.bracketed),
            "kind": "estimate",
            "rows": [r.as_json(self.confidence) for r in self.rows],
        }

    def to_dict(self) -> dict[str, Any]:
        """Same as :meth:`as_json` (plain types)."""
        return self.as_json()

    def to_frame(self):  # -> pandas.DataFrame
        """One row per test: decks needed (an estimate) and its relative standard error."""
        import pandas as pd

        return pd.DataFrame([r.as_json(self.confidence) for r in self.rows])


def sum_test_power(
    null: Law, alternative_pmf: np.ndarray, decks: int, level: float, alternative: str
) -> float:
    """Power of the exact sum test at ``decks`` decks when each deck follows
    ``alternative_pmf`` (on the values ``0..len-1``), rejecting at p-value <= ``level``."""
    c_hi, c_lo = _critical_values(null, decks, level, alternative)
    alt_sum = sum_distribution(alternative_pmf, decks)
    out = 0.0
    if c_hi is not None:
        out += float(alt_sum.sf(c_hi))
    if c_lo is not None:
        out += float(alt_sum.cdf(c_lo))
    return min(out, 1.0)


@functools.lru_cache(maxsize=4096)
def _critical_values(
    null: Law, decks: int, level: float, alternative: str
) -> tuple[int | None, int | None]:
    """(upper, lower) critical sums of the exact test at ``decks`` decks (None when that
    side is not tested or cannot reject); the searches for the fewest decks ask for the
    same null sums again and again, so they are kept."""
    null_sum = sum_distribution(null.pmf, decks, offset=null.offset)
    side = level / 2 if alternative == "two-sided" else level
    upper = null_sum.upper_critical(side) if alternative in ("greater", "two-sided") else None
    lower = null_sum.lower_critical(side) if alternative in ("less", "two-sided") else None
    return upper, lower


def _smallest(power_at: Callable[[int], float], target: float, start: int, cap: int) -> int | None:
    """Smallest ``D`` in ``1..cap`` with ``power_at(D) >= target``, by bracketing and bisection."""
    hi = max(1, min(cap, start))
    while power_at(hi) < target:
        if hi >= cap:
            return None
        hi = min(cap, 2 * hi)
    lo = hi // 2
    while lo >= 1 and power_at(lo) >= target:
        hi, lo = lo, lo // 2
    # power_at(lo) < target (or lo == 0), power_at(hi) >= target
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if power_at(mid) >= target:
            hi = mid
        else:
            lo = mid
    return hi


def _check_plan(
    cards: int, alpha: float, power: float, simulate: int, max_decks: int, shoe: bool = False
) -> None:
    if not shoe:  # decks of distinct cards: the battery's exact laws bound the deck size
        limit("audit_cards").check(cards)
    check_fraction(alpha, "alpha")
    check_fraction(power, "power")
    limit("power_simulate").check(simulate)
    if not shoe:
        check_memory(
            law_bytes(cards),
            f"the exact laws of the tests for decks of {cards} cards",
            argument="cards",
            advice="plan for decks of fewer {cards}",
        )
    check_memory(
        simulate * (deck_bytes(cards) + 2 * cards),
        f"{simulate:,} simulated decks of {cards} cards",
        argument="simulate",
        advice="use a smaller {simulate}: the simulated decks are held in memory at once",
    )
    check_integer(max_decks, "max_decks", low=1)


def plan_decks(
    sample: Sampler,
    cards: int,
    *,
    alpha: float = 0.01,
    power: float = 0.9,
    simulate: int = 4000,
    suits: np.ndarray | None = None,
    colours: np.ndarray | None = None,
    strategies: Sequence[str] = DEFAULT_STRATEGIES,
    max_decks: int = 10_000_000,
    rng: np.random.Generator | int | None = None,
    confidence: float = 0.95,
) -> PowerPlan:
    """How many recorded decks each test of the battery needs to flag a procedure.

    Parameters
    ----------
    sample : callable ``(count, rng) -> (count, cards) int array``
        Relative decks made by the procedure from the reference order.
    cards : int
        Cards per deck.
    alpha : float
        Family-wise level of the audit (Holm), default 0.01.
    power : float
        Target probability of flagging, default 0.9.
    simulate : int
        Decks simulated under the procedure (the estimate's sample size).
    suits, colours : (cards,) int arrays or None
        Category of the card at each *reference position* (e.g. the suits of a pack in
        new-deck order); None leaves the run tests out, as the audit would.
    strategies : sequence of str
        Guessing strategies of the battery.
    max_decks : int
        Largest number of decks considered.
    rng : Generator, int or None
        Randomness for the simulation.
    confidence : float
        Level of the intervals of the counts (``0.5 <= confidence < 1``, default 0.95):
        the Monte Carlo interval of each estimated shift carried over to the count (module
        notes).

    Returns
    -------
    PowerPlan
        One row per test, in battery order; every number is an estimate.
    """
    _check_plan(cards, alpha, power, simulate, max_decks)
    check_confidence(confidence)
    generator = np.random.default_rng(rng)
    context = DeckContext.checked(cards, suits=suits, colours=colours, strategies=strategies)
    rel = as_decks(sample(simulate, generator), cards=cards, name="simulated decks")
    if rel.shape[0] != simulate:
        raise InputError(f"the sampler returned {rel.shape[0]} decks, expected {simulate}")
    view = DeckView(rel, rel, context)
    statistics = battery_statistics(context)
    m = len(statistics)
    level = alpha / m
    rows = []
    for stat in statistics:
        if stat.shape == "positions":
            rows.append(_position_row(stat, rel, level, power, max_decks))
            continue
        assert stat.values is not None and stat.law is not None
        x = stat.values(view)
        rows.append(
            _sum_row(stat, _tested_law(stat, stat.law(context)), x, level, power, max_decks)
        )
    return PowerPlan(cards, alpha, power, m, level, simulate, tuple(rows), confidence)


def _not_detected(
    spec: Statistic, shift: float, se: float, rel_se: float | None, base: str, note: str
) -> PowerRow:
    """The row of a test that does not reach the target power (``decks`` None), with why."""
    return PowerRow(spec.name, spec.title, None, None, shift, se, rel_se, "estimate", base, note)


def _sum_row(
    spec: Statistic, law: Law, x: np.ndarray, level: float, target: float, cap: int
) -> PowerRow:
    sims = x.size
    pairs = spec.shape == "consecutive"
    mean1 = float(x.mean())
    sd1 = float(x.std(ddof=1)) if sims > 1 else 0.0
    mean0, sd0 = float(law.mean), math.sqrt(float(law.variance))
    shift = mean1 - mean0
    se = sd1 / math.sqrt(sims) if sims > 0 else math.inf
    unit = "pairs of consecutive decks" if pairs else "decks"
    base = f"exact null, simulated law of {sims} {unit} convolved D times; bisection on D"
    if law.low == law.high:
        return _not_detected(
            spec, shift, se, None, base, "statistic constant on decks of this size"
        )
    detectable = {
        "greater": shift > _RESOLUTION * se,
        "less": shift < -_RESOLUTION * se,
        "two-sided": abs(shift) > _RESOLUTION * se,
    }[spec.alternative]
    if not detectable or shift == 0:
        return _not_detected(
            spec, shift, se, None, base, "no shift of the mean detectable in the simulated decks"
        )
    side = level / 2 if spec.alternative == "two-sided" else level
    z_a = normal_upper_quantile(side)
    z_b = normal_quantile(target)
    guess = math.ceil(((z_a * sd0 + z_b * sd1) / abs(shift)) ** 2)
    pmf = np.bincount(x, minlength=law.high + 1).astype(float)
    pmf /= pmf.sum()

    @functools.cache  # the search ends where it has been: the found count is asked again
    def power_at(d: int) -> float:
        return sum_test_power(law, pmf, d, level, spec.alternative)

    found = _smallest(power_at, target, max(1, guess), cap)
    rel_se = 2 * se / abs(shift)
    if found is None:
        return _not_detected(spec, shift, se, rel_se, base, f"needs more than {cap} {unit}")
    decks = found + 1 if pairs else found
    note = "decks = pairs + 1; pairs treated as independent" if pairs else ""
    return PowerRow(
        spec.name,
        spec.title,
        decks,
        power_at(found),
        shift,
        se,
        rel_se,
        "estimate",
        base,
        note,
        offset=1 if pairs else 0,
    )


def _position_row(
    spec: Statistic, rel: np.ndarray, level: float, target: float, cap: int
) -> PowerRow:
    sims, n = rel.shape
    freq = position_counts(rel, n) / sims
    df = (n - 1) ** 2
    raw = float(((freq - 1.0 / n) ** 2).sum())
    noise = (n - float((freq**2).sum())) / sims  # E of the sampling part of ||M_hat - J/n||^2
    base = (
        f"noncentral chi-square ({df} df) with noncentrality (n-1) D ||M - J/n||^2, M the "
        f"position frequencies of {sims} simulated decks (debiased)"
    )
    return _chi_square_row(
        spec,
        raw - noise,
        math.sqrt(2 * df) / (sims * (n - 1)),
        df,
        n - 1,
        base,
        "shift = ||M - J/n||^2 (squared frequency departure)",
        (level, target, cap, "decks"),
    )


def _chi_square_row(
    spec: Statistic,
    delta2: float,
    null_sd: float,
    df: int,
    per_deck: float,
    base: str,
    note: str,
    search: tuple[float, float, int, str],
) -> PowerRow:
    """Decks needed by a position chi-square test with ``df`` degrees of freedom whose
    noncentrality after ``D`` decks is ``per_deck * D * delta2`` (``delta2`` debiased from
    the simulation, ``null_sd`` its standard deviation under no departure); ``search`` is
    (level, target power, cap, unit counted)."""
    level, target, cap, unit = search
    if delta2 <= _RESOLUTION * null_sd:
        return _not_detected(
            spec,
            delta2,
            null_sd,
            None,
            base,
            "no departure of position frequencies detectable in the simulation",
        )
    crit = chi_square_upper_quantile(level, df)

    def power_at(d: int) -> float:
        return noncentral_chi_square_sf(crit, df, per_deck * d * delta2)

    # normal approximation of the noncentral chi-square: lambda ~ crit - df + 2 sqrt(2 df)
    lam = max(1.0, crit - df + 2.0 * math.sqrt(2.0 * df))
    guess = max(1, math.ceil(lam / (per_deck * delta2)))
    found = _smallest(power_at, target, guess, cap)
    rel_se = null_sd / delta2
    if found is None:
        return _not_detected(spec, delta2, null_sd, rel_se, base, f"needs more than {cap} {unit}")
    return PowerRow(
        spec.name,
        spec.title,
        found,
        power_at(found),
        delta2,
        null_sd,
        rel_se,
        "estimate",
        base,
        note,
        exponent=1.0,
    )


def detectable_shifts(
    statistics: Sequence[Statistic],
    laws: dict[str, Law],
    decks: int,
    alpha: float,
    power: float = 0.9,
    *,
    items: str = "decks",
) -> tuple[tuple[str, str, Any], ...]:
    """Shifts of each test's per-deck mean that ``decks`` decks flag with power ``power``
    (``items`` names what is counted in the methods' text: ``shoes`` for a shoe battery).

    With ``m`` tests in the battery, a test at level ``alpha / m`` (halved per tail when
    two-sided) flags the battery under Holm's method whatever the others do (Holm's first
    step, [1]_, as in :func:`plan_decks`). Its critical value ``c`` for the sum over ``D``
    decks comes from the exact ``D``-fold null law (:func:`~shufflecheck.stats.nulls.
    sum_distribution`). A procedure whose per-deck mean is shifted by ``delta`` towards the
    alternative, with the per-deck variance ``s0^2`` of a random deck, has a sum with mean
    ``D (mu0 + delta)`` and variance ``D s0^2``; by Cantelli's one-sided inequality
    ``P(S beyond c) >= power`` ([3]_) as soon as ``D |delta| >= |c - D mu0| + s0 sqrt(D power /
    (1 - power))``, whatever the shape of its law. That ``delta`` is returned as an upper
    bound on the smallest detectable shift (under the stated variance; the normal
    approximation needs about half as much). Tests on consecutive pairs use ``D - 1``.

    Returns
    -------
    tuple of (name, title, Quantity)
        Sorted from the most to the least sensitive test relative to its null spread;
        each shift is a ``bound`` (upper), in the test's unit.
    """
    from shufflecheck.common.quantity import upper_bound

    check_fraction(alpha, "alpha")
    check_fraction(power, "power")
    m = max(1, len(statistics))
    rows = []
    for stat in statistics:
        law = laws.get(stat.name)
        if not isinstance(law, Law) or law.low == law.high:
            continue  # no law (position tests), a keyed law (the zone test), or no spread
        count = decks - 1 if stat.shape == "consecutive" else decks
        if count < 1:
            continue
        level = alpha / m / (2 if stat.alternative == "two-sided" else 1)
        null = sum_distribution(np.asarray(law.pmf, dtype=float), count, offset=law.offset)
        values = null.start + np.arange(len(null.pmf))
        mean, spread = float(law.mean), math.sqrt(float(law.variance))
        if stat.alternative == "less":
            cut = values[np.flatnonzero(null.cdf(values) <= level)]
            gap = count * mean - (cut[-1] if cut.size else null.start - 1)
        else:
            cut = values[np.flatnonzero(null.sf(values) <= level)]
            gap = (cut[0] if cut.size else values[-1] + 1) - count * mean
        shift = (max(0.0, float(gap)) + spread * math.sqrt(count * power / (1 - power))) / count
        rows.append(
            (
                shift / spread,
                stat.name,
                stat.title,
                upper_bound(
                    shift,
                    unit=stat.unit,
                    digits=2,
                    method=(
                        f"exact critical value of the sum over {count} {items} at level "
                        f"alpha/{m}, Cantelli's inequality for power {power:g}"
                    ),
                ),
            )
        )
    rows.sort(key=lambda r: r[0])
    return tuple((name, title, q) for _, name, title, q in rows)


def plan_shoes(
    sample: Callable[[int, np.random.Generator], np.ndarray],
    shoe: ShoeContext,
    *,
    alpha: float = 0.01,
    power: float = 0.9,
    simulate: int = 2000,
    max_decks: int = 10_000_000,
    rng: np.random.Generator | int | None = None,
    confidence: float = 0.95,
) -> PowerPlan:
    """How many recorded shoes each test of the shoe battery needs to flag a procedure.

    ``sample(count, rng)`` returns ``count + 1`` consecutive shoes as words of kind labels
    (each shoe shuffled from the one before, as a log records them: row ``t`` is the
    reference of row ``t + 1``). As :func:`plan_decks`, every number is an estimate: the
    simulated law of each statistic against its exact null. For the zone test, whose exact
    law depends on the reference, the null of one shoe is the mixture of the shoes' own laws
    over the simulated references, and shoes are treated as independent draws from it (an
    approximation). The position-by-value test uses the noncentral chi-square with
    ``(n-1)(V-1)`` degrees of freedom. ``confidence`` is the level of the counts' intervals.
    A statistic whose null is a bracket (the guessing game on a stored bracket) is planned
    against the end the audit tests with, and named in ``bracketed``.
    """
    n = shoe.cards
    _check_plan(n, alpha, power, simulate, max_decks, shoe=True)
    check_confidence(confidence)
    generator = np.random.default_rng(rng)
    context = DeckContext.checked(n, shoe=shoe)
    words = np.asarray(sample(simulate, generator))
    if words.shape != (simulate + 1, n):
        raise InputError(f"the sampler returned {words.shape}, expected {(simulate + 1, n)}")
    view = DeckView(words[1:], words[1:], context, reference=words[:-1])
    statistics = battery_statistics(context)
    m = len(statistics)
    level = alpha / m
    rows = []
    bracketed: list[str] = []
    for stat in statistics:
        if stat.shape == "class-positions":
            rows.append(_class_position_row(stat, view.absolute, shoe, level, power, max_decks))
            continue
        if stat.shape == "bet":
            assert stat.values is not None
            rows.append(_bet_row(stat, stat.values(view), shoe, level, power, max_decks))
            continue
        if stat.shape == "consecutive":
            assert stat.values is not None and stat.law is not None
            x = stat.values(DeckView(words, words, context))
            law = _tested_law(stat, stat.law(context))
            rows.append(_sum_row(stat, law, x, level, power, max_decks))
            continue
        assert stat.values is not None
        x = stat.values(view)
        if stat.law_keys is not None:
            assert stat.keyed_law is not None
            keys = stat.law_keys(view)
            law = _mixture_law(
                [(stat.keyed_law(context, int(k)), int(c)) for k, c in _counted(keys)]
            )
        else:
            assert stat.law is not None
            raw = stat.law(context)
            if isinstance(raw, LawBracket):
                bracketed.append(stat.title)
            law = _tested_law(stat, raw)
        rows.append(_sum_row(stat, law, x, level, power, max_decks))
    return PowerPlan(n, alpha, power, m, level, simulate, tuple(rows), confidence, tuple(bracketed))


def _bet_row(
    spec: Statistic, codes: np.ndarray, shoe: ShoeContext, level: float, target: float, cap: int
) -> PowerRow:
    """Shoes the betting guessing test (:mod:`shufflecheck.stats.guessing_bet`) needs: each
    simulated shoe adds ``g_j = lambda_j S - sum log(1 - p + p e^lambda_j)`` to the log of
    tilt ``j``'s martingale; with the best tilt's mean ``mu`` and spread ``sigma`` per shoe,
    ``D`` shoes reach the e-value ``len(TILTS) / level`` with chance about ``target`` when
    ``D mu - z sigma sqrt(D) >= log(len(TILTS) / level)`` (normal working model)."""
    _, cols = greedy_step_cells(np.asarray(shoe.class_counts))
    sims = codes.shape[0]
    gains = shoe_gains(codes, cols)
    means = gains.mean(axis=0)
    best = int(np.argmax(means))
    mu = float(means[best])
    sigma = float(gains[:, best].std(ddof=1)) if sims > 1 else 0.0
    se = sigma / math.sqrt(sims) if sims > 0 else math.inf
    base = (
        f"test martingale, {len(TILTS)} tilts: the best tilt's gain per shoe over {sims} "
        "simulated shoes, normal working model for the sum; shift = mean log-gain per shoe"
    )
    if not mu > _RESOLUTION * se:
        return _not_detected(
            spec, mu, se, None, base, "no gain of the bet detectable in the simulated shoes"
        )
    goal = math.log(len(TILTS) / level)
    z = normal_quantile(target)
    root = (z * sigma + math.sqrt((z * sigma) ** 2 + 4 * mu * goal)) / (2 * mu)
    decks = max(1, math.ceil(root**2))
    rel_se = 2 * se / mu
    if decks > cap:
        return _not_detected(spec, mu, se, rel_se, base, f"needs more than {cap} shoes")
    return PowerRow(spec.name, spec.title, decks, target, mu, se, rel_se, "estimate", base, "")


def _tested_law(stat: Statistic, law: Law | LawBracket) -> Law:
    """The exact law an audit tests ``stat`` against: the law itself, or for a bracketed law
    the end whose p-value the audit reports (the upper law for ``greater``, the lower for
    ``less``), so that a plan's critical values are the audit's."""
    if not isinstance(law, LawBracket):
        return law
    if stat.alternative == "greater":
        return law.upper_law
    if stat.alternative == "less":
        return law.lower_law
    raise InputError(f"{stat.name}: a bracketed law supports one-sided tests only")


def _counted(keys: np.ndarray) -> list[tuple[int, int]]:
    values, counts = np.unique(keys, return_counts=True)
    return list(zip(values.tolist(), counts.tolist(), strict=True))


def _mixture_law(parts: list[tuple[Law, int]]) -> Law:
    """The mixture of exact laws with integer weights, as one exact law."""
    from math import lcm

    low = min(law.low for law, _ in parts)
    high = max(law.high for law, _ in parts)
    scale = lcm(*(law.total for law, _ in parts))
    counts = [0] * (high - low + 1)
    weight = sum(w for _, w in parts)
    for law, w in parts:
        factor = w * (scale // law.total)
        for k, c in enumerate(law.counts):
            counts[law.offset - low + k] += c * factor
    return Law.from_counts(counts, scale * weight, offset=low)


def _class_position_row(
    spec: Statistic, words: np.ndarray, shoe: ShoeContext, level: float, target: float, cap: int
) -> PowerRow:
    from shufflecheck.stats.shoe_statistics import class_position_counts

    sims, n = words.shape
    sizes = np.asarray(shoe.class_counts, dtype=float)
    share = sizes / n
    freq = class_position_counts(words, shoe.class_array(), sizes.size) / sims
    df = (n - 1) * (sizes.size - 1)
    # noncentrality per shoe: sum_(i,v) (f - share)^2 / share, debiased by the sampling
    # variance f (1 - f) / sims of each cell
    raw = float((((freq - share) ** 2) / share).sum())
    noise = float(((freq * (1 - freq)) / share).sum()) / sims
    base = (
        f"noncentral chi-square ({df} df) with noncentrality (n-1)/n D sum (f - c/n)^2/(c/n), "
        f"f the position-by-value frequencies of {sims} simulated shoes (debiased)"
    )
    return _chi_square_row(
        spec,
        raw - noise,
        math.sqrt(2 * df) / (sims * (n - 1)),
        df,
        (n - 1) / n,
        base,
        "shift = sum of squared frequency departures over their shares",
        (level, target, cap, "shoes"),
    )
