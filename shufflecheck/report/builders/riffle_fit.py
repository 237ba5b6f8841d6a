"""Report for ``shufflecheck fit-riffle``: a dealer's riffles, fitted and tested."""

from __future__ import annotations

import math
from typing import Any

from shufflecheck.common.numbers import percent
from shufflecheck.common.quantity import exact
from shufflecheck.common.sources import (
    BAYER_DIACONIS,
    GILBERT_REEDS,
    HOLM,
    HOPE,
    JENSEN,
    VENZON_MOOLGAVKAR,
    WALD_WOLFOWITZ,
    WILKS,
)
from shufflecheck.report.builders.audit import p_cell
from shufflecheck.report.document import Figure, MethodNote, Report, Section, Table
from shufflecheck.report.provenance import Provenance

__all__ = ["fit_figures", "fit_methods", "fit_report"]

#: rows that are not one riffle listed in the report's table (all are in report.json)
_LISTED = 50


def fit_figures(fit, level: float = 0.95) -> tuple[Figure, ...]:
    """Packet lengths and cuts: the log against the ideal riffle and the fitted riffle."""
    from shufflecheck.report.figures import expectation_figure

    z = _z(level)
    packets = fit.packets
    top = packets.shown() + 1
    lengths = list(range(1, top))
    models: list[dict[str, Any]] = [
        {"label": "ideal riffle, same cuts", "kind": "exact", "values": packets.ideal[1:top]}
    ]
    if packets.fitted is not None and packets.fitted_stderr is not None:
        fitted = packets.fitted[1:top]
        se = packets.fitted_stderr[1:top]
        models.append(
            {
                "label": f"fitted {fit.step.describe()}",
                "kind": "estimate",
                "values": fitted,
                "low": [max(0.0, v - z * s) for v, s in zip(fitted, se, strict=True)],
                "high": [v + z * s for v, s in zip(fitted, se, strict=True)],
            }
        )
    packet_figure = expectation_figure(
        lengths,
        packets.observed[1:top],
        models,
        observed_label=f"recorded riffles ({fit.counts.changed:,})",
        x_name="packet length (cards falling together from one hand)",
        y_name="packets per riffle",
        level=level,
        name="packets",
        caption=(
            "Packets of each length per riffle: the recorded riffles (bars), the ideal riffle "
            "given the same cuts (solid, exact) and the fitted hand riffle (dotted, estimate "
            f"from simulated riffles with a {round(100 * level)}% band)."
        ),
    )
    n = fit.cards
    laws = fit.cut_laws()
    seen = [c for c in range(n + 1) if fit.counts.cuts[c]]
    middle_ideal = [c for c in range(n + 1) if laws["ideal"][c] * fit.counts.changed >= 0.05]
    low = min(seen + middle_ideal)
    high = max(seen + middle_ideal)
    cuts = list(range(low, high + 1))
    cut_models: list[dict[str, Any]] = [
        {
            "label": "ideal riffle (binomial cut)",
            "kind": "exact",
            "values": [fit.counts.changed * float(laws["ideal"][c]) for c in cuts],
        }
    ]
    if "fitted" in laws:
        spread = fit.estimates.spread
        scale = fit.counts.changed
        fitted = {
            "label": f"fitted cut curve, spread {spread.value:.3g} cards",
            "kind": "estimate",
            "values": [scale * float(laws["fitted"][c]) for c in cuts],
        }
        if "fitted_low" in laws:
            fitted["low"] = [scale * float(laws["fitted_low"][c]) for c in cuts]
            fitted["high"] = [scale * float(laws["fitted_high"][c]) for c in cuts]
        else:  # no finite interval: no band to draw
            fitted["low"] = fitted["high"] = fitted["values"]
        cut_models.append(fitted)
    cut_figure = expectation_figure(
        cuts,
        [float(fit.counts.cuts[c]) for c in cuts],
        cut_models,
        observed_label="recorded riffles",
        x_name="cut (cards in the top packet)",
        y_name="riffles",
        level=level,
        name="cuts",
        caption=(
            "Cuts read off the recorded riffles that changed the deck (bars), against the "
            "binomial cut of the ideal riffle (solid, exact) and the fitted cut curve (dotted, "
            f"at the estimated spread; the band spans the curves over the spread's "
            f"{round(100 * level)}% interval)."
        ),
    )
    return packet_figure, cut_figure


