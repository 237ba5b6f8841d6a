"""The report document: what a report says, independent of how it is rendered.

A :class:`Report` opens with the question asked and the answer (the findings, short), then
gives the details as :class:`Section` objects (paragraphs, tables, figures), the methods used
with their published sources (:class:`MethodNote`), the reproducibility block
(:class:`~shufflecheck.report.provenance.Provenance`) and the cautions. ``data`` holds every
number of the report in JSON-ready form for ``report.json``.

Every number in a table is a :class:`~shufflecheck.common.quantity.Quantity`: a number that
carries how it was obtained (``exact``, ``bound`` with its side, ``estimate`` with its
standard error and/or confidence interval, or ``conjectured``). A :class:`Table` refuses bare
numbers, so no renderer can show a number without its label. Build values with the
constructors of :mod:`shufflecheck.common.quantity` (``exact``, ``upper_bound``,
``lower_bound``, ``estimate``, ``conjectured``).

Everything here is generic: the module knows nothing of shuffles or audits. The renderers
(:mod:`~shufflecheck.report.render.markdown`, :mod:`~shufflecheck.report.render.html`) and
:func:`render_json` are pure functions of a report: the same report renders to the same text.
"""

from __future__ import annotations

import dataclasses
import json
import re
import struct
from collections.abc import Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import PurePath
from typing import Any

from shufflecheck.common.cautions import REPORT_CAUTIONS
from shufflecheck.common.errors import InputError
from shufflecheck.common.numbers import json_number
from shufflecheck.common.quantity import KINDS, LABEL_MEANINGS, Kind, Quantity
from shufflecheck.report.provenance import Provenance

__all__ = [
    "FORMAT_NAME",
    "FORMAT_VERSION",
    "Cell",
    "Figure",
    "MethodNote",
    "Report",
    "Section",
    "Table",
    "jsonable",
    "png_size",
    "render_json",
]

#: ``report.json`` names its format so a folder can be recognised as a report folder.
FORMAT_NAME = "shufflecheck-report"
FORMAT_VERSION = 1

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
#: Text cells that stand for "no number here" and leave a column's shared label alone.
_PLACEHOLDERS = frozenset({"", "-", "\u2014", "n/a"})
_FIGURE_NAME = re.compile(r"^[a-z0-9][a-z0-9_-]{0,63}$")


# --------------------------------------------------------------------------- blocks

#: A table cell: text, a labelled number, or None for an empty cell.
Cell = str | Quantity | None


def _text(x: Any, what: str, *, allow_empty: bool = False) -> str:
    if not isinstance(x, str):
        raise InputError(f"{what} must be text, got {type(x).__name__}")
    if not allow_empty and not x.strip():
        raise InputError(f"{what} must not be empty")
    return x


def _texts(xs: Any, what: str) -> tuple[str, ...]:
    if isinstance(xs, str):
        return (_text(xs, what),)
    return tuple(_text(x, what) for x in xs)


