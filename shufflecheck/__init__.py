"""shufflecheck: audit card shuffling with the mathematics of the symmetric group.

The package answers three questions for people who guard dealt card games:

1. how far from random a dealing procedure leaves a deck (exact where theory allows,
   rigorous bounds or labelled Monte Carlo estimates otherwise);
2. the fewest shuffles that meet a distance target (a policy minimum);
3. whether recorded deck orders show detectable bias (calibrated tests with exact nulls).

Every number carries how it was obtained: ``exact``, ``bound``, ``estimate`` or
``conjectured``.

The Python API (:mod:`shufflecheck.api`): ``shufflecheck.audit(decks, reference=...,
by=..., alpha=...)`` takes a numpy array of decks, a pandas DataFrame or a path;
``mix``, ``assess``, ``power`` and ``policy`` answer the other jobs. Results are the
frozen objects the command line prints, with ``.to_dict()`` and ``.to_frame()``.
Results are statistical evidence, not certification; approval of shuffling devices and
dealing rules belongs to the local gaming regulator and accredited test laboratories.
"""

import sys
import types

from shufflecheck import api
from shufflecheck.api import assess, audit, mix, policy, power
from shufflecheck.common.version import __version__

__all__ = ["__version__", "api", "assess", "audit", "mix", "policy", "power"]


class AuditLayer(types.ModuleType):
    """The ``shufflecheck.audit`` layer package, which is also callable as
    :func:`shufflecheck.api.audit`.

    The package's attribute ``audit`` is the API function until the layer package
    :mod:`shufflecheck.audit` is first imported, when Python binds the package there; the
    package is then given this class, so ``shufflecheck.audit(decks, ...)`` keeps working
    and ``shufflecheck.audit.BatterySummary`` (the layer) too.
    """

    def __call__(self, *args, **kwargs):
        return api.audit(*args, **kwargs)


class _Package(types.ModuleType):
    def __setattr__(self, name: str, value: object) -> None:
        if name == "audit" and isinstance(value, types.ModuleType):
            value.__class__ = AuditLayer
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
if "shufflecheck.audit" in sys.modules:  # imported while this package was loading
    audit = sys.modules["shufflecheck.audit"]  # type: ignore[assignment]
