"""Shuffle policies: the fewest repetitions of each house procedure that meet a target.

A policy file (TOML) names the metric, the target, the confidence level for Monte Carlo
numbers, and the procedures in use, optionally with recorded logs per table::

    [policy]
    title = "Shuffle policy, main floor"
    metric = "total-variation"      # or "separation" or "kl" (bits)
    target = 0.1                    # in (0, 1]
    confidence = 0.99               # of lower bounds and intervals
    simulate = 20000                # simulated decks per procedure
    seed = 2027
    max_repeats = 12                # search r = 1..max_repeats

    [[procedure]]
    name = "Hand-dealt poker"
    cards = 52                      # or: packs = 6 (a shoe of 6 x 52 distinct cards), or
                                    # deck = "shoe(packs=6)" and feature = "blackjack" (a
                                    # shoe of copies alike, assessed on what the game sees)
    steps = "riffle x3, strip(packets=5), riffle, cut"
    house = 2                       # repetitions the house performs now (optional)

    [[procedure]]
    name = "Dealer 14's riffles"
    file = "procedures/dealer14.toml"   # instead of steps: a procedure file (relative to
                                        # the policy file), e.g. one fit-riffle wrote

    [[procedure.log]]               # optional, any number
    table = "Table 3"
    path = "logs/table3.csv"        # relative to the policy file
    reference = "previous"          # or "first", or an explicit order

For each procedure the decision is, at the first repetition count that meets the target:

* ``exact`` — the repeated procedure is one exactly analysed model; the minimum is exact;
* ``bound`` — a rigorous upper bound from exactly analysed blocks meets the target, so the
  minimum is certified (it may be smaller: the lower bounds say how much smaller at most);
* ``estimate`` — nothing certifies the target within ``max_repeats``; the lower confidence
  bounds only exclude the repetition counts they push above the target, so the smallest
  count they do not exclude is reported as an estimate, never as a certified minimum.

The house count's standing is ``meets`` (certified), ``fails`` (exact, or a lower
confidence bound above the target) or ``undetermined``.

When the bounds leave the decision open (no certified minimum, or an undetermined house
count), the decision carries a :class:`~shufflecheck.analyses.settle.Settlement`: the
smallest change that certifies, the conjectured answer under its own label, and how many
recorded decks an audit needs to detect the procedure.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import names_file
from shufflecheck.common.limits import limit
from shufflecheck.common.numbers import percent
from shufflecheck.common.tomlfiles import TomlFile, load_toml
from shufflecheck.core.distances import METRIC_NAMES, check_target
from shufflecheck.models.procedures import (
    Procedure,
    deck_size,
    load_procedure,
    parse_procedure,
    renamed_key,
)

__all__ = [
    "LOG_KEYS",
    "POLICY_KEYS",
    "PROCEDURE_KEYS",
    "RENAMED_POLICY_KEYS",
    "LogSpec",
    "Policy",
    "PolicyDecision",
    "PolicyProcedure",
    "PolicyResult",
    "decide",
    "evaluate_policy",
    "load_policy",
    "policy_size",
    "policy_work",
]

#: keys of ``[policy]`` and their types
POLICY_KEYS = {
    "title": str,
    "metric": str,
    "target": float,
    "confidence": float,
    "simulate": int,
    "seed": int,
    "max_repeats": int,
    "alpha": float,
}
#: ``[policy]`` keys renamed for one vocabulary: old key -> (new key, what it means)
RENAMED_POLICY_KEYS = {"decks": ("simulate", "simulated decks per procedure")}

#: keys of ``[[procedure]]``
PROCEDURE_KEYS = {
    "name",
    "cards",
    "packs",
    "deck",
    "feature",
    "steps",
    "file",
    "house",
    "log",
    "description",
    "max_repeats",
}
#: keys of ``[[procedure.log]]``
LOG_KEYS = {"table", "path", "reference", "labels", "format", "deck", "by", "time"}


@dataclass(frozen=True)
class LogSpec:
    """A recorded log attached to a procedure (paths resolved against the policy file)."""

    path: Path
    table: str | None = None
    reference: str = "previous"
    labels: str = "codes"
    format: str | None = None
    deck: Path | str | None = None
    time: str | None = None
    by: str | None = None
    where: str = ""  # "policy.toml line 12", prefixed to errors found while auditing


@dataclass(frozen=True)
class PolicyProcedure:
    name: str
    procedure: Procedure
    cards: int
    house: int | None
    max_repeats: int
    logs: tuple[LogSpec, ...] = ()
    source: Path | None = None  # the procedure file named by ``file``, if any
    #: a shoe of repeated cards (``deck = "shoe(packs=6)"``) and the feature its game sees;
    #: the procedure is then assessed on that feature and its logs with the shoe battery
    shoe: Any = None
    feature: str | None = None


@dataclass(frozen=True)
class Policy:
    path: Path
    title: str
    metric: str  # field name: total_variation | separation | kl_bits
    target: float
    confidence: float
    decks: int
    seed: int
    alpha: float
    procedures: tuple[PolicyProcedure, ...]

    @property
    def inputs(self) -> tuple[Path, ...]:
        """Every file the policy reads (for fingerprints in reports)."""
        files = [self.path]
        for proc in self.procedures:
            if proc.source is not None:
                files.append(proc.source)
            for log in proc.logs:
                files.append(log.path)
                if log.deck is not None:
                    files.append(log.deck)
        return tuple(files)


def _typed(
    doc: TomlFile, value: Any, kind: type, key: str, table: str | None, index: int = 0
) -> Any:
    if kind is float and isinstance(value, int) and not isinstance(value, bool):
        return float(value)
    if isinstance(value, bool) or not isinstance(value, kind):
        names = {str: "text", int: "an integer", float: "a number"}
        raise doc.error(f"must be {names[kind]}, got {value!r}", key, table, index)
    return value


def _ranged(
    doc: TomlFile, value: Any, key: str, name: str, table: str | None, index: int = 0
) -> int:
    """``value`` checked against the limit ``key``; errors name the file, line and key."""
    try:
        return limit(key).check(value, name="the value")
    except InputError as exc:
        raise doc.error(str(exc), name, table, index) from None


def load_policy(path: str | Path, *, allow_outside: bool = False) -> Policy:
    """Read and check a policy file; errors name the file, line and key (exit code 2).

    Policy files may come from other people, so the logs, deck definitions and reference
    files they name must lie inside the policy file's own folder (after following symbolic
    links) unless ``allow_outside`` is given; and errors met while auditing an attached log
    never quote the content of a file that failed to parse.
    """
    doc = load_toml(path)
    data = doc.data
    for key in data:
        if key not in ("policy", "procedure"):
            raise doc.error("unknown table or key (allowed: [policy], [[procedure]])", key)
    settings = data.get("policy", {})
    if not isinstance(settings, dict):
        raise doc.error("must be a table: [policy]", "policy")
    renamed_key(doc, settings, "policy", renamed=RENAMED_POLICY_KEYS)
    for key, value in settings.items():
        if key not in POLICY_KEYS:
            raise doc.error(
                f"unknown key (allowed: {', '.join(sorted(POLICY_KEYS))})", key, "policy"
            )
        _typed(doc, value, POLICY_KEYS[key], key, "policy")
    metric_text = settings.get("metric", "total-variation")
    if metric_text not in METRIC_NAMES:
        raise doc.error(
            f"unknown metric {metric_text!r}; choose total-variation, separation or kl",
            "metric",
            "policy",
        )
    if "target" not in settings:
        raise doc.error("missing: give target = 0.1 (say) in [policy]", "target", "policy")
    target = float(settings["target"])
    try:
        check_target(target)
    except InputError as exc:
        raise doc.error(str(exc), "target", "policy") from None
    confidence = float(settings.get("confidence", 0.99))
    if not 0.5 <= confidence < 1:
        raise doc.error(f"must be in [0.5, 1), got {confidence}", "confidence", "policy")
    decks = _ranged(doc, settings.get("simulate", 20000), "policy_decks", "simulate", "policy")
    max_repeats = _ranged(doc, settings.get("max_repeats", 12), "repeats", "max_repeats", "policy")
    seed = settings.get("seed", 1)
    if seed < 0:
        raise doc.error(f"must be an integer >= 0, got {seed}", "seed", "policy")
    alpha = float(settings.get("alpha", 0.01))
    if not 0 < alpha < 0.5:
        raise doc.error(f"must be in (0, 0.5), got {alpha}", "alpha", "policy")
    raw = data.get("procedure")
    if not raw:
        raise doc.error("no procedures: add at least one [[procedure]] table")
    if not isinstance(raw, list):
        raise doc.error("must be an array of tables: write [[procedure]]", "procedure")
    procedures = tuple(
        _procedure(doc, entry, i, max_repeats, allow_outside) for i, entry in enumerate(raw)
    )
    names = [p.name for p in procedures]
    for i, name in enumerate(names):
        if name in names[:i]:
            raise doc.error(f"two procedures are called {name!r}", "name", "procedure", i)
    return Policy(
        path=doc.path,
        title=_typed(doc, settings.get("title", doc.path.stem), str, "title", "policy"),
        metric=METRIC_NAMES[metric_text],
        target=target,
        confidence=confidence,
        decks=decks,
        seed=seed,
        alpha=alpha,
        procedures=procedures,
    )


def _procedure(
    doc: TomlFile, entry: dict, index: int, default_repeats: int, allow_outside: bool = False
) -> PolicyProcedure:
    table = "procedure"
    renamed_key(doc, entry, table, index)
    for key in entry:
        if key not in PROCEDURE_KEYS:
            allowed = ", ".join(sorted(PROCEDURE_KEYS))
            raise doc.error(f"unknown key (allowed: {allowed})", key, table, index)
    source = None
    if "file" in entry:
        procedure, source = _procedure_file(doc, entry, index, allow_outside)
        name = entry.get("name", procedure.name or f"procedure {index + 1}")
        _typed(doc, name, str, "name", table, index)
        procedure = dataclasses.replace(procedure, name=name)
        step_key = "file"
    else:
        name = entry.get("name", f"procedure {index + 1}")
        _typed(doc, name, str, "name", table, index)
        procedure = _procedure_steps(doc, entry, index, name)
        step_key = "steps"
    shoe, feature = _shoe_of(doc, entry, index, allow_outside)
    cards = deck_size(doc, entry, table, index) or procedure.cards or 52
    if shoe is not None:
        if ("cards" in entry or "packs" in entry) and cards != shoe.size:
            raise doc.error(f"the shoe has {shoe.size} cards, not {cards}", "deck", table, index)
        cards = shoe.size
    size_key = "packs" if "packs" in entry and "cards" not in entry else "cards"
    if shoe is None:  # shoes are assessed on their features, with their own ranges
        try:
            limit("assess_cards").check(cards, name="the number of cards")
        except InputError as exc:
            raise doc.error(str(exc), size_key, table, index) from None
    try:
        procedure.check_cards(cards)
    except InputError as exc:
        raise doc.error(str(exc), step_key, table, index) from None
    house = entry.get("house")
    if house is not None:
        _typed(doc, house, int, "house", table, index)
        house = _ranged(doc, house, "repeats", "house", table, index)
    max_repeats = entry.get("max_repeats", default_repeats)
    _typed(doc, max_repeats, int, "max_repeats", table, index)
    max_repeats = _ranged(doc, max_repeats, "repeats", "max_repeats", table, index)
    if house is not None and house > max_repeats:
        max_repeats = house
    logs_raw = entry.get("log", [])
    if not isinstance(logs_raw, list):
        raise doc.error("must be an array of tables: write [[procedure.log]]", "log", table, index)
    if logs_raw and shoe is None:  # attached logs are audited: the audit's range applies
        try:
            limit("audit_cards").check(cards, name="with logs attached, the number of cards")
        except InputError as exc:
            raise doc.error(str(exc), size_key, table, index) from None
    logs = tuple(_log(doc, log, index, j, allow_outside) for j, log in enumerate(logs_raw))
    return PolicyProcedure(name, procedure, cards, house, max_repeats, logs, source, shoe, feature)


def _shoe_of(
    doc: TomlFile, entry: dict, index: int, allow_outside: bool = False
) -> tuple[Any, str | None]:
    """The shoe (``deck``) of a procedure table and its ``feature`` (``rank`` by default)."""
    from shufflecheck.records.shoes import FEATURES, load_shoe

    table = "procedure"
    spec = entry.get("deck")
    feature = entry.get("feature")
    if spec is None:
        if feature is not None:
            raise doc.error(
                'a feature needs a shoe: add deck = "shoe(packs=6)"', "feature", table, index
            )
        return None, None
    _typed(doc, spec, str, "deck", table, index)
    if spec.strip().lower().startswith("shoe"):
        target = spec
    else:
        found = _resolve(doc.path.parent, spec)
        target = str(_confined(doc, found, spec, "deck", table, index, allow_outside))
    try:
        shoe = load_shoe(target)
    except InputError as exc:
        raise doc.error(str(exc), "deck", table, index) from None
    if shoe is None:
        raise doc.error(
            'not a shoe; write deck = "shoe(packs=6)" or a deck file with copies',
            "deck",
            table,
            index,
        )
    if feature is None:
        feature = "rank"
    _typed(doc, feature, str, "feature", table, index)
    if feature not in FEATURES:
        raise doc.error(
            f"unknown feature {feature!r}; features: {', '.join(FEATURES)}",
            "feature",
            table,
            index,
        )
    return shoe, feature


def _procedure_steps(doc: TomlFile, entry: dict, index: int, name: str) -> Procedure:
    """The procedure written out in ``steps``."""
    table = "procedure"
    steps = entry.get("steps")
    if steps is None:
        raise doc.error(
            'missing: give steps = "riffle x3, strip, riffle, cut" (or file = "p.toml")',
            "steps",
            table,
            index,
        )
    if isinstance(steps, list) and all(isinstance(s, str) for s in steps):
        steps = ", ".join(steps)
    if not isinstance(steps, str):
        raise doc.error("must be a string or a list of strings", "steps", table, index)
    try:
        return parse_procedure(steps, name=name)
    except InputError as exc:
        raise doc.error(str(exc), "steps", table, index) from None


def _procedure_file(
    doc: TomlFile, entry: dict, index: int, allow_outside: bool = False
) -> tuple[Procedure, Path]:
    """The procedure of a procedure file named by ``file`` (e.g. one written by
    ``shufflecheck fit-riffle``), relative to the policy file's folder."""
    table = "procedure"
    if "steps" in entry:
        raise doc.error("give steps or file, not both", "file", table, index)
    _typed(doc, entry["file"], str, "file", table, index)
    path = _resolve(doc.path.parent, entry["file"])
    path = _confined(doc, path, entry["file"], "file", table, index, allow_outside)
    if not path.is_file():
        raise doc.error(
            f"procedure file {entry['file']!r} not found (looked in {doc.path.parent})",
            "file",
            table,
            index,
        )
    try:
        return load_procedure(path), path
    except InputError as exc:
        raise doc.error(str(exc), "file", table, index) from None


