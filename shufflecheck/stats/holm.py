"""Holm's step-down control of the family-wise error over the tests of a battery.

References
----------
.. [1] S. Holm, "A simple sequentially rejective multiple test procedure", Scand. J.
       Statist. 6 (1979) 65-70.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from shufflecheck.common.errors import InputError

__all__ = ["holm", "holm_log"]


def holm_log(log_p: Sequence[float]) -> np.ndarray:
    """Holm step-down adjusted p-values, in natural logs (exact at any magnitude).

    ``adj_(i) = max_{j <= i} min(1, (m - j + 1) p_(j))`` over the p-values sorted upwards
    ([1], eq. on p. 66).
    """
    values = np.asarray(log_p, dtype=float)
    m = values.size
    out = np.empty(m)
    running = -math.inf
    for rank, i in enumerate(np.argsort(values, kind="stable")):
        running = max(running, min(0.0, math.log(m - rank) + float(values[i])))
        out[i] = running
    return out


def holm(p_values: Sequence[float]) -> np.ndarray:
    """Holm step-down adjusted p-values (floats in [0, 1])."""
    p = np.asarray(p_values, dtype=float)
    if p.size and (np.any(p < 0) or np.any(p > 1) or not np.isfinite(p).all()):
        raise InputError("p-values must lie in [0, 1]")
    with np.errstate(divide="ignore"):
        return np.exp(holm_log(np.log(p)))
