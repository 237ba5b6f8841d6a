"""shufflecheck: audit card shuffling with the mathematics of the symmetric group.

The package answers three questions for people who guard dealt card games:

1. how far from random a dealing procedure leaves a deck (exact where theory allows,
   rigorous bounds or labelled Monte Carlo estimates otherwise);
2. the fewest shuffles that meet a distance target (a policy minimum);
3. whether recorded deck orders show detectable bias (calibrated tests with exact nulls).

Every number carries how it was obtained: ``exact``, ``bound``, ``estimate`` or
``conjectured``.
Results are statistical evidence, not certification; approval of shuffling devices and
dealing rules belongs to the local gaming regulator and accredited test laboratories.
"""

from shufflecheck.common.version import __version__

__all__ = ["__version__"]