def _confined(
    doc: TomlFile, path: Path, given: str, key: str, table: str, index: int, allow_outside: bool
) -> Path:
    """``path`` unless it lies outside the policy file's folder and that is not allowed."""
    if allow_outside:
        return path
    base = doc.path.parent.resolve()
    if path == base or base in path.parents:
        return path
    raise doc.error(
        f"{given!r} is outside the policy file's folder {base}; a policy file may only name "
        "files in its own folder (pass {allow_outside} for a policy file you trust)",
        key,
        table,
        index,
        argument="allow_outside",
    )


def _log(
    doc: TomlFile, entry: dict, proc_index: int, index: int, allow_outside: bool = False
) -> LogSpec:
    table = "procedure.log"
    # [[procedure.log]] headers are counted across all procedures by the line finder
    occurrence = sum(len(p.get("log", [])) for p in doc.data["procedure"][:proc_index]) + index
    for key in entry:
        if key not in LOG_KEYS:
            raise doc.error(
                f"unknown key (allowed: {', '.join(sorted(LOG_KEYS))})", key, table, occurrence
            )
    if "path" not in entry:
        raise doc.error('missing: give path = "logs/table3.csv"', "path", table, occurrence)
    for key in ("path", "table", "reference", "labels", "format", "deck", "time", "by"):
        if key in entry:
            _typed(doc, entry[key], str, key, table, occurrence)
    base = doc.path.parent
    path = _resolve(base, entry["path"])
    path = _confined(doc, path, entry["path"], "path", table, occurrence, allow_outside)
    if not path.exists():
        raise doc.error(
            f"log file {entry['path']!r} not found (looked in {base})", "path", table, occurrence
        )
    labels = entry.get("labels", "codes")
    if labels == "cards":
        labels = "codes"
    if labels not in ("codes", "int", "int0", "int1"):
        raise doc.error(
            f"must be 'codes', 'int', 'int0' or 'int1', got {labels!r}", "labels", table, occurrence
        )
    deck = entry.get("deck")
    if deck is not None and deck not in _BUILT_IN_DECKS:
        deck = _confined(
            doc, _resolve(base, deck), entry["deck"], "deck", table, occurrence, allow_outside
        )
        if not deck.exists():
            raise doc.error(
                f"deck definition {entry['deck']!r} not found", "deck", table, occurrence
            )
    reference = entry.get("reference", "previous")
    keyword = reference.strip().lower()
    written_out = any(ch.isspace() for ch in reference.strip())
    if keyword not in ("previous", "first", "deck") and (
        names_file(base / reference) or not written_out
    ):
        # a reference order file, like path (an order written out has spaces in it)
        found = _confined(
            doc, _resolve(base, reference), reference, "reference", table, occurrence, allow_outside
        )
        if not names_file(found):
            raise doc.error(
                f"reference file {reference!r} not found (looked in {base})",
                "reference",
                table,
                occurrence,
            )
        reference = str(found)
    line = doc.line_of("path", table, occurrence)
    return LogSpec(
        path=path,
        table=entry.get("table"),
        reference=reference,
        labels=labels,
        format=entry.get("format"),
        deck=deck,
        time=entry.get("time"),
        by=entry.get("by"),
        where=f"{doc.path}" + (f" line {line}" if line is not None else ""),
    )


