"""The report document: what a report says, independent of how it is rendered.

A :class:`Report` opens with the question asked and the answer (the findings, short), then
gives the details as :class:`Section` objects (paragraphs, tables, figures), the methods used
with their published sources (:class:`MethodNote`), the reproducibility block
(:class:`~shufflecheck.report.provenance.Provenance`) and the cautions. ``data`` holds every
number of the report in JSON-ready form for ``report.json``.

Every number in a table is a :class:`Value`: a number that carries how it was obtained,
``exact``, ``bound`` (with its side) or ``estimate`` (with its standard error and/or its
confidence interval). A :class:`Table` refuses bare numbers, so no renderer can show a
number without its label. Build values with :func:`exact`, :func:`upper_bound`,
:func:`lower_bound` and :func:`estimate`.

Everything here is generic: the module knows nothing of shuffles or audits. The renderers
(:mod:`~shufflecheck.report.render.markdown`, :mod:`~shufflecheck.report.render.html`) and
:func:`render_json` are pure functions of a report: the same report renders to the same text.
"""

from __future__ import annotations

import dataclasses
import json
import math
import re
import struct
from collections.abc import Mapping
from dataclasses import dataclass, field
from decimal import Decimal
from fractions import Fraction
from pathlib import PurePath
from typing import Any, Literal

from shufflecheck.common.errors import InputError
from shufflecheck.report.provenance import STANDARD_CAUTIONS, Provenance

__all__ = [
    "FORMAT_NAME",
    "FORMAT_VERSION",
    "HOW_OBTAINED",
    "LABEL_MEANINGS",
    "Cell",
    "Figure",
    "HowObtained",
    "MethodNote",
    "Report",
    "Section",
    "Table",
    "Value",
    "estimate",
    "exact",
    "format_number",
    "jsonable",
    "lower_bound",
    "png_size",
    "render_json",
    "upper_bound",
]

#: ``report.json`` names its format so a folder can be recognised as a report folder.
FORMAT_NAME = "shufflecheck-report"
FORMAT_VERSION = 1

HowObtained = Literal["exact", "bound", "estimate"]
HOW_OBTAINED: tuple[str, ...] = ("exact", "bound", "estimate")

#: One sentence per label, shown in every report beside the methods.
LABEL_MEANINGS: dict[str, str] = {
    "exact": "computed by an exact method; rounded only for display.",
    "bound": "a rigorous upper (≤) or lower (≥) bound: the true value is on the stated side.",
    "estimate": "obtained by random simulation or from a finite sample; shown with its "
    "standard error (s.e.) and/or confidence interval (CI).",
}

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
_FIGURE_NAME = re.compile(r"^[a-z0-9][a-z0-9_-]{0,63}$")


# --------------------------------------------------------------------------- numbers


def format_number(x: int | float, digits: int = 4, rounding: str = "nearest") -> str:
    """Format a number for display with ``digits`` significant digits.

    Integers are shown in full with thousands separators (scientific notation beyond 15
    digits); floats in fixed notation when ``1e-4 <= |x| < 1e6``, otherwise scientific
    (``1.234e-07``). Significant trailing zeros are kept, so every float in a column shows
    the same number of significant digits. Infinity is ``∞``; minus is ``-``.

    ``rounding`` is ``"nearest"``, ``"up"`` (towards +infinity) or ``"down"``: a displayed
    upper bound is rounded up and a lower bound down, so the shown digits never claim more
    than was proven (a value within a few units in the last place of the shown decimal,
    float noise, is shown as that decimal).
    """
    if rounding != "nearest" and isinstance(x, float) and math.isfinite(x) and x != 0:
        nearest = format_number(x, digits)
        shown = float(nearest.replace(",", ""))
        # rounding to nearest already lies on the safe side, or within float noise of x
        noise = 8 * math.ulp(x)
        if (rounding == "up" and shown >= x - noise) or (rounding == "down" and shown <= x + noise):
            return nearest
        return _format_directed(x, digits, rounding)
    if isinstance(x, bool):
        raise InputError(f"cannot format {x!r} as a number")
    if isinstance(x, int):
        if abs(x) < 10**15:
            return f"{x:,}"
        return format(Decimal(x), f".{digits - 1}e")  # exact int, rounded for display only
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    if x == 0:
        return "0" if digits == 1 else "0." + "0" * (digits - 1)
    scientific = f"{x:.{digits - 1}e}"
    exponent = int(scientific.split("e")[1])
    if -4 <= exponent < 6:
        return f"{x:,.{max(digits - 1 - exponent, 0)}f}"
    return scientific


