"""Shuffle models: one module per family.

Each model module offers, where theory allows, the exact law after ``k`` steps summarised
for distances to uniform, its spectrum, rigorous bounds, and always a vectorized sampler
``sample(decks, cards, steps, *, rng)`` returning an integer array with one row per deck.

Deck arrays follow one convention everywhere: ``row[i]`` is the label of the card at
position ``i`` (0 = top), labels being positions in the reference order (0-based here; the
design brief's 1..n shifted by one).
"""

from __future__ import annotations

from shufflecheck.characters import Eigenvalue
from shufflecheck.errors import InputError

__all__ = ["spectrum"]


def spectrum(
    model: str, cards: int, *, hold: float | None = None, hands: int = 2
) -> list[Eigenvalue]:
    """Distinct eigenvalues (largest first) of one step of ``model`` on ``cards`` cards."""
    if cards < 2:
        raise InputError(f"--cards must be at least 2, got {cards}")
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
