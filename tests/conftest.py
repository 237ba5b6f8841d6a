"""Shared test configuration.

Tests marked ``slow`` (exhaustive checks, large simulations) are skipped unless
``--run-slow`` is given or ``SHUFFLECHECK_SLOW=1`` is set; CI runs them when time allows.

Property tests (hypothesis) draw the same examples on every run by default (profile
``fixed``: derandomized, no example database), so the default run, and CI, pass or fail
the same way each time. ``SHUFFLECHECK_HYPOTHESIS=explore`` draws fresh random examples
(1,000 per test where a test sets no count of its own) to hunt for new counterexamples; a
failure found that way is fixed, and kept as an explicit example where useful.
"""

from __future__ import annotations

import os

import pytest
from hypothesis import settings

settings.register_profile("fixed", derandomize=True, database=None)
settings.register_profile("explore", max_examples=1000, database=None)
settings.load_profile(os.environ.get("SHUFFLECHECK_HYPOTHESIS", "fixed"))


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    """``shufflecheck demo`` run once per test session (its report folder and the CLI
    result), shared by the demo, report-page and terminal-width tests."""
    from tests._cli import run

    out = tmp_path_factory.mktemp("demo") / "first"
    result = run("demo", "--report", out)
    assert result.exit_code == 0, result.output
    return out, result


def pytest_addoption(parser: pytest.Parser) -> None:
    parser.addoption("--run-slow", action="store_true", default=False, help="run tests marked slow")


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    if config.getoption("--run-slow") or os.environ.get("SHUFFLECHECK_SLOW") == "1":
        return
    skip = pytest.mark.skip(reason="slow: run with --run-slow or SHUFFLECHECK_SLOW=1")
    for item in items:
        if "slow" in item.keywords:
            item.add_marker(skip)
