"""``shufflecheck demo``: the whole job on an invented card room, with a report."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from shufflecheck.cli._app import (
    ForceOption,
    JsonOption,
    app,
    check_report_folder,
    echo,
    emit_json,
    progress,
    report_progress,
    save_report,
)
from shufflecheck.common.files import OWNER_FILE


@app.command()
def demo(
    report: Annotated[
        Path,
        typer.Option(
            "--report",
            metavar="<folder>",
            help="Report folder to write. The demo replaces a folder it wrote itself (it "
            f"leaves a marker file, {OWNER_FILE}); any other existing folder needs --force.",
        ),
    ] = Path("reports/demo"),
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """Run the main job on the bundled demo data (the invented Lantern Quay Card Room).

    Policy minimums for four procedures, their assessment, what would settle the open one,
    audits of three tables' logs, and how many decks an audit needs; prints a summary and
    writes a report (Markdown, self-contained HTML, JSON, figures) to --report.
    """
    from shufflecheck.analyses.demo import demo_folder, demo_work, run_demo
    from shufflecheck.analyses.plan import planning_json
    from shufflecheck.models.procedures import parse_procedure
    from shufflecheck.report.builders.demo import demo_figure_count, demo_report
    from shufflecheck.report.builders.policy import policy_payload
    from shufflecheck.report.provenance import collect_provenance

    out = report
    if not out.parent.exists() and out.parent == Path("reports"):
        from shufflecheck.common.files import write_failure

        try:
            out.parent.mkdir()
        except OSError as exc:
            raise write_failure(out.parent, exc) from None
    check_report_folder(out, force=force, owner="demo")
    with progress(demo_work(), "demo: assessing procedures") as update:
        result = run_demo(progress=update)
    payload = {
        "demo_data": str(demo_folder()),
        **policy_payload(result.policy),
        "audit_planning": planning_json(result.power, parse_procedure("riffle"), result.power_seed),
    }
    if result.shoes is not None:
        from shufflecheck.analyses.tracking import tracking_json

        payload["shoe_game"] = {
            "machine_audit": result.shoes.machine.as_json(),
            "tracking_simulated": tracking_json(result.shoes.tracked),
            "tracking_recorded": tracking_json(result.shoes.recorded),
        }
    policy = result.policy.policy
    seeds = {f"simulation, {p.name}": policy.seed + i for i, p in enumerate(policy.procedures)}
    seeds["audit planning"] = result.power_seed
    inputs = list(policy.inputs)
    if result.shoes is not None:
        from shufflecheck.analyses.demo import SHOE_HAND_LOG, SHOE_HAND_PROCEDURE, SHOE_MACHINE_LOG

        seeds["shoe game tracking"] = result.shoes.seed
        inputs += [
            demo_folder() / f for f in (SHOE_MACHINE_LOG, SHOE_HAND_LOG, SHOE_HAND_PROCEDURE)
        ]
    with report_progress(demo_figure_count(result), "demo: drawing the report") as saved:
        document = demo_report(
            result, payload=payload, provenance=collect_provenance(inputs, seeds=seeds)
        )
        written = save_report(document, out, force=force, owner="demo")
        saved()
    if json_out:
        emit_json(payload)
        return
    from shufflecheck.cli.policy import print_policy

    echo("shufflecheck demo: the Lantern Quay Card Room (invented data)")
    echo(f"Data: {demo_folder()}")
    echo()
    print_policy(result.policy)
    echo()
    for r, plan in result.power:
        best = plan.best()
        if best is not None:
            from shufflecheck.common.numbers import count_interval_text, percent

            verb = "let" if best.decks != 1 else "lets"
            decks = f"{best.decks:,} recorded deck{'s' if best.decks != 1 else ''}"
            low, high = best.decks_interval(plan.confidence)
            echo(
                f"Audit planning: after {r} ideal riffles, about {decks} {verb} an audit flag "
                f"the deck ({best.title}; estimate from {plan.simulated_decks:,} simulated "
                f"decks, {percent(plan.confidence)} CI {count_interval_text(low, high)})."
            )
    if result.shoes is not None:
        game = result.shoes
        echo()
        echo("Harbour Twenty-One (Table 9, a six-pack shoe; blackjack values):")
        echo(f"  batch machine: {game.machine.result.overall.verdict()}")
        when = game.machine.result.overall.since_when
        if when is not None:
            echo(f"  since when (estimate): {when.text} ({game.machine.since_when_place()})")
        echo(f"  hand grab shuffle: {game.tracked.sentence()}")
        echo(f"  recorded hand shoes: {game.recorded.sentence()}")
    echo()
    echo(f"Report: {written}/report.html (also report.md, report.json, figures/)")
