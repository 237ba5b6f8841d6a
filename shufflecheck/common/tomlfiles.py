"""Reading TOML input files with errors that name the file, the line and the key.

``tomllib`` reports syntax errors with a line and column but keeps no positions for valid
documents, so :class:`TomlFile` keeps the text and finds the line where a key is set (the
first ``key =`` line inside the right ``[table]`` or ``[[array]]`` entry) for the errors it
raises about content: unknown keys, wrong types, values out of range.
"""

from __future__ import annotations

import re
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from shufflecheck.common.errors import InputError, clip

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

__all__ = ["MAX_DEPTH", "TomlFile", "load_toml", "parse_toml"]

_TABLE = re.compile(r"^\s*\[\[?\s*([^\]]+?)\s*\]\]?\s*(#.*)?$")


@dataclass(frozen=True)
class TomlFile:
    """A parsed TOML document with its path and text, for located error messages."""

    path: Path
    text: str
    data: dict[str, Any]

    def line_of(self, key: str | None, table: str | None = None, index: int = 0) -> int | None:
        """1-based line where ``key`` is set inside the ``index``-th ``[table]`` (or
        ``[[table]]``) section, or at top level when ``table`` is None. With ``key=None``,
        the line of that section's header. None when it cannot be found."""
        current: str | None = None
        occurrence: dict[str, int] = {}
        pattern = re.compile(rf"^\s*(\"{re.escape(key)}\"|{re.escape(key)})\s*=") if key else None
        for number, line in enumerate(self.text.splitlines(), start=1):
            header = _TABLE.match(line)
            if header:
                current = header.group(1)
                occurrence[current] = occurrence.get(current, -1) + 1
                if key is None and current == table and occurrence[current] == index:
                    return number
                continue
            in_section = current == table and (table is None or occurrence[table] == index)
            if pattern is not None and in_section and pattern.match(line):
                return number
        return None

    def error(
        self,
        message: str,
        key: str | None = None,
        table: str | None = None,
        index: int = 0,
        *,
        argument: str | tuple[str, ...] | None = None,
    ) -> InputError:
        """An :class:`InputError` ``file line N: key 'k': message`` (line of the key, or of
        its section when the key is missing); ``argument`` as for InputError."""
        where = str(self.path)
        if key is None and table is None:
            return InputError(f"{where}: {message}", argument=argument)
        line = self.line_of(key, table, index) if key else None
        if line is None and table is not None:
            line = self.line_of(None, table, index)
        where += f" line {line}" if line is not None else ""
        dotted = ".".join(part for part in (table, key) if part)
        return InputError(f"{where}: key '{dotted}': {message}", argument=argument)


def load_toml(path: str | Path) -> TomlFile:
    """Read and parse a TOML file (read-only), raising :class:`InputError` with the position
    of a syntax error."""
    file = Path(path)
    try:
        text = file.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"{file}: no such file") from None
    except UnicodeDecodeError as exc:
        raise InputError(f"{file}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
    except OSError as exc:
        raise InputError(f"{file}: cannot read ({exc.strerror})") from None
    if not text.strip():
        raise InputError(f"{file}: the file is empty")
    return TomlFile(file, text, parse_toml(text, str(file)))


#: deepest nesting of arrays and inline tables accepted in an input TOML file
MAX_DEPTH = 32


def parse_toml(text: str, where: str) -> dict[str, Any]:
    """Parse TOML text, raising :class:`InputError` (with the position of a syntax error).

    Nesting deeper than :data:`MAX_DEPTH` arrays or inline tables is refused before parsing
    (no input of this tool nests more than a few levels; the parser would recurse).
    """
    depth = _nesting(text)
    if depth > MAX_DEPTH:
        raise InputError(
            f"{where}: arrays or tables nested {depth} deep; at most {MAX_DEPTH} levels are read"
        )
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{where}: invalid TOML: {clip(str(exc), 200)}") from None
    except RecursionError:  # guarded by the nesting check; kept as a second line
        raise InputError(f"{where}: invalid TOML: nested too deeply") from None


def _nesting(text: str) -> int:
    """Deepest nesting of ``[``/``{`` outside strings and comments (an upper bound is
    enough: table headers count one level)."""
    if text.count("[") + text.count("{") <= MAX_DEPTH:
        return 0
    depth = deepest = 0
    quote = ""
    comment = False
    i = 0
    while i < len(text):
        ch = text[i]
        if comment:
            comment = ch != "\n"
        elif quote:
            if ch == "\\" and quote in ('"', '"""'):
                i += 1
            elif text.startswith(quote, i):
                i += len(quote) - 1
                quote = ""
        elif ch == "#":
            comment = True
        elif text.startswith('"""', i) or text.startswith("'''", i):
            quote = text[i : i + 3]
            i += 2
        elif ch in "\"'":
            quote = ch
        elif ch in "[{":
            depth += 1
            deepest = max(deepest, depth)
        elif ch in "]}":
            depth = max(0, depth - 1)
        i += 1
    return deepest
