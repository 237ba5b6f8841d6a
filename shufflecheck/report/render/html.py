"""Render a :class:`~shufflecheck.report.document.Report` as one self-contained HTML5 file.

Everything the page needs is inside it: the stylesheet is inline, figures are embedded as
``data:image/png;base64`` URIs, and the page refers to nothing on a network (no fonts,
scripts, stylesheets or links; the only links are to anchors within the page). It reads on
screen and in print: the print stylesheet drops backgrounds and the contents list, starts
the methods on a new page, keeps tables, figures and the sign-off lines in one piece where
they fit and repeats table headers on each page.

All text is escaped. Labels are shown as small boxes whose border style differs as well as
their wording (solid = exact, dashed = bound, dotted = estimate), matching the line styles of
the figures, so they survive grey printing. The output is a pure function of the report.
"""

from __future__ import annotations

import base64
import re
from html import escape as _escape

from shufflecheck.common.quantity import LABEL_MEANINGS, Quantity
from shufflecheck.report.document import Figure, Report, Table

__all__ = ["STYLESHEET", "WIDE_COLUMNS", "render_html"]

#: Tables with this many columns or more are set in a smaller type with tighter cells.
WIDE_COLUMNS = 6

#: Our own stylesheet (inline in every report). No url(), no imports, no web fonts.
STYLESHEET = """
:root {
  --ink: #1b1f24; --muted: #555b62; --rule: #c8ccd0; --paper: #fcfcfa;
  --panel: #eef2f5; --accent: #0072b2; --mark: #d55e00;
  --serif: Charter, "Bitstream Charter", "Sitka Text", Cambria, Georgia, serif;
  --sans: "Segoe UI", "Helvetica Neue", Helvetica, Arial, "Liberation Sans", sans-serif;
  --mono: ui-monospace, "SF Mono", Menlo, Consolas, "DejaVu Sans Mono", monospace;
}
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; background: var(--paper); color: var(--ink);
  font: 1rem/1.55 var(--serif); }
main { max-width: 56rem; margin: 0 auto; padding: 2.5rem 1.4rem 4rem; }
h1, h2, h3, caption, thead th, .how, .kicker, figcaption b { font-family: var(--sans); }
h1 { font-size: 1.85rem; line-height: 1.2; margin: 0.2rem 0 0.4rem; }
h2 { font-size: 1.3rem; line-height: 1.3; margin: 2.6rem 0 0.8rem;
  padding-bottom: 0.25rem; border-bottom: 2px solid var(--ink); }
h3 { font-size: 1.05rem; margin: 1.6rem 0 0.5rem; }
p { margin: 0.6rem 0; }
.kicker { margin: 0; text-transform: uppercase; letter-spacing: 0.12em;
  font-size: 0.78rem; color: var(--muted); }
.meta { margin: 0 0 1.5rem; color: var(--muted); font-size: 0.92rem; }
.lead { border: 1px solid var(--rule); border-left: 0.45rem solid var(--accent);
  background: var(--panel); padding: 0.9rem 1.3rem 1rem; margin: 1.2rem 0; }
.lead h2 { border: 0; margin: 0.6rem 0 0.2rem; padding: 0; font-size: 0.8rem;
  text-transform: uppercase; letter-spacing: 0.1em; color: var(--muted); }
.lead h2:first-child { margin-top: 0; }
.question { font-size: 1.1rem; margin-top: 0.1rem; }
.answer { margin: 0.3rem 0 0.2rem; padding-left: 1.3rem; }
.answer li { margin: 0.3rem 0; font-size: 1.06rem; }
.answer li:first-child { font-weight: 700; }
.notice { font-size: 0.92rem; color: var(--muted); border-top: 1px solid var(--rule);
  border-bottom: 1px solid var(--rule); padding: 0.5rem 0; }
.toc ol { margin: 0; padding-left: 0; list-style: none; columns: 2 16rem; }
.toc li { margin: 0.1rem 0; padding-left: 1.6rem; text-indent: -1.6rem; break-inside: avoid; }
.toc h2 { font-size: 1rem; border-bottom-width: 1px; }
a { color: var(--accent); }
.how { display: inline-block; margin-left: 0.3em; padding: 0 0.35em; border: 1px solid;
  border-radius: 0.2em; font-size: 0.68rem; font-weight: 600; line-height: 1.45;
  letter-spacing: 0.05em; text-transform: uppercase; vertical-align: 0.1em;
  white-space: nowrap; color: var(--ink); }
.how-exact { border-style: solid; }
.how-bound { border-style: dashed; }
.how-estimate { border-style: dotted; border-width: 2px; }
.how-conjectured { border-style: double; border-width: 3px; }
.table-block { margin: 1.1rem 0 1.6rem; overflow-x: auto; }
table { border-collapse: collapse; width: 100%; font-size: 0.92rem; }
table.wide { font-size: 0.8rem; }
table.wide th, table.wide td { padding: 0.28rem 0.4rem; }
caption { caption-side: top; text-align: left; font-weight: 600; padding: 0 0 0.45rem;
  font-size: 0.92rem; }
th, td { text-align: left; vertical-align: top; padding: 0.32rem 0.6rem;
  border-bottom: 1px solid var(--rule); }
thead th { border-bottom: 2px solid var(--ink); font-size: 0.84rem; font-weight: 600; }
table.wide thead th { font-size: 0.76rem; }
.num { text-align: right; font-variant-numeric: tabular-nums lining-nums; }
td.num { white-space: nowrap; }
th .how { white-space: normal; margin-left: 0; }
td.est { white-space: normal; min-width: 9rem; }
tr.marked td { font-weight: 700; background: #fff3e8; }
tr.marked td:first-child { box-shadow: inset 0.3rem 0 0 var(--mark); }
tr.marked td:first-child::before { content: "\\25B6\\00A0"; color: var(--mark); }
.table-note { margin: 0.35rem 0 0; font-size: 0.86rem; color: var(--muted); }
figure { margin: 1.6rem 0; }
figure img { display: block; max-width: 100%; height: auto; background: #fff;
  border: 1px solid var(--rule); }
figcaption { margin-top: 0.45rem; font-size: 0.9rem; color: var(--muted); }
.labels { display: grid; grid-template-columns: max-content 1fr; gap: 0.3rem 0.9rem;
  margin: 0.6rem 0 1.2rem; }
.labels dt { margin: 0; }
.labels dd { margin: 0; }
.refs li { margin: 0.3rem 0; }
.repro { display: grid; grid-template-columns: max-content 1fr; gap: 0.3rem 1rem;
  margin: 0.6rem 0 1rem; }
.repro dt { font-weight: 600; }
.repro dd { margin: 0; min-width: 0; }
code { font-family: var(--mono); font-size: 0.85em; overflow-wrap: anywhere; }
.cautions { border: 2px solid var(--ink); padding: 0.2rem 1.2rem 0.6rem; margin-top: 2.6rem; }
.cautions h2 { border: 0; margin-top: 0.8rem; }
.signoff td { height: 2.6rem; }
.signoff td:first-child { width: 24%; font-weight: 600; }
@page { size: A4; margin: 16mm 15mm 18mm; }
@media print {
  body { background: none; color: #000; font-size: 10.5pt; line-height: 1.4; }
  main { max-width: none; margin: 0; padding: 0; }
  .lead, tr.marked td, figure img { background: none; }
  .lead { border-left-width: 3pt; }
  .toc { display: none; }
  a { color: inherit; text-decoration: none; }
  h1, h2, h3, caption { break-after: avoid; page-break-after: avoid; }
  .back-matter { break-before: page; page-break-before: always; }
  .table-block { overflow: visible; }
  table, figure, .lead, .cautions, .signoff, .repro, .labels {
    break-inside: avoid; page-break-inside: avoid; }
  tr, td, th { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  p, li { orphans: 3; widows: 3; }
}
"""


