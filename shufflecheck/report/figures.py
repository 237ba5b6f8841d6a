"""Figures for reports, drawn with matplotlib (Agg, imported only when a figure is drawn).

Each public function takes plain data (lists, arrays, dicts), draws one chart in the
project's own style and returns a :class:`~shufflecheck.report.document.Figure` holding the
PNG and the plotted numbers (``Figure.data``, written to ``report.json``).

Visual grammar, the same on every chart:

* how a number was obtained is shown by line style as well as by the legend:
  solid = exact, dashed = rigorous bound, dotted with a shaded band = estimate with its
  confidence band; thresholds (a target, a significance level) are dash-dot lines;
* series differ by colour *and* marker shape, so a chart printed in grey still reads;
* colours come from the Okabe & Ito palette for colour-vision deficiency [1]_ (yellow is
  left out: it is too light on white); heat maps use the ColorBrewer purple-orange diverging
  scheme, rated colour-blind safe [2]_, for residuals, and cividis [3]_ for counts.

Figures are built on :class:`matplotlib.figure.Figure` directly (no pyplot state), laid out
with the constrained layout engine and rendered by :func:`render_png` (one Agg draw at a
fixed dpi, encoded by Pillow: RGB when opaque, no text chunks), so the same data and
library versions give the same bytes.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
       presentations that are friendly to colorblind people", J*Fly, 2008.
.. [2] M. Harrower and C. A. Brewer, "ColorBrewer.org: an online tool for selecting colour
       schemes for maps", The Cartographic Journal 40 (2003) 27-37.
.. [3] J. R. Nuñez, C. R. Anderton and R. S. Renslow, "Optimizing colormaps with
       consideration for color vision deficiency to enable accurate interpretation of
       scientific data", PLoS ONE 13 (2018) e0199239.
"""

from __future__ import annotations

import io
import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Any

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.common.quantity import KINDS
from shufflecheck.report.document import Figure

__all__ = [
    "DPI",
    "KIND_COLOURS",
    "KIND_LINESTYLES",
    "KIND_MARKERS",
    "LOWER_BOUND_LINESTYLE",
    "OKABE_ITO",
    "SERIES_COLOURS",
    "SERIES_MARKERS",
    "distance_figure",
    "expectation_figure",
    "figure_progress",
    "heatmap_figure",
    "keep_drawn",
    "line_style",
    "power_figure",
    "pvalue_figure",
    "render_png",
    "score_histogram_figure",
    "timeline_figure",
]

#: Resolution of every report figure, in dots per inch.
DPI = 150

#: The Okabe & Ito (2008) colours, by their published names.
OKABE_ITO: dict[str, str] = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky blue": "#56B4E9",
    "bluish green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish purple": "#CC79A7",
}
#: Colour of series 1, 2, ... (cycled beyond seven series, markers then still differ).
SERIES_COLOURS: tuple[str, ...] = tuple(
    OKABE_ITO[c]
    for c in ("blue", "vermillion", "bluish green", "reddish purple", "orange", "sky blue", "black")
)
SERIES_MARKERS: tuple[str, ...] = ("o", "s", "D", "^", "v", "P", "X", "h")
#: Line style by how the numbers were obtained (conjectured: dash-dot-dot, never solid);
#: "bound" is the style of an upper bound, a lower bound has its own (see :func:`line_style`).
KIND_LINESTYLES: dict[str, Any] = {
    "exact": "-",
    "bound": "--",
    "estimate": ":",
    "conjectured": (0, (4, 1.5, 1, 1.5, 1, 1.5)),
}
#: how a score figure names the law its expected counts come from
_LAW_WORDS = {"exact": "exact", "estimate": "estimated", "bound": "bracketed"}
#: and the style of the line it draws (:data:`KIND_LINESTYLES`)
_LINE_WORDS = {"exact": "solid", "estimate": "dotted", "bound": "dashed"}
#: A lower bound: short dashes (an upper bound has long ones, an estimate fine dots).
LOWER_BOUND_LINESTYLE: Any = (0, (1.8, 1.5))
_THRESHOLD = {"color": "#333333", "linestyle": "-.", "linewidth": 1.1}
_INK = "#222222"
_STYLE = {
    "font.family": "DejaVu Sans",
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": 9.0,
    "axes.labelcolor": _INK,
    "axes.edgecolor": "#555555",
    "axes.linewidth": 0.8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.axisbelow": True,
    "grid.color": "#dddddd",
    "grid.linewidth": 0.6,
    "xtick.color": "#444444",
    "ytick.color": "#444444",
    "xtick.labelsize": 8.5,
    "ytick.labelsize": 8.5,
    "legend.frameon": False,
    "legend.fontsize": 8.0,
    "lines.linewidth": 1.8,
    "lines.markersize": 4.5,
    "figure.facecolor": "white",
    "axes.facecolor": "white",
    "savefig.facecolor": "white",
    "hatch.linewidth": 0.8,
    "image.interpolation": "nearest",
    # our dash patterns (in line widths): long dashes for bounds, fine dots for estimates
    "lines.dashed_pattern": [3.4, 1.7],
    "lines.dotted_pattern": [0.6, 1.2],
    "lines.dashdot_pattern": [4.0, 1.2, 0.8, 1.2],
}


def render_png(figure: Any, *, dpi: int = DPI) -> bytes:
    """Render a matplotlib figure to PNG bytes, deterministically.

    Fixed ``dpi`` and no ``Software`` text chunk (PNG output from Agg carries no timestamp),
    so the same figure and matplotlib version give the same bytes. The figure is not closed.
    """
    if isinstance(dpi, bool) or not isinstance(dpi, int) or not 30 <= dpi <= 1200:
        raise InputError(f"dpi must be an integer from 30 to 1200, got {dpi!r}")
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from PIL import Image

    # Drawn once by Agg at the output resolution (laying the figure out on the way), then
    # encoded by Pillow: an opaque image (every figure here has a white background) is
    # stored as RGB, a quarter less to compress than RGBA, at zlib level 3 (about twice as
    # fast as the default 6, within a few per cent of its size). No text chunks.
    canvas, native = figure.canvas, figure.dpi
    try:
        figure.dpi = dpi
        raw, size = FigureCanvasAgg(figure).print_to_buffer()
    finally:
        figure.dpi = native
        figure.set_canvas(canvas)
    image = Image.frombuffer("RGBA", size, raw, "raw", "RGBA", 0, 1)
    if image.getextrema()[3] == (255, 255):
        image = image.convert("RGB")
    buffer = io.BytesIO()
    image.save(buffer, format="png", compress_level=3)
    return buffer.getvalue()


# --------------------------------------------------------------------------- helpers


def _new_figure(size: tuple[float, float]) -> Any:
    from matplotlib.figure import Figure as MplFigure

    return MplFigure(figsize=size, layout="constrained")


def _style() -> Any:
    import matplotlib

    return matplotlib.rc_context(_STYLE)


#: called after each figure is rendered, inside :func:`figure_progress`
_RENDERED: ContextVar[Callable[[], None] | None] = ContextVar("figure_rendered", default=None)


@contextmanager
def figure_progress(callback: Callable[[], None]) -> Iterator[None]:
    """Call ``callback()`` after each figure drawn inside the ``with`` block (for progress
    bars over report building, where the figures are most of the work)."""
    token = _RENDERED.set(callback)
    try:
        yield
    finally:
        _RENDERED.reset(token)


#: the list :func:`keep_drawn` collects into, if any
_DRAWN: ContextVar[list[tuple[str, Any]] | None] = ContextVar("figures_drawn", default=None)


@contextmanager
def keep_drawn() -> Iterator[list[tuple[str, Any]]]:
    """Collect ``(name, matplotlib Figure)`` for each figure drawn inside the ``with`` block,
    for checks on what a chart shows (its lines, styles, legend) beyond its PNG."""
    kept: list[tuple[str, Any]] = []
    token = _DRAWN.set(kept)
    try:
        yield kept
    finally:
        _DRAWN.reset(token)


def _finish(fig: Any, name: str, caption: str, alt: str, data: dict[str, Any]) -> Figure:
    figure = Figure(name=name, caption=caption, png=render_png(fig), alt=alt, data=data)
    kept = _DRAWN.get()
    if kept is not None:
        kept.append((name, fig))
    rendered = _RENDERED.get()
    if rendered is not None:
        rendered()
    return figure