def _z(level: float) -> float:
    from shufflecheck.common.distributions import normal_quantile

    return normal_quantile(0.5 + level / 2)


def _tests_table(tests) -> Table:
    rows = []
    for t in tests.tests:
        rows.append(
            (
                t.title,
                p_cell(t.log10_p_value, t.method),
                p_cell(t.log10_p_adjusted, t.method),
                "rejects" if t.flagged else "",
                t.effect,
                t.effect_text,
            )
        )
    return Table(
        "Tests of the ideal riffle (binomial cut, cards falling in proportion to the cards held)",
        ("test", "p-value", "p-value (Holm)", "verdict", "effect", "in plain words"),
        tuple(rows),
        notes=(
            f"'rejects' means the test rejects the ideal riffle at family-wise level "
            f"{tests.alpha:g} (Holm over the {len(tests.tests)} tests)."
            + (
                f" Monte Carlo p-values from {tests.samples:,} simulated logs of ideal riffles, "
                "(1 + k)/(B + 1): valid at any number of simulations."
                if tests.samples
                else " Only the exact tests were run (samples 0)."
            ),
            "The cut and packet tests use the riffles that changed the deck; the likelihood "
            "ratio uses every riffle.",
        ),
    )


def _parameters_table(fit) -> Table:
    est = fit.estimates
    n = fit.cards
    return Table(
        "Fitted hand riffle (maximum likelihood)",
        ("parameter", "estimate", "ideal riffle", "meaning"),
        (
            (
                "spread",
                est.spread.quantity(),
                exact(math.sqrt(n) / 2, unit="cards", digits=3),
                "standard deviation of the cut around the middle, in cards (the ideal riffle "
                "cuts binomially: sqrt(n)/2)",
            ),
            (
                "clump",
                est.clump.quantity(),
                exact(1, digits=1),
                "how much more likely, per card held, the hand that dropped the last card is "
                "to drop the next (above 1: cards fall in clumps; below 1: they alternate)",
            ),
        ),
        notes=(
            f"Intervals: profile likelihood at {percent(est.confidence)}; standard errors from the "
            "observed information. Both are large-sample approximations.",
            "The clump parameterisation is the project's own (docs/models.md); clump = 1 with "
            "a binomial cut is the ideal riffle.",
        ),
    )


def _rows_table(fit) -> Table | None:
    if not fit.not_riffles:
        return None
    k = min(fit.not_riffles, _LISTED)
    rows = tuple(
        (
            str(int(fit.not_riffle_rows[j])),
            str(int(fit.not_riffle_references[j])),
            exact(int(fit.not_riffle_rising[j])),
        )
        for j in range(k)
    )
    more = fit.not_riffles - k
    return Table(
        f"Rows that are not one riffle of their reference ({fit.not_riffles:,})",
        ("row", "reference row", "rising sequences"),
        rows,
        notes=(
            "One riffle leaves at most two rising sequences. These rows were not used for the "
            "fit" + (f"; {more:,} more are listed in report.json." if more else "."),
        ),
    )


def fit_methods(alpha: float, tests: int = 5) -> tuple[MethodNote, ...]:
    return (
        MethodNote(
            "probability of each recorded riffle",
            "exact",
            "cut and drop sequence read off the two rising sequences; the hand-riffle model's "
            "cut curve and drop rule (clump = 1 and a binomial cut: the ideal riffle); decks "
            "left unchanged summed over their unseen cut",
            (BAYER_DIACONIS, GILBERT_REEDS),
        ),
        MethodNote(
            "spread and clump",
            "estimate",
            "maximum likelihood; intervals where the profile log-likelihood lies within "
            "chi2_1(level)/2 of its maximum; standard errors from the observed information",
            (WILKS, VENZON_MOOLGAVKAR),
        ),
        MethodNote(
            "cut and packet tests",
            "exact",
            "exact laws under the ideal riffle (cut given a change; runs of two kinds given the "
            "cut), summed over the riffles by exponential tilting",
            (BAYER_DIACONIS, WALD_WOLFOWITZ, JENSEN),
        ),
        MethodNote(
            "packet-size and likelihood-ratio tests",
            "estimate",
            "Monte Carlo null: logs of ideal riffles simulated and read off like the recorded "
            "one; p = (1 + k)/(B + 1)",
            (HOPE,),
        ),
        MethodNote(
            "family-wise error",
            "exact",
            f"Holm's step-down adjustment over the {tests} tests at level {alpha:g}",
            (HOLM,),
        ),
    )


