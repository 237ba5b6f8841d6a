"""Report for ``shufflecheck mix``: exact distance curve of a classical model."""

from __future__ import annotations

from typing import Any

from shufflecheck.common.quantity import exact, upper_bound
from shufflecheck.common.sources import (
    COVER_THOMAS,
)
from shufflecheck.core.distances import MixingCurve
from shufflecheck.models.registry import entry
from shufflecheck.report.document import MethodNote, Report, Section, Table
from shufflecheck.report.provenance import Provenance

__all__ = ["METRIC_LABELS", "feature_mixing_report", "feature_series", "mixing_report"]

from shufflecheck.core.distances import METRIC_LABELS


def _cell(value: float | None, kind: str, below_one: float | None = None):
    """A distance as a labelled number; ``below_one`` (``1 - value`` in exact integers)
    keeps a value a float rounds to 1 from showing as 1."""
    if value is None:
        return None
    if below_one is not None and not 0 < below_one <= 1:
        below_one = None
    if kind == "exact":
        return exact(value, below_one=below_one)
    return upper_bound(value, below_one=below_one)


def _row_cell(row, metric: str):
    return _cell(row.value(metric), row.kind, row.below_one(metric))


def mixing_report(
    curve: MixingCurve,
    *,
    metric: str,
    target: float | None,
    minimum: dict[str, int | None],
    payload: dict[str, Any],
    figure,
    provenance: Provenance,
) -> Report:
    """Build the report of one exact mixing curve (``payload`` is the ``--json`` result)."""
    model = entry(curve.model)
    steps_word = model.steps_word
    label = METRIC_LABELS[metric]
    params = ", ".join(
        f"{k} = {v:g}" if isinstance(v, float) else f"{k} = {v}"
        for k, v in curve.parameters.items()
    )
    subject = f"a {curve.cards}-card deck after k {steps_word}" + (f" ({params})" if params else "")
    if target is not None:
        question = (
            f"How far from a perfectly random deck is {subject}, and what is the smallest k "
            f"with {label} at most {target:g}?"
        )
    else:
        question = f"How far from a perfectly random deck is {subject}?"
    answer = []
    if target is not None:
        k = minimum[metric]
        if k is not None:
            row = curve.rows[k - 1]
            answer.append(
                f"{k} {steps_word} bring {label} to at most {target:g}: {_row_cell(row, metric)}."
            )
        else:
            answer.append(
                f"{label.capitalize()} stays above {target:g} for every k up to "
                f"{curve.rows[-1].steps}; more steps are needed."
            )
    last = curve.rows[-1]
    shown = [
        f"{METRIC_LABELS[m]} {_row_cell(last, m)}"
        for m in ("total_variation", "separation")
        if last.value(m) is not None
    ]
    answer.append(f"After {last.steps} {steps_word}: {', '.join(shown)}.")
    headers = ["k", "total variation", "separation", "KL divergence (bits)"]
    bound_metric = None
    if curve.bounds:
        bound_metric = "separation" if curve.bounds[0].separation is not None else "total_variation"
        headers.append(f"{METRIC_LABELS[bound_metric]}, {curve.bound_name}")
    rows = []
    for i, r in enumerate(curve.rows):
        cells = [
            str(r.steps),
            _row_cell(r, "total_variation"),
            _row_cell(r, "separation"),
            _row_cell(r, "kl_bits"),
        ]
        if bound_metric is not None:
            b = curve.bounds[i]
            cells.append(_cell(b.value(bound_metric), "bound", b.below_one(bound_metric)))
        rows.append(tuple(cells))
    marked = ()
    if target is not None and minimum[metric] is not None:
        marked = (minimum[metric] - 1,)
    table = Table(
        f"Distance to a uniformly random deck after k {steps_word}",
        tuple(headers),
        tuple(rows),
        notes=("Exact values come from the model's exact law; bounds are rigorous upper bounds.",),
        marked_rows=marked,
        mark_note=f"first k with {label} at most {target:g}" if marked else "",
    )
    sources = model.sources
    main = curve.rows[0].kind
    methods = [
        MethodNote("total variation, separation", main, curve.source, sources),
        MethodNote(
            "KL divergence (bits)",
            main,
            f"{curve.source}; KL(P||U) = sum U f(P/U) with f(t) = t ln t - t + 1",
            (*sources, COVER_THOMAS),
        ),
    ]
    if curve.bounds:
        methods.append(
            MethodNote(METRIC_LABELS[bound_metric], "bound", curve.bound_source, sources)
        )
    section = Section(
        "Distances after k steps",
        paragraphs=(
            "Total variation is the largest advantage a player can have on any single yes/no "
            "event about the deck; separation s guarantees that every arrangement has at "
            "least (1 - s) times its fair chance; KL divergence is the information, in bits, "
            "that the deck's order still carries about the starting order.",
            "These are distances for the idealised model; real hands and machines differ and "
            "should be assessed with their own procedure (shufflecheck assess).",
        ),
        tables=(table,),
        figures=(figure,) if figure is not None else (),
    )
    return Report(
        title=f"Distance to random: {curve.model}, {curve.cards} cards",
        question=question,
        answer=tuple(answer),
        reproducibility=provenance,
        sections=(section,),
        methods=tuple(methods),
        data=payload,
    )


