"""Rigorous two-sided bounds on the total variation of a two-valued deck in blocks, for
decks too large for the exact sum (a 52-card colour deck, a colour shoe).

The deck starts with ``p`` cards of class 0 above ``q`` cards of class 1. After an
``a``-shuffle the word (the class at each position) has probability ``N_a(w) / a^n`` with
(:mod:`shufflecheck.models.features`)

    N_a(w) = sum_{i=1}^{p} g(i, beta_i),
    g(i, b) = sum_{c=1}^{a} (c-1)^(p-i) c^(i-1) (a-c)^b (a-c+1)^(q-b),

``beta_i`` the number of class-1 cards above the ``i``-th class-0 card (``0 <= beta_1 <=
.. <= beta_p <= q``; the ``M = C(n, p)`` words are these lattice paths). In units of the
uniform chance ``1/M`` the word's likelihood ratio is additive along the path:
``R(w) = P(w) M = sum_i r(i, beta_i)`` with ``r = g M / a^n >= 0``. The total variation is

    TV = E_U[(1 - R)^+]     (U uniform on words; the mass below the uniform chance),

and only words with ``R < 1`` count. Every ``r(i, b)`` is rounded down onto a grid of
``L`` steps (``rq = floor(r L)``), and a dynamic programme over ``i`` carries, for every
``beta_i = b`` and grid sum ``s < L`` of the partial word, the uniform mass of the partial
words (``F``) and their mass times their partial ratio (``S``). A partial word whose grid
sum reaches ``L`` has ``R >= 1`` already (``r >= 0``) and is dropped. For the words of one
final grid sum ``s`` the ratio lies in ``[s/L, (s+p)/L]`` and its mean is ``S/F``, so

* lower: ``(F - S)^+`` (Jensen: ``(1 - R)^+`` is convex);
* upper: the chord of ``(1 - R)^+`` over ``[lo, hi]`` at the mean, ``F - S`` when ``hi <=
  1``, ``(hi F - S)(1 - lo)/(hi - lo)`` when the interval straddles 1 (a convex function's
  mean with a given mean on an interval is largest for the two-point law at its ends).

Only the few grid sums within ``p`` steps of ``L`` straddle 1, so the bracket is narrow.
The ``g`` are summed in floating point (one matrix product of nonnegative terms over the
``a`` labels), the programme only adds nonnegative numbers, and the result is widened by a
relative allowance :data:`ROUNDING` that exceeds the worst-case rounding of all of these
sums by orders of magnitude; the bracket is a rigorous bound up to that stated allowance.
Derived in this project; checked against the exact sum and brute force.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313 (the a-shuffle as labels on positions).
.. [2] M. Conger and D. Viswanath, "Riffle shuffles of decks with repeated cards", Ann.
       Probab. 34 (2006) 804-819 (two-valued decks).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["GRID", "ROUNDING", "WORK_LIMIT", "TwoValuedBracket", "two_valued_tv_bracket"]

#: Grid steps per unit of the likelihood ratio (before the memory cap below).
GRID = 1 << 16
#: Cells (positions of the last class-1 count x grid steps) the programme may hold.
CELLS = 1 << 21
#: Relative allowance for floating-point rounding in the sums (see the module docstring):
#: every sum here is of at most a few million nonnegative terms, whose relative rounding
#: error is below 1e-9 in the worst case.
ROUNDING = 1e-7
#: Largest ``p (q + 1) a`` (multiply-adds for the table of ``g``) attempted.
WORK_LIMIT = 2 * 10**9
#: Labels summed per block of the matrix product.
_LABEL_BLOCK = 1 << 15


@dataclass(frozen=True)
class TwoValuedBracket:
    """``lower <= TV <= upper`` for the word after an ``hands``-shuffle; ``grid`` steps."""

    lower: float
    upper: float
    grid: int


def _log_ratio_table(p: int, q: int, a: int) -> np.ndarray:
    """``log r(i, b)`` for ``i = 1..p`` (rows) and ``b = 0..q`` (columns); -inf for 0."""
    log_scale = math.lgamma(p + q + 1) - math.lgamma(p + 1) - math.lgamma(q + 1)
    log_scale -= (p + q) * math.log(a)
    i = np.arange(p, dtype=np.float64)[:, None]  # i - 1 = 0..p-1
    b = np.arange(q + 1, dtype=np.float64)[:, None]
    out = np.zeros((p, q + 1))
    # scale rows and columns so that each factor's largest term is 1, then sum blocks of
    # labels as one nonnegative matrix product
    row_terms, col_terms = [], []
    for start in range(1, a + 1, _LABEL_BLOCK):
        c = np.arange(start, min(a, start + _LABEL_BLOCK - 1) + 1, dtype=np.float64)[None, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            left = np.where((p - 1 - i) == 0, 0.0, (p - 1 - i) * np.log(c - 1))
            left = left + np.where(i == 0, 0.0, i * np.log(c))
            right = np.where(b == 0, 0.0, b * np.log(a - c))
            right = right + np.where((q - b) == 0, 0.0, (q - b) * np.log(a - c + 1))
        row_terms.append(left)
        col_terms.append(right)
    row_max = np.max([t.max(axis=1) for t in row_terms], axis=0)  # (p,)
    col_max = np.max([t.max(axis=1) for t in col_terms], axis=0)  # (q+1,)
    for left, right in zip(row_terms, col_terms, strict=True):
        out += np.exp(left - row_max[:, None]) @ np.exp(right - col_max[:, None]).T
    with np.errstate(divide="ignore"):
        return np.log(out) + row_max[:, None] + col_max[None, :] + log_scale


def two_valued_tv_bracket(
    p: int, q: int, hands: int, *, grid: int | None = None
) -> TwoValuedBracket | None:
    """Rigorous bounds on the total variation of the word after an ``hands``-shuffle of
    ``p`` cards of one class above ``q`` of another (module docstring), or None when the
    table of ``g`` would take more than :data:`WORK_LIMIT` multiply-adds.

    ``grid`` (steps per unit of the likelihood ratio) defaults to :data:`GRID`, lowered so
    that each of the programme's four arrays holds at most :data:`CELLS` cells (16 MB).
    """
    p, q, a = int(p), int(q), int(hands)
    if p < 1 or q < 1 or a < 1:
        return TwoValuedBracket(0.0, 0.0, 0)
    if p > q:  # the programme runs over the smaller class (the word law is symmetric
        p, q = q, p  # under swapping the classes and reversing the word)
    if p * (q + 1) * a > WORK_LIMIT:
        return None
    steps = int(grid) if grid is not None else max(1 << 10, min(GRID, CELLS // (q + 1)))
    log_r = _log_ratio_table(p, q, a)
    with np.errstate(over="ignore"):
        ratio = np.exp(log_r)
    # rounded down (and shrunk by the allowance) so that the grid sum never exceeds R
    grid_r = np.floor(np.minimum(ratio * (1 - ROUNDING), 2.0) * steps).astype(np.int64)
    mass = np.zeros((q + 1, steps))
    part = np.zeros((q + 1, steps))
    mass[0, 0] = math.exp(-_log_comb(p, q))  # each word has uniform chance 1/M
    new_mass = np.empty_like(mass)
    new_part = np.empty_like(part)
    for row in range(p):
        for b in range(1, q + 1):  # beta_i >= beta_{i-1}: running sums over b, row by row
            mass[b] += mass[b - 1]
            part[b] += part[b - 1]
        new_mass.fill(0.0)
        new_part.fill(0.0)
        for b in range(q + 1):
            shift = int(grid_r[row, b])
            if shift >= steps:
                continue  # every partial word here already has R >= 1
            keep = steps - shift
            new_mass[b, shift:] = mass[b, :keep]
            np.multiply(mass[b, :keep], ratio[row, b], out=new_part[b, shift:])
            new_part[b, shift:] += part[b, :keep]
        mass, new_mass = new_mass, mass
        part, new_part = new_part, part
    f = mass.sum(axis=0)
    s = part.sum(axis=0)
    grid_sum = np.arange(steps, dtype=np.float64)
    lo = grid_sum / steps
    hi = (grid_sum + p) / steps * (1 + ROUNDING) / (1 - ROUNDING)
    f_lo, f_hi = f * (1 - ROUNDING), f * (1 + ROUNDING)
    s_lo, s_hi = s * (1 - ROUNDING), s * (1 + ROUNDING)
    lower = float(np.sum(np.maximum(f_lo - s_hi, 0.0)))
    below = hi <= 1
    straddle = ~below
    upper = float(np.sum(np.maximum(f_hi[below] - s_lo[below], 0.0)))
    width = hi[straddle] - lo[straddle]
    chord = (hi[straddle] * f_hi[straddle] - s_lo[straddle]) * (1 - lo[straddle]) / width
    upper += float(np.sum(np.maximum(chord, 0.0)))
    lower = max(0.0, lower * (1 - ROUNDING))
    upper = min(1.0, upper * (1 + ROUNDING))
    return TwoValuedBracket(lower, upper, steps)


def _log_comb(p: int, q: int) -> float:
    return math.lgamma(p + q + 1) - math.lgamma(p + 1) - math.lgamma(q + 1)