# Characters HTML5 does not allow in a document (C0/C1 controls other than whitespace, lone
# surrogates); shown as U+FFFD instead.
_NOT_ALLOWED = re.compile("[\x00-\x08\x0b\x0e-\x1f\x7f-\x9f\ud800-\udfff]")


def _e(text: str) -> str:
    return _escape(_NOT_ALLOWED.sub("\ufffd", text), quote=True)


def _badge(label_text: str) -> str:
    """The label in a box whose border style says the kind (as the figures' line styles)."""
    kind = next(k for k in ("conjectured", "bound", "estimate", "exact") if k in label_text)
    return f'<span class="how how-{kind}">{_e(label_text)}</span>'


def _cell(table: Table, i: int, j: int) -> str:
    cell = table.rows[i][j]
    if cell is None:
        return "<td></td>"
    if isinstance(cell, str):
        return f"<td>{_e(cell)}</td>"
    assert isinstance(cell, Quantity)
    classes = "num est" if cell.kind == "estimate" else "num"
    text = _e(cell.number_text())
    if table.column_label(j) is None:
        text += " " + _badge(cell.label_text)
    return f'<td class="{classes}">{text}</td>'


def _table(number: int, table: Table) -> list[str]:
    columns = range(len(table.headers))
    head = []
    for j in columns:
        cls = ' class="num"' if table.is_numeric_column(j) else ""
        label = table.column_label(j)
        badge = " " + _badge(label) if label is not None else ""
        head.append(f'<th scope="col"{cls}>{_e(table.headers[j])}{badge}</th>')
    # many columns: a smaller type and tighter cells, so the table fits the page's width
    wide = ' class="wide"' if len(table.headers) >= WIDE_COLUMNS else ""
    out = [
        '<div class="table-block">',
        f'<table id="table-{number}"{wide}>',
        f"<caption>Table {number}. {_e(table.caption)}</caption>",
        "<thead><tr>" + "".join(head) + "</tr></thead>",
        "<tbody>",
    ]
    for i in range(len(table.rows)):
        marked = ' class="marked"' if i in table.marked_rows else ""
        out.append(f"<tr{marked}>" + "".join(_cell(table, i, j) for j in columns) + "</tr>")
    out += ["</tbody>", "</table>"]
    if table.marked_rows:
        out.append(f'<p class="table-note">&#9654; Rows marked: {_e(table.mark_note)}</p>')
    out += [f'<p class="table-note">{_e(note)}</p>' for note in table.notes]
    out.append("</div>")
    return out


