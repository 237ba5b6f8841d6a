"""Shuffle models: one module per family, one registry entry per step.

Each model module offers, where theory allows, the exact law after ``k`` steps summarised
for distances to uniform, its spectrum, rigorous bounds, and always a vectorized sampler
``sample(decks, cards, steps, *, rng)`` returning an integer array with one row per deck.
Each of its steps is registered once in :mod:`shufflecheck.models.registry`; the functions
here dispatch on that registry.

Deck arrays follow one convention everywhere: ``row[i]`` is the label of the card at
position ``i`` (0 = top), labels being positions in the reference order (0-based here; the
design brief's 1..n shifted by one).
"""

from __future__ import annotations

import dataclasses
from typing import Any

from shufflecheck.common.checks import check_cards
from shufflecheck.common.limits import limit
from shufflecheck.core.characters import Eigenvalue
from shufflecheck.core.distances import MixingCurve
from shufflecheck.models.registry import SPECTRUM_UNITS

__all__ = [
    "SPECTRUM_UNITS",
    "default_max_steps",
    "distance_curve",
    "distance_curve_until",
    "spectrum",
    "steps_limit",
]


def default_max_steps(model: str, cards: int) -> int:
    """Steps ``mix`` shows by default: comfortably past the model's cutoff (see its entry)."""
    from shufflecheck.models.registry import entry

    found = entry(model, need="curve")
    assert found.default_steps is not None  # every entry with a curve has one
    return found.default_steps(check_cards(cards))


def steps_limit(model: str) -> int:
    """The most steps the exact curve of ``model`` is offered for (its registry entry's
    ``steps_limit``, else the documented ``max_steps`` limit)."""
    from shufflecheck.models.registry import entry

    found = entry(model, need="curve")
    high = limit("max_steps").high
    return high if found.steps_limit is None else min(found.steps_limit, high)


def distance_curve_until(
    model: str,
    cards: int,
    target: float | None,
    metric: str = "total_variation",
    max_steps: int | None = None,
    **options: Any,
) -> tuple[MixingCurve, int]:
    """:func:`distance_curve` over the default range, extended until ``metric`` meets
    ``target``: ``(curve, default_steps)``.

    Without ``max_steps`` and with a target that the default range (the entry's
    ``default_steps``) does not reach, the range is doubled, up to :func:`steps_limit`,
    until the exact (or rigorous upper-bound) value of ``metric`` is at most ``target`` or
    the limit is reached; ``len(curve.rows) > default_steps`` then says it was extended. A
    ``max_steps`` that is given is kept as it is. ``options`` as for :func:`distance_curve`;
    a ``progress`` callable is called with the steps done over all the computations so far.
    """
    from shufflecheck.core.distances import check_metric, minimum_steps

    check_cards(cards)
    default = default_max_steps(model, cards)
    if max_steps is not None or target is None:
        return distance_curve(model, cards, max_steps, **options), default
    metric = check_metric(metric)
    most = max(default, steps_limit(model))
    steps = default
    report = options.pop("progress", None)
    done_before = 0
    while True:
        if report is not None:
            options["progress"] = lambda done, _before=done_before: report(_before + done)
        curve = distance_curve(model, cards, steps, **options)
        done_before += steps
        first = minimum_steps(curve.rows, metric, target)
        if first is not None and steps > default:  # extended: show up to the answer
            keep = max(default, first)
            return dataclasses.replace(
                curve, rows=curve.rows[:keep], bounds=curve.bounds[:keep]
            ), default
        if first is not None or steps >= most:
            return curve, default
        if all(r.value(metric) is None for r in curve.rows):
            return curve, default  # this method gives no value for the metric
        steps = min(2 * steps, most)


def _options(names: tuple[str, ...], given: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in given.items() if k in names}


def distance_curve(
    model: str, cards: int, max_steps: int | None = None, **options: Any
) -> MixingCurve:
    """Exact distances to uniform for ``k = 1..max_steps`` steps of a registered model.

    ``options`` may hold any of ``hands``, ``shelves``, ``hold``, ``method`` and
    ``progress``; each model takes those its registry entry lists and ignores the others.
    """
    from shufflecheck.models.registry import entry

    check_cards(cards)
    found = entry(model, need="curve")
    assert found.curve is not None and found.default_steps is not None
    # a step count the user gave is checked against the documented range; the model's own
    # checks judge its default (the number of cards decides it)
    steps = found.default_steps(cards) if max_steps is None else limit("max_steps").check(max_steps)
    return found.curve(cards, steps, **_options(found.curve_options, options))


def spectrum(model: str, cards: int, **options: Any) -> list[Eigenvalue]:
    """Distinct eigenvalues (largest first) of one step of ``model`` on ``cards`` cards;
    ``options`` as for :func:`distance_curve` (``hands``, ``hold``, and ``progress``,
    called with the units done out of :data:`SPECTRUM_UNITS`)."""
    from shufflecheck.models.registry import entry

    check_cards(cards)
    found = entry(model, need="spectrum")
    assert found.spectrum is not None
    return found.spectrum(cards, **_options(found.spectrum_options, options))
