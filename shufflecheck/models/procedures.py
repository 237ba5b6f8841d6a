"""Dealing procedures: text such as ``riffle x3, strip(packets=5), riffle, cut``.

Grammar (whitespace is free between tokens)::

    procedure := item ("," item)*
    item      := step [ "(" [ param ("," param)* ] ")" ] [ "x" count ]
    param     := name "=" value          value := number | word | "quoted text"

``x3`` (also ``×3`` or ``*3``) repeats a step. Step names are the keywords of the
registered step models (see :mod:`shufflecheck.models.registry`); parameters are
the step's dataclass fields and are converted to the field's type. Errors point at the
offending column: ``unknown step 'rifle' at column 1; did you mean 'riffle'?``.

A procedure can also be read from a TOML file::

    name = "Main floor, hand-dealt games"
    cards = 52            # or: decks = 6   (a shoe of 6 x 52 distinct cards)
    steps = "riffle x3, strip(packets=5), riffle, cut"   # or a list of items

A :class:`Procedure` applies its steps in order to a batch of decks; repeating the whole
procedure ``r`` times is ``apply(decks, rng, repeats=r)``.
"""

from __future__ import annotations

import difflib
import math
import re
import types
import typing
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from shufflecheck.common.checks import check_integer
from shufflecheck.common.errors import InputError, clip
from shufflecheck.common.limits import limit
from shufflecheck.common.resources import check_memory, memory_room
from shufflecheck.models.base import Step
from shufflecheck.models.permute import CHUNK_DECKS, deck_dtype, identity_decks
from shufflecheck.models.registry import entry, step_types

__all__ = [
    "PROCEDURE_FILE_KEYS",
    "RENAMED_KEYS",
    "SIMULATION_REFERENCES",
    "Procedure",
    "ProcedureItem",
    "composed_lookup",
    "load_procedure",
    "parse_procedure",
    "procedure_from_argument",
    "relative_chunks",
    "renamed_key",
    "running_composition",
    "simulate_play",
    "simulated_chunks",
]

#: how simulated decks relate to each other: see :func:`simulate_play`
SIMULATION_REFERENCES = ("previous", "first")

#: cards in one standard pack; a shoe of d decks has d * 52 distinct cards here
PACK = 52

#: memory per card of a simulated log while it is built and written, in bytes (measured:
#: about 8 at 52 cards and 14 at 416, peak resident size of simulate runs of 10^5 to 10^6
#: decks, the decks, their running composition and the text blocks being written)
PLAY_BYTES = 16


@dataclass(frozen=True)
class ProcedureItem:
    """One item of a procedure: a step, how many times in a row, and where it was written."""

    step: Step
    times: int = 1
    column: int = 1

    def describe(self) -> str:
        text = self.step.describe()
        return f"{text} x{self.times}" if self.times != 1 else text


@dataclass(frozen=True)
class Procedure:
    """A sequence of steps applied in order; ``cards`` and ``name`` when read from a file."""

    items: tuple[ProcedureItem, ...]
    text: str
    name: str | None = None
    cards: int | None = None

    def describe(self) -> str:
        """Canonical procedure text (defaults omitted)."""
        return ", ".join(item.describe() for item in self.items)

    def expanded(self, repeats: int = 1) -> list[Step]:
        """The individual steps of ``repeats`` consecutive runs of the procedure."""
        one = [item.step for item in self.items for _ in range(item.times)]
        return one * repeats

    def runs(self, repeats: int = 1) -> list[tuple[Step, int]]:
        """The steps of ``repeats`` runs as maximal runs of equal consecutive steps (built
        from the items and their counts, never step by step)."""
        out: list[tuple[Step, int]] = []
        for _ in range(repeats):
            for item in self.items:
                if out and out[-1][0] == item.step:
                    out[-1] = (item.step, out[-1][1] + item.times)
                else:
                    out.append((item.step, item.times))
        return out

    @property
    def steps(self) -> int:
        """Steps in one run of the procedure (repeat counts included)."""
        return sum(item.times for item in self.items)

    @property
    def deterministic(self) -> bool:
        """True when every step is a fixed rearrangement (the procedure mixes nothing)."""
        return all(item.step.deterministic for item in self.items)

    def check_cards(self, cards: int) -> None:
        """Raise :class:`InputError` unless every step can act on ``cards`` cards."""
        limit("cards").check(cards)
        for item in self.items:
            item.step.check_cards(cards)

    def apply(self, decks: np.ndarray, rng: np.random.Generator, repeats: int = 1) -> np.ndarray:
        """Run the procedure ``repeats`` times on every row of ``decks`` (a new array)."""
        out = decks
        for step, times in self.runs(repeats):
            out = step.apply_repeated(out, times, rng)
        return out if out is not decks else decks.copy()

    def sample(
        self,
        decks: int,
        cards: int,
        repeats: int = 1,
        *,
        rng: np.random.Generator | int | None = None,
    ) -> np.ndarray:
        """``decks`` decks after ``repeats`` runs of the procedure from the reference order."""
        self.check_cards(cards)
        check_integer(decks, "decks", low=0)
        limit("repeats").check(repeats)
        generator = np.random.default_rng(rng)
        out = identity_decks(decks, cards)
        for start in range(0, decks, CHUNK_DECKS):
            stop = min(decks, start + CHUNK_DECKS)
            out[start:stop] = self.apply(out[start:stop], generator, repeats)
        return out


