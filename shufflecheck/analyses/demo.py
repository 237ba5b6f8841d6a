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

from shufflecheck.analyses.policy import PolicyResult, evaluate_policy, load_policy, policy_work
from shufflecheck.models.procedures import parse_procedure

__all__ = ["DEMO_POWER_RIFFLES", "DemoResult", "demo_folder", "demo_work", "run_demo"]

#: riffle counts of the audit-planning curves in the demo
DEMO_POWER_RIFFLES = (4, 5, 6, 7, 8)


def demo_folder() -> Path:
    """The folder holding the demo's policy, procedures and logs."""
    return Path(str(resources.files("shufflecheck") / "demo_data"))


@dataclass(frozen=True)
class DemoResult:
    policy: PolicyResult
    power: list  # [(riffles, PowerPlan)]
    power_seed: int


def demo_work() -> int:
    """Progress units of :func:`run_demo` (the policy part; planning is quick)."""
    return policy_work(load_policy(demo_folder() / "policy.toml"))


def run_demo(*, progress: Callable[[int], None] | None = None) -> DemoResult:
    """Evaluate the demo policy (with its log audits) and plan audits for ideal riffles."""
    from shufflecheck.analyses.plan import plan_power

    policy = load_policy(demo_folder() / "policy.toml")
    result = evaluate_policy(policy, progress=progress)
    seed = policy.seed
    plans = plan_power(parse_procedure("riffle"), 52, list(DEMO_POWER_RIFFLES), seed=seed)
    return DemoResult(result, plans, seed)
