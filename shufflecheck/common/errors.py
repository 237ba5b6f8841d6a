"""The one exception type for bad input.

Library functions raise :class:`InputError` (a :class:`ValueError`) with a one-line message
that names what was wrong and, where there is one, the file and row. ``argument`` names the
library argument at fault (``cards``), so the command-line layer can say which option it
was (``--cards``); library messages never name command-line options themselves. The
command-line layer prints the message to stderr and exits with code 2; nothing else in the
package decides exit codes.
"""

from __future__ import annotations

import re

EXIT_BAD_INPUT = 2


class InputError(ValueError):
    """Bad input: the message is one line, fit to show a user as it is.

    Parameters
    ----------
    message : str
        One line (line breaks are folded into spaces).
    argument : str, tuple of str, or None
        The library argument(s) the message names, by their Python names. Where a name
        could be mistaken for an ordinary word, the message marks the spot as ``{name}``
        (shown as the bare name); otherwise its first appearance is the argument.
    """

    def __init__(self, message: str, *, argument: str | tuple[str, ...] | None = None) -> None:
        if "\n" in message:
            message = " ".join(part.strip() for part in message.splitlines() if part.strip())
        self.arguments: tuple[str, ...] = (
            () if argument is None else (argument,) if isinstance(argument, str) else argument
        )
        self.template = message
        for name in self.arguments:
            message = message.replace("{" + name + "}", name)
        super().__init__(message)

    def naming(self, names: dict[str, str]) -> str:
        """The message with each argument written as ``names[argument]`` (an option)."""
        text = self.template
        for argument in self.arguments:
            marker = "{" + argument + "}"
            if argument not in names:
                text = text.replace(marker, argument)
            elif marker in text:
                text = text.replace(marker, names[argument])
            else:
                pattern = rf"(?<![\w-]){re.escape(argument)}(?![\w-])"
                text = re.sub(pattern, names[argument], text, count=1)
        return text
