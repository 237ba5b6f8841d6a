"""Frozen result objects of an audit and their JSON form.

The JSON contract of ``shufflecheck audit --json`` is produced by :meth:`AuditResult.as_json`:

``{"decks", "set_aside", "alpha", "flagged", "tests": [{"name", "statistic", "p_value",
"p_adjusted", "method", "effect", ...}], "groups": {value: {...same per group...}}}``

Every test also carries ``log10_p_value`` and ``log10_p_adjusted`` (exact magnitudes far
below the double range), ``alternative`` and ``detail``; ``p_value`` and ``p_adjusted`` are
floored at :data:`P_FLOOR` (``p_below_floor`` says when). ``method`` is ``exact``,
``asymptotic`` or ``monte-carlo``. An effect is an *estimate* from the recorded decks
(observed per-deck mean minus the exact expectation under a uniform deck) with its
standard error.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from shufflecheck.common.numbers import P_FLOOR, p_relation
from shufflecheck.common.quantity import Quantity

__all__ = ["P_FLOOR", "AuditResult", "BatteryResult", "Effect", "SinceWhen", "TestResult"]


@dataclass(frozen=True)
class Effect:
    """Size of a departure from random in plain units.

    ``value`` is ``observed - expected`` in ``unit`` (an estimate from the decks);
    ``expected`` is exact under a uniform deck; ``standard_error`` estimates the
    uncertainty of ``observed``; ``text`` says it in one sentence.
    """

    value: float
    unit: str
    observed: float
    expected: float
    standard_error: float
    text: str

    @property
    def quantity(self) -> Quantity:
        """The effect as a labelled number (an estimate with its standard error)."""
        return Quantity(
            self.value,
            "estimate",
            stderr=self.standard_error,
            unit=self.unit,
            method="observed mean per deck minus the exact mean under a uniform deck",
        )

    def as_json(self) -> dict[str, Any]:
        return {
            "value": self.value,
            "unit": self.unit,
            "observed": self.observed,
            "expected": self.expected,
            "standard_error": self.standard_error,
            "kind": self.quantity.kind,
            "text": self.text,
        }


@dataclass(frozen=True)
class TestResult:
    """One test of the battery.

    ``statistic`` is the sum of the per-deck statistic over the decks (or the chi-square
    statistic); ``log10_p_value`` is exact to about 10 significant digits for ``exact``
    methods; ``p_adjusted`` is Holm's adjusted p-value over the battery.
    """

    __test__ = False  # not a pytest class

    name: str
    title: str
    statistic: float
    log10_p_value: float
    log10_p_adjusted: float
    method: str
    detail: str
    alternative: str
    effect: Effect
    flagged: bool
    #: for a test against a bracketed law (method ``bound``), the smaller end of the
    #: p-value bracket (``log10_p_value`` is the larger, the one reported and adjusted)
    log10_p_value_low: float | None = None

    @property
    def p_value(self) -> float:
        """The p-value as a float (0.0 below the double range; see ``log10_p_value``)."""
        return 10.0**self.log10_p_value

    @property
    def p_adjusted(self) -> float:
        """Holm-adjusted p-value as a float."""
        return 10.0**self.log10_p_adjusted

    def as_json(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "title": self.title,
            # a sum of per-deck counts is a whole number: an integer in the JSON too
            "statistic": int(self.statistic)
            if math.isfinite(self.statistic) and float(self.statistic).is_integer()
            else self.statistic,
            "p_value": max(self.p_value, P_FLOOR),
            "p_adjusted": max(self.p_adjusted, P_FLOOR),
            "p_below_floor": self.log10_p_value < math.log10(P_FLOOR),
            "log10_p_value": self.log10_p_value,
            "log10_p_adjusted": self.log10_p_adjusted,
            "method": self.method,
            "detail": self.detail,
            "alternative": self.alternative,
            "flagged": self.flagged,
            "effect": self.effect.as_json(),
            **(
                {}
                if self.log10_p_value_low is None
                else {
                    "p_value_low": max(10.0**self.log10_p_value_low, P_FLOOR),
                    "log10_p_value_low": self.log10_p_value_low,
                }
            ),
        }


@dataclass(frozen=True)
class SinceWhen:
    """Where a lasting bias most likely began, in the order the decks were given (an estimate).

    ``start`` is the 1-based index (in time order within the group) of the first deck of the
    biased stretch; ``statistic`` is the largest standardised excess over the null mean of
    the decks from a start to the end.
    """

    test: str
    start: int
    decks_after: int
    mean_before: float | None
    mean_after: float
    expected: float
    statistic: float
    method: str
    text: str
    #: 1-based decks ``low``..``high`` holding the start at about ``level`` (an estimate)
    low: int | None = None
    high: int | None = None
    level: float | None = None
    #: the statistic on every deck of the group, in time order (for charts; not in JSON)
    series: tuple[float, ...] = ()

    def as_json(self) -> dict[str, Any]:
        return {
            "test": self.test,
            "start": self.start,
            "interval": (
                None
                if self.low is None
                else {"low": self.low, "high": self.high, "level": self.level, "kind": "estimate"}
            ),
            "decks_after": self.decks_after,
            "mean_before": self.mean_before,
            "mean_after": self.mean_after,
            "expected": self.expected,
            "statistic": self.statistic,
            "kind": "estimate",
            "method": self.method,
            "text": self.text,
        }


@dataclass(frozen=True)
class BatteryResult:
    """The battery on one set of decks (all decks, or one group)."""

    decks: int
    alpha: float
    flagged: bool
    tests: tuple[TestResult, ...]
    skipped: tuple[tuple[str, str], ...] = ()
    since_when: SinceWhen | None = None
    #: what one recorded arrangement is called: "deck", or "shoe" for decks with copies
    unit: str = "deck"

    def by_adjusted_p(self) -> tuple[TestResult, ...]:
        """Tests sorted by adjusted p-value (most significant first), ties in battery order."""
        return tuple(sorted(self.tests, key=lambda t: (t.log10_p_adjusted, t.log10_p_value)))

    def test(self, name: str) -> TestResult:
        """The test called ``name``."""
        for t in self.tests:
            if t.name == name:
                return t
        raise KeyError(name)

    def verdict(self) -> str:
        """One line: flagged or not, and by which test."""
        if not self.flagged:
            return (
                f"no test flags the {self.decks:,} {self.unit}s at family-wise level "
                f"{self.alpha:g} (Holm); this is not proof of randomness"
            )
        worst = self.by_adjusted_p()[0]
        count = sum(t.flagged for t in self.tests)
        return (
            f"FLAGGED: {count} of {len(self.tests)} tests reject a uniform {self.unit} at "
            f"family-wise level {self.alpha:g} (Holm); strongest: {worst.title}, adjusted "
            f"p {p_relation(worst.log10_p_adjusted)}; {worst.effect.text}"
        )

    def as_json(self) -> dict[str, Any]:
        return {
            "decks": self.decks,
            "alpha": self.alpha,
            "flagged": self.flagged,
            "verdict": self.verdict(),
            "tests": [t.as_json() for t in self.tests],
            "skipped": [{"name": name, "reason": why} for name, why in self.skipped],
            "since_when": self.since_when.as_json() if self.since_when else None,
        }


@dataclass(frozen=True)
class AuditResult:
    """The battery on all decks, and on each group (``groups``: key -> result)."""

    overall: BatteryResult
    groups: tuple[tuple[Any, BatteryResult], ...] = field(default=())

    @property
    def decks(self) -> int:
        return self.overall.decks

    @property
    def alpha(self) -> float:
        return self.overall.alpha

    @property
    def flagged(self) -> bool:
        return self.overall.flagged

    @property
    def tests(self) -> tuple[TestResult, ...]:
        return self.overall.tests

    def group(self, key: Any) -> BatteryResult:
        for k, value in self.groups:
            if k == key:
                return value
        raise KeyError(key)

    def as_json(self, *, set_aside: int = 0) -> dict[str, Any]:
        """The JSON contract; ``set_aside`` is the number of rows the reader quarantined."""
        out = {"decks": self.decks, "set_aside": set_aside}
        out.update(self.overall.as_json())
        out["groups"] = {str(k): value.as_json() for k, value in self.groups}
        return out
