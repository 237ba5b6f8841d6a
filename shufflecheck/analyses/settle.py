"""What would settle a policy decision the bounds leave open.

When a procedure's rigorous upper bounds do not certify the target (or the house count's
bounds straddle it), an officer needs to know what to do next. Three answers, each
labelled:

* **the smallest change that certifies** — rigorous. First, how many consecutive ideal
  riffles one block needs to meet the target on its own (exact: the riffle law of
  Bayer & Diaconis): such a block anywhere in a procedure certifies it, because a further
  step never increases total variation or KL and separation is submultiplicative. Then,
  within the procedure itself, the fewest riffles to add to one of its runs of riffles
  (in every repetition) so that the block inequalities certify the target at the count in
  question (:mod:`shufflecheck.core.block_bounds`);
* **the conjectured answer** — under the unproven interleaving conjecture
  (:mod:`shufflecheck.models.interleaving`): the first count whose conjectured bound meets
  the target, and what it says of the house count. Never a certification;
* **how many recorded decks an audit needs to detect the procedure** — an estimate from
  power planning (:mod:`shufflecheck.analyses.plan`): the fewest decks with which the
  audit battery flags the procedure at the count in question with power 0.9 at the
  policy's family-wise level.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [2] S. Holm, "A simple sequentially rejective multiple test procedure", Scand. J.
       Statist. 6 (1979) 65-70.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

from shufflecheck.common.numbers import count_interval_text, percent
from shufflecheck.common.quantity import Quantity, exact
from shufflecheck.models.blocks import ideal_packets, procedure_blocks
from shufflecheck.models.hand_riffle import HandRiffle
from shufflecheck.models.interleaving import conjectured_bounds
from shufflecheck.models.procedures import Procedure, ProcedureItem
from shufflecheck.models.riffle import MAX_EXACT_CARDS, MAX_EXACT_STEPS, Riffle

__all__ = ["AuditNeed", "CertifyingChange", "Settlement", "settle"]

#: power of the audit planning behind a settlement
PLAN_POWER = 0.9
#: simulated decks of that planning: 20,000 (small departures need many), fewer for shoes
PLAN_SIMULATE = 20_000
#: card positions the planning simulates at most (20,000 decks of 52 cards)
PLAN_CELLS = 1_040_000


@dataclass(frozen=True)
class CertifyingChange:
    """Add ``added`` riffles to run ``run`` of the procedure (``before`` riffles there now):
    the changed procedure, repeated ``repeats`` times, is certified with ``bound``."""

    run: int
    before: int
    added: int
    repeats: int
    procedure: str
    bound: Quantity

    def as_json(self) -> dict[str, Any]:
        return {
            "riffle_run": self.run,
            "riffles_now": self.before,
            "riffles_added": self.added,
            "repeats": self.repeats,
            "procedure": self.procedure,
            "bound": self.bound.as_json(),
        }


@dataclass(frozen=True)
class AuditNeed:
    """Recorded decks an audit needs to flag the procedure (an estimate), or None."""

    repeats: int
    decks: int | None
    test: str | None
    power: float
    alpha: float
    relative_standard_error: float | None
    simulated: int
    #: what the audit records: "decks", or "shoes" (the shoe battery)
    unit: str = "decks"
    #: confidence interval of ``decks`` (whole decks; high may be inf) and its level
    interval: tuple[int, float] | None = None
    confidence: float = 0.95

    def as_json(self) -> dict[str, Any]:
        return {
            "unit": self.unit,
            "repeats": self.repeats,
            "simulated_decks": self.simulated,
            "decks": self.decks,
            "decks_interval": None
            if self.interval is None
            else [self.interval[0], self.interval[1] if math.isfinite(self.interval[1]) else None],
            "confidence": self.confidence,
            "test": self.test,
            "power": self.power,
            "alpha": self.alpha,
            "relative_standard_error": self.relative_standard_error,
            "kind": "estimate",
        }


@dataclass(frozen=True)
class Settlement:
    """What would settle one procedure's decision (see the module docstring)."""

    metric: str
    target: float
    repeats: int
    block_riffles: int | None
    block_value: Quantity | None
    change: CertifyingChange | None
    conjectured_minimum: int | None
    conjectured_at_repeats: Quantity | None
    audit: AuditNeed | None
    unanalysed_riffles: tuple[str, ...] = ()

    def sentences(self, metric_label: str) -> list[str]:
        """The answers in plain words, each with its label."""
        out = []
        if self.block_riffles is not None and self.block_value is not None:
            out.append(
                f"a run of {self.block_riffles} consecutive ideal riffles anywhere in the "
                f"procedure certifies it ({metric_label} {self.block_value})"
            )
        if self.change is None and self.unanalysed_riffles:
            out.append(
                f"its riffles ({', '.join(self.unanalysed_riffles)}) have no exact law, so "
                "no run of them can be lengthened into a certificate: only runs of ideal "
                "riffles count"
            )
        if self.change is not None:
            c = self.change
            out.append(
                f"adding {c.added} riffle{'s' if c.added != 1 else ''} to riffle run {c.run} "
                f"({c.before} -> {c.before + c.added}) certifies {c.repeats} "
                f"repetition{'s' if c.repeats != 1 else ''} ({metric_label} {c.bound}: "
                f"'{c.procedure}')"
            )
        if self.conjectured_at_repeats is not None:
            out.append(
                f"at {self.repeats} repetition{'s' if self.repeats != 1 else ''}, "
                f"{metric_label} {self.conjectured_at_repeats}, resting on an unproven "
                "conjecture"
            )
        if self.conjectured_minimum is not None:
            out.append(
                f"the interleaving conjecture (unproven) would give {self.conjectured_minimum} "
                f"repetition{'s' if self.conjectured_minimum != 1 else ''} (conjectured, not "
                "certified)"
            )
        if self.audit is not None:
            a = self.audit
            if a.decks is not None:
                interval = ""
                if a.interval is not None:
                    interval = (
                        f"{percent(a.confidence)} CI {count_interval_text(*a.interval)} from "
                        f"{a.simulated:,} simulated {a.unit}; "
                    )
                out.append(
                    f"an audit of about {a.decks:,} recorded {a.unit} detects the procedure at "
                    f"{a.repeats} repetition{'s' if a.repeats != 1 else ''} (estimate, "
                    f"{interval}power {a.power:g}, family-wise level {a.alpha:g}, {a.test})"
                )
            else:
                out.append(
                    f"power planning on {a.simulated:,} simulated {a.unit} finds no test of the "
                    f"audit battery with a measurable departure at {a.repeats} "
                    f"repetition{'s' if a.repeats != 1 else ''}: an audit of recorded {a.unit} "
                    "is not expected to detect it (estimate)"
                )
        return out

    def as_json(self) -> dict[str, Any]:
        return {
            "metric": self.metric,
            "target": self.target,
            "repeats": self.repeats,
            "one_block_riffles": self.block_riffles,
            "one_block_value": None if self.block_value is None else self.block_value.as_json(),
            "certifying_change": None if self.change is None else self.change.as_json(),
            "conjectured_minimum": self.conjectured_minimum,
            "conjectured_at_repeats": (
                None
                if self.conjectured_at_repeats is None
                else self.conjectured_at_repeats.as_json()
            ),
            "audit_needs": None if self.audit is None else self.audit.as_json(),
            "riffles_without_exact_law": list(self.unanalysed_riffles),
        }


