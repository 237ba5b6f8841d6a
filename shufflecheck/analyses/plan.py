"""Audit planning for procedures: how many recorded decks each test needs, per repetition count.

A thin layer over :func:`shufflecheck.stats.power.plan_decks`: it turns a dealing procedure
into the sampler the planner needs (decks relative to their reference, after ``r`` runs of
the procedure) and uses the built-in deck's suits and colours for 52-card decks.
"""

from __future__ import annotations

import dataclasses
from typing import Any

from shufflecheck.models.procedures import Procedure
from shufflecheck.stats.power import PowerPlan

__all__ = ["plan_power", "plan_shoe_power", "planning_json"]


def plan_power(
    proc: Procedure,
    cards: int,
    counts: list[int],
    *,
    alpha: float = 0.01,
    power: float = 0.9,
    simulate: int = 4000,
    seed: int = 1,
    confidence: float = 0.95,
) -> list[tuple[int, PowerPlan]]:
    """``[(r, PowerPlan)]`` for each repetition count ``r`` (seeded per count);
    ``confidence`` is the level of the intervals of the counts."""
    from shufflecheck.records.cards import load_deck
    from shufflecheck.stats import plan_decks

    proc.check_cards(cards)
    deck = load_deck() if cards == 52 else None
    plans = []
    for r in counts:

        def sample(count: int, rng, _r: int = r):
            return proc.sample(count, cards, _r, rng=rng)

        plan = plan_decks(
            sample,
            cards,
            alpha=alpha,
            power=power,
            simulate=simulate,
            suits=deck.suit_codes() if deck is not None else None,
            colours=deck.colour_codes() if deck is not None else None,
            rng=seed + r,
            confidence=confidence,
        )
        plans.append((r, plan))
    return plans


def plan_shoe_power(
    proc: Procedure,
    shoe: Any,
    counts: list[int],
    *,
    feature: str = "rank",
    alpha: float = 0.01,
    power: float = 0.9,
    simulate: int = 2000,
    seed: int = 1,
    confidence: float = 0.95,
) -> list[tuple[int, PowerPlan]]:
    """``[(r, PowerPlan)]`` for a shoe (a :class:`~shufflecheck.records.shoes.ShoeDefinition`)
    read through ``feature``: consecutive shoes simulated as a log records them."""
    from shufflecheck.models.procedures import simulate_play
    from shufflecheck.stats import plan_shoes
    from shufflecheck.stats.catalogue import ShoeContext

    proc.check_cards(shoe.size)
    # the battery the audit runs: the guessing game on a stored bracket where one is stored
    context = dataclasses.replace(ShoeContext.of(shoe, feature), guess_tables=True)
    kinds = shoe.physical_kinds()
    plans = []
    for r in counts:

        def sample(count, rng, _r: int = r):
            return kinds[simulate_play(proc, shoe.size, count, rng=rng, repeats=_r)]

        plans.append(
            (
                r,
                plan_shoes(
                    sample,
                    context,
                    alpha=alpha,
                    power=power,
                    simulate=simulate,
                    rng=seed + r,
                    confidence=confidence,
                ),
            )
        )
    return plans


def planning_json(plans: list[tuple[int, PowerPlan]], proc: Procedure, seed: int) -> dict:
    """The ``shufflecheck power --json`` form of :func:`plan_power`'s result."""
    first = plans[0][1]
    return {
        "procedure": proc.describe(),
        "cards": first.cards,
        "alpha": first.alpha,
        "power": first.power,
        "seed": seed,
        "simulated_decks": first.simulated_decks,
        "tests_in_battery": first.tests_in_battery,
        "per_test_level": first.per_test_level,
        "confidence": first.confidence,
        "plans": [
            {
                "repeats": r,
                "rows": [row.as_json(plan.confidence) for row in plan.rows],
            }
            for r, plan in plans
        ],
    }
