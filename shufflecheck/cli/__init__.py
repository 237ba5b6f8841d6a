"""Command-line interface: ``shufflecheck COMMAND ...`` (a thin typer layer over the library).

Each command is one short function in its own module; importing them here registers them on
the shared :data:`app`.
"""

from __future__ import annotations

from shufflecheck.cli import assess as _assess  # noqa: F401
from shufflecheck.cli import audit as _audit  # noqa: F401
from shufflecheck.cli import characters as _characters  # noqa: F401  (registers commands)
from shufflecheck.cli import demo as _demo  # noqa: F401
from shufflecheck.cli import mix as _mix  # noqa: F401
from shufflecheck.cli import policy as _policy  # noqa: F401
from shufflecheck.cli import simulate as _simulate  # noqa: F401
from shufflecheck.cli._app import app

__all__ = ["app", "main"]


def main() -> None:
    """Entry point of the ``shufflecheck`` console script."""
    app()