def _one_block(cards: int, metric: str, target: float) -> tuple[int | None, Quantity | None]:
    """Fewest consecutive ideal riffles whose exact metric meets the target on their own."""
    from shufflecheck.models import riffle

    if cards > MAX_EXACT_CARDS:
        return None, None
    for k in range(1, MAX_EXACT_STEPS + 1):
        value = riffle.exact_distances(cards, k).value(metric)
        if value is not None and value <= target:
            unit = "bits" if metric == "kl_bits" else ""
            return k, exact(value, unit=unit, method=f"exact riffle law, {k} riffles")
    return None, None


def _riffle_runs(procedure: Procedure) -> list[tuple[int, int, int]]:
    """Runs of consecutive ideal riffles in one repetition: (first item, last item, riffles)
    for the runs of 2-packet riffles (a-shuffles with other packet counts are left alone)."""
    runs: list[tuple[int, int, int]] = []
    for index, item in enumerate(procedure.items):
        packets = ideal_packets(item.step)
        if packets is None:
            continue
        riffles = item.times if packets == 2 else 0
        if runs and runs[-1][1] == index - 1:
            first, _, count = runs[-1]
            runs[-1] = (first, index, count + riffles)
        else:
            runs.append((index, index, riffles))
    return [run for run in runs if run[2] > 0]


def _lengthened(procedure: Procedure, last: int, added: int) -> Procedure:
    items = list(procedure.items)
    item = items[last]
    if item.step == Riffle():
        items[last] = replace(item, times=item.times + added)
    else:
        items.insert(last + 1, ProcedureItem(Riffle(), added, item.column))
    changed = Procedure(tuple(items), procedure.text, procedure.name, procedure.cards)
    return Procedure(changed.items, changed.describe(), procedure.name, procedure.cards)