def _plain_log_ticks(axis: Any) -> None:
    """Label the major ticks of a log axis as plain numbers (0.01, 0.1, 1, 10, 1,000)."""
    from matplotlib.ticker import FuncFormatter

    def label(v: float, _pos: int) -> str:
        return f"{v:,.0f}" if v >= 1 else f"{v:g}"

    axis.set_major_formatter(FuncFormatter(label))


def _numbers(values: Any, what: str, *, allow_missing: bool = False) -> np.ndarray:
    """A 1-d float array; None becomes inf when ``allow_missing`` (meaning 'not reached')."""
    if isinstance(values, (str, bytes)) or not hasattr(values, "__len__"):
        raise InputError(f"{what} must be a list of numbers")
    out = []
    for k, v in enumerate(values):
        if v is None and allow_missing:
            out.append(math.inf)
            continue
        if isinstance(v, bool) or not isinstance(v, (int, float, np.integer, np.floating)):
            raise InputError(f"{what}[{k}] must be a number, got {v!r}")
        v = float(v)
        if math.isnan(v) or (math.isinf(v) and not allow_missing):
            raise InputError(f"{what}[{k}] must be finite, got {v!r}")
        out.append(v)
    return np.asarray(out, dtype=float)


def _how(value: Any, what: str) -> str:
    if value not in KINDS:
        raise InputError(f"{what} must be one of {', '.join(KINDS)}, got {value!r}")
    return str(value)


def _check_keys(spec: Any, allowed: set[str], required: set[str], what: str) -> None:
    if not isinstance(spec, Mapping):
        raise InputError(f"{what} must be a mapping (dict), got {type(spec).__name__}")
    unknown = sorted(set(spec) - allowed)
    if unknown:
        raise InputError(
            f"{what}: unknown key {unknown[0]!r} (allowed: {', '.join(sorted(allowed))})"
        )
    missing = sorted(required - set(spec))
    if missing:
        raise InputError(f"{what}: missing key {missing[0]!r}")


def _how_phrase(how: str, side: str | None) -> str:
    if how == "bound":
        return f"{side} bound"
    if how == "conjectured" and side is not None:
        return f"conjectured {side} bound"
    return how


def _level_text(level: float) -> str:
    return f"{100 * level:.2f}".rstrip("0").rstrip(".") + "%"


def _check_level(level: float) -> float:
    if isinstance(level, bool) or not isinstance(level, (int, float)) or not 0 < level < 1:
        raise InputError(f"confidence level must be in (0, 1), got {level!r}")
    return float(level)


def _series(
    spec: Mapping[str, Any],
    *,
    x_key: str,
    y_key: str,
    what: str,
    allow_missing: bool = False,
) -> dict[str, Any]:
    label = spec["label"]
    if not isinstance(label, str) or not label.strip():
        raise InputError(f"{what}: label must be non-empty text")
    what = f"{what} {label!r}"
    x = _numbers(spec[x_key], f"{what}: {x_key}")
    y = _numbers(spec[y_key], f"{what}: {y_key}", allow_missing=allow_missing)
    if len(x) == 0:
        raise InputError(f"{what}: no points")
    if len(x) != len(y):
        raise InputError(f"{what}: {len(x)} {x_key} but {len(y)} {y_key}")
    how = _how(spec["kind"], f"{what}: kind")
    side = spec.get("side")
    if how == "bound":
        side = "upper" if side is None else side
        if side not in ("upper", "lower"):
            raise InputError(f"{what}: side must be 'upper' or 'lower', got {side!r}")
    elif how == "conjectured":
        if side not in (None, "upper", "lower"):
            raise InputError(f"{what}: side must be 'upper' or 'lower', got {side!r}")
    elif side is not None:
        raise InputError(f"{what}: side is only for bounds and conjectured bounds")
    low = high = None
    if how == "estimate":
        if "low" not in spec or "high" not in spec:
            raise InputError(f"{what}: an estimate needs its confidence band (low and high)")
        low = _numbers(spec["low"], f"{what}: low", allow_missing=allow_missing)
        high = _numbers(spec["high"], f"{what}: high", allow_missing=allow_missing)
        if len(low) != len(x) or len(high) != len(x):
            raise InputError(f"{what}: low and high need one value per point")
        finite = np.isfinite(y)
        if np.any(low[finite] > y[finite]) or np.any(high[finite] < y[finite]):
            raise InputError(f"{what}: the band must contain the estimate (low <= value <= high)")
    elif "low" in spec or "high" in spec:
        raise InputError(f"{what}: a confidence band (low, high) is only for estimates")
    return {"label": label, "x": x, "y": y, "kind": how, "side": side, "low": low, "high": high}


def _as_list(a: np.ndarray | None) -> list[float | None] | None:
    if a is None:
        return None
    return [
        None if not math.isfinite(v) else (int(v) if float(v).is_integer() else float(v))
        for v in a.tolist()
    ]


# --------------------------------------------------------------------------- distance


_DISTANCE_KEYS = {
    "label",
    "steps",
    "values",
    "kind",
    "side",
    "low",
    "high",
    "minimum",
    "group",
    "confidence",
}


def line_style(kind: str, side: str | None = None) -> Any:
    """The line style of a series: :data:`KIND_LINESTYLES`, with lower bounds apart."""
    if kind == "bound" and side == "lower":
        return LOWER_BOUND_LINESTYLE
    return KIND_LINESTYLES[kind]


def _legend_text(label: str, how_text: str) -> str:
    """``label (how)``, without saying the same words twice ("bound (upper bound)")."""
    low = label.lower()
    if how_text in low:
        return label
    if set(low.replace(",", " ").split()) <= set(how_text.replace(",", " ").split()):
        return how_text
    if label.endswith(")") and "(" in label:  # "ideal riffle (binomial cut; exact)"
        return f"{label[:-1]}; {how_text})"
    return f"{label} ({how_text})"


def _how_legend(s: Mapping[str, Any]) -> str:
    """How a series was obtained, for its legend entry (with a bound's confidence)."""
    text = _how_phrase(s["kind"], s["side"])
    if s.get("confidence") is not None:
        text += f", {_level_text(s['confidence'])} confidence"
    return text


def _minimum_text(s: Mapping[str, Any], steps_name: str) -> str:
    unit = steps_name[:-1] if s["minimum"] == 1 and steps_name.endswith("s") else steps_name
    return f"minimum: {s['minimum']:g} {unit} ({_how_phrase(s['kind'], s['side'])})"


def _bottom_margin(ax: Any, log_scale: bool, top: float) -> None:
    """Leave room below 0 and above the top value: a curve at 0 or at 1 is not drawn on the
    axis line or clipped at the frame."""
    if log_scale:
        ax.set_yscale("log")
        _plain_log_ticks(ax.yaxis)
    else:
        ax.set_ylim(-0.04 * top, 1.06 * top)


def _plot_series(
    ax: Any,
    s: Mapping[str, Any],
    colour: str,
    marker: str,
    level: float,
    log_scale: bool,
    label: str | None,
) -> None:
    """One series: its line (style by kind and side), markers (hollow for upper bounds, so a
    lower bound at the same value shows through), and an estimate's band."""
    hollow = s["kind"] in ("bound", "conjectured") and s["side"] == "upper"
    lower = s["kind"] == "bound" and s["side"] == "lower"
    ax.plot(
        s["x"],
        s["y"],
        color=colour,
        marker=marker,
        markersize=6.5 if hollow else 4.0 if lower else 4.5,
        markerfacecolor="white" if hollow else colour,
        markeredgecolor=colour,
        markeredgewidth=1.3 if hollow else 1.0,
        linestyle=line_style(s["kind"], s["side"]),
        label=label if label is not None else "_nolegend_",
        # bounds under exact values, lower bounds over upper ones (a smaller, filled marker
        # inside a larger hollow one shows both where they meet)
        zorder={"exact": 3.4, "estimate": 3.3}.get(s["kind"], 3.2 if lower else 3.0),
    )
    if s["kind"] == "estimate":
        low = s["low"]
        if log_scale:  # a band reaching 0 is drawn down to the bottom of the axis
            low = np.where(low > 0, low, np.nan)
        ax.fill_between(
            s["x"],
            low,
            s["high"],
            color=colour,
            alpha=0.2,
            linewidth=0,
            zorder=2,
            label=(f"{s['label']}: {_level_text(level)} band" if label is not None else None),
        )


