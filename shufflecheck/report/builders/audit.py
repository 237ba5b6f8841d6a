"""Report for ``shufflecheck audit`` (and the audit part of policy and demo reports)."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from shufflecheck.common.quantity import estimate, exact
from shufflecheck.common.sources import (
    BAYER_DIACONIS,
    DIACONIS_GRAHAM,
    HOLM,
    RIORDAN_1958,
    STANLEY,
)
from shufflecheck.report.document import MethodNote, Report, Section, Table
from shufflecheck.report.provenance import Provenance
from shufflecheck.stats.catalogue import catalogue, law_sources
from shufflecheck.stats.nulls import LawBracket

__all__ = [
    "audit_figure_count",
    "audit_figures",
    "audit_methods",
    "audit_pvalue_figure",
    "audit_report",
    "audit_section",
    "p_cell",
]

#: how a p-value was obtained, in the report's three labels
_P_LABEL = {
    "exact": "exact",
    "bound": "bound",  # an upper bound on the p-value (bracketed law, betting game)
    "asymptotic": "estimate",
    "monte-carlo": "estimate",
}


def p_cell(log10_p: float, method: str):
    """A p-value cell: exact when the null law is exact; text with its method otherwise.

    Asymptotic and Monte Carlo p-values are approximations without a stated standard
    error, so they are written as text that names their method.
    """
    from shufflecheck.common.numbers import format_p_value

    if method == "exact" and log10_p >= -300:
        return exact(min(10.0**log10_p, 1.0), digits=2)
    return f"{format_p_value(log10_p)} ({method})"


def _tests_table(battery, caption: str) -> Table:
    rows = []
    for t in battery.by_adjusted_p():
        effect = t.effect
        rows.append(
            (
                t.title,
                p_cell(t.log10_p_value, t.method),
                p_cell(t.log10_p_adjusted, t.method),
                "flagged" if t.flagged else "",
                estimate(effect.value, stderr=effect.standard_error, unit=effect.unit)
                if math.isfinite(effect.standard_error)
                else effect.text,
                effect.text,
            )
        )
    return Table(
        caption,
        ("test", "p-value", "p-value (Holm)", "verdict", "effect", "in plain words"),
        tuple(rows),
        notes=(
            "Tests sorted by Holm-adjusted p-value; 'flagged' means the test rejects a "
            f"uniformly random deck at family-wise level {battery.alpha:g}.",
            "Effects are estimates from the recorded decks (observed mean minus the exact "
            "mean for a random deck) with their standard errors.",
            *(
                (
                    "The betting guessing game's effect is the correct guesses minus the sum "
                    "of each guess's chance (the cards left at each guess), per shoe.",
                )
                if any(t.name == "guess-most-frequent-bet" for t in battery.tests)
                else ()
            ),
        ),
    )


def _guessing_histogram(audit):
    """(test, histogram) of the strongest guessing strategy when it has scores, else None
    (the betting form keeps a table of guesses, not a histogram of scores, and no law)."""
    tests = audit.result.overall.by_adjusted_p()
    guesses = [  # one per strategy
        t
        for t in tests
        if t.name.startswith("guess-") and np.ndim(audit.histograms.get(t.name, 0)) == 1
    ]
    if not guesses:
        return None
    best = min(guesses, key=lambda t: t.log10_p_value)
    hist = audit.histograms.get(best.name)
    return (best, hist) if hist is not None and hist.sum() > 0 else None


def _since_when_groups(audit) -> list[dict[str, Any]]:
    """The since-when estimates to chart: each group's (with ``by``), else the whole log's."""
    batteries = (
        [(str(k), b) for k, b in audit.result.groups]
        if getattr(audit, "by", None)
        else [(f"all {audit.result.overall.unit}s", audit.result.overall)]
    )
    out = []
    for label, battery in batteries:
        when = battery.since_when
        if when is None or when.low is None or len(when.series) < 2:
            continue
        title = battery.test(when.test).title
        out.append(
            {
                "label": label,
                "values": list(when.series),
                "expected": when.expected,
                "start": when.start,
                "low": when.low,
                "high": when.high,
                "level": when.level,
                "what": title,
            }
        )
    return out


def audit_figure_count(audit) -> int:
    """How many figures :func:`audit_figures` draws for ``audit`` (for progress bars)."""
    return 2 + (_guessing_histogram(audit) is not None) + bool(_since_when_groups(audit))


def audit_pvalue_figure(audit, prefix: str = ""):
    """The adjusted p-value of every test against the family-wise level (``audit --plot``)."""
    from shufflecheck.common.numbers import format_p_value
    from shufflecheck.report.figures import pvalue_figure

    battery = audit.result.overall
    tests = battery.by_adjusted_p()
    return pvalue_figure(
        [t.title for t in tests],
        [max(t.p_adjusted, 1e-300) for t in tests],
        [_P_LABEL.get(t.method, "estimate") for t in tests],
        alpha=battery.alpha,
        flagged=[t.flagged for t in tests],
        texts=[format_p_value(t.log10_p_adjusted) for t in tests],
        name=f"{prefix}pvalues",
    )


def audit_figures(audit, prefix: str = "") -> tuple:
    """p-values, guessing scores against the exact null, and the position heat map."""
    from shufflecheck.report.figures import (
        heatmap_figure,
        score_histogram_figure,
        timeline_figure,
    )
    from shufflecheck.stats.guessing import guessing_null

    figures = [audit_pvalue_figure(audit, prefix)]
    shown = _guessing_histogram(audit)
    shoe = getattr(audit, "shoe", None)
    if shown is not None:
        best, hist = shown
        n = audit.deck.size
        if shoe is None:
            law = guessing_null(n)
        else:
            from shufflecheck.stats.catalogue import guessing_null_for

            law = guessing_null_for(shoe)
        pmf = np.zeros(max(n + 1, hist.size))
        pmf[law.offset : law.offset + len(law.pmf)] = law.pmf
        scores = np.repeat(np.arange(hist.size), hist)
        score_name = (
            f"correct guesses per {'deck' if shoe is None else 'shoe'} "
            f"({best.title.split(', ')[-1]})"
        )
        null_kind, note = "exact", ""
        if isinstance(law, LawBracket):
            # the mass followed to the end, rescaled: each point is within the bracket's
            # width of the true chance
            pmf /= pmf.sum()
            null_kind = "bound"
            note = f"known to within {law.width:.2g}; the mass it followed to the end, rescaled"
        figures.append(
            score_histogram_figure(
                scores.tolist(),
                pmf[: max(hist.size, n + 1)].tolist(),
                score_name=score_name,
                count_name="number of decks" if shoe is None else "number of shoes",
                name=f"{prefix}guessing",
                null_note=note,
                sample_label="recorded decks" if shoe is None else "recorded shoes",
                null_label="a random deck" if shoe is None else "a random shoe",
                null_kind=null_kind,
            )
        )
    counts = np.asarray(audit.positions, dtype=float)
    decks = counts.sum(axis=1, keepdims=True)
    n = counts.shape[0]
    share = (
        np.full(counts.shape[1], 1 / n)
        if shoe is None
        else np.asarray(shoe.class_counts, dtype=float) / n
    )
    expected = decks * share[None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        residuals = np.where(
            expected > 0, (counts - expected) / np.sqrt(expected * (1 - share[None, :])), 0.0
        )
    what = (
        "Where each card of the reference order was found (standardised residuals of the "
        "position-by-card counts"
        if shoe is None
        else f"Where each value ({shoe.feature}) was found (standardised residuals of the "
        "position-by-value counts"
    )
    if shoe is None:
        figures.append(
            heatmap_figure(
                residuals,
                kind="residuals",
                value_name="standardised residual",
                name=f"{prefix}positions",
                caption=f"{what}; orange = more often than random, purple = less often).",
            )
        )
    else:
        figures.append(
            heatmap_figure(
                residuals.T,
                kind="residuals",
                row_name=f"value ({shoe.feature})",
                col_name="position in the shoe (1 = top)",
                row_labels=list(shoe.names),
                value_name="standardised residual",
                name=f"{prefix}positions",
                caption=f"{what}; orange = more often than random, purple = less often).",
            )
        )
    since = _since_when_groups(audit)
    if since:
        figures.append(
            timeline_figure(
                since, unit="deck" if shoe is None else "shoe", name=f"{prefix}since-when"
            )
        )
    return tuple(figures)


def audit_section(audit, title: str, *, prefix: str = "", figures: bool = True) -> Section:
    """One log's results as a report section."""
    battery = audit.result.overall
    info = audit.reader
    paragraphs = [
        f"Log {audit.path.name}: {info.decks:,} decks read ({info.format}), {info.set_aside:,} set "
        f"aside, {audit.tested:,} tested against reference '{audit.reference}'"
        f"{f', grouped by {audit.by}' if audit.by else ''}.",
        f"Verdict: {battery.verdict()}.",
    ]
    shoe = getattr(audit, "shoe", None)
    if shoe is not None:
        start, length = shoe.segment
        made = ", ".join(f"{n} x{c}" for n, c in zip(shoe.names, shoe.class_counts, strict=True))
        paragraphs.insert(
            1,
            f"Shoe {audit.deck.name}: {shoe.cards} cards, {len(shoe.copies)} card codes, copies "
            f"alike (counted in every row). Feature seen by the game: {shoe.feature} "
            f"({made})."
            f" Segment followed: reference positions {start + 1}-{start + length}, into zones of "
            f"{', '.join(map(str, shoe.zones))} cards.",
        )
    if battery.since_when is not None:
        where = audit.since_when_place()
        place = f" First deck of that stretch: {where}." if where else ""
        paragraphs.append(f"Since when (estimate): {battery.since_when.text}.{place}")
    fleet = audit.fleet() if hasattr(audit, "fleet") else None
    tables = [_tests_table(battery, f"Tests on {audit.path.name}")]
    if fleet is not None:
        strongest = fleet["strongest"]
        line = (
            f"By {fleet['by']}: {fleet['flagged']} of {fleet['groups']} flagged, each on its "
            "own battery at the same family-wise level."
        )
        if strongest:
            top = strongest[0]
            line += (
                f" Strongest finding: {fleet['by']} {top['group']}, {top['strongest']} "
                f"({top['effect']})"
                + (f", since {top['since_when']}" if top["since_when"] else "")
                + "."
            )
        paragraphs.append(line)
        for key, group in audit.result.groups:
            if group.since_when is not None:
                where = audit.since_when_place(str(key))
                place = f" First {group.unit} of that stretch: {where}." if where else ""
                paragraphs.append(
                    f"Since when in {key} (estimate): {group.since_when.text}.{place}"
                )
        tables.append(_groups_table(audit, fleet))
    else:
        for key, group in audit.result.groups:
            paragraphs.append(f"{audit.by} = {key}: {group.verdict()}.")
    small = getattr(audit, "small", None)
    if small is not None:
        paragraphs.append(f"Note: {small.text()}.")
    return Section(
        title,
        paragraphs=tuple(paragraphs),
        tables=tuple(tables),
        figures=audit_figures(audit, prefix) if figures else (),
    )