# ---------------------------------------------------------------------------------------
# parsing


@dataclass
class _Cursor:
    text: str
    pos: int = 0

    @property
    def column(self) -> int:
        return self.pos + 1

    def skip_space(self) -> None:
        while self.pos < len(self.text) and self.text[self.pos].isspace():
            self.pos += 1

    def peek(self) -> str:
        return self.text[self.pos] if self.pos < len(self.text) else ""

    def at_end(self) -> bool:
        self.skip_space()
        return self.pos >= len(self.text)


_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_-]*")
_COUNT = re.compile(r"(?:[xX×*])\s*(\d+)\b")
_VALUE = re.compile(r'"[^"]*"|\'[^\']*\'|[^,()\s]+')


def _fail(message: str, column: int) -> InputError:
    return InputError(f"{message} at column {column}")


def parse_procedure(text: str, *, name: str | None = None, cards: int | None = None) -> Procedure:
    """Parse procedure text (see the module docstring) into a :class:`Procedure`."""
    if not isinstance(text, str) or not text.strip():
        raise InputError("the procedure is empty; give steps like 'riffle x3, strip, riffle, cut'")
    types_by_name = step_types()
    cursor = _Cursor(text)
    items: list[ProcedureItem] = []
    while True:
        cursor.skip_space()
        start = cursor.column
        if cursor.peek() == ",":
            raise _fail("empty step (two commas in a row?)", start)
        if cursor.at_end():
            raise _fail("the procedure ends with a comma; a step is missing", start)
        match = _NAME.match(text, cursor.pos)
        if match is None:
            raise _fail(f"expected a step name, found {cursor.peek()!r}", start)
        word = match.group(0)
        keyword = word.lower()
        if keyword not in types_by_name:
            close = difflib.get_close_matches(keyword, list(types_by_name), n=1, cutoff=0.6)
            known = ", ".join(sorted(types_by_name))
            hint = f"; did you mean '{close[0]}'?" if close else f"; steps: {known}"
            raise InputError(f"unknown step '{clip(word, 40)}' at column {start}{hint}")
        cursor.pos = match.end()
        cursor.skip_space()
        params: dict[str, object] = {}
        if cursor.peek() == "(":
            params = _parse_params(cursor, types_by_name[keyword], keyword)
            cursor.skip_space()
        times = 1
        count = _COUNT.match(text, cursor.pos)
        if count is not None:
            digits = count.group(1)
            times = int(digits) if len(digits) <= 18 else 10**18
            steps = limit("step_times")
            if not steps.low <= times <= steps.high:
                raise _fail(
                    f"{keyword}: the repeat count must be from {steps.low:,} to "
                    f"{steps.high:,}, got {clip(digits, 30)}"
                    + (f" ({steps.why})" if times > steps.high else ""),
                    cursor.column,
                )
            cursor.pos = count.end()
            cursor.skip_space()
        elif cursor.peek() and cursor.peek() in "xX×*":
            raise _fail(f"{keyword}: expected a repeat count like x3", cursor.column)
        try:
            step = types_by_name[keyword](**params)
        except InputError as exc:
            raise InputError(f"{exc} (step at column {start})") from None
        items.append(ProcedureItem(step, times, start))
        cursor.skip_space()
        if cursor.pos >= len(text):
            break
        if cursor.peek() != ",":
            raise _fail(f"expected ',' between steps, found {cursor.peek()!r}", cursor.column)
        cursor.pos += 1
    return Procedure(tuple(items), text.strip(), name, cards)


