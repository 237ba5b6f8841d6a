"""Fit a dealer's own riffles from a recorded log: read, read off, estimate, test, write.

The log holds one deck per row, each deck one hand riffle of the deck before it (the
reference ``previous`` of :mod:`shufflecheck.records.logs`; another reference, such as a
fixed starting order for every riffle, works the same way). Each deck relative to its
reference is read off exactly (:func:`shufflecheck.models.riffle_likelihood.decode_riffles`):
the cut and the drop of every card. Rows that one riffle cannot give (three or more rising
sequences) are reported with their row numbers and not used, never dropped silently; decks
that came out unchanged are riffles whose cut is not seen, and the likelihood sums over it.

Then :func:`shufflecheck.analyses.riffle_estimates.estimate_parameters` estimates the
hand-riffle parameters ``spread`` and ``clump`` by maximum likelihood with profile
intervals, and :func:`shufflecheck.analyses.riffle_null.ideal_riffle_tests` tests the
ideal riffle. The fitted step, rounded to four significant digits, can be written into a
procedure file (alone, or in place of every riffle of a house procedure) that ``assess``,
``power``, ``simulate`` and policy files read like any other.
"""

from __future__ import annotations

import csv
import json
import math
import os
import textwrap
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from shufflecheck.analyses.audit_log import log_deck
from shufflecheck.analyses.riffle_estimates import RiffleEstimates, estimate_parameters
from shufflecheck.analyses.riffle_null import (
    IdealRiffleTests,
    expected_packet_lengths,
    ideal_riffle_tests,
)
from shufflecheck.common.checks import check_fraction, check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.common.files import atomic_open, atomic_write, sha256_file
from shufflecheck.models.hand_riffle import HandRiffle
from shufflecheck.models.hand_riffle import sample as sample_hand_riffles
from shufflecheck.models.procedures import Procedure, ProcedureItem, parse_procedure
from shufflecheck.models.riffle import Riffle
from shufflecheck.models.riffle_likelihood import (
    RiffleCounts,
    changed_cut_counts,
    cut_log_law,
    decode_riffles,
    tally_riffles,
    unchanged_given_cut,
)
from shufflecheck.records.cards import DeckDefinition
from shufflecheck.records.logs import LogSummary, Reference, read_log

__all__ = [
    "FITTED_RIFFLES",
    "NOT_ONE_RIFFLE_SHOWN",
    "PacketLengths",
    "RiffleLogFit",
    "fit_riffle_log",
    "fitted_procedure",
    "procedure_file_text",
    "write_not_riffles",
    "write_procedure_file",
]

#: riffles simulated from the fitted step for its packet lengths (an estimate)
FITTED_RIFFLES = 20_000
#: batches of those riffles (batch means give the standard errors)
_BATCHES = 20
#: rows that are not one riffle listed in JSON (all of them go to --not-riffles FILE)
NOT_ONE_RIFFLE_SHOWN = 1000
#: significant digits of the fitted parameters written into a procedure
_DIGITS = 4


@dataclass(frozen=True)
class PacketLengths:
    """Packets of each length per riffle that changed the deck (index = cards, 0..n).

    ``observed`` from the log; ``ideal`` exact for the ideal riffle with the log's cuts;
    ``fitted`` an estimate from :data:`FITTED_RIFFLES` simulated riffles of the fitted step
    (its cuts drawn from the fitted curve), with standard errors from batch means; None
    when there is no fitted step.
    """

    observed: np.ndarray
    ideal: np.ndarray
    fitted: np.ndarray | None
    fitted_stderr: np.ndarray | None

    def shown(self) -> int:
        """Longest packet worth showing: every observed one, and the lengths expected at
        least once in 200 riffles under either model."""
        longest = int(np.flatnonzero(self.observed)[-1]) if self.observed.any() else 1
        for row in (self.ideal, self.fitted):
            if row is not None and np.any(row >= 0.005):
                longest = max(longest, int(np.flatnonzero(row >= 0.005)[-1]))
        return max(longest, 1)

    def as_json(self) -> dict[str, Any]:
        top = self.shown() + 1
        out: dict[str, Any] = {
            "unit": "packets per riffle that changed the deck",
            "lengths": list(range(1, top)),
            "observed": self.observed[1:top].tolist(),
            "ideal": {"kind": "exact", "values": self.ideal[1:top].tolist()},
        }
        if self.fitted is not None and self.fitted_stderr is not None:
            out["fitted"] = {
                "kind": "estimate",
                "values": self.fitted[1:top].tolist(),
                "stderr": self.fitted_stderr[1:top].tolist(),
                "riffles": FITTED_RIFFLES,
            }
        return out


