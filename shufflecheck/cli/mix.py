"""``shufflecheck mix``: exact distance to random after k steps, and the minimum steps."""

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
    progress,
    save_report,
)
from shufflecheck.common.cautions import caution
from shufflecheck.common.numbers import format_number
from shufflecheck.core.distances import METRICS
from shufflecheck.models.registry import curve_models, entry

#: the models with an exact distance curve, from the model registry
MixModel = Enum("MixModel", {name: name for name in curve_models()}, type=str)


class Metric(str, Enum):
    total_variation = "total-variation"
    separation = "separation"
    kl = "kl"


#: features a distance can be taken on (``distinct``: every card told apart)
FeatureName = Enum(
    "FeatureName",
    {
        name: name
        for name in ("distinct", "cards", "rank", "blackjack", "baccarat", "colour", "suit")
    },
    type=str,
)


class Start(str, Enum):
    reference = "reference"
    blocks = "blocks"
    alternating = "alternating"


class ChainMethod(str, Enum):
    chain = "chain"
    fourier = "fourier"
    bound = "bound"


@app.command()
def mix(
    model: Annotated[MixModel, typer.Argument(help="Shuffle model with an exact law.")],
    cards: Annotated[
        int, typer.Option("--cards", "-n", help="Number of cards (52; 312 for a 6-deck shoe).")
    ] = 52,
    max_steps: Annotated[
        int | None,
        typer.Option(
            "--max-steps", "-k", help="Show k = 1..K steps (default: well past the cutoff)."
        ),
    ] = None,
    target: Annotated[
        float | None,
        typer.Option(help="Distance target in (0, 1]; the first step meeting it is marked."),
    ] = None,
    metric: Annotated[
        Metric, typer.Option(help="Metric the target applies to.")
    ] = Metric.total_variation,
    hands: Annotated[
        int, typer.Option(help="riffle: packets a of an a-shuffle (2 = ordinary riffle).")
    ] = 2,
    shelves: Annotated[int, typer.Option(help="shelf: number of shelves of the machine.")] = 10,
    hold: Annotated[
        float | None, typer.Option(help="transposition: chance a step does nothing (default 1/n).")
    ] = None,
    method: Annotated[
        ChainMethod,
        typer.Option(
            help="transposition: lumped chain (n <= 55), Fourier inversion (n <= 20), or "
            "the upper bound lemma alone (bound, n <= 64)."
        ),
    ] = ChainMethod.chain,
    deck: Annotated[
        str | None,
        typer.Option(
            "--deck",
            metavar="<deck>",
            help="riffle on a feature: the deck or shoe, e.g. shoe(packs=6) (default standard-52).",
        ),
    ] = None,
    feature: Annotated[
        FeatureName,
        typer.Option(
            help="What the distance is taken on: distinct cards (default), or what a game sees: "
            "cards (copies alike), rank, blackjack, baccarat, colour, suit (riffle only)."
        ),
    ] = FeatureName.distinct,
    start: Annotated[
        Start,
        typer.Option(
            help="With a feature: the order before the riffles, the deck's reference order, "
            "blocks (the cards sorted by value: the most ordered start) or alternating (a "
            "feature of two equal classes, e.g. colour: red, black, red, ...)."
        ),
    ] = Start.reference,
    simulate: Annotated[
        int,
        typer.Option(
            "--simulate",
            metavar="<int>",
            help="A start in blocks (three or more classes) or alternating, too large for the "
            "exact sum: simulated decks (uniformly random words) behind the Monte Carlo "
            "estimate of the exact total variation.",
        ),
    ] = 2000,
    seed: SeedOption = 0,
    plot: Annotated[Path | None, plot_option("the distance against steps")] = None,
    report: ReportOption = None,
    force: ForceOption = False,
    json_out: JsonOption = False,
) -> None:
    """Exact distance to a perfectly random deck after k steps of a classical shuffle.

    Total variation (largest advantage on any yes/no event), separation (a guarantee
    P >= (1 - s) U) and KL divergence in bits, for k = 1..K, each labelled exact or bound,
    and the smallest k that meets --target. These describe the idealised model, not a
    particular dealer or machine; the output is statistical evidence, not certification.
    """
    check_outputs(
        force=force,
        inputs={deck: "the deck definition itself"} if deck is not None else (),
        files=(plot,),
        folders=(report,),
    )
    from shufflecheck.core.distances import METRIC_NAMES, check_target, minimum_steps
    from shufflecheck.models import default_max_steps, distance_curve_until

    goal = check_target(target)
    if start is Start.alternating and feature is FeatureName.distinct:
        from shufflecheck.common.errors import InputError

        raise InputError(
            "--start alternating needs a feature of two classes (e.g. --feature colour); "
            "distinct cards are riffled from the reference order",
            argument="start",
        )
    if feature is not FeatureName.distinct or deck is not None:
        _mix_feature(
            model.value,
            deck,
            feature.value,
            start.value,
            cards,
            max_steps,
            goal,
            METRIC_NAMES[metric.value],
            hands,
            plot,
            report,
            force,
            json_out,
            simulate,
            seed,
        )
        return
    steps = max_steps if max_steps is not None else default_max_steps(model.value, max(cards, 2))
    reports = "progress" in entry(model.value).curve_options
    chosen = METRIC_NAMES[metric.value]
    with progress(steps if reports else 0, f"{model.value}: k = 1..{steps}", after=0.5) as update:
        curve, default_steps = distance_curve_until(
            model.value,
            cards,
            goal,
            chosen,
            max_steps,
            hands=hands,
            hold=hold,
            shelves=shelves,
            method=method.value,
            progress=update,
        )
    extended = default_steps if len(curve.rows) > default_steps else None
    minimum = {chosen: minimum_steps(curve.rows, chosen, goal)}
    bound_minimum = {chosen: minimum_steps(curve.bounds, chosen, goal)}
    payload = _payload(curve, goal, metric.value, minimum, bound_minimum, extended)
    figure = _figure(curve, chosen, goal, minimum[chosen]) if plot or report else None
    if plot is not None:
        from shufflecheck.common.files import atomic_write

        atomic_write(plot, figure.png, force=force)
    if report is not None:
        from shufflecheck.report.builders.mix import mixing_report
        from shufflecheck.report.provenance import collect_provenance

        document = mixing_report(
            curve,
            metric=chosen,
            target=goal,
            minimum=minimum,
            payload=payload,
            figure=figure,
            provenance=collect_provenance(),
        )
        written = save_report(document, report, force=force)
    if json_out:
        emit_json(payload)
        return
    _print(curve, goal, chosen, minimum, bound_minimum, extended)
    if plot is not None:
        echo(f"Wrote {plot}")
    if report is not None:
        echo(f"Wrote report {written}")


