"""Change detection with a guaranteed average run length: CUSUM e-detectors and a confidence
set for the change point.

Each per-deck statistic gets a few fixed alternatives: exact laws tilted by
``DETECTOR_UNITS`` null standard deviations (both sides for two-sided statistics,
:func:`shufflecheck.stats.eprocess.tilt_grid`). For one alternative with per-deck log
likelihood ratio ``l_t``, Page's CUSUM is

    W_t = max(0, W_{t-1} + l_t) = log max_{j <= t} prod_{s=j..t} e_s,    # Page (1954), [1]

the largest e-process started at any earlier deck ([2]_, the CUSUM e-detector). It never
exceeds the log of the Shiryaev-Roberts e-detector ``M_t = sum_{j<=t} prod_{s=j..t} e_s``,
for which ``M_t - t`` is a martingale under the null, so the first ``t`` with ``M_t >= A``
has mean at least ``A`` ([2]_, the Shiryaev-Roberts e-detector). With ``N`` alternatives
in all (statistics x tilts) the alarm is raised when any ``W_t >= log(A N)``: then the
average of the ``N`` Shiryaev-Roberts detectors is at least ``A``, so the mean time to a
false alarm on a uniformly random machine is at least ``A`` decks (the ARL, a guaranteed
lower bound).

**Where the change began.** After an alarm on alternative ``q`` (exact law tilted by
``theta``), with ``S(v) = sum_{t >= v} l_t`` over the decks so far, the set
``{v : max S - S(v) <= c}``, ``c = log((N + 1) / (1 - confidence))``, holds the first
changed deck with probability at least ``confidence`` when the decks after the change
follow ``q``: decks before the change follow the exact null, so ``exp`` of the sums of
``l_t`` backwards from the change is a test martingale and exceeds ``e^c`` with probability
at most ``e^-c`` (Ville; union over the ``N`` alternatives the alarm might name), and decks
after it follow ``q``, so ``exp(-sum l_t)`` forwards from the change is a test martingale
under ``q`` (``e^-c`` again). The first half needs no model of the fault; the second is a
working model (the tilted law that raised the alarm), so the set is reported as a
confidence set *under that model*, and its coverage was measured by simulation
(docs/monitoring.md).

References
----------
.. [1] E. S. Page, "Continuous inspection schemes", Biometrika 41 (1954) 100-115.
.. [2] J. Shin, A. Ramdas and A. Rinaldo, "E-detectors: a nonparametric framework for
       sequential change detection", New England J. Statist. Data Sci. (2024);
       arXiv:2203.03532 (2022).
.. [3] J. Ville, *Etude critique de la notion de collectif*, Gauthier-Villars, 1939.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.stats.eprocess import TiltGrid, tilt_grid
from shufflecheck.stats.nulls import Law

__all__ = [
    "DETECTOR_UNITS",
    "ChangeSet",
    "change_set",
    "cusum",
    "detector_grid",
    "detector_threshold",
]

#: Fixed alternatives of the detector: tilts in null standard deviations (each side).
DETECTOR_UNITS = (0.1, 0.2, 0.4, 0.8)


def detector_grid(law: Law, alternative: str) -> TiltGrid:
    """The detector's fixed alternatives for one statistic (tilts on the biased side(s))."""
    units: tuple[float, ...] = DETECTOR_UNITS
    if alternative == "less":
        units = tuple(-u for u in reversed(DETECTOR_UNITS))
    elif alternative == "two-sided":
        units = (*(-u for u in reversed(DETECTOR_UNITS)), *DETECTOR_UNITS)
    elif alternative != "greater":
        raise InputError(f"alternative must be two-sided, greater or less, got {alternative!r}")
    return tilt_grid(law, units=units)


def detector_threshold(arl: float, alternatives: int) -> float:
    """Alarm level of every CUSUM, ``log(arl * alternatives)``, for a mean run length to a
    false alarm of at least ``arl`` decks over ``alternatives`` CUSUMs."""
    if not arl >= 1:
        raise InputError(
            f"the average run length must be at least 1 deck, got {arl!r}", argument="arl"
        )
    return math.log(float(arl) * int(alternatives))


def cusum(log_ratios: np.ndarray, start: np.ndarray) -> np.ndarray:
    """Page's CUSUM ``W_t = max(0, W_{t-1} + l_t)`` for every deck, vectorized.

    ``log_ratios`` has one row per alternative and one column per deck (decks along the
    contiguous axis); ``start`` is ``W`` of each alternative before the first deck. Uses
    ``W_t = S_t - min(-W_0, min_{s <= t} S_s)`` with the cumulative sums ``S`` (the Lindley
    recursion unrolled). Returns an array shaped like ``log_ratios``.
    """
    steps = np.asarray(log_ratios, dtype=float)
    if steps.shape[1] == 0:
        return np.zeros_like(steps)
    sums = np.cumsum(steps, axis=1)
    floor = np.minimum.accumulate(sums, axis=1)
    np.minimum(floor, -np.asarray(start, dtype=float)[:, None], out=floor)
    sums -= floor
    return sums


@dataclass(frozen=True)
class ChangeSet:
    """Confidence set for the first changed deck (1-based deck numbers of the series).

    ``low``..``high`` is the hull of the set (it is nearly always an interval; ``size``
    counts its decks), ``best`` the most likely start, ``confidence`` its level under the
    working model ``tilt_units`` (the alternative that raised the alarm).
    """

    low: int
    high: int
    best: int
    size: int
    confidence: float
    cutoff: float
    tilt_units: float


def change_set(
    values: np.ndarray,
    grid: TiltGrid,
    index: int,
    *,
    confidence: float,
    alternatives: int,
    offset: int = 0,
) -> ChangeSet:
    """Confidence set for where a lasting change began (see the module notes).

    Parameters
    ----------
    values : 1-D int array
        The statistic on every deck so far, in time order (negative: no value, e.g. the
        first deck of a consecutive-pair statistic; it contributes nothing).
    grid, index : TiltGrid, int
        The alternative that raised the alarm.
    confidence : float
        Level of the set, e.g. 0.95.
    alternatives : int
        ``N``, the number of alternatives the detector watched (the union bound).
    offset : int
        Added to the deck numbers (1-based numbering of ``values[0]`` is ``1 + offset``).
    """
    if not 0 < confidence < 1:
        raise InputError(f"confidence must lie strictly between 0 and 1, got {confidence!r}")
    x = np.asarray(values, dtype=float)
    if x.ndim != 1 or x.size == 0:
        raise InputError("a change-point set needs a non-empty series")
    steps = np.where(x >= 0, grid.log_ratio(index, np.maximum(x, 0)), 0.0)
    suffix = np.cumsum(steps[::-1])[::-1]
    cutoff = math.log((alternatives + 1) / (1 - confidence))
    inside = np.flatnonzero(suffix >= suffix.max() - cutoff)
    best = int(np.argmax(suffix))
    return ChangeSet(
        low=int(inside[0]) + 1 + offset,
        high=int(inside[-1]) + 1 + offset,
        best=best + 1 + offset,
        size=int(inside.size),
        confidence=float(confidence),
        cutoff=cutoff,
        tilt_units=float(grid.thetas[index] * grid.sd0),
    )
