"""``shufflecheck simulate``: synthetic logs of recorded deck orders (for demos and power)."""

from __future__ import annotations

import dataclasses
from enum import Enum
from pathlib import Path
from typing import Annotated

import typer

from shufflecheck.cli._app import (
    ForceOption,
    JsonOption,
    SeedOption,
    app,
    echo,
    emit_json,
    repeat_counts,
)


class SimulatedReference(str, Enum):
    previous = "previous"
    first = "first"


@app.command()
def simulate(
    procedure: Annotated[str, typer.Argument(help="Procedure text or a .toml procedure file.")],
    out: Annotated[
        Path, typer.Option("--out", metavar="<file>", help="Log file to write (.csv or .jsonl).")
    ],
    cards: Annotated[
        int | None, typer.Option("--cards", "-n", help="Cards per deck (default 52).")
    ] = None,
    decks: Annotated[
        int,
        typer.Option("--decks", metavar="<int>", help="Decks the log records (1 to 100,000,000)."),
    ] = 1000,
    seed: SeedOption = 1,
    repeat: Annotated[
        str,
        typer.Option(
            "--repeat",
            "-r",
            metavar="<R>",
            help="How many times the procedure is run per deck: exactly R (1 to 100).",
        ),
    ] = "1",
    reference: Annotated[
        SimulatedReference,
        typer.Option(
            "--reference",
            help="previous: each deck shuffled from the one before; first: all from row 1.",
        ),
    ] = SimulatedReference.previous,
    then: Annotated[
        str | None,
        typer.Option(help="A second procedure that takes over from deck --from (a fault)."),
    ] = None,
    change_from: Annotated[
        int | None,
        typer.Option("--from", help="With --then: first simulated deck of the change (1-based)."),
    ] = None,
    deck: Annotated[
        str | None,
        typer.Option(
            "--deck",
            metavar="<deck>",
            help="Deck definition TOML for card codes (default: standard 52); a shoe of "
            "repeated cards as shoe(packs=6) or a TOML file with copies.",
        ),
    ] = None,
    table: Annotated[str | None, typer.Option(help="Add a 'table' column with this value.")] = None,
    start: Annotated[
        str | None,
        typer.Option(
            "--start-time",
            metavar="<time>",
            help="Add 'recorded_at' times from this ISO time (e.g. 2026-11-02T18:00).",
        ),
    ] = None,
    every: Annotated[
        int, typer.Option(help="With --start-time: seconds between decks (1 to a year).")
    ] = 120,
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """Write a synthetic log: one deck per row, card codes top to bottom (invented data).

    The first row is the starting order (the reference); the rest follow the procedure. The
    log is read by `shufflecheck audit` exactly as a recorded one.
    """
    from shufflecheck.analyses.simulate import simulate_log
    from shufflecheck.cli._app import check_outputs, procedure_inputs
    from shufflecheck.common.errors import InputError
    from shufflecheck.common.limits import limit
    from shufflecheck.models.procedures import procedure_from_argument
    from shufflecheck.records.shoes import load_shoe

    inputs = {**procedure_inputs(procedure, then), deck: "the deck definition itself"}
    check_outputs(force=force, inputs=inputs, files=(out,))
    limit("simulate_decks").check(decks)
    (repeats,) = repeat_counts(repeat, ranges=False)
    limit("every").check(every)
    proc = procedure_from_argument(procedure)
    shoe = load_shoe(deck) if deck is not None else None
    if (then is None) != (change_from is None):
        raise InputError("give --then and --from together")
    change = None if then is None else (change_from, procedure_from_argument(then))
    result = simulate_log(
        out,
        proc,
        cards=cards,
        decks=decks,
        seed=seed,
        repeats=repeats,
        reference=reference.value,
        change=change,
        deck=deck,
        table=table,
        start=start,
        every=every,
        force=force,
    )
    summary = dataclasses.asdict(result)
    if json_out:
        if shoe is not None:
            summary["shoe"] = shoe.describe()
        emit_json(summary)
        return
    n = result.cards
    how = f"--reference {reference.value}" + (
        "" if result.labels == "codes" else f" --labels int --cards {n}"
    )
    if shoe is not None:
        how += f' --deck "{deck}"'
        summary["shoe"] = shoe.describe()
    unit = "shoes" if shoe is not None else "decks"
    echo(
        f"Wrote {out}: {decks:,} simulated {unit} of {n} cards after '{result.procedure}' "
        f"(seed {seed}; row 1 is the starting order; audit with {how})."
    )
    if change is not None:
        echo(f"From simulated deck {change[0]} (row {change[0] + 2}) on: '{change[1].describe()}'.")
    echo("Invented data for demonstrations and planning, not a recording.")
