"""Position-by-card counts and their chi-square (or G) test against a uniform deck.

``counts[i, c]`` is the number of decks with reference card ``c`` at position ``i``. Under
uniform decks every cell has mean ``D / n``. Each deck adds a permutation matrix, so every
row and every column of ``counts`` adds up to ``D``: the centred counts live in the
``(n-1)^2``-dimensional space of matrices with zero row and column sums, on which
``S_n x S_n`` acts irreducibly, so their covariance is a multiple of the projection onto it.
Its trace is ``E||P - J/n||^2 = n - 1`` per deck, hence a multiple ``D / (n - 1)``, and the
Pearson statistic ``X^2 = sum (O - E)^2 / E`` has mean exactly ``n (n - 1)`` and tends to
``n/(n-1)`` times a chi-square with ``(n-1)^2`` degrees of freedom ([1]_, [2]_). The test
therefore refers ``X^2 (n-1)/n`` to chi-square with ``(n-1)^2`` degrees of freedom
(``asymptotic``). Referring ``X^2`` itself, as a contingency-table test would, overstates
the evidence (for 52 cards the mean would sit 0.7 standard deviations high). The G statistic
``2 sum O log(O/E)`` has the same limit. When the expected count ``D / n`` is below 5 the
default is a Monte Carlo null instead: the same statistic on simulated audits of ``D``
uniform decks, p-value ``(1 + #{X^2_sim >= X^2}) / (B + 1)`` ([3]_).

References
----------
.. [1] K. Pearson, "On the criterion that a given system of deviations ...", Philos. Mag.
       (5) 50 (1900) 157-175.
.. [2] J.-P. Serre, *Linear Representations of Finite Groups*, Springer, 1977, sections 2.3
       and 3.2 (irreducible representations, Schur's lemma: an invariant covariance on an
       irreducible representation is scalar).
.. [3] A. C. A. Hope, "A simplified Monte Carlo significance test procedure", J. R. Stat.
       Soc. B 30 (1968) 582-598.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import numpy as np
from scipy import special

from shufflecheck.common.errors import InputError

__all__ = [
    "MONTE_CARLO_BELOW",
    "PositionTest",
    "class_position_test",
    "position_counts",
    "position_test",
]

#: The Monte Carlo null is the default when the expected count per cell is below this.
MONTE_CARLO_BELOW = 5.0
_SIM_ELEMENTS = 1 << 23


def position_counts(relative: np.ndarray, n: int | None = None) -> np.ndarray:
    """``(n, n)`` int64 matrix: ``counts[i, c]`` decks with reference card ``c`` at ``i``."""
    p = np.asarray(relative)
    if p.ndim != 2:
        raise InputError(f"relative decks: expected a 2-D array, got shape {p.shape}")
    n = p.shape[1] if n is None else n
    out = np.zeros(n * n, dtype=np.int64)
    base = np.arange(n, dtype=np.int64) * n
    step = max(1, (1 << 18) // max(n, 1))
    for start in range(0, p.shape[0], step):
        block = p[start : start + step].astype(np.int64) + base
        out += np.bincount(block.ravel(), minlength=n * n)
    return out.reshape(n, n)


@dataclass(frozen=True)
class PositionTest:
    """Outcome of the position-by-card test.

    ``statistic`` is Pearson's ``X^2`` (or ``G``) on the counts; ``scaled`` is
    ``statistic * (n-1)/n``, referred to chi-square with ``df = (n-1)^2`` degrees of
    freedom when ``method == "asymptotic"``; ``log_p`` is the natural log of the p-value
    (for ``"monte-carlo"``: ``(1 + exceedances) / (resamples + 1)``).
    """

    statistic: float
    scaled: float
    df: int
    log_p: float
    method: str
    detail: str
    kind: str
    resamples: int


def _pearson(counts: np.ndarray, decks: int) -> float:
    n = counts.shape[-1]
    squares = (counts.astype(np.int64) ** 2).sum(axis=(-2, -1))
    # X^2 = (n/D) sum O^2 - D n, exactly in rationals, one rounding at the end
    if np.ndim(squares) == 0:
        return float(Fraction(n * int(squares), decks) - decks * n)
    return (n / decks) * squares.astype(float) - decks * n


def _g_statistic(counts: np.ndarray, decks: int) -> np.ndarray | float:
    n = counts.shape[-1]
    expected = decks / n
    o = counts.astype(float)
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(o > 0, o * np.log(o / expected), 0.0)
    out = 2.0 * terms.sum(axis=(-2, -1))
    return float(out) if np.ndim(out) == 0 else out


def _chi2_logsf(x: float, df: int) -> float:
    """``log P(chi2_df >= x)`` as ``scipy.stats.chi2.logsf`` computes it (scipy 1.17: the log
    of the upper tail above the median, ``log1p`` of minus the lower tail below it), from
    ``scipy.special`` alone: importing ``scipy.stats`` costs an audit about 45 MB."""
    if math.isnan(x):
        return math.nan
    if x <= 0.0:
        return 0.0
    if x == math.inf:
        return -math.inf
    with np.errstate(divide="ignore"):
        if x > 2.0 * special.gammaincinv(df / 2.0, 0.5):
            return float(np.log(special.chdtrc(df, x)))
        return float(np.log1p(-special.chdtr(df, x)))


def _chi2_log_sf(x: float, df: int) -> tuple[float, bool]:
    """``log P(chi2_df >= x)``; when it underflows, the upper bound
    ``Gamma(a, z) <= z^(a-1) e^-z / (1 - (a-1)/z)`` (``a = df/2``, ``z = x/2 > a``) is used
    (second flag ``True``)."""
    value = _chi2_logsf(float(x), df)
    if math.isfinite(value):
        return value, False
    a, z = df / 2.0, x / 2.0
    bound = (a - 1) * math.log(z) - z - math.lgamma(a) - math.log1p(-(a - 1) / z)
    return bound, True


def position_test(
    counts: np.ndarray,
    decks: int,
    *,
    kind: str = "pearson",
    method: str = "auto",
    resamples: int = 999,
    rng: np.random.Generator | int | None = None,
) -> PositionTest:
    """Chi-square (``kind="pearson"``) or G test of position-by-card counts.

    Parameters
    ----------
    counts : (n, n) int array
        From :func:`position_counts` (rows and columns add up to ``decks``).
    decks : int
        Number of decks ``D``.
    kind : {"pearson", "g"}
    method : {"auto", "asymptotic", "monte-carlo"}
        ``auto`` runs the Monte Carlo null when ``D / n < 5`` (:data:`MONTE_CARLO_BELOW`),
        the scaled chi-square limit otherwise.
    resamples : int
        Simulated audits for the Monte Carlo null.
    rng : Generator, int or None
        Randomness for the Monte Carlo null.

    Returns
    -------
    PositionTest
    """
    c = np.asarray(counts)
    if c.ndim != 2 or c.shape[0] != c.shape[1] or c.shape[0] < 2:
        raise InputError(f"position counts must be a square matrix of side >= 2, got {c.shape}")
    n = c.shape[0]
    if decks < 1 or (c.sum(axis=0) != decks).any() or (c.sum(axis=1) != decks).any():
        raise InputError("position counts: every row and column must add up to the decks")
    if kind not in ("pearson", "g"):
        raise InputError(f"kind must be 'pearson' or 'g', got {kind!r}")
    if method not in ("auto", "asymptotic", "monte-carlo"):
        raise InputError(f"method must be auto, asymptotic or monte-carlo, got {method!r}")
    if isinstance(resamples, bool) or not isinstance(resamples, int) or resamples < 1:
        raise InputError(f"resamples must be a positive integer, got {resamples!r}")
    stat_fn = _pearson if kind == "pearson" else _g_statistic
    observed = float(stat_fn(c, decks))
    df = (n - 1) ** 2
    scaled = observed * (n - 1) / n
    if method == "auto":
        method = "monte-carlo" if decks / n < MONTE_CARLO_BELOW else "asymptotic"
    label = "chi-square" if kind == "pearson" else "G"
    if method == "asymptotic":
        log_p, bounded = _chi2_log_sf(scaled, df)
        detail = f"{label} x (n-1)/n against chi-square with {df} degrees of freedom" + (
            " (tail beyond double range: upper bound)" if bounded else ""
        )
        return PositionTest(observed, scaled, df, log_p, "asymptotic", detail, kind, 0)
    generator = np.random.default_rng(rng)
    sims = _simulate(n, decks, resamples, generator, stat_fn)
    exceed = int(np.count_nonzero(sims >= observed * (1 - 1e-12)))
    log_p = math.log((1 + exceed) / (resamples + 1))
    detail = f"{label} against {resamples} simulated audits of {decks} uniform decks"
    return PositionTest(observed, scaled, df, log_p, "monte-carlo", detail, kind, resamples)


def _simulate(n: int, decks: int, resamples: int, rng: np.random.Generator, stat_fn) -> np.ndarray:
    out = np.empty(resamples)
    # each simulated audit needs its decks (decks x n) and its counts (n x n) at once
    per = max(1, _SIM_ELEMENTS // max(1, decks * n, n * n))
    base = np.arange(n, dtype=np.int64) * n
    for start in range(0, resamples, per):
        m = min(per, resamples - start)
        perms = rng.permuted(np.tile(np.arange(n, dtype=np.int64), (m * decks, 1)), axis=1)
        keys = (perms + base).reshape(m, decks * n) + (np.arange(m, dtype=np.int64) * n * n)[
            :, None
        ]
        counts = np.bincount(keys.ravel(), minlength=m * n * n).reshape(m, n, n)
        out[start : start + m] = stat_fn(counts, decks)
    return out


# --------------------------------------------------------------------------------------
# shoes: position-by-value counts


def _class_pearson(counts: np.ndarray, decks: int, class_counts: np.ndarray) -> np.ndarray:
    n = counts.shape[-2]
    expected = decks * class_counts / n  # per column
    dev = counts - expected
    return (dev * dev / expected).sum(axis=(-2, -1))


def class_position_test(
    counts: np.ndarray,
    decks: int,
    class_counts: tuple[int, ...] | np.ndarray,
    *,
    method: str = "auto",
    resamples: int = 999,
    rng: np.random.Generator | int | None = None,
) -> PositionTest:
    """Pearson's test of position-by-value counts of shoes (decks with repeated cards).

    ``counts[i, v]`` shoes with a card of class ``v`` at position ``i``; a shoe holds
    ``class_counts[v]`` cards of class ``v`` out of ``n``. Under uniform arrangements each
    position's class is multivariate hypergeometric with cell mean ``D c_v / n``. A uniform
    arrangement of the multiset is a uniform permutation matrix ``P`` read through the
    ``n x V`` class matrix ``C``; with ``H`` the centring projection, the covariance of
    ``P`` is ``H (x) H / (n - 1)`` ([2]), so the standardized counts have covariance
    ``n/(n-1)`` times a projection of rank ``(n-1)(V-1)``: ``X^2`` has mean exactly
    ``n (V - 1)`` and ``X^2 (n-1)/n`` tends to chi-square with ``(n-1)(V-1)`` degrees of
    freedom (``asymptotic``). With every count 1 this is :func:`position_test`. When the
    smallest expected cell is below 5 the default is a Monte Carlo null (simulated audits of
    ``D`` uniform shoes, [3]).
    """
    c = np.asarray(counts)
    classes = np.asarray(class_counts, dtype=np.int64)
    if c.ndim != 2 or c.shape[1] != classes.size or c.shape[0] < 2:
        raise InputError(
            f"position-by-value counts must be (positions, {classes.size}), got {c.shape}"
        )
    n = c.shape[0]
    if int(classes.sum()) != n or classes.min() < 1:
        raise InputError("class counts must be >= 1 and add up to the positions")
    if decks < 1 or (c.sum(axis=1) != decks).any() or (c.sum(axis=0) != decks * classes).any():
        raise InputError("position-by-value counts do not match the shoes and their classes")
    if method not in ("auto", "asymptotic", "monte-carlo"):
        raise InputError(f"method must be auto, asymptotic or monte-carlo, got {method!r}")
    observed = float(_class_pearson(c.astype(np.float64), decks, classes))
    df = (n - 1) * (classes.size - 1)
    scaled = observed * (n - 1) / n
    if method == "auto":
        smallest = decks * int(classes.min()) / n
        method = "monte-carlo" if smallest < MONTE_CARLO_BELOW else "asymptotic"
    if method == "asymptotic" or df == 0:
        log_p, bounded = _chi2_log_sf(scaled, max(df, 1))
        detail = f"chi-square x (n-1)/n against chi-square with {df} degrees of freedom" + (
            " (tail beyond double range: upper bound)" if bounded else ""
        )
        return PositionTest(observed, scaled, df, log_p, "asymptotic", detail, "pearson", 0)
    generator = np.random.default_rng(rng)
    word = np.repeat(np.arange(classes.size), classes)
    base = np.arange(n, dtype=np.int64) * classes.size
    sims = np.empty(resamples)
    per = max(1, _SIM_ELEMENTS // max(1, decks * n))
    for start in range(0, resamples, per):
        m = min(per, resamples - start)
        shoes = generator.permuted(np.tile(word, (m * decks, 1)), axis=1)
        keys = (shoes + base).reshape(m, decks * n) + (
            np.arange(m, dtype=np.int64) * n * classes.size
        )[:, None]
        tally = np.bincount(keys.ravel(), minlength=m * n * classes.size)
        sims[start : start + m] = _class_pearson(
            tally.reshape(m, n, classes.size).astype(np.float64), decks, classes
        )
    exceed = int(np.count_nonzero(sims >= observed * (1 - 1e-12)))
    log_p = math.log((1 + exceed) / (resamples + 1))
    detail = f"chi-square against {resamples} simulated audits of {decks} uniform shoes"
    return PositionTest(observed, scaled, df, log_p, "monte-carlo", detail, "pearson", resamples)
