"""Since when: where a lasting bias most likely began in a time-ordered run of decks.

Model: decks ``1..tau-1`` follow the null (per-deck mean ``mu0`` and variance ``s0^2``, both
exact under a uniform deck); from deck ``tau`` to the end the mean is shifted in a known
direction. With the variance held at ``s0^2`` (a Gaussian working model), the
log-likelihood ratio of "shift from ``tau``" against "no shift", maximised over the size of
the shift, is ``Z(tau)^2 / 2`` with ``Z(tau) = sum_{t >= tau} (x_t - mu0) / (s0 sqrt(D - tau
+ 1))``, so the estimate is the ``tau`` with the largest ``Z`` in the biased direction: the
CUSUM / likelihood-ratio scan of [1]_ for a change that persists to the end ([2]_).
The result is an estimate; it is computed only when the battery has flagged the decks, on
the statistic of the most significant flagged test.

**An interval on the start** (:func:`change_interval`). With the shift fixed at its
estimate ``d`` (the mean after the start less ``mu0``), the per-deck log-likelihood ratio of
the Gaussian working model is ``l_t = (d (x_t - mu0) - d^2 / 2) / s0^2`` and
``S(v) = sum_{t >= v} l_t``; the set ``{v : max S - S(v) <= log(2 / (1 - level))}`` is the
likelihood set for the start of [2]_, cut off as the change-point set of
:mod:`shufflecheck.stats.detector` (Ville's inequality [3]_ on both sides of the change,
for one alternative). The shift is fitted on the same decks and the law is a working
model, so the set is an *estimate* at about that level, not a guarantee; its coverage on
Gaussian series with a known start is checked by simulation in the tests.

References
----------
.. [1] E. S. Page, "Continuous inspection schemes", Biometrika 41 (1954) 100-115.
.. [2] D. V. Hinkley, "Inference about the change-point in a sequence of random
       variables", Biometrika 57 (1970) 1-17.
.. [3] J. Ville, *Etude critique de la notion de collectif*, Gauthier-Villars, 1939.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from shufflecheck.common.errors import InputError

__all__ = ["ChangeInterval", "ChangePoint", "change_interval", "change_point"]


@dataclass(frozen=True)
class ChangePoint:
    """Estimated start (0-based index) of a lasting shift, with the scan statistic."""

    start: int
    statistic: float
    mean_before: float | None
    mean_after: float


def change_point(series: np.ndarray, mean0: float, var0: float, direction: int) -> ChangePoint:
    """Likelihood-ratio scan for a shift of the mean lasting to the end of ``series``.

    Parameters
    ----------
    series : 1-D array
        Per-deck values in time order.
    mean0, var0 : float
        Exact null mean and variance of one value.
    direction : {+1, -1}
        +1 when the bias raises the statistic, -1 when it lowers it.

    Returns
    -------
    ChangePoint
        ``start`` is the 0-based index of the first deck of the shifted stretch; the
        largest standardised suffix excess ``Z`` is ``statistic``.
    """
    x = np.asarray(series, dtype=float)
    if x.ndim != 1 or x.size == 0:
        raise InputError("a change-point scan needs a non-empty 1-D series")
    if direction not in (1, -1):
        raise InputError("direction must be +1 or -1")
    if not var0 > 0:
        raise InputError("the null variance must be positive")
    dev = direction * (x - mean0)
    suffix = np.cumsum(dev[::-1])[::-1]  # sum from t to the end
    lengths = np.arange(x.size, 0, -1, dtype=float)
    z = suffix / np.sqrt(var0 * lengths)
    start = int(np.argmax(z))
    before = float(x[:start].mean()) if start > 0 else None
    return ChangePoint(start, float(z[start]), before, float(x[start:].mean()))


@dataclass(frozen=True)
class ChangeInterval:
    """Decks ``low``..``high`` (0-based indices, the hull of the likelihood set) holding the
    start of the shift at about ``level`` (an estimate; see the module notes)."""

    low: int
    high: int
    level: float


def change_interval(
    series: np.ndarray,
    mean0: float,
    var0: float,
    direction: int,
    *,
    level: float = 0.95,
) -> ChangeInterval:
    """Likelihood set for the start of a lasting shift (module notes), as its hull.

    Parameters
    ----------
    series, mean0, var0, direction
        As for :func:`change_point`.
    level : float
        Nominal level of the set, in (0, 1).

    Returns
    -------
    ChangeInterval
        0-based indices of the first and last deck of the set; it always holds the
        :func:`change_point` estimate.
    """
    if not 0 < level < 1:
        raise InputError(f"level must lie strictly between 0 and 1, got {level!r}")
    point = change_point(series, mean0, var0, direction)
    x = np.asarray(series, dtype=float)
    shift = max(direction * (point.mean_after - mean0), 0.0)
    if shift == 0.0:  # no shift in the biased direction: any start is as likely
        return ChangeInterval(0, x.size - 1, float(level))
    steps = (shift * direction * (x - mean0) - shift * shift / 2) / var0
    suffix = np.cumsum(steps[::-1])[::-1]
    cutoff = np.log(2 / (1 - level))
    inside = np.flatnonzero(suffix >= suffix.max() - cutoff)
    low, high = int(inside[0]), int(inside[-1])
    low, high = min(low, point.start), max(high, point.start)
    return ChangeInterval(low, high, float(level))


def describe(
    point: ChangePoint, decks: int, what: str, expected: float, *, unit: str = "deck"
) -> str:
    """One sentence for a report (``what``: the statistic, e.g. "rising sequences";
    ``unit``: what is counted, ``deck`` or ``shoe``)."""
    if point.start == 0:
        return (
            f"the departure in {what} is present from the first {unit} on "
            f"({point.mean_after:.3g} per {unit} vs {expected:.3g} expected); estimate"
        )
    after = decks - point.start
    return (
        f"the departure in {what} most likely began at {unit} {point.start + 1:,} of {decks:,} "
        f"(the {after:,} {unit}s from there average {point.mean_after:.3g} vs {expected:.3g} "
        f"expected, those before {point.mean_before:.3g}); estimate, scan Z = "
        f"{point.statistic:.1f}"
    )
