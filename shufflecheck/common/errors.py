"""The one exception type for bad input.

Library functions raise :class:`InputError` (a :class:`ValueError`) with a one-line message
that names what was wrong and, where there is one, the file and row. ``argument`` names the
library argument at fault (``cards``), so the command-line layer can say which option it
was (``--cards``); library messages never name command-line options themselves. The
command-line layer prints the message to stderr and exits with code 2; nothing else in the
package decides exit codes.

A message stays one readable line whatever the input: :func:`clip` shortens a value
quoted from the input (a token of a million characters), and a message longer than
:data:`MAX_MESSAGE` characters keeps its start and end around a note of what was cut.
"""

from __future__ import annotations

import re

EXIT_BAD_INPUT = 2

#: the longest message kept whole (characters); longer ones are cut in the middle
MAX_MESSAGE = 1000


def clip(text: object, width: int = 60) -> str:
    """``text`` (made a one-line ``str``) cut to about ``width`` characters, with the number
    of characters left out: ``'AS 2S 3S ... [5,199,930 more characters] ... QC KC'``."""
    value = text if isinstance(text, str) else str(text)
    if "\n" in value or "\r" in value:
        value = " ".join(value.split())
    if len(value) <= width:
        return value
    head = max(1, width * 2 // 3)
    tail = max(1, width - head)
    cut = len(value) - head - tail
    return f"{value[:head]} ... [{cut:,} more characters] ... {value[-tail:]}"


#: arguments that messages about one row or token may mark (``{separator}``, ``{labels=int}``)
MARKED = ("separator", "labels")


def marked_arguments(text: str, candidates: tuple[str, ...]) -> tuple[str, ...]:
    """The names among ``candidates`` that ``text`` marks as ``{name}`` or ``{name=value}``."""
    return tuple(
        name for name in candidates if "{" + name + "}" in text or "{" + name + "=" in text
    )


def plain_markers(text: str, names: tuple[str, ...]) -> str:
    """``text`` with the markers of ``names`` in their Python form: ``{name}`` -> ``name``,
    ``{name=value}`` -> ``name='value'`` (see :class:`InputError`)."""
    for name in names:
        text = text.replace("{" + name + "}", name)
        text = re.sub(
            r"\{" + re.escape(name) + r"=([^{}]*)\}", lambda m, n=name: f"{n}='{m.group(1)}'", text
        )
    return text


class InputError(ValueError):
    """Bad input: the message is one line, fit to show a user as it is.

    Parameters
    ----------
    message : str
        One line (line breaks are folded into spaces).
    argument : str, tuple of str, or None
        The library argument(s) the message names, by their Python names. Where a name
        could be mistaken for an ordinary word, the message marks the spot as ``{name}``
        (shown as the bare name); otherwise its first appearance is the argument. A value
        to give it is marked ``{name=value}``: shown as ``name='value'`` (Python), and
        on the command line as ``--option value``.
    without_content : str or None
        The same message without the text it quotes from the file that failed to parse
        (e.g. the header of a file that is not a log). Callers reading files on behalf of
        someone else (a policy file naming logs) show this one; default: the message.
    """

    def __init__(
        self,
        message: str,
        *,
        argument: str | tuple[str, ...] | None = None,
        without_content: str | None = None,
    ) -> None:
        if "\n" in message or "\r" in message:
            message = " ".join(part.strip() for part in message.splitlines() if part.strip())
        if len(message) > MAX_MESSAGE:
            message = clip(message, MAX_MESSAGE)
        self.arguments: tuple[str, ...] = (
            () if argument is None else (argument,) if isinstance(argument, str) else argument
        )
        self.template = message
        message = plain_markers(message, self.arguments)
        super().__init__(message)
        self.without_content = message if without_content is None else without_content

    def naming(self, names: dict[str, str]) -> str:
        """The message with each argument written as ``names[argument]`` (an option)."""
        text = self.template
        for argument in self.arguments:
            marker = "{" + argument + "}"
            if argument not in names:
                text = plain_markers(text, (argument,))
                continue
            option = names[argument]
            valued = r"\{" + re.escape(argument) + r"=([^{}]*)\}"
            marked = marker in text or re.search(valued, text) is not None
            text = re.sub(valued, lambda m, o=option: f"{o} {m.group(1)}", text)
            if marked:
                text = text.replace(marker, option)
            else:
                pattern = rf"(?<![\w-]){re.escape(argument)}(?![\w-])"
                text = re.sub(pattern, option, text, count=1)
        return text
