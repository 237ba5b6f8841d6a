"""Command-line interface: ``shufflecheck COMMAND ...`` (a thin typer layer over the library).

Each command is one short function in its own module; importing the modules registers the
commands on the shared :data:`app`, in the order ``--help`` lists them (the main jobs first).
"""

from __future__ import annotations

import importlib

from shufflecheck.cli._app import app

__all__ = ["app", "main"]

#: command modules, in the order of the help listing
COMMAND_MODULES = (
    "demo",
    "mix",
    "assess",
    "policy",
    "audit",
    "fit_riffle",
    "monitor",
    "track",
    "simulate",
    "characters",
)

for _module in COMMAND_MODULES:
    importlib.import_module(f"shufflecheck.cli.{_module}")


def main() -> None:
    """Entry point of the ``shufflecheck`` console script."""
    app()