@dataclass(frozen=True)
class RiffleLogFit:
    """Everything :func:`fit_riffle_log` found in one log."""

    path: Path
    deck: DeckDefinition
    reference: str
    by: str | None
    reader: LogSummary
    pairs: int
    reference_only: int
    after_set_aside: int
    counts: RiffleCounts
    not_riffle_rows: np.ndarray
    not_riffle_references: np.ndarray
    not_riffle_rising: np.ndarray
    unchanged_rows: np.ndarray
    estimates: RiffleEstimates
    tests: IdealRiffleTests
    packets: PacketLengths
    step: HandRiffle | None
    no_step_reason: str | None
    notes: tuple[str, ...]

    @property
    def cards(self) -> int:
        return self.counts.cards

    @property
    def not_riffles(self) -> int:
        return int(self.not_riffle_rows.size)

    def cut_laws(self) -> dict[str, np.ndarray]:
        """Laws of the cut ``c = 0..n`` of a riffle that changed the deck: the ideal
        riffle's (exact), and the fitted riffle's at the estimated parameters (``fitted``)
        with its envelope over the spread's interval (``fitted_low``, ``fitted_high``)."""
        n = self.cards
        counts = np.array(changed_cut_counts(n), dtype=float)
        out = {"ideal": counts / counts.sum()}
        spread, clump = self.estimates.spread, self.estimates.clump.value
        if math.isfinite(spread.value) and math.isfinite(clump):
            changed = 1.0 - np.exp(unchanged_given_cut(n, clump))

            def law(s: float) -> np.ndarray:
                weights = np.exp(cut_log_law(n, s)) * changed
                return weights / weights.sum()

            out["fitted"] = law(spread.value)
            if math.isfinite(spread.high):
                curves = np.array(
                    [law(s) for s in np.linspace(spread.low, spread.high, 21)] + [out["fitted"]]
                )
                out["fitted_low"] = curves.min(axis=0)
                out["fitted_high"] = curves.max(axis=0)
        return out

    def as_json(self) -> dict[str, Any]:
        """The JSON form of ``shufflecheck fit-riffle --json`` (without the output paths)."""
        shown = min(self.not_riffles, NOT_ONE_RIFFLE_SHOWN)
        est = self.estimates
        laws = self.cut_laws()
        return {
            "log": {
                "path": str(self.path),
                "format": self.reader.format,
                "deck": self.deck.name,
                "rows": self.reader.rows,
                "decks_read": self.reader.decks,
                "set_aside": self.reader.set_aside,
                "set_aside_reasons": dict(self.reader.reasons),
                "quarantine": self.reader.quarantine,
                "reference": self.reference,
                "by": self.by,
                "reference_only": self.reference_only,
                "untested_after_set_aside": self.after_set_aside,
            },
            "cards": self.cards,
            "riffles": {
                "pairs": self.pairs,
                "one_riffle": self.counts.riffles,
                "changed": self.counts.changed,
                "unchanged": self.counts.unchanged,
                "not_one_riffle": self.not_riffles,
                "not_one_riffle_rows": [
                    {
                        "row": int(self.not_riffle_rows[k]),
                        "reference_row": int(self.not_riffle_references[k]),
                        "rising_sequences": int(self.not_riffle_rising[k]),
                    }
                    for k in range(shown)
                ],
                "not_one_riffle_rows_shown": shown,
                "unchanged_rows": self.unchanged_rows[:NOT_ONE_RIFFLE_SHOWN].tolist(),
            },
            "estimates": {
                "spread": est.spread.quantity().as_json(),
                "clump": est.clump.quantity().as_json(),
                "confidence": est.confidence,
                "log_likelihood": est.log_likelihood,
                "ideal_log_likelihood": est.ideal_log_likelihood,
                "method": "maximum likelihood; profile-likelihood intervals",
            },
            "fitted_step": None if self.step is None else self.step.describe(),
            "ideal_riffle": self.tests.as_json(),
            "packet_lengths": self.packets.as_json(),
            "cuts": {
                "observed": self.counts.cuts.tolist(),
                "unit": "riffles that changed the deck, by cards in the top packet",
                "ideal_pmf": {"kind": "exact", "values": laws["ideal"].tolist()},
                **(
                    {
                        "fitted_pmf": {
                            "kind": "estimate",
                            "values": laws["fitted"].tolist(),
                            **(
                                {
                                    "low": laws["fitted_low"].tolist(),
                                    "high": laws["fitted_high"].tolist(),
                                    "band": "envelope over the spread's interval",
                                }
                                if "fitted_low" in laws
                                else {}
                            ),
                        }
                    }
                    if "fitted" in laws
                    else {}
                ),
            },
            "notes": list(self.notes),
        }


