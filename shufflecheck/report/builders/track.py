"""Report for ``shufflecheck track``: how far a slug can be followed through a shoe shuffle."""

from __future__ import annotations

from typing import Any

from shufflecheck.common.numbers import percent
from shufflecheck.common.sources import BAYER_DIACONIS, CLOPPER_PEARSON, TRADE_PRACTICE
from shufflecheck.report.document import MethodNote, Report, Section, Table
from shufflecheck.report.provenance import Provenance

__all__ = [
    "tracking_figure",
    "tracking_figure_count",
    "tracking_report",
    "tracking_section",
    "tracking_table",
]


def tracking_table(result) -> Table:
    """The tracking figures, each labelled, against a randomly shuffled shoe."""
    slug = result.slug[1]
    rows = (
        (
            f"span holding {percent(result.coverage)} of the slug (cards)",
            result.spread,
            result.spread_random,
        ),
        (
            f"slug cards caught by the {result.window}-card window",
            result.mean_caught,
            result.mean_caught_random,
        ),
        (
            f"chance of catching at least {result.at_least} of {slug}",
            result.chance,
            result.chance_random,
        ),
    )
    notes = [
        f"Slug: the cards at reference positions {result.slug[0]}-{result.slug[0] + slug - 1}.",
        f"Window placement: {result.placement}"
        + (f" (best fixed window from position {result.best_start})" if result.best_start else ""),
        *result.notes,
    ]
    return Table(
        "Tracking exposure against a randomly shuffled shoe",
        ("figure", "this procedure / these shoes", "random shoe"),
        rows,
        notes=tuple(notes),
    )


def _has_histogram(result) -> bool:
    return bool(result.caught.size and result.random_pmf.size)


def tracking_figure_count(result, *, figures: bool = True) -> int:
    """How many figures :func:`tracking_section` draws (for progress bars)."""
    return int(figures and _has_histogram(result))


def tracking_figure(result, prefix: str = ""):
    """Slug cards caught per shoe against a randomly shuffled shoe (None without shoes)."""
    from shufflecheck.report.figures import score_histogram_figure

    if not _has_histogram(result):
        return None
    return score_histogram_figure(
        result.caught.tolist(),
        result.random_pmf.tolist(),
        score_name=f"slug cards in the {result.window}-card window",
        count_name="number of shoes",
        name=f"{prefix}tracking",
        sample_label="simulated shoes" if result.placement != "best" else "recorded shoes",
        null_label="a randomly shuffled shoe",
        null_kind="exact" if result.chance_random.kind == "exact" else "estimate",
        caption=(
            "Slug cards caught by the observer's window in each shoe (bars) against "
            "a randomly shuffled shoe (line; "
            f"{result.chance_random.kind})."
        ),
    )


def tracking_section(result, title: str, *, prefix: str = "", figures: bool = True) -> Section:
    """One tracking analysis as a report section."""
    figure = tracking_figure(result, prefix) if figures else None
    figs = () if figure is None else (figure,)
    return Section(
        title,
        paragraphs=(result.sentence(),),
        tables=(tracking_table(result),),
        figures=figs,
    )


def tracking_report(result, *, payload: dict[str, Any], provenance: Provenance) -> Report:
    """The report of ``shufflecheck track`` (``payload`` is the ``--json`` result)."""
    return Report(
        title=f"Tracking exposure: {result.source}",
        question=(
            f"If a slug of {result.slug[1]} cards goes into this shuffle, where does it come "
            "out, and what could a tracker gain?"
        ),
        answer=(result.sentence(),),
        reproducibility=provenance,
        sections=(tracking_section(result, "Where the slug goes"),),
        methods=(
            MethodNote(
                "spread, window catches and chances",
                "estimate",
                "Monte Carlo on simulated shoes (or the recorded pairs of shoes), Clopper-Pearson "
                "intervals for chances and normal intervals for means; a fixed window of a "
                "random shoe is exact (hypergeometric)",
                (CLOPPER_PEARSON,),
            ),
            MethodNote(
                "shoe procedures",
                "estimate",
                "grab, plug, cut card and burn follow common practice of the trade (no "
                "published source; docs/models.md), riffles the Gilbert-Shannon-Reeds model",
                (TRADE_PRACTICE, BAYER_DIACONIS),
            ),
        ),
        data=payload,
    )