def proven_short_sentence(short, label: str, goal: float, certified: int | None) -> str | None:
    """The rigorous other side of the minimum: fewer than ``k + 1`` riffles are proven too
    few. When the certified minimum is ``k + 1`` the minimum is pinned, and the sentence
    says so. None when no row is proven above the target, or when an exact value pins the
    minimum (the minimum's own line says exact)."""
    if short is None:
        return None
    k, q = short
    if certified is not None and certified == k + 1 and q.kind == "exact":
        return None
    from shufflecheck.common.numbers import format_number

    how = "exact" if q.kind == "exact" else "rigorous lower bound"
    lead = (
        f"So exactly {k + 1} riffles"
        if certified == k + 1
        else f"At least {k + 1} riffles are needed"
    )
    return (
        f"{lead}: after {k}, {label} is {format_number(q.value, 4, 'down')} or more "
        f"({how}), above {goal:g}."
    )


def feature_series(curve, metric: str) -> list[dict]:
    """The feature curve of one metric as figure series, one per kind of number (with the
    total variation's lower bounds where there are any)."""
    series = []
    for kind, side in (("exact", None), ("bound", "upper"), ("bound", "lower")):
        if side == "lower":
            if metric != "total_variation":
                continue
            found = [r for r in curve.rows if r.total_variation_lower is not None]
            steps = [r.steps for r in found]
            values = [r.total_variation_lower.value for r in found]
        else:
            steps = [r.steps for r in curve.rows if r.value(metric).kind == kind]
            values = [r.value(metric).value for r in curve.rows if r.value(metric).kind == kind]
        if not steps:
            continue
        item = {
            "label": str(curve.feature),
            "steps": steps,
            "values": values,
            "kind": kind,
            "group": "feature",
        }
        if side:
            item["side"] = side
        series.append(item)
    estimated = [r for r in curve.rows if r.total_variation_estimate is not None]
    if metric == "total_variation" and estimated:
        series.append(
            {
                "label": f"{curve.feature} (Monte Carlo estimate)",
                "steps": [r.steps for r in estimated],
                "values": [r.total_variation_estimate.value for r in estimated],
                "low": [r.total_variation_estimate.interval[0] for r in estimated],
                "high": [r.total_variation_estimate.interval[1] for r in estimated],
                "kind": "estimate",
                "group": "feature",
            }
        )
    return series


