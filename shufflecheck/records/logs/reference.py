"""Reference orders and permutations relative to them, across chunks and groups."""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd

from shufflecheck.common.errors import MARKED, InputError, clip, marked_arguments
from shufflecheck.records.cards import DeckDefinition, Labels, load_deck
from shufflecheck.records.logs._common import LogChunk
from shufflecheck.records.orders import parse_order, relative_to
from shufflecheck.records.shoes import ShoeDefinition, check_shoe_row, load_shoe

# --------------------------------------------------------------------------------------
# reference orders and relative permutations


@dataclass(frozen=True)
class Reference:
    """What each deck is compared with: the order before the procedure.

    ``kind`` is ``previous`` (the default: each deck against the deck before it in the log,
    the pickup order; with grouping, the previous deck of the same group), ``first`` (the
    first deck of the log, or of each group, is the reference and is not tested) or
    ``order`` (one fixed order, ``order``, for every deck; all decks are tested),
    ``column`` (each deck's own starting order, read from the column ``column``: labs that
    record what their rig saw) or ``pairs`` (rows come in pairs, the deck before the pass
    and the deck after it, in each group; the second row of each pair is tested).
    """

    kind: Literal["previous", "first", "order", "column", "pairs"] = "previous"
    order: np.ndarray | None = None
    source: str = "previous"
    column: str | None = None

    #: The keywords :meth:`parse` reads (besides a file or an order written out); the
    #: ``audit --reference`` help has one line for each (a test compares).
    KEYWORDS = ("previous", "first", "deck", "column:NAME", "pairs")

    @classmethod
    def parse(
        cls,
        spec: str | os.PathLike[str] | None,
        deck: DeckDefinition | ShoeDefinition | str | os.PathLike[str] | None = None,
        *,
        labels: Labels = "codes",
    ) -> Reference:
        """``previous`` (default), ``first``, ``deck`` (the definition's own order, e.g. a new
        pack), a file holding one order, or an order written out (codes separated by
        spaces). Integer labels follow ``labels`` like the log. For a shoe the order is a
        word of its card codes, checked by counting copies."""
        shoe = load_shoe(deck) if deck is not None else None
        if shoe is not None:
            return cls._parse_shoe(spec, shoe)
        definition = load_deck(deck)
        text = "previous" if spec is None else os.fspath(spec)
        keyword = text.strip().lower()
        if keyword in ("previous", "first", "pairs"):
            source = "pairs (before, after)" if keyword == "pairs" else keyword
            return cls(keyword, None, source)  # type: ignore[arg-type]
        if keyword.startswith("column:"):
            name = text.strip()[len("column:") :].strip()
            if not name:
                raise InputError(
                    "reference 'column:' needs the name of the column holding each deck's "
                    "starting order, e.g. column:before",
                    argument="reference",
                )
            return cls("column", None, f"column {name}", name)
        if keyword == "deck":
            order = np.arange(definition.size, dtype=np.int16)
            return cls("order", order, f"deck order of {definition.name}")
        path = Path(text)
        try:
            is_file = path.is_file()
        except (OSError, ValueError):  # an order too long to be a file name, a NUL byte
            is_file = False
        if is_file:
            try:
                content = path.read_text(encoding="utf-8-sig")
            except (OSError, UnicodeDecodeError) as exc:
                raise InputError(f"cannot read reference order {text}: {exc}") from None
            lines = [ln.split("#", 1)[0] for ln in content.splitlines()]
            tokens = " ".join(lines).split()
            order = parse_order(tokens, definition, labels=labels, where=text)
            return cls("order", order, f"order in {text}")
        if any(ch.isspace() for ch in text.strip()):
            order = parse_order(text, definition, labels=labels, where="reference order")
            return cls("order", order, "given order")
        raise InputError(
            f"reference {clip(text, 60)!r} is not previous, first, deck, column:NAME, pairs, an "
            f"existing file or an order of {definition.size} card codes separated by spaces",
            argument="reference",
        )

    @classmethod
    def _parse_shoe(cls, spec: str | os.PathLike[str] | None, shoe: ShoeDefinition) -> Reference:
        text = "previous" if spec is None else os.fspath(spec)
        keyword = text.strip().lower()
        if keyword in ("previous", "first", "pairs"):
            source = "pairs (before, after)" if keyword == "pairs" else keyword
            return cls(keyword, None, source)  # type: ignore[arg-type]
        if keyword.startswith("column:"):
            raise InputError(
                "reference 'column:' is for decks of distinct cards; a shoe is tested against "
                "the previous shoe, the first, pairs of rows or a fixed order",
                argument="reference",
            )
        if keyword == "deck":
            return cls("order", shoe.physical_kinds(), f"reference order of {shoe.name}")
        path = Path(text)
        try:
            is_file = path.is_file()
        except OSError:
            is_file = False
        if is_file:
            try:
                content = path.read_text(encoding="utf-8-sig")
            except (OSError, UnicodeDecodeError) as exc:
                raise InputError(f"cannot read reference order {text}: {exc}") from None
            tokens = " ".join(ln.split("#", 1)[0] for ln in content.splitlines()).split()
            where = text
        elif any(ch.isspace() for ch in text.strip()):
            tokens, where = text.split(), "reference order"
        else:
            raise InputError(
                f"reference {text!r} is not previous, first, deck, pairs, an existing file or an "
                f"order of {shoe.size} card codes separated by spaces",
                argument="reference",
            )
        kinds, _, problem = check_shoe_row(tokens, shoe)
        if kinds is None:
            raise InputError(
                f"{where}: {problem}", argument=marked_arguments(str(problem), MARKED) or None
            )
        return cls(
            "order", kinds, "given order" if where == "reference order" else f"order in {text}"
        )

    def stream(self, by: str | None = None, *, words: bool = False) -> ReferenceStream:
        """A stateful converter of chunks to relative permutations (see ReferenceStream);
        ``words=True`` for shoes: the decks and their reference decks, no permutation."""
        return ReferenceStream(self, by, words=words)