def _ring(ax: Any, s: Mapping[str, Any]) -> tuple[float, float]:
    k = int(np.flatnonzero(s["x"] == s["minimum"])[0])
    ax.plot(
        [s["x"][k]],
        [s["y"][k]],
        marker="o",
        markersize=13,
        markerfacecolor="none",
        markeredgecolor=_INK,
        markeredgewidth=1.5,
        linestyle="none",
        zorder=4,
    )
    return float(s["x"][k]), float(s["y"][k])


def _ring_handle(ax: Any) -> Any:
    (handle,) = ax.plot(
        [],
        [],
        marker="o",
        markersize=9,
        markerfacecolor="none",
        markeredgecolor=_INK,
        linestyle="none",
        label="chosen minimum",
    )
    return handle


def _top(series: list[dict[str, Any]], target: float | None) -> float:
    values = [float(np.max(s["y"])) for s in series]
    values += [float(np.max(s["high"])) for s in series if s["high"] is not None]
    if target is not None:
        values.append(target)
    return max(max(values), 1e-12)


def _draw_distance(
    series: list[dict[str, Any]],
    *,
    target: float | None,
    metric: str,
    steps_name: str,
    log_scale: bool,
    level: float,
) -> Any:
    entries = len(series) + sum(x["kind"] == "estimate" for x in series)
    entries += (target is not None) + any(x["minimum"] is not None for x in series)
    # many curves: a taller figure with the legend under the plot, off the lines
    fig = _new_figure((7.2, 4.4 + 0.16 * entries) if entries > 6 else (7.2, 4.4))
    ax = fig.add_subplot()
    groups: dict[str, int] = {}
    notes: list[tuple[float, float, str]] = []
    for s in series:
        g = groups.setdefault(s["group"], len(groups))
        colour = SERIES_COLOURS[g % len(SERIES_COLOURS)]
        marker = SERIES_MARKERS[g % len(SERIES_MARKERS)]
        _plot_series(
            ax, s, colour, marker, level, log_scale, _legend_text(s["label"], _how_legend(s))
        )
        if s["minimum"] is not None:
            x, y = _ring(ax, s)
            notes.append((x, y, _minimum_text(s, steps_name)))
    if target is not None:
        ax.axhline(target, **_THRESHOLD, label=f"target = {target:g}", zorder=1)
    _bottom_margin(ax, log_scale, _top(series, target))
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    # minimum labels: stacked in the plot's free upper area, each with a line to its point
    to_axes = ax.transAxes.inverted()
    for k, (x, y, text) in enumerate(sorted(notes)):
        fx, _ = to_axes.transform(ax.transData.transform((x, y)))
        ax.annotate(
            text,
            xy=(x, y),
            xytext=(min(fx + 0.04, 0.6), 0.3 + 0.09 * k),
            textcoords="axes fraction",
            fontsize=8,
            color=_INK,
            arrowprops={"arrowstyle": "-", "color": _INK, "linewidth": 0.8},
            zorder=5,
        )
    ax.set_xlabel(f"number of {steps_name}")
    ax.set_ylabel(f"{metric} to random" + (" (log scale)" if log_scale else ""))
    if any(s["minimum"] is not None for s in series):
        _ring_handle(ax)
    if entries > 6:
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=1, fontsize=7.5)
    else:
        ax.legend(loc="best")
    return fig


#: Colour of each kind of number in a chart of panels (one panel per group), where colour is
#: free to say the kind as well as the line style does.
KIND_COLOURS: dict[tuple[str, str | None], str] = {
    ("exact", None): OKABE_ITO["blue"],
    ("bound", "upper"): OKABE_ITO["vermillion"],
    ("bound", "lower"): OKABE_ITO["bluish green"],
    ("estimate", None): OKABE_ITO["reddish purple"],
    ("conjectured", "upper"): OKABE_ITO["orange"],
    ("conjectured", "lower"): OKABE_ITO["orange"],
    ("conjectured", None): OKABE_ITO["orange"],
}
#: Marker of each kind in a chart of panels: bounds point to where the true value lies
#: (an upper bound's triangle points down, a lower bound's up).
KIND_MARKERS: dict[tuple[str, str | None], str] = {
    ("exact", None): "o",
    ("bound", "upper"): "v",
    ("bound", "lower"): "^",
    ("estimate", None): "D",
    ("conjectured", "upper"): "s",
    ("conjectured", "lower"): "s",
    ("conjectured", None): "s",
}


def _legend_rank(text: str) -> int:
    """Legend order in panels: exact, upper bound, lower bound, estimate, conjectured, then
    the target and the ring."""
    for word, rank in (
        ("chosen minimum", 7),
        ("target", 6),
        ("conjecture", 5),
        (" band", 4),
        ("estimate", 3),
        ("lower bound", 2),
        ("upper bound", 1),
    ):
        if word in text:
            return rank
    return 0


def _free_spot(
    ax: Any, members: list[dict[str, Any]], width: float, index: int
) -> tuple[float, float, str]:
    """Where a note of ``width`` (axes fraction) crosses no curve of the panel: the first free
    place from the top right, then the top left, down the panel (axes coordinates)."""
    to_axes = (ax.transData + ax.transAxes.inverted()).transform
    paths = []
    for s in members:
        points = to_axes(np.column_stack([s["x"], s["y"]]))
        # the segments between the points, sampled finely
        t = np.linspace(0.0, 1.0, 25)[:, None, None]
        paths.append((points[:-1] * (1 - t) + points[1:] * t).reshape(-1, 2))
        paths.append(points)
    every = np.concatenate(paths) if paths else np.zeros((0, 2))
    half = 0.07
    for y in (0.86, 0.72, 0.58, 0.44, 0.30):
        y -= 0.14 * index
        for x, ha, x0, x1 in (
            (0.98, "right", 0.98 - width, 0.98),
            (0.03, "left", 0.03, 0.03 + width),
        ):
            inside = (
                (every[:, 0] >= x0 - 0.02)
                & (every[:, 0] <= x1 + 0.02)
                & (every[:, 1] >= y - half)
                & (every[:, 1] <= y + half)
            )
            if not inside.any():
                return x, y, ha
    return 0.98, 0.58 - 0.14 * index, "right"


