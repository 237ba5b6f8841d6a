"""Random transpositions (Diaconis & Shahshahani 1981).

Each step a left hand and a right hand each pick a uniformly random card and the two are
swapped; nothing happens when both pick the same card. The step law is a class function:
weight ``hold`` (default ``1/n``) on the identity and ``1 - hold`` spread evenly over the
``n(n-1)/2`` transpositions (each ``2/n^2`` in the two-hands model).

References
----------
.. [1] P. Diaconis and M. Shahshahani, "Generating a random permutation with random
       transpositions", Z. Wahrsch. Verw. Gebiete 57 (1981) 159-179.
"""

from __future__ import annotations

from fractions import Fraction

from shufflecheck.characters import Eigenvalue, group_eigenvalues, transposition_ratio
from shufflecheck.errors import InputError
from shufflecheck.partitions import dimension, partitions

__all__ = ["check_hold", "spectrum"]


def check_hold(cards: int, hold: float | Fraction | None) -> Fraction | float:
    """The holding probability: ``1/n`` by default (exact), else a value in [0, 1)."""
    if hold is None:
        return Fraction(1, cards)
    if not 0 <= hold < 1:
        raise InputError(f"hold must be in [0, 1), got {hold}")
    return hold


def spectrum(cards: int, *, hold: float | Fraction | None = None) -> list[Eigenvalue]:
    """Distinct eigenvalues of one step: ``hold + (1 - hold) chi^lambda(tau)/d_lambda``.

    Multiplicity ``d_lambda^2`` summed over the shapes giving the same value ([1], Lemma 5;
    the content formula gives the ratio).
    """
    h = check_hold(cards, hold)
    rows = []
    for lam in partitions(cards):
        r = transposition_ratio(lam)
        value = h + (1 - h) * r if isinstance(h, Fraction) else h + (1 - h) * float(r)
        d = dimension(lam)
        rows.append((lam, value, d * d))
    return group_eigenvalues(rows)
