"""``shufflecheck audit`` and ``shufflecheck power``: recorded deck orders and their planning."""

from __future__ import annotations

from enum import Enum
from pathlib import Path
from typing import Annotated

import typer

from shufflecheck.cli._app import (
    ForceOption,
    JsonOption,
    ReportOption,
    SchedulerOption,
    SeedOption,
    WorkersOption,
    app,
    check_outputs,
    echo,
    emit_json,
    plot_option,
    procedure_inputs,
    progress,
    repeat_counts,
    save_report,
)
from shufflecheck.common.cautions import LOGS_UNTOUCHED, caution

#: the features a recorded shoe can be read through (copies alike: not "distinct")
Feature = Enum(
    "Feature",
    {name: name for name in ("rank", "blackjack", "baccarat", "cards", "colour", "suit")},
    type=str,
)


def segment_option(text: str | None) -> tuple[int, int] | None:
    """``"1:52"`` (start:length, start 1-based) -> (1, 52)."""
    if text is None:
        return None
    from shufflecheck.common.errors import InputError

    parts = text.replace("-", ":").split(":")
    try:
        start, length = (int(x) for x in parts)
    except ValueError:
        raise InputError(
            f"--segment must be START:CARDS like 1:52 (reference positions from 1), got {text!r}"
        ) from None
    return start, length


#: every choice of ``--reference`` the log reader takes (``Reference.KEYWORDS``, then a
#: file or an order), one line each; written here so that ``--help`` loads no reader
REFERENCE_CHOICES = (
    "previous: the deck before it (default; per group with --by)",
    "first: the first deck (of each group), itself not tested",
    "deck: the deck definition's order (standard-52: a new pack)",
    "column:NAME: each deck's own starting order, in column NAME",
    "pairs: rows alternate before/after a pass; after-rows tested",
    "FILE: a file holding one order",
    "an order written out: card codes separated by spaces",
)


def reference_help() -> str:
    """The ``--reference`` help: every choice the log reader takes, one line each."""
    lines = REFERENCE_CHOICES
    return "What each deck is compared with (its order before the shuffle):\n\n\b\n" + (
        "\n".join(lines)
    )


class Labels(str, Enum):
    codes = "codes"
    int_ = "int"
    int0 = "int0"
    int1 = "int1"


class Separator(str, Enum):
    space = "space"
    comma = "comma"
    semicolon = "semicolon"
    pipe = "pipe"


class Engine(str, Enum):
    auto = "auto"
    single = "single"
    dask = "dask"


