"""Argument checks shared by every layer, with one wording.

Library functions check their arguments first, through these helpers, and raise
:class:`~shufflecheck.common.errors.InputError` naming the *argument* (``cards``,
``max_steps``), never a command-line option: the command-line layer translates the argument
into its option (``--cards``) when it prints the message.
"""

from __future__ import annotations

import math
import numbers

from shufflecheck.common.errors import InputError

__all__ = ["check_cards", "check_confidence", "check_fraction", "check_integer"]


def _is_integer(value: object) -> bool:
    return isinstance(value, numbers.Integral) and not isinstance(value, bool)


def check_integer(
    value: object,
    name: str,
    *,
    low: int | None = None,
    high: int | None = None,
    prefix: str = "",
    why: str = "",
) -> int:
    """``value`` as an int when it is an integer in ``[low, high]``; else an InputError.

    ``prefix`` goes before the argument's name (e.g. ``"cut: "`` for a step's parameter);
    ``why`` is added after the message (the reason for a limit).
    """
    integer = _is_integer(value)
    v = int(value) if integer else 0  # type: ignore[call-overload]
    if integer and (low is None or v >= low) and (high is None or v <= high):
        return v
    if low is not None and high is not None:
        allowed = f"an integer from {low:,} to {high:,}"
    elif low is not None:
        allowed = f"at least {low:,}" if integer else f"an integer >= {low:,}"
    elif high is not None:
        allowed = f"at most {high:,}" if integer else f"an integer <= {high:,}"
    else:
        allowed = "an integer"
    shown = repr(value)
    if len(shown) > 40:
        shown = shown[:20] + "..." + shown[-8:]
    tail = f" ({why})" if why else ""
    raise InputError(f"{prefix}{name} must be {allowed}, got {shown}{tail}", argument=name)


def check_cards(
    cards: object, *, prefix: str = "", least: int = 2, most: int | None = None, why: str = ""
) -> int:
    """Number of cards in a deck: an integer ``>= least`` (2 by default, a deck with fewer
    cards has nothing to shuffle), and at most ``most`` when a method has a limit."""
    return check_integer(cards, "cards", low=least, high=most, prefix=prefix, why=why)


def check_fraction(
    value: object, name: str, *, closed_low: bool = False, closed_high: bool = False
) -> float:
    """A probability-like number strictly (or, where stated, closed) inside ``(0, 1)``."""
    ok = isinstance(value, numbers.Real) and not isinstance(value, bool)
    if ok:
        v = float(value)  # type: ignore[arg-type]
        ok = math.isfinite(v)
        ok = ok and (v >= 0 if closed_low else v > 0) and (v <= 1 if closed_high else v < 1)
    if not ok:
        left = "[0" if closed_low else "(0"
        right = "1]" if closed_high else "1)"
        raise InputError(f"{name} must lie in {left}, {right}, got {value!r}", argument=name)
    return float(value)  # type: ignore[arg-type]


def check_confidence(confidence: object, name: str = "confidence") -> float:
    """A confidence level: a number in ``[0.5, 1)`` (the range of every level the tool
    states, e.g. ``assess`` and ``power``)."""
    ok = isinstance(confidence, numbers.Real) and not isinstance(confidence, bool)
    if not ok or not 0.5 <= float(confidence) < 1:  # type: ignore[arg-type]
        raise InputError(f"{name} must be in [0.5, 1), got {confidence}", argument=name)
    return float(confidence)  # type: ignore[arg-type]
