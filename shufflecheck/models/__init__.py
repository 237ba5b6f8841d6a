"""Shuffle models: one module per family.

Each model module offers, where theory allows, the exact law after ``k`` steps summarised
for distances to uniform, its spectrum, rigorous bounds, and always a vectorized sampler
``sample(decks, cards, steps, *, rng)`` returning an integer array with one row per deck.

Deck arrays follow one convention everywhere: ``row[i]`` is the label of the card at
position ``i`` (0 = top), labels being positions in the reference order (0-based here; the
design brief's 1..n shifted by one).
"""

from __future__ import annotations

import math
from collections.abc import Callable

from shufflecheck.common.checks import check_cards, check_integer
from shufflecheck.common.errors import InputError
from shufflecheck.core.characters import Eigenvalue
from shufflecheck.core.distances import MixingCurve

__all__ = [
    "EXACT_MODELS",
    "STEP_MODULES",
    "default_max_steps",
    "distance_curve",
    "load_step_types",
    "spectrum",
]

#: modules that register procedure steps (imported on first use of the procedure grammar)
STEP_MODULES = (
    "riffle",
    "hand_riffle",
    "overhand",
    "cut",
    "pile",
    "shelf",
    "transposition",
    "top_to_random",
)


def load_step_types() -> dict[str, type]:
    """Import every step module and return the registry keyword -> step class."""
    import importlib

    from shufflecheck.models.base import STEP_TYPES

    for name in STEP_MODULES:
        importlib.import_module(f"shufflecheck.models.{name}")
    return dict(STEP_TYPES)


#: models with an exact distance curve (``shufflecheck mix``)
EXACT_MODELS = ("riffle", "transposition", "top-to-random", "random-to-top", "shelf")


def default_max_steps(model: str, cards: int) -> int:
    """Steps shown by default: comfortably past each model's cutoff.

    riffle ``1.5 log2 n + 5`` (cutoff ``1.5 log2 n``), transposition ``n ln n`` (cutoff
    ``n ln n / 2``), top-to-random ``1.5 n ln n`` (cutoff ``n ln n``), shelf machine 6 passes.
    """
    if model == "riffle":
        return math.ceil(1.5 * math.log2(cards)) + 5
    if model == "shelf":
        return 6
    if model == "transposition":
        return math.ceil(cards * math.log(cards))
    return math.ceil(1.5 * cards * math.log(cards))


def distance_curve(
    model: str,
    cards: int,
    max_steps: int | None = None,
    *,
    hands: int = 2,
    hold: float | None = None,
    shelves: int = 10,
    method: str = "chain",
    progress: Callable[[int], None] | None = None,
) -> MixingCurve:
    """Exact distances to uniform for ``k = 1..max_steps`` steps of a classical model."""
    check_cards(cards)
    if model not in EXACT_MODELS:
        raise InputError(f"unknown model {model!r}; choose {', '.join(EXACT_MODELS)}")
    steps = default_max_steps(model, cards) if max_steps is None else max_steps
    check_integer(steps, "max_steps", low=1)
    if model == "riffle":
        from shufflecheck.models import riffle

        return riffle.distance_curve(cards, steps, hands=hands)
    if model == "shelf":
        from shufflecheck.models import shelf

        return shelf.distance_curve(cards, steps, shelves=shelves)
    if model == "transposition":
        from shufflecheck.models import transposition

        return transposition.distance_curve(
            cards, steps, hold=hold, method=method, progress=progress
        )
    from shufflecheck.models import top_to_random

    return top_to_random.distance_curve(cards, steps, inverse=(model == "random-to-top"))


def spectrum(
    model: str, cards: int, *, hold: float | None = None, hands: int = 2
) -> list[Eigenvalue]:
    """Distinct eigenvalues (largest first) of one step of ``model`` on ``cards`` cards."""
    check_cards(cards)
    if model == "transposition":
        from shufflecheck.models.transposition import spectrum as transposition_spectrum

        return transposition_spectrum(cards, hold=hold)
    if model == "riffle":
        from shufflecheck.models.riffle import spectrum as riffle_spectrum

        return riffle_spectrum(cards, hands=hands)
    if model in ("top-to-random", "random-to-top"):
        from shufflecheck.models.top_to_random import spectrum as ttr_spectrum

        return ttr_spectrum(cards)
    raise InputError(
        f"unknown model {model!r}; choose transposition, riffle, top-to-random or random-to-top"
    )
