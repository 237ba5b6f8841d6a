"""Benchmarks (run with ``pytest tests/benchmarks --benchmark-only``).

Each benchmark records a figure against the issue's target with :func:`record`; the figures
are printed together at the end of the run so they can be compared run to run. Targets are
never asserted in the normal test run (these tests are skipped there).
"""

from __future__ import annotations

import pytest

_FIGURES: list[str] = []


def record(
    what: str, measured: float, target: float | None, unit: str = "s", note: str = ""
) -> None:
    """Note one measured figure beside its target (lower is better); a same-run baseline
    has no target (``target=None``) and says what it is in ``note``."""
    if target is None:
        _FIGURES.append(f"{what}: {measured:.4g} {unit} ({note or 'same-run baseline'})")
        return
    status = "meets target" if measured <= target else "MISSES target"
    _FIGURES.append(f"{what}: {measured:.4g} {unit} (target <= {target:g} {unit}; {status})")


@pytest.fixture
def figures():
    return record


def pytest_terminal_summary(terminalreporter) -> None:
    if _FIGURES:
        terminalreporter.section("shufflecheck benchmark figures")
        for line in _FIGURES:
            terminalreporter.write_line(line)
