"""The report document model: labelled values, tables that refuse bare numbers, strict JSON."""

from __future__ import annotations

import dataclasses
import json
import math
import re
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from shufflecheck.common.cautions import REPORT_CAUTIONS
from shufflecheck.common.errors import InputError
from shufflecheck.common.numbers import format_number
from shufflecheck.common.quantity import Quantity, estimate, exact, lower_bound, upper_bound
from shufflecheck.report.document import (
    FORMAT_NAME,
    Figure,
    MethodNote,
    Section,
    Table,
    jsonable,
    render_json,
)
from tests.test_report_example import FIXED_TIME, example_report

# The smallest valid PNG header: signature + IHDR chunk of a 1 x 1 image (PNG spec, ISO/IEC
# 15948: 8-byte signature, then length 13, "IHDR", width, height, ...).
TINY_PNG = (
    b"\x89PNG\r\n\x1a\n"
    + b"\x00\x00\x00\rIHDR"
    + (1).to_bytes(4, "big")
    + (1).to_bytes(4, "big")
    + b"\x08\x02\x00\x00\x00"
)


def _number_back(text: str) -> float:
    """Read back a number written by format_number."""
    return float(text.replace(",", "").replace("∞", "inf"))


class TestFormatNumber:
    def test_examples(self):
        assert format_number(0.5) == "0.5000"
        assert format_number(1 / 3, 3) == "0.333"
        assert format_number(123456789) == "123,456,789"
        assert format_number(math.factorial(52)) == "8.066e+67"  # 52! = 8.0658e67
        assert format_number(9.99996) == "10.00"  # rounding carries into a new digit
        assert format_number(1.5e-7) == "1.500e-07"
        assert format_number(2.5e6) == "2.500e+06"
        assert format_number(float("inf")) == "∞"
        assert format_number(0.0) == "0.000"

    def test_huge_int_does_not_overflow(self):
        assert format_number(10**400) == "1.000e+400"

    @given(
        st.floats(min_value=-1e12, max_value=1e12, allow_nan=False).filter(
            lambda x: x == 0 or abs(x) > 1e-300
        ),
        st.integers(min_value=1, max_value=10),
    )
    def test_round_trip_within_display_precision(self, x, digits):
        text = format_number(x, digits)
        back = _number_back(text)
        assert math.isclose(back, x, rel_tol=0.51 * 10 ** (1 - digits), abs_tol=1e-300)

    @given(st.floats(min_value=1e-4, max_value=9.99e5), st.integers(min_value=2, max_value=8))
    def test_fixed_range_shows_exact_significant_digits(self, x, digits):
        exponent = int(f"{x:.{digits - 1}e}".split("e")[1])
        assume(exponent < 6)  # 999,999.5 may round up into the scientific range
        # a value below 1 that would round to 1 shows more digits (TestNearOne)
        assume(not (x < 1 and float(f"{x:.{digits - 1}e}") == 1.0))
        text = format_number(x, digits).replace(",", "")
        shown = text.replace(".", "").lstrip("0")
        # fixed notation: `digits` significant digits, or all integer digits when there are
        # more (then no decimals; 99,500 at 2 digits stays 99,500 although its 2-digit
        # scientific form 1.0e+05 carries into a sixth digit)
        if exponent >= digits - 1:
            assert shown == f"{x:.0f}"
        else:
            assert len(shown) == digits