def fit_report(
    fit,
    *,
    payload: dict[str, Any],
    provenance: Provenance,
    figures: tuple[Figure, ...] = (),
    procedure_path: str | None = None,
    procedure_text: str | None = None,
) -> Report:
    """Build the report of one fit (``payload`` is the ``--json`` result)."""
    est = fit.estimates
    tests = fit.tests
    answer = []
    if fit.step is not None:
        answer.append(f"Fitted riffle: {fit.step.describe()}.")
    answer += [
        f"Spread: {est.spread.quantity()}.",
        f"Clump: {est.clump.quantity()}.",
        f"Ideal riffle: {tests.verdict()}.",
    ]
    if fit.not_riffles:
        answer.append(
            f"{fit.not_riffles:,} rows are not one riffle of the deck before them and were not "
            "used (listed below)."
        )
    if procedure_path is not None:
        answer.append(f"Procedure file written: {procedure_path}.")
    info = fit.reader
    log_paragraphs = [
        f"Log {fit.path.name}: {info.decks:,} decks read ({info.format}), {info.set_aside:,} set "
        f"aside; {fit.pairs:,} decks compared with their reference '{fit.reference}'"
        f"{f' within groups of {fit.by}' if fit.by else ''}.",
        f"{fit.counts.riffles:,} are one riffle ({fit.counts.changed:,} changed the deck, "
        f"{fit.counts.unchanged:,} left it as it was); {fit.not_riffles:,} are not one riffle.",
        *[f"Note: {note}." for note in fit.notes],
    ]
    rows_table = _rows_table(fit)
    sections = [
        Section(
            "What the log shows",
            paragraphs=tuple(log_paragraphs),
            tables=(rows_table,) if rows_table is not None else (),
        ),
        Section(
            "The fitted hand riffle",
            paragraphs=(
                "Each riffle's cut and the hand each card fell from are read off exactly; the "
                "parameters maximise the exact probability of all the riffles.",
            ),
            tables=(_parameters_table(fit),),
            figures=figures,
        ),
        Section(
            "Is it the ideal riffle?",
            paragraphs=(f"Verdict: {tests.verdict()}.",),
            tables=(_tests_table(tests),),
        ),
    ]
    if procedure_path is not None:
        paragraphs = [
            f"Written to {procedure_path}. Pass it to shufflecheck assess, power or simulate, or "
            "name it in a policy file (procedure key 'file'), to see what this dealer's riffles "
            "do to the house procedure."
        ]
        if procedure_text is not None:
            steps = next(
                (ln for ln in procedure_text.splitlines() if ln.startswith("steps = ")), ""
            )
            paragraphs.append(f"Steps: {steps[len('steps = ') :].strip(chr(34))}.")
        sections.append(Section("Procedure file", paragraphs=tuple(paragraphs)))
    return Report(
        title=f"Riffles fitted: {fit.path.name}",
        question=(
            f"How does the dealer of {fit.path.name} riffle (cut spread, clumping), is it the "
            "ideal riffle, and what procedure file describes it?"
        ),
        answer=tuple(answer),
        reproducibility=provenance,
        sections=tuple(sections),
        methods=fit_methods(tests.alpha, len(tests.tests)),
        cautions=(
            "The fitted parameters describe the recorded riffles only: another dealer, another "
            "shift or another deck may riffle differently.",
        ),
        data=payload,
    )
