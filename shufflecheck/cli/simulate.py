"""``shufflecheck simulate``: synthetic logs of recorded deck orders (for demos and power)."""

from __future__ import annotations

from enum import Enum
from pathlib import Path
from typing import Annotated

import typer

from shufflecheck.cli._app import app, echo, emit_json


class SimulatedReference(str, Enum):
    previous = "previous"
    first = "first"


@app.command()
def simulate(
    procedure: Annotated[str, typer.Argument(help="Procedure text or a .toml procedure file.")],
    out: Annotated[Path, typer.Option(help="Log file to write (.csv or .jsonl).")],
    cards: Annotated[
        int | None, typer.Option("--cards", "-n", help="Cards per deck (default 52).")
    ] = None,
    decks: Annotated[int, typer.Option(help="Recorded decks to simulate.")] = 1000,
    seed: Annotated[int, typer.Option(min=0, help="Random seed (>= 0).")] = 1,
    repeat: Annotated[
        int, typer.Option("--repeat", "-r", help="Run the procedure r times per deck.")
    ] = 1,
    reference: Annotated[
        SimulatedReference,
        typer.Option(
            help="previous: each deck shuffled from the one before; first: all from row 1."
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
            help="Deck definition TOML for card codes (default: standard 52); a shoe of "
            "repeated cards as shoe(packs=6) or a TOML file with copies."
        ),
    ] = None,
    table: Annotated[str | None, typer.Option(help="Add a 'table' column with this value.")] = None,
    start: Annotated[
        str | None,
        typer.Option(help="Add 'recorded_at' times from this ISO time (e.g. 2026-11-02T18:00)."),
    ] = None,
    every: Annotated[int, typer.Option(help="Seconds between decks for recorded_at.")] = 120,
    force: Annotated[bool, typer.Option(help="Replace --out if it exists.")] = False,
    json_out: Annotated[bool, typer.Option("--json", help="Machine-readable summary.")] = False,
) -> None:
    """Write a synthetic log: one deck per row, card codes top to bottom (invented data).

    The first row is the starting order (the reference); the rest follow the procedure. The
    log is read by `shufflecheck audit` exactly as a recorded one.
    """
    import datetime as dt

    from shufflecheck.common.errors import InputError
    from shufflecheck.models.procedures import procedure_from_argument, simulate_play
    from shufflecheck.records.cards import load_deck
    from shufflecheck.records.logs import write_log
    from shufflecheck.records.shoes import load_shoe

    if out.exists() and not force:
        raise InputError(f"{out} exists; pass --force to replace it")
    proc = procedure_from_argument(procedure)
    shoe = load_shoe(deck) if deck is not None else None
    default = shoe.size if shoe is not None else 52
    n = cards if cards is not None else (proc.cards or default)
    if shoe is not None:
        definition = shoe
    else:
        definition = load_deck(deck) if deck is not None else (load_deck() if n == 52 else None)
    if definition is not None and definition.size != n:
        raise InputError(f"deck definition has {definition.size} cards but --cards is {n}")
    change = None
    if (then is None) != (change_from is None):
        raise InputError("give --then and --from together")
    if then is not None:
        change = (change_from, procedure_from_argument(then))
    orders = simulate_play(
        proc, n, decks, rng=seed, reference=reference.value, repeats=repeat, change=change
    )
    columns: dict[str, list] = {"deck": list(range(decks + 1))}
    if table is not None:
        columns["table"] = [table] * (decks + 1)
    if start is not None:
        try:
            first = dt.datetime.fromisoformat(start)
        except ValueError:
            raise InputError(
                f"--start {start!r} is not an ISO time like 2026-11-02T18:00"
            ) from None
        columns["recorded_at"] = [
            (first + dt.timedelta(seconds=every * i)).isoformat(timespec="seconds")
            for i in range(decks + 1)
        ]
    if definition is not None:
        write_log(out, orders, definition, columns)
    else:
        from shufflecheck.records.cards import integer_deck

        write_log(out, orders, integer_deck(n), columns, labels="int1")
    summary = {
        "out": str(out),
        "procedure": proc.describe(),
        "cards": n,
        "decks": decks,
        "rows": decks + 1,
        "seed": seed,
        "reference": reference.value,
        "change": None
        if change is None
        else {"from": change[0], "procedure": change[1].describe()},
        "labels": "codes" if definition is not None else "int (1..n)",
    }
    if json_out:
        if shoe is not None:
            summary["shoe"] = shoe.describe()
        emit_json(summary)
        return
    how = f"--reference {reference.value}" + (
        "" if definition is not None else f" --labels int --cards {n}"
    )
    if shoe is not None:
        how += f' --deck "{deck}"'
        summary["shoe"] = shoe.describe()
    unit = "shoes" if shoe is not None else "decks"
    echo(
        f"Wrote {out}: {decks:,} simulated {unit} of {n} cards after '{proc.describe()}' "
        f"(seed {seed}; row 1 is the starting order; audit with {how})."
    )
    if change is not None:
        echo(f"From simulated deck {change[0]} (row {change[0] + 2}) on: '{change[1].describe()}'.")
    echo("Invented data for demonstrations and planning, not a recording.")
