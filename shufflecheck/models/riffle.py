"""The Gilbert–Shannon–Reeds riffle and its generalisation, the a-shuffle.

An ``a``-shuffle cuts the deck into ``a`` packets with multinomial sizes and drops cards
from packet ``j`` with probability proportional to the packet's current size; ``a = 2`` is
the ordinary riffle (GSR). ``k`` successive ``a``-shuffles are one ``a^k``-shuffle.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
"""

from __future__ import annotations

from fractions import Fraction

from shufflecheck.characters import Eigenvalue
from shufflecheck.counting import stirling1_row
from shufflecheck.errors import InputError

__all__ = ["check_hands", "spectrum"]


def check_hands(hands: int) -> int:
    """Number of packets ``a`` of an a-shuffle: an integer >= 2."""
    if isinstance(hands, bool) or not isinstance(hands, int) or hands < 2:
        raise InputError(f"hands (packets of an a-shuffle) must be an integer >= 2, got {hands!r}")
    return hands


def spectrum(cards: int, *, hands: int = 2) -> list[Eigenvalue]:
    """Eigenvalues ``a^-i``, ``i = 0..n-1``, multiplicity ``c(n, n-i)`` ([1], Cor. 3).

    ``c`` are the unsigned Stirling numbers of the first kind (permutations by cycles).
    """
    a = check_hands(hands)
    row = stirling1_row(cards)
    return [
        Eigenvalue(value=Fraction(1, a**i), multiplicity=row[cards - i], shapes=())
        for i in range(cards)
        if row[cards - i]
    ]