@dataclass(frozen=True)
class Table:
    """A table whose every number carries its label.

    Attributes
    ----------
    caption : str
    headers : tuple of str
        Column titles, unique.
    rows : tuple of tuples of Cell
        Each cell is text, a :class:`Quantity` or None (empty). A bare number is refused: wrap it
        with :func:`exact`, :func:`upper_bound`, :func:`lower_bound` or :func:`estimate`.
    notes : tuple of str
        Footnotes shown under the table.
    marked_rows : tuple of int
        Rows to emphasise (0-based), e.g. the first row that meets a target.
    mark_note : str
        What the mark means; required when rows are marked.

    When every number in a column has the same label, the renderers show the label once in
    the column header; otherwise each number shows its own label.
    """

    caption: str
    headers: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    notes: tuple[str, ...] = ()
    marked_rows: tuple[int, ...] = ()
    mark_note: str = ""

    def __post_init__(self) -> None:
        caption = _text(self.caption, "table caption")
        headers = _texts(self.headers, f"table {caption!r}: header")
        if not headers:
            raise InputError(f"table {caption!r} has no columns")
        if len(set(headers)) != len(headers):
            raise InputError(f"table {caption!r} has repeated column headers")
        rows = []
        for i, row in enumerate(self.rows):
            row = tuple(row)
            if len(row) != len(headers):
                raise InputError(
                    f"table {caption!r}, row {i + 1}: {len(row)} cells for {len(headers)} columns"
                )
            for j, cell in enumerate(row):
                if cell is None or isinstance(cell, (str, Quantity)):
                    continue
                where = f"table {caption!r}, row {i + 1}, column {headers[j]!r}"
                if isinstance(cell, (int, float, Fraction)) or hasattr(cell, "item"):
                    raise InputError(
                        f"{where}: the number {cell!r} has no label; wrap it with exact(), "
                        "upper_bound(), lower_bound() or estimate()"
                    )
                raise InputError(f"{where}: a cell must be text, a Quantity or None")
            rows.append(row)
        marked = tuple(sorted(set(self.marked_rows)))
        for i in marked:
            if isinstance(i, bool) or not isinstance(i, int) or not 0 <= i < len(rows):
                raise InputError(f"table {caption!r}: marked row {i!r} is not a row index")
        if marked and not self.mark_note.strip():
            raise InputError(f"table {caption!r}: say what the mark means (mark_note)")
        object.__setattr__(self, "headers", headers)
        object.__setattr__(self, "rows", tuple(rows))
        object.__setattr__(self, "notes", _texts(self.notes, f"table {caption!r}: note"))
        object.__setattr__(self, "marked_rows", marked)

    def column_label(self, column: int) -> str | None:
        """The label text shared by every number in a column, or None (mixed or no numbers;
        also when some cell is text other than a placeholder such as ``-``, e.g. a two-sided
        ``0.1 to 0.2 (bounds)``, which the shared label would misdescribe)."""
        cells = [row[column] for row in self.rows]
        if any(isinstance(c, str) and c.strip() not in _PLACEHOLDERS for c in cells):
            return None
        labels = {c.label_text for c in cells if isinstance(c, Quantity)}
        return labels.pop() if len(labels) == 1 else None

    def is_numeric_column(self, column: int) -> bool:
        """True when the column holds at least one number and no text."""
        cells = [row[column] for row in self.rows if row[column] is not None]
        return bool(cells) and all(isinstance(c, Quantity) for c in cells)

    def header_text(self, column: int) -> str:
        """The header, followed by the shared label in parentheses when there is one."""
        label = self.column_label(column)
        return self.headers[column] if label is None else f"{self.headers[column]} ({label})"

    def cell_text(self, row: int, column: int) -> str:
        """Plain text of a cell: the number alone under a labelled header, else with label."""
        cell = self.rows[row][column]
        if cell is None:
            return ""
        if isinstance(cell, str):
            return cell
        if self.column_label(column) is not None:
            return cell.number_text()
        return cell.text()

    def as_json(self) -> dict[str, Any]:
        """Rows as objects keyed by header; numbers as :meth:`Quantity.as_json` objects."""

        def cell(c: Cell) -> Any:
            return c.as_json() if isinstance(c, Quantity) else c

        out: dict[str, Any] = {
            "caption": self.caption,
            "headers": list(self.headers),
            "rows": [
                {h: cell(c) for h, c in zip(self.headers, row, strict=True)} for row in self.rows
            ],
        }
        if self.notes:
            out["notes"] = list(self.notes)
        if self.marked_rows:
            out["marked_rows"] = list(self.marked_rows)
            out["mark_note"] = self.mark_note
        return out


def png_size(png: bytes) -> tuple[int, int]:
    """(width, height) in pixels from a PNG's header chunk."""
    if not png.startswith(_PNG_SIGNATURE) or len(png) < 24 or png[12:16] != b"IHDR":
        raise InputError("figure image is not a PNG (bad signature or header)")
    width, height = struct.unpack(">II", png[16:24])
    return width, height


@dataclass(frozen=True)
class Figure:
    """A figure: a PNG image with its caption, and the numbers it plots.

    Attributes
    ----------
    name : str
        File stem, written as ``figures/<name>.png``: lower-case letters, digits, ``_`` and
        ``-``, at most 64 characters, unique within a report.
    caption : str
    png : bytes
        The image (see :func:`shufflecheck.report.figures.render_png` for byte-stable output).
    alt : str
        Text alternative for readers who cannot see the image; defaults to the caption.
    data : dict
        The plotted numbers, JSON-ready; written to ``report.json`` with the figure.
    """

    name: str
    caption: str
    png: bytes
    alt: str = ""
    data: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not _FIGURE_NAME.match(self.name):
            raise InputError(
                f"figure name {self.name!r} must be 1-64 lower-case letters, digits, _ or -"
            )
        _text(self.caption, f"figure {self.name!r}: caption")
        if not isinstance(self.png, bytes):
            raise InputError(f"figure {self.name!r}: png must be bytes")
        png_size(self.png)
        _text(self.alt, f"figure {self.name!r}: alt text", allow_empty=True)
        object.__setattr__(self, "data", jsonable(self.data, f"figure {self.name!r} data"))

    @property
    def size(self) -> tuple[int, int]:
        """(width, height) of the image in pixels."""
        return png_size(self.png)

    @property
    def file(self) -> str:
        """Path of the image inside a report folder."""
        return f"figures/{self.name}.png"

    @property
    def alt_text(self) -> str:
        return self.alt or self.caption