@dataclass(frozen=True)
class RelativeChunk:
    """Tested decks of one chunk as permutations relative to their references.

    ``relative[k, i]`` is the position in the reference deck of the card at position ``i``
    of deck ``k`` (identity = unchanged). ``rows`` are the decks' row numbers,
    ``reference_rows`` the row of each reference deck (``0`` for a fixed order), and
    ``columns`` their kept columns. For shoes (words with repeated cards, no permutation
    to take) ``relative`` holds the decks themselves and ``reference`` the reference deck
    of every row.
    """

    relative: np.ndarray
    rows: np.ndarray
    reference_rows: np.ndarray
    columns: pd.DataFrame
    reference: np.ndarray | None = None

    def __len__(self) -> int:
        return int(self.relative.shape[0])


class ReferenceStream:
    """Turns successive :class:`LogChunk` objects into :class:`RelativeChunk` objects.

    ``previous``: each deck against the previous deck of its group (of the log when not
    grouped); the last deck of every group is carried to the next chunk, so chunk
    boundaries change nothing. A row set aside breaks the chain: the next deck of its
    group (of every group, if the row could not be read far enough to know its group) has
    no known reference and is not tested. ``first``: the first deck of each group is the
    reference of the group's later decks; if a row that may belong to the group was set
    aside before it, :class:`InputError` (the reference is unknown). A fixed order: every
    deck is tested against it.

    Counters after use: ``tested``, ``reference_only`` (decks that only served as a
    reference) and ``after_set_aside`` (decks without a reference because the row before
    them was set aside).
    """

    def __init__(self, reference: Reference, by: str | None = None, *, words: bool = False) -> None:
        self.reference = reference
        self.by = by
        self.words = words
        self.tested = 0
        self.reference_only = 0
        self.after_set_aside = 0
        self._ids: dict[Any, int] = {}
        self._carry: dict[int, tuple[np.ndarray, int]] = {}  # group -> (deck, row)
        self._broken: set[int] = set()  # groups whose last row was set aside
        self._first_unknown: int | None = None  # first: earliest unreadable row set aside
        self._first_gap: dict[int, int] = {}  # first: group -> earliest row set aside
        #: ``previous``: the first deck of each group this stream met, which served only as
        #: a reference: (group value, deck, row, an unreadable row came before it). A later
        #: merge with what came before (:meth:`tails`) can still test it.
        self.heads: list[tuple[Any, np.ndarray, int, bool]] = []
        #: whether an unreadable row (its group unknown) was set aside
        self.saw_unreadable = False
        self._earliest_unreadable: int | None = None

    def tails(self) -> dict[Any, np.ndarray | None]:
        """``previous``: the deck each group's next deck would be compared with, by group
        value (None without grouping); ``None`` as the deck where the chain is broken."""
        values = {i: v for v, i in self._ids.items()}
        out: dict[Any, np.ndarray | None] = {
            values.get(g): deck for g, (deck, _) in self._carry.items()
        }
        out.update({values.get(g): None for g in self._broken})
        return out

    def _value(self, group: int) -> Any:
        for value, index in self._ids.items():
            if index == group:
                return value
        return None

    def _group_ids(self, values: pd.Series) -> np.ndarray:
        try:
            codes, uniques = pd.factorize(values.astype(object))
        except TypeError:
            raise InputError(f"column {self.by!r} holds values that cannot group rows") from None
        keys = [*list(uniques), None]  # code -1 (missing value) -> the group None
        table = np.array([self._ids.setdefault(k, len(self._ids)) for k in keys], dtype=np.int64)
        return table[codes]

    def _groups(self, columns: pd.DataFrame, rows: int) -> np.ndarray:
        if self.by is None or rows == 0:
            return np.zeros(rows, dtype=np.int64)
        if self.by not in columns.columns:
            shown = ", ".join(map(str, columns.columns)) or "none"
            raise InputError(f"no column {self.by!r} to group by (columns: {shown})")
        return self._group_ids(columns[self.by])

    def relative(self, chunk: LogChunk) -> RelativeChunk:
        """Relative permutations of the tested decks of ``chunk``, in row order."""
        decks, rows = chunk.decks, chunk.rows
        n = decks.shape[1]
        if self.reference.kind == "column":
            if chunk.before is None:
                raise InputError(
                    f"reference {self.reference.source!r}: the log was read without its "
                    "starting orders (read it with before_column)"
                )
            self.tested += len(rows)
            zero = np.zeros(len(rows), dtype=np.int64)
            return RelativeChunk(relative_to(decks, chunk.before), rows, zero, chunk.columns)
        if self.reference.kind == "order":
            order = self.reference.order
            assert order is not None
            if order.shape[0] != n:
                raise InputError(f"reference order has {order.shape[0]} cards, decks have {n}")
            self.tested += len(rows)
            zero = np.zeros(len(rows), dtype=np.int64)
            if self.words:
                same = np.broadcast_to(order, decks.shape)
                return RelativeChunk(decks, rows, zero, chunk.columns, same)
            return RelativeChunk(relative_to(decks, order), rows, zero, chunk.columns)
        groups = self._groups(chunk.columns, len(rows))
        aside = chunk.set_aside
        readable = aside.readable.astype(bool)
        if self.by is not None and self.by not in aside.columns.columns:
            readable = np.zeros_like(readable)  # their group cannot be known
        known = aside.rows[readable]
        known_groups = self._groups(
            aside.columns.loc[readable].reset_index(drop=True), int(readable.sum())
        )
        unknown = np.sort(aside.rows[~readable])
        if unknown.size:
            self.saw_unreadable = True
        if self.reference.kind == "first":
            picked, refs, ref_rows = self._first(decks, rows, groups, known, known_groups, unknown)
        elif self.reference.kind == "pairs":
            picked, refs, ref_rows = self._pairs(decks, rows, groups, known, known_groups, unknown)
        else:
            picked, refs, ref_rows = self._previous(
                decks, rows, groups, known, known_groups, unknown
            )
        self.tested += len(picked)
        if self.words:
            return RelativeChunk(
                decks[picked],
                rows[picked],
                ref_rows,
                chunk.columns.iloc[picked].reset_index(drop=True),
                refs if len(picked) else np.zeros((0, n), np.int16),
            )
        return RelativeChunk(
            relative_to(decks[picked], refs) if len(picked) else np.zeros((0, n), np.int16),
            rows[picked],
            ref_rows,
            chunk.columns.iloc[picked].reset_index(drop=True),
        )

    def _previous(
        self,
        decks: np.ndarray,
        rows: np.ndarray,
        groups: np.ndarray,
        known: np.ndarray,
        known_groups: np.ndarray,
        unknown: np.ndarray,
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        m = decks.shape[0]
        # events: decks (index k >= 0) and rows set aside of a known group (index -1)
        ev_row = np.concatenate([rows, known])
        ev_group = np.concatenate([groups, known_groups])
        ev_index = np.concatenate([np.arange(m), np.full(len(known), -1)])
        order = np.lexsort((ev_row, ev_group))
        ev_row, ev_group, ev_index = ev_row[order], ev_group[order], ev_index[order]
        is_deck = ev_index >= 0
        e = len(order)
        same = np.zeros(e, dtype=bool)
        same[1:] = ev_group[1:] == ev_group[:-1]
        ref = np.full(e, -1, dtype=np.int64)  # index into decks, or m + k into carried decks
        ref_row = np.zeros(e, dtype=np.int64)
        after_gap = np.zeros(e, dtype=bool)
        prev_deck = np.zeros(e, dtype=bool)
        prev_deck[1:] = same[1:] & is_deck[:-1]
        ref[1:] = np.where(prev_deck[1:], ev_index[:-1], -1)
        ref_row[1:] = np.where(prev_deck[1:], ev_row[:-1], 0)
        after_gap[1:] = same[1:] & ~is_deck[:-1]
        carried: list[np.ndarray] = []
        for k in np.flatnonzero(~same).tolist():
            g = int(ev_group[k])
            if g in self._carry:
                deck, row = self._carry[g]
                ref[k], ref_row[k] = m + len(carried), row
                carried.append(deck)
            elif g in self._broken:
                after_gap[k] = True
            elif is_deck[k]:
                row = int(ev_row[k])
                before = self._earliest_unreadable is not None or bool(
                    unknown.size and unknown[0] < row
                )
                self.heads.append((self._value(g), decks[ev_index[k]].copy(), row, before))
        has_ref = is_deck & (ref >= 0)
        if unknown.size:
            # a row of unknown group between a deck and its reference breaks the chain
            between = np.searchsorted(unknown, ev_row) - np.searchsorted(unknown, ref_row, "right")
            cut = has_ref & (between > 0)
            after_gap |= cut
            has_ref &= ~cut
        # carry the last event of every group to the next chunk
        last = np.ones(e, dtype=bool)
        last[:-1] = ev_group[1:] != ev_group[:-1]
        for k in np.flatnonzero(last).tolist():
            g = int(ev_group[k])
            if is_deck[k]:
                self._carry[g] = (decks[ev_index[k]].copy(), int(ev_row[k]))
                self._broken.discard(g)
            else:
                self._carry.pop(g, None)
                self._broken.add(g)
        if unknown.size:
            if self._earliest_unreadable is None:
                self._earliest_unreadable = int(unknown[0])
            cutoff = int(unknown[-1])
            for g in [g for g, (_, row) in self._carry.items() if row < cutoff]:
                del self._carry[g]
                self._broken.add(g)
        broken = is_deck & ~has_ref & after_gap
        self.after_set_aside += int(broken.sum())
        self.reference_only += int((is_deck & ~has_ref & ~after_gap).sum())
        tested = np.flatnonzero(has_ref)
        back = np.argsort(ev_index[tested], kind="stable")
        tested = tested[back]
        pool = np.concatenate([decks, np.stack(carried)]) if carried else decks
        return ev_index[tested], pool[ref[tested]], ref_row[tested]

    def _first(
        self,
        decks: np.ndarray,
        rows: np.ndarray,
        groups: np.ndarray,
        known: np.ndarray,
        known_groups: np.ndarray,
        unknown: np.ndarray,
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        m, n = decks.shape
        for row, g in zip(known.tolist(), known_groups.tolist(), strict=True):
            self._first_gap.setdefault(int(g), int(row))
        if unknown.size and self._first_unknown is None:
            self._first_unknown = int(unknown[0])
        present, first_index = np.unique(groups, return_index=True)
        tested = np.ones(m, dtype=bool)
        for g, k in zip(present.tolist(), first_index.tolist(), strict=True):
            if g in self._carry:
                continue
            row = int(rows[k])
            gaps = [r for r in (self._first_gap.get(g), self._first_unknown) if r is not None]
            if gaps and min(gaps) < row:
                scope = "the log" if self.by is None else f"its group in column {self.by!r}"
                raise InputError(
                    f"reference 'first': row {min(gaps)} was set aside before the first deck "
                    f"of {scope} (row {row}), so the reference is unknown; give an explicit "
                    "reference order instead"
                )
            self._carry[g] = (decks[k].copy(), row)
            tested[k] = False
        self.reference_only += int(m - tested.sum())
        picked = np.flatnonzero(tested)
        if not picked.size:
            return picked, np.zeros((0, n), np.int16), np.zeros(0, np.int64)
        refs = np.stack([self._carry[int(g)][0] for g in groups[picked]])
        ref_rows = np.array([self._carry[int(g)][1] for g in groups[picked]], dtype=np.int64)
        return picked, refs, ref_rows

    def _pairs(
        self,
        decks: np.ndarray,
        rows: np.ndarray,
        groups: np.ndarray,
        known: np.ndarray,
        known_groups: np.ndarray,
        unknown: np.ndarray,
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Rows alternate before/after in each group; a set-aside row keeps its place in
        the alternation (its partner is not tested). An unreadable row of unknown group
        makes the alternation of every group unknown: an error, never a guess."""
        m, n = decks.shape
        if unknown.size:
            raise InputError(
                f"reference 'pairs': row {int(unknown[0])} could not be read, so which rows "
                "pair up after it is unknown; repair the row (or give each deck's starting "
                "order in a column)"
            )
        ev_row = np.concatenate([rows, known])
        ev_group = np.concatenate([groups, known_groups])
        ev_index = np.concatenate([np.arange(m), np.full(len(known), -1)])
        order = np.lexsort((ev_row, ev_group))
        ev_row, ev_group, ev_index = ev_row[order], ev_group[order], ev_index[order]
        picked: list[int] = []
        refs: list[np.ndarray] = []
        ref_rows: list[int] = []
        for k in range(len(order)):
            g = int(ev_group[k])
            pending = self._carry.pop(g, None)  # (deck, row) of an unpaired before-row
            broken = g in self._broken
            index = int(ev_index[k])
            if pending is None and not broken:  # a before-row
                if index >= 0:
                    self._carry[g] = (decks[index].copy(), int(ev_row[k]))
                    self.reference_only += 1
                else:
                    self._broken.add(g)
                continue
            self._broken.discard(g)  # an after-row closes the pair
            if index < 0:
                continue
            if pending is None:
                self.after_set_aside += 1
                continue
            picked.append(index)
            refs.append(pending[0])
            ref_rows.append(pending[1])
        chosen = np.asarray(picked, dtype=np.int64)
        back = np.argsort(chosen, kind="stable")
        if not picked:
            return chosen, np.zeros((0, n), np.int16), np.zeros(0, np.int64)
        return chosen[back], np.stack(refs)[back], np.asarray(ref_rows, dtype=np.int64)[back]
