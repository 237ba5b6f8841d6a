"""Report for ``shufflecheck spectrum``: the exact eigenvalues of one step of a model."""

from __future__ import annotations

from typing import Any

from shufflecheck.common.quantity import exact
from shufflecheck.models.registry import entry
from shufflecheck.report.document import MethodNote, Report, Section, Table
from shufflecheck.report.provenance import Provenance

__all__ = ["SPECTRUM_METHODS", "spectrum_report"]

#: how each model's eigenvalues are obtained (the published statements are the model's
#: sources in the registry)
SPECTRUM_METHODS = {
    "riffle": "eigenvalues a^-i (i = 0..n-1) of the a-shuffle, multiplicity the unsigned "
    "Stirling number of the first kind c(n, n-i)",
    "top-to-random": "eigenvalues j/n with multiplicity the number of permutations of n "
    "with exactly j fixed points (j = n-1 never occurs)",
    "random-to-top": "the time reversal of top-to-random: the same eigenvalues j/n and "
    "multiplicities",
    "transposition": "one eigenvalue hold + (1 - hold) chi(tau)/d per irreducible character "
    "of S_n (content formula), multiplicity d^2 summed over the shapes sharing it",
}

#: rows shown in the report table; the JSON holds every eigenvalue
SHOWN_ROWS = 200


def _digits(value: int) -> str:
    """An exact integer as text: all digits when short, else the leading digits and the
    number of digits (the JSON keeps every digit)."""
    text = str(value)
    if len(text) <= 30:
        return text
    return f"{text[:12]}... ({len(text)} digits)"


def spectrum_report(
    model: str,
    cards: int,
    rows: list,
    *,
    payload: dict[str, Any],
    provenance: Provenance,
    parameters: str = "",
) -> Report:
    """Build the report of one spectrum (``payload`` is the ``--json`` result)."""
    from shufflecheck.core.partitions import format_partition

    found = entry(model)
    subject = f"one {model} step on {cards} cards" + (f" ({parameters})" if parameters else "")
    shown = rows[:SHOWN_ROWS]
    with_shapes = any(r.shapes for r in shown)
    table_rows = []
    for r in shown:
        cells = [exact(r.value, digits=6), str(r.value), _digits(r.multiplicity)]
        if with_shapes:
            shapes = ", ".join(f"({format_partition(s)})" for s in r.shapes[:3])
            if len(r.shapes) > 3:
                shapes += f", ... ({len(r.shapes)} shapes)"
            cells.append(shapes)
        table_rows.append(tuple(cells))
    headers = ["eigenvalue", "as a fraction", "multiplicity (exact integer)"]
    if with_shapes:
        headers.append("shapes (irreducible characters)")
    notes = [
        "Multiplicities count eigenvalues of the operator on all n! arrangements; they are "
        "exact integers (sum over the eigenvalues = n!)."
    ]
    if len(rows) > SHOWN_ROWS:
        notes.append(f"The first {SHOWN_ROWS} of {len(rows)} eigenvalues; report.json has all.")
    table = Table(
        f"Distinct eigenvalues of {subject}, largest first",
        tuple(headers),
        tuple(table_rows),
        notes=tuple(notes),
    )
    others = [r for r in rows if r.value != 1]
    answer = [f"{len(rows)} distinct eigenvalues, all exact."]
    if others:
        slowest = max(others, key=lambda r: abs(r.value))
        answer.append(
            f"The largest in absolute value below 1 is {slowest.value} (exact), with "
            f"multiplicity {_digits(slowest.multiplicity)}: it sets the slowest rate at which "
            "the deck's law approaches the uniform one."
        )
    method = SPECTRUM_METHODS.get(model, "the exact eigenvalues of the model's step law")
    section = Section(
        "Eigenvalues of one step",
        paragraphs=(
            "Each eigenvalue of the transition operator of one step on the n! arrangements "
            "of the deck; every eigenvalue is 1 at most in absolute value, and 1 is the "
            "uniform (perfectly random) deck.",
        ),
        tables=(table,),
    )
    return Report(
        title=f"Spectrum: {model}, {cards} cards",
        question=f"What are the eigenvalues of {subject}, and how often does each occur?",
        answer=tuple(answer),
        reproducibility=provenance,
        sections=(section,),
        methods=(MethodNote("eigenvalues and multiplicities", "exact", method, found.sources),),
        data=payload,
    )