_BUILT_IN_DECKS = ("standard", "standard-52")


def _resolve(base: Path, name: str) -> Path:
    """A path from a policy file, relative to the policy file's folder."""
    path = Path(name)
    try:
        return path.resolve() if path.is_absolute() else (base / path).resolve()
    except (OSError, RuntimeError, ValueError):
        return base / path


# ---------------------------------------------------------------------------------------
# evaluation


@dataclass(frozen=True)
class PolicyDecision:
    """The answer for one procedure.

    ``minimum`` is certified (``kind`` exact or bound) or None; ``estimate_low`` is the
    smallest repetition count the lower confidence bounds do not exclude; ``standing`` is
    the house count's standing (meets / fails / undetermined) with ``standing_how``.
    """

    procedure: PolicyProcedure
    minimum: int | None
    kind: str  # exact | bound | estimate
    estimate_low: int | None
    standing: str | None
    standing_how: str | None
    assessment: Any
    audits: tuple[tuple[LogSpec, Any], ...] = ()
    settlement: Any = None

    @property
    def open(self) -> bool:
        """True when the bounds leave the decision open (what :attr:`settlement` answers)."""
        return self.minimum is None or self.standing == "undetermined"

    @property
    def open_repeats(self) -> int:
        """The count a settlement is about: the house count when its standing is open,
        else the smallest count the lower bounds do not exclude (else the largest)."""
        if self.standing == "undetermined" and self.procedure.house is not None:
            return self.procedure.house
        return self.estimate_low or self.procedure.max_repeats

    def summary(self, metric_label: str, target: float) -> str:
        """One sentence a manager can read."""

        def times(k: int) -> str:
            return f"{k} repetition{'s' if k != 1 else ''}"

        name = self.procedure.name
        if self.minimum is not None and self.kind == "exact":
            text = f"{name}: {times(self.minimum)} bring {metric_label} to <= {target:g} (exact)"
        elif self.minimum is not None:
            text = (
                f"{name}: {times(self.minimum)} certified to bring {metric_label} to <= "
                f"{target:g} (rigorous upper bound)"
            )
            if self.estimate_low is not None and self.estimate_low > 1:
                text += f"; fewer than {self.estimate_low} are excluded at the stated confidence"
        elif self.estimate_low is not None:
            text = (
                f"{name}: not certified within {times(self.procedure.max_repeats)}; the smallest "
                f"count not excluded by the lower bounds is {self.estimate_low} (estimate, not a "
                "certified minimum)"
            )
        else:
            text = (
                f"{name}: every count up to {self.procedure.max_repeats} is excluded: "
                f"{metric_label} stays above {target:g}"
            )
        if self.standing is not None:
            text += f"; house count {self.procedure.house}: {self.standing} ({self.standing_how})"
        return text


