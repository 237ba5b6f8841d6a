"""Report for ``shufflecheck policy`` and the demo: decisions first, then the evidence."""

from __future__ import annotations

from typing import Any

from shufflecheck.report.builders.assess import assessment_methods, assessment_table
from shufflecheck.report.builders.audit import audit_methods, audit_section
from shufflecheck.report.builders.mix import METRIC_LABELS
from shufflecheck.report.document import MethodNote, Report, Section, Table
from shufflecheck.report.provenance import Provenance

__all__ = ["policy_figure", "policy_payload", "policy_report", "policy_sections"]


def _decision_cells(decision) -> tuple:
    proc = decision.procedure
    if decision.minimum is not None:
        minimum = f"{decision.minimum} ({decision.kind})"
    elif decision.estimate_low is not None:
        minimum = f"not certified; {decision.estimate_low} not excluded (estimate)"
    else:
        minimum = f"more than {proc.max_repeats} (all excluded)"
    house = str(proc.house) if proc.house is not None else ""
    standing = f"{decision.standing} ({decision.standing_how})" if decision.standing else ""
    audits = "; ".join(
        f"{log.table or log.path.name}: {'FLAGGED' if audit.result.flagged else 'not flagged'}"
        for log, audit in decision.audits
    )
    feature = getattr(proc, "feature", None) or "distinct"
    return (
        proc.name,
        proc.procedure.describe(),
        str(proc.cards),
        feature,
        minimum,
        house,
        standing,
        audits,
    )


def policy_payload(result) -> dict[str, Any]:
    """The ``--json`` form of a policy result (:func:`shufflecheck.analyses.policy.policy_json`)."""
    from shufflecheck.analyses.policy import policy_json

    return policy_json(result)


def policy_figure(result):
    """Every procedure's distance (exact, bounds) against repetitions, a panel each."""
    from shufflecheck.report.figures import distance_figure

    metric = result.policy.metric
    curves = []
    for d in result.decisions:
        rows = d.assessment.rows
        name = d.procedure.name
        exact_rows = [r for r in rows if r.exact is not None]
        if exact_rows:
            curves.append(
                {
                    "label": f"{name}",
                    "kind": "exact",
                    "group": name,
                    "steps": [r.repeats for r in exact_rows],
                    "values": [r.exact.value(metric) for r in exact_rows],
                    **({"minimum": d.minimum} if d.minimum and d.kind == "exact" else {}),
                }
            )
        upper = [r for r in rows if metric in r.upper]
        if upper:
            curves.append(
                {
                    "label": name,
                    "kind": "bound",
                    "side": "upper",
                    "group": name,
                    "steps": [r.repeats for r in upper],
                    "values": [r.upper[metric].value for r in upper],
                    **({"minimum": d.minimum} if d.minimum and d.kind == "bound" else {}),
                }
            )
        guessed = [r for r in rows if metric in r.conjectured]
        if guessed:
            curves.append(
                {
                    "label": f"{name}, interleaving conjecture",
                    "kind": "conjectured",
                    "side": "upper",
                    "group": name,
                    "steps": [r.repeats for r in guessed],
                    "values": [r.conjectured[metric].value for r in guessed],
                }
            )
        lower = [r for r in rows if r.exact is None]
        if lower:
            curves.append(
                {
                    "label": name,
                    "kind": "bound",
                    "side": "lower",
                    "group": name,
                    "steps": [r.repeats for r in lower],
                    "values": [r.lower[metric].value for r in lower],
                    "confidence": result.policy.confidence,
                }
            )
    label = {
        "total_variation": "total variation distance",
        "separation": "separation distance",
        "kl_bits": "KL divergence (bits)",
    }[metric]
    return distance_figure(
        curves,
        target=result.policy.target,
        metric=label,
        steps_name="repetitions",
        name="policy",
        level=result.policy.confidence,  # the level the policy's bounds and intervals use
        panels=len({c["group"] for c in curves}) > 1,
    )