def _mix_feature(
    model,
    deck,
    feature,
    start,
    cards,
    max_steps,
    goal,
    chosen,
    hands,
    plot,
    report,
    force,
    json_out,
    samples: int = 2000,
    seed: int = 0,
) -> None:
    """``mix riffle --feature F``: labelled distances of the word a game sees."""
    from shufflecheck.common.checks import check_integer
    from shufflecheck.common.errors import InputError

    check_integer(samples, "--simulate", low=2)
    from shufflecheck.models import default_max_steps
    from shufflecheck.models.features import (
        FEATURE_SOURCES_NOTE,
        estimate_skipped,
        feature_curve_until,
    )
    from shufflecheck.records.cards import load_deck
    from shufflecheck.records.shoes import load_shoe, shoe

    if model != "riffle":
        raise InputError(
            "distances on a feature are offered for riffle; for other steps the distinct-card "
            "distances of mix are upper bounds for every feature, and assess gives lower bounds",
            argument="feature",
        )
    definition = load_shoe(deck) if deck is not None else None
    if definition is None:
        definition = shoe(1, load_deck(deck))
    if cards != 52 and cards != definition.size:
        raise InputError(f"the deck has {definition.size} cards, not {cards}", argument="cards")
    classes = definition.feature_classes(feature)
    words = sorted(classes.tolist()) if start == "blocks" else classes.tolist()
    if start == "alternating":
        words = _alternating_start(classes.tolist(), feature)
    feat = definition.feature(feature)
    default = default_max_steps("riffle", definition.size)
    rows_planned = default if max_steps is None else max_steps
    with progress(rows_planned, f"riffle on '{feature}': k = 1..{rows_planned}", after=0.5) as bar:
        shown = [0]  # a range extended from the default starts again at k = 1: never go back

        def advance(k: int) -> None:
            shown[0] = max(shown[0], min(k, rows_planned))
            bar(shown[0])

        curve = feature_curve_until(
            words,
            default,
            goal,
            chosen,
            max_steps=max_steps,
            hands=hands,
            feature=feature,
            start_name=start,
            names=feat.names,
            progress=advance,
            samples=samples,
            seed=seed,
        )
    steps = len(curve.rows)
    extended = default if steps > default else None
    minimum = {chosen: curve.minimum(chosen, goal)}
    estimated = any(r.total_variation_estimate is not None for r in curve.rows)
    skipped = None if estimated else estimate_skipped(words, samples, hands=hands)
    guess = curve.estimated_minimum(goal) if estimated and chosen == "total_variation" else None
    short = curve.proven_short(chosen, goal)
    payload = {
        "model": model,
        "deck": definition.describe(),
        "cards": definition.size,
        "feature": feature,
        "feature_description": feat.title,
        "start": start,
        "hands": hands,
        "samples": samples if estimated else None,
        "seed": seed if estimated else None,
        "classes": list(feat.names),
        "class_counts": list(definition.class_counts(feature)),
        "target": goal,
        "metric": chosen,
        "rows": [row.as_json() for row in curve.rows],
        "minimum_steps": minimum,
        # fewer riffles than this are proven too few (an exact value or rigorous lower bound
        # above the target one row before)
        "minimum_steps_at_least": (
            None if goal is None else {chosen: 1 if short is None else short[0] + 1}
        ),
        # the Monte Carlo estimate's view (its interval's upper end meets the target): an
        # estimate that certifies nothing, beside the certified minimum above
        "minimum_steps_estimate": (
            {chosen: None if guess is None else guess[0]}
            if estimated and chosen == "total_variation" and goal is not None
            else None
        ),
        "range_extended_from": extended,
        "estimate_skipped": skipped,
        "caution": caution("the idealised model"),
    }
    if plot is not None or report is not None:
        from shufflecheck.report.builders.mix import feature_mixing_report, feature_series
        from shufflecheck.report.figures import distance_figure

        figure = distance_figure(
            feature_series(curve, chosen),
            target=goal,
            metric=_METRIC_AXIS[chosen],
            steps_name=entry("riffle").steps_word,
            level=0.99,  # the estimates' intervals
        )
        if plot is not None:
            from shufflecheck.common.files import atomic_write

            atomic_write(plot, figure.png, force=force)
        if report is not None:
            from shufflecheck.report.provenance import collect_provenance

            document = feature_mixing_report(
                curve,
                definition.describe(),
                metric=chosen,
                target=goal,
                minimum=minimum,
                payload=payload,
                figure=figure,
                provenance=collect_provenance(),
            )
            written = save_report(document, report, force=force)
    if json_out:
        emit_json(payload)
        return
    from shufflecheck.report.render.terminal import format_table

    echo(
        f"Distance to a uniformly random arrangement on feature '{feature}' ({feat.title}): "
        f"riffle on {definition.describe()}, starting from the {start} order"
    )
    counts = definition.class_counts(feature)
    made = ", ".join(f"{n} x{c}" for n, c in zip(feat.names, counts, strict=True))
    echo(f"Classes: {made}.")
    if goal is not None:
        echo(f"Target: {_LABELS[chosen]} <= {goal:g}")
    echo()
    rows = []
    for r in curve.rows:
        row = [r.steps, r.total_variation_text(), r.separation.text(), r.kl_bits.text()]
        if estimated:
            found = r.total_variation_estimate
            row.append("-" if found is None else estimate_cell(found))
        rows.append(row)
    headers = ["riffles", "total variation", "separation", "KL (bits)"]
    if estimated:
        headers.append("TV estimate (99% CI)")
    echo(format_table(headers, rows))
    if skipped is not None:
        echo(skipped)
    if estimated:
        echo(
            f"Estimates: Monte Carlo over {samples:,} uniform words (seed {seed}), each word's "
            f"exact chance for {_start_kind(words)}; '-' after the first estimate below "
            "0.01 (more riffles never increase the distance) or beyond the estimate's work "
            "limit (10 to 15 s of CPU). Estimates certify nothing: the minimum below uses "
            "exact values and rigorous upper bounds only."
        )
    echo()
    if goal is not None:  # the target applies to the chosen metric only
        label = _LABELS[chosen]
        k = minimum[chosen]
        if extended is not None:
            echo(
                f"No --max-steps given and {label} <= {goal:g} was not met within the default "
                f"{extended} riffles: the range was extended to {steps} riffles."
            )
        if k is None:
            echo(f"Minimum riffles for {label} <= {goal:g}: not certified within {steps}")
        else:
            q = curve.rows[k - 1].value(chosen)
            how = "exact" if q.kind == "exact" else "rigorous upper bound"
            echo(f"Minimum riffles for {label} <= {goal:g}: {k} ({how})")
        from shufflecheck.report.builders.mix import proven_short_sentence

        line = proven_short_sentence(short, label, goal, k)
        if line is not None:
            echo(line)
        if estimated and chosen == "total_variation":
            echo(_estimated_minimum_text(guess, goal))
    echo(FEATURE_SOURCES_NOTE)
    hint = _lower_bound_hint(curve, deck, feature, hands, start)
    if hint is not None:
        echo(hint)
    echo(caution("the idealised model"))
    if plot is not None:
        echo(f"Wrote {plot}")
    if report is not None:
        echo(f"Wrote report {written}")