@dataclass(frozen=True)
class Section:
    """One part of the details: paragraphs, then tables, then figures."""

    title: str
    paragraphs: tuple[str, ...] = ()
    tables: tuple[Table, ...] = ()
    figures: tuple[Figure, ...] = ()

    def __post_init__(self) -> None:
        title = _text(self.title, "section title")
        object.__setattr__(self, "paragraphs", _texts(self.paragraphs, f"section {title!r}"))
        tables = tuple(self.tables)
        figures = tuple(self.figures)
        if not all(isinstance(t, Table) for t in tables):
            raise InputError(f"section {title!r}: tables must be Table objects")
        if not all(isinstance(f, Figure) for f in figures):
            raise InputError(f"section {title!r}: figures must be Figure objects")
        object.__setattr__(self, "tables", tables)
        object.__setattr__(self, "figures", figures)


@dataclass(frozen=True)
class MethodNote:
    """How one quantity was obtained, with its published source(s).

    Attributes
    ----------
    quantity : str
        What the method produced, in the reader's words.
    kind : {"exact", "bound", "estimate", "conjectured"}
    method : str
        The method, by its usual name, with any setting that matters.
    sources : tuple of str
        Full citations (authors, year, title, journal); at least one. Identical citations
        across notes share one number in the reference list.
    """

    quantity: str
    kind: Kind
    method: str
    sources: tuple[str, ...]

    def __post_init__(self) -> None:
        quantity = _text(self.quantity, "method quantity")
        if self.kind not in KINDS:
            raise InputError(
                f"method for {quantity!r}: kind must be one of {', '.join(KINDS)}, "
                f"got {self.kind!r}"
            )
        _text(self.method, f"method for {quantity!r}")
        sources = _texts(self.sources, f"method for {quantity!r}: source")
        if not sources:
            raise InputError(f"method for {quantity!r} needs at least one published source")
        object.__setattr__(self, "sources", sources)


@dataclass(frozen=True, kw_only=True)
class Report:
    """A whole report: question and answer first, then details, methods and provenance.

    Attributes
    ----------
    title : str
    question : str
        The question the report answers, in the reader's words.
    answer : tuple of str
        The findings, short; the first is the headline. Put numbers in as ``str(value)`` of
        a :class:`Quantity` so they carry their label.
    reproducibility : Provenance
        From :func:`~shufflecheck.report.provenance.collect_provenance`.
    sections : tuple of Section
    methods : tuple of MethodNote
        Required (non-empty) as soon as a table shows a number.
    cautions : tuple of str
        Cautions particular to this analysis, shown after the standard ones (which every
        report shows and which cannot be removed).
    data : dict
        Every number of the report, JSON-ready (numpy values, Fractions and dataclasses are
        converted; non-finite floats become ``"inf"``/``"-inf"``/``"nan"``).
    sign_off : tuple of str
        Roles given a line for name, signature and date at the end (empty: no sign-off).
    """

    title: str
    question: str
    answer: tuple[str, ...]
    reproducibility: Provenance
    sections: tuple[Section, ...] = ()
    methods: tuple[MethodNote, ...] = ()
    cautions: tuple[str, ...] = ()
    data: dict[str, Any] = field(default_factory=dict)
    sign_off: tuple[str, ...] = ("Prepared by", "Reviewed by")

    def __post_init__(self) -> None:
        _text(self.title, "report title")
        _text(self.question, "report question")
        answer = _texts(self.answer, "answer")
        if not answer:
            raise InputError("a report needs an answer (at least one finding)")
        if not isinstance(self.reproducibility, Provenance):
            raise InputError("reproducibility must be a Provenance (see collect_provenance)")
        sections = tuple(self.sections)
        if not all(isinstance(s, Section) for s in sections):
            raise InputError("sections must be Section objects")
        methods = tuple(self.methods)
        if not all(isinstance(m, MethodNote) for m in methods):
            raise InputError("methods must be MethodNote objects")
        names = [f.name for s in sections for f in s.figures]
        repeated = sorted({n for n in names if names.count(n) > 1})
        if repeated:
            raise InputError(f"figure names must be unique in a report: {', '.join(repeated)}")
        shows_numbers = any(
            isinstance(c, Quantity) for s in sections for t in s.tables for r in t.rows for c in r
        )
        if shows_numbers and not methods:
            raise InputError("the report shows numbers but lists no methods (MethodNote)")
        object.__setattr__(self, "answer", answer)
        object.__setattr__(self, "sections", sections)
        object.__setattr__(self, "methods", methods)
        object.__setattr__(self, "cautions", _texts(self.cautions, "caution"))
        object.__setattr__(self, "sign_off", _texts(self.sign_off, "sign-off role"))
        object.__setattr__(self, "data", jsonable(self.data, "report data"))
        if not isinstance(self.data, dict):
            raise InputError("report data must be a dict")

    @property
    def all_cautions(self) -> tuple[str, ...]:
        """The standard cautions followed by this report's own."""
        return REPORT_CAUTIONS + self.cautions

    @property
    def references(self) -> tuple[str, ...]:
        """Distinct sources of all methods, in order of first use (numbered from 1)."""
        seen: dict[str, None] = {}
        for note in self.methods:
            for source in note.sources:
                seen.setdefault(source, None)
        return tuple(seen)

    def reference_numbers(self, note: MethodNote) -> tuple[int, ...]:
        """The 1-based reference numbers of a method's sources."""
        refs = self.references
        return tuple(refs.index(s) + 1 for s in note.sources)

    def numbered_tables(self) -> list[tuple[int, int, Table]]:
        """(table number, section index, table) across the report, numbered from 1."""
        out = []
        for k, section in enumerate(self.sections):
            for table in section.tables:
                out.append((len(out) + 1, k, table))
        return out

    def numbered_figures(self) -> list[tuple[int, int, Figure]]:
        """(figure number, section index, figure) across the report, numbered from 1."""
        out = []
        for k, section in enumerate(self.sections):
            for figure in section.figures:
                out.append((len(out) + 1, k, figure))
        return out

    def as_json(self) -> dict[str, Any]:
        """The whole report as a JSON-ready dict (the content of ``report.json``)."""
        table_no = {id(t): n for n, _, t in self.numbered_tables()}
        figure_no = {id(f): n for n, _, f in self.numbered_figures()}
        sections = []
        for section in self.sections:
            tables = []
            for t in section.tables:
                tables.append({"number": table_no[id(t)], **t.as_json()})
            figures = [
                {
                    "number": figure_no[id(f)],
                    "name": f.name,
                    "file": f.file,
                    "caption": f.caption,
                    "width_px": f.size[0],
                    "height_px": f.size[1],
                    "data": f.data,
                }
                for f in section.figures
            ]
            sections.append(
                {
                    "title": section.title,
                    "paragraphs": list(section.paragraphs),
                    "tables": tables,
                    "figures": figures,
                }
            )
        return {
            "format": FORMAT_NAME,
            "format_version": FORMAT_VERSION,
            "title": self.title,
            "question": self.question,
            "answer": list(self.answer),
            "sections": sections,
            "methods": [
                {
                    "quantity": m.quantity,
                    "kind": m.kind,
                    "method": m.method,
                    "references": list(self.reference_numbers(m)),
                }
                for m in self.methods
            ],
            "references": list(self.references),
            "label_meanings": dict(LABEL_MEANINGS),
            "reproducibility": self.reproducibility.as_json(),
            "cautions": list(self.all_cautions),
            "data": self.data,
        }