def _groups_table(audit, fleet: dict[str, Any]) -> Table:
    """One row per group: decks, verdict, strongest test, its adjusted p-value, since when."""
    rows = []
    by_key = dict(audit.result.groups)
    ordered = sorted(fleet["table"], key=lambda r: (not r["flagged"], r["log10_p_adjusted"] or 0.0))
    for r in ordered:
        battery = by_key.get(r["group"]) or next(
            b for k, b in audit.result.groups if str(k) == r["group"]
        )
        worst = battery.by_adjusted_p()[0]
        rows.append(
            (
                r["group"],
                exact(r["decks"]),
                "flagged" if r["flagged"] else "",
                r["strongest"] or "",
                p_cell(worst.log10_p_adjusted, worst.method),
                r["since_when"] or "",
            )
        )
    return Table(
        f"Per {fleet['by']}",
        (fleet["by"], "decks", "verdict", "strongest test", "p-value (Holm)", "since when"),
        tuple(rows),
        notes=(
            f"Each {fleet['by']} is tested on its own battery (Holm at level "
            f"{audit.result.overall.alpha:g}); flagged ones first. 'Since when' is an "
            "estimate: the first deck of the biased stretch.",
        ),
    )


def audit_methods(alpha: float, *, shoes: bool = False) -> tuple[MethodNote, ...]:
    if shoes:
        return (
            MethodNote(
                "p-values of the per-shoe statistics",
                "exact",
                "sum over the shoes compared with the exact convolution of each statistic's law "
                "under a uniformly random arrangement of the shoe's multiset (every arrangement "
                "of the copies equally likely): runs of a multiset, value successions, zone "
                "maxima, the greedy guessing game by dynamic programming, matches between "
                "shoes by rook polynomials",
                (STANLEY, DIACONIS_GRAHAM, RIORDAN_1958),
            ),
            MethodNote(
                "guessing game beyond the exact programme",
                "bound",
                "for shoes whose exact guessing law is out of reach (blackjack or baccarat "
                "values of 3 to 6 packs) the law is a bracket computed in advance: exact laws "
                "stochastically below and above it give p-values that bracket the true one, "
                "and the larger is reported and used by Holm (the test's row says bound)",
                (DIACONIS_GRAHAM,),
            ),
            MethodNote(
                "position-by-value test",
                "estimate",
                "chi-square x (n-1)/n with (n-1)(V-1) degrees of freedom (asymptotic; exact mean "
                "n(V-1)), or a Monte Carlo null when expected counts are small",
                (STANLEY,),
            ),
            MethodNote(
                "family-wise error",
                "exact",
                f"Holm's step-down adjustment over the battery at level {alpha:g}",
                (HOLM,),
            ),
            MethodNote(
                "effects and 'since when'",
                "estimate",
                "observed per-shoe means against exact expectations; change point by a scan "
                "of standardised excess over the null mean",
                (DIACONIS_GRAHAM,),
            ),
        )
    return (
        MethodNote(
            "p-values of the per-deck statistics",
            "exact",
            "sum over the decks compared with the exact D-fold convolution of the statistic's "
            f"law under a random deck ({law_sources([s for s in catalogue() if s.battery])})",
            (STANLEY, BAYER_DIACONIS, DIACONIS_GRAHAM),
        ),
        MethodNote(
            "position-by-card test",
            "estimate",
            "chi-square with (n-1)^2 degrees of freedom (asymptotic), or a Monte Carlo null "
            "when expected counts are small",
            (STANLEY,),
        ),
        MethodNote(
            "family-wise error",
            "exact",
            f"Holm's step-down adjustment over the battery at level {alpha:g}",
            (HOLM,),
        ),
        MethodNote(
            "effects and 'since when'",
            "estimate",
            "observed per-deck means against exact expectations; change point by a scan of "
            "standardised excess over the null mean",
            (DIACONIS_GRAHAM,),
        ),
    )