@dataclass(frozen=True)
class PolicyResult:
    policy: Policy
    decisions: tuple[PolicyDecision, ...]
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def all_met(self) -> bool:
        """True when every procedure with a house count is certified to meet the target."""
        return all(d.standing in (None, "meets") for d in self.decisions)

    def to_dict(self) -> dict[str, Any]:
        """The ``shufflecheck policy --json`` form."""
        return policy_json(self)

    def to_frame(self):  # -> pandas.DataFrame
        """One row per procedure: minimum, how it is known, the house count's standing."""
        import pandas as pd

        return pd.DataFrame(
            [
                {
                    k: p[k]
                    for k in (
                        "name",
                        "procedure",
                        "cards",
                        "minimum",
                        "kind",
                        "smallest_not_excluded",
                        "house",
                        "standing",
                        "standing_how",
                    )
                }
                for p in self.to_dict()["procedures"]
            ]
        ).astype({"minimum": "Int64", "smallest_not_excluded": "Int64", "house": "Int64"})


def policy_json(result: PolicyResult) -> dict[str, Any]:
    """The JSON form of a policy result (``shufflecheck policy --json``)."""
    from shufflecheck.analyses.assess import assessment_json
    from shufflecheck.core.distances import METRIC_LABELS

    policy = result.policy
    out: dict[str, Any] = {
        "policy": {
            "file": str(policy.path),
            "title": policy.title,
            "metric": policy.metric,
            "target": policy.target,
            "confidence": policy.confidence,
            "simulated_decks": policy.decks,
            "seed": policy.seed,
            "alpha": policy.alpha,
        },
        "all_house_counts_meet_target": result.all_met,
        "procedures": [],
    }
    for d in result.decisions:
        proc = d.procedure
        out["procedures"].append(
            {
                "name": proc.name,
                "procedure": proc.procedure.describe(),
                "cards": proc.cards,
                "feature": proc.feature or "distinct",
                "shoe": proc.shoe.describe() if proc.shoe is not None else None,
                "minimum": d.minimum,
                "kind": d.kind if d.minimum is not None else "estimate",
                "smallest_not_excluded": d.estimate_low,
                "house": proc.house,
                "standing": d.standing,
                "standing_how": d.standing_how,
                "summary": d.summary(METRIC_LABELS[policy.metric], policy.target),
                "settle": None if d.settlement is None else d.settlement.as_json(),
                "settle_summary": (
                    []
                    if d.settlement is None
                    else d.settlement.sentences(METRIC_LABELS[policy.metric])
                ),
                "assessment": assessment_json(d.assessment),
                "logs": [
                    {"table": log.table, "path": str(log.path), **audit.as_json()}
                    for log, audit in d.audits
                ],
            }
        )
    return out


