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

__all__ = [
    "BELOW_FLOAT_RANGE",
    "P_FLOOR",
    "count_interval_text",
    "decimals_for",
    "format_count",
    "format_measure",
    "format_number",
    "format_p_value",
    "gap_float",
    "gap_from_log",
    "json_number",
    "p_relation",
    "percent",
    "plain_number",
]

#: Smallest p-value shown as a number; smaller ones are shown as ``< 1e-300`` (the JSON keeps
#: the exact magnitude as ``log10`` of the p-value).
P_FLOOR = 1e-300
_LOG10_P_FLOOR = -300.0
#: below this distance from 1 a value is written ``1 - 4.7e-16`` rather than in decimals
_GAP_DECIMALS = 1e-9
#: ``below_one`` for a distance to 1 that is known to be positive but is below the double
#: range (total variation of a 312-card shoe after one riffle: ``(2^312 - 312)/312!``);
#: shown as ``1 - (< 1e-300)``
BELOW_FLOAT_RANGE = math.ulp(0.0)


def format_number(
    x: int | float, digits: int = 4, rounding: str = "nearest", *, below_one: float | None = None
) -> str:
    """Format a number for display with ``digits`` significant digits.

    Integers are shown in full with thousands separators (scientific notation beyond 15
    digits); floats in fixed notation when ``1e-4 <= |x| < 1e6``, otherwise scientific
    (``1.234e-07``). Significant trailing zeros are kept, so every float in a column shows
    the same number of significant digits. Infinity is ``∞``; minus is ``-``.

    ``rounding`` is ``"nearest"``, ``"up"`` (towards +infinity) or ``"down"``: a displayed
    upper bound is rounded up and a lower bound down, so the shown digits never claim more
    than was proven (a value within a few units in the last place of the shown decimal,
    float noise, is shown as that decimal).

    A value in ``[0, 1)`` never prints as 1: when the rounded text would read ``1.000``,
    more digits are shown (``0.99999953``), and within ``1e-9`` of 1 the distance is
    written out (``1 - 4.7e-16``). ``below_one`` is ``1 - x`` computed exactly by the
    caller, for values closer to 1 than a float can hold (``x`` then rounds to ``1.0``); a
    positive ``below_one`` always shows. Nonzero values never print as 0 (they switch to
    scientific notation).
    """
    text = _format_plain(x, digits, rounding)
    if isinstance(x, bool) or not isinstance(x, float) or not math.isfinite(x):
        return text
    gap = (1.0 - x) if below_one is None else float(below_one)
    # 1 is a boundary for values in [0, 1] (probabilities, distances): only they widen
    if not 0 < gap <= 1 or float(text.replace(",", "")) != 1.0:
        return text
    return _format_near_one(x, gap, digits, rounding)


def _format_plain(x: int | float, digits: int, rounding: str) -> str:
    if rounding != "nearest" and isinstance(x, float) and math.isfinite(x) and x != 0:
        nearest = _format_plain(x, digits, "nearest")
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


def gap_float(numerator: int, denominator: int) -> float:
    """``numerator / denominator`` (a distance to 1 in exact integers) as a float; a
    positive ratio below the double range becomes :data:`BELOW_FLOAT_RANGE`, never 0."""
    value = numerator / denominator
    return BELOW_FLOAT_RANGE if value == 0 and numerator > 0 else value


def gap_from_log(log_gap: float) -> float:
    """``exp(log_gap)`` (a distance to 1 known by its natural log, e.g. from a double
    chain summed in logs) as a float; a positive gap below the double range becomes
    :data:`BELOW_FLOAT_RANGE`, never 0."""
    if log_gap == -math.inf:
        return 0.0
    value = math.exp(min(log_gap, 0.0))
    return value if value > 0 else BELOW_FLOAT_RANGE


def _format_near_one(x: float, gap: float, digits: int, rounding: str) -> str:
    """``x`` (within rounding of 1, ``gap = 1 - x`` exactly) shown so it does not read 1."""
    if gap < 1e-300:
        return "1 - (< 1e-300)"
    if abs(gap) >= _GAP_DECIMALS:
        # two significant digits of the gap: 1 - 4.7e-07 -> 0.99999953
        wide = max(digits, math.ceil(-math.log10(abs(gap))) + 1)
        while wide <= 15:
            text = _format_plain(x, wide, rounding)
            if float(text.replace(",", "")) != 1.0:
                return text
            wide += 1
    # the gap itself, rounded so the shown value stays on the rounding's side of x
    gap_rounding = {"up": "down", "down": "up"}.get(rounding, "nearest")
    return f"1 - {_format_plain(gap, 2, gap_rounding)}"


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


def format_count(x: int) -> str:
    """A count: an exact integer with thousands separators, never in scientific notation
    (``5,038,807,462,308,710,400``)."""
    if isinstance(x, bool) or not isinstance(x, int):
        raise InputError(f"a count must be an integer, got {x!r}")
    return f"{x:,}"


def count_interval_text(low: float, high: float) -> str:
    """Ends of a confidence interval of a count, as integers rounded outward:
    ``2,410 to 2,730``; ``526 or more`` when the upper end is unbounded."""
    lo = math.floor(low)
    if not math.isfinite(high):
        return f"{lo:,} or more"
    return f"{lo:,} to {math.ceil(high):,}"


def format_p_value(log10_p: float) -> str:
    """A p-value for people, from ``log10`` of it: ``0.012``, ``3.1e-07``, ``< 1e-300``.

    Every terminal line, Markdown and HTML report shows p-values through this function, so a
    p-value below :data:`P_FLOOR` (``1e-300``) reads ``< 1e-300`` everywhere; the JSON keeps
    the exact magnitude (``log10_p_value``). Two significant digits, the same as the
    reports' labelled p-values; the display keeps the order of the p-values (a smaller p
    never shows a larger number), and a p-value below 1 never reads 1.
    """
    value = float(log10_p)
    if math.isnan(value) or value > 1e-12:
        raise InputError(f"log10 of a p-value must be <= 0, got {log10_p!r}")
    if value < _LOG10_P_FLOOR:
        return f"< {P_FLOOR:g}"
    # two significant digits, as the reports' labelled p-values (Quantity, digits=2)
    return format_number(min(10.0**value, 1.0), 2)


def p_relation(log10_p: float) -> str:
    """``= 0.0034`` or ``< 1e-300``: a p-value after ``p`` in a sentence
    (see :func:`format_p_value`)."""
    text = format_p_value(log10_p)
    return text if text.startswith("<") else f"= {text}"


def format_measure(x: int | float, digits: int = 6) -> str:
    """A measured value such as a test statistic: whole numbers (sums of counts, even when
    held as floats) as exact integers with separators (``1,992,190``), others with
    ``digits`` significant digits."""
    if isinstance(x, float) and math.isfinite(x) and x.is_integer() and abs(x) < 2**53:
        return f"{int(x):,}"
    if isinstance(x, int) and not isinstance(x, bool):
        return f"{x:,}"
    return format_number(x, digits)


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
