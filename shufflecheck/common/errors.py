"""The one exception type for bad input.

Library functions raise :class:`InputError` (a :class:`ValueError`) with a one-line message
that names what was wrong and, where there is one, the file and row. The command-line layer
prints the message to stderr and exits with code 2; nothing else in the package decides exit
codes.
"""

from __future__ import annotations

EXIT_BAD_INPUT = 2


class InputError(ValueError):
    """Bad input: the message is one line, fit to show a user as it is."""

    def __init__(self, message: str) -> None:
        if "\n" in message:
            message = " ".join(part.strip() for part in message.splitlines() if part.strip())
        super().__init__(message)