def _rounded(value: float) -> float:
    return float(f"{value:.{_DIGITS}g}")


def _fitted_step(estimates: RiffleEstimates) -> tuple[HandRiffle | None, str | None]:
    spread, clump = estimates.spread.value, estimates.clump.value
    if not math.isfinite(spread):
        return None, (
            "the cuts are spread wider than a cut curve centred on the middle can describe "
            "(the likelihood grows without bound with the spread), so no step is fitted"
        )
    if not math.isfinite(clump):
        return None, (
            "no hand ever gave way to the other while it still held cards (every riffle is a "
            "single cut of two packets), so clump is unbounded and no step is fitted"
        )
    return HandRiffle(spread=_rounded(spread), clump=_rounded(clump)), None


def _fitted_packets(
    step: HandRiffle, cards: int, rng: np.random.Generator
) -> tuple[np.ndarray, np.ndarray]:
    per = FITTED_RIFFLES // _BATCHES
    relative = sample_hand_riffles(
        per * _BATCHES, cards, rng=rng, spread=step.spread, clump=step.clump
    )
    groups = np.repeat(np.arange(_BATCHES), per)
    rows = []
    for counts in tally_riffles(decode_riffles(relative), groups, _BATCHES):
        rows.append(counts.packet_lengths / max(counts.changed, 1))
    table = np.array(rows)
    return table.mean(axis=0), table.std(axis=0, ddof=1) / math.sqrt(_BATCHES)


def _notes(
    counts: RiffleCounts,
    estimates: RiffleEstimates,
    tests: IdealRiffleTests,
    not_riffles: int,
    unchanged_rows: np.ndarray,
    pairs: int,
    why_no_step: str | None,
) -> tuple[str, ...]:
    notes = []
    if not_riffles:
        share = not_riffles / pairs
        notes.append(
            f"{not_riffles:,} of {pairs:,} decks ({100 * share:.1f}%) are not one riffle of the "
            "deck before them (three or more rising sequences); they are listed and not used"
            + (
                ". Most decks are not one riffle: is each deck recorded after one riffle?"
                if share > 0.5
                else ""
            )
        )
    if counts.unchanged:
        first = ", ".join(str(r) for r in unchanged_rows[:5].tolist())
        more = ", ..." if counts.unchanged > 5 else ""
        notes.append(
            f"{counts.unchanged:,} decks came out exactly as the deck before them (rows "
            f"{first}{more}): a riffle that changed nothing, or a deck recorded twice; the "
            "likelihood counts them as riffles whose cut is not seen"
        )
    if tests.by_name("cut-centre").flagged:
        notes.append(
            "the cuts are off-centre; the hand-riffle model centres its cut on the middle, so "
            "the fitted spread also takes in the offset (spread^2 is about the cuts' variance "
            "plus the offset squared)"
        )
    if not tests.samples:
        notes.append("samples 0: only the exact tests were run")
    elif len(tests.tests) / (tests.samples + 1) > tests.alpha:
        notes.append(
            f"with {tests.samples:,} simulated logs no Monte Carlo p-value can fall below "
            f"1/{tests.samples + 1:,}, so after Holm's adjustment those tests cannot reject at "
            f"level {tests.alpha:g}; use at least {math.ceil(len(tests.tests) / tests.alpha):,} "
            "samples"
        )
    spread, clump = estimates.spread.value, estimates.clump.value
    if spread == 0:
        notes.append("spread 0: every cut read off was a middle cut")
    if clump == 0:
        notes.append("clump 0: no hand dropped twice in a row while both hands held cards")
    if why_no_step:
        notes.append(why_no_step)
    return tuple(notes)


