"""The common shape of a shuffle step: a frozen dataclass that acts on many decks at once.

A :class:`Step` is one move of a dealing procedure (a riffle, a strip, a cut, ...). Its
fields are its parameters, with documented defaults; ``__post_init__`` validates them and
raises :class:`~shufflecheck.common.errors.InputError` naming the parameter. The procedure parser
builds steps from text such as ``strip(packets=5)`` through the model registry
(:mod:`shufflecheck.models.registry`), one entry per step class.

``apply(decks, rng)`` performs one physical step on every row of ``decks`` (see
DEVELOPERS.md for the deck-array convention) and returns a new array; ``apply_repeated``
performs ``times`` steps in a row (models override it when ``k`` steps have a faster direct
form, like ``k`` riffles being one ``2^k``-shuffle).

Steps that have an exact analysis implement :meth:`Step.exact_distances`: the exact
distances to uniform after ``times`` consecutive applications starting from a fixed deck.
"""

from __future__ import annotations

import dataclasses
from abc import ABC, abstractmethod
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from shufflecheck.common.errors import InputError
from shufflecheck.common.limits import limit

if TYPE_CHECKING:
    from shufflecheck.core.distances import DistanceRow

__all__ = ["Step", "sample_step"]


@dataclasses.dataclass(frozen=True)
class Step(ABC):
    """One move of a dealing procedure, acting on a batch of decks."""

    #: the word that names the step in procedure text
    keyword: ClassVar[str] = ""
    #: one line for help texts and reports
    summary: ClassVar[str] = ""
    #: True when the step rearranges every deck the same way (mixes nothing by itself)
    deterministic: ClassVar[bool] = False

    @abstractmethod
    def apply(self, decks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        """One step on every row of ``decks``; returns a new array of the same shape."""

    def apply_repeated(self, decks: np.ndarray, times: int, rng: np.random.Generator) -> np.ndarray:
        """``times`` consecutive steps on every row."""
        for _ in range(times):
            decks = self.apply(decks, rng)
        return decks

    def check_cards(self, cards: int) -> None:
        """Raise :class:`InputError` when the step cannot act on a deck of ``cards`` cards
        (the range of simulated decks, :data:`~shufflecheck.common.limits.LIMITS`
        ``"cards"``, and whatever the step itself needs)."""
        limit("cards").check(cards, prefix=f"{self.keyword}: ")

    def exact_distances(self, cards: int, times: int) -> DistanceRow | None:
        """Exact distances to uniform after ``times`` consecutive steps, or None when this
        step has no exact analysis for ``cards`` cards."""
        return None

    def exact_chi_square(self, cards: int, times: int) -> tuple[float, float] | None:
        """``(chi-square distance, largest likelihood ratio)`` to uniform after ``times``
        consecutive steps (``n! sum (P - 1/n!)^2`` and ``n! max P``, exact up to the final
        rounding, ``inf`` beyond the double range), or None when this step has no exact
        law for ``cards`` cards. The block inequalities of an assessment use them."""
        return None

    def parameters(self) -> dict[str, object]:
        """The step's parameters as a plain dict (for reports and JSON)."""
        return {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}

    def describe(self) -> str:
        """Procedure text for this step, e.g. ``strip(packets=5)`` (defaults omitted)."""
        changed = []
        for f in dataclasses.fields(self):
            value = getattr(self, f.name)
            default = f.default if f.default is not dataclasses.MISSING else None
            if value != default:
                changed.append(f"{f.name}={value}")
        return f"{self.keyword}({', '.join(changed)})" if changed else self.keyword


def sample_step(
    step: Step, decks: int, cards: int, steps: int, rng: np.random.Generator | int | None
) -> np.ndarray:
    """``decks`` reference-order decks after ``steps`` applications of ``step``.

    The common body of the ``sample`` functions of the step modules: validates the sizes,
    normalises ``rng`` once and works in chunks of
    :data:`~shufflecheck.models.permute.CHUNK_DECKS` decks.
    """
    from shufflecheck.models.permute import CHUNK_DECKS, identity_decks

    for name, value, least in (("decks", decks, 0), ("cards", cards, 2), ("steps", steps, 0)):
        if isinstance(value, bool) or not isinstance(value, int) or value < least:
            raise InputError(f"{step.keyword}: {name} must be an integer >= {least}, got {value!r}")
    step.check_cards(cards)
    generator = np.random.default_rng(rng)
    out = identity_decks(decks, cards)
    for start in range(0, decks, CHUNK_DECKS):
        stop = min(decks, start + CHUNK_DECKS)
        out[start:stop] = step.apply_repeated(out[start:stop], steps, generator)
    return out
