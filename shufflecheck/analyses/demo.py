"""The end-to-end demo on an invented card room: policy minimums, procedure assessment,
log audits and audit planning, from the files in ``shufflecheck/demo_data`` (also reachable
as ``data/demo`` in a source checkout).

The Lantern Quay Card Room is invented. Its logs were made with ``shufflecheck simulate``
(commands and seeds in ``demo_data/README.md``); a test regenerates them and checks that
they are byte for byte the bundled files.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

from shufflecheck.analyses.policy import PolicyResult, evaluate_policy, load_policy, policy_work
from shufflecheck.models.procedures import parse_procedure

__all__ = [
    "DEMO_POWER_RIFFLES",
    "DemoResult",
    "ShoeGame",
    "demo_folder",
    "demo_work",
    "run_demo",
    "run_shoe_game",
]

#: the shoe game of the demo (Harbour Twenty-One at Table 9): its files and settings
SHOE_DECK = "shoe(packs=6)"
SHOE_FEATURE = "blackjack"
SHOE_MACHINE_LOG = "logs/table9-machine.csv"
SHOE_HAND_LOG = "logs/table9-hand.csv"
SHOE_HAND_PROCEDURE = "procedures/shoe-hand.toml"
SHOE_TRACKED_SHOES = 10_000

#: riffle counts of the audit-planning curves in the demo
DEMO_POWER_RIFFLES = (4, 5, 6, 7, 8)


def demo_folder() -> Path:
    """The folder holding the demo's policy, procedures and logs."""
    return Path(str(resources.files("shufflecheck") / "demo_data"))


@dataclass(frozen=True)
class ShoeGame:
    """The demo's shoe game: the machine log audited, the hand procedure tracked."""

    machine: Any  # LogAudit of the batch machine's shoes
    tracked: Any  # TrackingExposure of the hand procedure (simulated)
    recorded: Any  # TrackingExposure seen in the hand-shuffled shoes (recorded)
    seed: int


@dataclass(frozen=True)
class DemoResult:
    policy: PolicyResult
    power: list  # [(riffles, PowerPlan)]
    power_seed: int
    shoes: ShoeGame | None = None


def demo_work() -> int:
    """Progress units of :func:`run_demo` (the policy part; planning is quick)."""
    return policy_work(load_policy(demo_folder() / "policy.toml"))


def run_shoe_game(seed: int, confidence: float = 0.95) -> ShoeGame:
    """Harbour Twenty-One (invented): audit the batch machine's shoes for the blackjack
    values, and follow a 52-card slug through the dealers' hand grab shuffle (simulated and
    in the recorded hand-shuffled shoes), with intervals at ``confidence``."""
    from shufflecheck.analyses.audit_log import audit_log
    from shufflecheck.analyses.tracking import recorded_exposure, tracking_exposure
    from shufflecheck.models.procedures import load_procedure
    from shufflecheck.records.shoes import load_shoe

    folder = demo_folder()
    shoe = load_shoe(SHOE_DECK)
    assert shoe is not None
    machine = audit_log(
        folder / SHOE_MACHINE_LOG,
        deck=shoe,
        feature=SHOE_FEATURE,
        time="recorded_at",
        confidence=confidence,
    )
    hand = load_procedure(folder / SHOE_HAND_PROCEDURE)
    tracked = tracking_exposure(
        hand, shoe.size, shoes=SHOE_TRACKED_SHOES, rng=seed, confidence=confidence
    )
    recorded = recorded_exposure(folder / SHOE_HAND_LOG, shoe, rng=seed, confidence=confidence)
    return ShoeGame(machine, tracked, recorded, seed)


def run_demo(*, progress: Callable[[int], None] | None = None) -> DemoResult:
    """Evaluate the demo policy (with its log audits), plan audits for ideal riffles, and
    run the shoe game."""
    from shufflecheck.analyses.plan import plan_power

    policy = load_policy(demo_folder() / "policy.toml")
    result = evaluate_policy(policy, progress=progress)
    seed = policy.seed
    plans = plan_power(
        parse_procedure("riffle"),
        52,
        list(DEMO_POWER_RIFFLES),
        seed=seed,
        confidence=policy.confidence,  # the policy's level for every interval
    )
    return DemoResult(result, plans, seed, run_shoe_game(seed, policy.confidence))
