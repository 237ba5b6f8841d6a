"""Figures: PNG output, byte-stable rerenders, plotted data, styles that survive grey print."""

from __future__ import annotations

import itertools
import subprocess
import sys
import zlib

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.report import figures as F
from shufflecheck.report.document import Figure, png_size

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), section 5.2

STEPS = list(range(1, 11))
TV = [1.0, 1.0, 0.99, 0.93, 0.62, 0.33, 0.17, 0.085, 0.043, 0.021]  # synthetic


def _chunks(png: bytes) -> list[bytes]:
    """Chunk types of a PNG, checking each chunk's CRC (PNG specification, section 5.3)."""
    out, i = [], 8
    while i < len(png):
        length = int.from_bytes(png[i : i + 4], "big")
        kind = png[i + 4 : i + 8]
        body = png[i + 8 : i + 8 + length]
        crc = int.from_bytes(png[i + 8 + length : i + 12 + length], "big")
        assert zlib.crc32(kind + body) == crc, kind
        out.append(kind)
        i += 12 + length
    return out


def _distance():
    return F.distance_figure(
        [
            {"label": "procedure A", "steps": STEPS, "values": TV, "kind": "exact", "minimum": 8},
            {
                "label": "procedure A: bound",
                "steps": STEPS,
                "values": [min(1.0, 1.4 * v) for v in TV],
                "kind": "bound",
                "group": "procedure A",
            },
            {
                "label": "procedure B",
                "steps": STEPS,
                "values": [min(1.0, 1.2 * v) for v in TV],
                "low": [min(1.0, 1.1 * v) for v in TV],
                "high": [min(1.0, 1.3 * v) for v in TV],
                "kind": "estimate",
            },
        ],
        target=0.1,
        steps_name="riffles",
        log_scale=True,
    )


def _heatmap(kind="counts"):
    rng = np.random.default_rng(7)
    if kind == "counts":
        return F.heatmap_figure(rng.poisson(30, size=(12, 12)))
    return F.heatmap_figure(rng.normal(size=(12, 12)), kind="residuals")


def _pvalues():
    return F.pvalue_figure(
        ["rising sequences", "fixed points", "guessing game"],
        [0.0008, 0.4, 1.0],
        ["exact", "estimate", "exact"],
        alpha=0.05,
    )


def _null_pmf(n: int) -> np.ndarray:
    # exact law of a sum of independent Bernoulli(1/j), j = 1..n, by convolution
    pmf = np.array([1.0])
    for j in range(1, n + 1):
        pmf = np.convolve(pmf, [1 - 1 / j, 1 / j])
    return pmf


def _scores():
    rng = np.random.default_rng(3)
    pmf = _null_pmf(10)
    scores = rng.choice(len(pmf), p=pmf, size=500)
    return F.score_histogram_figure(scores.tolist(), pmf.tolist(), score_name="correct guesses")


def _power():
    x = [4, 5, 6, 7, 8]
    return F.power_figure(
        [
            {
                "label": "rising sequences",
                "x": x,
                "decks": [6, 15, 60, 300, None],
                "low": [5, 12, 50, 250, None],
                "high": [8, 18, 70, 360, None],
                "kind": "estimate",
            },
            {"label": "guessing game", "x": x, "decks": [4, 9, 35, 180, 2000], "kind": "exact"},
        ]
    )


BUILDERS = {
    "distance": (_distance, (1080, 660)),
    "heatmap-counts": (_heatmap, None),
    "heatmap-residuals": (lambda: _heatmap("residuals"), None),
    "pvalues": (_pvalues, (1080, round((1.3 + 0.36 * 3) * F.DPI))),
    "scores": (_scores, (1080, 630)),
    "power": (_power, (1080, 660)),
}


