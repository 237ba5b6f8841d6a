"""Render a :class:`~shufflecheck.report.document.Report` as GitHub-flavoured Markdown.

The layout follows the document: title, the question and the answer up front, the sections
(tables as GFM pipe tables, figures linked as ``figures/<name>.png``), then methods with
numbered references, the reproducibility block, the cautions and the sign-off lines.

Text is escaped so that no character in it can start Markdown or HTML markup; the output is
a pure function of the report (render twice, get the same text).
"""

from __future__ import annotations

import re

from shufflecheck.common.quantity import LABEL_MEANINGS
from shufflecheck.report.document import Report, Table

__all__ = ["code", "escape_block", "escape_inline", "render_markdown"]

# ASCII punctuation that can start inline markup somewhere (CommonMark allows a backslash
# before any ASCII punctuation, so escaping these is always safe).
_INLINE = re.compile(r"([\\`*_\[\]<>|#~&!])")
# Line starts that would make a list, a quote, a heading underline or an ordered list.
_LINE_START = re.compile(r"^(\s*)([-+=]|\d+(?=[.)]))")


def escape_block(text: str) -> str:
    """Escape text that starts a block (a paragraph, a list item's content).

    Each line is stripped of leading spaces (which would make code) and a line start that
    would open a list, a quote or a heading underline is escaped too.
    """
    lines = []
    for line in text.splitlines() or [""]:
        line = _INLINE.sub(r"\\\1", line.strip())
        line = _LINE_START.sub(lambda m: m.group(1) + _escape_start(m.group(2)), line)
        lines.append(line)
    return "\n".join(lines)


def _escape_start(token: str) -> str:
    if token.isdigit():  # "12." -> "12\." keeps the number, breaks the list marker
        return token + "\\"
    return "\\" + token


def escape_inline(text: str) -> str:
    """Escape text shown within a line (after a marker, in a table cell): one line, no markup.

    Whitespace runs (newlines included) become one space, so the text cannot start a block;
    a negative number keeps its plain ``-``.
    """
    return _INLINE.sub(r"\\\1", " ".join(text.split()))


def code(text: str) -> str:
    """An inline code span holding ``text`` verbatim (pipes escaped for tables)."""
    text = " ".join(text.split())
    runs = [len(r) for r in re.findall(r"`+", text)]
    fence = "`" * (max(runs, default=0) + 1)
    pad = " " if text.startswith("`") or text.endswith("`") or not text else ""
    return f"{fence}{pad}{text}{pad}{fence}".replace("|", "\\|")


def _table(headers: list[str], rows: list[list[str]], right: list[bool]) -> list[str]:
    rule = ["---:" if r else ":---" for r in right]
    lines = ["| " + " | ".join(headers) + " |", "| " + " | ".join(rule) + " |"]
    lines += ["| " + " | ".join(row) + " |" for row in rows]
    return lines


def _report_table(number: int, table: Table) -> list[str]:
    columns = range(len(table.headers))
    right = [table.is_numeric_column(j) for j in columns]
    headers = [escape_inline(table.header_text(j)) for j in columns]
    rows = []
    for i in range(len(table.rows)):
        cells = [escape_inline(table.cell_text(i, j)) for j in columns]
        if i in table.marked_rows:
            cells = [f"**{c}**" if c else c for c in cells]
        rows.append(cells)
    out = [f"**Table {number}.** {escape_inline(table.caption)}", ""]
    out += _table(headers, rows, right)
    notes = []
    if table.marked_rows:
        notes.append(f"Rows in bold: {escape_inline(table.mark_note)}")
    notes += [escape_inline(note) for note in table.notes]
    if notes:
        out.append("")
        last = len(notes) - 1
        out += [f"*{note}*  " if k < last else f"*{note}*" for k, note in enumerate(notes)]
    return out


def render_markdown(report: Report) -> str:
    """The report as GitHub-flavoured Markdown (``report.md``), ending with a newline."""
    prov = report.reproducibility
    out: list[str] = [f"# {escape_inline(report.title)}", ""]
    out += [
        f"*Created {prov.created_utc} (UTC) with shufflecheck {escape_inline(prov.tool_version)}.*"
    ]
    out += ["", f"**Question.** {escape_inline(report.question)}", "", "**Answer.**", ""]
    out += [f"- {escape_block(a)}" for a in report.answer]
    out += [
        "",
        "> **Statistical evidence, not a certification.** Read the cautions at the end. Every "
        "number says how it was obtained: *exact*, *bound* or *estimate*.",
    ]

    tables = {id(t): n for n, _, t in report.numbered_tables()}
    figures = {id(f): n for n, _, f in report.numbered_figures()}
    for k, section in enumerate(report.sections, start=1):
        out += ["", f"## {k}. {escape_inline(section.title)}"]
        for paragraph in section.paragraphs:
            out += ["", escape_block(paragraph)]
        for table in section.tables:
            out += ["", *_report_table(tables[id(table)], table)]
        for figure in section.figures:
            out += ["", f"![{escape_inline(figure.alt_text)}]({figure.file})", ""]
            out.append(f"*Figure {figures[id(figure)]}.* {escape_inline(figure.caption)}")

    out += ["", "## Methods and sources", "", "How to read the labels:", ""]
    out += [f"- **{label}**: {escape_inline(meaning)}" for label, meaning in LABEL_MEANINGS.items()]
    if report.methods:
        rows = []
        for note in report.methods:
            refs = ", ".join(f"\\[{n}\\]" for n in report.reference_numbers(note))
            rows.append([escape_inline(note.quantity), note.kind, escape_inline(note.method), refs])
        out += [""]
        out += _table(["Quantity", "How obtained", "Method", "Sources"], rows, [False] * 4)
        out += ["", "### References", ""]
        out += [f"{n}. {escape_inline(ref)}" for n, ref in enumerate(report.references, start=1)]
    else:
        out += ["", "No numerical method was used in this report."]

    out += ["", "## Reproducibility", ""]
    out.append(f"- Tool: shufflecheck {escape_inline(prov.tool_version)}")
    out.append(f"- Command: {code(prov.command)}")
    if prov.seeds:
        seeds = "; ".join(
            f"{escape_inline(name)} = "
            + (str(seed) if seed is not None else "none (fresh entropy, not reproducible)")
            for name, seed in prov.seeds
        )
        out.append(f"- Seeds: {seeds}")
    else:
        out.append("- Seeds: none (no random draws)")
    out.append(f"- Created (UTC): {prov.created_utc}")
    versions = "; ".join(
        [f"Python {prov.python_version}"] + [f"{name} {ver}" for name, ver in prov.library_versions]
    )
    out.append(f"- Software: {escape_inline(versions)}")
    out.append(f"- Platform: {escape_inline(prov.platform)}")
    if prov.inputs:
        out += ["", "Input files (SHA-256 of their bytes as read):", ""]
        rows = [[code(f.path), code(f.sha256)] for f in prov.inputs]
        out += _table(["File", "SHA-256"], rows, [False, False])
    else:
        out.append("- Input files: none")

    out += ["", "## Cautions", ""]
    out += [f"- {escape_block(c)}" for c in report.all_cautions]

    if report.sign_off:
        out += ["", "## Sign-off", ""]
        rows = [[escape_inline(role), "", "", ""] for role in report.sign_off]
        out += _table(["Role", "Name", "Signature", "Date"], rows, [False] * 4)
    return "\n".join(out) + "\n"