def _draw_distance_panels(
    series: list[dict[str, Any]],
    *,
    target: float | None,
    metric: str,
    steps_name: str,
    log_scale: bool,
    level: float,
) -> Any:
    """One small panel per group (a procedure), with a shared distance axis; the kinds of
    number differ by colour, marker and line style, explained once in a shared legend."""
    import textwrap

    from matplotlib.ticker import MaxNLocator

    groups: dict[str, list[dict[str, Any]]] = {}
    for s in series:
        groups.setdefault(s["group"], []).append(s)
    count = len(groups)
    cols = 2
    rows = -(-count // cols)
    spare = rows * cols > count  # an empty cell: the legend goes there
    fig = _new_figure((7.2, 1.95 * rows + (0.35 if spare else 1.3)))
    axes = fig.subplots(rows, cols, sharey=True, squeeze=False)
    top = _top(series, target)
    handles: dict[str, Any] = {}
    panel_notes: list[tuple[Any, list[dict[str, Any]], list[str]]] = []
    for k, (group, members) in enumerate(groups.items()):
        ax = axes[k // cols][k % cols]
        ax.set_title("\n".join(textwrap.wrap(group, 44)), fontsize=8.5, loc="left")
        notes = []
        for s in members:
            key = (s["kind"], s["side"])
            text = _legend_text(_how_legend(s), _how_legend(s))
            if s["kind"] == "conjectured" and s["label"] != group:
                text = _legend_text(s["label"].removeprefix(f"{group}, "), _how_legend(s))
            _plot_series(ax, s, KIND_COLOURS[key], KIND_MARKERS[key], level, log_scale, text)
            if s["minimum"] is not None:
                _ring(ax, s)
                notes.append(_minimum_text(s, steps_name))
        if target is not None:
            ax.axhline(target, **_THRESHOLD, label=f"target = {target:g}", zorder=1)
        for line in ax.get_lines() + list(ax.collections):
            label = line.get_label()
            if label and not label.startswith("_"):
                handles.setdefault(label, line)
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))
        lo, hi = (
            float(min(np.min(s["x"]) for s in members)),
            float(max(np.max(s["x"]) for s in members)),
        )
        pad = 0.25 if hi - lo <= 4 else 0.4
        ax.set_xlim(lo - pad, hi + pad)
        ax.tick_params(labelsize=7.5)
        ax.yaxis.set_tick_params(labelleft=True)
        if notes:
            panel_notes.append((ax, members, notes))
    _bottom_margin(axes[0][0], log_scale, top)
    # each minimum's note where no curve runs (found on the final axis limits)
    for ax, members, notes in panel_notes:
        width = (fig.get_figwidth() / cols) * 0.88
        for j, text in enumerate(notes):
            x, y, ha = _free_spot(ax, members, len(text) * 7.5 * 0.55 / 72 / width, j)
            ax.text(
                x,
                y,
                text,
                transform=ax.transAxes,
                ha=ha,
                va="center",
                fontsize=7.5,
                color=_INK,
                zorder=6,
            )
    if any(s["minimum"] is not None for s in series):
        handles["chosen minimum"] = _ring_handle(axes[0][0])
    for ax in axes[-1][: count - (rows - 1) * cols]:
        ax.set_xlabel(f"number of {steps_name}", fontsize=9)
    fig.supylabel(f"{metric} to random" + (" (log scale)" if log_scale else ""), fontsize=9)
    handles = dict(sorted(handles.items(), key=lambda kv: _legend_rank(kv[0])))
    if spare:
        legend_ax = axes[-1][-1]
        legend_ax.axis("off")
        legend_ax.legend(
            list(handles.values()), list(handles), loc="center", fontsize=7.5, borderaxespad=0
        )
    else:
        for ax in axes[-1][count % cols or cols :]:
            ax.axis("off")
        fig.legend(
            list(handles.values()), list(handles), loc="outside lower center", ncol=2, fontsize=7.5
        )
    return fig


def distance_figure(
    curves: Sequence[Mapping[str, Any]],
    *,
    target: float | None = None,
    metric: str = "total variation distance",
    steps_name: str = "steps",
    log_scale: bool = False,
    level: float = 0.95,
    name: str = "distance",
    caption: str | None = None,
    panels: bool = False,
) -> Figure:
    """Distance to random against the number of steps, one or several curves on one chart.

    Parameters
    ----------
    curves : sequence of dict
        One dict per curve with keys ``label`` (text), ``steps`` (step counts), ``values``
        (distances), ``kind`` (``"exact"``, ``"bound"`` or ``"estimate"``); for a bound
        optionally ``side`` (``"upper"``, the default, or ``"lower"``); for an estimate
        ``low`` and ``high`` (its confidence band, required); optionally ``minimum`` (a step
        count in ``steps`` to mark as the chosen minimum) and ``group`` (curves with the same
        group share colour and marker, e.g. the exact values and a bound for one procedure;
        default: the label); for a bound that holds at a confidence level (a lower bound
        from simulation), ``confidence``, shown in the legend.
    target : float or None
        Drawn as a horizontal dash-dot line.
    metric : str
        Name of the distance, for the axis label (unitless; say ``"KL divergence (bits)"``
        for a quantity with a unit).
    steps_name : str
        What a step is, plural (``"riffles"``, ``"passes"``), for the axis label.
    log_scale : bool
        Logarithmic distance axis (every value must then be > 0).
    level : float
        Confidence level of the estimate bands, for the legend and caption.
    name, caption : str
        File stem and caption of the figure (a caption is written if none is given).
    panels : bool
        One small panel per group (shared distance axis) instead of every curve on one
        chart: for many groups whose curves would hide one another. In panels the kind of
        number sets colour and marker as well as line style (:data:`KIND_COLOURS`,
        :data:`KIND_MARKERS`), and one legend explains them.

    Returns
    -------
    Figure
        PNG at :data:`DPI` (1080 x 660 pixels; taller, with the legend under the plot, when
        the legend has more than six entries; 1080 wide and about 290 high per row of two
        panels with ``panels``) and ``data`` with every plotted number.
    """
    level = _check_level(level)
    if isinstance(curves, Mapping) or not len(curves):
        raise InputError("distance figure needs a list of one or more curves")
    series = []
    for k, spec in enumerate(curves):
        what = f"distance figure, curve {k + 1}"
        _check_keys(spec, _DISTANCE_KEYS, {"label", "steps", "values", "kind"}, what)
        s = _series(spec, x_key="steps", y_key="values", what=what)
        s["group"] = str(spec.get("group", s["label"]))
        minimum = spec.get("minimum")
        if minimum is not None and not np.any(s["x"] == minimum):
            raise InputError(f"{what}: minimum {minimum!r} is not one of its steps")
        s["minimum"] = minimum
        confidence = spec.get("confidence")
        if confidence is not None:
            if s["kind"] != "bound":
                raise InputError(f"{what}: confidence is only for bounds")
            confidence = _check_level(confidence)
        s["confidence"] = confidence
        if log_scale and np.any(s["y"] <= 0):
            raise InputError(f"{what}: a value <= 0 cannot be shown on a log scale")
        series.append(s)
    if target is not None:
        if isinstance(target, bool) or not isinstance(target, (int, float)):
            raise InputError(f"target must be a number, got {target!r}")
        if not math.isfinite(target) or (log_scale and target <= 0):
            raise InputError(f"target {target!r} cannot be drawn")
    with _style():
        draw = _draw_distance_panels if panels else _draw_distance
        fig = draw(
            series,
            target=target,
            metric=metric,
            steps_name=steps_name,
            log_scale=log_scale,
            level=level,
        )
        if caption is None:
            present = {(s["kind"], s["side"]) for s in series}
            styles = [
                text
                for key, text in (
                    (("exact", None), "solid = exact"),
                    (("bound", "upper"), "long dashes = rigorous upper bound"),
                    (("bound", "lower"), "short dashes = lower bound"),
                    (
                        ("estimate", None),
                        "dotted with a shaded band = estimate with its "
                        f"{_level_text(level)} confidence band",
                    ),
                )
                if key in present
            ]
            caption = (
                f"{metric[:1].upper()}{metric[1:]} to random against the number of "
                f"{steps_name}{', one panel each' if panels else ''}."
            )
            if styles:
                caption += f" Line style shows how each value was obtained: {', '.join(styles)}."
            if panels:
                caption += " Colour and marker say the same (triangles point to the true value)."
            if any(s["kind"] == "conjectured" for s in series):
                caption += (
                    " Dash-dot-dot = conjectured: it rests on an unproven statement, is not "
                    "a bound and certifies nothing."
                )
            if target is not None:
                caption += " The dash-dot line is the target."
            if any(s["minimum"] is not None for s in series):
                caption += " A ring marks the chosen minimum."
        data = {
            "kind": "distance",
            "metric": metric,
            "steps_name": steps_name,
            "log_scale": log_scale,
            "target": target,
            "level": level,
            "curves": [
                {
                    "label": s["label"],
                    "group": s["group"],
                    "kind": s["kind"],
                    "side": s["side"],
                    "steps": _as_list(s["x"]),
                    "values": s["y"].tolist(),
                    "low": None if s["low"] is None else s["low"].tolist(),
                    "high": None if s["high"] is None else s["high"].tolist(),
                    "minimum": s["minimum"],
                    "confidence": s["confidence"],
                }
                for s in series
            ],
        }
        return _finish(fig, name, caption, caption, data)


# --------------------------------------------------------------------------- heat map