def _format_directed(x: float, digits: int, rounding: str) -> str:
    """``format_number`` with the last shown digit rounded up or down (exact decimals)."""
    from decimal import ROUND_CEILING, ROUND_FLOOR

    mode = {"up": ROUND_CEILING, "down": ROUND_FLOOR}[rounding]
    d = Decimal(x)
    exponent = d.adjusted()
    r = d.quantize(Decimal(1).scaleb(exponent - digits + 1), rounding=mode)
    if r.adjusted() > exponent:  # rounding carried into a new leading digit (0.99996 -> 1.000)
        exponent = r.adjusted()
        r = d.quantize(Decimal(1).scaleb(exponent - digits + 1), rounding=mode)
    # r has ``digits`` significant digits; the nearest float prints back to exactly them
    if -4 <= exponent < 6:
        return f"{float(r):,.{max(digits - 1 - exponent, 0)}f}"
    return f"{float(r):.{digits - 1}e}"


def _decimals_for(uncertainty: float) -> int | None:
    """Decimal places that show ``uncertainty`` to two significant digits (None if unusable)."""
    if not (uncertainty > 0) or not math.isfinite(uncertainty):
        return None
    exponent = int(f"{uncertainty:.1e}".split("e")[1])
    return min(max(1 - exponent, 0), 12)