def _alternating_start(classes: list[int], feature: str) -> list[int]:
    """The feature's two classes alternating from the class of the reference's top card."""
    from shufflecheck.common.errors import InputError

    counts = {c: classes.count(c) for c in set(classes)}
    if len(counts) != 2 or abs(len(classes) - 2 * max(counts.values())) > 1:
        raise InputError(
            f"--start alternating needs a feature of two classes whose counts differ by at "
            f"most one (e.g. colour); '{feature}' has {len(counts)} classes of "
            f"{', '.join(str(c) for c in sorted(counts.values(), reverse=True))} cards",
            argument="start",
        )
    first = classes[0]
    if counts[first] < len(classes) - counts[first]:
        first = next(c for c in counts if c != first)  # the larger class goes on top
    second = next(c for c in counts if c != first)
    return [first if i % 2 == 0 else second for i in range(len(classes))]


def _lower_bound_hint(curve, deck, feature: str, hands: int, start: str) -> str | None:
    """Where rows have an upper bound only, the command that gives Monte Carlo lower bounds
    for them (``assess`` starts from the shoe's reference order)."""
    bare = [
        r.steps
        for r in curve.rows
        if r.total_variation.kind == "bound"
        and r.total_variation_lower is None
        and r.total_variation_estimate is None
    ]
    if not bare or hands != 2 or start != "reference":
        return None
    shoe = deck if deck is not None else "shoe(packs=1)"
    return (
        f"Rows {bare[0]}-{bare[-1]} carry upper bounds only; Monte Carlo lower bounds at a stated "
        f"confidence: shufflecheck assess riffle --deck '{shoe}' --feature {feature} "
        f"-r {bare[0]}-{bare[-1]}"
        if len(bare) > 1
        else f"Row {bare[0]} carries an upper bound only; a Monte Carlo lower bound at a stated "
        f"confidence: shufflecheck assess riffle --deck '{shoe}' --feature {feature} "
        f"-r {bare[0]}"
    )