@app.command()
def audit(
    log: Annotated[
        str,
        typer.Argument(
            help="Recorded log: CSV (order column or one column per position), JSON Lines, "
            "Parquet; or a folder of logs, a Parquet dataset partitioned by key=value folders "
            "(table=T7/date=2026-11-02/), or a quoted glob such as 'logs/*.csv'."
        ),
    ],
    reference: Annotated[
        str,
        typer.Option(
            "--reference", metavar="<reference>", show_default=False, help=reference_help()
        ),
    ] = "previous",
    by: Annotated[
        str | None,
        typer.Option(
            help="Column to group results by, e.g. table (per-table table + fleet summary)."
        ),
    ] = None,
    time: Annotated[
        str | None,
        typer.Option(
            help="Column with the time of each deck (decks in time order, per --by group)."
        ),
    ] = None,
    time_format: Annotated[
        str | None,
        typer.Option(
            help="strptime format of --time, e.g. '%d/%m/%Y %I:%M %p' (default: decided from the "
            "values; an ambiguous day/month order is an error)."
        ),
    ] = None,
    order_column: Annotated[
        str | None,
        typer.Option(help="Column holding the orders, e.g. 'Deck Order' (default: order)."),
    ] = None,
    position_columns: Annotated[
        str | None,
        typer.Option(
            help="Position columns of a wide file, top first: 'Card 1..Card 52' or a,b,c."
        ),
    ] = None,
    columns: Annotated[
        str | None,
        typer.Option(
            help="The file has no header row; its columns in order, e.g. 'deck,table,order' "
            "or 'table,p1..p52'."
        ),
    ] = None,
    separator: Annotated[
        Separator | None,
        typer.Option(help="Between cards inside the order field (default: detected)."),
    ] = None,
    alpha: Annotated[float, typer.Option(help="Family-wise error level (Holm).")] = 0.01,
    quarantine: Annotated[
        Path | None,
        typer.Option(
            "--quarantine",
            metavar="<file>",
            help="Set bad rows aside into this CSV and audit the rest.",
        ),
    ] = None,
    labels: Annotated[
        Labels, typer.Option(help="Card codes, or integer labels (0..n-1 or 1..n).")
    ] = Labels.codes,
    deck: Annotated[
        str | None,
        typer.Option(
            "--deck",
            metavar="<deck>",
            help="Deck definition TOML for non-standard decks; a shoe of repeated cards as "
            "shoe(packs=6) or a TOML file with copies.",
        ),
    ] = None,
    cards: Annotated[
        int | None,
        typer.Option(
            "--cards", "-n", help="Cards per deck, for integer-labelled logs without --deck."
        ),
    ] = None,
    feature: Annotated[
        Feature | None,
        typer.Option(
            help="Shoes: what the game sees of a card (rank by default; blackjack: 10-J-Q-K "
            "alike; baccarat: value mod 10; cards: codes, copies alike; colour; suit)."
        ),
    ] = None,
    segment: Annotated[
        str | None,
        typer.Option(
            help="Shoes: reference positions whose cards the zone test follows, START:CARDS "
            "(default 1:52, the reference's first pack)."
        ),
    ] = None,
    log_format: Annotated[
        str | None,
        typer.Option("--format", help="csv, wide, jsonl or parquet (default: extension)."),
    ] = None,
    engine: Annotated[
        Engine,
        typer.Option(
            help="auto (default: Dask for several files of 64 MB or more when installed, else "
            "one process), single, or dask."
        ),
    ] = Engine.auto,
    scheduler: SchedulerOption = None,
    workers: WorkersOption = None,
    plot: Annotated[
        Path | None, plot_option("every test's adjusted p-value against the level")
    ] = None,
    report: ReportOption = None,
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """Test recorded deck orders for bias: exact nulls, Holm control, plain-unit effects.

    Exit code 0 whether or not bias is found (a finding, not a failure); 2 for bad input.
    """
    _check_audit_outputs(log, deck, reference, quarantine, report, force, plot)
    from shufflecheck.analyses.audit_log import audit_log, choose_engine, total_bytes

    chosen = choose_engine(log, engine.value, scheduler)
    with progress(total_bytes(log), "reading") as update:
        result = audit_log(
            log,
            reference=reference,
            labels=labels.value,
            fmt=log_format,
            deck=deck,
            cards=cards,
            feature=None if feature is None else feature.value,
            segment=segment_option(segment),
            by=by,
            time=time,
            time_format=time_format,
            alpha=alpha,
            quarantine=quarantine,
            force=force,
            progress=update,
            order_column=order_column,
            position_columns=position_columns,
            columns=columns,
            separator=None if separator is None else separator.value,
            engine=chosen,
            scheduler=scheduler,
            workers=workers,
        )
    payload = result.as_json()
    if plot is not None:
        from shufflecheck.common.files import atomic_write
        from shufflecheck.report.builders.audit import audit_pvalue_figure

        atomic_write(plot, audit_pvalue_figure(result).png, force=force)
    if report is not None:
        from shufflecheck.report.builders.audit import audit_report
        from shufflecheck.report.provenance import collect_provenance

        files = [Path(s.path) for s in result.sources] or [Path(log)]
        inputs = files + ([Path(deck)] if deck is not None and Path(deck).is_file() else [])
        document = audit_report(
            result,
            payload=payload,
            provenance=collect_provenance(inputs, seeds={"monte-carlo nulls": 0}),
        )
        written = save_report(document, report, force=force)
    if json_out:
        emit_json(payload)
        return
    print_audit(result)
    if plot is not None:
        echo(f"Wrote {plot}")
    if report is not None:
        echo(f"Wrote report {written}")


def _check_audit_outputs(log, deck, reference, quarantine, report, force: bool, plot=None) -> None:
    """Refuse unusable --quarantine and --report paths before any reading: never one of
    the logs, the deck definition or the reference file; never an existing file without
    --force (with several logs, --quarantine is a folder of one file per log)."""
    from shufflecheck.analyses.log_parts import quarantine_path
    from shufflecheck.common.errors import InputError
    from shufflecheck.common.files import check_output, names_file
    from shufflecheck.records.logs.sources import log_sources

    sources = log_sources(log)
    inputs: dict[Path, str] = {s.path: "one of the logs" for s in sources}
    if len(sources) == 1:
        inputs[sources[0].path] = "the log itself"
    if deck is not None:
        inputs[Path(deck)] = "the deck definition itself"
    if names_file(reference):
        inputs[Path(reference)] = "the reference order file itself"
    files = []
    if quarantine is not None and len(sources) > 1:
        if quarantine.exists() and not quarantine.is_dir():
            raise InputError(
                f"cannot write {quarantine}: with several logs --quarantine is a folder "
                "(one file per log), and this is a file"
            )
        if not quarantine.exists():
            check_output(quarantine, force=force, folder=True)
        else:
            files = [quarantine_path(quarantine, s, True) for s in sources]
    elif quarantine is not None:
        files = [quarantine]
    check_outputs(force=force, inputs=inputs, files=[*files, plot], folders=(report,))


def print_audit(result) -> None:
    """Terminal view: verdict line, then the tests sorted by adjusted p-value."""
    from shufflecheck.common.numbers import format_measure, format_p_value
    from shufflecheck.report.render.terminal import format_table

    overall = result.result.overall
    echo(f"{result.path}: {overall.verdict()}")
    info = result.reader
    unit = "decks" if result.shoe is None else "shoes"
    if result.shoe is not None:
        shoe = result.shoe
        echo(
            f"Shoe {result.deck.name} ({shoe.cards} cards, copies alike); feature "
            f"{shoe.feature}; segment {shoe.segment[0] + 1}-{sum(shoe.segment)} followed into "
            f"{len(shoe.zones)} zones."
        )
    echo(
        f"{result.tested:,} {unit} tested against reference '{result.reference}'"
        f" ({info.decks:,} read, {info.set_aside:,} set aside, {result.reference_only:,} only a "
        f"reference, {result.after_set_aside:,} untested after a set-aside row); "
        f"alpha {overall.alpha:g}."
    )
    read = f"Read {info.format}: orders from {info.order_column}"
    if info.order_column.startswith("positions") is False:
        read += f", cards separated by {info.separator} ({info.separator_source})"
    if info.header == "declared":
        read += ", columns declared (no header row)"
    if result.time_format:
        read += f"; times as {result.time_format}"
    echo(read + f"; {result.engine}.")
    if result.small is not None:
        echo(f"Note: {result.small.text()}.")
    echo()
    rows = []
    for t in overall.by_adjusted_p():
        rows.append(
            [
                t.title,
                format_measure(t.statistic),
                format_p_value(t.log10_p_value),
                format_p_value(t.log10_p_adjusted),
                t.method,
                "FLAGGED" if t.flagged else "",
            ]
        )
    echo(
        format_table(
            ["test", "statistic", "p", "p (Holm)", "method", "verdict"],
            rows,
            align="lrrrll",
            details=[t.effect.text for t in overall.by_adjusted_p()],
            details_header="effect (estimate), in words",
        )
    )
    if overall.since_when is not None:
        where = result.since_when_place()
        place = f" ({where})" if where else ""
        echo()
        echo(f"Since when (estimate): {overall.since_when.text}{place}.")
    fleet = result.fleet()
    if fleet is not None:
        _print_fleet(result, fleet)
    for name, why in overall.skipped:
        echo(f"Not run: {name}: {why}")
    echo()
    echo(
        "p-values: exact null laws unless the method says asymptotic or monte-carlo; effects are "
        f"estimates from the recorded {unit} against exact expectations for a random one."
    )
    echo(f"{caution(f'these recorded {unit}')} {LOGS_UNTOUCHED}")


def _print_fleet(result, fleet) -> None:
    from shufflecheck.common.numbers import format_p_value
    from shufflecheck.report.render.terminal import format_table

    echo()
    echo(
        f"By {fleet['by']}: {fleet['flagged']} of {fleet['groups']} flagged "
        "(each group's battery at the same family-wise level)."
    )
    rows = []
    shown = sorted(fleet["table"], key=lambda r: (not r["flagged"], r["log10_p_adjusted"] or 0.0))
    for r in shown[:40]:
        rows.append(
            [
                r["group"],
                f"{r['decks']:,}",
                "FLAGGED" if r["flagged"] else "",
                r["strongest"] or "",
                format_p_value(r["log10_p_adjusted"]) if r["log10_p_adjusted"] is not None else "",
                r["since_when"] or "",
            ]
        )
    echo(
        format_table(
            [
                fleet["by"],
                "decks",
                "verdict",
                "strongest test",
                "p (Holm)",
                "since when (estimate)",
            ],
            rows,
            align="lrllrl",
        )
    )
    if len(shown) > 40:
        echo(f"... and {len(shown) - 40} more (all in --json and --report).")
    # each flagged group's own since-when estimate (the pooled one is printed above)
    groups = {str(k): b for k, b in result.result.groups}
    for r in shown[:40]:
        battery = groups.get(r["group"])
        if battery is not None and battery.since_when is not None:
            where = result.since_when_place(r["group"])
            place = f" (first {battery.unit} of that stretch: {where})" if where else ""
            echo()
            echo(f"Since when in {r['group']} (estimate): {battery.since_when.text}{place}.")


@app.command()
def power(
    procedure: Annotated[str, typer.Argument(help="Procedure text or a .toml procedure file.")],
    cards: Annotated[
        int | None, typer.Option("--cards", "-n", help="Cards per deck (default 52).")
    ] = None,
    alpha: Annotated[
        float, typer.Option(help="Family-wise error level of the audit (Holm).")
    ] = 0.01,
    power_target: Annotated[
        float, typer.Option("--power", help="Chance of flagging the procedure.")
    ] = 0.9,
    repeat: Annotated[
        str,
        typer.Option(
            "--repeat",
            "-r",
            metavar="<R or A-B>",
            help="How many times the procedure is run per deck: R (exactly R) or A-B (each "
            "of A..B, planned separately).",
        ),
    ] = "1",
    simulate: Annotated[
        int,
        typer.Option(
            "--simulate",
            metavar="<int>",
            help="Simulated decks, to learn the procedure's laws (default 4,000; 2,000 for shoes).",
        ),
    ] = 4000,
    confidence: Annotated[
        float,
        typer.Option(
            help="Level of the interval of each estimated count, in [0.5, 1) (as assess)."
        ),
    ] = 0.95,
    deck: Annotated[
        str | None,
        typer.Option(
            "--deck",
            metavar="<deck>",
            help="Plan for shoes: shoe(packs=6) or a TOML file with copies.",
        ),
    ] = None,
    feature: Annotated[
        Feature | None,
        typer.Option(help="Shoes: what the game sees (rank by default; blackjack, baccarat, ...)."),
    ] = None,
    seed: SeedOption = 1,
    plot: Annotated[
        Path | None,
        plot_option("the decks needed against repetitions (needs a range of --repeat)"),
    ] = None,
    report: ReportOption = None,
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """How many recorded decks each test needs to flag a procedure against a random deck.

    Simulates the procedure (estimate), uses each test's exact null for its critical value,
    and searches the smallest number of decks with the requested power. Each count is an
    estimate with its interval at --confidence (the Monte Carlo error of the simulated
    shift carried over to the count).
    """
    check_outputs(force=force, inputs=procedure_inputs(procedure), files=(plot,), folders=(report,))
    from shufflecheck.analyses.plan import plan_power, planning_json
    from shufflecheck.common.checks import check_confidence
    from shufflecheck.models.procedures import procedure_from_argument

    check_confidence(confidence)
    proc = procedure_from_argument(procedure)
    counts = repeat_counts(repeat, key="power_repeats")
    shoe = None
    if deck is not None:
        from shufflecheck.records.shoes import load_shoe

        shoe = load_shoe(deck)
    if shoe is not None:
        from shufflecheck.analyses.plan import plan_shoe_power

        if cards is not None and cards != shoe.size:
            from shufflecheck.common.errors import InputError

            raise InputError(f"the shoe has {shoe.size} cards, not {cards}", argument="cards")
        n = shoe.size
        plans = plan_shoe_power(
            proc,
            shoe,
            counts,
            feature="rank" if feature is None else feature.value,
            alpha=alpha,
            power=power_target,
            simulate=min(simulate, 2000) if simulate == 4000 else simulate,
            seed=seed,
            confidence=confidence,
        )
    else:
        if feature is not None:
            from shufflecheck.common.errors import InputError

            raise InputError(
                "a feature applies to shoes: give the shoe as the deck, e.g. shoe(packs=6)",
                argument=("feature", "deck"),
            )
        n = cards if cards is not None else (proc.cards or 52)
        plans = plan_power(
            proc,
            n,
            counts,
            alpha=alpha,
            power=power_target,
            simulate=simulate,
            seed=seed,
            confidence=confidence,
        )
    payload = planning_json(plans, proc, seed)
    if shoe is not None:
        payload["shoe"] = shoe.describe()
        payload["feature"] = "rank" if feature is None else feature.value
    figure = None
    if (plot or report) and len(plans) > 1:
        from shufflecheck.report.builders.power import power_curves, power_level
        from shufflecheck.report.figures import power_figure

        figure = power_figure(
            power_curves(plans), x_name="repetitions of the procedure", level=power_level(plans)
        )
    if plot is not None:
        from shufflecheck.common.errors import InputError
        from shufflecheck.common.files import atomic_write

        if figure is None:
            raise InputError("--plot needs a range of repetitions, e.g. --repeat 4-8")
        atomic_write(plot, figure.png, force=force)
    if report is not None:
        from shufflecheck.report.builders.power import power_report
        from shufflecheck.report.provenance import collect_provenance

        inputs = [procedure] if procedure.lower().endswith(".toml") else []
        document = power_report(
            plans,
            proc.describe(),
            payload=payload,
            figure=figure,
            provenance=collect_provenance(inputs, seeds={"simulation": seed}),
        )
        written = save_report(document, report, force=force)
    if json_out:
        emit_json(payload)
        return
    _print_power(plans, proc, shoe is not None)
    if plot is not None:
        echo(f"Wrote {plot}")
    if report is not None:
        echo(f"Wrote report {written}")


def _print_power(plans, proc, shoes: bool = False) -> None:
    from shufflecheck.common.numbers import count_interval_text, percent
    from shufflecheck.report.render.terminal import format_table

    first = plans[0][1]
    unit = "shoes" if shoes else "decks"
    echo(
        f"Recorded {unit} needed to flag '{proc.describe()}' on {first.cards} cards with power "
        f"{first.power:g} at family-wise alpha {first.alpha:g} (each test at "
        f"{first.per_test_level:.2g}: Bonferroni over {first.tests_in_battery} tests, "
        "conservative for Holm)."
    )
    echo(
        f"Estimates from {first.simulated_decks:,} simulated {unit} per repetition count; "
        f"{first.null_text()}."
    )
    echo()
    headers = ["test", *(f"r = {r}" for r, _ in plans)]
    tests = [row.test for row in first.rows]
    titles = {row.test: row.title for row in first.rows}
    # with one or two repetition counts each cell carries its interval; with more, the
    # table would not fit a terminal, and the intervals are in --json and --report
    with_interval = len(plans) <= 2
    rows, order = [], []
    for name in tests:
        cells, keys = [], []
        for _, plan in plans:
            row = next(x for x in plan.rows if x.test == name)
            keys.append(row.decks if row.decks is not None else 10**12)
            if row.decks is None:
                cells.append("-")
            elif with_interval:
                low, high = row.decks_interval(plan.confidence)
                cells.append(f"{row.decks:,} ({count_interval_text(low, high)})")
            else:
                cells.append(f"{row.decks:,}")
        rows.append([titles[name], *cells])
        order.append(keys)
    rows = [row for _, row in sorted(zip(order, rows, strict=True), key=lambda t: t[0])]
    echo(format_table(headers, rows, align="l" + "r" * len(plans)))
    level = percent(first.confidence)
    if with_interval:
        echo(f"'-': not detected within the search range. In brackets: {level} interval.")
    else:
        echo(
            f"'-': not detected within the search range. The {level} interval of every count "
            "is in --json and --report; the best test's is below."
        )
    if shoes:
        echo(
            "Shoes are simulated as a log records them, each from the one before (reference "
            "previous); the zone test's null mixes the shoes' own laws (an approximation)."
        )
    else:
        echo(
            "Colour and suit runs are planned for decks that start in new-deck order; when each "
            "deck starts from the previous one (reference previous), those two tests detect less."
        )
    echo()
    echo(
        f"Each count is an estimate; its {level} interval carries the Monte Carlo error of the "
        "simulated shift over to the count (--confidence)."
    )
    echo()
    for r, plan in plans:
        best = plan.best()
        if best is not None:
            low, high = best.decks_interval(plan.confidence)
            noun = unit[:-1] if best.decks == 1 else unit
            echo(
                f"r = {r}: log about {best.decks:,} {noun} ({level} CI "
                f"{count_interval_text(low, high)}; estimate from {plan.simulated_decks:,} "
                f"simulated {unit}) before an audit can be expected to flag it ({best.title})."
            )
        else:
            echo(f"r = {r}: no test of the battery detects it within the search range.")