def _parse_params(cursor: _Cursor, cls: type[Step], keyword: str) -> dict[str, object]:
    text = cursor.text
    fields = entry(keyword).field_types()
    cursor.pos += 1  # "("
    params: dict[str, object] = {}
    while True:
        cursor.skip_space()
        if cursor.peek() == ")":
            cursor.pos += 1
            return params
        column = cursor.column
        match = _NAME.match(text, cursor.pos)
        if match is None:
            if not cursor.peek():
                raise _fail(f"{keyword}: missing ')'", column)
            raise _fail(f"{keyword}: expected a parameter name, found {cursor.peek()!r}", column)
        key = match.group(0).lower().replace("-", "_")
        if key not in fields:
            allowed = ", ".join(fields) if fields else "none"
            raise _fail(
                f"{keyword}: unknown parameter '{clip(match.group(0), 40)}' "
                f"(parameters: {allowed})",
                column,
            )
        cursor.pos = match.end()
        cursor.skip_space()
        if cursor.peek() != "=":
            raise _fail(f"{keyword}: expected '=' after {key}", cursor.column)
        cursor.pos += 1
        cursor.skip_space()
        value_column = cursor.column
        value = _VALUE.match(text, cursor.pos)
        if value is None:
            raise _fail(f"{keyword}: missing value for {key}", value_column)
        cursor.pos = value.end()
        if key in params:
            raise _fail(f"{keyword}: parameter {key} given twice", column)
        params[key] = _convert(value.group(0), fields[key], keyword, key, value_column)
        cursor.skip_space()
        if cursor.peek() == ",":
            cursor.pos += 1
        elif cursor.peek() != ")":
            raise _fail(
                f"{keyword}: expected ',' or ')' after {key}={clip(value.group(0), 40)}",
                cursor.column,
            )


def _convert(raw: str, annotation: object, keyword: str, key: str, column: int) -> object:
    """Convert parameter text to the field's type (int, float, str, bool, or X | None)."""
    options = typing.get_args(annotation) if isinstance(annotation, types.UnionType) else ()
    if typing.get_origin(annotation) is typing.Union:
        options = typing.get_args(annotation)
    candidates = [t for t in options if t is not type(None)] if options else [annotation]
    if raw.lower() in ("none", "null", "default") and type(None) in options:
        return None
    if raw[:1] in "\"'" and raw[-1:] == raw[:1]:
        raw = raw[1:-1]
    for kind in candidates:
        if kind is bool:
            if raw.lower() in ("true", "yes", "on", "1"):
                return True
            if raw.lower() in ("false", "no", "off", "0"):
                return False
        elif kind is int:
            if re.fullmatch(r"[+-]?\d+", raw):
                if len(raw.lstrip("+-")) > 30:  # no parameter is that large; int() would be slow
                    raise _fail(
                        f"{keyword}: {key} must be a reasonable integer, got a number of "
                        f"{len(raw.lstrip('+-')):,} digits",
                        column,
                    )
                return int(raw)
        elif kind is float:
            try:
                number = float(raw)
            except ValueError:
                pass
            else:
                if not math.isfinite(number):
                    raise _fail(f"{keyword}: {key} must be a finite number, got '{raw}'", column)
                return number
        elif kind is str:
            return raw
    wanted = " or ".join(getattr(k, "__name__", str(k)) for k in candidates)
    raise _fail(f"{keyword}: {key} must be {_article(wanted)}, got '{clip(raw, 40)}'", column)


def _article(kind: str) -> str:
    names = {"int": "an integer", "float": "a number", "bool": "true or false", "str": "text"}
    return " or ".join(names.get(part.strip(), part.strip()) for part in kind.split(" or "))


