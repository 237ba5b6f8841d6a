"""How numbers are shown to people: significant digits, directed rounding, percentages.

Shared by the terminal, the reports and the labelled number
(:class:`~shufflecheck.common.quantity.Quantity`), so a value prints the same everywhere.
"""

from __future__ import annotations

import math
from decimal import Decimal
from fractions import Fraction
from typing import Any

from shufflecheck.common.errors import InputError

__all__ = ["decimals_for", "format_number", "json_number", "percent", "plain_number"]


def format_number(x: int | float, digits: int = 4, rounding: str = "nearest") -> str:
    """Format a number for display with ``digits`` significant digits.

    Integers are shown in full with thousands separators (scientific notation beyond 15
    digits); floats in fixed notation when ``1e-4 <= |x| < 1e6``, otherwise scientific
    (``1.234e-07``). Significant trailing zeros are kept, so every float in a column shows
    the same number of significant digits. Infinity is ``∞``; minus is ``-``.

    ``rounding`` is ``"nearest"``, ``"up"`` (towards +infinity) or ``"down"``: a displayed
    upper bound is rounded up and a lower bound down, so the shown digits never claim more
    than was proven (a value within a few units in the last place of the shown decimal,
    float noise, is shown as that decimal).
    """
    if rounding != "nearest" and isinstance(x, float) and math.isfinite(x) and x != 0:
        nearest = format_number(x, digits)
        shown = float(nearest.replace(",", ""))
        # rounding to nearest already lies on the safe side, or within float noise of x
        noise = 8 * math.ulp(x)
        if (rounding == "up" and shown >= x - noise) or (rounding == "down" and shown <= x + noise):
            return nearest
        return _format_directed(x, digits, rounding)
    if isinstance(x, bool):
        raise InputError(f"cannot format {x!r} as a number")
    if isinstance(x, int):
        if abs(x) < 10**15:
            return f"{x:,}"
        return format(Decimal(x), f".{digits - 1}e")  # exact int, rounded for display only
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    if x == 0:
        return "0" if digits == 1 else "0." + "0" * (digits - 1)
    scientific = f"{x:.{digits - 1}e}"
    exponent = int(scientific.split("e")[1])
    if -4 <= exponent < 6:
        return f"{x:,.{max(digits - 1 - exponent, 0)}f}"
    return scientific


def _format_directed(x: float, digits: int, rounding: str) -> str:
    """``format_number`` with the last shown digit rounded up or down (exact decimals)."""
    from decimal import ROUND_CEILING, ROUND_FLOOR

    mode = {"up": ROUND_CEILING, "down": ROUND_FLOOR}[rounding]
    d = Decimal(x)
    exponent = d.adjusted()
    r = d.quantize(Decimal(1).scaleb(exponent - digits + 1), rounding=mode)
    if r.adjusted() > exponent:  # rounding carried into a new leading digit (0.99996 -> 1.000)
        exponent = r.adjusted()
        r = d.quantize(Decimal(1).scaleb(exponent - digits + 1), rounding=mode)
    # r has ``digits`` significant digits; the nearest float prints back to exactly them
    if -4 <= exponent < 6:
        return f"{float(r):,.{max(digits - 1 - exponent, 0)}f}"
    return f"{float(r):.{digits - 1}e}"


def decimals_for(uncertainty: float) -> int | None:
    """Decimal places that show ``uncertainty`` to two significant digits (None if unusable)."""
    if not (uncertainty > 0) or not math.isfinite(uncertainty):
        return None
    exponent = int(f"{uncertainty:.1e}".split("e")[1])
    return min(max(1 - exponent, 0), 12)


def percent(level: float) -> str:
    """A confidence level as a percentage without trailing zeros: ``95%``, ``99.5%``."""
    text = f"{100 * level:.2f}".rstrip("0").rstrip(".")
    return f"{text}%"


def plain_number(x: Any, what: str) -> int | float:
    """``x`` as a Python int or float (numpy scalars and Fractions converted); NaN refused."""
    if hasattr(x, "item") and not isinstance(x, (int, float)):
        x = x.item()  # numpy scalar
    if isinstance(x, bool) or not isinstance(x, (int, float, Fraction)):
        raise InputError(f"{what} must be a number, got {x!r}")
    if isinstance(x, Fraction):
        x = x.numerator if x.denominator == 1 else float(x)
    if isinstance(x, float) and math.isnan(x):
        raise InputError(f"{what} is NaN: a report never shows an undefined number")
    return x


def json_number(x: int | float) -> int | float | str:
    """A number for strict JSON: non-finite floats become ``"inf"``, ``"-inf"``, ``"nan"``."""
    if isinstance(x, float) and not math.isfinite(x):
        return "inf" if x > 0 else ("-inf" if x < 0 else "nan")
    return x
