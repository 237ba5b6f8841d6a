"""Every documented limit (common/limits.py, docs/limits.md) is enforced where the table
says, with the documented message, before any work; and the docs table is the generated one."""

from __future__ import annotations

from pathlib import Path

import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.common.limits import LIMITS, markdown_table
from tests._cli import one_line_error, run

DOCS = Path(__file__).resolve().parents[1] / "docs" / "limits.md"


def test_docs_table_is_the_generated_one():
    assert markdown_table() in DOCS.read_text(encoding="utf-8")


def _policy(tmp_path: Path, body: str) -> Path:
    path = tmp_path / "policy.toml"
    path.write_text(f'[policy]\ntarget = 0.1\n{body}\n[[procedure]]\nsteps = "riffle"\n')
    return path


def _library(key: str, value: int, tmp_path: Path) -> None:
    """Give ``value`` to the place that takes the parameter ``key``."""
    from shufflecheck.analyses.assess import assess
    from shufflecheck.analyses.log_parts import deck_for
    from shufflecheck.analyses.policy import load_policy
    from shufflecheck.models import distance_curve
    from shufflecheck.models.procedures import parse_procedure, simulate_play
    from shufflecheck.records.cards import integer_deck
    from shufflecheck.stats.power import plan_decks

    riffle = parse_procedure("riffle")
    calls = {
        "cards": lambda: riffle.check_cards(value),
        "audit_cards": lambda: deck_for(None, value, "int", "log.csv"),
        "deck_cards": lambda: integer_deck(value),
        "assess_decks": lambda: assess(riffle, 52, repeats=1, decks=value),
        "policy_decks": lambda: load_policy(_policy(tmp_path, f"simulate = {value}")),
        "simulate_decks": lambda: simulate_play(riffle, 52, value),
        "power_simulate": lambda: plan_decks(lambda k, rng: None, 52, simulate=value),
        "repeats": lambda: assess(riffle, 52, repeats=value, decks=100),
        "step_times": lambda: parse_procedure(f"riffle x{value}"),
        "shelves": lambda: parse_procedure(f"shelf(shelves={value})"),
        "hands": lambda: parse_procedure(f"riffle(hands={value})"),
        "max_steps": lambda: distance_curve("riffle", 52, value),
    }
    calls[key]()


LIBRARY = [
    "cards",
    "audit_cards",
    "assess_decks",
    "policy_decks",
    "simulate_decks",
    "power_simulate",
    "repeats",
    "step_times",
    "shelves",
    "hands",
    "max_steps",
]


@pytest.mark.parametrize("key", LIBRARY)
def test_above_the_range_is_refused_with_the_reason(key, tmp_path):
    limit = LIMITS[key]
    with pytest.raises(InputError) as info:
        _library(key, limit.high + 1, tmp_path)
    message = str(info.value)
    assert f"{limit.low:,} to {limit.high:,}, got {limit.high + 1}" in message
    assert limit.why in message


@pytest.mark.parametrize("key", [k for k in LIBRARY if LIMITS[k].low > 0])
def test_below_the_range_is_refused(key, tmp_path):
    limit = LIMITS[key]
    with pytest.raises(InputError, match=f"{limit.low:,} to {limit.high:,}, got {limit.low - 1}"):
        _library(key, limit.low - 1, tmp_path)


def test_deck_definitions():
    with pytest.raises(InputError, match="a deck has 1 to 32767 cards"):
        _library("deck_cards", LIMITS["deck_cards"].high + 1, Path("."))


@pytest.mark.parametrize(
    ("args", "expected"),
    [
        (("simulate", "riffle", "--out", "x.csv", "--every", 0), "--every must be an integer"),
        (("characters", 10_001), "n must be an integer from 0 to 10,000, got 10001"),
        (("power", "riffle", "-r", "1-51"), "--repeat must lie within 1..50"),
    ],
)
def test_options(tmp_path, monkeypatch, args, expected):
    monkeypatch.chdir(tmp_path)
    assert expected in one_line_error(run(*args))
    assert list(tmp_path.iterdir()) == []
