"""Step-model speed (issue 4): every step on 200,000 decks of 52 cards (target well under
0.1 s each), and ``riffle x3, strip, riffle, cut`` for R = 1..10 on 200,000 decks (the whole
assessment must fit in 30 s; here the sampling alone and the full ``assess``)."""

from __future__ import annotations

import numpy as np
import pytest

from shufflecheck.models import cut, hand_riffle, overhand, pile, riffle, shelf
from shufflecheck.models.permute import identity_decks

DECKS = 200_000
CARDS = 52

STEPS = [
    riffle.Riffle(),
    hand_riffle.HandRiffle(),
    hand_riffle.HandRiffle(spread=2.0, clump=1.5),
    hand_riffle.Weave(),
    overhand.Strip(),
    overhand.Overhand(),
    cut.Cut(),
    cut.Cut(spread=4.0),
    pile.Pile(),
    shelf.Shelf(),
    shelf.Shelf(stack="random"),
]


@pytest.fixture(scope="module")
def shuffled():
    rng = np.random.default_rng(2026)
    return rng.permuted(identity_decks(DECKS, CARDS), axis=1)


@pytest.mark.parametrize("step", STEPS, ids=[s.describe() for s in STEPS])
def test_step_speed(benchmark, figures, shuffled, step):
    rng = np.random.default_rng(7)
    out = benchmark.pedantic(step.apply, args=(shuffled, rng), rounds=5, iterations=1)
    assert (np.sort(out[:100], axis=1) == np.arange(CARDS)).all()
    figures(
        f"{step.describe()} on {DECKS:,} decks of {CARDS} (mean of 5)",
        benchmark.stats.stats.mean,
        0.1,
    )


def test_shelf_three_passes(benchmark, figures, shuffled):
    # three passes drawn as one pass through 2^2 * 10^3 shelves (same law)
    step = shelf.Shelf()
    rng = np.random.default_rng(8)
    benchmark.pedantic(step.apply_repeated, args=(shuffled, 3, rng), rounds=3, iterations=1)
    figures(f"shelf x3 on {DECKS:,} decks of {CARDS} (mean of 3)", benchmark.stats.stats.mean, 0.3)


def _procedure_sampling(repeats: int) -> np.ndarray:
    from shufflecheck.models.procedures import parse_procedure

    procedure = parse_procedure("riffle x3, strip, riffle, cut")
    rng = np.random.default_rng(9)
    decks = identity_decks(DECKS, CARDS)
    for _ in range(repeats):  # r = 1..R, each repetition continuing from the last
        decks = procedure.apply(decks, rng)
    return decks


def test_procedure_sampling(benchmark, figures):
    out = benchmark.pedantic(_procedure_sampling, args=(10,), rounds=2, iterations=1)
    assert out.shape == (DECKS, CARDS)
    figures(
        f"riffle x3, strip, riffle, cut for R = 1..10, {DECKS:,} decks: sampling only",
        benchmark.stats.stats.mean,
        30.0,
    )


def test_full_assessment(benchmark, figures):
    from shufflecheck.analyses.assess import assess
    from shufflecheck.models.procedures import parse_procedure

    procedure = parse_procedure("riffle x3, strip, riffle, cut")
    result = benchmark.pedantic(
        assess,
        args=(procedure, CARDS),
        kwargs={"repeats": 10, "decks": DECKS, "rng": 1},
        rounds=1,
        iterations=1,
    )
    assert len(result.rows) == 10
    figures(
        f"assess riffle x3, strip, riffle, cut, R = 1..10, {DECKS:,} decks (whole)",
        benchmark.stats.stats.mean,
        30.0,
    )


def test_full_assessment_memory(benchmark, figures):
    from ._memory import peak_rss_mb

    _, after = benchmark.pedantic(
        peak_rss_mb,
        args=(
            "from shufflecheck.analyses.assess import assess\n"
            "from shufflecheck.models.procedures import parse_procedure",
            f"assess(parse_procedure('riffle x3, strip, riffle, cut'), {CARDS}, repeats=10, "
            f"decks={DECKS}, rng=1)",
        ),
        rounds=1,
        iterations=1,
    )
    figures(f"assess R = 1..10 on {DECKS:,} decks: peak RSS", after, 2048, "MB")
