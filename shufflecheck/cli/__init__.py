"""Command-line interface: ``shufflecheck COMMAND ...`` (a thin typer layer over the library).

Each command is one short function in its own module; importing the modules registers the
commands on the shared :data:`app`, in the order ``--help`` lists them (the main jobs first).
"""

from __future__ import annotations

import importlib
import sys

from shufflecheck.cli._app import app, quiet_stdout, use_plain_help

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
use_plain_help(app)


def main() -> None:
    """Entry point of the ``shufflecheck`` console script.

    Output still buffered when the command ends is flushed here: if its reader has gone
    (``shufflecheck mix riffle | head -1``), that is a normal end (exit code 0, no message).
    """
    code: int | str | None = 0
    try:
        app()
    except SystemExit as exc:
        code = exc.code
    except BrokenPipeError:
        code = 0
    try:
        sys.stdout.flush()
    except BrokenPipeError:
        quiet_stdout()
    except (OSError, ValueError):
        pass
    sys.exit(code)