def audit_report(audit, *, payload: dict[str, Any], provenance: Provenance) -> Report:
    """Build the report of one log audit (``payload`` is the ``--json`` result)."""
    battery = audit.result.overall
    answer = [battery.verdict() + "."]
    if battery.flagged:
        worst = battery.by_adjusted_p()[0]
        answer.append(f"Largest effect on the strongest test: {worst.effect.text} (estimate).")
    if battery.since_when is not None:
        answer.append(f"Since when: {battery.since_when.text} (estimate).")
    if audit.by:  # each flagged group's own verdict and since when (pooled decks can hide one)
        for key, group in audit.result.groups:
            if not group.flagged:
                continue
            line = f"{key}: {group.verdict()}."
            if group.since_when is not None:
                line += f" Since when (estimate): {group.since_when.text}."
            answer.append(line)
    if audit.set_aside:
        answer.append(f"{audit.set_aside:,} rows were set aside as invalid and not audited.")
    return Report(
        title=f"Audit of recorded deck orders: {audit.path.name}",
        question=(
            f"Is anything detectably non-random in the {audit.tested:,} deck orders of "
            f"{audit.path.name}, which test says so, how strongly, and since when?"
        ),
        answer=tuple(answer),
        reproducibility=provenance,
        sections=(audit_section(audit, "Tests on the recorded decks"),),
        methods=audit_methods(battery.alpha, shoes=getattr(audit, "shoe", None) is not None),
        data=payload,
    )