class TestValue:
    def test_labels_and_text(self):
        assert str(exact(Fraction(1, 4))) == "0.2500 (exact)"
        assert str(upper_bound(0.0123)) == "≤ 0.01230 (upper bound)"
        assert str(lower_bound(2, unit="bits")) == "≥ 2 bits (lower bound)"
        text = str(estimate(0.1234, stderr=0.004, interval=(0.1156, 0.1312)))
        assert text == "0.1234 ± 0.0040 (s.e.), 95% CI [0.1156, 0.1312] (estimate)"
        assert (
            estimate(0.5, interval=(0.4, 0.6), confidence=0.99).number_text()
            == "0.50, 99% CI [0.40, 0.60]"
        )

    def test_estimate_rounded_to_its_uncertainty(self):
        assert estimate(1234.5678, stderr=12.3).number_text() == "1,235 ± 12 (s.e.)"
        assert estimate(4.5389, stderr=0.0021).number_text() == "4.5389 ± 0.0021 (s.e.)"

    def test_fractions_and_numpy_are_converted(self):
        assert exact(Fraction(6, 3)).value == 2 and isinstance(exact(Fraction(6, 3)).value, int)
        assert isinstance(exact(np.float64(0.25)).value, float)
        assert isinstance(exact(np.int64(7)).value, int)

    @pytest.mark.parametrize(
        "make, message",
        [
            (lambda: Quantity(0.1, "guess"), "kind must be one of"),
            (lambda: Quantity(0.1, "bound"), "side='upper'"),
            (lambda: Quantity(0.1, "exact", side="upper"), "only for bounds"),
            (lambda: Quantity(0.1, "estimate"), "needs its uncertainty"),
            (lambda: Quantity(0.1, "exact", stderr=0.1), "has no standard error"),
            (lambda: Quantity(0.1, "estimate", interval=(0.0, 0.2)), "needs its level"),
            (lambda: estimate(0.1, stderr=-1.0), "stderr must be finite"),
            (lambda: estimate(0.1, interval=(0.3, 0.2)), "low must not exceed high"),
            (lambda: estimate(0.1, interval=(0.0, 0.2), confidence=95), "confidence must be in"),
            (lambda: exact(float("nan")), "NaN"),
            (lambda: exact(True), "must be a number"),
            (lambda: exact("0.1"), "must be a number"),
            (lambda: exact(0.1, digits=0), "digits"),
        ],
    )
    def test_refusals(self, make, message):
        with pytest.raises(InputError, match=re.escape(message)):
            make()

    def test_json_form(self):
        value = estimate(0.25, stderr=0.01, interval=(0.23, 0.27), unit="bits")
        assert value.as_json() == {
            "value": 0.25,
            "kind": "estimate",
            "stderr": 0.01,
            "interval": [0.23, 0.27],
            "confidence": 0.95,
            "unit": "bits",
        }
        assert upper_bound(float("inf")).as_json() == {
            "value": "inf",
            "kind": "bound",
            "side": "upper",
        }


class TestTable:
    def test_bare_numbers_are_refused(self):
        for bare in (0.5, 3, Fraction(1, 2), np.float64(0.5), np.int32(4)):
            with pytest.raises(InputError, match=r"row 2, column 'tv': the number .* no label"):
                Table("t", ("k", "tv"), [(exact(1), exact(0.1)), (exact(2), bare)])

    def test_shape_and_header_checks(self):
        with pytest.raises(InputError, match="row 1: 1 cells for 2 columns"):
            Table("t", ("a", "b"), [("x",)])
        with pytest.raises(InputError, match="repeated column headers"):
            Table("t", ("a", "a"), [])
        with pytest.raises(InputError, match="marked row 5"):
            Table("t", ("a",), [("x",)], marked_rows=(5,), mark_note="m")
        with pytest.raises(InputError, match="mark_note"):
            Table("t", ("a",), [("x",)], marked_rows=(0,))
        with pytest.raises(InputError, match="a cell must be text"):
            Table("t", ("a",), [([1],)])

    def test_uniform_column_label_goes_to_header(self):
        table = Table(
            "t",
            ("k", "tv", "mixed", "text"),
            [
                (exact(1), exact(0.5), exact(0.5), "a"),
                (exact(2), exact(0.25), upper_bound(0.3), None),
            ],
        )
        assert table.header_text(1) == "tv (exact)"
        assert table.cell_text(0, 1) == "0.5000"
        assert table.header_text(2) == "mixed"  # mixed labels: each cell says its own
        assert table.cell_text(1, 2) == "≤ 0.3000 (upper bound)"
        assert table.header_text(3) == "text" and table.cell_text(1, 3) == ""
        assert table.is_numeric_column(1) and not table.is_numeric_column(3)

    def test_text_beside_numbers_keeps_the_label_in_each_cell(self):
        # a two-sided "x to y (bounds)" written as text among upper bounds: a shared
        # "upper bound" in the header would misdescribe it; a placeholder "-" does not
        table = Table(
            "t",
            ("tv", "estimate"),
            [("0.2880 to 1.000 (bounds)", "-"), (upper_bound(0.6136), upper_bound(0.5))],
        )
        assert table.column_label(0) is None
        assert table.cell_text(1, 0) == "≤ 0.6136 (upper bound)"
        assert table.column_label(1) == "upper bound"

    def test_every_numeric_cell_text_carries_a_label(self):
        report = example_report(with_figure=False)
        for _, _, table in report.numbered_tables():
            for j in range(len(table.headers)):
                for i, row in enumerate(table.rows):
                    if isinstance(row[j], Quantity):
                        text = table.header_text(j) + " " + table.cell_text(i, j)
                        assert re.search(r"\((exact|upper bound|lower bound|estimate)\)", text)


