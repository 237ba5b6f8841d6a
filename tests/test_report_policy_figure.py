"""The policy figure as a reader sees it (issue 14): one panel per procedure, a line style
per kind of number (exact, upper bound, lower bound, conjectured), legend texts that say
each thing once, singular and plural right, and every series visible on the rendered image
(checked on the matplotlib figure the report code builds, and on its pixels)."""

from __future__ import annotations

import re
import textwrap

import numpy as np
import pytest

from shufflecheck.report import figures as F

POLICY = """
[policy]
title = "Figure check (invented)"
target = 0.1
simulate = 400
seed = 11
max_repeats = 3

[[procedure]]
name = "Hand-dealt"
steps = "riffle x3, strip(packets=5), riffle x3, cut"

[[procedure]]
name = "Proposed"
steps = "riffle x8, strip(packets=5), riffle x3, cut"

[[procedure]]
name = "Strip then nine riffles"
steps = "strip, riffle x9"

[[procedure]]
name = "Ideal riffles"
steps = "riffle"
"""


@pytest.fixture(scope="module")
def drawn(tmp_path_factory):
    """The policy figure of a small policy: its Figure and the matplotlib figure behind it."""
    from shufflecheck.analyses.policy import evaluate_policy, load_policy
    from shufflecheck.report.builders.policy import policy_figure

    path = tmp_path_factory.mktemp("policy-figure") / "policy.toml"
    path.write_text(textwrap.dedent(POLICY).lstrip(), encoding="utf-8")
    result = evaluate_policy(load_policy(path))
    with F.keep_drawn() as kept:
        figure = policy_figure(result)
    ((name, fig),) = kept
    assert name == "policy"
    return figure, fig


def _panels(fig) -> dict[str, object]:
    return {ax.get_title(loc="left"): ax for ax in fig.axes if ax.get_title(loc="left")}


def _series_lines(ax) -> list:
    return [
        line
        for line in ax.get_lines()
        if len(line.get_xdata()) > 1 and not line.get_label().startswith("target")
    ]


def _legend_texts(fig) -> list[str]:
    return [t.get_text() for ax in fig.axes if ax.get_legend() for t in ax.get_legend().texts] + [
        t.get_text() for legend in fig.legends for t in legend.texts
    ]


