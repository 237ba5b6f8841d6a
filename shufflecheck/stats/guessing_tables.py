"""Bracketed nulls of the guessing game computed in advance, for the shoes the trade deals.

The greedy guessing game's exact law (:func:`~shufflecheck.stats.shoe_nulls.greedy_guessing_law`)
is out of reach for three packs or more read as blackjack or baccarat values (nine values
of ``4p`` cards and one of ``16p``); :func:`~shufflecheck.stats.shoe_nulls.greedy_guessing_bracket`
brackets it, but a tight bracket takes minutes (a six-pack: about 1e-3 set aside in 3 s,
2e-7 in four minutes). The law depends on the counts alone, so the tight brackets are
computed once, by this module's :func:`write_tables` (``python -m
shufflecheck.stats.make_guessing_tables``), and shipped with the package in
``stats/data/guessing-brackets.json``; an audit reads them in milliseconds.

What a stored bracket guarantees is what the computed one does (see
:class:`~shufflecheck.stats.nulls.LawBracket`): every float is stored as its shortest
round-trip text, so the bracket read back is the bracket computed, bit for bit. The tests
recompute a coarse bracket and check that the two agree (both hold the truth), check the
stored exact mean (Diaconis & Graham's method) against a fresh computation, and, in the
slow run, recompute every stored bracket and compare it entry by entry.

References
----------
.. [1] P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to
       subjects", Ann. Statist. 9 (1981) 3-23.
"""

from __future__ import annotations

import json
import time
from collections.abc import Callable, Sequence
from dataclasses import replace
from fractions import Fraction
from functools import cache
from importlib import resources
from pathlib import Path

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import atomic_write
from shufflecheck.stats import shoe_nulls
from shufflecheck.stats.nulls import Law, LawBracket

__all__ = [
    "FORMAT",
    "TABLED",
    "bracket_from_record",
    "bracket_record",
    "default_path",
    "guessing_null",
    "stored_bracket",
    "stored_counts",
    "write_tables",
]

#: the format the stored file declares
FORMAT = "shufflecheck guessing brackets, version 1"

#: the compositions stored, with the threshold each was computed at: blackjack (and
#: baccarat) values of 3 to 6 packs, nine values of 4p cards and one of 16p
TABLED: tuple[tuple[tuple[int, ...], float], ...] = (
    ((48, 12, 12, 12, 12, 12, 12, 12, 12, 12), 1e-16),
    ((64, 16, 16, 16, 16, 16, 16, 16, 16, 16), 1e-14),
    ((80, 20, 20, 20, 20, 20, 20, 20, 20, 20), 1e-14),
    ((96, 24, 24, 24, 24, 24, 24, 24, 24, 24), 1e-14),
)

#: most entries one layer may hold while the tables are computed
TABLE_MAX_STATES = 40_000_000

_FILE = ("data", "guessing-brackets.json")


def _key(counts: Sequence[int]) -> tuple[int, ...]:
    return tuple(sorted((int(c) for c in counts if int(c) > 0), reverse=True))


def bracket_record(counts: Sequence[int], bracket: LawBracket, **extra: object) -> dict:
    """The JSON record of a bracket (floats as their shortest round-trip text)."""
    mean = bracket.exact_mean
    return {
        "counts": list(_key(counts)),
        **extra,
        "offset": bracket.offset,
        "low": bracket.low,
        "high": bracket.high,
        "set_aside": bracket.set_aside,
        "rounding": bracket.rounding,
        "states": bracket.states,
        "exact_mean": None if mean is None else f"{mean.numerator}/{mean.denominator}",
        "method": bracket.method,
        "kept": list(bracket.kept),
        "aside_low": [[v, m] for v, m in bracket.aside_low],
        "aside_high": [[v, m] for v, m in bracket.aside_high],
    }