def _figure(number: int, figure: Figure) -> list[str]:
    width, height = figure.size
    data = base64.b64encode(figure.png).decode("ascii")
    return [
        f'<figure id="figure-{number}">',
        f'<img src="data:image/png;base64,{data}" width="{width}" height="{height}" '
        f'alt="{_e(figure.alt_text)}">',
        f"<figcaption><b>Figure {number}.</b> {_e(figure.caption)}</figcaption>",
        "</figure>",
    ]


def render_html(report: Report) -> str:
    """The report as one self-contained HTML5 document (``report.html``)."""
    prov = report.reproducibility
    out = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f'<meta name="generator" content="shufflecheck {_e(prov.tool_version)}">',
        f"<title>{_e(report.title)}</title>",
        f"<style>{STYLESHEET}</style>",
        "</head>",
        "<body>",
        "<main>",
        "<header>",
        '<p class="kicker">Report</p>',
        f"<h1>{_e(report.title)}</h1>",
        f'<p class="meta">Created {_e(prov.created_utc)} (UTC) with shufflecheck '
        f"{_e(prov.tool_version)}</p>",
        "</header>",
        '<section class="lead" aria-label="Question and answer">',
        '<h2 id="question">Question</h2>',
        f'<p class="question">{_e(report.question)}</p>',
        '<h2 id="answer">Answer</h2>',
        '<ul class="answer">',
        *(f"<li>{_e(a)}</li>" for a in report.answer),
        "</ul>",
        "</section>",
        '<p class="notice"><strong>Statistical evidence, not a certification.</strong> '
        'Read the <a href="#cautions">cautions</a>. Every number says how it was obtained: '
        f"{_badge('exact')}, {_badge('bound')} or {_badge('estimate')} "
        '(see <a href="#methods">Methods and sources</a>).</p>',
    ]

    entries = [(f"section-{k}", f"{k}. {s.title}") for k, s in enumerate(report.sections, 1)]
    entries += [
        ("methods", "Methods and sources"),
        ("reproducibility", "Reproducibility"),
        ("cautions", "Cautions"),
    ]
    if report.sign_off:
        entries.append(("sign-off", "Sign-off"))
    out += ['<nav class="toc" aria-label="Contents">', "<h2>Contents</h2>", "<ol>"]
    out += [f'<li><a href="#{anchor}">{_e(title)}</a></li>' for anchor, title in entries]
    out += ["</ol>", "</nav>"]

    tables = {id(t): n for n, _, t in report.numbered_tables()}
    figures = {id(f): n for n, _, f in report.numbered_figures()}
    for k, section in enumerate(report.sections, start=1):
        out += [f'<section id="section-{k}">', f"<h2>{k}. {_e(section.title)}</h2>"]
        out += [f"<p>{_e(p)}</p>" for p in section.paragraphs]
        for table in section.tables:
            out += _table(tables[id(table)], table)
        for figure in section.figures:
            out += _figure(figures[id(figure)], figure)
        out.append("</section>")

    out += ['<section id="methods" class="back-matter">', "<h2>Methods and sources</h2>"]
    out += ["<p>How to read the labels:</p>", '<dl class="labels">']
    for label, meaning in LABEL_MEANINGS.items():
        out += [f"<dt>{_badge(label)}</dt>", f"<dd>{_e(meaning)}</dd>"]
    out.append("</dl>")
    if report.methods:
        out += [
            '<div class="table-block">',
            "<table>",
            "<caption>Methods behind the numbers</caption>",
            '<thead><tr><th scope="col">Quantity</th><th scope="col">How obtained</th>'
            '<th scope="col">Method</th><th scope="col">Sources</th></tr></thead>',
            "<tbody>",
        ]
        for note in report.methods:
            refs = ", ".join(
                f'<a href="#ref-{n}">[{n}]</a>' for n in report.reference_numbers(note)
            )
            out.append(
                f"<tr><td>{_e(note.quantity)}</td><td>{_badge(note.kind)}</td>"
                f"<td>{_e(note.method)}</td><td>{refs}</td></tr>"
            )
        out += ["</tbody>", "</table>", "</div>", '<h3 id="references">References</h3>']
        out.append('<ol class="refs">')
        out += [f'<li id="ref-{n}">{_e(ref)}</li>' for n, ref in enumerate(report.references, 1)]
        out.append("</ol>")
    else:
        out.append("<p>No numerical method was used in this report.</p>")
    out.append("</section>")

    out += ['<section id="reproducibility">', "<h2>Reproducibility</h2>", '<dl class="repro">']
    out += [f"<dt>Tool</dt><dd>shufflecheck {_e(prov.tool_version)}</dd>"]
    out += [f"<dt>Command</dt><dd><code>{_e(prov.command)}</code></dd>"]
    if prov.seeds:
        seeds = "; ".join(
            f"{_e(name)} = "
            + (
                f"<code>{seed}</code>"
                if seed is not None
                else "none (fresh entropy, not reproducible)"
            )
            for name, seed in prov.seeds
        )
    else:
        seeds = "none (no random draws)"
    out += [f"<dt>Seeds</dt><dd>{seeds}</dd>"]
    out += [f"<dt>Created (UTC)</dt><dd>{_e(prov.created_utc)}</dd>"]
    versions = "; ".join(
        [f"Python {prov.python_version}"] + [f"{name} {ver}" for name, ver in prov.library_versions]
    )
    out += [f"<dt>Software</dt><dd>{_e(versions)}</dd>"]
    out += [f"<dt>Platform</dt><dd>{_e(prov.platform)}</dd>"]
    if not prov.inputs:
        out += ["<dt>Input files</dt><dd>none</dd>"]
    out.append("</dl>")
    if prov.inputs:
        out += [
            '<div class="table-block">',
            "<table>",
            "<caption>Input files (SHA-256 of their bytes as read)</caption>",
            '<thead><tr><th scope="col">File</th><th scope="col">SHA-256</th></tr></thead>',
            "<tbody>",
        ]
        out += [
            f"<tr><td><code>{_e(f.path)}</code></td><td><code>{f.sha256}</code></td></tr>"
            for f in prov.inputs
        ]
        out += ["</tbody>", "</table>", "</div>"]
    out.append("</section>")

    out += ['<section id="cautions" class="cautions">', "<h2>Cautions</h2>", "<ul>"]
    out += [f"<li>{_e(c)}</li>" for c in report.all_cautions]
    out += ["</ul>", "</section>"]

    if report.sign_off:
        out += [
            '<section id="sign-off" class="signoff">',
            "<h2>Sign-off</h2>",
            "<table>",
            '<thead><tr><th scope="col">Role</th><th scope="col">Name</th>'
            '<th scope="col">Signature</th><th scope="col">Date</th></tr></thead>',
            "<tbody>",
        ]
        out += [
            f"<tr><td>{_e(role)}</td><td></td><td></td><td></td></tr>" for role in report.sign_off
        ]
        out += ["</tbody>", "</table>", "</section>"]
    out += ["</main>", "</body>", "</html>"]
    return "\n".join(out) + "\n"