@dataclass(frozen=True)
class Value:
    """A number together with how it was obtained.

    Attributes
    ----------
    value : int or float
        The number (Fractions and numpy scalars are converted; ints stay exact ints).
    label : {"exact", "bound", "estimate"}
    side : {"upper", "lower"} or None
        Required for a bound: ``"upper"`` means the true value is at most ``value``.
    stderr : float or None
        Standard error of an estimate.
    ci : (float, float) or None
        Confidence interval of an estimate, ``low <= high``.
    level : float or None
        Confidence level of ``ci`` (e.g. 0.95); required with ``ci``.
    unit : str
        Shown after the number (``"bits"``, ``"decks"``); empty for pure numbers.
    digits : int
        Significant digits for display (estimates with an uncertainty are instead rounded to
        the uncertainty's second significant digit).

    An estimate must carry ``stderr`` or ``ci`` (or both); exact values and bounds carry
    neither. NaN is refused: a report never shows an undefined number.
    """

    value: int | float
    label: HowObtained
    side: Literal["upper", "lower"] | None = None
    stderr: float | None = None
    ci: tuple[float, float] | None = None
    level: float | None = None
    unit: str = ""
    digits: int = 4

    def __post_init__(self) -> None:
        value = _plain_number(self.value, "value")
        object.__setattr__(self, "value", value)
        if self.label not in HOW_OBTAINED:
            raise InputError(f"label must be one of {', '.join(HOW_OBTAINED)}, got {self.label!r}")
        if isinstance(self.digits, bool) or not isinstance(self.digits, int):
            raise InputError(f"digits must be an integer from 1 to 15, got {self.digits!r}")
        if not 1 <= self.digits <= 15:
            raise InputError(f"digits must be an integer from 1 to 15, got {self.digits!r}")
        if not isinstance(self.unit, str) or "\n" in self.unit:
            raise InputError(f"unit must be one line of text, got {self.unit!r}")
        if self.label == "bound":
            if self.side not in ("upper", "lower"):
                raise InputError(f"a bound needs side='upper' or side='lower', got {self.side!r}")
        elif self.side is not None:
            raise InputError(f"side is only for bounds, not for a value labelled {self.label}")
        if self.label != "estimate":
            if self.stderr is not None or self.ci is not None or self.level is not None:
                raise InputError(
                    f"a value labelled {self.label} has no standard error or confidence interval"
                )
            return
        if self.stderr is None and self.ci is None:
            raise InputError("an estimate needs its uncertainty: give stderr, ci or both")
        try:
            object.__setattr__(self, "value", float(value))  # an estimate is never exact
        except OverflowError:
            raise InputError(f"estimate {value!r} is too large to show") from None
        if self.stderr is not None:
            stderr = _plain_number(self.stderr, "stderr")
            if not math.isfinite(stderr) or stderr < 0:
                raise InputError(f"stderr must be finite and >= 0, got {self.stderr!r}")
            object.__setattr__(self, "stderr", float(stderr))
        if self.ci is not None:
            if len(self.ci) != 2:
                raise InputError(f"ci must be a pair (low, high), got {self.ci!r}")
            low, high = (float(_plain_number(c, "ci")) for c in self.ci)
            if low > high:
                raise InputError(f"ci low must not exceed high, got ({low}, {high})")
            object.__setattr__(self, "ci", (low, high))
            if self.level is None:
                raise InputError("a confidence interval needs its level (e.g. level=0.95)")
        if self.level is not None:
            level = float(_plain_number(self.level, "level"))
            if not 0 < level < 1:
                raise InputError(f"confidence level must be in (0, 1), got {self.level!r}")
            if self.ci is None:
                raise InputError("level is the confidence level of ci; give ci with it")
            object.__setattr__(self, "level", level)

    # ---- display

    @property
    def label_text(self) -> str:
        """``exact``, ``upper bound``, ``lower bound`` or ``estimate``."""
        if self.label == "bound":
            return f"{self.side} bound"
        return self.label

    def number_text(self) -> str:
        """The number as shown in a table whose column states the label.

        Bounds get ``≤`` / ``≥``; estimates their uncertainty, e.g.
        ``0.1230 ± 0.0040 (s.e.), 95% CI [0.1152, 0.1308]``.
        """
        unit = f" {self.unit}" if self.unit else ""
        if self.label == "bound":
            sign = "≤" if self.side == "upper" else "≥"
            outward = "up" if self.side == "upper" else "down"
            return f"{sign} {format_number(self.value, self.digits, outward)}{unit}"
        if self.label == "exact":
            return f"{format_number(self.value, self.digits)}{unit}"
        return self._estimate_text(unit)

    def _estimate_text(self, unit: str) -> str:
        decimals = None
        if self.stderr is not None:
            decimals = _decimals_for(self.stderr)
        if decimals is None and self.ci is not None:
            decimals = _decimals_for((self.ci[1] - self.ci[0]) / 2)
        magnitudes = [abs(float(self.value))]
        if self.ci is not None:
            magnitudes += [abs(c) for c in self.ci]
        largest = max(magnitudes)
        fixed = decimals is not None and math.isfinite(largest) and largest < 1e6
        fixed = fixed and (largest >= 1e-4 or largest == 0)
        if fixed and largest > 0:  # never show more digits than a float holds (15)
            decimals = min(decimals, max(14 - math.floor(math.log10(largest)), 0))

        def show(x: float, *, uncertainty: bool = False) -> str:
            if uncertainty and x == 0 and not fixed:
                return "0"
            if fixed:
                return f"{x:,.{decimals}f}"
            return format_number(x, 2 if uncertainty else self.digits)

        parts = [show(float(self.value)) if fixed else format_number(self.value, self.digits)]
        if self.stderr is not None:
            parts.append(f" ± {show(self.stderr, uncertainty=True)}{unit} (s.e.)")
        else:
            parts.append(unit)
        if self.ci is not None and self.level is not None:
            low, high = self.ci
            parts.append(f", {_percent(self.level)} CI [{show(low)}, {show(high)}]")
        return "".join(parts)

    def text(self) -> str:
        """The number with its label, for running text: ``≤ 0.0123 (upper bound)``."""
        return f"{self.number_text()} ({self.label_text})"

    def __str__(self) -> str:
        return self.text()

    def as_json(self) -> dict[str, Any]:
        """JSON-ready form: value, label and (where present) side, stderr, ci, level, unit."""
        out: dict[str, Any] = {"value": _json_number(self.value), "label": self.label}
        if self.side is not None:
            out["side"] = self.side
        if self.stderr is not None:
            out["stderr"] = _json_number(self.stderr)
        if self.ci is not None:
            out["ci"] = [_json_number(self.ci[0]), _json_number(self.ci[1])]
            out["level"] = self.level
        if self.unit:
            out["unit"] = self.unit
        return out


def exact(value: int | float | Fraction, *, unit: str = "", digits: int = 4) -> Value:
    """A value computed by an exact method."""
    return Value(value, "exact", unit=unit, digits=digits)


def upper_bound(value: int | float | Fraction, *, unit: str = "", digits: int = 4) -> Value:
    """A rigorous upper bound: the true value is at most ``value``."""
    return Value(value, "bound", side="upper", unit=unit, digits=digits)


def lower_bound(value: int | float | Fraction, *, unit: str = "", digits: int = 4) -> Value:
    """A rigorous lower bound: the true value is at least ``value``."""
    return Value(value, "bound", side="lower", unit=unit, digits=digits)