def fit_riffle_log(
    path: str | os.PathLike[str],
    *,
    reference: str = "previous",
    labels: str = "codes",
    fmt: str | None = None,
    deck: str | os.PathLike[str] | DeckDefinition | None = None,
    cards: int | None = None,
    by: str | None = None,
    quarantine: str | os.PathLike[str] | None = None,
    force: bool = True,
    confidence: float = 0.95,
    alpha: float = 0.01,
    samples: int = 999,
    rng: np.random.Generator | int | None = 0,
    chunk_rows: int = 50_000,
    progress: Callable[[int], None] | None = None,
) -> RiffleLogFit:
    """Read a log of recorded riffles, estimate the hand riffle and test the ideal riffle.

    Parameters
    ----------
    path : path
        The log (CSV with an ``order`` column, wide CSV, JSON Lines, Parquet); each deck one
        riffle of its reference.
    reference : str
        ``previous`` (default: the deck before it in the log, of the same group with
        ``by``), ``first``, or a fixed order (text of codes or a file holding one).
    labels, fmt, deck, cards, by, quarantine, force
        As for :func:`shufflecheck.analyses.audit_log.audit_log`.
    confidence : float
        Level of the parameters' intervals (default 0.95).
    alpha : float
        Family-wise level of the tests of the ideal riffle (Holm; default 0.01).
    samples : int
        Simulated logs for the Monte Carlo nulls (default 999).
    rng : Generator, int or None
        Randomness of the Monte Carlo nulls and of the fitted step's packet lengths.
    progress : callable, optional
        Called with the number of simulated logs done so far.

    Returns
    -------
    RiffleLogFit
    """
    confidence = check_fraction(confidence, "confidence")
    check_fraction(alpha, "alpha")
    if check_integer(samples, "samples", low=0) and samples < 19:
        raise InputError(
            f"samples must be 0 (exact tests only) or at least 19, got {samples}",
            argument="samples",
        )
    definition, labels = log_deck(path, deck=deck, cards=cards, labels=labels)
    reader = read_log(
        path,
        deck=definition,
        labels=labels,
        fmt=fmt or "auto",
        chunk_rows=chunk_rows,
        quarantine=quarantine,
        force=force,
    )
    stream = Reference.parse(reference, definition, labels=labels).stream(by=by)
    counts = RiffleCounts.empty(definition.size)
    bad_rows, bad_refs, bad_rising, unchanged = [], [], [], []
    for chunk in reader:
        rel = stream.relative(chunk)
        if not len(rel):
            continue
        decoded = decode_riffles(rel.relative)
        counts = counts + tally_riffles(decoded)[0]
        bad = ~decoded.one_riffle
        bad_rows.append(rel.rows[bad])
        bad_refs.append(rel.reference_rows[bad])
        bad_rising.append(decoded.rising[bad])
        unchanged.append(rel.rows[decoded.rising == 1])
    summary = reader.summary
    not_rows, not_refs, not_rising, unchanged_rows = (
        np.concatenate(parts) if parts else np.zeros(0, np.int64)
        for parts in (bad_rows, bad_refs, bad_rising, unchanged)
    )
    if counts.changed == 0:
        shown = ", ".join(str(r) for r in not_rows[:5].tolist())
        why = (
            f"no deck is one riffle of the deck before it that changed it ({stream.tested:,} "
            f"decks compared; {not_rows.size:,} are not one riffle"
            + (f", e.g. rows {shown}" if shown else "")
            + "): a log of single riffles is needed"
        )
        raise InputError(f"{path}: {why}")
    try:
        estimates = estimate_parameters(counts, confidence=confidence)
    except InputError as exc:
        raise InputError(f"{path}: {exc}") from None
    null_rng, fitted_rng = np.random.default_rng(rng).spawn(2)
    tests = ideal_riffle_tests(
        counts, alpha=alpha, samples=samples, rng=null_rng, progress=progress
    )
    if isinstance(rng, int) and not isinstance(rng, bool):
        tests = IdealRiffleTests(tests.tests, tests.alpha, tests.samples, rng)
    step, why_no_step = _fitted_step(estimates)
    ideal = expected_packet_lengths(counts) / counts.changed
    observed = counts.packet_lengths / counts.changed
    if step is not None:
        fitted, fitted_se = _fitted_packets(step, counts.cards, fitted_rng)
    else:
        fitted = fitted_se = None
    return RiffleLogFit(
        path=Path(path),
        deck=definition,
        reference=reference,
        by=by,
        reader=summary,
        pairs=stream.tested,
        reference_only=stream.reference_only,
        after_set_aside=stream.after_set_aside,
        counts=counts,
        not_riffle_rows=not_rows,
        not_riffle_references=not_refs,
        not_riffle_rising=not_rising,
        unchanged_rows=unchanged_rows,
        estimates=estimates,
        tests=tests,
        packets=PacketLengths(observed, ideal, fitted, fitted_se),
        step=step,
        no_step_reason=why_no_step,
        notes=_notes(
            counts,
            estimates,
            tests,
            int(not_rows.size),
            unchanged_rows,
            stream.tested,
            why_no_step,
        ),
    )


# ---------------------------------------------------------------------------------------
# the procedure file