def bracket_from_record(record: dict, where: str = "record") -> LawBracket:
    """The bracket a record of :func:`bracket_record` holds; :class:`InputError` naming
    ``where`` when the record is malformed."""
    try:
        mean = record["exact_mean"]
        return LawBracket(
            kept=tuple(float(x) for x in record["kept"]),
            offset=int(record["offset"]),
            set_aside=float(record["set_aside"]),
            rounding=float(record["rounding"]),
            low=int(record["low"]),
            high=int(record["high"]),
            aside_low=tuple((int(v), float(m)) for v, m in record["aside_low"]),
            aside_high=tuple((int(v), float(m)) for v, m in record["aside_high"]),
            method=str(record["method"]),
            states=int(record["states"]),
            exact_mean=None if mean is None else Fraction(mean),
        )
    except (KeyError, TypeError, ValueError) as exc:
        raise InputError(f"{where}: not a stored guessing bracket ({exc})") from None


@cache
def _stored() -> dict[tuple[int, ...], LawBracket]:
    source = resources.files("shufflecheck.stats").joinpath(*_FILE)
    where = "/".join(("shufflecheck/stats", *_FILE))
    try:
        document = json.loads(source.read_text(encoding="utf-8"))
    except FileNotFoundError:
        return {}
    except (OSError, ValueError) as exc:
        raise InputError(f"{where}: cannot read the stored guessing brackets ({exc})") from None
    if not isinstance(document, dict) or document.get("format") != FORMAT:
        raise InputError(f"{where}: not a file of {FORMAT!r}")
    out = {}
    for i, record in enumerate(document.get("brackets", ())):
        bracket = bracket_from_record(record, f"{where}, bracket {i + 1}")
        note = (
            f"computed in advance ({record.get('seconds', '?')} s of CPU at threshold "
            f"{record.get('threshold')}) and shipped with the package"
        )
        # one object per composition, so that its bounding laws are built once
        out[_key(record["counts"])] = replace(bracket, method=f"{bracket.method}; {note}")
    return out


def stored_counts() -> tuple[tuple[int, ...], ...]:
    """The compositions (sorted, largest first) with a stored bracket."""
    return tuple(_stored())


def stored_bracket(counts: Sequence[int]) -> LawBracket | None:
    """The stored bracket of ``counts`` (in any order), or None. Its ``method`` says how
    and when it was computed."""
    return _stored().get(_key(counts))


def guessing_null(
    counts: Sequence[int],
    *,
    budget: int = shoe_nulls.GREEDY_STATE_BUDGET,
    stored: bool = True,
    threshold: float | None = None,
) -> Law | LawBracket:
    """The guessing game's null for ``counts``: the exact law when its programme fits
    ``budget`` states; else the stored bracket (when ``stored``); else a bracket computed
    now at ``threshold``. Raises
    :class:`~shufflecheck.stats.shoe_nulls.GuessingOutOfReach` when none applies."""
    if stored and shoe_nulls.greedy_state_estimate(counts) > budget:
        found = stored_bracket(counts)
        if found is not None:
            return found
    if threshold is None:
        return shoe_nulls.greedy_guessing_law(counts, budget=budget)  # or raises, saying why
    return shoe_nulls.greedy_guessing_null(counts, budget=budget, threshold=threshold)


def write_tables(
    path: str | Path,
    tabled: Sequence[tuple[Sequence[int], float]] = TABLED,
    *,
    progress: Callable[[str], None] | None = None,
) -> Path:
    """Compute the brackets of ``tabled`` and write them to ``path`` (atomically)."""
    records = []
    for counts, threshold in tabled:
        if progress is not None:
            progress(f"counts {list(_key(counts))} at threshold {threshold:g} ...")
        start = time.process_time()
        bracket = shoe_nulls.greedy_guessing_bracket(
            counts, threshold=threshold, max_states=TABLE_MAX_STATES
        )
        seconds = round(time.process_time() - start)
        if progress is not None:
            progress(f"  {seconds} s, {bracket.set_aside:.3g} set aside")
        records.append(bracket_record(counts, bracket, threshold=threshold, seconds=seconds))
    document = {
        "format": FORMAT,
        "note": (
            "Brackets of the greedy guessing game's null law, computed by "
            "shufflecheck.stats.shoe_nulls.greedy_guessing_bracket (python -m "
            "shufflecheck.stats.make_guessing_tables); floats as shortest round-trip text."
        ),
        "brackets": records,
    }
    return atomic_write(path, json.dumps(document, indent=1) + "\n")


def default_path() -> Path:
    """Where the package's stored brackets live in a source checkout."""
    return Path(__file__).resolve().parent.joinpath(*_FILE)
