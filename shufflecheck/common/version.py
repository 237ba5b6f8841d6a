"""The installed version of the package (``0.0.0+source`` in a never-installed tree)."""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

__all__ = ["__version__"]

try:
    __version__ = version("shufflecheck")
except PackageNotFoundError:  # running from a source tree that was never installed
    __version__ = "0.0.0+source"
