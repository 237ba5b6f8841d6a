"""``shufflecheck characters`` and ``shufflecheck spectrum``."""

from __future__ import annotations

import contextlib
import sys
from enum import Enum
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
    progress,
)
from shufflecheck.common.errors import InputError
from shufflecheck.models.registry import spectrum_models

#: above this many entries the terminal gets a summary and the table goes to --csv
_PRINT_LIMIT = 400


@app.command()
def characters(
    n: Annotated[
        int, typer.Argument(help="Degree n of the symmetric group S_n (number of cards).")
    ],
    shape: Annotated[
        str | None, typer.Option("--shape", help="One character: its shape, e.g. 4,2,1 (or 3^2,1).")
    ] = None,
    cycle_class: Annotated[
        str | None,
        typer.Option("--class", help="With --shape: the class as a cycle type, e.g. 3,3,1."),
    ] = None,
    csv: Annotated[
        Path | None,
        typer.Option("--csv", metavar="<file>", help="Write the whole table to this CSV file."),
    ] = None,
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """Exact irreducible characters of S_n (Murnaghan-Nakayama rule on beta-sets).

    With --shape and --class: one value. Otherwise the whole table, rows = shapes and
    columns = classes, both in reverse lexicographic order; a large table goes to --csv.
    """
    from shufflecheck.common.limits import limit
    from shufflecheck.core.characters import character, character_table
    from shufflecheck.core.partitions import (
        check_partition,
        check_shape,
        format_partition,
        parse_partition,
    )

    limit("characters_n").check(n)
    check_outputs(force=force, files=(csv,))
    if (shape is None) != (cycle_class is None):
        raise InputError("give both --shape and --class for one value, or neither for the table")
    if shape is not None and cycle_class is not None:
        lam = check_shape(parse_partition(shape, "shape", most=n), "shape", n)
        mu = check_partition(parse_partition(cycle_class, "class", most=n), "class", n)
        value = character(lam, mu)
        if json_out:
            emit_json({"n": n, "shape": list(lam), "class": list(mu), "value": value})
        else:
            echo(
                f"chi^({format_partition(lam)})({format_partition(mu)}) = {value}   "
                "[exact: Murnaghan-Nakayama rule]"
            )
        return

    table = character_table(n)
    if csv is not None:
        _write_csv(csv, table, force=force)
    if json_out:
        emit_json(
            {
                "n": n,
                "shapes": [list(s) for s in table.shapes],
                "classes": [list(c) for c in table.classes],
                "values": [[int(v) for v in row] for row in table.values],
            }
        )
        return
    size = len(table.shapes)
    if size * size <= _PRINT_LIMIT:
        from shufflecheck.report.render.terminal import format_table

        headers = ["shape \\ class", *(format_partition(c) for c in table.classes)]
        rows = [
            [format_partition(s), *(int(v) for v in row)]
            for s, row in zip(table.shapes, table.values, strict=True)
        ]
        echo(f"Character table of S_{n} (exact integers; rows = shapes, columns = classes)")
        echo(format_table(headers, rows, align="l" + "r" * size))
    else:
        echo(
            f"Character table of S_{n}: {size} shapes x {size} classes, exact integers "
            f"({table.values.dtype})."
        )
        if csv is None:
            echo("Too large to print; write it with --csv FILE or read it with --json.")
    if csv is not None:
        echo(f"Wrote {csv}")


def _write_csv(path: Path, table, *, force: bool) -> None:
    from shufflecheck.common.files import atomic_open
    from shufflecheck.core.partitions import format_partition

    with atomic_open(path, force=force) as handle:
        handle.write("shape," + ",".join(f'"{format_partition(c)}"' for c in table.classes) + "\n")
        for shape, row in zip(table.shapes, table.values, strict=True):
            handle.write(
                f'"{format_partition(shape)}",' + ",".join(str(int(v)) for v in row) + "\n"
            )


#: the models with a spectrum, from the model registry
SpectrumModel = Enum("SpectrumModel", {name: name for name in spectrum_models()}, type=str)


@app.command()
def spectrum(
    model: Annotated[SpectrumModel, typer.Argument(help="Shuffle model.")],
    cards: Annotated[int, typer.Option("--cards", "-n", help="Number of cards n.")] = 52,
    hold: Annotated[
        float | None,
        typer.Option(help="transposition: holding probability (default 1/n, the two-hands model)."),
    ] = None,
    hands: Annotated[
        int, typer.Option(help="riffle: number of packets a (2 = ordinary riffle).")
    ] = 2,
    shapes_shown: Annotated[
        int, typer.Option("--show-shapes", help="Terminal view: shapes listed per eigenvalue.")
    ] = 3,
    report: ReportOption = None,
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """Distinct eigenvalues of a shuffle's transition operator, with multiplicities.

    Multiplicities count eigenvalues of the operator on all n! arrangements. For
    transposition the shapes giving each eigenvalue are listed (the block of the irreducible
    lambda has eigenvalue hold + (1 - hold) chi(tau)/d, multiplicity d^2).
    """
    from shufflecheck.models import SPECTRUM_UNITS
    from shufflecheck.models import spectrum as model_spectrum

    check_outputs(force=force, folders=(report,))
    with progress(SPECTRUM_UNITS, f"{model.value} spectrum", after=0.5) as update:
        rows = model_spectrum(model.value, cards, hold=hold, hands=hands, progress=update)
    with _exact_digits():
        if report is not None:
            written = _spectrum_report(model.value, cards, rows, report, force, hold, hands)
        _show_spectrum(model.value, cards, rows, shapes_shown, json_out)
    if report is not None and not json_out:
        echo(f"Wrote report {written}")


#: longest multiplicity (with separators) printed in full in the terminal's table
_TERMINAL_DIGITS = 29


def _show_spectrum(model: str, cards: int, rows, shapes_shown: int, json_out: bool) -> None:
    """Terminal or JSON view. Multiplicities are exact integers: in full with thousands
    separators in the terminal, and in the JSON both as a JSON integer (``multiplicity``,
    exact: JSON numbers have no size limit and Python reads them exactly) and as its decimal
    digits (``multiplicity_text``) for readers that turn numbers beyond 2^53 into floats."""
    from shufflecheck.common.numbers import format_count, format_number
    from shufflecheck.report.render.terminal import format_table

    if json_out:
        emit_json(spectrum_payload(model, cards, rows))
        return
    from shufflecheck.core.partitions import format_partition

    table_rows = []
    details = []
    with_shapes = any(r.shapes for r in rows)
    for r in rows:
        shown = ", ".join(f"({format_partition(s, compact=True)})" for s in r.shapes[:shapes_shown])
        if len(r.shapes) > shapes_shown:
            shown += f", ... ({len(r.shapes)} shapes)"
        multiplicity = format_count(r.multiplicity)
        if len(multiplicity) > _TERMINAL_DIGITS:  # too wide for 100 columns: the exact
            digits = str(r.multiplicity)  # digits go on their own line under the row
            details.append(f"multiplicity, exact: {multiplicity}")
            multiplicity = f"~{digits[0]}.{digits[1:5]}e+{len(digits) - 1}"
        else:
            details.append("")
        cells = [format_number(float(r.value), 6), str(r.value), multiplicity]
        table_rows.append([*cells, shown] if with_shapes else cells)
    headers = ["eigenvalue", "exact", "multiplicity", "shapes"][: len(table_rows[0])]
    echo(f"Spectrum of {model} on {cards} cards: {len(rows)} distinct eigenvalues [exact]")
    long = any(details)
    echo(
        format_table(
            headers,
            table_rows,
            align="rlrl"[: len(headers)],
            details=details if long else None,
        )
    )
    if long:
        echo(
            "~: a multiplicity too long for its column, rounded there; its exact digits are "
            "on the line under the row (and in --json and --report)."
        )


@contextlib.contextmanager
def _exact_digits():
    """Let exact multiplicities of thousands of digits be written out (Python limits the
    conversion of long integers to text by default, against untrusted input; these are
    the tool's own results)."""
    getter = getattr(sys, "get_int_max_str_digits", None)
    if getter is None:  # pragma: no cover - Python without the limit
        yield
        return
    before = getter()
    sys.set_int_max_str_digits(0)
    try:
        yield
    finally:
        sys.set_int_max_str_digits(before)


def spectrum_payload(model: str, cards: int, rows) -> dict:
    """The ``spectrum --json`` result (also the data of its report)."""
    return {
        "model": model,
        "cards": cards,
        "rows": [
            {
                "eigenvalue": float(r.value),
                "eigenvalue_exact": str(r.value),
                "multiplicity": r.multiplicity,
                "multiplicity_text": str(r.multiplicity),
                "shapes": [list(s) for s in r.shapes],
            }
            for r in rows
        ],
    }


def _spectrum_report(model: str, cards: int, rows, folder: Path, force: bool, hold, hands) -> str:
    """Write the report of one spectrum; the folder written."""
    from shufflecheck.cli._app import save_report
    from shufflecheck.models.registry import entry
    from shufflecheck.report.builders.spectrum import spectrum_report
    from shufflecheck.report.provenance import collect_provenance

    options = entry(model).spectrum_options
    parameters = ", ".join(
        text
        for name, text in (("hands", f"hands = {hands}"), ("hold", f"hold = {hold}"))
        if name in options and (name != "hold" or hold is not None)
    )
    document = spectrum_report(
        model,
        cards,
        rows,
        payload=spectrum_payload(model, cards, rows),
        provenance=collect_provenance(),
        parameters=parameters,
    )
    return save_report(document, folder, force=force)
