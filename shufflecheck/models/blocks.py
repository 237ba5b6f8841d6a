"""A repeated procedure cut into exactly analysed blocks, with each block's exact figures.

The steps of ``r`` runs of a procedure are grouped into maximal runs that have one exact
law together:

* consecutive ideal riffles, of any packet counts (``riffle``, ``riffle(hands=a)``, and
  ``hand-riffle`` with its defaults, which is the same step): one ``a``-shuffle with ``a``
  the product of the packet counts ([1], Lemma 1);
* consecutive shelf passes, of any shelf counts: ``m_1, ..., m_k`` shelves act as one pass
  through ``2^(k-1) m_1 ... m_k`` shelves (see :mod:`shufflecheck.models.shelf`; checked
  by brute force for two passes with different shelf counts);
* otherwise consecutive equal steps (``cut x3``, ``strip``).

A group whose law is known exactly is a *block* (:class:`Block`): its exact total
variation, separation and KL come from the step model, and so do its chi-square distance
``n! sum (P - 1/n!)^2`` and largest likelihood ratio ``n! max P``, which the block
inequalities of :mod:`shufflecheck.core.block_bounds` need. Fixed rearrangements (pile
deals, weaves) are never blocks; at either end of the whole sequence they change no
distance, so one block between them is exact for the whole procedure.

References
----------
.. [1] D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl.
       Probab. 2 (1992) 294-313.
.. [2] P. Diaconis, J. Fulman and S. Holmes, "Analysis of casino shelf shuffling
       machines", Ann. Appl. Probab. 23 (2013) 1692-1720.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from functools import cache

from shufflecheck.common.numbers import gap_float
from shufflecheck.core.block_bounds import BlockFigures
from shufflecheck.core.distances import DistanceRow
from shufflecheck.models.base import Step
from shufflecheck.models.hand_riffle import HandRiffle
from shufflecheck.models.procedures import Procedure
from shufflecheck.models.riffle import MAX_EXACT_STEPS, Riffle
from shufflecheck.models.shelf import Shelf

__all__ = ["Block", "ProcedureBlocks", "ideal_packets", "procedure_blocks"]


def ideal_packets(step: Step) -> int | None:
    """Packets of the a-shuffle a step is (2 for the ideal riffle), or None if it is none."""
    if isinstance(step, Riffle):
        return step.hands
    if isinstance(step, HandRiffle) and step == HandRiffle():
        return 2
    return None


@dataclass(frozen=True)
class Block:
    """One exactly analysed block: where it sits (0-based index of its first step among
    the expanded steps), how many steps it holds, its label and its exact figures."""

    label: str
    start: int
    steps: int
    distances: DistanceRow
    chi_square: float | None
    max_ratio: float | None
    packets: int | None = None  # for a block of ideal riffles: a of the a-shuffle

    def figures(self, number: int) -> BlockFigures:
        """The figures the block inequalities use, labelled ``label [block number]``."""
        d = self.distances
        return BlockFigures(
            f"{self.label} [block {number}]",
            float(d.total_variation),
            float(d.separation),
            d.kl_bits,
            self.chi_square,
            self.max_ratio,
        )


@dataclass(frozen=True)
class ProcedureBlocks:
    """The groups of ``repeats`` runs of a procedure and the blocks among them.

    ``whole`` holds exact distances of the whole repeated procedure when it is one block
    between fixed rearrangements (or fixed rearrangements only); ``unanalysed`` counts the
    random groups with no exact law; ``packets`` is the product of the packet counts of
    every ideal riffle (the a of the a-shuffle they would make if nothing stood between).
    """

    repeats: int
    blocks: tuple[Block, ...]
    whole: DistanceRow | None
    unanalysed: tuple[str, ...]
    packets: int
    riffle_groups: int


@dataclass(frozen=True)
class _Group:
    steps: tuple[tuple[Step, int], ...]  # (step, times) runs
    start: int
    kind: str  # "riffle" (ideal riffles), "shelf" (shelf passes) or "run" (one run)

    @property
    def count(self) -> int:
        return sum(t for _, t in self.steps)

    @property
    def deterministic(self) -> bool:
        return all(step.deterministic for step, _ in self.steps)


def _step_kind(step: Step) -> str:
    if ideal_packets(step) is not None:
        return "riffle"
    if isinstance(step, Shelf):
        return "shelf"
    return "run"


def _groups(procedure: Procedure, repeats: int) -> list[_Group]:
    # the kind of each distinct step is found once (a long repetition repeats few steps)
    kinds: dict[int, str] = {}
    runs: list[list[tuple[Step, int]]] = []
    starts: list[int] = []
    group_kinds: list[str] = []
    position = 0
    for step, times in procedure.runs(repeats):
        kind = kinds.get(id(step))
        if kind is None:
            kind = kinds[id(step)] = _step_kind(step)
        if runs and kind != "run" and group_kinds[-1] == kind:
            runs[-1].append((step, times))
        else:
            runs.append([(step, times)])
            starts.append(position)
            group_kinds.append(kind)
        position += times
    return [
        _Group(tuple(r), start, k) for r, start, k in zip(runs, starts, group_kinds, strict=True)
    ]


@cache
def _riffle_block(cards: int, packets: int) -> tuple[DistanceRow, float, float] | None:
    from shufflecheck.models import riffle

    if packets.bit_length() > MAX_EXACT_STEPS or cards > riffle.MAX_EXACT_CARDS:
        return None
    row = riffle.exact_distances(cards, 1, hands=packets)
    chi2, ratio = riffle.chi_square(cards, 1, hands=packets)
    return row, chi2, ratio


@cache
def _shelf_block(cards: int, shelves: int) -> tuple[DistanceRow, float, float] | None:
    from shufflecheck.models import shelf

    if cards > shelf.MAX_EXACT_CARDS:
        return None
    row = shelf.exact_distances(cards, 1, shelves=shelves)
    chi2, ratio = shelf.chi_square(cards, 1, shelves=shelves)
    return row, chi2, ratio


@cache
def _run_block(step: Step, cards: int, times: int) -> tuple[DistanceRow, float, float] | None:
    row = step.exact_distances(cards, times)
    if row is None:
        return None
    l2 = step.exact_chi_square(cards, times)
    chi2, ratio = l2 if l2 is not None else (None, None)
    return row, chi2, ratio


def _label(group: _Group) -> tuple[str, int | None]:
    if group.kind == "riffle":
        packets = math.prod(ideal_packets(step) ** times for step, times in group.steps)
        total = group.count
        if packets == 2**total:
            label = f"riffle x{total}"
        elif packets.bit_length() <= 64:
            label = f"{packets}-shuffle"
        else:  # as powers: the number itself can have more digits than Python will print
            powers = " x ".join(f"{ideal_packets(s)}^{t}" for s, t in group.steps)
            label = f"({powers})-shuffle"
        label = "riffle" if label == "riffle x1" else label
        return label, packets
    if group.kind == "shelf" and len(group.steps) > 1:
        text = ", ".join(
            (f"{s.describe()} x{t}" if t > 1 else s.describe()) for s, t in group.steps
        )
        return text, None
    ((step, times),) = group.steps
    return (f"{step.describe()} x{times}" if times > 1 else step.describe()), None


def _exact(group: _Group, cards: int) -> tuple[DistanceRow, float | None, float | None] | None:
    if group.kind == "riffle":
        _, packets = _label(group)
        assert packets is not None
        return _riffle_block(cards, packets)
    if group.kind == "shelf":
        passes = group.count
        product = math.prod(step.shelves**times for step, times in group.steps)
        equivalent = 2 ** (passes - 1) * product
        found = _shelf_block(cards, equivalent)
        if found is None:
            return None
        row, chi2, ratio = found
        note = f"valley law, {equivalent} equivalent shelves"
        merged = DistanceRow(
            passes, row.total_variation, row.separation, row.kl_bits, "exact", note
        )
        return merged, chi2, ratio
    ((step, times),) = group.steps
    return _run_block(step, cards, times)


def procedure_blocks(procedure: Procedure, repeats: int, cards: int) -> ProcedureBlocks:
    """Cut ``repeats`` runs of ``procedure`` on ``cards`` cards into groups and blocks."""
    groups = _groups(procedure, repeats)
    blocks: list[Block] = []
    unanalysed: list[str] = []
    random_groups: list[tuple[_Group, Block | None]] = []
    packets = 1
    riffle_groups = 0
    for group in groups:
        if group.kind == "riffle":
            riffle_groups += 1
            packets *= math.prod(ideal_packets(s) ** t for s, t in group.steps)
        if group.deterministic:
            continue
        label, group_packets = _label(group)
        found = _exact(group, cards)
        if found is None:
            unanalysed.append(label)
            random_groups.append((group, None))
            continue
        row, chi2, ratio = found
        block = Block(label, group.start, group.count, row, chi2, ratio, group_packets)
        blocks.append(block)
        random_groups.append((group, block))
    whole: DistanceRow | None = None
    if not random_groups:
        fact = math.factorial(cards)
        whole = DistanceRow(
            repeats,
            1.0 - 1.0 / fact if cards < 171 else 1.0,
            1.0,
            math.log2(fact),
            "exact",
            "fixed rearrangement",
            total_variation_below_one=gap_float(1, fact),
            separation_below_one=0.0,
        )
    elif len(random_groups) == 1 and random_groups[0][1] is not None:
        row = random_groups[0][1].distances
        whole = dataclasses.replace(row, steps=repeats, kind="exact")
    return ProcedureBlocks(repeats, tuple(blocks), whole, tuple(unanalysed), packets, riffle_groups)