def fitted_procedure(fit: RiffleLogFit, procedure: str | None = None) -> Procedure:
    """The fitted step as a procedure: alone, or in place of every riffle of ``procedure``.

    ``procedure`` is the house procedure's text, such as ``"riffle x3, strip, riffle, cut"``;
    each ideal two-handed ``riffle`` and each ``hand-riffle`` item becomes the fitted step,
    with its repeat count; the other steps stay as written.
    """
    if fit.step is None:
        raise InputError(f"{fit.path}: no step was fitted: {fit.no_step_reason}")
    if procedure is None:
        return parse_procedure(fit.step.describe())
    house = parse_procedure(procedure)
    items, replaced = [], 0
    for item in house.items:
        step = item.step
        if (isinstance(step, Riffle) and step.hands == 2) or isinstance(step, HandRiffle):
            items.append(ProcedureItem(fit.step, item.times, item.column))
            replaced += 1
        else:
            items.append(item)
    if not replaced:
        raise InputError(
            f"the procedure {house.describe()!r} has no riffle for the fitted riffle to replace",
            argument="procedure",
        )
    out = parse_procedure(", ".join(item.describe() for item in items))
    out.check_cards(fit.cards)
    return out


def _toml_text(value: str) -> str:
    """A TOML basic string (JSON's escapes are TOML's)."""
    return json.dumps(value, ensure_ascii=False)


def procedure_file_text(
    fit: RiffleLogFit,
    procedure: Procedure,
    *,
    name: str | None = None,
    house: str | None = None,
) -> str:
    """A procedure file (TOML, see docs/procedures-and-policies.md) holding ``procedure``,
    with comments saying where the fitted step comes from. Read back with
    :func:`shufflecheck.models.procedures.load_procedure`."""
    est = fit.estimates
    digest = sha256_file(fit.path)
    title = name if name is not None else f"Fitted riffle, {fit.path.name}"
    lines = [
        "# A dealing procedure with a hand riffle fitted to recorded riffles by",
        "# shufflecheck fit-riffle (maximum likelihood, profile-likelihood intervals).",
        f"# Log: {fit.path} (SHA-256 {digest[:16]}...), reference {fit.reference}:",
        f"#   {fit.counts.riffles:,} riffles of {fit.cards} cards read off"
        f" ({fit.counts.unchanged:,} unchanged), {fit.not_riffles:,} rows not one riffle.",
        f"# spread: {est.spread.quantity().text()}",
        f"# clump:  {est.clump.quantity().text()}",
        f"# Written with {_DIGITS} significant digits: hand-riffle(spread=..., clump=...).",
    ]
    notes = [f"The ideal riffle: {fit.tests.verdict()}."]
    if house is not None:
        notes.append(f"House procedure: {house} (every riffle is the fitted riffle).")
    notes.append(
        "Estimates from a finite sample of recorded riffles: statistical evidence, not a "
        "certification."
    )
    for note in notes:
        lines += [f"# {line}" for line in textwrap.wrap(note, 86, break_on_hyphens=False)]
    lines += [
        f"name = {_toml_text(title)}",
        f"cards = {fit.cards}",
        f"steps = {_toml_text(procedure.describe())}",
        "description = "
        + _toml_text(
            f"hand riffle fitted to {fit.counts.riffles} recorded riffles in {fit.path.name}: "
            f"spread {est.spread.value:.4g} cards, clump {est.clump.value:.4g}"
        ),
    ]
    text = "\n".join(lines) + "\n"
    parsed = parse_procedure(procedure.describe())  # the file must read back as written
    if parsed.describe() != procedure.describe():
        raise InputError(f"the fitted procedure does not read back: {procedure.describe()!r}")
    return text


def write_procedure_file(path: str | os.PathLike[str], text: str, *, force: bool = False) -> Path:
    """Write a procedure file atomically; an existing file is replaced only with ``force``."""
    target = Path(path)
    if target.suffix.lower() != ".toml":
        raise InputError(f"procedure file {target} must end in .toml (commands read it by that)")
    return atomic_write(target, text, force=force)


def write_not_riffles(
    path: str | os.PathLike[str], fit: RiffleLogFit, *, force: bool = False
) -> Path:
    """Every row that is not one riffle, as CSV: row, reference_row, rising_sequences."""
    with atomic_open(path, "w", force=force) as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(("row", "reference_row", "rising_sequences"))
        for row in zip(
            fit.not_riffle_rows.tolist(),
            fit.not_riffle_references.tolist(),
            fit.not_riffle_rising.tolist(),
            strict=True,
        ):
            writer.writerow(row)
    return Path(path)
