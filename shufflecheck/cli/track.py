"""``shufflecheck track``: how far a slug can be followed through a shoe shuffle."""

from __future__ import annotations

from enum import Enum
from pathlib import Path
from typing import Annotated

import typer

from shufflecheck.cli._app import (
    ForceOption,
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
from shufflecheck.common.numbers import percent


class Placement(str, Enum):
    watched = "watched"
    fixed = "fixed"


def _slug(text: str) -> tuple[int, int]:
    from shufflecheck.cli.audit import segment_option

    found = segment_option(text)
    assert found is not None
    return found


@app.command()
def track(
    procedure: Annotated[
        str | None,
        typer.Argument(help="Procedure text or a .toml procedure file (or give --log)."),
    ] = None,
    log: Annotated[
        Path | None,
        typer.Option(
            "--log",
            metavar="<file>",
            help="Recorded shoes instead: each shoe against the shoe before it.",
        ),
    ] = None,
    deck: Annotated[
        str,
        typer.Option(
            "--deck", metavar="<deck>", help="The shoe: shoe(packs=6) or a TOML file with copies."
        ),
    ] = "shoe(packs=6)",
    slug: Annotated[
        str,
        typer.Option(help="Reference positions of the slug, START:CARDS (default 1:52)."),
    ] = "1:52",
    window: Annotated[int, typer.Option(help="Cards the observer follows.")] = 52,
    at_least: Annotated[
        int, typer.Option(help="Slug cards in the window that count as a catch.")
    ] = 26,
    placement: Annotated[
        Placement,
        typer.Option(
            help="watched: the window centred where this shoe's slug went in; fixed: the one "
            "best window for the procedure (chosen on half the shoes, measured on the other)."
        ),
    ] = Placement.watched,
    coverage: Annotated[
        float, typer.Option(help="Share of the slug the spread figure covers.")
    ] = 0.9,
    shoes: Annotated[
        int,
        typer.Option("--simulate", metavar="<int>", help="Simulated shoes (with a PROCEDURE)."),
    ] = 20000,
    seed: SeedOption = 1,
    confidence: Annotated[float, typer.Option(help="Level of every interval.")] = 0.95,
    plot: Annotated[
        Path | None, plot_option("the slug cards caught per shoe against a random shoe")
    ] = None,
    report: ReportOption = None,
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """Tracking exposure: where a slug of the discards comes out of a shoe shuffle.

    Gives the span holding most of the slug's cards and the chance that an observer's window
    catches many of them, against a randomly shuffled shoe; every figure is labelled
    (estimates carry intervals). Statistical evidence, not certification.
    """
    inputs = {log: "the log itself"} if log is not None else {}
    if procedure is not None and procedure.lower().endswith(".toml"):
        inputs[Path(procedure)] = "the procedure file itself"
    if not deck.strip().lower().startswith("shoe"):
        inputs[Path(deck)] = "the deck definition itself"
    check_outputs(force=force, inputs=inputs, files=(plot,), folders=(report,))
    from shufflecheck.analyses.tracking import (
        CAUTION,
        recorded_exposure,
        tracking_exposure,
        tracking_json,
    )
    from shufflecheck.common.errors import InputError
    from shufflecheck.records.shoes import load_shoe

    definition = load_shoe(deck)
    if definition is None:
        raise InputError(
            f"--deck {deck!r} is not a shoe; write shoe(packs=6) or a TOML with copies"
        )
    if (procedure is None) == (log is None):
        raise InputError("give a PROCEDURE to simulate or --log with recorded shoes (one of them)")
    if log is not None:
        result = recorded_exposure(
            log,
            definition,
            slug=_slug(slug),
            window=window,
            at_least=at_least,
            coverage=coverage,
            confidence=confidence,
            rng=seed,
        )
    else:
        from shufflecheck.models.procedures import procedure_from_argument

        proc = procedure_from_argument(procedure)
        cards = proc.cards or definition.size
        if cards != definition.size:
            raise InputError(f"the procedure is for {cards} cards, the shoe has {definition.size}")
        with progress(shoes, "simulating shoes") as update:
            result = tracking_exposure(
                proc,
                cards,
                slug=_slug(slug),
                window=window,
                at_least=at_least,
                placement=placement.value,
                coverage=coverage,
                shoes=shoes,
                confidence=confidence,
                rng=seed,
                progress=update,
            )
    payload = tracking_json(result)
    if plot is not None:
        from shufflecheck.common.files import atomic_write
        from shufflecheck.report.builders.track import tracking_figure

        figure = tracking_figure(result)
        if figure is None:
            raise InputError("there is no figure to draw: no shoe was followed")
        atomic_write(plot, figure.png, force=force)
    if report is not None:
        from shufflecheck.report.builders.track import tracking_report
        from shufflecheck.report.provenance import collect_provenance

        inputs = [log] if log is not None else []
        if procedure is not None and procedure.lower().endswith(".toml"):
            inputs.append(Path(procedure))
        document = tracking_report(
            result,
            payload=payload,
            provenance=collect_provenance(inputs, seeds={"simulation": seed}),
        )
        written = save_report(document, report, force=force)
    if json_out:
        emit_json(payload)
        return
    from shufflecheck.report.render.terminal import format_table

    echo(f"Tracking exposure: {result.source} ({definition.describe()})")
    echo(result.sentence())
    echo()
    rows = [
        [
            f"span holding {percent(result.coverage)} of the slug",
            result.spread.text(),
            result.spread_random.text(),
        ],
        [
            f"slug cards in the {result.window}-card window",
            result.mean_caught.text(),
            result.mean_caught_random.text(),
        ],
        [
            f"chance of at least {result.at_least} of {result.slug[1]}",
            result.chance.text(),
            result.chance_random.text(),
        ],
    ]
    echo(format_table(["figure", "this procedure / these shoes", "random shoe"], rows))
    for note in result.notes:
        echo(f"Note: {note}.")
    echo(CAUTION)
    if plot is not None:
        echo(f"Wrote {plot}")
    if report is not None:
        echo(f"Wrote report {written}")