class TestPng:
    @pytest.mark.parametrize("kind", list(BUILDERS))
    def test_renders_png_of_expected_size(self, kind):
        build, size = BUILDERS[kind]
        figure = build()
        assert isinstance(figure, Figure)
        assert figure.png.startswith(PNG_SIGNATURE)
        chunks = _chunks(figure.png)
        assert chunks[0] == b"IHDR" and chunks[-1] == b"IEND"
        assert b"tIME" not in chunks  # no timestamp
        width, height = png_size(figure.png)
        if size is not None:  # figsize (inches) x DPI
            assert abs(width - size[0]) <= 1 and abs(height - size[1]) <= 1
        assert 300 <= width <= 2000 and 200 <= height <= 2000
        assert figure.caption and figure.alt_text

    @pytest.mark.parametrize("kind", ["distance", "pvalues"])
    def test_byte_stable(self, kind):
        build, _ = BUILDERS[kind]
        assert build().png == build().png

    def test_render_png_of_any_matplotlib_figure(self):
        from matplotlib.figure import Figure as MplFigure

        fig = MplFigure(figsize=(2, 1))
        fig.add_subplot().plot([0, 1], [1, 0])
        png = F.render_png(fig, dpi=100)
        assert png_size(png) == (200, 100)
        assert png == F.render_png(fig, dpi=100)
        wrapped = Figure("line", "A line.", F.render_png(fig), data={"x": [0, 1]})
        assert wrapped.data == {"x": [0, 1]} and png_size(wrapped.png) == (300, 150)
        with pytest.raises(InputError, match="dpi"):
            F.render_png(fig, dpi=0)

    @pytest.mark.parametrize("layout", [None, "constrained"])
    def test_same_pixels_as_matplotlib_savefig(self, layout):
        # one Agg draw and Pillow's encoder give the pixels of matplotlib's own PNG
        # writer; opaque figures are stored as RGB, a transparent one keeps its alpha
        import io

        from matplotlib.figure import Figure as MplFigure
        from PIL import Image

        for transparent in (False, True):
            fig = MplFigure(figsize=(3, 2), layout=layout)
            if transparent:
                fig.patch.set_alpha(0.0)
            ax = fig.add_subplot()
            ax.plot([0, 1, 2], [1, 0, 2], label="a line")
            ax.set_title("Title")
            ax.legend()
            reference = io.BytesIO()
            fig.savefig(reference, format="png", dpi=120)
            ours = Image.open(io.BytesIO(F.render_png(fig, dpi=120)))
            theirs = Image.open(reference)
            assert ours.mode == ("RGBA" if transparent else "RGB")
            assert ours.size == theirs.size
            assert np.array_equal(np.asarray(ours.convert("RGBA")), np.asarray(theirs))

    def test_matplotlib_imported_lazily(self):
        code = (
            "import sys, shufflecheck.report.figures, shufflecheck.report.writer; "
            "print('matplotlib' in sys.modules)"
        )
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
        assert out.returncode == 0, out.stderr
        assert out.stdout.strip() == "False"


class TestData:
    def test_distance_data(self):
        data = _distance().data
        assert data["kind"] == "distance" and data["target"] == 0.1
        first = data["curves"][0]
        assert first["steps"] == STEPS and first["values"] == TV and first["minimum"] == 8
        assert data["curves"][1]["side"] == "upper"
        assert data["curves"][2]["low"][0] == pytest.approx(1.0)

    def test_scores_data(self):
        figure = _scores()
        data = figure.data
        assert data["decks"] == 500 == sum(data["observed_counts"])
        assert sum(data["expected_counts"]) == pytest.approx(500)
        # mean of the Bernoulli(1/j) sum is H_10 = 7381/2520 (harmonic number, exact)
        assert data["null_mean"] == pytest.approx(7381 / 2520, rel=1e-12)

    def test_pvalue_flags_default_to_alpha(self):
        tests = _pvalues().data["tests"]
        assert [t["flagged"] for t in tests] == [True, False, False]

    def test_power_unreached_recorded_as_null(self):
        curves = _power().data["curves"]
        assert curves[0]["decks"][-1] is None and curves[1]["decks"][-1] == 2000

    def test_heatmap_residual_limit(self):
        data = _heatmap("residuals").data
        assert data["limit"] >= 3.0
        assert len(data["values"]) == 12 and len(data["values"][0]) == 12


class TestStyle:
    def test_line_style_follows_how_obtained(self):
        series = []
        for name, how, side, extra in (
            ("A", "exact", None, {}),
            ("B", "bound", "upper", {}),
            ("C", "bound", "lower", {}),
            ("D", "estimate", None, {"low": [0.1] * 3, "high": [0.9] * 3}),
            ("E", "conjectured", "upper", {}),
        ):
            spec = {"label": name, "steps": [1, 2, 3], "values": [0.5] * 3}
            spec |= {"kind": how, **({"side": side} if side else {}), **extra}
            s = F._series(spec, x_key="steps", y_key="values", what="t")
            s["group"], s["minimum"], s["confidence"] = name, None, None
            series.append(s)
        with F._style():
            fig = F._draw_distance(
                series, target=0.1, metric="tv", steps_name="steps", log_scale=False, level=0.95
            )
        by_label = {line.get_label(): line for line in fig.axes[0].get_lines()}
        lines = [
            by_label[text]
            for text in (
                "A (exact)",
                "B (upper bound)",
                "C (lower bound)",
                "D (estimate)",
                "E (conjectured upper bound)",
            )
        ]
        styles = [line.get_linestyle() for line in lines]
        assert styles[:2] == ["-", "--"] and styles[3] == ":"
        # every kind has its own dash pattern: exact, upper, lower, estimate, conjectured
        patterns = {str(line._dash_pattern) for line in lines}
        assert len(patterns) == 5
        colours = {line.get_color() for line in lines}
        markers = {line.get_marker() for line in lines}
        assert colours <= set(F.SERIES_COLOURS) and len(colours) == 5 and len(markers) == 5
        target = [line for line in fig.axes[0].get_lines() if line.get_label().startswith("target")]
        assert target and target[0].get_linestyle() == "-."

    def test_palette_is_okabe_ito(self):
        # Okabe & Ito (2008), the eight colours by name
        assert F.OKABE_ITO == {
            "black": "#000000",
            "orange": "#E69F00",
            "sky blue": "#56B4E9",
            "bluish green": "#009E73",
            "yellow": "#F0E442",
            "blue": "#0072B2",
            "vermillion": "#D55E00",
            "reddish purple": "#CC79A7",
        }
        assert "#F0E442" not in F.SERIES_COLOURS  # too light for lines on white

    def test_flagged_bars_differ_by_more_than_colour(self):
        with F._style():
            fig = F._draw_pvalues(
                ["a", "b"],
                np.array([0.001, 0.5]),
                ["exact", "exact"],
                [True, False],
                0.05,
                "p",
                ["0.001", "0.5"],
            )
        bars = fig.axes[0].patches
        assert bars[0].get_hatch() and not bars[1].get_hatch()


