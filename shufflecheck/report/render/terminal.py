"""Plain-text tables for the terminal (no colour codes, readable when piped or printed)."""

from __future__ import annotations

from collections.abc import Sequence

__all__ = ["format_table"]


def format_table(
    headers: Sequence[str],
    rows: Sequence[Sequence[object]],
    *,
    align: str | None = None,
    marks: Sequence[str] | None = None,
) -> str:
    """Render ``rows`` under ``headers`` as an aligned text table.

    ``align`` has one letter per column, ``l`` or ``r`` (default: numbers right, text left).
    ``marks``, when given, is one short string per row shown in a leading column (e.g. ``*``
    beside the first row that meets a target).
    """
    cells = [[str(c) for c in row] for row in rows]
    head = [str(h) for h in headers]
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

    def line(values: Sequence[str]) -> str:
        out = []
        for j, value in enumerate(values):
            out.append(value.rjust(widths[j]) if align[j] == "r" else value.ljust(widths[j]))
        return "  ".join(out).rstrip()

    rule = "  ".join(("-" if h else " ") * w for h, w in zip(head, widths, strict=True))
    return "\n".join([line(head), rule, *(line(row) for row in cells)])


def _numeric(text: str) -> bool:
    stripped = text.strip().rstrip("%").replace("e-", "").replace("e+", "")
    stripped = stripped.lstrip("<>≤≥~±-+").replace(".", "", 1).replace("/", "", 1).replace(",", "")
    return stripped.isdigit() or stripped == ""
