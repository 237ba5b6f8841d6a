"""Tests on recorded deck orders: statistics, exact nulls, the battery, power planning.

* :mod:`~shufflecheck.stats.statistics` — per-deck statistics, vectorized over decks;
* :mod:`~shufflecheck.stats.nulls` — exact laws of those statistics under a uniform deck
  and exact tails of their sums over any number of decks;
* :mod:`~shufflecheck.stats.guessing` — the guessing game with feedback (strategies and
  the exact law);
* :mod:`~shufflecheck.stats.positions` — the position-by-card chi-square / G test;
* :mod:`~shufflecheck.stats.catalogue` — one record per statistic (what, how computed,
  exact law, alternative, effect wording), read by the battery, power and assessment;
* :mod:`~shufflecheck.stats.summary` — mergeable summaries of recorded decks;
* :mod:`~shufflecheck.stats.battery` — the tests on a summary, Holm
  (:mod:`~shufflecheck.stats.holm`) and effects in plain units
  (:mod:`~shufflecheck.stats.effects`);
* :mod:`~shufflecheck.stats.timeline` — "since when" (change-point estimate);
* :mod:`~shufflecheck.stats.power` — how many recorded decks each test needs.

Results are statistical evidence about a sample of decks, not a certification; approval of
shuffling devices belongs to the local gaming regulator and accredited test laboratories.
"""

from __future__ import annotations

from shufflecheck.stats.catalogue import (
    DeckContext,
    Statistic,
    battery_statistics,
    catalogue,
    deck_values,
)
from shufflecheck.stats.guessing import (
    DEFAULT_STRATEGIES,
    STRATEGIES,
    guess_scores,
    guess_scores_many,
    guessing_null,
)
from shufflecheck.stats.holm import holm
from shufflecheck.stats.nulls import Law, sum_p_value, sum_tail_logs
from shufflecheck.stats.power import PowerPlan, PowerRow, plan_decks, plan_shoes
from shufflecheck.stats.results import AuditResult, BatteryResult, Effect, SinceWhen, TestResult
from shufflecheck.stats.summary import BatterySummary

__all__ = [
    "DEFAULT_STRATEGIES",
    "STRATEGIES",
    "AuditResult",
    "BatteryResult",
    "BatterySummary",
    "DeckContext",
    "Effect",
    "Law",
    "PowerPlan",
    "PowerRow",
    "SinceWhen",
    "Statistic",
    "TestResult",
    "battery_statistics",
    "catalogue",
    "deck_values",
    "guess_scores",
    "guess_scores_many",
    "guessing_null",
    "holm",
    "plan_decks",
    "plan_shoes",
    "sum_p_value",
    "sum_tail_logs",
]