class TestInputErrors:
    @pytest.mark.parametrize(
        "call, message",
        [
            (lambda: F.distance_figure([]), "one or more curves"),
            (
                lambda: F.distance_figure(
                    [{"label": "a", "steps": [1], "values": [1, 2], "kind": "exact"}]
                ),
                "1 steps but 2 values",
            ),
            (
                lambda: F.distance_figure(
                    [{"label": "a", "steps": [1], "values": [1], "kind": "guess"}]
                ),
                "kind must be one of",
            ),
            (
                lambda: F.distance_figure(
                    [{"label": "a", "steps": [1], "values": [1], "kind": "estimate"}]
                ),
                "confidence band",
            ),
            (
                lambda: F.distance_figure(
                    [{"label": "a", "steps": [1], "values": [0.0], "kind": "exact"}], log_scale=True
                ),
                "log scale",
            ),
            (
                lambda: F.distance_figure(
                    [{"label": "a", "steps": [1], "values": [1], "kind": "exact", "minimum": 4}]
                ),
                "minimum 4 is not one of its steps",
            ),
            (
                lambda: F.distance_figure(
                    [{"label": "a", "steps": [1], "values": [1], "kind": "exact", "colour": "red"}]
                ),
                "unknown key 'colour'",
            ),
            (
                lambda: F.distance_figure(
                    [{"label": "a", "steps": [1], "values": [float("nan")], "kind": "exact"}]
                ),
                "must be finite",
            ),
            (lambda: F.heatmap_figure([[1, -1], [0, 0]]), "counts must be >= 0"),
            (lambda: F.heatmap_figure([1, 2, 3]), "2-d"),
            (lambda: F.heatmap_figure([[1, 2]], kind="ratio"), "kind"),
            (lambda: F.pvalue_figure(["a"], [0.0], ["exact"]), "in (0, 1]"),
            (lambda: F.pvalue_figure(["a", "b"], [0.1], ["exact"]), "2 tests, 1 p-values"),
            (lambda: F.score_histogram_figure([0, 1], [0.5, 0.4]), "summing to 1"),
            (lambda: F.score_histogram_figure([0, 3], [0.5, 0.5]), "score 3 is not"),
            (
                lambda: F.power_figure([{"label": "a", "x": [1], "decks": [0], "kind": "exact"}]),
                "must be > 0",
            ),
        ],
    )
    def test_messages(self, call, message):
        with pytest.raises(InputError, match=__import__("re").escape(message)):
            call()


class TestPvalueTexts:
    def test_texts_replace_the_printed_values(self):
        # a p-value below the double range is drawn at a floor but printed as given
        figure = F.pvalue_figure(
            ["rising sequences", "cycles"],
            [1e-300, 0.4],
            ["exact", "exact"],
            alpha=0.01,
            texts=["6.5e-4846", "0.4"],
        )
        assert figure.png.startswith(b"\x89PNG")
        with pytest.raises(InputError, match="1 texts for 2 tests"):
            F.pvalue_figure(["a", "b"], [0.1, 0.2], ["exact", "exact"], texts=["x"])

    def test_tick_labels_do_not_overlap(self):
        # adjusted p-values down to the floor: the decade labels of the log axis stay apart
        # (once '1e-3011e-2581e-215...' ran together)
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        with F.keep_drawn() as kept:
            F.pvalue_figure(
                ["rising sequences", "guessing game with feedback, next-card strategy", "c"],
                [1e-300, 1e-100, 0.5],
                ["exact", "exact", "exact"],
                alpha=0.01,
            )
        fig = kept[0][1]
        canvas = FigureCanvasAgg(fig)
        canvas.draw()
        renderer = canvas.get_renderer()
        ax = fig.axes[0]
        boxes = [
            t.get_window_extent(renderer)
            for t in ax.get_xticklabels()
            if t.get_text() and ax.get_xlim()[0] <= t.get_position()[0] <= ax.get_xlim()[1]
        ]
        assert len(boxes) >= 3
        boxes.sort(key=lambda b: b.x0)
        assert all(a.x1 < b.x0 for a, b in itertools.pairwise(boxes))
        # long names wrap onto two lines, never at a hyphen
        names = [t.get_text() for t in ax.get_yticklabels()]
        assert "guessing game with feedback,\nnext-card strategy" in names