def render_json(report: Report) -> str:
    """``report.json``: strict JSON (no NaN or Infinity literals), UTF-8, 2-space indent."""
    return json.dumps(report.as_json(), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


# --------------------------------------------------------------------------- JSON


def jsonable(value: Any, where: str = "value") -> Any:
    """A JSON-ready copy of ``value`` (strict JSON; the project's ``--json`` conventions).

    dicts (keys must be str or int), lists, tuples, str, int, bool and None pass through;
    Fractions become floats; numpy scalars and arrays become Python numbers and lists;
    non-finite floats become ``"inf"``, ``"-inf"`` or ``"nan"``; :class:`Quantity` and
    :class:`Table` become their JSON form; other dataclasses become dicts of their fields;
    paths become strings; sets become sorted lists. Anything else is an :class:`InputError`
    naming where it was found.
    """
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        return json_number(value)
    if isinstance(value, Fraction):
        return json_number(float(value))
    if isinstance(value, (Quantity, Table)):
        return value.as_json()
    if isinstance(value, PurePath):
        return str(value)
    if isinstance(value, Mapping):
        out = {}
        for key, item in value.items():
            if isinstance(key, bool) or not isinstance(key, (str, int)):
                raise InputError(f"{where}: key {key!r} is not text (JSON keys are strings)")
            out[str(key)] = jsonable(item, f"{where}.{key}")
        return out
    if isinstance(value, (set, frozenset)):
        try:
            items = sorted(value)
        except TypeError:
            raise InputError(f"{where}: a set of mixed types has no stable order") from None
        return [jsonable(v, f"{where}[{i}]") for i, v in enumerate(items)]
    if isinstance(value, (list, tuple)):
        return [jsonable(v, f"{where}[{i}]") for i, v in enumerate(value)]
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {
            f.name: jsonable(getattr(value, f.name), f"{where}.{f.name}")
            for f in dataclasses.fields(value)
        }
    if hasattr(value, "tolist") and hasattr(value, "dtype"):  # numpy scalar or array
        return jsonable(value.tolist(), where)
    raise InputError(f"{where}: cannot write {type(value).__name__} as JSON")
