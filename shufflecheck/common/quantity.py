"""One number and how it was obtained: the labelled number every layer uses.

A :class:`Quantity` is a value together with its **kind**:

* ``exact`` — computed by an exact method (floats only at the very end);
* ``bound`` — a rigorous upper or lower bound (``side``); a bound may hold at a stated
  ``confidence`` rather than surely (a Monte Carlo lower bound, say);
* ``estimate`` — from random simulation or a finite sample, always with its standard error
  and/or a confidence ``interval`` at level ``confidence``;
* ``conjectured`` — a figure that rests on an unproven statement (the method says which);
  it may be a conjectured upper or lower bound (``side``). It is never a guarantee and must
  never be used to certify anything.

``method`` says, in free text, which method gave the number; ``unit`` is shown after it.
The models, the analyses, the CLI's JSON and the report tables all carry numbers in this
one form, so no layer can drop the label. :meth:`Quantity.as_json` is the JSON form used
everywhere: ``{"value", "kind", "side"?, "stderr"?, "interval"?, "confidence"?, "method"?,
"unit"?}``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Any, Literal

from shufflecheck.common.errors import InputError
from shufflecheck.common.numbers import (
    count_interval_text,
    decimals_for,
    format_number,
    json_number,
    percent,
    plain_number,
)

__all__ = [
    "KINDS",
    "LABEL_MEANINGS",
    "Kind",
    "Quantity",
    "Side",
    "bound",
    "conjectured",
    "estimate",
    "exact",
    "lower_bound",
    "upper_bound",
]

Kind = Literal["exact", "bound", "estimate", "conjectured"]
Side = Literal["upper", "lower"]
KINDS: tuple[str, ...] = ("exact", "bound", "estimate", "conjectured")

#: One sentence per kind, shown in every report beside the methods.
LABEL_MEANINGS: dict[str, str] = {
    "exact": "computed by an exact method; rounded only for display.",
    "bound": "a rigorous upper (≤) or lower (≥) bound: the true value is on the stated side "
    "(at the stated confidence where one is given).",
    "estimate": "obtained by random simulation or from a finite sample; shown with its "
    "standard error (s.e.) and/or confidence interval (CI).",
    "conjectured": "rests on an unproven mathematical statement (the methods give the "
    "evidence); not a guarantee, never used to certify.",
}


@dataclass(frozen=True)
class Quantity:
    """A number together with how it was obtained.

    Attributes
    ----------
    value : int or float
        The number (Fractions and numpy scalars are converted; ints stay exact ints).
    kind : {"exact", "bound", "estimate", "conjectured"}
    side : {"upper", "lower"} or None
        Required for a bound (``"upper"``: the true value is at most ``value``); optional
        for a conjectured value.
    stderr : float or None
        Standard error of an estimate.
    interval : (float, float) or None
        Confidence interval of an estimate, ``low <= high``.
    confidence : float or None
        Level of ``interval`` for an estimate (required with it); for a bound, the
        probability with which the bound holds (None: surely).
    method : str
        Which method gave the number, in a few words.
    unit : str
        Shown after the number (``"bits"``, ``"decks"``); empty for pure numbers.
    digits : int
        Significant digits for display (estimates with an uncertainty are instead rounded to
        the uncertainty's second significant digit).
    below_one : float or None
        ``1 - value`` computed exactly, for values closer to 1 than a float holds (the
        total variation after one riffle of 52 cards is ``1 - 5.5e-53``): shown as
        ``1 - 5.5e-53`` and kept in the JSON. A value that is not exactly 1 never shows as 1.
    count : bool
        The number counts things (decks, shoes): shown as an integer, an estimate as
        ``about 2,563 decks (95% CI 2,410 to 2,730)`` with its interval rounded outward to
        integers; the JSON keeps an integer value.

    An estimate must carry ``stderr`` or ``interval`` (or both); other kinds carry neither.
    NaN is refused: nothing ever shows an undefined number.
    """

    value: int | float
    kind: Kind
    side: Side | None = None
    stderr: float | None = None
    interval: tuple[float, float] | None = None
    confidence: float | None = None
    method: str = ""
    unit: str = ""
    digits: int = 4
    below_one: float | None = None
    count: bool = False

    def __post_init__(self) -> None:
        value = plain_number(self.value, "value")
        object.__setattr__(self, "value", value)
        if self.kind not in KINDS:
            raise InputError(f"kind must be one of {', '.join(KINDS)}, got {self.kind!r}")
        if isinstance(self.digits, bool) or not isinstance(self.digits, int):
            raise InputError(f"digits must be an integer from 1 to 15, got {self.digits!r}")
        if not 1 <= self.digits <= 15:
            raise InputError(f"digits must be an integer from 1 to 15, got {self.digits!r}")
        for name in ("unit", "method"):
            text = getattr(self, name)
            if not isinstance(text, str) or "\n" in text:
                raise InputError(f"{name} must be one line of text, got {text!r}")
        if self.below_one is not None:
            gap = float(plain_number(self.below_one, "below_one"))
            if not 0 <= gap <= 1 or not math.isclose(1 - gap, float(value), abs_tol=1e-12):
                raise InputError(f"below_one must be 1 - value, got {self.below_one!r}")
            object.__setattr__(self, "below_one", gap)
        if self.count and self.kind != "estimate" and not isinstance(value, int):
            if not float(value).is_integer():
                raise InputError(f"a count must be a whole number, got {value!r}")
            object.__setattr__(self, "value", int(value))
        if self.kind == "bound" and self.side not in ("upper", "lower"):
            raise InputError(f"a bound needs side='upper' or side='lower', got {self.side!r}")
        if self.kind in ("exact", "estimate") and self.side is not None:
            raise InputError(f"side is only for bounds, not for a value of kind {self.kind}")
        if self.kind == "conjectured" and self.side not in (None, "upper", "lower"):
            raise InputError(f"side must be 'upper', 'lower' or None, got {self.side!r}")
        if self.confidence is not None:
            level = float(plain_number(self.confidence, "confidence"))
            if not 0 < level < 1:
                raise InputError(f"confidence must be in (0, 1), got {self.confidence!r}")
            object.__setattr__(self, "confidence", level)
        if self.kind != "estimate":
            if self.stderr is not None or self.interval is not None:
                raise InputError(
                    f"a value of kind {self.kind} has no standard error or confidence interval"
                )
            if self.confidence is not None and self.kind != "bound":
                raise InputError(f"confidence is for estimates and bounds, not {self.kind}")
            return
        self._check_estimate()

    def _check_estimate(self) -> None:
        if self.stderr is None and self.interval is None:
            raise InputError("an estimate needs its uncertainty: give stderr, interval or both")
        try:
            if not (self.count and isinstance(self.value, int)):
                object.__setattr__(self, "value", float(self.value))  # an estimate is inexact
        except OverflowError:
            raise InputError(f"estimate {self.value!r} is too large to show") from None
        if self.stderr is not None:
            stderr = plain_number(self.stderr, "stderr")
            if not math.isfinite(stderr) or stderr < 0:
                raise InputError(f"stderr must be finite and >= 0, got {self.stderr!r}")
            object.__setattr__(self, "stderr", float(stderr))
        if self.interval is not None:
            if len(self.interval) != 2:
                raise InputError(f"interval must be a pair (low, high), got {self.interval!r}")
            low, high = (float(plain_number(c, "interval")) for c in self.interval)
            if low > high:
                raise InputError(f"interval low must not exceed high, got ({low}, {high})")
            object.__setattr__(self, "interval", (low, high))
            if self.confidence is None:
                raise InputError("a confidence interval needs its level (e.g. confidence=0.95)")
        elif self.confidence is not None:
            raise InputError("confidence is the level of the interval; give interval with it")

    # ---- display

    @property
    def guaranteed(self) -> bool:
        """True for exact values and bounds (the only kinds that may certify anything)."""
        return self.kind in ("exact", "bound")

    @property
    def label_text(self) -> str:
        """``exact``, ``upper bound``, ``lower bound (99% confidence)``, ``estimate``,
        ``conjectured`` or ``conjectured upper bound``."""
        if self.kind == "bound":
            text = f"{self.side} bound"
            if self.confidence is not None:
                text += f" ({percent(self.confidence)} confidence)"
            return text
        if self.kind == "conjectured" and self.side is not None:
            return f"conjectured {self.side} bound"
        return self.kind

    def number_text(self) -> str:
        """The number as shown in a table whose column states the label.

        Bounds (and conjectured bounds) get ``≤`` / ``≥`` and are rounded outward, so the
        shown digits never claim more than was proven; estimates show their uncertainty,
        e.g. ``0.1230 ± 0.0040 (s.e.), 95% CI [0.1152, 0.1308]``.
        """
        unit = f" {self.unit}" if self.unit else ""
        if self.side is not None:
            sign = "≤" if self.side == "upper" else "≥"
            outward = "up" if self.side == "upper" else "down"
            shown = format_number(self.value, self.digits, outward, below_one=self.below_one)
            return f"{sign} {shown}{unit}"
        if self.kind in ("exact", "conjectured"):
            return f"{format_number(self.value, self.digits, below_one=self.below_one)}{unit}"
        if self.count:
            return self._count_text(unit)
        return self._estimate_text(unit)

    def _count_text(self, unit: str) -> str:
        """``about 2,563 decks (95% CI 2,410 to 2,730)``: an estimated count in integers."""
        count = round(self.value)
        if count == 1 and unit.endswith("s"):  # "about 1 deck"
            unit = unit[:-1]
        text = f"about {count:,}{unit}"
        parts = []
        if self.interval is not None and self.confidence is not None:
            parts.append(f"{percent(self.confidence)} CI {count_interval_text(*self.interval)}")
        if self.stderr is not None:
            parts.append(f"s.e. {format_number(self.stderr, 2)}")
        return f"{text} ({'; '.join(parts)})" if parts else text

    def _estimate_text(self, unit: str) -> str:
        decimals = None
        if self.stderr is not None:
            decimals = decimals_for(self.stderr)
        if decimals is None and self.interval is not None:
            decimals = decimals_for((self.interval[1] - self.interval[0]) / 2)
        magnitudes = [abs(float(self.value))]
        if self.interval is not None:
            magnitudes += [abs(c) for c in self.interval]
        largest = max(magnitudes)
        fixed = decimals is not None and math.isfinite(largest) and largest < 1e6
        fixed = fixed and (largest >= 1e-4 or largest == 0)
        if fixed and largest > 0:  # never show more digits than a float holds (15)
            decimals = min(decimals, max(14 - math.floor(math.log10(largest)), 0))

        def show(x: float, *, uncertainty: bool = False) -> str:
            if uncertainty and x == 0 and not fixed:
                return "0"
            if fixed:
                return f"{x:,.{decimals}f}"
            return format_number(x, 2 if uncertainty else self.digits)

        parts = [show(float(self.value)) if fixed else format_number(self.value, self.digits)]
        if self.stderr is not None:
            parts.append(f" ± {show(self.stderr, uncertainty=True)}{unit} (s.e.)")
        else:
            parts.append(unit)
        if self.interval is not None and self.confidence is not None:
            low, high = self.interval
            parts.append(f", {percent(self.confidence)} CI [{show(low)}, {show(high)}]")
        return "".join(parts)

    def text(self) -> str:
        """The number with its label, for running text: ``≤ 0.0123 (upper bound)``."""
        return f"{self.number_text()} ({self.label_text})"

    def __str__(self) -> str:
        return self.text()

    def as_json(self) -> dict[str, Any]:
        """JSON-ready form: value and kind, then side, stderr, interval, confidence, method
        and unit where present."""
        out: dict[str, Any] = {"value": json_number(self.value), "kind": self.kind}
        if self.side is not None:
            out["side"] = self.side
        if self.stderr is not None:
            out["stderr"] = json_number(self.stderr)
        if self.interval is not None:
            out["interval"] = [json_number(self.interval[0]), json_number(self.interval[1])]
        if self.confidence is not None:
            out["confidence"] = self.confidence
        if self.method:
            out["method"] = self.method
        if self.unit:
            out["unit"] = self.unit
        if self.below_one is not None:
            out["below_one"] = self.below_one
        if self.count:
            out["count"] = True
            if self.kind == "estimate":
                out["value"] = round(self.value)
        return out


def exact(
    value: int | float | Fraction,
    *,
    unit: str = "",
    digits: int = 4,
    method: str = "",
    below_one: float | None = None,
    count: bool = False,
) -> Quantity:
    """A value computed by an exact method (``below_one``: ``1 - value`` exactly, for values
    a float rounds to 1; ``count``: an integer count)."""
    return Quantity(
        value, "exact", unit=unit, digits=digits, method=method, below_one=below_one, count=count
    )


def bound(
    value: int | float | Fraction,
    side: Side,
    *,
    unit: str = "",
    digits: int = 4,
    method: str = "",
    confidence: float | None = None,
    below_one: float | None = None,
) -> Quantity:
    """A rigorous bound on ``side`` (``"upper"``: the true value is at most ``value``),
    holding surely or with probability ``confidence``."""
    return Quantity(
        value,
        "bound",
        side=side,
        unit=unit,
        digits=digits,
        method=method,
        confidence=confidence,
        below_one=below_one,
    )


def upper_bound(value: int | float | Fraction, **details: Any) -> Quantity:
    """A rigorous upper bound: the true value is at most ``value`` (see :func:`bound`)."""
    return bound(value, "upper", **details)


def lower_bound(value: int | float | Fraction, **details: Any) -> Quantity:
    """A rigorous lower bound: the true value is at least ``value`` (see :func:`bound`)."""
    return bound(value, "lower", **details)


def estimate(
    value: float,
    *,
    stderr: float | None = None,
    interval: tuple[float, float] | None = None,
    confidence: float = 0.95,
    unit: str = "",
    digits: int = 4,
    method: str = "",
    count: bool = False,
) -> Quantity:
    """A Monte Carlo or sample estimate with its standard error and/or confidence interval
    (``confidence`` is the interval's level and is ignored without an interval; ``count``:
    an estimated number of things, shown in integers)."""
    return Quantity(
        value,
        "estimate",
        stderr=stderr,
        interval=interval,
        confidence=confidence if interval is not None else None,
        unit=unit,
        digits=digits,
        method=method,
        count=count,
    )


def conjectured(
    value: int | float | Fraction,
    *,
    side: Side | None = None,
    unit: str = "",
    digits: int = 4,
    method: str = "",
) -> Quantity:
    """A figure resting on an unproven statement (``method`` names it); never certifies."""
    return Quantity(value, "conjectured", side=side, unit=unit, digits=digits, method=method)
