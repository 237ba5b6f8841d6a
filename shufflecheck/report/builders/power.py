"""Report for ``shufflecheck power``: decks an audit needs to flag a procedure."""

from __future__ import annotations

from typing import Any

from shufflecheck.common.numbers import percent
from shufflecheck.common.sources import BAYER_DIACONIS, DIACONIS_GRAHAM, HOLM, STANLEY
from shufflecheck.report.document import MethodNote, Report, Section, Table
from shufflecheck.report.provenance import Provenance

__all__ = ["decks_value", "power_curves", "power_level", "power_report", "power_section"]


def decks_value(row, level: float = 0.95, *, simulated: int | None = None, unit: str = "decks"):
    """Decks needed as a labelled estimate: an integer count with its interval at ``level``
    (:meth:`~shufflecheck.stats.power.PowerRow.decks_interval`), or text when no test
    detects the procedure."""
    if row.decks is None:
        return "not detected"
    return row.decks_quantity(level, simulated=simulated, unit=unit)


def power_curves(plans: list[tuple[int, Any]], top: int = 5) -> list[dict]:
    """One curve per test, decks needed against the repetition count, for the ``top`` tests
    that need the fewest decks (summed over the repetition counts they detect); the bands
    are the counts' intervals at each plan's confidence."""

    def need(test: str) -> tuple[int, float]:
        decks = [next(x for x in plan.rows if x.test == test).decks for _, plan in plans]
        return (-sum(d is not None for d in decks), sum(d for d in decks if d is not None))

    tests = sorted((row.test for row in plans[0][1].rows), key=need)[:top]
    curves = []
    for name in tests:
        xs, decks, low, high = [], [], [], []
        title = name
        for r, plan in plans:
            row = next(x for x in plan.rows if x.test == name)
            title = row.title
            xs.append(r)
            decks.append(row.decks)
            interval = row.decks_interval(plan.confidence)
            low.append(None if interval is None else float(interval[0]))
            high.append(None if interval is None else float(interval[1]))
        if all(d is None for d in decks):
            continue
        curves.append(
            {"label": title, "x": xs, "decks": decks, "kind": "estimate", "low": low, "high": high}
        )
    return curves


def power_level(plans: list[tuple[int, Any]]) -> float:
    """The confidence level of the plans' intervals (one level for all of them)."""
    return plans[0][1].confidence


def power_section(plans: list[tuple[int, Any]], procedure: str, *, figure=None) -> Section:
    rows = []
    for r, plan in plans:
        for row in sorted(plan.rows, key=lambda x: (x.decks is None, x.decks or 0)):
            rows.append(
                (
                    str(r),
                    row.title,
                    decks_value(row, plan.confidence, simulated=plan.simulated_decks),
                    row.note or "",
                )
            )
    first = plans[0][1]
    table = Table(
        f"Recorded decks needed to flag '{procedure}' "
        f"(power {first.power:g}, alpha {first.alpha:g})",
        ("repetitions", "test", "decks needed", "note"),
        tuple(rows),
        notes=(
            f"Each test at level {first.per_test_level:.2g} (Bonferroni over "
            f"{first.tests_in_battery} tests, conservative for Holm's method).",
            f"Laws under the procedure estimated from {first.simulated_decks:,} simulated decks; "
            f"{first.null_text()}.",
            f"Intervals ({percent(first.confidence)}) carry the Monte Carlo error of the "
            "simulated shift of each test's mean over to the count, rounded outward to whole "
            "decks.",
            "Colour and suit runs are planned for decks that start in new-deck order; when each "
            "deck starts from the previous one, those two tests detect less.",
        ),
    )
    return Section(
        "Sample size for an audit",
        paragraphs=(
            "How many recorded decks a lab must log before an audit can be expected to flag "
            "this procedure against a perfectly random deck.",
        ),
        tables=(table,),
        figures=(figure,) if figure is not None else (),
    )


def power_methods() -> tuple[MethodNote, ...]:
    return (
        MethodNote(
            "decks needed",
            "estimate",
            "statistic's law under the procedure simulated, exact null law for the critical "
            "value, power of the exact sum test computed by convolution; smallest D by "
            "bisection",
            (STANLEY, BAYER_DIACONIS, DIACONIS_GRAHAM),
        ),
        MethodNote(
            "family-wise level",
            "exact",
            "Bonferroni split of alpha over the battery (Holm's method is at least as powerful)",
            (HOLM,),
        ),
    )


def power_report(
    plans: list[tuple[int, Any]], procedure: str, *, payload: dict, figure, provenance: Provenance
) -> Report:
    """Build the report of a power plan for one or several repetition counts."""
    answer = []
    for r, plan in plans:
        best = plan.best()
        if best is None:
            answer.append(f"{procedure} x{r}: no test detects it within the search range.")
        else:
            shown = best.decks_quantity(plan.confidence, simulated=plan.simulated_decks)
            answer.append(
                f"{procedure} x{r}: {shown.number_text()} recorded (estimate from "
                f"{plan.simulated_decks:,} simulated decks) let the {best.title} test flag it "
                f"with power {plan.power:g}."
            )
    return Report(
        title=f"Audit planning: {procedure}",
        question=(
            f"How many recorded decks must be logged before an audit can be expected to flag "
            f"'{procedure}' against a perfectly random deck?"
        ),
        answer=tuple(answer),
        reproducibility=provenance,
        sections=(power_section(plans, procedure, figure=figure),),
        methods=power_methods(),
        data=payload,
    )
