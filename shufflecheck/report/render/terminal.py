"""Plain-text tables and prose for the terminal (no colour codes, readable when piped or
printed), fitted to :data:`WIDTH` columns."""

from __future__ import annotations

import textwrap
from collections.abc import Sequence

__all__ = ["WIDTH", "format_table", "wrap_line"]

#: Widest line the terminal output writes (a single unbreakable token, such as a long file
#: path, may still run past it).
WIDTH = 100

#: The narrowest a wrapped text column becomes (a longer single word keeps its width).
_MIN_COLUMN = 8


def wrap_line(text: str, width: int = WIDTH) -> str:
    """One line of prose wrapped to ``width`` columns, continuation lines indented two more
    spaces than the first (so under a ``- ``/``* `` bullet's text); words are
    never broken, so a single longer token (a file path) stays whole."""
    if len(text) <= width:
        return text
    body = text.lstrip(" ")
    indent = " " * (len(text) - len(body))
    hanging = indent + "  "  # under a "- " or "* " bullet's text; two more spaces otherwise
    return textwrap.fill(
        body,
        width=width,
        initial_indent=indent,
        subsequent_indent=hanging,
        break_long_words=False,
        break_on_hyphens=False,
    )


def _longest_word(text: str) -> int:
    return max((len(w) for w in text.split()), default=0)


def format_table(
    headers: Sequence[str],
    rows: Sequence[Sequence[object]],
    *,
    align: str | None = None,
    marks: Sequence[str] | None = None,
    width: int = WIDTH,
    details: Sequence[str] | None = None,
    details_header: str | None = None,
) -> str:
    """Render ``rows`` under ``headers`` as an aligned text table at most ``width`` wide.

    ``align`` has one letter per column, ``l`` or ``r`` (default: numbers right, text left).
    ``marks``, when given, is one short string per row shown in a leading column (e.g. ``*``
    beside the first row that meets a target). When the table is wider than ``width``, the
    widest text (left-aligned) columns are wrapped at spaces onto further lines, headers
    too, down to their longest word; rows are then separated by blank lines so each reads
    as one. Every column has a header (an empty one is refused).

    ``details``, when given, is one longer text per row (an explanation in words), printed
    on its own indented lines under the row, wrapped to ``width``; ``details_header`` names
    it under the column headers.
    """
    cells = [[str(c) for c in row] for row in rows]
    head = [str(h) for h in headers]
    if any(not h.strip() for h in head):
        raise ValueError("format_table: every column needs a header")
    if marks is not None:
        head = ["", *head]
        cells = [[m, *row] for m, row in zip(marks, cells, strict=True)]
        if align is not None:
            align = "l" + align
    widths = [len(h) for h in head]
    for row in cells:
        for j, cell in enumerate(row):
            widths[j] = max(widths[j], len(cell))
    if align is None:
        align = "".join(
            "r" if rows and all(_numeric(row[j]) for row in cells) else "l"
            for j in range(len(head))
        )
    # the least each text column can shrink to: its longest word (header or cell)
    floors = [
        max(
            min(w, _MIN_COLUMN),
            _longest_word(head[j]),
            *(_longest_word(row[j]) for row in cells),
        )
        if align[j] == "l"
        else w
        for j, w in enumerate(widths)
    ]
    gaps = 2 * (len(head) - 1)
    while sum(widths) + gaps > width:
        shrinkable = [j for j in range(len(head)) if widths[j] > floors[j]]
        if not shrinkable:
            break
        j = max(shrinkable, key=lambda k: (widths[k], -k))
        widths[j] -= 1

    def wrapped(text: str, j: int) -> list[str]:
        if len(text) <= widths[j]:
            return [text]
        return textwrap.wrap(text, widths[j], break_long_words=False, break_on_hyphens=False) or [
            ""
        ]

    def lines(values: Sequence[str]) -> list[str]:
        parts = [wrapped(v, j) for j, v in enumerate(values)]
        out = []
        for k in range(max(len(p) for p in parts)):
            pieces = []
            for j, p in enumerate(parts):
                value = p[k] if k < len(p) else ""
                pieces.append(value.rjust(widths[j]) if align[j] == "r" else value.ljust(widths[j]))
            out.append("  ".join(pieces).rstrip())
        return out

    rule = "  ".join(("-" if h else " ") * w for h, w in zip(head, widths, strict=True))
    body = [lines(row) for row in cells]
    if details is not None:
        for block, text in zip(body, details, strict=True):
            if text:
                block.extend(_indented(str(text), width))
    spaced = any(len(b) > 1 for b in body)
    out = [*lines(head)]
    if details is not None and details_header:
        out.extend(_indented(details_header, width))
    out.append(rule.rstrip())
    for k, block in enumerate(body):
        if spaced and k:
            out.append("")
        out.extend(block)
    return "\n".join(out)


def _indented(text: str, width: int) -> list[str]:
    return textwrap.wrap(
        text,
        width,
        initial_indent="    ",
        subsequent_indent="    ",
        break_long_words=False,
        break_on_hyphens=False,
    )


def _numeric(text: str) -> bool:
    stripped = text.strip().rstrip("%").replace("e-", "").replace("e+", "")
    stripped = stripped.lstrip("<>≤≥~±-+").replace(".", "", 1).replace("/", "", 1).replace(",", "")
    return stripped.isdigit() or stripped == ""
