"""Monitoring state of one table: every statistic's e-process and change detector, deck by deck.

:class:`Monitor` runs, for every statistic of the battery (the catalogue,
:func:`shufflecheck.stats.catalogue.battery_statistics`):

* a plug-in betting e-process against the statistic's exact law
  (:mod:`shufflecheck.stats.eprocess`), plus the position-by-card bet; the **family
  evidence** is their average, and the family **alarms** the first time it reaches
  ``1/alpha``: on a uniformly random machine the chance of ever alarming is at most
  ``alpha``, however often the evidence is read (Ville's inequality);
* CUSUM e-detectors on fixed tilted alternatives (:mod:`shufflecheck.stats.detector`),
  alarming when any reaches ``log(arl * N)``: the mean number of decks to a false alarm on a
  uniformly random machine is at least ``arl``.

Decks are fed in time order with :meth:`Monitor.update`; the state is plain JSON
(:meth:`Monitor.state`) so a store can keep it between ingests, and feeding the same decks
in any chunking gives the same state (tested). The plan (``alpha``, ``arl``, confidence)
is fixed when monitoring starts: changing a level after seeing data voids its guarantee.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from shufflecheck.common.checks import check_fraction
from shufflecheck.common.errors import InputError
from shufflecheck.stats.catalogue import DeckContext, DeckView, Statistic, battery_statistics
from shufflecheck.stats.detector import (
    ChangeSet,
    change_set,
    cusum,
    detector_grid,
    detector_threshold,
)
from shufflecheck.stats.eprocess import PositionBet, TiltGrid, plugin_log_e, tilt_grid

__all__ = ["POSITION", "DeckTrace", "Monitor", "MonitorPlan"]

#: Name of the position-by-card e-process (the one bet that is not on a per-deck scalar).
POSITION = "position-by-card"
_NO_VALUE = -1


@dataclass(frozen=True)
class MonitorPlan:
    """Levels fixed when monitoring of a table starts.

    ``alpha``: the family's chance of ever alarming on a random machine (default 0.01);
    ``arl``: guaranteed mean number of decks to a false change alarm (default 20,000);
    ``confidence``: level of the change-point set (default 0.95).
    """

    alpha: float = 0.01
    arl: float = 20_000.0
    confidence: float = 0.95

    def __post_init__(self) -> None:
        check_fraction(self.alpha, "alpha")
        check_fraction(self.confidence, "confidence")
        if isinstance(self.arl, bool) or not isinstance(self.arl, (int, float)) or self.arl < 1:
            raise InputError(
                f"arl must be a number of decks >= 1, got {self.arl!r}", argument="arl"
            )

    def as_json(self) -> dict[str, float]:
        return {"alpha": self.alpha, "arl": float(self.arl), "confidence": self.confidence}


@dataclass(frozen=True)
class DeckTrace:
    """Per-deck traces of one update: family ``log E`` and the largest detector ``W``;
    ``values[name]`` the statistics (int, ``-1`` where a deck has none)."""

    family_log_e: np.ndarray
    detector: np.ndarray
    values: dict[str, np.ndarray]


def _sequential(stat: Statistic) -> bool:
    return stat.shape == "consecutive"


class Monitor:
    """E-processes and change detectors of one table (see the module notes)."""

    def __init__(
        self, context: DeckContext, plan: MonitorPlan, state: dict[str, Any] | None = None
    ) -> None:
        self.context = context
        self.plan = plan
        #: statistics with a per-deck (or per consecutive pair) law, in catalogue order
        self.statistics = tuple(
            s
            for s in battery_statistics(context)
            if s.law is not None and s.law(context).low < s.law(context).high
        )
        laws = {s.name: s.law(context) for s in self.statistics}  # type: ignore[misc]
        self.laws = laws
        self.bets: dict[str, TiltGrid] = {
            s.name: tilt_grid(laws[s.name], s.alternative) for s in self.statistics
        }
        self.alternatives: dict[str, TiltGrid] = {
            s.name: detector_grid(laws[s.name], s.alternative) for s in self.statistics
        }
        #: names of the e-processes of the family, in order (the position bet last)
        self.names = (*(s.name for s in self.statistics), POSITION)
        self.detector_count = sum(g.thetas.size for g in self.alternatives.values())
        self.threshold = detector_threshold(plan.arl, self.detector_count)
        self.dtypes = {
            name: np.int16 if law.high <= 32767 else np.int32 for name, law in laws.items()
        }
        fresh = state is None
        st = state or {}
        self.decks = int(st.get("decks", 0))
        plugin = st.get("plugin", {})
        self._count = {n: int(plugin.get(n, {}).get("count", 0)) for n in laws}
        self._total = {n: float(plugin.get(n, {}).get("total", 0.0)) for n in laws}
        self._log_e = {n: float(plugin.get(n, {}).get("log_e", 0.0)) for n in self.names}
        if POSITION in plugin:
            self._log_e[POSITION] = float(plugin[POSITION]["log_e"])
        self._position = PositionBet.from_state(context.cards, st.get("position"))
        det = st.get("detector", {})
        self._w = {
            n: np.asarray(det.get(n, np.zeros(g.thetas.size)), dtype=float)
            for n, g in self.alternatives.items()
        }
        self.max_family_log_e = float(st.get("max_family_log_e", 0.0))
        self.family_alarm: dict[str, Any] | None = st.get("family_alarm")
        self.change_alarm: dict[str, Any] | None = st.get("change_alarm")
        if not fresh and set(plugin) - set(self.names):
            raise InputError("the stored monitoring state does not match this battery")

    # ------------------------------------------------------------------ state

    def state(self) -> dict[str, Any]:
        """The whole state as plain JSON values (enough to continue exactly)."""
        plugin: dict[str, Any] = {
            n: {"count": self._count[n], "total": self._total[n], "log_e": self._log_e[n]}
            for n in self.laws
        }
        plugin[POSITION] = {"log_e": self._log_e[POSITION]}
        return {
            "decks": self.decks,
            "plugin": plugin,
            "position": self._position.state(),
            "detector": {n: w.tolist() for n, w in self._w.items()},
            "max_family_log_e": self.max_family_log_e,
            "family_alarm": self.family_alarm,
            "change_alarm": self.change_alarm,
        }

    @property
    def family_log_e(self) -> float:
        """Current log of the family evidence (the average of the e-values)."""
        logs = np.array([self._log_e[n] for n in self.names])
        top = logs.max()
        return float(top + math.log(np.exp(logs - top).mean()))

    def log_e(self, name: str) -> float:
        """Current log e-value of one statistic (``position-by-card`` included)."""
        return self._log_e[name]

    def detector_level(self) -> tuple[str, int, float]:
        """The alternative with the largest CUSUM now: (statistic, tilt index, ``W``)."""
        best = max(
            ((n, int(np.argmax(w)), float(w.max())) for n, w in self._w.items()),
            key=lambda t: t[2],
        )
        return best

    # ------------------------------------------------------------------ updating

    def values(self, view: DeckView, previous: np.ndarray | None) -> dict[str, np.ndarray]:
        """Every statistic of the monitor on the decks of ``view`` (``previous``: the
        absolute deck before the first one, for consecutive-pair statistics)."""
        out: dict[str, np.ndarray] = {}
        for stat in self.statistics:
            if _sequential(stat):
                ab = view.absolute
                first = (
                    np.array([_NO_VALUE])
                    if previous is None
                    else np.array([np.count_nonzero(ab[0] == previous)])
                )
                pairs = np.count_nonzero(ab[1:] == ab[:-1], axis=1)
                out[stat.name] = np.concatenate([first, pairs]).astype(np.int64)
            else:
                assert stat.values is not None
                out[stat.name] = np.asarray(stat.values(view), dtype=np.int64)
        return out

    def update(
        self, relative: np.ndarray, absolute: np.ndarray, previous: np.ndarray | None
    ) -> DeckTrace:
        """Feed decks in time order; returns their per-deck traces.

        ``relative``/``absolute`` as for the battery (checked decks); ``previous`` is the
        absolute deck just before them (None for the very first deck of a table).
        """
        k = relative.shape[0]
        view = DeckView(relative, absolute, self.context)
        values = self.values(view, previous)
        cumulative = np.empty((k, len(self.names)))
        best_w = np.full(k, -np.inf)
        best_at: list[tuple[float, int, str, int]] = []
        for j, stat in enumerate(self.statistics):
            name = stat.name
            x = values[name]
            has = x >= 0
            steps = np.zeros(k)
            if has.any():
                log_e, self._count[name], self._total[name] = plugin_log_e(
                    self.bets[name], x[has], self._count[name], self._total[name]
                )
                steps[has] = log_e
            cumulative[:, j] = self._log_e[name] + np.cumsum(steps)
            self._log_e[name] = float(cumulative[-1, j])
            alt = self.alternatives[name]
            ratios = alt.log_ratio(np.arange(alt.thetas.size)[:, None], x[None, :])
            if not has.all():
                ratios[:, ~has] = 0.0
            w = cusum(ratios, self._w[name])
            self._w[name] = w[:, -1].copy()
            row_best = w.max(axis=0)
            np.maximum(best_w, row_best, out=best_w)
            crossing = np.flatnonzero(row_best >= self.threshold)
            if crossing.size:
                t = int(crossing[0])
                best_at.append((t, -float(row_best[t]), name, int(np.argmax(w[:, t]))))
        pos_steps = self._position.log_e(relative)
        cumulative[:, -1] = self._log_e[POSITION] + np.cumsum(pos_steps)
        self._log_e[POSITION] = float(cumulative[-1, -1])
        top = cumulative.max(axis=1, keepdims=True)
        family = (top[:, 0] + np.log(np.exp(cumulative - top).mean(axis=1))).astype(float)
        level = math.log(1.0 / self.plan.alpha)
        if self.family_alarm is None:
            over = np.flatnonzero(family >= level)
            if over.size:
                t = int(over[0])
                lead = int(np.argmax(cumulative[t]))
                self.family_alarm = {
                    "deck": self.decks + t + 1,
                    "log_e": float(family[t]),
                    "leading": self.names[lead],
                }
        if self.change_alarm is None and best_at:
            t, _, name, index = min(best_at)
            alt = self.alternatives[name]
            self.change_alarm = {
                "deck": self.decks + t + 1,
                "statistic": name,
                "tilt_index": index,
                "tilt_units": float(alt.thetas[index] * alt.sd0),
            }
        self.max_family_log_e = max(self.max_family_log_e, float(family.max()))
        self.decks += k
        return DeckTrace(family, best_w, values)

    # ------------------------------------------------------------------ change point

    def change_set(self, values: np.ndarray, upto: int | None = None) -> ChangeSet | None:
        """Confidence set for the start of the change that raised the change alarm, from the
        alarming statistic's values on decks ``1..upto`` (default: all of ``values``)."""
        if self.change_alarm is None:
            return None
        name = self.change_alarm["statistic"]
        x = np.asarray(values)[: upto if upto is not None else None]
        return change_set(
            x,
            self.alternatives[name],
            int(self.change_alarm["tilt_index"]),
            confidence=self.plan.confidence,
            alternatives=self.detector_count,
        )
