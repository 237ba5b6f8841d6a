"""shufflecheck.core.roots.brent_root against scipy.optimize.brentq (the same iteration:
Brent 1973, chapter 4), which the library no longer imports for speed."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from shufflecheck.common.errors import InputError
from shufflecheck.core.roots import brent_root


def _functions(rng: np.random.Generator):
    for _ in range(300):
        c = rng.normal(size=4)
        shift = rng.normal() * 3
        yield (
            lambda x, c=c, s=shift: (
                c[0] + c[1] * (x - s) + c[2] * (x - s) ** 3 + 0.1 * c[3] * math.sin(x)
            )
        )
        k = rng.uniform(0.1, 5)
        yield lambda x, k=k, s=shift: math.exp(k * (x - s)) - 1.0
        yield lambda x, s=shift: math.atan(x - s) + 1e-3 * (x - s) ** 5


def test_same_doubles_as_scipy_brentq():
    rng = np.random.default_rng(7)
    compared = 0
    for f in _functions(rng):
        a, b = sorted(rng.uniform(-20, 20, size=2))
        if not np.isfinite([f(a), f(b)]).all() or np.sign(f(a)) == np.sign(f(b)):
            continue
        for xtol, rtol in ((1e-10, 1e-10), (2e-12, 4 * np.finfo(float).eps), (1e-3, 1e-6)):
            assert brent_root(f, a, b, xtol=xtol, rtol=rtol, maxiter=200) == brentq(
                f, a, b, xtol=xtol, rtol=rtol, maxiter=200
            )
            compared += 1
    assert compared > 300


def test_exact_roots_and_errors():
    assert brent_root(lambda x: x * x - 2, 0, 2) == pytest.approx(math.sqrt(2), abs=1e-11)
    assert brent_root(lambda x: x - 1, 1, 3) == 1.0  # a zero at an end is returned as is
    with pytest.raises(InputError, match="different signs"):
        brent_root(lambda x: x * x + 1, -1, 1)
    with pytest.raises(InputError, match="NaN"):
        brent_root(lambda x: math.nan if x > 0 else -1.0, -1, 1)
    with pytest.raises(InputError, match="rtol"):
        brent_root(lambda x: x, -1, 1, rtol=1e-17)
    with pytest.raises(RuntimeError, match="no convergence"):
        brent_root(lambda x: math.exp(x) - 2.5, -10, 10, maxiter=2)