# ---------------------------------------------------------------------------------------
# files and command-line arguments

PROCEDURE_FILE_KEYS = {"name", "cards", "packs", "steps", "description"}


def load_procedure(path: str | Path) -> Procedure:
    """Read a procedure TOML file (keys: name, cards or packs, steps, description)."""
    from shufflecheck.common.tomlfiles import load_toml

    doc = load_toml(path)
    return procedure_from_table(doc, doc.data, table=None)


def procedure_from_table(doc, data: dict, table: str | None, index: int = 0) -> Procedure:
    """Build a procedure from one TOML table (shared with policy files)."""
    if table is None:
        renamed_key(doc, data, table, index)
    for key in data:
        if key not in PROCEDURE_FILE_KEYS and table is None:
            raise doc.error(
                f"unknown key (allowed: {', '.join(sorted(PROCEDURE_FILE_KEYS))})",
                key,
                table,
                index,
            )
    steps = data.get("steps")
    if steps is None:
        raise doc.error(
            'missing: give steps = "riffle x3, strip, riffle, cut"', "steps", table, index
        )
    if isinstance(steps, list):
        if not all(isinstance(s, str) for s in steps):
            raise doc.error("must be a string or a list of strings", "steps", table, index)
        text = ", ".join(steps)
    elif isinstance(steps, str):
        text = steps
    else:
        raise doc.error("must be a string or a list of strings", "steps", table, index)
    cards = deck_size(doc, data, table, index)
    name = data.get("name")
    if name is not None and not isinstance(name, str):
        raise doc.error("must be text", "name", table, index)
    try:
        return parse_procedure(text, name=name, cards=cards)
    except InputError as exc:
        raise doc.error(f"{exc}", "steps", table, index) from None


#: keys renamed for one vocabulary (docs/options.md): old key -> (new key, what it means)
RENAMED_KEYS = {"decks": ("packs", "packs in a shoe of distinct cards")}


def renamed_key(doc, data: dict, table: str | None, index: int = 0, renamed=None) -> None:
    """Refuse a key given under its old name, naming the new one (file, line and key)."""
    for old, (new, meaning) in (RENAMED_KEYS if renamed is None else renamed).items():
        if old in data:
            raise doc.error(f"'{old}' is now '{new}' ({meaning})", old, table, index)


def deck_size(doc, data: dict, table: str | None, index: int = 0) -> int | None:
    """``cards`` (an integer >= 2) or ``packs`` (a shoe of ``packs x 52`` distinct cards),
    not both."""
    renamed_key(doc, data, table, index)
    cards = data.get("cards")
    packs = data.get("packs")
    if cards is not None and packs is not None:
        raise doc.error("give cards or packs, not both", "packs", table, index)
    if cards is not None:
        try:
            return limit("cards").check(cards, name="the number of cards")
        except InputError as exc:
            raise doc.error(str(exc), "cards", table, index) from None
    if packs is not None:
        if isinstance(packs, bool) or not isinstance(packs, int) or not 1 <= packs <= 16:
            raise doc.error(
                f"must be an integer from 1 to 16, got {packs!r}", "packs", table, index
            )
        return packs * PACK
    return None


def procedure_from_argument(argument: str) -> Procedure:
    """A command-line PROCEDURE: a path to a ``.toml`` file, or procedure text."""
    path = Path(argument)
    if argument.lower().endswith(".toml"):
        if not path.exists():
            raise InputError(f"{argument}: no such procedure file")
        return load_procedure(path)
    return parse_procedure(argument)


def simulate_play(
    procedure: Procedure,
    cards: int,
    decks: int,
    *,
    rng: np.random.Generator | int | None = None,
    reference: str = "previous",
    repeats: int = 1,
    change: tuple[int, Procedure] | None = None,
) -> np.ndarray:
    """Deck orders as a table would record them: ``decks + 1`` rows, the first being the
    starting (reference) order ``0..n-1``.

    ``reference="previous"``: every deck is the procedure applied to the deck before it (the
    pickup order is the previous recorded deck; audit with ``--reference previous``).
    ``reference="first"``: every deck is the procedure applied to the first row (audit with
    ``--reference first``). The relative permutations are iid either way.
    ``change=(k, other)``: from the ``k``-th simulated deck on (1-based), ``other`` replaces
    the procedure (a fault that starts part-way through a log).
    :func:`simulated_chunks` gives the same rows a block at a time.
    """
    out = np.empty((decks + 1, cards), dtype=deck_dtype(cards))
    out[0] = np.arange(cards)
    for row, relative in _relative_chunks(procedure, cards, decks, rng, reference, repeats, change):
        target = out[row : row + len(relative)]
        if reference == "first":
            target[...] = relative
        else:  # deck_t[i] = deck_{t-1}[relative_t[i]]: a running composition
            running_composition(relative, out=target, initial=out[row - 1])
    return out


