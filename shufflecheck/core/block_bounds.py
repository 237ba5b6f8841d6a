"""Rigorous upper bounds for a procedure from its exactly analysed blocks.

A procedure is a product (convolution, on the group of arrangements) of independent laws:
exactly analysed *blocks* ``B_1, ..., B_m`` and, in between, other steps whose laws are not
known (strips repeated, clumpy riffles, fixed rearrangements, ...). With ``U`` the uniform
law, ``U * f = f * U = (sum of f) U`` for any signed measure ``f``. Write a block as
``B = U + (B - U)`` and expand: every term holding a ``U`` and a difference ``(B_k - U)``
(total mass 0) vanishes, so for any non-empty set ``S`` of blocks ::

    P - U = (product of the steps, with B_k replaced by B_k - U for k in S).        (1)

Blocks outside ``S`` and the steps in between stay as they are: probability measures, of
``L1`` norm 1. A block ``k`` may also be split by its separation ``s_k``:
``B_k = (1 - s_k) U + s_k Q_k`` with ``Q_k`` a probability (that is what separation
means), which gives ``P - U = s_k (P' - U)``, ``P'`` the procedure with ``Q_k`` in place of
``B_k``. Then the norms of (1) are bounded with

* ``||f * g||_1 <= ||f||_1 ||g||_1`` (``||B - U||_1 = 2 TV(B)``);
* Young's inequality ``||f * g||_2 <= ||f||_1 ||g||_2`` (either order: ``f * g`` is an
  average of translates of one factor, weighted by the other) with ``n! ||B - U||_2^2 =
  chi2(B)``, the chi-square distance ``n! sum (B - 1/n!)^2``;
* Cauchy-Schwarz, ``|f * g (x)| <= ||f||_2 ||g||_2`` and ``||f * g||_inf <=
  ||f||_inf ||g||_1``;
* ``||F||_1 <= sqrt(n!) ||F||_2`` and ``||F||_1 <= n! ||F||_inf`` (``n!`` arrangements).

Hence, with ``g_k`` the factor a further block contributes (1 if absorbed, its separation
``s_k``, or ``2 TV(B_k)``, whichever is smallest), for any blocks ``i != j``:

* ``TV(P) <= TV(B_i) prod_{k != i} g_k`` (one block, others as factors),
* ``TV(P) <= 1/2 sqrt(chi2(B_j)) prod_{k != j} g_k`` (Young),
* ``TV(P) <= 1/2 sqrt(chi2(B_i) chi2(B_j)) prod_{k != i, j} g_k`` (Cauchy-Schwarz),
* ``TV(P) <= prod_k min(1, s_k)`` (separations),
* ``|n! P(x) - 1| <= sqrt(chi2(B_i) chi2(B_j)) prod_{k != i, j} g_k`` and
  ``|n! P(x) - 1| <= e_j prod_{k != j} g_k`` with ``e_j = max(s_j, r_j - 1)``,
  ``r_j = n! max B_j``; so separation ``<= min(1, .)`` of these and of the product of
  separations, and the largest likelihood ratio ``n! max P <= 1 +`` these (and ``<= r_j``),
* ``chi2(P) <= chi2(B_j) prod_{k != j} g_k^2`` and ``chi2(P) <= 2 TV(P) max|n! P - 1|``,
* ``KL(P) <= min(KL(B_j), log2(1 + chi2(P)), log2(n! max P))`` bits (Jensen:
  ``E_P log(P/U) <= log E_P(P/U)``).

Every candidate is a valid bound; the smallest of each is returned, with the roles the
blocks played. Values are computed in double precision from the blocks' exact figures and
raised by a relative ``1e-12`` so that rounding can never make a bound too small.

The derivations, in full, are in docs/methods.md; every bound is checked against exact
laws computed by brute force over all arrangements for ``n <= 8`` (tests).

References
----------
.. [1] P. Diaconis, *Group Representations in Probability and Statistics*, Institute of
       Mathematical Statistics, Hayward, CA, 1988, ch. 3 (convolution of laws on a group,
       total variation and the L2 distance).
.. [2] D. Aldous and P. Diaconis, "Strong uniform times and finite random walks", Adv. in
       Appl. Math. 8 (1987) 69-97 (separation and its submultiplicativity).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from shufflecheck.common.quantity import Quantity, upper_bound

__all__ = ["BlockBounds", "BlockFigures", "block_bounds"]

#: relative margin added to every bound (double-precision rounding of the block figures)
MARGIN = 1e-12
_TINY = 1e-300


@dataclass(frozen=True)
class BlockFigures:
    """The exact figures of one block: distances to uniform, chi-square distance
    (``n! sum (P - 1/n!)^2``) and largest likelihood ratio (``n! max P``); the last two
    may be ``inf`` (beyond doubles) or None (unknown)."""

    label: str
    total_variation: float
    separation: float
    kl_bits: float | None
    chi_square: float | None
    max_ratio: float | None


@dataclass(frozen=True)
class BlockBounds:
    """Rigorous upper bounds for the whole procedure (Quantities of kind ``bound``):
    ``total_variation``, ``separation``, ``kl_bits``, ``likelihood_ratio`` (``n! max P``),
    ``chi_square``; a metric is missing when no block bounds it."""

    bounds: dict[str, Quantity]


def _log(x: float) -> float:
    """``ln x`` with figures below 1e-300 read as 1e-300 (so no bound is ever 0)."""
    return math.log(max(x, _TINY))


def _finish(log_value: float, cap: float | None = None) -> float:
    """A bound from its logarithm, raised by the rounding margin (and capped)."""
    value = max(math.exp(min(log_value, 700.0)), _TINY) * (1 + MARGIN)
    return min(value, cap) if cap is not None else value


@dataclass(frozen=True)
class _Factor:
    """What one block contributes when it is not the special one: its factor and role."""

    value: float
    role: str  # "absorbed", "separation", "total variation"


def _factor(block: BlockFigures) -> _Factor:
    two_tv = 2 * block.total_variation
    best = _Factor(1.0, "absorbed")
    if block.separation < best.value:
        best = _Factor(block.separation, "separation")
    if two_tv < best.value:
        best = _Factor(two_tv, "total variation")
    return best


def _describe(
    blocks: Sequence[BlockFigures], factors: list[_Factor], special: dict[int, str], head: str
) -> str:
    parts = [head]
    others = [
        f"{'2 TV' if factors[k].role == 'total variation' else 'separation'} of {b.label}"
        for k, b in enumerate(blocks)
        if k not in special and factors[k].role != "absorbed"
    ]
    if others:
        parts.append("times " + ", ".join(others))
    return "; ".join(parts)


def block_bounds(blocks: Sequence[BlockFigures]) -> BlockBounds:
    """The smallest rigorous upper bounds of the module docstring for these blocks."""
    if not blocks:
        return BlockBounds({})
    names = ", ".join(b.label for b in blocks)
    factors = [_factor(b) for b in blocks]
    log_all = sum(_log(f.value) for f in factors)

    def rest(*skip: int) -> float:
        return log_all - sum(_log(factors[k].value) for k in skip)

    # ---- total variation
    tv_candidates: list[tuple[float, str]] = []
    log_seps = sum(_log(min(1.0, b.separation)) for b in blocks)
    tv_candidates.append((log_seps, f"product of block separations ({names})"))
    for j, b in enumerate(blocks):
        tv_candidates.append(
            (
                _log(b.total_variation) + rest(j),
                _describe(blocks, factors, {j: ""}, f"TV of {b.label}"),
            )
        )
    root = [
        (0.5 * _log(b.chi_square), j)
        for j, b in enumerate(blocks)
        if b.chi_square is not None and math.isfinite(b.chi_square)
    ]
    # the best one and two square-root factors: smallest sqrt(chi2_j) / g_j
    ranked = sorted(root, key=lambda item: item[0] - _log(factors[item[1]].value))
    for log_root, j in ranked[:1]:
        tv_candidates.append(
            (
                math.log(0.5) + log_root + rest(j),
                _describe(
                    blocks,
                    factors,
                    {j: ""},
                    f"Young: 1/2 sqrt(chi2 of {blocks[j].label})",
                ),
            )
        )
    pair_log = None
    if len(ranked) >= 2:
        (li, i), (lj, j) = ranked[0], ranked[1]
        pair_log = (li + lj + rest(i, j), i, j)
        tv_candidates.append(
            (
                math.log(0.5) + pair_log[0],
                _describe(
                    blocks,
                    factors,
                    {i: "", j: ""},
                    f"Cauchy-Schwarz: 1/2 sqrt(chi2 of {blocks[i].label} x chi2 of "
                    f"{blocks[j].label})",
                ),
            )
        )
    tv_log, tv_how = min(tv_candidates, key=lambda c: c[0])
    tv_value = _finish(tv_log, 1.0)
    out: dict[str, Quantity] = {
        "total_variation": upper_bound(tv_value, method=f"block inequality: {tv_how}"),
    }

    # ---- largest deviation of n! P from 1 (separation, likelihood ratio)
    sup_candidates: list[tuple[float, str]] = []
    if pair_log is not None:
        _, i, j = pair_log
        sup_candidates.append(
            (
                pair_log[0],
                _describe(
                    blocks,
                    factors,
                    {i: "", j: ""},
                    f"Cauchy-Schwarz: sqrt(chi2 of {blocks[i].label} x chi2 of {blocks[j].label})",
                ),
            )
        )
    for j, b in enumerate(blocks):
        if b.max_ratio is not None and math.isfinite(b.max_ratio):
            deviation = max(b.separation, b.max_ratio - 1.0)
            sup_candidates.append(
                (
                    _log(deviation) + rest(j),
                    _describe(blocks, factors, {j: ""}, f"largest deviation of {b.label}"),
                )
            )
    sep_candidates = [(log_seps, f"product of block separations ({names})")]
    sep_candidates += sup_candidates
    sep_log, sep_how = min(sep_candidates, key=lambda c: c[0])
    out["separation"] = upper_bound(_finish(sep_log, 1.0), method=f"block inequality: {sep_how}")
    ratios = [b.max_ratio for b in blocks if b.max_ratio is not None]
    ratio_value, ratio_how = math.inf, ""
    if ratios and min(ratios) < math.inf:
        ratio_value = min(ratios)
        ratio_how = "largest likelihood ratio of the least concentrated block"
    sup_value = math.inf
    if sup_candidates:
        sup_log, sup_how = min(sup_candidates, key=lambda c: c[0])
        sup_value = _finish(sup_log)
        if 1.0 + sup_value < ratio_value:
            ratio_value, ratio_how = 1.0 + sup_value, f"1 + {sup_how}"
    if math.isfinite(ratio_value):
        out["likelihood_ratio"] = upper_bound(
            ratio_value * (1 + MARGIN), method=f"block inequality: {ratio_how}"
        )

    # ---- chi-square and KL
    chi_candidates: list[tuple[float, str]] = []
    for log_root, j in ranked[:1]:
        chi_candidates.append(
            (
                2 * (log_root + rest(j)),
                _describe(blocks, factors, {j: ""}, f"Young: chi2 of {blocks[j].label}"),
            )
        )
    if math.isfinite(sup_value):
        chi_candidates.append(
            (_log(2 * tv_value * sup_value), "2 TV x largest deviation (bounds above)")
        )
    chi_value = math.inf
    if chi_candidates:
        chi_log, chi_how = min(chi_candidates, key=lambda c: c[0])
        chi_value = _finish(chi_log)
        out["chi_square"] = upper_bound(chi_value, method=f"block inequality: {chi_how}")
    kl_candidates = [
        (b.kl_bits, f"smallest exact KL of a block ({b.label})")
        for b in blocks
        if b.kl_bits is not None
    ]
    if math.isfinite(chi_value):
        kl_candidates.append(
            (math.log1p(chi_value) / math.log(2), "KL <= log2(1 + chi2), chi2 bound above")
        )
    if math.isfinite(ratio_value):
        kl_candidates.append(
            (math.log1p(ratio_value - 1) / math.log(2), "KL <= log2(largest likelihood ratio)")
        )
    if kl_candidates:
        kl_value, kl_how = min(kl_candidates, key=lambda c: c[0])
        out["kl_bits"] = upper_bound(
            max(kl_value, _TINY) * (1 + MARGIN), method=f"block inequality: {kl_how}", unit="bits"
        )
    return BlockBounds(out)
