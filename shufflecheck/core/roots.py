"""A root of a continuous function on a bracketing interval, by Brent's method.

The same iteration as ``scipy.optimize.brentq`` (Brent 1973, chapter 4: inverse quadratic
interpolation, secant steps and bisection, with the step-size safeguards of the original),
written out here because importing ``scipy.optimize`` costs a command about 0.1 s of CPU
for this one routine. ``tests/test_roots.py`` checks that it returns the same doubles as
``scipy.optimize.brentq`` on many functions and brackets.

References
----------
.. [1] Brent, R. P. (1973). Algorithms for Minimization without Derivatives,
   chapter 4. Prentice-Hall.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from shufflecheck.common.errors import InputError

__all__ = ["brent_root"]

#: smallest relative tolerance accepted (four times the double-precision epsilon)
MIN_RTOL = 4 * 2.220446049250313e-16


def brent_root(
    f: Callable[[float], float],
    a: float,
    b: float,
    *,
    xtol: float = 2e-12,
    rtol: float = MIN_RTOL,
    maxiter: int = 100,
) -> float:
    """A zero of ``f`` in ``[a, b]``, where ``f(a)`` and ``f(b)`` differ in sign.

    The result ``x0`` is within ``xtol + rtol * |x0|`` of a sign change of ``f``.
    Raises :class:`InputError` if the bracket does not change sign or a value is NaN,
    and ``RuntimeError`` after ``maxiter`` iterations without convergence.
    """
    if xtol <= 0:
        raise InputError(f"xtol must be positive, got {xtol!r}")
    if rtol < MIN_RTOL:
        raise InputError(f"rtol must be at least {MIN_RTOL:g}, got {rtol!r}")

    def value(x: float) -> float:
        fx = float(f(x))
        if math.isnan(fx):
            raise InputError(f"the function is NaN at {x!r}")
        return fx

    xpre, xcur = float(a), float(b)
    xblk = fblk = spre = scur = 0.0
    fpre, fcur = value(xpre), value(xcur)
    if fpre == 0:
        return xpre
    if fcur == 0:
        return xcur
    if math.copysign(1.0, fpre) == math.copysign(1.0, fcur):
        raise InputError("f(a) and f(b) must have different signs")
    for _ in range(maxiter):
        if fpre != 0 and fcur != 0 and math.copysign(1.0, fpre) != math.copysign(1.0, fcur):
            xblk, fblk = xpre, fpre
            spre = scur = xcur - xpre
        if abs(fblk) < abs(fcur):
            xpre, xcur, xblk = xcur, xblk, xcur
            fpre, fcur, fblk = fcur, fblk, fcur
        delta = (xtol + rtol * abs(xcur)) / 2
        sbis = (xblk - xcur) / 2
        if fcur == 0 or abs(sbis) < delta:
            return xcur
        if abs(spre) > delta and abs(fcur) < abs(fpre):
            if xpre == xblk:  # interpolate (secant)
                stry = -fcur * (xcur - xpre) / (fcur - fpre)
            else:  # extrapolate (inverse quadratic)
                dpre = (fpre - fcur) / (xpre - xcur)
                dblk = (fblk - fcur) / (xblk - xcur)
                stry = -fcur * (fblk * dblk - fpre * dpre) / (dblk * dpre * (fblk - fpre))
            if 2 * abs(stry) < min(abs(spre), 3 * abs(sbis) - delta):
                spre, scur = scur, stry  # a good short step
            else:
                spre = scur = sbis  # bisect
        else:
            spre = scur = sbis  # bisect
        xpre, fpre = xcur, fcur
        if abs(scur) > delta:
            xcur += scur
        else:
            xcur += delta if sbis > 0 else -delta
        fcur = value(xcur)
    raise RuntimeError(f"no convergence after {maxiter} iterations (last value {xcur!r})")