def simulated_chunks(
    procedure: Procedure,
    cards: int,
    decks: int,
    *,
    rng: np.random.Generator | int | None = None,
    reference: str = "previous",
    repeats: int = 1,
    change: tuple[int, Procedure] | None = None,
) -> Iterator[np.ndarray]:
    """The rows of :func:`simulate_play` (same arguments, same rows) in consecutive blocks:
    first the starting order alone, then up to ``CHUNK_DECKS`` decks at a time, so a log of
    millions of decks is written without holding it (each block is a new array)."""
    chunks = _relative_chunks(procedure, cards, decks, rng, reference, repeats, change)
    return _composed_chunks(chunks, cards, reference)


def relative_chunks(
    procedure: Procedure,
    cards: int,
    decks: int,
    *,
    rng: np.random.Generator | int | None = None,
    reference: str = "previous",
    repeats: int = 1,
    change: tuple[int, Procedure] | None = None,
) -> Iterator[np.ndarray]:
    """The relative permutations behind :func:`simulated_chunks` (same arguments, same
    random stream), up to ``CHUNK_DECKS`` decks at a time: with ``reference="previous"``
    deck ``t`` is deck ``t - 1`` composed with its row (:func:`running_composition`), with
    ``reference="first"`` the rows are the decks. Arguments are checked before the first
    draw."""
    chunks = _relative_chunks(procedure, cards, decks, rng, reference, repeats, change)
    return (relative for _, relative in chunks)


def _composed_chunks(
    chunks: Iterator[tuple[int, np.ndarray]], cards: int, reference: str
) -> Iterator[np.ndarray]:
    previous = np.arange(cards, dtype=deck_dtype(cards))
    yield previous[None, :].copy()
    for _, relative in chunks:
        if reference == "first":
            yield relative
            continue
        block = running_composition(relative, initial=previous)
        previous = block[-1]
        yield block


def _relative_chunks(
    procedure: Procedure,
    cards: int,
    decks: int,
    rng: np.random.Generator | int | None,
    reference: str,
    repeats: int,
    change: tuple[int, Procedure] | None,
) -> Iterator[tuple[int, np.ndarray]]:
    """(first row, relative permutations) chunk by chunk, drawn as :meth:`Procedure.sample`
    draws them (the same random stream); arguments checked before the first draw."""
    if reference not in SIMULATION_REFERENCES:
        raise InputError(f"reference must be previous or first, got {reference!r}")
    limit("simulate_decks").check(decks)
    limit("repeats").check(repeats)
    procedure.check_cards(cards)
    room = memory_room()
    most = "" if room is None else f" (at most about {room // (cards * PLAY_BYTES):,} fit)"
    check_memory(
        (decks + 1) * cards * PLAY_BYTES,
        f"{decks:,} simulated decks of {cards} cards",
        argument="decks",
        advice=f"use a smaller {{decks}}{most}, or simulate in several runs",
    )
    generator = np.random.default_rng(rng)
    procedure.check_cards(cards)
    segments = [(procedure, decks)]
    if change is not None:
        start, other = change
        if not 1 <= start <= decks:
            raise InputError(f"the change must start at a deck from 1 to {decks}, got {start}")
        other.check_cards(cards)
        segments = [(procedure, start - 1), (other, decks - start + 1)]
    return _draw_chunks(segments, cards, generator, repeats)


def _draw_chunks(
    segments: list[tuple[Procedure, int]],
    cards: int,
    generator: np.random.Generator,
    repeats: int,
) -> Iterator[tuple[int, np.ndarray]]:
    row = 1
    for step, count in segments:
        for lo in range(0, count, CHUNK_DECKS):
            size = min(CHUNK_DECKS, count - lo)
            yield row, step.apply(identity_decks(size, cards), generator, repeats)
            row += size


