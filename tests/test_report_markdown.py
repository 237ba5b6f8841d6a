"""Markdown rendering: layout, escaping, and tables that say the same numbers as the JSON."""

from __future__ import annotations

import dataclasses
import json
import re

from hypothesis import given
from hypothesis import strategies as st

from shufflecheck.common.quantity import estimate, exact
from shufflecheck.report.document import Section, Table, render_json
from shufflecheck.report.render.markdown import code, escape_block, escape_inline, render_markdown
from tests.test_report_example import example_report

_NUMBER = re.compile(r"-?(?:\d[\d,]*(?:\.\d+)?|\.\d+)(?:e[+-]?\d+)?|-?∞")
_LABEL = re.compile(r"\((exact|upper bound|lower bound|estimate)\)$")


def _unescape(text: str) -> str:
    return re.sub(r"\\([!-/:-@\[-`{-~])", r"\1", text)


def _split_row(line: str) -> list[str]:
    """Cells of a GFM table row (pipes escaped as \\| stay inside a cell)."""
    inner = line.strip()[1:-1]
    cells = re.split(r"(?<!\\)\|", inner)
    return [_unescape(c.strip()) for c in cells]


def markdown_tables(text: str) -> dict[int, tuple[list[str], list[list[str]]]]:
    """Numbered report tables of a Markdown report: number -> (headers, rows of cell text)."""
    lines = text.splitlines()
    out = {}
    for i, line in enumerate(lines):
        match = re.match(r"\*\*Table (\d+)\.\*\*", line)
        if not match:
            continue
        assert lines[i + 1] == "" and lines[i + 2].startswith("| ")
        assert re.fullmatch(r"\| (:?---:?)( \| :?---:?)* \|", lines[i + 3])
        headers = _split_row(lines[i + 2])
        rows = []
        j = i + 4
        while j < len(lines) and lines[j].startswith("| "):
            rows.append([c.removeprefix("**").removesuffix("**") for c in _split_row(lines[j])])
            j += 1
        out[int(match.group(1))] = (headers, rows)
    return out


def _tolerance(token: str) -> float:
    """Half a unit in the last place shown."""
    token = token.replace(",", "")
    mantissa, _, exponent = token.partition("e")
    decimals = len(mantissa.partition(".")[2])
    return 0.5 * 10.0 ** (int(exponent or 0) - decimals) * (1 + 1e-9)


def _close(token: str, value) -> bool:
    if token.endswith("∞"):
        return value == ("inf" if not token.startswith("-") else "-inf")
    return abs(float(token.replace(",", "")) - float(value)) <= _tolerance(token)


def _check_cell(text: str, header_label: str | None, cell: dict) -> None:
    label = header_label
    match = _LABEL.search(text)
    if match:
        assert header_label is None, text
        label = match.group(1)
        text = text[: match.start()].strip()
    expected = cell["kind"] if cell["kind"] != "bound" else f"{cell['side']} bound"
    assert label == expected, (text, cell)
    if cell["kind"] == "bound":
        assert text.startswith("≤ " if cell["side"] == "upper" else "≥ "), text
    numbers = _NUMBER.findall(text.replace("95%", "").replace("99%", ""))
    if cell["kind"] == "bound":
        # bounds are rounded outward: within one unit in the last place, on the safe side
        shown, value = float(numbers[0].replace(",", "")), float(cell["value"])
        unit = 2 * _tolerance(numbers[0])
        outward = shown - value if cell["side"] == "upper" else value - shown
        assert -1e-12 * abs(value) <= outward <= unit, (text, cell)
    else:
        assert _close(numbers[0], cell["value"]), (text, cell)
    rest = numbers[1:]
    if "stderr" in cell:
        assert _close(rest.pop(0), cell["stderr"]), (text, cell)
    if "interval" in cell:
        assert _close(rest[0], cell["interval"][0]) and _close(rest[1], cell["interval"][1]), (
            text,
            cell,
        )
        rest = rest[2:]
    assert rest == [], (text, cell)