def feature_mixing_report(
    curve,
    deck: str,
    *,
    metric: str,
    target: float | None,
    minimum: dict[str, int | None],
    payload: dict[str, Any],
    figure,
    provenance: Provenance,
) -> Report:
    """Report of ``mix riffle --feature``: the labelled distances of what a game sees."""
    from shufflecheck.common.sources import CONGER_VISWANATH
    from shufflecheck.models.block_words import EXACT_WORDS as BLOCK_WORDS
    from shufflecheck.models.features import FEATURE_SOURCES_NOTE

    label = METRIC_LABELS[metric]
    subject = f"the {curve.feature} of {deck} after k riffles from the {curve.start} order"
    question = f"How far from a uniformly random arrangement is {subject}?"
    answer = []
    if target is not None:
        k = minimum[metric]
        if k is not None:
            q = curve.rows[k - 1].value(metric)
            answer.append(f"{k} riffles bring {label} to at most {target:g}: {q.text()}.")
        else:
            answer.append(
                f"No k up to {curve.rows[-1].steps} is certified for {label} <= {target:g}."
            )
        line = proven_short_sentence(curve.proven_short(metric, target), label, target, k)
        if line is not None:
            answer.append(line)
    last = curve.rows[-1]
    answer.append(
        f"After {last.steps} riffles: total variation {last.total_variation_text()}, separation "
        f"{last.separation.text()}."
    )
    estimated = [r for r in curve.rows if r.total_variation_estimate is not None]
    # lower bounds other than the two-valued bracket's (which has a note of its own)
    lowered = any(
        r.total_variation_lower is not None
        and r.total_variation_lower.method.startswith("lower bound:")
        for r in curve.rows
    )
    guess = curve.estimated_minimum(target) if metric == "total_variation" else None
    if guess is not None:
        k, q = guess
        answer.append(
            f"Monte Carlo estimate (certifies nothing): total variation at most {target:g} "
            f"from {k} riffles on, the first row whose 99% interval lies below it "
            f"({q.text()})."
        )
    elif estimated:
        shown = estimated[-1]
        answer.append(
            f"Monte Carlo estimate (certifies nothing): total variation "
            f"{shown.total_variation_estimate.text()} after {shown.steps} riffles."
        )
    rows = tuple(
        (
            str(r.steps),
            r.total_variation if r.total_variation_lower is None else r.total_variation_text(),
            r.separation,
            r.kl_bits,
            *(
                ()
                if not estimated
                else ("-" if r.total_variation_estimate is None else r.total_variation_estimate,)
            ),
        )
        for r in curve.rows
    )
    marked = ()
    if target is not None and minimum[metric] is not None:
        marked = (minimum[metric] - 1,)
    made = ", ".join(f"{n} x{c}" for n, c in zip(curve.classes, curve.class_counts, strict=False))
    table = Table(
        f"Distance of the {curve.feature} word to uniform after k riffles",
        (
            "k",
            "total variation",
            "separation",
            "KL divergence (bits)",
            *(("total variation, estimate",) if estimated else ()),
        ),
        rows,
        notes=(
            FEATURE_SOURCES_NOTE,
            f"Classes: {made}.",
            *(
                (
                    "Estimates ('-' after the first below 0.01) certify nothing: minimum "
                    "counts use exact values and rigorous upper bounds only.",
                )
                if estimated
                else ()
            ),
        ),
        marked_rows=marked,
        mark_note=f"first k with {label} at most {target:g}" if marked else "",
    )
    section = Section(
        f"Distances on the feature '{curve.feature}'",
        paragraphs=(
            "A game sees only a feature of each card (its value, its colour); a uniformly random "
            "shoe makes every arrangement of the feature's multiset equally likely, and the "
            "distances here compare the feature's law after k riffles with that.",
        ),
        tables=(table,),
        figures=(figure,) if figure is not None else (),
    )
    model = entry("riffle")
    return Report(
        title=f"Distance to random on a feature: {curve.feature}, {deck}",
        question=question,
        answer=tuple(answer),
        reproducibility=provenance,
        sections=(section,),
        methods=(
            MethodNote(
                "upper bounds",
                "bound",
                "distinct-card distances of the riffle (Bayer & Diaconis 1992): a function of "
                "the deck is never farther from uniform than the deck",
                model.sources,
            ),
            MethodNote(
                "exact values",
                "exact",
                "separation of a start in blocks (least likely word, closed form); total "
                "variation of two-valued decks in blocks (closed form summed over all words); "
                "distances of alternating two-valued starts up to 18 cards, and total "
                f"variation and KL of starts in three or more blocks up to {BLOCK_WORDS:,} "
                "words (each word's chance summed over all words); decks of at most 9 cards "
                "summed over all arrangements; derived in this project and checked by brute "
                "force",
                (*model.sources, CONGER_VISWANATH),
            ),
            MethodNote(
                "two-sided bounds",
                "bound",
                "total variation of a two-valued deck in blocks too large for the exact sum: "
                "each word's likelihood ratio is a sum over its cards of one class, summed on a "
                "grid by dynamic programming; the grid's rounding is bounded on both sides "
                "(derived in this project; checked against the exact sum and brute force)",
                (*model.sources, CONGER_VISWANATH),
            ),
            *(
                (
                    MethodNote(
                        "lower bounds",
                        "bound",
                        "total variation of an alternating two-valued start too large for the "
                        "exact sum: the exact laws, shuffled and uniform, of the highest and "
                        "lowest points of the walk that steps up for one class and down for the "
                        "other (a shuffle into a packets keeps the walk's range within a); of a "
                        "start in three or more blocks: the classes above a cut between blocks "
                        "merged against those below, a two-valued deck in blocks with the bounds "
                        "above; a function of the word is never farther from uniform (derived in "
                        "this project; checked by brute force)",
                        (*model.sources, CONGER_VISWANATH),
                    ),
                )
                if lowered
                else ()
            ),
            *(
                (
                    MethodNote(
                        "estimates",
                        "estimate",
                        "total variation of an alternating two-valued start, or of a start in "
                        "three or more blocks, too large for the exact sum: the mean of "
                        "(1 - M P(W))+ over uniformly random words W, each word's chance P "
                        "exact (alternating: labels of the a-shuffle by phase, a product of "
                        "small matrices; blocks: surjective labellings counted class by class; "
                        "both derived in this project and checked by brute force), with a "
                        "normal-theory 99% interval",
                        (*model.sources, CONGER_VISWANATH),
                    ),
                )
                if estimated
                else ()
            ),
        ),
        data=payload,
    )