def running_composition(
    relative: np.ndarray, out: np.ndarray | None = None, initial: np.ndarray | None = None
) -> np.ndarray:
    """``C_t = C_0 o relative_1 o ... o relative_t`` as arrays: ``C_t[i] = C_{t-1}[relative_t[i]]``,
    with ``C_0 = initial`` (default: the identity).

    Composition is associative, so the rows are cut into about ``sqrt(D)`` blocks of
    ``w`` rows: the prefixes inside every block are built for all blocks at once (one
    vectorized gather per position in a block, laid out position by position so every
    gather reads and writes contiguous memory), then each block's prefixes are moved onto
    the composition of the blocks before it (one short sequential pass over the blocks and
    one gather per position, written straight into ``out``). Exact: the same permutations
    as composing one deck at a time.
    """
    if out is None:
        out = np.empty_like(relative)
    if relative.shape[0]:
        _compose_into(relative, None, out, initial)
    return out


def composed_lookup(
    relative: np.ndarray, table: np.ndarray, out: np.ndarray, initial: np.ndarray | None = None
) -> np.ndarray:
    """``out[t] = table[C_t]`` for the running composition ``C_t`` of
    :func:`running_composition`, looked up in its last gather (no array of the labels
    ``C_t`` is made: ``out`` may be a strided view, e.g. the cells of a text matrix).

    Returns ``C_D``, the labels of the last row (``initial`` when there are no rows), to
    continue the composition in the next block.
    """
    cards = relative.shape[1]
    first = np.arange(cards, dtype=relative.dtype) if initial is None else np.asarray(initial)
    if relative.shape[0] == 0:
        return first.copy()
    return _compose_into(relative, table, out, first)


def _compose_into(
    relative: np.ndarray, table: np.ndarray | None, out: np.ndarray, initial: np.ndarray | None
) -> np.ndarray:
    """The composition of :func:`running_composition` written into ``out`` (through
    ``table`` when given); returns the last row's labels."""
    count, cards = relative.shape
    width = max(1, math.isqrt(count))
    blocks = -(-count // width)
    whole = count // width  # blocks without padding
    prefix = np.empty((width, blocks, cards), dtype=relative.dtype)  # [position, block]
    by_block = prefix.transpose(1, 0, 2)
    by_block[:whole] = relative[: whole * width].reshape(whole, width, cards)
    if whole < blocks:  # the last block, padded with identity rows
        rest = relative[whole * width :]
        by_block[whole, : len(rest)] = rest
        by_block[whole, len(rest) :] = np.arange(cards, dtype=relative.dtype)
    offsets = (np.arange(blocks, dtype=np.intp) * cards)[:, None]  # block starts, flattened
    index = np.empty((blocks, cards), dtype=np.intp)
    # indices are in range by construction, so "clip" only skips the checks and buffering
    for j in range(1, width):
        # prefix[j, b, i] = prefix[j - 1, b, relative[b, j, i]], as one flat gather
        np.add(prefix[j], offsets, out=index)
        np.take(prefix[j - 1], index, out=prefix[j], mode="clip")
    start = np.empty((blocks, cards), dtype=relative.dtype)  # composition before each block
    start[0] = np.arange(cards, dtype=relative.dtype) if initial is None else initial
    for b in range(1, blocks):
        start[b] = start[b - 1][prefix[-1, b - 1]]
    looked = start if table is None else table[start]
    flat = looked.ravel()
    # a view of out (never a copy, which would drop the writes): out may be strided
    rows = out[: whole * width].reshape(whole, width, cards, copy=False).transpose(1, 0, 2)
    for j in range(width):  # out[b, j, i] = start[b, prefix[j, b, i]]
        np.add(prefix[j], offsets, out=index)
        np.take(flat, index[:whole], out=rows[j], mode="clip")
    tail = count - whole * width
    if tail:
        out[whole * width :] = looked[whole][prefix[:tail, whole]]
        return start[whole][prefix[tail - 1, whole]]
    return start[-1][prefix[-1, -1]]