def _certifying_change(
    procedure: Procedure, cards: int, metric: str, target: float, repeats: int, most: int
) -> CertifyingChange | None:
    """The fewest riffles added to one run that make the block inequalities certify
    ``repeats`` repetitions (``most``: the one-block answer, an upper limit)."""
    from shufflecheck.analyses.assess import rigorous_upper_bounds

    runs = _riffle_runs(procedure)
    best: CertifyingChange | None = None
    for number, (_, last, riffles) in enumerate(runs, start=1):
        for added in range(1, max(most - riffles, 0) + 1):
            if best is not None and added >= best.added:
                break
            changed = _lengthened(procedure, last, added)
            split = procedure_blocks(changed, repeats, cards)
            if split.whole is not None:
                value = split.whole.value(metric)
                bound = exact(value) if value is not None else None
            else:
                bound = rigorous_upper_bounds(split).get(metric)
            if bound is not None and bound.value <= target:
                best = CertifyingChange(number, riffles, added, repeats, changed.describe(), bound)
                break
    return best


def _audit_need(
    procedure: Procedure,
    cards: int,
    repeats: int,
    alpha: float,
    seed: int,
    shoe: Any = None,
    feature: str | None = None,
    confidence: float = 0.95,
) -> AuditNeed:
    from shufflecheck.analyses.plan import plan_power, plan_shoe_power

    simulate = max(4000, min(PLAN_SIMULATE, PLAN_CELLS // cards))
    if shoe is not None:  # the shoe battery, on consecutive simulated shoes
        simulate = max(1000, min(PLAN_SIMULATE, PLAN_CELLS // cards))
        ((_, plan),) = plan_shoe_power(
            procedure,
            shoe,
            [repeats],
            feature=feature or "rank",
            alpha=alpha,
            power=PLAN_POWER,
            simulate=simulate,
            seed=seed,
            confidence=confidence,
        )
    else:
        ((_, plan),) = plan_power(
            procedure,
            cards,
            [repeats],
            alpha=alpha,
            power=PLAN_POWER,
            simulate=simulate,
            seed=seed,
            confidence=confidence,
        )
    best = plan.best()
    return AuditNeed(
        repeats,
        None if best is None else best.decks,
        None if best is None else best.title,
        PLAN_POWER,
        alpha,
        None if best is None else best.relative_standard_error,
        simulate,
        "decks" if shoe is None else "shoes",
        None if best is None else best.decks_interval(confidence),
        confidence,
    )


def settle(
    procedure: Procedure,
    cards: int,
    assessment: Any,
    *,
    metric: str,
    target: float,
    repeats: int,
    alpha: float,
    seed: int,
    plan_audit: bool = True,
    shoe: Any = None,
    feature: str | None = None,
    confidence: float = 0.95,
) -> Settlement:
    """What would settle the decision about ``repeats`` repetitions (the house count, or
    the smallest count the lower bounds leave open)."""
    block_riffles, block_value = _one_block(cards, metric, target)
    change = None
    if block_riffles is not None:
        change = _certifying_change(procedure, cards, metric, target, repeats, block_riffles)
    conjectured_minimum = None
    shown = {row.repeats: row.conjectured.get(metric) for row in assessment.rows}

    # every count from 1 on: the assessment's own figure where it has one (a shoe's
    # feature rows carry none), else the conjecture's figure for the distinct cards (a
    # feature is never farther); the conjecture may also reach beyond the assessed counts
    def conjectured_at(r: int) -> Quantity | None:
        guess = shown.get(r)
        if guess is None:
            guess = conjectured_bounds(procedure_blocks(procedure, r, cards), cards).get(metric)
        return guess

    at_repeats = conjectured_at(repeats)
    for r in range(1, len(assessment.rows) + 41):
        guess = conjectured_at(r)
        if guess is not None and guess.value <= target:
            conjectured_minimum = r
            break
    audit = (
        _audit_need(procedure, cards, repeats, alpha, seed, shoe, feature, confidence)
        if plan_audit
        else None
    )
    unanalysed = tuple(
        dict.fromkeys(
            item.step.describe()
            for item in procedure.items
            if isinstance(item.step, HandRiffle) and ideal_packets(item.step) is None
        )
    )
    return Settlement(
        metric,
        target,
        repeats,
        block_riffles,
        block_value,
        change,
        conjectured_minimum,
        at_repeats,
        audit,
        unanalysed,
    )
