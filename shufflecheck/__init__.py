"""shufflecheck: audit card shuffling with the mathematics of the symmetric group.

The package answers three questions for people who guard dealt card games:

1. how far from random a dealing procedure leaves a deck (exact where theory allows,
   rigorous bounds or labelled Monte Carlo estimates otherwise);
2. the fewest shuffles that meet a distance target (a policy minimum);
3. whether recorded deck orders show detectable bias (calibrated tests with exact nulls).

Every number carries how it was obtained: ``exact``, ``bound`` or ``estimate``.
Results are statistical evidence, not certification; approval of shuffling devices and
dealing rules belongs to the local gaming regulator and accredited test laboratories.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("shufflecheck")
except PackageNotFoundError:  # running from a source tree that was never installed
    __version__ = "0.0.0+source"

__all__ = ["__version__"]
