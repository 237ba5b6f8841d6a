"""The demo's report: the policy report of the invented card room plus audit planning."""

from __future__ import annotations

from typing import Any

from shufflecheck.report.builders.policy import policy_report
from shufflecheck.report.builders.power import power_curves, power_methods, power_section
from shufflecheck.report.document import Report
from shufflecheck.report.provenance import Provenance

__all__ = ["demo_report"]


def demo_report(demo, *, payload: dict[str, Any], provenance: Provenance) -> Report:
    """Build the demo report (``demo`` is a :class:`shufflecheck.analyses.demo.DemoResult`)."""
    from shufflecheck.report.figures import power_figure

    figure = power_figure(power_curves(demo.power), x_name="ideal riffles", name="power")
    planning = power_section(demo.power, "riffle", figure=figure)
    return policy_report(
        demo.policy,
        payload=payload,
        provenance=provenance,
        title="Lantern Quay Card Room (invented): shuffle policy and table audits",
        question=(
            "How many repetitions of each house procedure bring the deck within total variation "
            "0.1 of random, do the house counts meet that, do the recorded decks of Tables 1, 2 "
            "and 7 show bias (and since when), and how long must a table be logged before an "
            "audit means anything?"
        ),
        extra_sections=(planning,),
        extra_methods=power_methods(),
    )
