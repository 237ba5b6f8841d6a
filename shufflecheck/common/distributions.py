"""Quantiles and tails of the textbook distributions the analyses use, from ``scipy.special``.

``scipy.stats`` computes each of these values with the ``scipy.special`` function called
here (scipy 1.17: ``norm.ppf`` is ``ndtri``, ``norm.isf`` is ``-ndtri``, ``beta.ppf`` the
Boost quantile that ``betaincinv`` also returns, ``chi2.isf`` is ``chdtri``, ``chi2.ppf`` is
``2 gammaincinv(df / 2, p)``, ``ncx2.sf`` and ``hypergeom`` the Boost functions below), so
the doubles are the same; importing ``scipy.stats`` costs a command about 0.5 s of CPU and
45 MB. ``tests/test_distributions.py`` compares every function with ``scipy.stats`` on
random arguments (identical doubles).

The noncentral chi-square tail and the hypergeometric law are Boost ufuncs that
``scipy.special`` does not export under a public name; where a scipy release lacks them the
functions fall back to ``scipy.stats`` (same values, slower import).

References
----------
.. [1] Clopper, C. J. & Pearson, E. S. (1934). The use of confidence or fiducial limits
   illustrated in the case of the binomial. Biometrika 26(4), 404-413.
"""

from __future__ import annotations

import numpy as np
from scipy import special

__all__ = [
    "beta_quantile",
    "chi_square_quantile",
    "chi_square_upper_quantile",
    "clopper_pearson",
    "clopper_pearson_lower",
    "hypergeometric_pmf",
    "hypergeometric_sf",
    "noncentral_chi_square_sf",
    "normal_quantile",
    "normal_upper_quantile",
]

try:  # Boost ufuncs behind scipy.stats.ncx2 and scipy.stats.hypergeom (scipy >= 1.9)
    from scipy.special._ufuncs import _hypergeom_pmf, _hypergeom_sf, _ncx2_sf
except ImportError:  # pragma: no cover - older or newer scipy: the public route
    _ncx2_sf = _hypergeom_pmf = _hypergeom_sf = None


def normal_quantile(p: float) -> float:
    """``x`` with ``P(Z <= x) = p`` for a standard normal ``Z`` (``scipy.stats.norm.ppf``)."""
    return float(special.ndtri(p))


def normal_upper_quantile(q: float) -> float:
    """``x`` with ``P(Z >= x) = q`` (``scipy.stats.norm.isf``)."""
    return float(-special.ndtri(q))


def beta_quantile(q: float, a: float, b: float) -> float:
    """The ``q`` quantile of the Beta(a, b) law (``scipy.stats.beta.ppf(q, a, b)``)."""
    return float(special.betaincinv(a, b, q))


def chi_square_upper_quantile(level: float, df: float) -> float:
    """``x`` with ``P(chi2_df >= x) = level`` (``scipy.stats.chi2.isf``)."""
    return float(special.chdtri(df, level))


def chi_square_quantile(p: float, df: float) -> float:
    """``x`` with ``P(chi2_df <= x) = p`` (``scipy.stats.chi2.ppf``)."""
    return float(2 * special.gammaincinv(df / 2, p))


def noncentral_chi_square_sf(x: float, df: float, nc: float) -> float:
    """``P(X >= x)`` for a noncentral chi-square ``X`` with ``df`` degrees of freedom and
    noncentrality ``nc`` (``scipy.stats.ncx2.sf``; the central law when ``nc = 0``)."""
    if nc == 0:
        return float(special.chdtrc(df, x))
    if _ncx2_sf is None:  # pragma: no cover
        from scipy import stats

        return float(stats.ncx2.sf(x, df, nc))
    with np.errstate(over="ignore"):
        return float(_ncx2_sf(x, df, nc))


def _hypergeometric_support(total: int, marked: int, drawn: int) -> tuple[int, int]:
    return max(0, drawn - (total - marked)), min(marked, drawn)


def hypergeometric_pmf(k: np.ndarray, total: int, marked: int, drawn: int) -> np.ndarray:
    """``P(K = k)`` for the marked cards ``K`` among ``drawn`` cards taken without
    replacement from ``total`` cards of which ``marked`` are marked
    (``scipy.stats.hypergeom(total, marked, drawn).pmf(k)``); zero off the support."""
    k = np.asarray(k)
    low, high = _hypergeometric_support(total, marked, drawn)
    inside = (k >= low) & (k <= high)
    if _hypergeom_pmf is None:  # pragma: no cover
        from scipy import stats

        return np.where(inside, stats.hypergeom(total, marked, drawn).pmf(k), 0.0)
    safe = np.clip(k, low, high)
    return np.where(inside, _hypergeom_pmf(safe, marked, drawn, total), 0.0)


def hypergeometric_sf(k: int, total: int, marked: int, drawn: int) -> float:
    """``P(K > k)`` for the law of :func:`hypergeometric_pmf`
    (``scipy.stats.hypergeom(total, marked, drawn).sf(k)``)."""
    low, high = _hypergeometric_support(total, marked, drawn)
    if k < low:
        return 1.0
    if k >= high:
        return 0.0
    if _hypergeom_sf is None:  # pragma: no cover
        from scipy import stats

        return float(stats.hypergeom(total, marked, drawn).sf(k))
    return float(_hypergeom_sf(k, marked, drawn, total))


def clopper_pearson_lower(successes: int, trials: int, alpha: float) -> float:
    """One-sided lower confidence bound at level ``1 - alpha`` for a binomial chance,
    exact ([1]_): 0 when there is no success."""
    if successes <= 0 or trials <= 0:
        return 0.0
    return beta_quantile(alpha, successes, trials - successes + 1)


def clopper_pearson(successes: int, trials: int, confidence: float) -> tuple[float, float]:
    """Two-sided exact interval ``(low, high)`` at ``confidence`` for a binomial chance
    ([1]_): each end excludes ``(1 - confidence) / 2``; 0 and 1 at the extremes."""
    alpha = 1 - confidence
    low = 0.0 if successes == 0 else beta_quantile(alpha / 2, successes, trials - successes + 1)
    high = 1.0
    if successes < trials:
        high = beta_quantile(1 - alpha / 2, successes + 1, trials - successes)
    return low, high
