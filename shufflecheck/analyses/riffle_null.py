"""Is a dealer's riffle the ideal riffle? Tests of the Gilbert-Shannon-Reeds riffle on a log.

The null hypothesis: every recorded riffle is an independent ideal riffle (binomial cut,
each card falling from a hand with chance proportional to the cards it holds; [1], [2]).
It is a simple hypothesis (no free parameter), so every test below has an exact law or a
Monte Carlo null that is valid at any sample size. Riffles that left the deck unchanged
(their cut is not seen) are used by the likelihood-ratio test only; the other tests look
at the riffles that changed the deck, *given* that they changed it (under the null their
cuts and drops are still independent of each other across riffles, with the laws below).

* **cut centre** (exact): the sum of the cuts. Given a change, a cut has law
  ``(C(n,c) - 1)/(2^n - n - 1)`` under the null, so the sum over ``D`` riffles has the
  ``D``-fold convolution of it as its exact law (evaluated by exponential tilting,
  :func:`shufflecheck.stats.nulls.sum_tail_logs`); two-sided.
* **cut spread** (exact): the sum of the squared distances of the cuts from the middle,
  ``(c - n/2)^2``, with the same exact law; two-sided (cuts too tight or too loose).
* **packets** (exact, given the cuts): the number of packets (maximal runs of cards from
  one hand). Given its cut, every drop word but the unchanged deck's is equally likely, so a
  riffle's packets follow the law of runs of two kinds ([3]) with that word taken out; the
  sum over the riffles has the convolution of those laws as its exact law
  (:func:`shufflecheck.stats.nulls.mixed_sum_tail_logs`); two-sided. This is the direction
  in which a clump other than 1 moves the drops.
* **packet sizes** (Monte Carlo): how the packets are shared out between lengths, given
  their number: the likelihood-ratio (G) statistic of the packet-length counts against the
  exact expected counts given the cuts (scaled to the observed number of packets; lengths
  pooled so that every cell expects at least 5 packets).
* **likelihood ratio** (Monte Carlo): ``2 (l_max - l_ideal)``, the fitted hand riffle
  (:mod:`shufflecheck.analyses.riffle_estimates`) against the ideal riffle. The binomial
  cut is not one of the fitted cut curves, so the ratio has no chi-square law; its null law
  is simulated.

Monte Carlo p-values: ``B`` logs of the same number of riffles are simulated under the null
(the project's riffle sampler) and read off exactly as a recorded log is; the p-value is
``(1 + #{simulated >= observed}) / (B + 1)``, which is valid (``P(p <= a) <= a``) for every
``B`` ([4]). A simulated log whose parameters cannot be estimated counts as at least as
extreme (conservative). Holm's method ([5]) controls the family-wise error over the five
tests.

References
----------
.. [1] E. N. Gilbert, "Theory of shuffling", Bell Laboratories technical memorandum, 1955;
       J. Reeds, unpublished manuscript, 1981 (the GSR riffle).
.. [2] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [3] A. Wald and J. Wolfowitz, "On a test whether two samples are from the same
       population", Ann. Math. Statist. 11 (1940) 147-162.
.. [4] A. C. A. Hope, "A simplified Monte Carlo significance test procedure", J. Roy.
       Statist. Soc. Ser. B 30 (1968) 582-598.
.. [5] S. Holm, "A simple sequentially rejective multiple test procedure", Scand. J.
       Statist. 6 (1979) 65-70.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from functools import cache
from typing import Any

import numpy as np

from shufflecheck.analyses.riffle_estimates import maximum_likelihood
from shufflecheck.common.checks import check_fraction, check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.quantity import Quantity, estimate
from shufflecheck.models.riffle import sample as sample_ideal
from shufflecheck.models.riffle_likelihood import (
    RiffleCounts,
    changed_cut_counts,
    decode_riffles,
    log_likelihood,
    packet_count_row,
    packet_length_totals,
    tally_riffles,
)
from shufflecheck.stats.holm import holm_log
from shufflecheck.stats.nulls import Law, mixed_sum_tail_logs, sum_p_value

__all__ = [
    "TEST_TITLES",
    "IdealRiffleTests",
    "NullTest",
    "cut_centre_law",
    "cut_spread_law",
    "expected_packet_lengths",
    "ideal_riffle_tests",
    "likelihood_ratio_statistic",
    "packet_laws",
    "packet_size_statistic",
]

TEST_TITLES = {
    "cut-centre": "cut centre",
    "cut-spread": "cut spread",
    "packets": "number of packets",
    "packet-sizes": "packet sizes",
    "likelihood-ratio": "likelihood ratio (fitted against ideal)",
}
#: simulated decks per batch of the Monte Carlo null (bounds memory)
_BATCH_DECKS = 100_000
#: drop-table cells of the simulated logs tallied at once (bounds memory for short logs)
_BATCH_CELLS = 4_000_000
#: least expected packets in a cell of the packet-size statistic
_LEAST_EXPECTED = 5.0


@dataclass(frozen=True)
class NullTest:
    """One test of the ideal riffle.

    ``statistic`` is the test's statistic (a sum over riffles, or G, or the likelihood
    ratio); ``log10_p_value`` its p-value and ``log10_p_adjusted`` Holm's adjusted p-value,
    as base-10 logs (exact magnitudes far below the double range for exact tests);
    ``method`` is ``exact`` or ``monte-carlo``; ``effect`` the size of the departure as a
    labelled estimate (None when there is no single number for it), ``effect_text`` the
    same in words.
    """

    __test__ = False  # not a pytest class

    name: str
    title: str
    statistic: float
    log10_p_value: float
    log10_p_adjusted: float
    method: str
    alternative: str
    effect: Quantity | None
    effect_text: str
    flagged: bool

    @property
    def p_value(self) -> float:
        return 10.0**self.log10_p_value

    @property
    def p_adjusted(self) -> float:
        return 10.0**self.log10_p_adjusted

    def as_json(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "title": self.title,
            "statistic": self.statistic,
            "p_value": max(self.p_value, 1e-300),
            "p_adjusted": max(self.p_adjusted, 1e-300),
            "log10_p_value": self.log10_p_value,
            "log10_p_adjusted": self.log10_p_adjusted,
            "method": self.method,
            "alternative": self.alternative,
            "effect": None if self.effect is None else self.effect.as_json(),
            "effect_text": self.effect_text,
            "flagged": self.flagged,
        }


@dataclass(frozen=True)
class IdealRiffleTests:
    """The tests of the ideal riffle on one log, with Holm's family-wise control."""

    tests: tuple[NullTest, ...]
    alpha: float
    samples: int
    seed: int | None

    @property
    def flagged(self) -> bool:
        return any(t.flagged for t in self.tests)

    def verdict(self) -> str:
        """``rejected at family-wise level 0.01 by: cut spread, ...`` or ``not rejected ...``."""
        if not self.flagged:
            return (
                f"not rejected at family-wise level {self.alpha:g} by any of the "
                f"{len(self.tests)} tests"
            )
        names = ", ".join(t.title for t in self.tests if t.flagged)
        return f"rejected at family-wise level {self.alpha:g} by: {names}"

    def by_name(self, name: str) -> NullTest:
        return next(t for t in self.tests if t.name == name)

    def as_json(self) -> dict[str, Any]:
        return {
            "alpha": self.alpha,
            "flagged": self.flagged,
            "verdict": self.verdict(),
            "monte_carlo_samples": self.samples,
            "seed": self.seed,
            "tests": [t.as_json() for t in self.tests],
        }