def _value(row, metric: str):
    """(exact value or None, upper bound or None, lower bound or None) at one row."""
    if row.exact is not None:
        value = row.exact.value(metric)
        return value, value, value
    upper = row.upper.get(metric)
    lower = row.lower.get(metric)
    return None, upper.value if upper else None, lower.value if lower else None


def decide(
    assessment, metric: str, target: float, house: int | None, proc: PolicyProcedure
) -> PolicyDecision:
    """Turn an assessment into the policy decision for one procedure."""
    minimum = None
    kind = "estimate"
    estimate_low = None
    for row in assessment.rows:
        exact, upper, lower = _value(row, metric)
        if estimate_low is None and (lower is None or lower <= target):
            estimate_low = row.repeats
        if upper is not None and upper <= target:
            minimum = row.repeats
            kind = "exact" if exact is not None else "bound"
            break
    standing = standing_how = None
    if house is not None:
        row = assessment.rows[house - 1]
        exact, upper, lower = _value(row, metric)
        if upper is not None and upper <= target:
            standing, standing_how = "meets", "exact" if exact is not None else "upper bound"
        elif exact is not None:
            standing, standing_how = "fails", "exact"
        elif lower is not None and lower > target:
            standing, standing_how = (
                "fails",
                f"lower bound, {percent(assessment.confidence)} confidence",
            )
        else:
            standing, standing_how = "undetermined", "bounds straddle the target"
    return PolicyDecision(proc, minimum, kind, estimate_low, standing, standing_how, assessment)


