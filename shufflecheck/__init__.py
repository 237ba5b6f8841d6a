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

from pathlib import Path
from typing import TYPE_CHECKING

__all__ = ["__version__", "api", "assess", "audit", "mix", "policy", "power"]

if TYPE_CHECKING:  # the API is imported on first use, so `shufflecheck --help` stays quick
    from shufflecheck import api
    from shufflecheck.api import assess, audit, mix, policy, power
    from shufflecheck.common.version import __version__


_HERE = Path(__file__).parent


def __getattr__(name: str) -> object:
    """The version, the Python API and the layer packages (``shufflecheck.stats``, ...),
    imported on first use (:pep:`562`; the version's metadata lookup alone takes about
    0.1 s)."""
    import importlib

    if name == "__version__":
        value = importlib.import_module("shufflecheck.common.version").__version__
    elif name in ("assess", "audit", "mix", "policy", "power"):
        value = getattr(importlib.import_module("shufflecheck.api"), name)
    elif not name.startswith("_") and ((_HERE / name).is_dir() or (_HERE / f"{name}.py").is_file()):
        value = importlib.import_module(f"shufflecheck.{name}")
    else:
        raise AttributeError(f"module 'shufflecheck' has no attribute {name!r}")
    globals()[name] = value
    return value