def estimate(
    value: float,
    *,
    stderr: float | None = None,
    ci: tuple[float, float] | None = None,
    level: float = 0.95,
    unit: str = "",
    digits: int = 4,
) -> Value:
    """A Monte Carlo or sample estimate with its standard error and/or confidence interval."""
    return Value(
        value,
        "estimate",
        stderr=stderr,
        ci=ci,
        level=level if ci is not None else None,
        unit=unit,
        digits=digits,
    )


def _percent(level: float) -> str:
    text = f"{100 * level:.2f}".rstrip("0").rstrip(".")
    return f"{text}%"


def _plain_number(x: Any, what: str) -> int | float:
    if hasattr(x, "item") and not isinstance(x, (int, float)):
        x = x.item()  # numpy scalar
    if isinstance(x, bool) or not isinstance(x, (int, float, Fraction)):
        raise InputError(f"{what} must be a number, got {x!r}")
    if isinstance(x, Fraction):
        x = x.numerator if x.denominator == 1 else float(x)
    if isinstance(x, float) and math.isnan(x):
        raise InputError(f"{what} is NaN: a report never shows an undefined number")
    return x


def _json_number(x: int | float) -> int | float | str:
    if isinstance(x, float) and not math.isfinite(x):
        return "inf" if x > 0 else ("-inf" if x < 0 else "nan")
    return x


# --------------------------------------------------------------------------- blocks

#: A table cell: text, a labelled number, or None for an empty cell.
Cell = str | Value | None


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
        Each cell is text, a :class:`Value` or None (empty). A bare number is refused: wrap it
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
                if cell is None or isinstance(cell, (str, Value)):
                    continue
                where = f"table {caption!r}, row {i + 1}, column {headers[j]!r}"
                if isinstance(cell, (int, float, Fraction)) or hasattr(cell, "item"):
                    raise InputError(
                        f"{where}: the number {cell!r} has no label; wrap it with exact(), "
                        "upper_bound(), lower_bound() or estimate()"
                    )
                raise InputError(f"{where}: a cell must be text, a Value or None")
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
        """The label text shared by every number in a column, or None (mixed or no numbers)."""
        labels = {row[column].label_text for row in self.rows if isinstance(row[column], Value)}
        return labels.pop() if len(labels) == 1 else None

    def is_numeric_column(self, column: int) -> bool:
        """True when the column holds at least one number and no text."""
        cells = [row[column] for row in self.rows if row[column] is not None]
        return bool(cells) and all(isinstance(c, Value) for c in cells)

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
        """Rows as objects keyed by header; numbers as :meth:`Value.as_json` objects."""

        def cell(c: Cell) -> Any:
            return c.as_json() if isinstance(c, Value) else c

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

    @classmethod
    def from_matplotlib(
        cls,
        name: str,
        caption: str,
        figure: Any,
        *,
        alt: str = "",
        data: Mapping[str, Any] | None = None,
        dpi: int = 150,
    ) -> Figure:
        """Render a matplotlib figure to PNG (byte-stable; the caller still owns ``figure``)."""
        from shufflecheck.report.figures import render_png

        return cls(name, caption, render_png(figure, dpi=dpi), alt=alt, data=dict(data or {}))

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
    label : {"exact", "bound", "estimate"}
    method : str
        The method, by its usual name, with any setting that matters.
    sources : tuple of str
        Full citations (authors, year, title, journal); at least one. Identical citations
        across notes share one number in the reference list.
    """

    quantity: str
    label: HowObtained
    method: str
    sources: tuple[str, ...]

    def __post_init__(self) -> None:
        quantity = _text(self.quantity, "method quantity")
        if self.label not in HOW_OBTAINED:
            raise InputError(
                f"method for {quantity!r}: label must be one of {', '.join(HOW_OBTAINED)}, "
                f"got {self.label!r}"
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
        a :class:`Value` so they carry their label.
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
            isinstance(c, Value) for s in sections for t in s.tables for r in t.rows for c in r
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
        return STANDARD_CAUTIONS + self.cautions

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
                    "label": m.label,
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
    non-finite floats become ``"inf"``, ``"-inf"`` or ``"nan"``; :class:`Value` and
    :class:`Table` become their JSON form; other dataclasses become dicts of their fields;
    paths become strings; sets become sorted lists. Anything else is an :class:`InputError`
    naming where it was found.
    """
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        return _json_number(value)
    if isinstance(value, Fraction):
        return _json_number(float(value))
    if isinstance(value, (Value, Table)):
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