def policy_sections(result, *, figures: bool = True) -> list[Section]:
    policy = result.policy
    label = METRIC_LABELS[policy.metric]
    decisions = Table(
        f"Policy decisions: {label} at most {policy.target:g}",
        (
            "procedure",
            "steps",
            "cards",
            "distances on",
            "minimum repetitions",
            "house count",
            "house standing",
            "recorded logs",
        ),
        tuple(_decision_cells(d) for d in result.decisions),
        notes=(
            "A minimum is certified only when it is exact or comes from a rigorous upper bound; "
            "'not excluded' is the smallest count the lower confidence bounds leave open "
            "(an estimate, not a certified minimum).",
        ),
    )
    sections = [
        Section(
            "Decisions",
            paragraphs=tuple(d.summary(label, policy.target) + "." for d in result.decisions),
            tables=(decisions,),
            figures=(policy_figure(result),) if figures else (),
        )
    ]
    open_decisions = [d for d in result.decisions if d.settlement is not None]
    if open_decisions:
        sections.append(
            Section(
                "What would settle the open decisions",
                paragraphs=tuple(_settle_paragraph(d, label) for d in open_decisions),
            )
        )
    for d in result.decisions:
        table = assessment_table(d.assessment, policy.metric)
        sections.append(
            Section(
                f"Procedure: {d.procedure.name}",
                paragraphs=(
                    f"Steps: {d.procedure.procedure.describe()} on {d.procedure.cards} cards, "
                    f"assessed for 1 to {d.procedure.max_repeats} repetitions with "
                    f"{d.assessment.decks:,} simulated decks.",
                    *d.assessment.notes,
                ),
                tables=(table,),
            )
        )
        for log, audit in d.audits:
            title = f"Recorded decks: {log.table or log.path.name} ({d.procedure.name})"
            sections.append(audit_section(audit, title, prefix=_slug(log) + "-", figures=figures))
    return sections


def _settle_paragraph(decision, label: str) -> str:
    """One paragraph: the procedure, the count in question, and each answer."""
    settlement = decision.settlement
    answers = "; ".join(settlement.sentences(label))
    return (
        f"{decision.procedure.name}, {settlement.repeats} repetition"
        f"{'s' if settlement.repeats != 1 else ''}: {answers}."
    )


def policy_figure_count(result, *, figures: bool = True) -> int:
    """How many figures :func:`policy_sections` draws (for progress bars)."""
    from shufflecheck.report.builders.audit import audit_figure_count

    if not figures:
        return 0
    return 1 + sum(audit_figure_count(audit) for d in result.decisions for _, audit in d.audits)


def _slug(log) -> str:
    """A file-name stem for a log's figures: its table name, else its file name."""
    import re

    text = (log.table or log.path.stem).lower()
    return re.sub(r"[^a-z0-9]+", "-", text).strip("-") or "log"


def policy_report(
    result,
    *,
    payload: dict[str, Any],
    provenance: Provenance,
    title: str | None = None,
    extra_sections=(),
    extra_methods=(),
    question: str | None = None,
) -> Report:
    """Build the report of a policy evaluation."""
    policy = result.policy
    label = METRIC_LABELS[policy.metric]
    answer = [d.summary(label, policy.target) + "." for d in result.decisions]
    for d in result.decisions:
        for log, audit in d.audits:
            battery = audit.result.overall
            line = f"{log.table or log.path.name}: {battery.verdict()}."
            if battery.since_when is not None:
                where = audit.since_when_place()
                line += f" Since when (estimate): {battery.since_when.text}"
                line += f"; first deck of that stretch: {where}." if where else "."
            answer.append(line)
    methods: list[MethodNote] = list(assessment_methods(policy.confidence))
    if any(d.audits for d in result.decisions):
        methods.extend(audit_methods(policy.alpha))
    methods.extend(extra_methods)
    return Report(
        title=title or f"Shuffle policy: {policy.title}",
        question=question
        or (
            f"For each house procedure, what is the fewest number of repetitions that brings "
            f"{label} to at most {policy.target:g}, does the house count meet it, and do the "
            "recorded decks show bias?"
        ),
        answer=tuple(answer),
        reproducibility=provenance,
        sections=(*policy_sections(result), *extra_sections),
        methods=tuple(methods),
        data=payload,
    )
