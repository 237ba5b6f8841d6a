"""The demo's report: the policy report of the invented card room plus audit planning."""

from __future__ import annotations

from typing import Any

from shufflecheck.report.builders.policy import policy_report
from shufflecheck.report.builders.power import (
    power_curves,
    power_level,
    power_methods,
    power_section,
)
from shufflecheck.report.document import Report
from shufflecheck.report.provenance import Provenance

__all__ = ["demo_figure_count", "demo_report"]


def demo_figure_count(demo) -> int:
    """How many figures :func:`demo_report` draws (for progress bars)."""
    from shufflecheck.report.builders.audit import audit_figure_count
    from shufflecheck.report.builders.policy import policy_figure_count
    from shufflecheck.report.builders.track import tracking_figure_count

    count = 1 + policy_figure_count(demo.policy)  # the power figure, then the policy's
    if demo.shoes is not None:
        game = demo.shoes
        count += audit_figure_count(game.machine)
        count += tracking_figure_count(game.tracked) + tracking_figure_count(game.recorded)
    return count


def demo_report(demo, *, payload: dict[str, Any], provenance: Provenance) -> Report:
    """Build the demo report (``demo`` is a :class:`shufflecheck.analyses.demo.DemoResult`)."""
    from shufflecheck.report.figures import power_figure

    figure = power_figure(
        power_curves(demo.power),
        x_name="ideal riffles",
        name="power",
        level=power_level(demo.power),
    )
    planning = power_section(demo.power, "riffle", figure=figure)
    extra = [planning]
    methods = list(power_methods())
    if demo.shoes is not None:
        from shufflecheck.report.builders.audit import audit_methods, audit_section
        from shufflecheck.report.builders.track import tracking_section

        game = demo.shoes
        extra.append(
            audit_section(
                game.machine,
                "Harbour Twenty-One (Table 9): the batch machine's shoes",
                prefix="shoe-machine-",
            )
        )
        extra.append(
            tracking_section(
                game.tracked,
                "Harbour Twenty-One: tracking a slug through the hand grab shuffle (simulated)",
                prefix="shoe-tracked-",
            )
        )
        extra.append(
            tracking_section(
                game.recorded,
                "Harbour Twenty-One: the slug in the recorded hand-shuffled shoes",
                prefix="shoe-recorded-",
            )
        )
        methods.extend(audit_methods(game.machine.result.overall.alpha, shoes=True))
    return policy_report(
        demo.policy,
        payload=payload,
        provenance=provenance,
        title="Lantern Quay Card Room (invented): shuffle policy and table audits",
        question=(
            "How many repetitions of each house procedure bring the deck within total variation "
            "0.1 of random, do the house counts meet that, do the recorded decks of Tables 1, 2 "
            "and 7 show bias (and since when), how long must a table be logged before an "
            "audit means anything, and for the shoe game at Table 9: does the batch machine "
            "deal random shoes, and how far can a slug be tracked through the hand shuffle?"
        ),
        extra_sections=tuple(extra),
        extra_methods=tuple(methods),
    )