def _draw_heatmap(
    matrix: np.ndarray,
    *,
    kind: str,
    limit: float,
    row_name: str,
    col_name: str,
    value_name: str,
    row_labels: Sequence[str] | None,
    col_labels: Sequence[str] | None,
) -> Any:
    rows, cols = matrix.shape
    width = 6.8
    height = min(max(2.6, width * rows / cols * 0.86 + 0.9), 8.0)
    fig = _new_figure((width, height))
    ax = fig.add_subplot()
    ax.grid(False)
    if kind == "residuals":
        cmap, vmin, vmax = "PuOr_r", -limit, limit
    else:
        cmap, vmin, vmax = "cividis", 0.0, max(float(matrix.max()), 1.0)
    image = ax.imshow(
        matrix,
        cmap=cmap,
        vmin=vmin,
        vmax=vmax,
        aspect="equal" if rows == cols else "auto",
        interpolation="nearest",
        extent=(0.5, cols + 0.5, rows + 0.5, 0.5),
    )
    bar = fig.colorbar(image, ax=ax, shrink=0.85, pad=0.02)
    bar.set_label(value_name)
    bar.outline.set_linewidth(0.6)
    for axis, count, labels in ((ax.xaxis, cols, col_labels), (ax.yaxis, rows, row_labels)):
        step = max(1, math.ceil(count / 13))
        ticks = list(range(1, count + 1, step))
        axis.set_ticks(ticks)
        if labels is not None:
            axis.set_ticklabels([labels[t - 1] for t in ticks])
    for side in ("top", "right", "left", "bottom"):
        ax.spines[side].set_visible(True)
    ax.set_xlabel(col_name)
    ax.set_ylabel(row_name)
    return fig


def heatmap_figure(
    matrix: Any,
    *,
    kind: str = "counts",
    limit: float | None = None,
    row_name: str = "card (reference order, 1 = top)",
    col_name: str = "position in the deck (1 = top)",
    value_name: str | None = None,
    row_labels: Sequence[str] | None = None,
    col_labels: Sequence[str] | None = None,
    name: str = "positions",
    caption: str | None = None,
) -> Figure:
    """Heat map of a rows x columns table, e.g. how often each card was found at each position.

    Parameters
    ----------
    matrix : 2-d array-like of numbers
        ``matrix[i][j]`` for row ``i`` (card) and column ``j`` (position), as given (nothing
        is computed here).
    kind : {"counts", "residuals"}
        ``"counts"``: non-negative counts on the sequential cividis scale from 0.
        ``"residuals"``: signed standardised residuals on a diverging purple-orange scale
        centred at 0 (orange = more often than expected, purple = less often).
    limit : float or None
        For residuals, the colour scale runs from ``-limit`` to ``limit``; default
        ``max(3, largest |residual|)``, so that residuals within ±3 (ordinary chance
        variation for one cell) stay pale.
    row_name, col_name, value_name : str
        Axis and colour-bar titles.
    row_labels, col_labels : sequence of str or None
        Tick labels (e.g. card codes); default 1, 2, ...
    name, caption : str

    Returns
    -------
    Figure
    """
    if kind not in ("counts", "residuals"):
        raise InputError(f"heat map kind must be 'counts' or 'residuals', got {kind!r}")
    try:
        array = np.asarray(matrix, dtype=float)
    except (TypeError, ValueError):
        raise InputError("heat map matrix must be a rectangular table of numbers") from None
    if array.ndim != 2 or array.shape[0] < 1 or array.shape[1] < 1:
        raise InputError(f"heat map matrix must be 2-d and non-empty, got shape {array.shape}")
    if not np.all(np.isfinite(array)):
        raise InputError("heat map matrix must hold finite numbers only")
    if kind == "counts" and np.any(array < 0):
        raise InputError("heat map counts must be >= 0 (use kind='residuals' for signed values)")
    for labels, count, what in (
        (row_labels, array.shape[0], "row"),
        (col_labels, array.shape[1], "column"),
    ):
        if labels is not None and len(labels) != count:
            raise InputError(f"heat map: {len(labels)} {what} labels for {count} {what}s")
    if kind == "residuals":
        largest = float(np.max(np.abs(array)))
        limit = max(3.0, largest) if limit is None else float(limit)
        if not limit > 0:
            raise InputError(f"heat map limit must be > 0, got {limit!r}")
    if value_name is None:
        value_name = "standardised residual" if kind == "residuals" else "number of decks"
    with _style():
        fig = _draw_heatmap(
            array,
            kind=kind,
            limit=limit or 0.0,
            row_name=row_name,
            col_name=col_name,
            value_name=value_name,
            row_labels=row_labels,
            col_labels=col_labels,
        )
        if caption is None:
            if kind == "residuals":
                caption = (
                    f"Standardised residuals by {row_name} and {col_name}: orange = more often "
                    "than expected under a random deck, purple = less often; the scale runs "
                    f"from -{limit:g} to {limit:g}."
                )
            else:
                caption = f"Counts by {row_name} and {col_name}."
        data = {
            "kind": "heatmap",
            "values_kind": kind,
            "row_name": row_name,
            "col_name": col_name,
            "value_name": value_name,
            "limit": limit if kind == "residuals" else None,
            "row_labels": list(row_labels) if row_labels is not None else None,
            "col_labels": list(col_labels) if col_labels is not None else None,
            "values": [[int(v) if v.is_integer() else v for v in row] for row in array.tolist()],
        }
        return _finish(fig, name, caption, caption, data)


# --------------------------------------------------------------------------- p-values


#: gap between the right edge of the p-value bars' axes and the printed values (points)
_VALUE_PAD_POINTS = 3.5


def _draw_pvalues(
    tests: list[str],
    pvalues: np.ndarray,
    how: list[str],
    flagged: list[bool],
    alpha: float,
    xlabel: str,
    texts: list[str],
) -> Any:
    count = len(tests)
    fig = _new_figure((7.2, 1.3 + 0.36 * count))
    ax = fig.add_subplot()
    y = np.arange(count)
    low = min(float(pvalues.min()), alpha) / 4
    left = 10.0 ** math.floor(math.log10(low))
    colours = [OKABE_ITO["vermillion"] if f else OKABE_ITO["sky blue"] for f in flagged]
    hatches = ["////" if f else "" for f in flagged]
    bars = ax.barh(
        y,
        1.0 - pvalues,
        left=pvalues,
        height=0.62,
        color=colours,
        edgecolor=_INK,
        linewidth=0.7,
        zorder=2,
    )
    for bar, hatch in zip(bars, hatches, strict=True):
        bar.set_hatch(hatch)
    ax.axvline(alpha, **_THRESHOLD, zorder=3, label=f"alpha = {alpha:g}")
    ax.set_xscale("log")
    from matplotlib.ticker import LogLocator

    # at most six decade ticks, so labels such as 1e-300 never run into each other
    ax.xaxis.set_major_locator(LogLocator(base=10.0, numticks=6))
    _plain_log_ticks(ax.xaxis)
    ax.set_xlim(left, 1.0)
    ax.set_ylim(count - 0.5, -0.5)
    ax.set_yticks(y)
    # long test names on two lines, so the bars keep most of the width
    import textwrap

    ax.set_yticklabels(
        ["\n".join(textwrap.wrap(t, 34, break_on_hyphens=False)) or t for t in tests],
        linespacing=0.95,
    )
    for tick, f in zip(ax.get_yticklabels(), flagged, strict=True):
        if f:
            tick.set_fontweight("bold")
    # each value at the right end of its row, as a text beside the axes (a secondary axis
    # would draw the same labels as its ticks, at the cost of a whole second axes)
    for k in range(count):
        ax.annotate(
            f"{texts[k]} ({how[k]})" + (" flagged" if flagged[k] else ""),
            xy=(1.0, y[k]),
            xycoords=("axes fraction", "data"),
            xytext=(_VALUE_PAD_POINTS, 0),
            textcoords="offset points",
            ha="left",
            va="center",
            fontsize=8,
            color=_STYLE["ytick.color"],
            fontweight="bold" if flagged[k] else "normal",
            annotation_clip=False,
        )
    from matplotlib.patches import Patch

    handles = [
        Patch(facecolor=OKABE_ITO["vermillion"], edgecolor=_INK, hatch="////", label="flagged"),
        Patch(facecolor=OKABE_ITO["sky blue"], edgecolor=_INK, label="not flagged"),
        ax.get_lines()[0],
    ]
    ax.legend(
        handles=handles, loc="lower left", bbox_to_anchor=(0.0, 1.0), ncols=3, borderaxespad=0.3
    )
    ax.grid(axis="y", visible=False)
    ax.set_xlabel(xlabel)
    return fig


