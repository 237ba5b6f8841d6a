"""Report for ``shufflecheck assess``: a dealing procedure repeated r times (r = A..B)."""

from __future__ import annotations

import dataclasses
from typing import Any

from shufflecheck.common.numbers import percent
from shufflecheck.common.quantity import Quantity, exact
from shufflecheck.common.sources import (
    ALDOUS_DIACONIS_1987,
    BAYER_DIACONIS,
    CLOPPER_PEARSON,
    COVER_THOMAS,
    DIACONIS_1988,
    DIACONIS_GRAHAM,
)
from shufflecheck.report.document import MethodNote, Report, Section, Table
from shufflecheck.report.provenance import Provenance

__all__ = ["as_value", "assessment_methods", "assessment_report"]


def as_value(q: Quantity | None, *, digits: int = 4) -> Quantity | None:
    """A report cell from a library :class:`~shufflecheck.common.quantity.Quantity`, shown
    with ``digits`` significant digits (None stays an empty cell)."""
    return None if q is None else dataclasses.replace(q, digits=digits)


def _distance_cells(row, metric: str) -> tuple[Quantity | None, Quantity | None]:
    """(lower, upper) cells, or (exact, exact) when the row is exact."""
    if row.exact is not None:
        gap = row.exact.below_one(metric)  # 1 - value in exact integers, where known
        value = exact(row.exact.value(metric), below_one=gap if gap and gap <= 1 else None)
        return value, value
    return as_value(row.lower.get(metric)), as_value(row.upper.get(metric))


def assessment_methods(confidence: float, *, estimated: bool = False) -> tuple[MethodNote, ...]:
    """Method notes shared by the assessment and policy reports (``estimated``: some row
    carries a Monte Carlo estimate of an exact value, whose note is added)."""
    estimates = (
        MethodNote(
            "estimates of the exact total variation",
            "estimate",
            "runs of ideal riffles of a shoe read through a feature, from a start in three or "
            "more blocks or an alternating two-valued start: the mean of (1 - M P(W))+ over "
            "2,000 uniformly random words W, each word's exact chance (derived in this "
            "project, checked by brute force; docs/models.md), with a normal-theory 99% "
            "interval; they stop after the first below 0.01 and certify nothing",
            (BAYER_DIACONIS,),
        ),
    )
    return (
        MethodNote(
            "distance when the repeated procedure is one exactly analysed model",
            "exact",
            "exact law of the model (rising sequences for riffles, Stirling numbers for "
            "top-to-random, the lumped chain for transpositions, rotations for cuts)",
            (BAYER_DIACONIS, DIACONIS_1988),
        ),
        MethodNote(
            "upper bounds",
            "bound",
            "block inequalities on the exactly analysed blocks: with U uniform, "
            "B1 * X * B2 - U = (B1 - U) * X * (B2 - U) for anything independent in between, "
            "so each block is absorbed or contributes 2 TV, its separation, or the square "
            "root of its chi-square distance (Young's and the Cauchy-Schwarz inequality); the "
            "smallest such bound is used (docs/methods.md)",
            (ALDOUS_DIACONIS_1987, DIACONIS_1988),
        ),
        MethodNote(
            "conjectured upper bounds",
            "conjectured",
            "the interleaving conjecture, unproven: steps between ideal riffles never raise "
            "the separation above that of all the riffles taken together, "
            "1 - prod(1 - i/2^m) for m riffles; checked exhaustively for small decks, its "
            "total-variation analogue is false; never used to certify",
            (BAYER_DIACONIS,),
        ),
        *(estimates if estimated else ()),
        MethodNote(
            "lower bounds",
            "bound",
            f"distance of a statistic's law from its exact uniform law; events, family "
            f"members and a fitted likelihood-ratio score chosen on the first half of the "
            f"simulated decks, probabilities bounded on the second (Clopper-Pearson, "
            f"{percent(confidence)} confidence, Bonferroni over the statistics); "
            "separation >= TV; KL >= 2 TV^2 / ln 2 (Pinsker)",
            (CLOPPER_PEARSON, COVER_THOMAS, DIACONIS_GRAHAM),
        ),
        MethodNote(
            "correct guesses per deck",
            "estimate",
            "guessing game with feedback simulated on the decks; uniform mean H_n is exact "
            "(sum of Bernoulli(1/j)); best strategy chosen on one half, measured on the other",
            (DIACONIS_GRAHAM, BAYER_DIACONIS),
        ),
    )


