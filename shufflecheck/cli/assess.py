"""``shufflecheck assess``: how far from random a dealing procedure leaves the deck."""

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
    estimate_cell,
    plot_option,
    procedure_inputs,
    progress,
    repeat_counts,
    save_report,
)
from shufflecheck.common.numbers import percent

#: what a game sees of a shoe (``distinct``: every card told apart)
ShoeFeature = Enum(
    "ShoeFeature",
    {n: n for n in ("rank", "blackjack", "baccarat", "cards", "colour", "suit", "distinct")},
    type=str,
)


@app.command()
def assess(
    procedure: Annotated[
        str,
        typer.Argument(
            help="Procedure text, e.g. 'riffle x3, strip(packets=5), riffle, cut', or a .toml file."
        ),
    ],
    cards: Annotated[
        int | None,
        typer.Option("--cards", "-n", help="Number of cards (default: the file's, else 52)."),
    ] = None,
    repeat: Annotated[
        str,
        typer.Option(
            "--repeat",
            "-r",
            metavar="<R or A-B>",
            help="How many times the procedure is run: R (exactly R) or A-B (each of A..B).",
        ),
    ] = "1-10",
    simulate: Annotated[
        int,
        typer.Option(
            "--simulate", metavar="<int>", help="Simulated decks for the Monte Carlo parts."
        ),
    ] = 100_000,
    seed: SeedOption = 1,
    confidence: Annotated[
        float, typer.Option(help="Confidence of lower bounds and intervals.")
    ] = 0.99,
    deck: Annotated[
        str | None,
        typer.Option(
            "--deck",
            metavar="<deck>",
            help="A shoe of repeated cards: shoe(packs=6) or a TOML file with copies.",
        ),
    ] = None,
    feature: Annotated[
        ShoeFeature | None,
        typer.Option(
            help="With a shoe: what the game sees (rank by default; blackjack, baccarat, "
            "cards, colour, suit, or distinct: every card told apart)."
        ),
    ] = None,
    plot: Annotated[Path | None, plot_option("the bounds on total variation against r")] = None,
    report: ReportOption = None,
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """Distance to a random deck and an observant player's edge, for r repetitions.

    Each number says how it was obtained: exact (the whole procedure is an exactly analysed
    model), an upper bound from the exactly analysed blocks (block inequalities), a
    conjectured upper bound (the unproven interleaving conjecture; never certifies), a
    lower bound at the stated confidence from simulated decks, or an estimate with its
    interval (the guessing game).
    """
    counts = repeat_counts(repeat)
    check_outputs(force=force, inputs=procedure_inputs(procedure), files=(plot,), folders=(report,))
    from shufflecheck.analyses.assess import assess as run_assessment
    from shufflecheck.analyses.assess import assessment_json, assessment_work, only_repeats
    from shufflecheck.models.procedures import procedure_from_argument

    proc = procedure_from_argument(procedure)
    shoe = None
    if deck is not None:
        from shufflecheck.records.shoes import load_shoe

        shoe = load_shoe(deck)
    seen = None if feature is None else feature.value
    if seen is not None and shoe is None:
        from shufflecheck.common.errors import InputError

        raise InputError(
            "a feature applies to shoes: give the shoe as the deck, e.g. shoe(packs=6)",
            argument=("feature", "deck"),
        )
    n = shoe.size if shoe is not None else (cards if cards is not None else (proc.cards or 52))
    if shoe is not None and cards is not None and cards != shoe.size:
        from shufflecheck.common.errors import InputError

        raise InputError(f"the shoe has {shoe.size} cards, not {cards}", argument="cards")
    decks, most = simulate, counts[-1]
    units = assessment_work(decks, most, n)
    size = f"{decks:,} decks x {n} cards x {most} repetition{'s' if most != 1 else ''}"
    long_work = decks * n * most >= 10_000_000
    with progress(units if long_work else 0, "simulating", size) as update:
        if shoe is not None and (seen or "rank") != "distinct":
            from shufflecheck.analyses.feature_assess import assess_feature

            result = assess_feature(
                proc,
                shoe,
                seen or "rank",
                repeats=most,
                decks=decks,
                rng=seed,
                confidence=confidence,
                progress=update,
            )
        else:
            result = run_assessment(
                proc,
                n,
                repeats=most,
                decks=decks,
                rng=seed,
                confidence=confidence,
                progress=update,
            )
    result = only_repeats(result, counts)
    payload = assessment_json(result)
    figure = _figure(result) if plot or report else None
    if plot is not None:
        from shufflecheck.common.files import atomic_write

        atomic_write(plot, figure.png, force=force)
    if report is not None:
        from shufflecheck.report.builders.assess import assessment_report
        from shufflecheck.report.provenance import collect_provenance

        inputs = [procedure] if procedure.lower().endswith(".toml") else []
        document = assessment_report(
            result,
            payload=payload,
            figure=figure,
            provenance=collect_provenance(inputs, seeds={"simulation": seed}),
        )
        written = save_report(document, report, force=force)
    if json_out:
        emit_json(payload)
        return
    _print(result)
    if plot is not None:
        echo(f"Wrote {plot}")
    if report is not None:
        echo(f"Wrote report {written}")


def _num(value: float, rounding: str = "nearest", below_one: float | None = None) -> str:
    """Four significant digits; bounds rounded outward (never claiming more than proven);
    a value below 1 never reads 1 (``below_one``: ``1 - value`` exactly, where known)."""
    from shufflecheck.common.numbers import format_number

    return format_number(float(value), 4, rounding, below_one=below_one)


def _range(row, metric: str) -> tuple[str, str]:
    """(value text, how) for one metric of one row."""
    if row.exact is not None:
        gap = row.exact.below_one(metric)
        return f"= {_num(row.exact.value(metric), below_one=gap)}", "exact"
    low = row.lower.get(metric)
    high = row.upper.get(metric)
    lo = _num(low.value, "down") if low is not None else "0"
    if high is not None:
        hi = _num(high.value, "up")
    else:
        hi = "1" if metric != "kl_bits" else "?"
    how = "bounds" if high is not None else "lower bound"
    return f"{lo} to {hi}", how


def _print(result) -> None:
    from shufflecheck.report.render.terminal import format_table

    title = f"'{result.procedure}'" + (f" ({result.name})" if result.name else "")
    shoe = result.feature != "distinct"
    unit = "shoe" if shoe else "deck"
    echo(f"Assessment of {title} on {result.cards} cards")
    if shoe:
        echo(f"Feature: {result.feature} of {result.deck} (what the game sees).")
    else:
        echo(
            "Feature: distinct cards (every card told apart; a feature a game sees is no farther)."
        )
    echo(
        f"{result.decks:,} simulated {unit}s, seed {result.seed}; lower bounds hold at "
        f"{percent(result.confidence)} confidence."
    )
    for note in result.notes:
        echo(f"Note: {note}")
    echo()
    conjectures = any(row.conjectured for row in result.rows)
    headers = [
        "r",
        "total variation",
        "how",
        "separation",
        f"extra guesses/{unit}",
        "best strategy",
    ]
    if conjectures:
        headers.insert(3, "conjectured TV")
    estimates = any(row.estimated for row in result.rows)
    if estimates:
        headers.insert(3, "TV estimate (99% CI)")
    rows = []
    for row in result.rows:
        tv, how = _range(row, "total_variation")
        sep, _ = _range(row, "separation")
        extra = row.extra_guesses
        lo, hi = extra.interval
        line = [
            row.repeats,
            tv,
            how,
            sep,
            f"{extra.value:+.3f} ({lo:+.3f} to {hi:+.3f})",
            row.best_strategy,
        ]
        if conjectures:
            guess = row.conjectured.get("total_variation")
            line.insert(3, f"<= {_num(guess.value, 'up')}" if guess is not None else "-")
        if estimates:
            found = row.estimated.get("total_variation")
            line.insert(3, "-" if found is None else estimate_cell(found))
        rows.append(line)
    echo(format_table(headers, rows, align="r" + "l" * (len(headers) - 1)))
    echo()
    first = result.rows[0]
    echo("How each number was obtained:")
    echo("  exact       the whole repeated procedure is one exactly analysed model")
    echo("  bounds      upper: block inequalities on the exactly analysed blocks (each block")
    echo("              absorbed, or through its TV, separation or chi-square distance);")
    echo("              lower: statistics of the simulated decks, split sample,")
    echo(
        f"              Clopper-Pearson ({percent(result.confidence)}), "
        "Bonferroni over the statistics"
    )
    if estimates:
        echo("  estimate    Monte Carlo over 2,000 uniform words, each word's exact chance after")
        echo("              ideal riffles from a start in blocks or alternating; '-' after the")
        echo("              first below 0.01 or beyond the work limit; certifies nothing")
    if conjectures:
        echo("  conjectured NOT a bound: the unproven interleaving conjecture (steps between")
        echo("              ideal riffles never raise the separation); never used to certify")
    if shoe:
        echo("  (shoes: upper bounds are the distinct cards' figures, or the feature's own")
        echo("              figures for ideal riffles; lower bounds from the statistics of")
        echo("              the feature's word with exact laws, read from the shoe's")
        echo("              reference order, or the feature's own sure figures)")
        echo(
            f"  guesses     estimate ({percent(result.confidence)} interval): correct guesses "
            "per shoe naming a most frequent remaining value, beyond "
            f"{first.uniform_guesses:.4f}, the exact mean for a random shoe"
        )
    else:
        echo(
            f"  guesses     estimate ({percent(result.confidence)} interval): correct guesses "
            f"per deck beyond {first.uniform_guesses:.4f}, the exact mean for a random deck "
            f"(H_{result.cards})"
        )
    echo()
    from shufflecheck.analyses.assess import CAUTION

    echo(CAUTION)


def _figure(result):
    from shufflecheck.report.figures import distance_figure

    return distance_figure(
        assessment_series(result),
        metric="total variation distance",
        steps_name="repetitions",
        level=result.confidence,
    )


def assessment_series(result) -> list[dict]:
    """Exact values and bounds on total variation against r, as plain series."""
    series = []
    exact = [r for r in result.rows if r.exact is not None]
    if exact:
        series.append(
            {
                "label": result.procedure,
                "kind": "exact",
                "steps": [r.repeats for r in exact],
                "values": [r.exact.total_variation for r in exact],
            }
        )
    estimated = [r for r in result.rows if "total_variation" in r.estimated]
    if estimated:
        series.append(
            {
                "label": "Monte Carlo estimate of the exact value",
                "kind": "estimate",
                "steps": [r.repeats for r in estimated],
                "values": [r.estimated["total_variation"].value for r in estimated],
                "low": [r.estimated["total_variation"].interval[0] for r in estimated],
                "high": [r.estimated["total_variation"].interval[1] for r in estimated],
            }
        )
    conjectured = [r for r in result.rows if "total_variation" in r.conjectured]
    if conjectured:
        series.append(
            {
                "label": "interleaving conjecture, unproven",
                "kind": "conjectured",
                "side": "upper",
                "steps": [r.repeats for r in conjectured],
                "values": [r.conjectured["total_variation"].value for r in conjectured],
            }
        )
    upper = [r for r in result.rows if "total_variation" in r.upper]
    if upper:
        series.append(
            {
                "label": "block inequalities, exactly analysed blocks",
                "kind": "bound",
                "side": "upper",
                "steps": [r.repeats for r in upper],
                "values": [r.upper["total_variation"].value for r in upper],
            }
        )
    series.append(
        {
            "label": f"from {result.decks:,} simulated decks, "
            f"{percent(result.confidence)} confidence",
            "kind": "bound",
            "side": "lower",
            "steps": [r.repeats for r in result.rows],
            "values": [r.lower["total_variation"].value for r in result.rows],
        }
    )
    return series