def pvalue_figure(
    tests: Sequence[str],
    pvalues: Sequence[float],
    how: Sequence[str],
    *,
    alpha: float = 0.05,
    flagged: Sequence[bool] | None = None,
    texts: Sequence[str] | None = None,
    xlabel: str = "adjusted p-value (log scale)",
    name: str = "pvalues",
    caption: str | None = None,
) -> Figure:
    """Adjusted p-values per test as horizontal bars on a log axis, with the level alpha.

    Each bar runs from the p-value to 1, so a longer bar means stronger evidence. Flagged
    tests are hatched, bold and marked ``flagged`` in words, not by colour alone.

    Parameters
    ----------
    tests : sequence of str
        Test names, drawn top to bottom in this order.
    pvalues : sequence of float
        Adjusted p-values in (0, 1].
    how : sequence of str
        How each p-value was obtained (``"exact"`` or ``"estimate"``; shown beside it).
    alpha : float
        Family-wise significance level, drawn as a dash-dot line.
    flagged : sequence of bool or None
        Which tests to flag; default: those with p-value <= alpha.
    texts : sequence of str or None
        The p-value printed beside each bar (default: the value to 3 digits); use it for
        p-values below the double range, drawn at a floor but printed exactly.
    xlabel, name, caption : str

    Returns
    -------
    Figure
    """
    names = [str(t) for t in tests]
    p = _numbers(pvalues, "p-value figure: pvalues")
    labels = [_how(h, "p-value figure: how") for h in how]
    if not names:
        raise InputError("p-value figure needs at least one test")
    if len(p) != len(names) or len(labels) != len(names):
        raise InputError(
            f"p-value figure: {len(names)} tests, {len(p)} p-values, {len(labels)} labels"
        )
    bad = [k for k in range(len(p)) if not 0 < p[k] <= 1]
    if bad:
        raise InputError(
            f"p-value figure: p-value of {names[bad[0]]!r} must be in (0, 1], got {p[bad[0]]!r}"
        )
    if isinstance(alpha, bool) or not isinstance(alpha, (int, float)) or not 0 < alpha < 1:
        raise InputError(f"alpha must be in (0, 1), got {alpha!r}")
    marks = [bool(v <= alpha) for v in p] if flagged is None else [bool(f) for f in flagged]
    if len(marks) != len(names):
        raise InputError(f"p-value figure: {len(marks)} flags for {len(names)} tests")
    shown = [f"{v:.3g}" for v in p] if texts is None else [str(t) for t in texts]
    if len(shown) != len(names):
        raise InputError(f"p-value figure: {len(shown)} texts for {len(names)} tests")
    with _style():
        fig = _draw_pvalues(names, p, labels, marks, float(alpha), xlabel, shown)
        if caption is None:
            caption = (
                f"Adjusted p-value of each test (log scale); each bar runs from the p-value "
                f"to 1, so longer bars mean stronger evidence against a random deck. The "
                f"dash-dot line is the level alpha = {alpha:g}; flagged tests are hatched, "
                "in bold and marked 'flagged'."
            )
        data = {
            "kind": "pvalues",
            "alpha": float(alpha),
            "tests": [
                {"test": t, "pvalue": float(v), "kind": h, "flagged": f}
                for t, v, h, f in zip(names, p, labels, marks, strict=True)
            ],
        }
        return _finish(fig, name, caption, caption, data)


# --------------------------------------------------------------------------- scores


def _draw_scores(
    observed: np.ndarray,
    expected: np.ndarray,
    *,
    observed_mean: float,
    null_mean: float,
    shown: int,
    score_name: str,
    count_name: str,
    sample_label: str = "recorded decks",
    null_label: str = "a random deck",
    null_kind: str = "exact",
    first: int = 0,
) -> Any:
    fig = _new_figure((7.2, 4.2))
    ax = fig.add_subplot()
    k = np.arange(first, shown)
    ax.bar(
        k,
        observed[first:shown],
        width=0.72,
        color=OKABE_ITO["sky blue"],
        edgecolor=_INK,
        linewidth=0.7,
        label=sample_label,
        zorder=2,
    )
    ax.step(
        k,
        expected[first:shown],
        where="mid",
        color=_INK,
        linewidth=1.0,
        linestyle=KIND_LINESTYLES[null_kind],
        zorder=3,
    )
    ax.plot(
        k,
        expected[first:shown],
        color=_INK,
        marker="o",
        markersize=4.5,
        linestyle="none",
        label=f"expected under {null_label} ({_LAW_WORDS[null_kind]} law)",
        zorder=4,
    )
    ax.axvline(
        null_mean,
        color=_INK,
        linewidth=1.0,
        linestyle=KIND_LINESTYLES[null_kind],
        label=f"mean under {null_label} ({_LAW_WORDS[null_kind]})",
        zorder=1,
    )
    ax.axvline(
        observed_mean,
        color=OKABE_ITO["vermillion"],
        linewidth=1.8,
        linestyle=KIND_LINESTYLES["estimate"],
        label=f"mean of the {sample_label}",
        zorder=1,
    )
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_xlim(first - 0.6, shown - 0.4)
    ax.set_ylim(bottom=0)
    ax.set_xlabel(score_name)
    ax.set_ylabel(count_name)
    ax.grid(axis="x", visible=False)
    ax.legend(loc="upper right")
    return fig


def score_histogram_figure(
    scores: Sequence[int],
    null_pmf: Sequence[float],
    *,
    score_name: str = "score per deck",
    count_name: str = "number of decks",
    name: str = "scores",
    caption: str | None = None,
    sample_label: str = "recorded decks",
    null_label: str = "a random deck",
    null_kind: str = "exact",
    null_note: str = "",
) -> Figure:
    """Histogram of per-deck scores of a log against the exact null law of the score.

    Bars: how many recorded decks had each score. Points joined by a step line: the expected
    number under a random deck, ``decks * null_pmf[k]``. Vertical lines: the mean of the
    recorded decks (dotted) and the null mean (solid).

    Parameters
    ----------
    scores : sequence of int
        One score per recorded deck, each in ``0 .. len(null_pmf) - 1``.
    null_pmf : sequence of float
        ``null_pmf[k]`` is the probability of score ``k`` under a random deck (sums to 1
        within 1e-9).
    score_name, count_name, name, caption : str
    sample_label, null_label : str
        How the bars and the reference law are named in the legend (``recorded shoes``,
        ``a random shoe``).
    null_kind : {"exact", "estimate", "bound"}
        How the reference law was obtained (its line style follows); ``bound`` for a law
        known to within a stated bracket (say how wide in ``null_note``).
    null_note : str
        Added to the default caption after the kind of the reference law (how wide a
        bracket is, say).

    Returns
    -------
    Figure
        The score axis runs from just before the first to just after the last score that
        was recorded or whose expected count is at least 0.5; ``data`` holds the whole law.
    """
    if null_kind not in _LAW_WORDS:
        raise InputError(f"score figure: null_kind must be one of {sorted(_LAW_WORDS)}")
    pmf = _numbers(null_pmf, "score figure: null_pmf")
    if len(pmf) == 0 or np.any(pmf < 0) or abs(float(pmf.sum()) - 1.0) > 1e-9:
        raise InputError("score figure: null_pmf must be probabilities summing to 1")
    values = _numbers(scores, "score figure: scores")
    if len(values) == 0:
        raise InputError("score figure: no scores")
    if np.any(values != np.round(values)) or np.any(values < 0) or np.any(values >= len(pmf)):
        bad = next(v for v in values if v != round(v) or not 0 <= v < len(pmf))
        raise InputError(
            f"score figure: score {bad:g} is not a whole number from 0 to {len(pmf) - 1}"
        )
    ints = values.astype(np.int64)
    observed = np.bincount(ints, minlength=len(pmf)).astype(float)
    decks = len(ints)
    expected = decks * pmf
    visible = np.flatnonzero((observed > 0) | (expected >= 0.5))
    shown = int(visible.max()) + 2 if len(visible) else len(pmf)
    shown = min(shown, len(pmf))
    # and starts just before the first (a shoe's score cannot fall below its largest count)
    first = max(0, int(visible.min()) - 1) if len(visible) else 0
    null_mean = float(np.dot(np.arange(len(pmf)), pmf))
    observed_mean = float(ints.mean())
    with _style():
        fig = _draw_scores(
            observed,
            expected,
            observed_mean=observed_mean,
            null_mean=null_mean,
            shown=shown,
            score_name=score_name,
            count_name=count_name,
            sample_label=sample_label,
            null_label=null_label,
            null_kind=null_kind,
            first=first,
        )
        if caption is None:
            note = f"; {null_note}" if null_note else ""
            caption = (
                f"{score_name[:1].upper()}{score_name[1:]} in the {sample_label} (bars) "
                f"against the number expected under {null_label} (points on a step line, "
                f"{_LAW_WORDS[null_kind]} law{note}). The dotted line is the mean of the "
                f"{sample_label}, the {_LINE_WORDS[null_kind]} line the mean under "
                f"{null_label}."
            )
        data = {
            "kind": "scores",
            "score_name": score_name,
            "decks": decks,
            "observed_counts": [int(v) for v in observed],
            "null_pmf": pmf.tolist(),
            "expected_counts": expected.tolist(),
            "observed_mean": observed_mean,
            "null_mean": null_mean,
        }
        return _finish(fig, name, caption, caption, data)