# ---------------------------------------------------------------------------------------
# exact laws under the ideal riffle


@cache
def cut_centre_law(cards: int) -> Law:
    """Exact law of the cut of an ideal riffle that changed the deck."""
    counts = changed_cut_counts(cards)
    return Law.from_counts(counts, sum(counts))


def _spread_value(cut: np.ndarray | int, cards: int) -> np.ndarray | int:
    """``((2c - n)^2 - (n mod 2)) / 4``: the integer form of ``(c - n/2)^2`` (it is
    ``(c - n/2)^2`` for even ``n`` and ``(c - n/2)^2 - 1/4`` for odd ``n``)."""
    return ((2 * cut - cards) ** 2 - cards % 2) // 4


@cache
def cut_spread_law(cards: int) -> Law:
    """Exact law of ``_spread_value(c)`` for the cut of an ideal riffle that changed the deck."""
    counts = changed_cut_counts(cards)
    values = [_spread_value(c, cards) for c in range(cards + 1)]
    row = [0] * (max(values) + 1)
    for v, k in zip(values, counts, strict=True):
        row[v] += k
    return Law.from_counts(row, sum(counts))


@cache
def _packet_law(cut: int, cards: int) -> Law:
    row = packet_count_row(cut, cards)
    return Law.from_counts(row, math.comb(cards, cut) - 1)