class TestPanels:
    def test_one_panel_per_procedure(self, drawn):
        _, fig = drawn
        assert sorted(_panels(fig)) == sorted(
            ["Hand-dealt", "Proposed", "Strip then nine riffles", "Ideal riffles"]
        )

    def test_line_style_per_kind(self, drawn):
        figure, fig = drawn
        # the plotted series, in the figure's data, in drawing order per panel
        curves = figure.data["curves"]
        lines = [line for ax in _panels(fig).values() for line in _series_lines(ax)]
        assert len(lines) == len(curves)
        style = {}
        for curve, line in zip(curves, lines, strict=True):
            key = (curve["kind"], curve["side"])
            assert np.allclose(line.get_ydata(), curve["values"])
            style.setdefault(key, set()).add(
                (str(line._dash_pattern), line.get_color(), line.get_marker())
            )
        assert set(style) == {
            ("exact", None),
            ("bound", "upper"),
            ("bound", "lower"),
            ("conjectured", "upper"),
        }
        assert all(len(v) == 1 for v in style.values())  # one look per kind everywhere
        looks = [next(iter(v)) for v in style.values()]
        for part in range(3):  # dash pattern, colour and marker each tell the kinds apart
            assert len({look[part] for look in looks}) == len(looks)
        exact = next(iter(style[("exact", None)]))
        assert exact[0] == str(next(ln for ln in lines if ln.get_linestyle() == "-")._dash_pattern)

    def test_legend_says_each_thing_once(self, drawn):
        _, fig = drawn
        texts = _legend_texts(fig)
        assert "upper bound" in texts and "exact" in texts
        assert "lower bound, 99% confidence" in texts
        assert any("conjectured upper bound" in t for t in texts)
        assert len(texts) == len(set(texts))
        for text in texts:
            # no phrase repeated inside one entry ("upper bound (upper bound)")
            assert not re.search(r"\b(\w+(?: \w+)?)\b.*\(\1\)", text), text

    def test_minimum_singular_and_plural(self, drawn):
        _, fig = drawn
        notes = [t.get_text() for ax in fig.axes for t in ax.texts]
        assert "minimum: 1 repetition (upper bound)" in notes
        assert "minimum: 2 repetitions (upper bound)" in notes
        assert not any("1 repetitions" in n for n in notes)

    def test_every_series_visible_on_the_image(self, drawn):
        # render the figure and look, in each panel, for the pixels of each series' colour:
        # the hand procedure's upper bound at 1.0 (once hidden behind another procedure's
        # line at the same height) must show, and so must a lower bound under an upper one
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        _, fig = drawn
        canvas = FigureCanvasAgg(fig)
        canvas.draw()
        image = np.asarray(canvas.buffer_rgba())[:, :, :3].astype(int)
        height = image.shape[0]
        for title, ax in _panels(fig).items():
            box = ax.get_window_extent()
            x0, x1 = int(box.x0), int(box.x1)
            y0, y1 = height - int(box.y1), height - int(box.y0)
            window = image[y0:y1, x0:x1]
            for line in _series_lines(ax):
                rgb = np.array([int(line.get_color()[k : k + 2], 16) for k in (1, 3, 5)])
                close = np.abs(window - rgb).sum(axis=2) <= 30
                assert close.sum() >= 40, (title, line.get_label(), close.sum())
        # the hand procedure's upper bound is drawn at 1.0 over its whole range
        hand = _panels(fig)["Hand-dealt"]
        upper = [
            ln for ln in _series_lines(hand) if ln.get_color() == F.KIND_COLOURS[("bound", "upper")]
        ]
        assert upper and np.allclose(upper[0].get_ydata(), 1.0)
        assert hand.get_ylim()[1] > 1.0 and hand.get_ylim()[0] < 0.0  # not on the frame

    def test_lower_bound_drawn_over_upper_bound(self, drawn):
        _, fig = drawn
        for ax in _panels(fig).values():
            lines = {ln.get_color(): ln for ln in _series_lines(ax)}
            upper = lines.get(F.KIND_COLOURS[("bound", "upper")])
            lower = lines.get(F.KIND_COLOURS[("bound", "lower")])
            if upper is not None and lower is not None:
                # a smaller filled marker over a larger hollow one: both show where they meet
                assert lower.get_zorder() > upper.get_zorder()
                assert upper.get_markerfacecolor() == "white"
                assert lower.get_markersize() < upper.get_markersize()

    def test_png_matches_layout(self, drawn):
        from shufflecheck.report.document import png_size

        figure, _ = drawn
        width, height = png_size(figure.png)
        assert width == 1080 and 500 < height < 1400
        assert "one panel each" in figure.caption


class TestLegendText:
    @pytest.mark.parametrize(
        "label, how, expected",
        [
            ("Hand-dealt games", "upper bound", "Hand-dealt games (upper bound)"),
            ("bound", "upper bound", "upper bound"),
            ("upper bound", "upper bound", "upper bound"),
            ("suit colours, upper bound", "upper bound", "suit colours, upper bound"),
            ("A", "exact", "A (exact)"),
            ("ideal riffle (binomial cut)", "exact", "ideal riffle (binomial cut; exact)"),
        ],
    )
    def test_no_doubled_words(self, label, how, expected):
        assert F._legend_text(label, how) == expected

    def test_feature_curve_labels(self):
        # the mix --feature chart once read "colours, upper bound (upper bound)"
        from types import SimpleNamespace

        from shufflecheck.report.builders.mix import feature_series

        class Value(SimpleNamespace):
            pass

        rows = [
            SimpleNamespace(
                steps=k,
                value=lambda m, k=k, kind=kind: Value(kind=kind, value=0.5 / k),
                total_variation_lower=None,
                total_variation_estimate=None,
            )
            for k, kind in ((1, "exact"), (2, "bound"))
        ]
        curve = SimpleNamespace(feature="colours", rows=rows)
        series = feature_series(curve, "total_variation")
        figure = F.distance_figure(series)
        with F.keep_drawn() as kept:
            F.distance_figure(series)
        texts = [t.get_text() for t in kept[0][1].axes[0].get_legend().texts]
        assert texts == ["colours (exact)", "colours (upper bound)"]
        assert figure.data["curves"][1]["side"] == "upper"