class TestTablesAgreeWithJson:
    def test_every_number_matches(self):
        report = example_report()
        md = markdown_tables(render_markdown(report))
        data = json.loads(render_json(report))
        tables = [t for s in data["sections"] for t in s["tables"]]
        assert sorted(md) == [t["number"] for t in tables] == [1, 2]
        checked = 0
        for table in tables:
            headers, rows = md[table["number"]]
            assert len(rows) == len(table["rows"])
            for j, name in enumerate(table["headers"]):
                label = _LABEL.search(headers[j])
                assert headers[j].startswith(name)
                for row_text, row_json in zip(rows, table["rows"], strict=True):
                    cell = row_json[name]
                    if isinstance(cell, dict):
                        _check_cell(row_text[j], label.group(1) if label else None, cell)
                        checked += 1
                    else:
                        assert row_text[j] == (cell or "")
        assert checked == 8 * 5 + 4

    def test_mismatch_would_be_caught(self):
        # the checker itself must fail on a wrong number
        cell = {"value": 0.5, "kind": "exact"}
        _check_cell("0.5000", "exact", cell)
        try:
            _check_cell("0.5010", "exact", cell)
        except AssertionError:
            pass
        else:
            raise AssertionError("a wrong number passed the check")


class TestLayout:
    def test_question_and_answer_come_first(self):
        text = render_markdown(example_report(with_figure=False))
        order = [
            text.index("**Question.**"),
            text.index("**Answer.**"),
            text.index("## 1. "),
            text.index("## Methods and sources"),
            text.index("## Reproducibility"),
            text.index("## Cautions"),
            text.index("## Sign-off"),
        ]
        assert order == sorted(order)
        assert text.startswith("# How many riffles")

    def test_figures_linked_and_captioned(self):
        report = example_report()
        text = render_markdown(report)
        assert "](figures/distance.png)" in text
        assert "*Figure 1.* Total variation" in text

    def test_reproducibility_and_cautions_shown(self, tmp_path):
        log = tmp_path / "table 7|log.csv"
        log.write_text("deck\n1\n")
        report = example_report(with_figure=False, inputs=[log])
        text = render_markdown(report)
        sha = report.reproducibility.inputs[0].sha256
        assert f"`{sha}`" in text
        assert "table 7\\|log.csv" in text  # a pipe in a path cannot break the table
        assert "- Seeds: simulation = 2031" in text
        assert "- Command: `shufflecheck example`" in text
        for caution in report.all_cautions:
            assert escape_block(caution) in text

    def test_marked_row_in_bold_with_its_meaning(self):
        text = render_markdown(example_report(with_figure=False))
        assert "| **5** | **0.09165** |" in text
        assert "*Rows in bold: the fewest riffles with total variation at most 0.1*" in text

    def test_render_twice_identical(self):
        report = example_report()
        assert render_markdown(report) == render_markdown(report)

    def test_mixed_label_column_shows_label_per_cell(self):
        report = example_report(with_figure=False)
        table = Table("mixed", ("q", "v"), [("a", exact(1)), ("b", estimate(0.5, stderr=0.1))])
        report = dataclasses.replace(report, sections=(Section("s", tables=(table,)),))
        rows = markdown_tables(render_markdown(report))[1][1]
        assert rows == [["a", "1 (exact)"], ["b", "0.50 ± 0.10 (s.e.) (estimate)"]]


class TestEscaping:
    @given(st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",))))
    def test_inline_round_trip(self, text):
        escaped = escape_inline(text)
        assert "\n" not in escaped
        assert _unescape(escaped) == " ".join(text.split())
        # every markup character is escaped
        assert not re.search(r"(?<!\\)[*_`\[\]<>|]", escaped.replace("\\\\", ""))

    def test_block_escapes_line_starts(self):
        assert escape_block("- not a list") == "\\- not a list"
        assert escape_block("12. not a list") == "12\\. not a list"
        assert escape_block("    not code") == "not code"
        assert escape_block("# not a heading") == "\\# not a heading"
        assert escape_inline("shufflecheck 0.1.0") == "shufflecheck 0.1.0"

    def test_code_span(self):
        assert code("a`b") == "``a`b``"
        assert code("x | y") == "`x \\| y`"