def packet_laws(counts: RiffleCounts) -> list[tuple[Law, int]]:
    """``[(law of the packets given cut c, riffles with cut c), ...]`` under the null."""
    n = counts.cards
    return [(_packet_law(int(c), n), int(counts.cuts[c])) for c in np.flatnonzero(counts.cuts)]


@cache
def _packet_length_table(cards: int) -> np.ndarray:
    """``table[c, l]``: expected packets of length ``l`` in an ideal riffle with cut ``c``
    that changed the deck (exact ratios, each rounded once; rows 0 and n are zero)."""
    table = np.zeros((cards + 1, cards + 1))
    for c in range(1, cards):
        total = math.comb(cards, c) - 1
        table[c] = [float(Fraction(k, total)) for k in packet_length_totals(c, cards)]
    table.flags.writeable = False
    return table


def expected_packet_lengths(counts: RiffleCounts) -> np.ndarray:
    """Expected packets of each length (index = cards, 0..n) under the ideal riffle, given
    the cuts of the riffles that changed the deck."""
    return counts.cuts.astype(float) @ _packet_length_table(counts.cards)


def _pooled_cells(expected: np.ndarray) -> list[tuple[int, int]]:
    """Cells ``[start, stop)`` of packet lengths 1..n, each expecting >= 5 packets: single
    lengths while they and what is left expect enough, then one tail cell."""
    n = expected.size - 1
    cells = []
    start = 1
    left = float(expected[1:].sum())
    while start <= n:
        here = float(expected[start])
        if here >= _LEAST_EXPECTED and left - here >= _LEAST_EXPECTED:
            cells.append((start, start + 1))
            left -= here
            start += 1
        else:
            cells.append((start, n + 1))
            break
    return cells


def packet_size_statistic(counts: RiffleCounts) -> float:
    """G statistic of the packet-length counts against the ideal riffle's expected shares
    given the cuts (0 when fewer than two cells can be formed)."""
    expected = expected_packet_lengths(counts)
    observed = counts.packet_lengths.astype(float)
    if observed.sum() == 0:
        return 0.0
    cells = _pooled_cells(expected)
    if len(cells) < 2:
        return 0.0
    o = np.array([observed[a:b].sum() for a, b in cells])
    e = np.array([expected[a:b].sum() for a, b in cells])
    e *= o.sum() / e.sum()
    mask = o > 0
    return float(2.0 * np.sum(o[mask] * np.log(o[mask] / e[mask])))


def likelihood_ratio_statistic(counts: RiffleCounts) -> float:
    """``2 (l_max - l_ideal)``: the fitted hand riffle against the ideal riffle (nats)."""
    best = maximum_likelihood(counts)
    return 2.0 * (best.log_likelihood - log_likelihood(counts, None, 1.0))


# ---------------------------------------------------------------------------------------
# the tests


@cache
def _ideal_mean_square(cards: int) -> float:
    """Exact ``E[(c - n/2)^2]`` for the cut of an ideal riffle that changed the deck."""
    counts = changed_cut_counts(cards)
    total = sum(k * (2 * c - cards) ** 2 for c, k in enumerate(counts))
    return float(Fraction(total, 4 * sum(counts)))


def _two_sided(law_parts: list[tuple[Law, int]], total: int) -> float:
    """Natural log of the doubled smaller tail (capped at 1)."""
    if len(law_parts) == 1:
        law, decks = law_parts[0]
        return sum_p_value(law, decks, total, "two-sided")
    lower, upper = mixed_sum_tail_logs(law_parts, total)
    return min(0.0, math.log(2.0) + min(lower, upper))


def _mean_and_error(values: np.ndarray, weights: np.ndarray) -> tuple[float, float]:
    total = float(weights.sum())
    mean = float(weights @ values) / total
    if total < 2:
        return mean, math.inf
    var = float(weights @ (values - mean) ** 2) / (total - 1)
    return mean, math.sqrt(var / total)