# --------------------------------------------------------------------------- power


_POWER_KEYS = {"label", "x", "decks", "kind", "side", "low", "high"}


def _draw_power(
    series: list[dict[str, Any]], *, x_name: str, y_name: str, log_scale: bool, level: float
) -> Any:
    fig = _new_figure((7.2, 4.4))
    ax = fig.add_subplot()
    finite = np.concatenate([s["y"][np.isfinite(s["y"])] for s in series] or [np.array([])])
    finite_high = np.concatenate(
        [s["high"][np.isfinite(s["high"])] for s in series if s["high"] is not None]
        or [np.array([])]
    )
    top_data = float(max(finite.max(initial=1.0), finite_high.max(initial=1.0)))
    ceiling = top_data * (3.0 if log_scale else 1.15)
    unreached_drawn = False
    for g, s in enumerate(series):
        colour = SERIES_COLOURS[g % len(SERIES_COLOURS)]
        marker = SERIES_MARKERS[g % len(SERIES_MARKERS)]
        reached = np.isfinite(s["y"])
        y = np.where(reached, s["y"], np.nan)
        ax.plot(
            s["x"],
            y,
            color=colour,
            marker=marker,
            linestyle=KIND_LINESTYLES[s["kind"]],
            label=_legend_text(s["label"], _how_phrase(s["kind"], s["side"])),
            zorder=3,
        )
        if s["kind"] == "estimate":
            ok = reached & np.isfinite(s["low"]) & np.isfinite(s["high"])
            ax.fill_between(
                s["x"],
                np.where(ok, s["low"], np.nan),
                np.where(ok, s["high"], np.nan),
                color=colour,
                alpha=0.2,
                linewidth=0,
                zorder=2,
            )
        if not reached.all():  # side by side when several tests miss at the same count
            shift = 0.08 * (g - (len(series) - 1) / 2)
            ax.plot(
                s["x"][~reached] + shift,
                np.full((~reached).sum(), ceiling),
                marker="^",
                markersize=8,
                markerfacecolor="white",
                markeredgecolor=colour,
                markeredgewidth=1.5,
                linestyle="none",
                clip_on=False,
                zorder=4,
            )
            unreached_drawn = True
    if unreached_drawn:
        ax.plot(
            [],
            [],
            marker="^",
            markersize=8,
            markerfacecolor="white",
            markeredgecolor=_INK,
            linestyle="none",
            label="not reached within the planning limit (drawn at the top)",
        )
    if log_scale:
        ax.set_yscale("log")
        _plain_log_ticks(ax.yaxis)
        ax.set_ylim(top=ceiling)
    else:
        ax.set_ylim(0, ceiling)
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_xlabel(f"number of {x_name}")
    ax.set_ylabel(y_name + (" (log scale)" if log_scale else ""))
    ax.legend(loc="best")
    return fig


def power_figure(
    curves: Sequence[Mapping[str, Any]],
    *,
    x_name: str = "riffles",
    y_name: str = "decks needed",
    log_scale: bool = True,
    level: float = 0.95,
    name: str = "power",
    caption: str | None = None,
) -> Figure:
    """Sample size needed to detect a procedure, against its repetition count, per test.

    Parameters
    ----------
    curves : sequence of dict
        One dict per test with keys ``label``, ``x`` (repetition counts), ``decks`` (decks
        needed; ``None`` or ``inf`` where the planning limit was not enough, drawn as a hollow
        triangle at the top), ``how``; for a bound optionally ``side``; for an estimate ``low``
        and ``high`` (its confidence band, required).
    x_name : str
        What is repeated, plural (``"riffles"``, ``"repetitions"``).
    y_name : str
        The sample-size axis title.
    log_scale : bool
        Logarithmic sample-size axis (the default; values must then be > 0).
    level : float
        Confidence level of estimate bands (for the caption).
    name, caption : str

    Returns
    -------
    Figure
    """
    level = _check_level(level)
    if isinstance(curves, Mapping) or not len(curves):
        raise InputError("power figure needs a list of one or more curves")
    series = []
    for k, spec in enumerate(curves):
        what = f"power figure, curve {k + 1}"
        _check_keys(spec, _POWER_KEYS, {"label", "x", "decks", "kind"}, what)
        s = _series(spec, x_key="x", y_key="decks", what=what, allow_missing=True)
        if np.any(s["y"] < 0) or (log_scale and np.any(s["y"] <= 0)):
            raise InputError(f"{what}: decks needed must be > 0")
        series.append(s)
    with _style():
        fig = _draw_power(series, x_name=x_name, y_name=y_name, log_scale=log_scale, level=level)
        if caption is None:
            caption = (
                f"{y_name[:1].upper()}{y_name[1:]} against the number of {x_name}, one line "
                "per test. Solid = exact, dashed = bound, dotted with a shaded band = estimate "
                f"with its {_level_text(level)} confidence band. A hollow triangle at the top "
                "means the planning limit was not enough."
            )
        data = {
            "kind": "power",
            "x_name": x_name,
            "y_name": y_name,
            "log_scale": log_scale,
            "level": level,
            "curves": [
                {
                    "label": s["label"],
                    "kind": s["kind"],
                    "side": s["side"],
                    "x": _as_list(s["x"]),
                    "decks": _as_list(s["y"]),
                    "low": _as_list(s["low"]),
                    "high": _as_list(s["high"]),
                }
                for s in series
            ],
        }
        return _finish(fig, name, caption, caption, data)


# --------------------------------------------------------------------------- observed vs models


_EXPECTATION_KEYS = {"label", "kind", "values", "low", "high"}


def _draw_expectations(
    x: np.ndarray,
    observed: np.ndarray,
    models: list[dict[str, Any]],
    *,
    observed_label: str,
    x_name: str,
    y_name: str,
) -> Any:
    fig = _new_figure((7.2, 4.2))
    ax = fig.add_subplot()
    ax.bar(
        x,
        observed,
        width=0.72,
        color=OKABE_ITO["sky blue"],
        edgecolor=_INK,
        linewidth=0.7,
        label=observed_label,
        zorder=2,
    )
    for g, m in enumerate(models):
        colour = (_INK, OKABE_ITO["vermillion"], OKABE_ITO["bluish green"])[g % 3]
        marker = SERIES_MARKERS[g % len(SERIES_MARKERS)]
        ax.plot(
            x,
            m["y"],
            color=colour,
            marker=marker,
            markersize=4.5,
            linestyle=KIND_LINESTYLES[m["kind"]],
            linewidth=1.4,
            label=_legend_text(m["label"], m["kind"]),
            zorder=4,
        )
        if m["kind"] == "estimate":
            ax.fill_between(x, m["low"], m["high"], color=colour, alpha=0.2, linewidth=0, zorder=3)
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_xlim(float(x.min()) - 0.6, float(x.max()) + 0.6)
    ax.set_ylim(bottom=0)
    ax.set_xlabel(x_name)
    ax.set_ylabel(y_name)
    ax.grid(axis="x", visible=False)
    ax.legend(loc="upper right")
    return fig