def assessment_table(result, metric: str = "total_variation") -> Table:
    """Distance (exact, or lower and upper bounds; the conjectured figure beside them when
    there is one) and the guessing edge for every r."""
    conjectures = any(metric in row.conjectured for row in result.rows)
    estimates = any(metric in row.estimated for row in result.rows)
    rows = []
    for row in result.rows:
        low, high = _distance_cells(row, metric)
        extra = row.extra_guesses
        cells = [str(row.repeats), low, high]
        if conjectures:
            cells.append(as_value(row.conjectured.get(metric)))
        if estimates:
            cells.append(as_value(row.estimated.get(metric), digits=3))
        cells += [as_value(extra), row.best_strategy]
        rows.append(tuple(cells))
    name = {
        "total_variation": "total variation",
        "separation": "separation",
        "kl_bits": "KL (bits)",
    }[metric]
    columns = ["r", f"{name}: lower", f"{name}: upper"]
    notes = [
        "Where the whole repeated procedure is exact, both columns show the exact value.",
        "An upper bound of 1 means no exactly analysed block certifies anything smaller.",
    ]
    if conjectures:
        columns.append(f"{name}: conjectured upper")
        notes.append(
            "The conjectured column rests on the unproven interleaving conjecture: it is not "
            "a bound and certifies nothing."
        )
    if estimates:
        columns.append(f"{name}: estimate")
        notes.append(
            "The estimate column is a Monte Carlo estimate of the exact value (each word's "
            "exact chance, uniformly random words; empty after the first below 0.01): it "
            "certifies nothing."
        )
    columns += ["extra correct guesses per deck", "best strategy"]
    return Table(
        f"{name.capitalize()} to a random deck and the guessing edge, by repetitions r",
        tuple(columns),
        tuple(rows),
        notes=tuple(notes),
    )


def assessment_report(result, *, payload: dict[str, Any], figure, provenance: Provenance) -> Report:
    """Build the report of one procedure assessment (``payload`` is the ``--json`` result)."""
    first = result.rows[0]
    last = result.rows[-1]
    answer = []
    for row in (first, last) if len(result.rows) > 1 else (first,):
        low, high = _distance_cells(row, "total_variation")
        if row.exact is not None:
            answer.append(f"After {row.repeats} repetition(s): total variation {low}.")
        else:
            guess = as_value(row.conjectured.get("total_variation"))
            found = as_value(row.estimated.get("total_variation"), digits=3)
            answer.append(
                f"After {row.repeats} repetition(s): total variation {low}"
                + (f", {high}" if high is not None else "")
                + (f"; {guess}, resting on an unproven conjecture" if guess is not None else "")
                + (f"; Monte Carlo {found}, certifying nothing" if found is not None else "")
                + "."
            )
    edge = first.extra_guesses
    answer.append(
        f"An observant player following the '{first.best_strategy}' strategy gains "
        f"{as_value(edge)} correct guesses per deck after {first.repeats} "
        f"repetition{'s' if first.repeats != 1 else ''} (a random deck "
        f"allows {exact(first.uniform_guesses)} on average)."
    )
    answer.extend(result.notes)
    table = assessment_table(result)
    sections = [
        Section(
            "Distance and exploitability by repetitions",
            paragraphs=(
                f"Procedure: {result.procedure} on {result.cards} cards; {result.decks:,} "
                f"simulated decks (seed {result.seed}).",
                (
                    "Distances on: distinct cards (every card told apart; any feature a game "
                    "sees is no farther from random)."
                    if result.feature == "distinct"
                    else f"Distances on the feature '{result.feature}' of {result.deck}: "
                    "what the game sees, against a uniformly random arrangement of it; the "
                    "guessing edge is that of a player who names a most frequent remaining "
                    "value (docs/shoes.md)."
                ),
                "Total variation is the largest advantage a player can have on any yes/no "
                "event about the deck. The guessing edge is what a player who sees each card "
                "as it is dealt can gain by naming the next card: extra correct guesses per "
                "deck over a perfectly random deck.",
            ),
            tables=(table,),
            figures=(figure,) if figure is not None else (),
        )
    ]
    return Report(
        title=f"Procedure assessment: {result.name or result.procedure}",
        question=(
            f"How far from a perfectly random deck does '{result.procedure}' leave a "
            f"{result.cards}-card deck when repeated 1 to {len(result.rows)} times, and what "
            "could an observant player gain?"
        ),
        answer=tuple(answer),
        reproducibility=provenance,
        sections=tuple(sections),
        methods=assessment_methods(
            result.confidence, estimated=any(row.estimated for row in result.rows)
        ),
        data=payload,
    )