def _cut_tests(counts: RiffleCounts) -> list[dict]:
    n = counts.cards
    decks = counts.changed
    c = np.arange(n + 1, dtype=float)
    weights = counts.cuts.astype(float)
    out = []
    # cut centre
    law = cut_centre_law(n)
    total = int(counts.cuts @ np.arange(n + 1))
    mean, se = _mean_and_error(c, weights)
    offset = mean - n / 2
    effect = (
        estimate(offset, stderr=se, unit="cards", digits=3, method="mean cut minus n/2")
        if math.isfinite(se)
        else None
    )
    side = "below" if offset < 0 else "above"
    out.append(
        {
            "name": "cut-centre",
            "statistic": float(total),
            "log_p": _two_sided([(law, decks)], total),
            "method": "exact",
            "alternative": "two-sided",
            "effect": effect,
            "effect_text": (
                f"the top packet held {mean:.2f} cards on average, {abs(offset):.2f} {side} the "
                f"middle ({n / 2:g}); the ideal riffle's mean is the middle"
            ),
        }
    )
    # cut spread
    law = cut_spread_law(n)
    values = _spread_value(np.arange(n + 1), n)
    total = int(counts.cuts @ values)
    squares = (c - n / 2) ** 2
    m2, se2 = _mean_and_error(squares, weights)
    rms = math.sqrt(m2)
    ideal = math.sqrt(_ideal_mean_square(n))
    rms_se = se2 / (2 * rms) if rms > 0 and math.isfinite(se2) else None
    effect = (
        estimate(
            rms - ideal,
            stderr=rms_se,
            unit="cards",
            digits=3,
            method="root mean square of c - n/2 minus its exact value for the ideal riffle",
        )
        if rms_se is not None
        else None
    )
    out.append(
        {
            "name": "cut-spread",
            "statistic": float(m2),
            "log_p": _two_sided([(law, decks)], total),
            "method": "exact",
            "alternative": "two-sided",
            "effect": effect,
            "effect_text": (
                f"cuts lay {rms:.2f} cards from the middle (root mean square); "
                f"{ideal:.2f} for the ideal riffle (exact)"
            ),
        }
    )
    return out


def _packet_test(counts: RiffleCounts) -> dict:
    parts = packet_laws(counts)
    decks = counts.changed
    expected = sum(float(law.mean) * m for law, m in parts) / decks
    mean = counts.packets / decks
    var = (counts.packets_squared - decks * mean * mean) / (decks - 1) if decks > 1 else math.inf
    se = math.sqrt(max(var, 0.0) / decks) if math.isfinite(var) else math.inf
    effect = (
        estimate(
            mean - expected,
            stderr=se,
            unit="packets per riffle",
            digits=3,
            method="observed mean minus the exact mean given the cuts",
        )
        if math.isfinite(se)
        else None
    )
    more = "more" if mean > expected else "fewer"
    return {
        "name": "packets",
        "statistic": float(counts.packets),
        "log_p": _two_sided(parts, counts.packets),
        "method": "exact",
        "alternative": "two-sided",
        "effect": effect,
        "effect_text": (
            f"{mean:.2f} packets per riffle against {expected:.2f} for the ideal riffle with "
            f"the same cuts ({more} packets: "
            + ("cards alternate more)" if mean > expected else "cards fall in larger clumps)")
        ),
    }


def _packet_size_effect(counts: RiffleCounts) -> str:
    expected = expected_packet_lengths(counts)
    observed = counts.packet_lengths.astype(float)
    cells = _pooled_cells(expected)
    o = np.array([observed[a:b].sum() for a, b in cells])
    e = np.array([expected[a:b].sum() for a, b in cells])
    if o.sum() == 0 or len(cells) < 2:
        return "too few packets to compare their sizes"
    share_o, share_e = o / o.sum(), e / e.sum()
    k = int(np.argmax(np.abs(share_o - share_e)))
    a, b = cells[k]
    what = f"{a} card{'s' if a != 1 else ''}" if b == a + 1 else f"{a} cards or more"
    return (
        f"packets of {what}: {100 * share_o[k]:.1f}% of the packets, against "
        f"{100 * share_e[k]:.1f}% for the ideal riffle with the same cuts"
    )