def expectation_figure(
    x: Sequence[int],
    observed: Sequence[float],
    models: Sequence[Mapping[str, Any]],
    *,
    observed_label: str = "recorded",
    x_name: str = "value",
    y_name: str = "count",
    level: float = 0.95,
    name: str = "expectations",
    caption: str | None = None,
) -> Figure:
    """Observed counts (bars) against what one or more models expect (lines with points).

    Parameters
    ----------
    x : sequence of int
        The values counted (e.g. packet lengths 1..L).
    observed : sequence of float
        Observed count (or frequency) at each value.
    models : sequence of dict
        One dict per model with keys ``label``, ``kind`` (``exact`` draws a solid line,
        ``estimate`` a dotted line with its confidence band) and ``values``; an estimate also
        needs ``low`` and ``high`` (its band).
    observed_label, x_name, y_name, name, caption : str
    level : float
        Confidence level of the estimate bands (for the caption).

    Returns
    -------
    Figure
    """
    level = _check_level(level)
    xs = _numbers(x, "expectation figure: x")
    obs = _numbers(observed, "expectation figure: observed")
    if len(xs) == 0 or len(xs) != len(obs):
        raise InputError("expectation figure: give one observed value per x (at least one)")
    if np.any(obs < 0):
        raise InputError("expectation figure: observed values must be >= 0")
    if isinstance(models, Mapping):
        raise InputError("expectation figure: models must be a list of dicts")
    series = []
    for k, spec in enumerate(models):
        what = f"expectation figure, model {k + 1}"
        _check_keys(spec, _EXPECTATION_KEYS, {"label", "kind", "values"}, what)
        s = _series({**spec, "x": list(xs)}, x_key="x", y_key="values", what=what)
        series.append(s)
    with _style():
        fig = _draw_expectations(
            xs, obs, series, observed_label=observed_label, x_name=x_name, y_name=y_name
        )
        if caption is None:
            caption = (
                f"{y_name[:1].upper()}{y_name[1:]} by {x_name}: {observed_label} (bars) against "
                "the models (solid line = exact, dotted line with a shaded band = estimate "
                f"with its {_level_text(level)} confidence band)."
            )
        data = {
            "kind": "expectations",
            "x_name": x_name,
            "y_name": y_name,
            "x": _as_list(xs),
            "observed": _as_list(obs),
            "models": [
                {
                    "label": s["label"],
                    "kind": s["kind"],
                    "values": _as_list(s["y"]),
                    "low": _as_list(s["low"]),
                    "high": _as_list(s["high"]),
                }
                for s in series
            ],
        }
        return _finish(fig, name, caption, caption, data)


# --------------------------------------------------------------------------- since when


_TIMELINE_KEYS = {"label", "values", "expected", "start", "low", "high", "level", "what"}


def timeline_figure(
    groups: Sequence[Mapping[str, Any]],
    *,
    unit: str = "deck",
    name: str = "since-when",
    caption: str | None = None,
) -> Figure:
    """The statistic behind a since-when estimate against deck number, one panel per group.

    Parameters
    ----------
    groups : sequence of dict
        One dict per group (a table, a dealer, or the whole log) with keys ``label``,
        ``values`` (the statistic on each deck, in time order), ``expected`` (its exact mean
        for a random deck), ``start`` (1-based estimated first deck of the biased stretch),
        ``low`` and ``high`` (the interval on the start, 1-based, inclusive), ``level`` (its
        nominal level) and ``what`` (the statistic's name, for the axis).
    unit : str
        What one value is recorded on (``"deck"`` or ``"shoe"``).

    Returns
    -------
    Figure
        A moving average of the statistic (with its window), the exact mean of a random
        deck (solid), the estimated start (a dashed vertical line), the interval on it
        (shaded) and the means before and after the start (dotted, estimates).
    """
    if isinstance(groups, Mapping) or not len(groups):
        raise InputError("timeline figure needs a list of one or more groups")
    panels = []
    for k, spec in enumerate(groups):
        what = f"timeline figure, group {k + 1}"
        _check_keys(spec, _TIMELINE_KEYS, _TIMELINE_KEYS, what)
        values = _numbers(spec["values"], f"{what}: values")
        if values.size < 2:
            raise InputError(f"{what}: needs two or more values")
        start, low, high = (int(spec[key]) for key in ("start", "low", "high"))
        if not 1 <= low <= start <= high <= values.size:
            raise InputError(f"{what}: need 1 <= low <= start <= high <= {values.size}")
        panels.append(
            {
                "label": str(spec["label"]),
                "values": values,
                "expected": float(spec["expected"]),
                "start": start,
                "low": low,
                "high": high,
                "level": _check_level(spec["level"]),
                "what": str(spec["what"]),
            }
        )
    with _style():
        rows = len(panels)
        fig = _new_figure((7.2, 1.2 + 2.3 * rows))
        axes = fig.subplots(rows, 1, squeeze=False)[:, 0]
        data_groups = []
        for ax, p in zip(axes, panels, strict=True):
            v = p["values"]
            n = v.size
            window = int(max(5, min(200, n // 30)))
            kernel = np.ones(window) / window
            smooth = np.convolve(v, kernel, mode="valid")
            x = np.arange(window, n + 1)
            ax.axvspan(
                p["low"] - 0.5,
                p["high"] + 0.5,
                color=OKABE_ITO["orange"],
                alpha=0.25,
                linewidth=0,
                label=f"interval on the start ({_level_text(p['level'])}, estimate)",
                zorder=1,
            )
            ax.plot(
                x,
                smooth,
                color=OKABE_ITO["blue"],
                linewidth=1.2,
                label=f"moving average over {window} {unit}s (recorded)",
                zorder=3,
            )
            ax.axhline(
                p["expected"],
                color=_INK,
                linestyle=KIND_LINESTYLES["exact"],
                linewidth=1.0,
                label=f"random {unit} (exact mean)",
                zorder=2,
            )
            s = p["start"]
            before = float(v[: s - 1].mean()) if s > 1 else None
            after = float(v[s - 1 :].mean())
            if before is not None:
                ax.plot(
                    [1, s - 1],
                    [before, before],
                    color=OKABE_ITO["vermillion"],
                    linestyle=KIND_LINESTYLES["estimate"],
                    linewidth=2.0,
                    zorder=4,
                )
            ax.plot(
                [s, n],
                [after, after],
                color=OKABE_ITO["vermillion"],
                linestyle=KIND_LINESTYLES["estimate"],
                linewidth=2.0,
                label="mean before and after the start (estimate)",
                zorder=4,
            )
            ax.axvline(
                s,
                color=OKABE_ITO["vermillion"],
                linestyle=KIND_LINESTYLES["bound"],
                linewidth=1.3,
                label=f"estimated start: {unit} {s}",
                zorder=5,
            )
            ax.set_xlim(0.5, n + 0.5)
            ax.set_title(f"{p['label']}: {p['what']}", fontsize=9, loc="left")
            ax.set_ylabel(f"value per {unit}", fontsize=8)
            ax.tick_params(labelsize=7.5)
            ax.legend(loc="upper left", fontsize=7, ncol=2)
            # the random deck's mean is always on the chart, however far the decks are off
            levels = [float(smooth.max()), float(smooth.min()), p["expected"], after]
            levels += [] if before is None else [before]
            top, bottom = max(levels), min(levels)
            spread = max(top - bottom, 1e-9)
            # room above the curves for the legend
            ax.set_ylim(bottom - 0.1 * spread, top + 0.75 * spread)
            data_groups.append(
                {
                    "label": p["label"],
                    "what": p["what"],
                    "expected": p["expected"],
                    "start": s,
                    "low": p["low"],
                    "high": p["high"],
                    "level": p["level"],
                    "window": window,
                    "mean_before": before,
                    "mean_after": after,
                    "moving_average": smooth.tolist(),
                }
            )
        axes[-1].set_xlabel(f"{unit} number, in time order")
        if caption is None:
            caption = (
                f"Since when: the statistic behind each estimate, {unit} by {unit} in time "
                "order (moving average), against its exact mean for a random "
                f"{unit}. The dashed line is the estimated start of the departure, the shaded "
                "band the interval on it (an estimate under the scan's working model), the "
                "dotted lines the means before and after."
            )
        data = {"kind": "timeline", "unit": unit, "groups": data_groups}
        return _finish(fig, name, caption, caption, data)
