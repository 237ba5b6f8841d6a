"""``shufflecheck fit-riffle``: a dealer's own riffles, fitted from a log of recorded riffles."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from shufflecheck.cli._app import (
    JsonOption,
    ReportOption,
    SeedOption,
    app,
    check_outputs,
    echo,
    emit_json,
    plot_option,
    progress,
    save_report,
)
from shufflecheck.cli.audit import Labels
from shufflecheck.common.cautions import LOGS_UNTOUCHED, caution
from shufflecheck.common.numbers import percent


@app.command("fit-riffle")
def fit_riffle(
    log: Annotated[
        Path,
        typer.Argument(help="Log in which each deck is one riffle of the deck before it."),
    ],
    out: Annotated[
        Path | None,
        typer.Option(
            "--out",
            metavar="<file>",
            help="Write the fitted procedure to this .toml file (assess, power, ...).",
        ),
    ] = None,
    procedure: Annotated[
        str | None,
        typer.Option(
            help="House procedure whose riffles are the fitted riffle, e.g. "
            "'riffle x3, strip, riffle, cut' (default: the fitted riffle alone)."
        ),
    ] = None,
    name: Annotated[str | None, typer.Option(help="Name of the written procedure.")] = None,
    reference: Annotated[
        str,
        typer.Option(
            "--reference",
            metavar="<reference>",
            help="What each deck is a riffle of: previous (default: the deck before it), "
            "first, or an order/file.",
        ),
    ] = "previous",
    by: Annotated[
        str | None, typer.Option(help="Column whose groups each chain their own decks.")
    ] = None,
    labels: Annotated[
        Labels, typer.Option(help="Card codes, or integer labels (0..n-1 or 1..n).")
    ] = Labels.codes,
    deck: Annotated[
        Path | None,
        typer.Option(
            "--deck", metavar="<deck>", help="Deck definition TOML for non-standard decks."
        ),
    ] = None,
    cards: Annotated[
        int | None,
        typer.Option("--cards", "-n", help="Cards per deck, for integer-labelled logs."),
    ] = None,
    log_format: Annotated[
        str | None,
        typer.Option("--format", help="csv, wide, jsonl or parquet (default: extension)."),
    ] = None,
    quarantine: Annotated[
        Path | None,
        typer.Option(
            "--quarantine",
            metavar="<file>",
            help="Set invalid rows aside into this CSV and fit the rest.",
        ),
    ] = None,
    not_riffles: Annotated[
        Path | None,
        typer.Option(
            "--not-riffles",
            metavar="<file>",
            help="Write every row that is not one riffle to this CSV.",
        ),
    ] = None,
    confidence: Annotated[
        float, typer.Option(help="Confidence level of the parameters' intervals.")
    ] = 0.95,
    alpha: Annotated[
        float, typer.Option(help="Family-wise level of the tests of the ideal riffle (Holm).")
    ] = 0.01,
    samples: Annotated[int, typer.Option(help="Simulated logs for the Monte Carlo tests.")] = 999,
    seed: SeedOption = 0,
    plot: Annotated[
        Path | None, plot_option("the packet lengths (recorded, ideal, fitted)")
    ] = None,
    report: ReportOption = None,
    force: Annotated[
        bool,
        typer.Option(
            "--force",
            show_default=False,
            help="Replace an existing procedure file, CSV, plot or report folder (never the "
            "command's inputs).",
        ),
    ] = False,
    json_out: JsonOption = False,
) -> None:
    """Estimate a dealer's hand riffle (cut spread, clumping) from recorded riffles.

    Each deck must be one riffle of its reference: the cut and the hand every card fell
    from are read off exactly, rows that are not one riffle are listed (never dropped
    silently), and the parameters are fitted by maximum likelihood with profile-likelihood
    intervals. The ideal riffle is tested (exact and Monte Carlo nulls). With --out, the
    fitted step is written as a procedure file for assess, power, simulate and policy files.
    """
    from shufflecheck.common.errors import InputError
    from shufflecheck.common.files import names_file

    inputs = {log: "the log itself", deck: "the deck definition itself"}
    if names_file(reference):
        inputs[Path(reference)] = "the reference order file itself"
    check_outputs(
        force=force, inputs=inputs, files=(out, not_riffles, plot, quarantine), folders=(report,)
    )
    if out is not None and out.suffix.lower() != ".toml":
        raise InputError(f"--out {out} must end in .toml (commands read procedure files by that)")
    from shufflecheck.analyses.riffle_fit import (
        fit_riffle_log,
        fitted_procedure,
        procedure_file_text,
        write_not_riffles,
        write_procedure_file,
    )
    from shufflecheck.models.procedures import parse_procedure

    if procedure is not None:
        parse_procedure(procedure)  # a bad template fails before the work
    with progress(samples, "simulating ideal riffles") as update:
        fit = fit_riffle_log(
            log,
            reference=reference,
            labels=labels.value,
            fmt=log_format,
            deck=deck,
            cards=cards,
            by=by,
            quarantine=quarantine,
            force=force,
            confidence=confidence,
            alpha=alpha,
            samples=samples,
            rng=seed,
            progress=update,
        )
    payload = fit.as_json()
    text = None
    written = {}
    if out is not None or procedure is not None:
        proc = fitted_procedure(fit, procedure)
        payload["procedure"] = proc.describe()
        if out is not None:
            text = procedure_file_text(fit, proc, name=name, house=procedure)
            written["procedure_file"] = str(write_procedure_file(out, text, force=force))
    if not_riffles is not None:
        written["not_riffles_file"] = str(write_not_riffles(not_riffles, fit, force=force))
    figures = ()
    if plot is not None or report is not None:
        from shufflecheck.report.builders.riffle_fit import fit_figures

        figures = fit_figures(fit, level=confidence)
    if plot is not None:
        from shufflecheck.common.files import atomic_write

        written["plot"] = str(atomic_write(plot, figures[0].png, force=force))
    if report is not None:
        from shufflecheck.report.builders.riffle_fit import fit_report
        from shufflecheck.report.provenance import collect_provenance

        inputs = [log] + ([deck] if deck is not None else [])
        document = fit_report(
            fit,
            payload={**payload, **written},
            provenance=collect_provenance(inputs, seeds={"monte-carlo nulls": seed}),
            figures=figures,
            procedure_path=written.get("procedure_file"),
            procedure_text=text,
        )
        written["report"] = save_report(document, report, force=force)
    if json_out:
        emit_json({**payload, **written})
        return
    _print(fit, payload.get("procedure"), written)


def _print(fit, procedure_text: str | None, written: dict) -> None:
    import math

    from shufflecheck.report.render.terminal import format_table

    counts = fit.counts
    echo(
        f"{fit.path}: {counts.riffles:,} riffles of {fit.cards} cards read off "
        f"({counts.changed:,} changed the deck, {counts.unchanged:,} left it unchanged); "
        f"{fit.not_riffles:,} rows are not one riffle of the deck before them."
    )
    if fit.not_riffles:
        rows = ", ".join(str(r) for r in fit.not_riffle_rows[:10].tolist())
        more = f" and {fit.not_riffles - 10:,} more" if fit.not_riffles > 10 else ""
        echo(f"  not one riffle (not used): rows {rows}{more}")
    echo()
    est = fit.estimates
    echo(
        f"Fitted hand riffle (maximum likelihood; {percent(est.confidence)} profile-likelihood "
        "intervals; estimates):"
    )
    ideal_spread = math.sqrt(fit.cards) / 2
    echo(
        format_table(
            ["parameter", "estimate", "ideal riffle (exact)"],
            [
                ["spread", est.spread.quantity().number_text(), f"{ideal_spread:.3g} cards"],
                ["clump", est.clump.quantity().number_text(), "1"],
            ],
            align="lll",
        )
    )
    if fit.step is not None:
        echo(f"Fitted step: {fit.step.describe()}")
    echo()
    from shufflecheck.common.numbers import format_p_value

    tests = fit.tests
    echo(f"The ideal riffle: {tests.verdict()}.")
    rows = [
        [
            t.title,
            format_p_value(t.log10_p_value),
            format_p_value(t.log10_p_adjusted),
            t.method,
            "REJECTS" if t.flagged else "",
        ]
        for t in tests.tests
    ]
    echo(
        format_table(
            ["test", "p", "p (Holm)", "method", "verdict"],
            rows,
            align="lrrll",
            details=[t.effect_text for t in tests.tests],
            details_header="in plain words",
        )
    )
    echo(
        f"Monte Carlo tests: {tests.samples:,} simulated logs of ideal riffles, "
        "p = (1 + k)/(B + 1)."
    )
    for note in fit.notes:
        echo(f"Note: {note}.")
    echo()
    if "procedure_file" in written:
        echo(f"Wrote procedure {written['procedure_file']}: {procedure_text}")
    elif procedure_text is not None:
        echo(f"Procedure with the fitted riffle: {procedure_text}")
    for key, label in (("not_riffles_file", "rows not one riffle"), ("plot", "plot")):
        if key in written:
            echo(f"Wrote {label} {written[key]}")
    if "report" in written:
        echo(f"Wrote report {written['report']}")
    echo(f"{caution('these recorded riffles')} {LOGS_UNTOUCHED}")
