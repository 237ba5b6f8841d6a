"""The interleaving conjecture for separation: a figure shown only as ``conjectured``.

**Statement (unproven).** For ideal riffles (a- and b-shuffles, [1]) and any fixed
rearrangement ``sigma`` in between, the separation of ``R_a sigma R_b`` is at most that of
one ``ab``-shuffle, ``1 - prod_{i<n} (1 - i/(ab))``; equivalently the least likely
arrangement has probability at least ``C(ab, n) / (ab)^n``. By convexity the same would
follow for any independent random step in between (a cut, a strip, a pile deal), and by
induction for any number of riffle blocks. A procedure whose ideal riffles have ``A``
packets in all (``A = 2^m`` for ``m`` riffles) would then have separation, and so total
variation, at most ::

    1 - prod_{i=1}^{n-1} (1 - i/A).

**Evidence** (docs/methods.md gives the details): exhaustive exact checks over every
``sigma`` for two blocks at ``n <= 7`` with several ``(a, b)``, three blocks at ``n <= 5``,
hill-climbing at ``n = 8``, all without a counterexample; the test suite re-checks two
blocks exhaustively for ``n <= 6``. A first-order argument holds as ``a`` and ``b`` grow.

**The total-variation analogue is false**: for ``n = 5``, ``a = b = 8`` and ``sigma`` the
reversal of the middle three cards, ``TV(R_8 sigma R_8) = 0.0190582 > TV(R_64) =
0.0185623``. So no total-variation figure is ever taken from the riffles together except
through separation (``TV <= separation``).

Figures from this module are :class:`~shufflecheck.common.quantity.Quantity` values of kind
``conjectured``. They are never bounds and never certify anything.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313 (the a-shuffle and its separation,
       ``1 - prod_{i<n} (1 - i/a)``).
"""

from __future__ import annotations

import math

from shufflecheck.common.quantity import Quantity, conjectured
from shufflecheck.models.blocks import ProcedureBlocks

__all__ = ["STATEMENT", "conjectured_bounds", "interleaved_separation"]

#: the unproven statement, in one line (method text of every conjectured figure)
STATEMENT = (
    "interleaving conjecture (unproven): steps between ideal riffles never raise the "
    "separation above that of all the riffles taken together"
)


def interleaved_separation(cards: int, packets: int) -> float:
    """``1 - prod_{i<n} (1 - i/A)``: the separation of one ``A``-shuffle of ``cards``
    cards ([1]), in double precision without cancellation (``-expm1(sum log1p(-i/A))``)."""
    if packets <= cards - 1:
        return 1.0
    total = math.fsum(math.log1p(-i / packets) for i in range(1, cards))
    return -math.expm1(total)


def conjectured_bounds(split: ProcedureBlocks, cards: int) -> dict[str, Quantity]:
    """Conjectured upper bounds on separation and total variation of the whole procedure.

    Empty unless at least two groups of ideal riffles are separated by other steps (with
    one group, its exact separation is already a rigorous bound for the whole procedure).
    """
    if split.riffle_groups < 2 or split.whole is not None:
        return {}
    value = interleaved_separation(cards, split.packets)
    if value >= 1.0:
        return {}
    riffles = math.log2(split.packets)
    count = f"{riffles:.0f} riffles" if riffles.is_integer() else f"{split.packets} packets"
    method = f"{STATEMENT}; {count} in all: 1 - prod(1 - i/{split.packets})"
    return {
        "separation": conjectured(value, side="upper", method=method),
        "total_variation": conjectured(value, side="upper", method=f"TV <= separation; {method}"),
    }
