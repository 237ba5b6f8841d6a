"""The guessing game with feedback as a test martingale, for shoes whose exact null law is
out of reach (the default feature ``rank`` of three packs or more, blackjack values of
eight packs, custom compositions).

A player names a most frequent remaining value before each card and then sees it. Under a
uniformly random shoe the next card is of value ``v`` with chance ``R_v / r`` whatever came
before (``R_v`` of ``r`` remaining cards), so the guess is right with chance ``p = M / r``
(``M`` the largest remaining count) given everything seen: each guess is a Bernoulli(p)
whose ``p`` the record itself shows. For a tilt ``lambda >= 0`` the product over all
guesses of all shoes of

    e^(lambda X) / (1 - p + p e^lambda)         (X = 1 for a right guess)

is the likelihood ratio of a player luckier than chance against chance itself: a
nonnegative martingale of mean exactly 1 under the null (a test martingale, [1]_). The
test bets on :data:`TILTS` tilts at once with equal weights (a mixture of test martingales
is one), so the e-value is

    E = mean_j exp(lambda_j S - sum_guesses log(1 - p + p e^lambda_j)),

``S`` the correct guesses, and ``p = min(1, 1/E)`` is a valid p-value by Markov's (even
Ville's) inequality ([1]_, [2]_): a bound, conservative by up to the mixture's factor of
``len(TILTS)`` against the best single tilt, and needing no null law at all. All it needs
of the record is how many guesses were made, and how many were right, at each ``(M, r)``:
an integer table (:func:`~shufflecheck.stats.shoe_statistics.greedy_steps`) that adds up
exactly across chunks, groups and machines.

The effect in plain units is the extra correct guesses per shoe beyond the chance of each
guess, ``(S - sum p) / shoes``, with standard error ``sqrt(sum p (1 - p)) / shoes``.

References
----------
.. [1] G. Shafer and V. Vovk, *Game-Theoretic Foundations for Probability and Finance*,
       Wiley, 2019 (testing by betting; test martingales; Ville's inequality).
.. [2] J. Ville, *Etude critique de la notion de collectif*, Gauthier-Villars, 1939.
.. [3] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23 (the guessing game; the greedy strategy).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import logsumexp

from shufflecheck.common.errors import InputError

__all__ = ["TILTS", "BetOutcome", "bet_outcome", "log_evalues", "shoe_gains"]

#: The tilts bet on, with equal weights: 1/1024 to 2 by factors of two. Tilt ``lambda`` is
#: best against an excess of about ``lambda V`` correct guesses over a record whose guesses'
#: variances sum to ``V`` (about 28 per six-pack shoe): 1/1024 serves an edge of 0.03 guesses
#: per shoe over 100,000 shoes, 2 an unshuffled shoe.
TILTS: tuple[float, ...] = tuple(2.0**j for j in range(-10, 2))


@dataclass(frozen=True)
class BetOutcome:
    """The betting test on one table of guesses: ``right`` correct guesses of ``guesses``,
    ``chance`` their expected number (the sum of the guesses' chances), ``variance`` the sum
    of ``p (1 - p)``; ``log_e`` the natural log of the e-value and ``log_p`` of the p-value
    ``min(1, 1/E)``; ``tilt`` the tilt that gained most."""

    right: int
    guesses: int
    chance: float
    variance: float
    log_e: float
    log_p: float
    tilt: float


def _table(cells: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``(M, r, X)`` of every occupied cell of a table ``cells[M, 2 r + X]``, with counts."""
    table = np.asarray(cells)
    if table.ndim != 2 or table.shape[1] % 2:
        raise InputError(f"a table of guesses has shape (M + 1, 2 (n + 1)), got {table.shape}")
    rows, cols = np.nonzero(table)
    return rows, cols, table[rows, cols].astype(np.float64)


def _logs(
    rows: np.ndarray, cols: np.ndarray, counts: np.ndarray, tilts: tuple[float, ...]
) -> np.ndarray:
    remaining = cols // 2
    if np.any(remaining < 1) or np.any(rows > remaining):
        raise InputError("a table of guesses needs 1 <= r and M <= r in every occupied cell")
    chance = rows / remaining
    right = float(counts[cols % 2 == 1].sum())
    out = np.empty(len(tilts))
    for j, tilt in enumerate(tilts):
        out[j] = tilt * right - float(counts @ np.log1p(chance * math.expm1(tilt)))
    return out


def log_evalues(cells: np.ndarray, tilts: tuple[float, ...] = TILTS) -> np.ndarray:
    """Natural logs of each tilt's martingale at the end of the table ``cells`` (module
    notes): ``lambda S - sum log(1 - p + p e^lambda)``."""
    return _logs(*_table(cells), tilts)


def bet_outcome(cells: np.ndarray, tilts: tuple[float, ...] = TILTS) -> BetOutcome:
    """The betting test of the guesses in ``cells`` (:func:`log_evalues`, mixed with equal
    weights over ``tilts``)."""
    rows, cols, counts = _table(cells)
    logs = _logs(rows, cols, counts, tilts)  # checks 1 <= r and M <= r
    chance = rows / (cols // 2)
    log_e = float(logsumexp(logs) - math.log(len(tilts)))
    return BetOutcome(
        right=int(counts[cols % 2 == 1].sum()),
        guesses=int(counts.sum()),
        chance=float(counts @ chance),
        variance=float(counts @ (chance * (1 - chance))),
        log_e=log_e,
        log_p=min(0.0, -log_e),
        tilt=float(tilts[int(np.argmax(logs))]),
    )


def shoe_gains(codes: np.ndarray, columns: int, tilts: tuple[float, ...] = TILTS) -> np.ndarray:
    """``(shoes, len(tilts))``: what each shoe adds to the log of each tilt's martingale,
    from its codes of :func:`~shufflecheck.stats.shoe_statistics.greedy_steps` (``columns``
    = ``2 (n + 1)``, the table's width): the per-shoe terms of :func:`log_evalues`."""
    codes = np.asarray(codes, dtype=np.int64)
    chance = (codes // columns) / np.maximum((codes % columns) // 2, 1)
    right = (codes % 2).sum(axis=1).astype(np.float64)
    out = np.empty((codes.shape[0], len(tilts)))
    for j, tilt in enumerate(tilts):
        out[:, j] = tilt * right - np.log1p(chance * math.expm1(tilt)).sum(axis=1)
    return out