class TestFigureAndReport:
    def test_figure_checks(self):
        assert Figure("a-1", "c", TINY_PNG).size == (1, 1)
        with pytest.raises(InputError, match="not a PNG"):
            Figure("a", "c", b"GIF89a" + bytes(30))
        for bad in ("A", "../x", "a/b", "", "x" * 65):
            with pytest.raises(InputError, match="figure name"):
                Figure(bad, "c", TINY_PNG)

    def test_repeated_figure_names_refused(self):
        fig = Figure("same", "c", TINY_PNG)
        base = example_report(with_figure=False)
        with pytest.raises(InputError, match="unique"):
            dataclasses.replace(base, sections=(Section("s", figures=(fig, fig)),))

    def test_numbers_need_methods(self):
        base = example_report(with_figure=False)
        with pytest.raises(InputError, match="lists no methods"):
            dataclasses.replace(base, methods=())
        text_only = dataclasses.replace(
            base, sections=(Section("s", tables=(Table("t", ("a",), [("x",)]),)),), methods=()
        )
        assert text_only.methods == ()

    def test_method_needs_a_source(self):
        with pytest.raises(InputError, match="at least one published source"):
            MethodNote("q", "exact", "m", ())

    def test_standard_cautions_always_first(self):
        report = example_report(with_figure=False)
        assert report.all_cautions[: len(REPORT_CAUTIONS)] == REPORT_CAUTIONS
        none_extra = dataclasses.replace(report, cautions=())
        assert none_extra.all_cautions == REPORT_CAUTIONS

    def test_references_numbered_once_in_order_of_use(self):
        report = example_report(with_figure=False)
        assert len(report.references) == 3
        assert [report.reference_numbers(m) for m in report.methods] == [(1,), (2, 1), (3,)]

    def test_needs_provenance_and_answer(self):
        base = example_report(with_figure=False)
        with pytest.raises(InputError, match="Provenance"):
            dataclasses.replace(base, reproducibility={"time": FIXED_TIME})
        with pytest.raises(InputError, match="needs an answer"):
            dataclasses.replace(base, answer=())


class TestJson:
    def test_jsonable_conversions(self):
        @dataclasses.dataclass(frozen=True)
        class Result:
            statistic: float
            counts: tuple[int, ...]

        payload = {
            "f": Fraction(1, 8),
            "np": np.arange(3),
            "scalar": np.float32(0.5),
            "inf": float("-inf"),
            "nan": float("nan"),
            "set": {3, 1, 2},
            "path": Path("a/b.csv"),
            "result": Result(1.5, (1, 2)),
            "value": exact(0.5),
            1: "int key",
        }
        assert jsonable(payload) == {
            "f": 0.125,
            "np": [0, 1, 2],
            "scalar": 0.5,
            "inf": "-inf",
            "nan": "nan",
            "set": [1, 2, 3],
            "path": "a/b.csv",
            "result": {"statistic": 1.5, "counts": [1, 2]},
            "value": {"value": 0.5, "kind": "exact"},
            "1": "int key",
        }

    def test_jsonable_refusals_name_the_place(self):
        with pytest.raises(InputError, match=r"data\.rows\[1\]: cannot write object"):
            jsonable({"rows": [1, object()]}, "data")
        with pytest.raises(InputError, match="key"):
            jsonable({(1, 2): 3})

    def test_report_json_is_strict_and_complete(self):
        report = example_report(with_figure=True)
        text = render_json(report)

        def refuse(name):
            raise AssertionError(f"non-strict JSON constant {name}")

        data = json.loads(text, parse_constant=refuse)
        assert data["format"] == FORMAT_NAME
        assert data["question"] == report.question
        assert data["answer"] == list(report.answer)
        assert data["cautions"][:4] == list(REPORT_CAUTIONS)
        assert data["reproducibility"]["seeds"] == [{"name": "simulation", "seed": 2031}]
        table = data["sections"][0]["tables"][0]
        assert table["number"] == 1
        assert table["rows"][0]["total variation"]["kind"] == "exact"
        assert table["rows"][0]["total variation bound (separation)"]["side"] == "upper"
        assert table["rows"][0]["chance unchanged, simulated"]["interval"][0] >= 0
        figure = data["sections"][0]["figures"][0]
        assert figure["file"] == "figures/distance.png"
        assert figure["data"]["curves"][0]["minimum"] == 5
        assert data["data"]["rows"][0]["total_variation"] == pytest.approx(
            float(data["sections"][0]["tables"][0]["rows"][0]["total variation"]["value"])
        )

    def test_render_twice_identical(self):
        report = example_report(with_figure=False)
        assert render_json(report) == render_json(report)
        again = example_report(with_figure=False)  # rebuilt from scratch, same seed and time
        assert render_json(again) == render_json(report)

    def test_data_is_a_copy(self):
        source = {"rows": [1, 2]}
        report = dataclasses.replace(example_report(with_figure=False), data=source)
        source["rows"].append(3)
        assert report.data == {"rows": [1, 2]}