#: progress units of one settlement (its audit planning), beside the assessment's chunks
SETTLE_WORK = 1


def policy_work(policy: Policy) -> int:
    """Units of work :func:`evaluate_policy` reports to its progress callback: the
    assessment chunks of every procedure and one unit per procedure for its settlement."""
    from shufflecheck.analyses.assess import assessment_work

    return sum(
        assessment_work(policy.decks, proc.max_repeats, proc.cards) + SETTLE_WORK
        for proc in policy.procedures
    )


def policy_size(policy: Policy) -> str:
    """The expected size of :func:`evaluate_policy`, in words (said before it starts)."""
    parts = []
    for proc in policy.procedures:
        parts.append(
            f"{proc.name}: {policy.decks:,} decks x {proc.cards} cards x "
            f"{proc.max_repeats} repetition{'s' if proc.max_repeats != 1 else ''}"
        )
    cells = sum(policy.decks * p.cards * p.max_repeats for p in policy.procedures)
    return f"{'; '.join(parts)} ({cells / 1e6:,.0f} million card positions to simulate)"


def evaluate_policy(
    policy: Policy, *, progress: Callable[[int], None] | None = None
) -> PolicyResult:
    """Assess every procedure of the policy, decide, settle what the bounds leave open,
    and audit the attached logs.

    ``progress`` is called with the units done so far (out of :func:`policy_work`).
    """
    from shufflecheck.analyses.assess import assess, assessment_work
    from shufflecheck.analyses.settle import settle

    decisions = []
    offset = 0
    for i, proc in enumerate(policy.procedures):

        def update(done: int, _offset: int = offset) -> None:
            if progress is not None:
                progress(_offset + done)

        if proc.shoe is not None and proc.feature != "distinct":
            from shufflecheck.analyses.feature_assess import assess_feature

            result = assess_feature(
                proc.procedure,
                proc.shoe,
                proc.feature,
                repeats=proc.max_repeats,
                decks=policy.decks,
                rng=policy.seed + i,
                confidence=policy.confidence,
                progress=update,
            )
        else:
            result = assess(
                proc.procedure,
                proc.cards,
                repeats=proc.max_repeats,
                decks=policy.decks,
                rng=policy.seed + i,
                confidence=policy.confidence,
                progress=update,
            )
        offset += assessment_work(policy.decks, proc.max_repeats, proc.cards)
        decision = decide(result, policy.metric, policy.target, proc.house, proc)
        settlement = None
        if decision.open:
            settlement = settle(
                proc.procedure,
                proc.cards,
                result,
                metric=policy.metric,
                target=policy.target,
                repeats=decision.open_repeats,
                alpha=policy.alpha,
                seed=policy.seed + i,
                shoe=proc.shoe,
                feature=proc.feature,
                confidence=policy.confidence,
            )
        offset += SETTLE_WORK
        if progress is not None:
            progress(offset)
        audits = tuple((log, _audit(log, proc, policy)) for log in proc.logs)
        decisions.append(dataclasses.replace(decision, audits=audits, settlement=settlement))
    return PolicyResult(policy, tuple(decisions))


def _audit(log: LogSpec, proc: PolicyProcedure, policy: Policy):
    from shufflecheck.analyses.audit_log import audit_log

    try:
        return audit_log(
            log.path,
            reference=log.reference,
            labels=log.labels,
            fmt=log.format,
            deck=log.deck if log.deck is not None else proc.shoe,
            cards=proc.cards,
            feature=proc.feature if proc.shoe is not None else None,
            by=log.by,
            time=log.time,
            alpha=policy.alpha,
            confidence=policy.confidence,  # of the since-when interval
        )
    except InputError as exc:
        # the file may not be a log at all: never quote the content of what failed to parse
        raise InputError(f"{exc.without_content} (log attached at {log.where})") from None