def _estimated_minimum_text(guess, goal: float) -> str:
    """The estimate's view of the minimum, in one line that says it certifies nothing."""
    if guess is None:
        return (
            f"Monte Carlo estimate: no estimated row has its 99% upper end at or below "
            f"{goal:g} (estimates stop after the first below 0.01)."
        )
    k, q = guess
    return (
        f"Monte Carlo estimate (certifies nothing): total variation <= {goal:g} from {k} "
        f"riffles on, the first row whose 99% interval lies below it (estimate "
        f"{q.number_text()})."
    )


def _start_kind(words: list[int]) -> str:
    """Which exact chance an estimate rests on: an alternating start or one in blocks."""
    from shufflecheck.models.alternating import alternating_class

    return "the alternating start" if alternating_class(words) is not None else "a start in blocks"


def _payload(curve, goal, metric, minimum, bound_minimum, extended=None) -> dict:
    def row(r):
        out = {
            "steps": r.steps,
            "total_variation": r.total_variation,
            "separation": r.separation,
            "kl_bits": r.kl_bits,
            "kind": r.kind,
        }
        for m in ("total_variation", "separation"):  # 1 - value, exact, where a float is 1
            gap = r.value(m) is not None and getattr(r, f"{m}_below_one")
            if gap is not None and gap is not False:
                out[f"{m}_below_one"] = gap
        return out

    return {
        "model": curve.model,
        "cards": curve.cards,
        "feature": "distinct",
        "parameters": curve.parameters,
        "target": goal,
        "metric": metric,
        "source": curve.source,
        "rows": [row(r) for r in curve.rows],
        "minimum_steps": minimum,
        "bounds": [row(r) for r in curve.bounds],
        "bound_source": curve.bound_source or None,
        "minimum_steps_from_bounds": bound_minimum if curve.bounds else None,
        "range_extended_from": extended,
    }


def _fmt(row, metric: str) -> str:
    """Six significant digits (scientific below 1e-4), more where the value would otherwise
    read 1 (``0.99999953``, ``1 - 5.6e-53``); '-' when the method gives no value."""
    value = row.value(metric)
    if value is None:
        return "-"
    gap = row.below_one(metric)
    if value == 0 or (value == 1 and not gap):
        return str(int(value))  # exactly 0 or exactly 1
    return format_number(value, 6, below_one=gap)


