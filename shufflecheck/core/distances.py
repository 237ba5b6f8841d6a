"""Distances to a uniformly random deck, step counts for a target, and their labels.

Three distances between the law ``P`` of the deck and the uniform law ``U`` on ``n!``
arrangements:

* total variation ``TV = 1/2 sum |P - U|``: the largest advantage ``P(A) - U(A)`` on any
  single yes/no event ``A``;
* separation ``max_sigma (1 - n! P(sigma))``: a guarantee that ``P >= (1 - s) U``, always
  ``>= TV``, used for strong claims;
* Kullback–Leibler divergence ``KL(P || U) = log n! - H(P)``, in bits (finite: it is at most
  ``log2 n!``, reached by a deterministic deck).

Every row says how it was obtained: ``exact`` (an exact law, evaluated with exact integer
arithmetic and rounded to floating point only at the end, unless the row's note says it was
propagated in double precision), ``bound`` (a rigorous upper bound) or ``estimate``.

Most exact laws here are constant on groups of arrangements (rising sequences for riffles,
bottom runs for top-to-random): :func:`distances_from_groups` takes the group sizes and the
common probability of each group as integers over one denominator and returns all three
distances without cancellation.

References
----------
.. [1] D. Aldous and P. Diaconis, "Strong uniform times and finite random walks", Adv. in
       Appl. Math. 8 (1987) 69-97 (separation, its submultiplicativity).
.. [2] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of Mathematical
       Statistics, Hayward, CA, 1988, ch. 3 (total variation, upper bound lemma).
.. [3] T. M. Cover and J. A. Thomas, *Elements of Information Theory*, 2nd ed., Wiley, 2006
       (relative entropy).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

from shufflecheck.common.errors import InputError
from shufflecheck.common.numbers import gap_float
from shufflecheck.common.quantity import Kind

METRICS = ("total_variation", "separation", "kl_bits")
#: command-line spellings of the metrics
METRIC_NAMES = {"total-variation": "total_variation", "separation": "separation", "kl": "kl_bits"}
#: the metrics in words (tables, reports, sentences)
METRIC_LABELS = {
    "total_variation": "total variation",
    "separation": "separation",
    "kl_bits": "KL divergence (bits)",
}

__all__ = [
    "METRICS",
    "METRIC_LABELS",
    "METRIC_NAMES",
    "DistanceRow",
    "MixingCurve",
    "check_metric",
    "check_target",
    "chi_square_from_groups",
    "distances_from_groups",
    "kl_term",
    "minimum_steps",
    "row_from_groups",
]


@dataclass(frozen=True)
class DistanceRow:
    """Distances to uniform after ``steps`` steps, labelled with how they were obtained.

    ``kind`` says how all three were obtained (``exact``, ``bound`` for rigorous upper
    bounds, ``estimate``); ``note`` says in words which method gave them. A field is None
    when the method gives no value for that metric (e.g. the upper bound lemma bounds total
    variation only).

    ``total_variation_below_one`` and ``separation_below_one`` are ``1 - value`` computed
    in exact integers, where the method has them: after one riffle of 52 cards the total
    variation is ``1 - 5.5e-53``, which a float rounds to ``1.0``; displays show it as such
    and never as 1 (None: ``1 - value`` of the float is all there is, and it is exact).
    """

    steps: int
    total_variation: float | None
    separation: float | None
    kl_bits: float | None
    kind: Kind
    note: str = ""
    total_variation_below_one: float | None = None
    separation_below_one: float | None = None

    def value(self, metric: str) -> float | None:
        return getattr(self, metric)

    def below_one(self, metric: str) -> float | None:
        """``1 - value`` for total variation or separation (exact where the method gives
        it, else from the float, exact there for values >= 1/2); None for KL or no value."""
        value = self.value(metric)
        if value is None or metric == "kl_bits":
            return None
        given = getattr(self, f"{metric}_below_one")
        return given if given is not None else 1.0 - value


@dataclass(frozen=True)
class MixingCurve:
    """Distances for ``k = 1..K`` steps of one model on ``cards`` cards.

    ``rows`` hold the model's main method (exact where it exists); ``bounds`` hold extra
    rigorous curves (e.g. the upper bound lemma) shown beside it. ``source`` names the
    method and its published source in one line.
    """

    model: str
    cards: int
    parameters: dict[str, object]
    rows: tuple[DistanceRow, ...]
    source: str
    bounds: tuple[DistanceRow, ...] = field(default_factory=tuple)
    bound_source: str = ""
    bound_name: str = ""

    def minimum(self, target: float, metric: str = "total_variation") -> int | None:
        """The fewest steps whose exact value (or rigorous upper bound) is ``<= target``."""
        return minimum_steps(self.rows, metric, target)

    def to_dict(self) -> dict[str, object]:
        """Plain types: model, cards, parameters, source, and every row with its ``kind``."""

        def row(r: DistanceRow) -> dict[str, object]:
            return {
                "steps": r.steps,
                "total_variation": r.total_variation,
                "separation": r.separation,
                "kl_bits": r.kl_bits,
                "kind": r.kind,
            }

        return {
            "model": self.model,
            "cards": self.cards,
            "parameters": dict(self.parameters),
            "source": self.source,
            "rows": [row(r) for r in self.rows],
            "bounds": [row(r) for r in self.bounds],
            "bound_source": self.bound_source or None,
        }

    def to_frame(self):  # -> pandas.DataFrame
        """One row per number of steps: the three distances and how they were obtained."""
        import pandas as pd

        return pd.DataFrame(self.to_dict()["rows"]).set_index("steps")


def check_metric(metric: str) -> str:
    """Normalise a metric name (``total-variation``, ``separation``, ``kl`` or field names)."""
    if metric in METRICS:
        return metric
    if metric in METRIC_NAMES:
        return METRIC_NAMES[metric]
    raise InputError(f"unknown metric {metric!r}; choose total-variation, separation or kl")


def check_target(target: float | None) -> float | None:
    """A distance target must lie in (0, 1]."""
    if target is None:
        return None
    if not (isinstance(target, (int, float)) and 0 < target <= 1) or math.isnan(target):
        raise InputError(f"target must be in (0, 1], got {target}")
    return float(target)


def minimum_steps(rows: Sequence[DistanceRow], metric: str, target: float | None) -> int | None:
    """The first ``steps`` whose value is ``<= target``, from exact or upper-bound rows only.

    Distances to uniform never increase with more steps of the same shuffle, so the first
    row that meets the target is the minimum. Estimates never certify a minimum.
    """
    metric = check_metric(metric)
    if target is None:
        return None
    for row in sorted(rows, key=lambda r: r.steps):
        value = row.value(metric)
        if row.kind in ("exact", "bound") and value is not None and value <= target:
            return row.steps
    return None


def kl_term(weight: float, u: float, log_t: float) -> float:
    """``weight * f(1 + u)`` with ``f(t) = t ln t - t + 1`` (nats), accurate for all ``t >= 0``.

    ``KL(P || U) = sum_sigma U(sigma) f(P(sigma)/U(sigma))`` with every term >= 0, so sums
    of these terms lose no digits. The caller passes ``u = t - 1`` computed exactly (so a
    ``t`` within 1e-20 of 1 keeps its digits) and ``log_t = ln t`` (``-inf`` at ``t = 0``).
    Near ``t = 1`` the series ``f(1+u) = sum_{k>=2} (-1)^k u^k / (k (k - 1))`` is used. For
    huge ``t`` callers use ``mass * (ln t - 1) + weight`` with ``mass = weight * t`` instead.
    """
    if log_t == -math.inf:
        return weight
    if abs(u) < 0.25:
        total, power, k = 0.0, u * u, 2
        while True:
            term = power / (k * (k - 1))
            total += term if k % 2 == 0 else -term
            if abs(term) <= 1e-18 * abs(total) or k > 80:
                break
            power *= u
            k += 1
        return weight * total
    t = 1.0 + u
    return weight * (t * log_t - t + 1.0)


def distances_from_groups(
    counts: Sequence[int], numerators: Sequence[int], denominator: int, n_factorial: int
) -> tuple[float, float, float]:
    """(TV, separation, KL in bits) of a law constant on groups of arrangements.

    Group ``g`` holds ``counts[g]`` arrangements, each of probability
    ``numerators[g] / denominator``; ``sum(counts) == n_factorial``. All sums are exact
    integers until the final division, so tiny distances keep their digits.
    """
    tv_numerator = 0
    min_numerator = None
    kl_nats = 0.0
    scale = denominator  # U(sigma) = 1/n!  <->  numerator * n! == denominator
    log_scale = math.log(n_factorial) - math.log(denominator)
    for count, numerator in zip(counts, numerators, strict=True):
        if count == 0:
            continue
        tv_numerator += count * abs(numerator * n_factorial - scale)
        if min_numerator is None or numerator < min_numerator:
            min_numerator = numerator
        # t = n! P(sigma) = numerator * n! / denominator
        weight = count / n_factorial
        if numerator == 0:
            kl_nats += kl_term(weight, -1.0, -math.inf)
            continue
        log_t = math.log(numerator) + log_scale
        if log_t < 30:
            u = (numerator * n_factorial - denominator) / denominator  # exact, then rounded
            kl_nats += kl_term(weight, u, log_t)
        else:
            # weight * t = count * numerator / denominator is a probability: finite
            mass = (count * numerator) / denominator
            kl_nats += mass * (log_t - 1.0) + weight
    tv = tv_numerator / (2 * denominator * n_factorial)
    assert min_numerator is not None
    separation = (scale - min_numerator * n_factorial) / scale
    return float(tv), float(separation), kl_nats / math.log(2)


def row_from_groups(
    steps: int,
    counts: Sequence[int],
    numerators: Sequence[int],
    denominator: int,
    n_factorial: int,
    note: str = "",
) -> DistanceRow:
    """The exact :class:`DistanceRow` of a law constant on groups (see
    :func:`distances_from_groups`), with ``1 - TV = sum_sigma min(P, U)`` and
    ``1 - separation = n! min P`` from the same integers, so values a float rounds to 1
    keep their distance to 1."""
    tv, sep, kl = distances_from_groups(counts, numerators, denominator, n_factorial)
    overlap = 0  # sum of count * min(numerator * n!, denominator), over denominator * n!
    least = None
    for count, numerator in zip(counts, numerators, strict=True):
        if count == 0:
            continue
        overlap += count * min(numerator * n_factorial, denominator)
        least = numerator if least is None else min(least, numerator)
    assert least is not None
    return DistanceRow(
        steps,
        tv,
        sep,
        kl,
        "exact",
        note,
        total_variation_below_one=gap_float(overlap, denominator * n_factorial),
        separation_below_one=gap_float(least * n_factorial, denominator),
    )


def _ratio(numerator: int, denominator: int) -> float:
    """``numerator / denominator`` as a float, ``inf`` when it is too large for one."""
    try:
        return numerator / denominator
    except OverflowError:
        return math.inf


def chi_square_from_groups(
    counts: Sequence[int], numerators: Sequence[int], denominator: int, n_factorial: int
) -> tuple[float, float]:
    """(chi-square distance, largest likelihood ratio) of a law constant on groups.

    The chi-square distance to uniform is ``chi2 = n! sum_sigma (P(sigma) - 1/n!)^2
    = n! sum_sigma P(sigma)^2 - 1`` (the squared ``L2(U)`` norm of ``n! P - 1``); the
    largest likelihood ratio is ``n! max_sigma P(sigma)``. Groups as in
    :func:`distances_from_groups`. Both are exact integers until the final division; a
    value beyond the double range (a law on a small part of ``n!`` arrangements) is ``inf``.
    """
    squares = 0
    largest = 0
    for count, numerator in zip(counts, numerators, strict=True):
        if count == 0:
            continue
        squares += count * numerator * numerator
        largest = max(largest, numerator)
    square_denominator = denominator * denominator
    chi2 = _ratio(n_factorial * squares - square_denominator, square_denominator)
    return max(chi2, 0.0), _ratio(n_factorial * largest, denominator)