def _simulate(
    riffles: int,
    cards: int,
    samples: int,
    rng: np.random.Generator,
    progress: Callable[[int], None] | None,
) -> tuple[np.ndarray, np.ndarray]:
    """The likelihood-ratio and packet-size statistics of ``samples`` logs of ideal riffles."""
    ratios = np.empty(samples)
    sizes = np.empty(samples)
    # logs per batch: bounded by the decks simulated and by the drop tables tallied at once
    per_batch = max(1, min(_BATCH_DECKS // max(riffles, 1), _BATCH_CELLS // (cards + 1) ** 2))
    done = 0
    while done < samples:
        logs = min(per_batch, samples - done)
        relative = sample_ideal(logs * riffles, cards, rng=rng)
        groups = np.repeat(np.arange(logs), riffles)
        for j, counts in enumerate(tally_riffles(decode_riffles(relative), groups, logs)):
            try:
                ratios[done + j] = likelihood_ratio_statistic(counts)
            except InputError:  # nothing to estimate from: count it as extreme
                ratios[done + j] = math.inf
            sizes[done + j] = packet_size_statistic(counts) if counts.changed else math.inf
        done += logs
        if progress is not None:
            progress(done)
    return ratios, sizes


def _monte_carlo_log_p(observed: float, simulated: np.ndarray) -> float:
    """``log((1 + #{simulated >= observed}) / (B + 1))``, with a relative tolerance for
    ties computed the same way twice."""
    tolerance = 1e-9 * max(1.0, abs(observed))
    hits = int(np.sum(simulated >= observed - tolerance))
    return math.log((1 + hits) / (simulated.size + 1))


def ideal_riffle_tests(
    counts: RiffleCounts,
    *,
    alpha: float = 0.01,
    samples: int = 999,
    rng: np.random.Generator | int | None = None,
    progress: Callable[[int], None] | None = None,
) -> IdealRiffleTests:
    """Test the ideal riffle on a log's riffles (see the module notes for each test).

    Parameters
    ----------
    counts : RiffleCounts
        The riffles of the log (at least one that changed the deck).
    alpha : float
        Family-wise error level (Holm), default 0.01.
    samples : int
        Simulated logs for the Monte Carlo nulls (default 999; at least 19), or 0 to run
        only the three exact tests (Holm then adjusts over those three).
    rng : Generator, int or None
        Randomness of the Monte Carlo nulls (an int seed makes them reproducible).
    progress : callable, optional
        Called with the number of simulated logs done so far.

    Returns
    -------
    IdealRiffleTests
    """
    alpha = check_fraction(alpha, "alpha")
    samples = check_integer(samples, "samples", low=0)
    if 0 < samples < 19:
        raise InputError(
            f"samples must be 0 (exact tests only) or at least 19, got {samples}",
            argument="samples",
        )
    if not isinstance(counts, RiffleCounts) or counts.changed == 0:
        raise InputError("the tests need at least one riffle that changed the deck")
    seed = rng if isinstance(rng, int) and not isinstance(rng, bool) else None
    rows = [*_cut_tests(counts), _packet_test(counts)]
    if samples:
        rows += _monte_carlo_tests(counts, samples, np.random.default_rng(rng), progress)
    adjusted = holm_log([r["log_p"] for r in rows])
    tests = tuple(
        NullTest(
            name=r["name"],
            title=TEST_TITLES[r["name"]],
            statistic=r["statistic"],
            log10_p_value=r["log_p"] / math.log(10),
            log10_p_adjusted=float(adj) / math.log(10),
            method=r["method"],
            alternative=r["alternative"],
            effect=r["effect"],
            effect_text=r["effect_text"],
            flagged=bool(adj <= math.log(alpha)),
        )
        for r, adj in zip(rows, adjusted, strict=True)
    )
    return IdealRiffleTests(tests, alpha, samples, seed)


def _monte_carlo_tests(
    counts: RiffleCounts,
    samples: int,
    generator: np.random.Generator,
    progress: Callable[[int], None] | None,
) -> list[dict]:
    rows = []
    ratios, sizes = _simulate(counts.riffles, counts.cards, samples, generator, progress)
    observed_size = packet_size_statistic(counts)
    rows.append(
        {
            "name": "packet-sizes",
            "statistic": observed_size,
            "log_p": _monte_carlo_log_p(observed_size, sizes),
            "method": "monte-carlo",
            "alternative": "greater",
            "effect": None,
            "effect_text": _packet_size_effect(counts),
        }
    )
    observed_ratio = likelihood_ratio_statistic(counts)
    rows.append(
        {
            "name": "likelihood-ratio",
            "statistic": observed_ratio,
            "log_p": _monte_carlo_log_p(observed_ratio, ratios),
            "method": "monte-carlo",
            "alternative": "greater",
            "effect": None,
            "effect_text": (
                f"the fitted hand riffle is {observed_ratio / 2:.3g} nats more likely than the "
                f"ideal riffle ({observed_ratio / (2 * counts.riffles):.3g} per riffle)"
            ),
        }
    )
    return rows