_LABELS = {"total_variation": "total variation", "separation": "separation", "kl_bits": "KL (bits)"}


def _print(curve, goal, chosen, minimum, bound_minimum, extended=None) -> None:
    from shufflecheck.models import steps_limit
    from shufflecheck.report.render.terminal import format_table

    params = ", ".join(
        f"{k} = {v:g}" if isinstance(v, float) else f"{k} = {v}"
        for k, v in curve.parameters.items()
    )
    title = f"{curve.model} on {curve.cards} cards" + (f" ({params})" if params else "")
    echo(f"Distance to a uniformly random deck: {title}")
    echo("Feature: distinct cards (every card told apart; any feature a game sees is no farther).")
    echo(f"Method: {curve.source}.")
    if curve.bounds:
        echo(f"Extra column: {curve.bound_source}.")
    if goal is not None:
        echo(f"Target: {_LABELS[chosen]} <= {goal:g}")
    echo()
    headers = ["steps", "total variation", "separation", "KL (bits)", "how"]
    bound_metric = None
    if curve.bounds:
        bound_metric = "separation" if curve.bounds[0].separation is not None else "total_variation"
        headers.append(f"{_LABELS[bound_metric]} bound")
    rows, marks = [], []
    first = minimum[chosen]
    for i, r in enumerate(curve.rows):
        cells = [r.steps, *(_fmt(r, m) for m in METRICS), r.kind]
        if bound_metric is not None:
            cells.append(_fmt(curve.bounds[i], bound_metric))
        rows.append(cells)
        marks.append("*" if first is not None and r.steps == first else "")
    align = "rrrrl" + ("r" if bound_metric is not None else "")
    echo(format_table(headers, rows, align=align, marks=marks if goal is not None else None))
    echo()
    if goal is None:
        echo("No --target given; add --target 0.1 (say) to get the minimum number of steps.")
        return
    m, label = chosen, _LABELS[chosen]
    k = minimum[m]
    if extended is not None:
        echo(
            f"No --max-steps given and {label} <= {goal:g} was not met within the default "
            f"{extended} steps: the range was extended to {curve.rows[-1].steps} steps."
        )
    if all(r.value(m) is None for r in curve.rows):
        echo(f"Minimum steps for {label} <= {goal:g}: this method gives no value for it")
    elif k is not None:
        how = "exact" if curve.rows[k - 1].kind == "exact" else "rigorous upper bound"
        echo(f"Minimum steps for {label} <= {goal:g}: {k} ({how})")
    else:
        kb = bound_minimum.get(m)
        hint = f"; the bound certifies {kb} steps" if kb is not None else ""
        last = curve.rows[-1].steps
        where = (
            "the model's exact range ends there; use assess"
            if extended is not None or last >= steps_limit(curve.model)
            else "raise --max-steps"
        )
        echo(
            f"Minimum steps for {label} <= {goal:g}: not reached within {last} steps "
            f"({where}){hint}"
        )
    echo(f"* marks the first step meeting the target on {label}, the metric it applies to.")
    kind = "exact distances" if curve.rows[0].kind == "exact" else "rigorous bounds"
    echo(f"These are {kind} for the idealised model; real hands and machines differ.")
    echo(caution("the idealised model"))


def _figure(curve, metric, goal, first):
    from shufflecheck.report.figures import distance_figure

    return distance_figure(
        curve_series(curve, metric, first),
        target=goal,
        metric=_METRIC_AXIS[metric],
        steps_name=entry(curve.model).steps_word,
    )


_METRIC_AXIS = {
    "total_variation": "total variation distance",
    "separation": "separation distance",
    "kl_bits": "KL divergence (bits)",
}


def curve_series(curve, metric: str, minimum: int | None = None) -> list[dict]:
    """The exact curve and any bound curve as plain series for the figure functions."""
    series = [
        {
            "label": curve.model,
            "steps": [r.steps for r in curve.rows],
            "values": [r.value(metric) for r in curve.rows],
            "kind": curve.rows[0].kind,
            **({"side": "upper"} if curve.rows[0].kind == "bound" else {}),
            "group": curve.model,
            **({"minimum": minimum} if minimum is not None else {}),
        }
    ]
    if curve.bounds and curve.bounds[0].value(metric) is not None:
        series.append(
            {
                "label": curve.bound_name or "bound",
                "steps": [r.steps for r in curve.bounds],
                "values": [r.value(metric) for r in curve.bounds],
                "kind": "bound",
                "side": "upper",
                "group": curve.model,
            }
        )
    return series
