"""Anytime-valid tests of recorded decks: e-processes built by betting against exact laws.

Null hypothesis: every deck is uniformly random given all decks before it. For a per-deck
statistic ``X`` with exact law ``p0`` (:mod:`shufflecheck.stats.nulls`), every deck is a
bet: an e-value ``e_t(X_t) >= 0`` with ``E_p0[e_t] = 1``, chosen from the decks before it.
The running product ``E_t = e_1 ... e_t`` is then a nonnegative martingale with ``E_0 = 1``
under the null (a test martingale, [1]_), and by Ville's inequality

    P( E_t >= 1/alpha for some t ) <= alpha                           # eq. (2.2) of [3]

however often ``E_t`` is read, and whenever one stops reading. Bets here are likelihood
ratios of an *exponentially tilted* exact law against the exact law,

    e_t(x) = p_theta(x) / p0(x) = exp(theta (x - mu0)) / M(theta),
    M(theta) = E_p0 exp(theta (X - mu0)),                             # exact, from p0

with the tilt ``theta`` a predictable plug-in ([2]_, section 5; [3]_): the tilted law whose
mean matches the mean of the decks so far, shrunk towards the null by ``PRIOR_DECKS``
pseudo-decks at the null mean, taken on a fixed grid of ``TILT_POINTS`` tilts within
``TILT_SPAN`` null standard deviations (bounded bets). One-sided statistics bet on one side
only. The plug-in is fitted on every deck before the current one, so the whole sequence is
computed with cumulative sums, vectorized over decks.

The position-by-card counts have no per-deck scalar law; their bet is
``e_t = (1/n) sum_i n P_t[i, card at i]`` with ``P_t`` a mixture of the uniform law and the
Laplace-smoothed frequencies of earlier decks (refitted every ``POSITION_BLOCK`` decks):
under the null each position holds a uniform card, so ``E[e_t | past] = 1``.

A family of e-processes on the same decks is combined by their **average** (an average of
test martingales for one filtration is a test martingale), so the family alarm at
``1/alpha`` controls the probability of *any* false alarm of the family at ``alpha``.

References
----------
.. [1] G. Shafer and V. Vovk, *Game-Theoretic Foundations for Probability and Finance*,
       Wiley, 2019 (testing by betting; test martingales; Ville's inequality).
.. [2] I. Waudby-Smith and A. Ramdas, "Estimating means of bounded random variables by
       betting", J. R. Stat. Soc. B 86 (2024) 1-27 (predictable plug-in bets).
.. [3] S. R. Howard, A. Ramdas, J. McAuliffe and J. Sekhon, "Time-uniform, nonparametric,
       nonasymptotic confidence sequences", Ann. Statist. 49 (2021) 1055-1080.
.. [4] J. Ville, *Etude critique de la notion de collectif*, Gauthier-Villars, 1939.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cache

import numpy as np
from scipy.special import logsumexp

from shufflecheck.common.errors import InputError
from shufflecheck.stats.nulls import Law

__all__ = [
    "POSITION_BLOCK",
    "POSITION_WEIGHT",
    "PRIOR_DECKS",
    "TILT_POINTS",
    "TILT_SPAN",
    "PositionBet",
    "TiltGrid",
    "family_log_e",
    "plugin_log_e",
    "tilt_grid",
]

#: Largest tilt of a bet, in null standard deviations of the statistic (bounded bets).
TILT_SPAN = 3.0
#: Tilts on the grid of the plug-in bet (one side: about half of them).
TILT_POINTS = 241
#: Pseudo-decks at the null mean that shrink the plug-in mean towards the null.
PRIOR_DECKS = 20
#: Weight of the fitted frequencies in the position-by-card bet (the rest is uniform).
POSITION_WEIGHT = 0.5
#: Decks per block of the position-by-card bet (its frequencies are refitted between blocks).
POSITION_BLOCK = 100


@dataclass(frozen=True)
class TiltGrid:
    """Tilted versions ``p_theta(x) = p0(x) exp(theta (x - mu0)) / M(theta)`` of one exact law.

    ``thetas`` increase; ``log_mgf[j] = log M(thetas[j])`` (computed from the exact log
    probabilities, so it is exact up to floating point); ``means[j]`` is the mean of
    ``p_thetas[j]``, increasing with ``theta``. ``mean0`` and ``sd0`` are the exact null mean
    and standard deviation.
    """

    mean0: float
    sd0: float
    thetas: np.ndarray
    log_mgf: np.ndarray
    means: np.ndarray

    def log_ratio(self, index: np.ndarray | int, values: np.ndarray) -> np.ndarray:
        """``log p_theta(x) / p0(x)`` for tilts ``thetas[index]`` at ``values`` (broadcast)."""
        theta = self.thetas[index]
        return theta * (np.asarray(values, dtype=float) - self.mean0) - self.log_mgf[index]

    def nearest(self, mean: np.ndarray) -> np.ndarray:
        """Index of the grid tilt whose mean is nearest ``mean`` (the grid's plug-in fit)."""
        m = np.asarray(mean, dtype=float)
        hi = np.clip(np.searchsorted(self.means, m), 1, self.means.size - 1)
        lo = hi - 1
        pick_hi = np.abs(self.means[hi] - m) < np.abs(m - self.means[lo])
        return np.where(pick_hi, hi, lo)

    def zero(self) -> int:
        """Index of the tilt 0 (no bet)."""
        return int(np.argmin(np.abs(self.thetas)))


def _support(law: Law) -> tuple[np.ndarray, np.ndarray]:
    values = law.offset + np.arange(len(law.counts), dtype=float)
    return values, np.asarray(law.log_pmf, dtype=float)


@cache
def _tilt_grid(law: Law, units: tuple[float, ...]) -> TiltGrid:
    values, log_p = _support(law)
    mean0 = float(law.mean)
    sd0 = math.sqrt(float(law.variance))
    thetas = np.asarray(units, dtype=float) / sd0
    centred = values - mean0
    exponent = log_p[None, :] + thetas[:, None] * centred[None, :]
    log_mgf = logsumexp(exponent, axis=1)
    weights = np.exp(exponent - log_mgf[:, None])
    means = mean0 + weights @ centred
    for array in (thetas, log_mgf, means):
        array.flags.writeable = False
    return TiltGrid(mean0, sd0, thetas, log_mgf, means)


def tilt_grid(
    law: Law,
    alternative: str = "two-sided",
    *,
    units: tuple[float, ...] | None = None,
) -> TiltGrid:
    """The grid of tilts of ``law`` a bet may use.

    Parameters
    ----------
    law : Law
        Exact null law of the statistic (at least two values).
    alternative : {"two-sided", "greater", "less"}
        Side(s) the bets may take: ``greater`` uses tilts >= 0 only.
    units : tuple of float, optional
        Tilts in null standard deviations (default: ``TILT_POINTS`` points evenly spread on
        ``[-TILT_SPAN, TILT_SPAN]``, cut to the side of ``alternative``).
    """
    if law.low == law.high:
        raise InputError("a constant statistic cannot be bet on")
    if units is None:
        grid = np.linspace(-TILT_SPAN, TILT_SPAN, TILT_POINTS)
        grid[TILT_POINTS // 2] = 0.0
        if alternative == "greater":
            grid = grid[grid >= 0]
        elif alternative == "less":
            grid = grid[grid <= 0]
        elif alternative != "two-sided":
            raise InputError(f"alternative must be two-sided, greater or less, got {alternative!r}")
        units = tuple(float(u) for u in grid)
    return _tilt_grid(law, tuple(units))


def plugin_log_e(
    grid: TiltGrid, values: np.ndarray, count: int, total: float
) -> tuple[np.ndarray, int, float]:
    """Per-deck log e-values of the predictable plug-in bet, continuing a running state.

    Parameters
    ----------
    grid : TiltGrid
        Tilts the bet may use (:func:`tilt_grid`).
    values : 1-D int array
        The statistic on the new decks, in time order.
    count, total : int, float
        Decks before these and the sum of the statistic over them (the state).

    Returns
    -------
    log_e : ndarray
        ``log e_t`` for each new deck; its cumulative sum added to the previous ``log E``
        is the e-process.
    count, total : int, float
        The new state.

    Notes
    -----
    The bet on deck ``t`` is the grid tilt whose mean is nearest
    ``(total_{t-1} + PRIOR_DECKS mu0) / (count_{t-1} + PRIOR_DECKS)``, which uses only the
    decks before ``t`` (predictable), so ``E_p0[e_t | past] = 1`` exactly.
    """
    x = np.asarray(values, dtype=float)
    if x.size == 0:
        return np.zeros(0), count, total
    before = total + np.concatenate([[0.0], np.cumsum(x)[:-1]])
    decks_before = count + np.arange(x.size, dtype=float)
    shrunk = (before + PRIOR_DECKS * grid.mean0) / (decks_before + PRIOR_DECKS)
    index = grid.nearest(shrunk)
    return grid.log_ratio(index, x), count + int(x.size), total + float(x.sum())


class PositionBet:
    """The position-by-card e-process: bets on where each card lands, from past frequencies.

    ``counts[i, c]`` is the number of past decks with reference card ``c`` at position ``i``.
    Decks are bet on in blocks of ``POSITION_BLOCK`` (counted from the table's first deck,
    so any chunking gives the same bets); a deck of the block starting after ``s`` decks
    gets ``e = (1 - w) + w * mean_i n (counts_s[i, x_i] + 1) / (s + n)`` (``w =
    POSITION_WEIGHT``; the fraction is the Laplace-smoothed frequency of the ``s`` earlier
    decks), which has null mean 1 given the past because each position holds a uniform card
    under the null.
    """

    def __init__(self, cards: int, counts: np.ndarray | None = None, decks: int = 0) -> None:
        self.cards = int(cards)
        self.counts = (
            np.zeros((cards, cards), dtype=np.int64) if counts is None else np.array(counts)
        )
        self.decks = int(decks)
        #: counts at the start of the current block (the bet in force)
        self._frozen = self.counts.copy()
        self._frozen_decks = self.decks - self.decks % POSITION_BLOCK
        if self._frozen_decks != self.decks:
            raise InputError("a position bet can only resume at a block boundary")

    def log_e(self, relative: np.ndarray) -> np.ndarray:
        """Per-deck log e-values of the new decks (rows of ``relative``); updates the state."""
        rel = np.asarray(relative, dtype=np.int64)
        k, n = rel.shape
        out = np.empty(k)
        columns = np.arange(n)
        done = 0
        while done < k:
            room = POSITION_BLOCK - (self.decks - self._frozen_decks)
            part = rel[done : done + room]
            fitted = (self._frozen[columns, part].mean(axis=1) + 1.0) * n / (self._frozen_decks + n)
            out[done : done + part.shape[0]] = np.log(
                (1.0 - POSITION_WEIGHT) + POSITION_WEIGHT * fitted
            )
            flat = (columns[None, :] * n + part).ravel()
            self.counts += np.bincount(flat, minlength=n * n).reshape(n, n)
            self.decks += part.shape[0]
            done += part.shape[0]
            if self.decks - self._frozen_decks == POSITION_BLOCK:
                self._frozen = self.counts.copy()
                self._frozen_decks = self.decks
        return out

    def state(self) -> dict[str, object]:
        """Counts now and at the start of the current block (enough to resume exactly)."""
        return {
            "counts": self.counts.tolist(),
            "decks": self.decks,
            "block_counts": self._frozen.tolist(),
            "block_decks": self._frozen_decks,
        }

    @classmethod
    def from_state(cls, cards: int, state: dict[str, object] | None) -> PositionBet:
        if state is None:
            return cls(cards)
        bet = cls(
            cards, np.asarray(state["block_counts"], dtype=np.int64), int(state["block_decks"])
        )  # type: ignore[arg-type]
        bet.counts = np.asarray(state["counts"], dtype=np.int64)
        bet.decks = int(state["decks"])  # type: ignore[arg-type]
        return bet


def family_log_e(log_es: np.ndarray) -> np.ndarray:
    """Log of the average of ``K`` e-processes: rows are decks, columns the ``K`` processes
    (each column a running ``log E``); the result is the family's running ``log E``."""
    arr = np.asarray(log_es, dtype=float)
    if arr.ndim != 2 or arr.shape[1] == 0:
        raise InputError("a family needs a 2-D array with at least one process")
    return logsumexp(arr, axis=1) - math.log(arr.shape[1])
