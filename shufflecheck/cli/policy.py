"""``shufflecheck policy``: minimum shuffle counts for a house policy, with log audits."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from shufflecheck.cli._app import (
    ForceOption,
    JsonOption,
    ReportOption,
    app,
    check_outputs,
    echo,
    emit_json,
    plot_option,
    progress,
    report_progress,
    save_report,
)
from shufflecheck.common.numbers import percent


@app.command()
def policy(
    file: Annotated[
        Path, typer.Argument(help="Policy file (TOML): metric, target, procedures, logs.")
    ],
    plot: Annotated[
        Path | None, plot_option("each procedure's distance against repetitions")
    ] = None,
    report: ReportOption = None,
    force: ForceOption = False,
    allow_outside: Annotated[
        bool,
        typer.Option(
            "--allow-outside",
            show_default=False,
            help="Let the policy file name logs, decks and reference files outside its own "
            "folder (only for policy files you trust).",
        ),
    ] = False,
    json_out: JsonOption = False,
) -> None:
    """The fewest repetitions of each house procedure that meet the policy's target.

    Each minimum says how it is known: exact, certified by a rigorous upper bound, or only
    an estimate (never reported as certified). Attached logs are audited. Exit code 0 when
    computed, whatever the findings; 2 for a bad policy file (with file, line and key).
    """
    from shufflecheck.analyses.policy import (
        evaluate_policy,
        load_policy,
        policy_size,
        policy_work,
    )
    from shufflecheck.report.builders.policy import policy_payload

    loaded = load_policy(file, allow_outside=allow_outside)
    check_outputs(
        force=force,
        inputs={path: "a file the policy reads" for path in loaded.inputs},
        files=(plot,),
        folders=(report,),
    )
    with progress(policy_work(loaded), "assessing procedures", policy_size(loaded)) as update:
        result = evaluate_policy(loaded, progress=update)
    payload = policy_payload(result)
    if plot is not None:
        from shufflecheck.common.files import atomic_write
        from shufflecheck.report.builders.policy import policy_figure

        atomic_write(plot, policy_figure(result).png, force=force)
    if report is not None:
        from shufflecheck.report.builders.policy import policy_figure_count, policy_report
        from shufflecheck.report.provenance import collect_provenance

        with report_progress(policy_figure_count(result), "drawing the report") as saved:
            document = policy_report(
                result,
                payload=payload,
                provenance=collect_provenance(
                    loaded.inputs,
                    seeds={
                        f"simulation, {p.name}": loaded.seed + i
                        for i, p in enumerate(loaded.procedures)
                    },
                ),
            )
            written = save_report(document, report, force=force)
            saved()
    if json_out:
        emit_json(payload)
        return
    print_policy(result)
    if plot is not None:
        echo(f"Wrote {plot}")
    if report is not None:
        echo(f"Wrote report {written}")


def print_policy(result) -> None:
    """Terminal view: one line per procedure, then the audits."""
    from shufflecheck.analyses.assess import CAUTION
    from shufflecheck.report.builders.mix import METRIC_LABELS
    from shufflecheck.report.render.terminal import format_table

    p = result.policy
    label = METRIC_LABELS[p.metric]
    echo(f"Policy: {p.title} ({p.path})")
    echo(
        f"Target: {label} <= {p.target:g}; lower bounds and intervals at {percent(p.confidence)} "
        f"confidence; {p.decks:,} simulated decks per procedure."
    )
    echo()
    rows = []
    for d in result.decisions:
        proc = d.procedure
        if d.minimum is not None:
            minimum = f"{d.minimum} ({d.kind})"
        elif d.estimate_low is not None:
            minimum = f">= {d.estimate_low} (estimate)"
        else:
            minimum = f"> {proc.max_repeats}"
        standing = f"{d.standing} ({d.standing_how})" if d.standing else "-"
        feature = getattr(proc, "feature", None) or "distinct"
        rows.append(
            [
                proc.name,
                proc.procedure.describe(),
                proc.cards,
                feature,
                minimum,
                proc.house or "-",
                standing,
            ]
        )
    echo(
        format_table(
            ["procedure", "steps", "cards", "distances on", "minimum", "house", "house standing"],
            rows,
            align="llrllrl",
        )
    )
    echo()
    for d in result.decisions:
        echo(f"- {d.summary(label, p.target)}.")
        if d.settlement is not None:
            n = d.settlement.repeats
            echo(f"  What would settle it ({n} repetition{'s' if n != 1 else ''}):")
            for sentence in d.settlement.sentences(label):
                echo(f"    * {sentence}")
        for log, audit in d.audits:
            battery = audit.result.overall
            echo(f"  log {log.table or log.path.name}: {battery.verdict()}")
            if battery.since_when is not None:
                where = audit.since_when_place()
                place = f" ({where})" if where else ""
                echo(f"    since when (estimate): {battery.since_when.text}{place}")
    echo()
    echo(
        "minimum: exact = the repeated procedure is an exactly analysed model; bound = "
        "certified by a rigorous upper bound; estimate = the smallest count the lower "
        "confidence bounds do not exclude (not certified)."
    )
    echo(CAUTION)
