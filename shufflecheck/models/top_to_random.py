"""Top-to-random and its inverse, random-to-top (Aldous & Diaconis 1986).

Top-to-random takes the top card and inserts it at one of the ``n`` positions uniformly.
Random-to-top moves a uniformly chosen card to the top; it is the inverse walk, with the
same distance to uniform after every number of steps.

References
----------
.. [1] D. Aldous and P. Diaconis, "Shuffling cards and stopping times", Amer. Math.
       Monthly 93 (1986) 333-348.
.. [2] P. Diaconis, J. A. Fill and J. Pitman, "Analysis of top to random shuffles",
       Combin. Probab. Comput. 1 (1992) 135-155 (spectrum).
"""

from __future__ import annotations

from fractions import Fraction

from shufflecheck.characters import Eigenvalue
from shufflecheck.counting import rencontres_row

__all__ = ["spectrum"]


def spectrum(cards: int) -> list[Eigenvalue]:
    """Eigenvalues ``j/n`` with multiplicity the number of permutations with ``j`` fixed points.

    ``j = n-1`` never occurs (multiplicity 0) and is omitted ([2], Thm. 4.1).
    """
    row = rencontres_row(cards)
    return [
        Eigenvalue(value=Fraction(j, cards), multiplicity=row[j], shapes=())
        for j in range(cards, -1, -1)
        if row[j]
    ]
