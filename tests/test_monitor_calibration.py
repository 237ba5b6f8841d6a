"""Calibration and detection of monitoring, measured by simulation (the figures in
docs/monitoring.md come from the functions below with the arguments of the slow tests;
``python -m tests.test_monitor_calibration`` prints them all as JSON).

* False alarms: uniformly random streams of decks (seeded numpy permutations, 52 cards
  with suits and colours), the evidence read after every 100 decks; the fraction of streams
  that ever alarm, with a Clopper-Pearson interval (scipy.stats.binomtest), must not exceed
  alpha (Ville's inequality).
* Detection: streams from a faulty procedure; decks until the evidence alarms (fault from
  the first deck) and until the change detector alarms (fault from deck 1,001 after 1,000
  decks of the sound procedure), median and 90th percentile, the change-point set's
  coverage, and the fixed-sample battery's flag rate (Holm at the same alpha) on the same
  number of decks for comparison.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass

import numpy as np
import pytest
from scipy import stats

from shufflecheck.models.procedures import parse_procedure
from shufflecheck.records.cards import STANDARD_52
from shufflecheck.stats import BatterySummary
from shufflecheck.stats.catalogue import DeckContext
from shufflecheck.stats.monitoring import Monitor, MonitorPlan

CONTEXT = DeckContext.checked(
    52, suits=STANDARD_52.suit_codes(), colours=STANDARD_52.colour_codes()
)
SOUND_SHELF = "shelf(shelves=10) x2, cut"
FAULTS = {
    # name: (sound procedure before the change (None: an ideal machine), faulty procedure)
    "lost-shelves": (SOUND_SHELF, "shelf(shelves=4) x2, cut"),
    "eight-riffles": (None, "riffle x8"),
    "stuck-cut": (SOUND_SHELF, "shelf(shelves=10) x2, cut(spread=0)"),
}


def _relative(spec: str | None, count: int, rng: np.random.Generator) -> np.ndarray:
    if spec is None:
        return rng.permuted(np.tile(np.arange(52, dtype=np.int16), (count, 1)), axis=1)
    return parse_procedure(spec).sample(count, 52, rng=rng)


def _absolute(relative: np.ndarray, start: np.ndarray) -> np.ndarray:
    """Recorded decks when every deck is the previous one rearranged by ``relative``."""
    out = np.empty_like(relative)
    current = start
    for t in range(relative.shape[0]):
        current = current[relative[t]]
        out[t] = current
    return out


def _uniform_stream(decks: int, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    absolute = rng.permuted(np.tile(np.arange(52, dtype=np.int16), (decks + 1, 1)), axis=1)
    relative = np.take_along_axis(
        np.argsort(absolute[:-1], axis=1), absolute[1:].astype(np.int64), axis=1
    ).astype(np.int16)
    return relative, absolute


def clopper_pearson(k: int, n: int, level: float = 0.95) -> tuple[float, float]:
    ci = stats.binomtest(k, n).proportion_ci(confidence_level=level, method="exact")
    return float(ci.low), float(ci.high)


@dataclass(frozen=True)
class FalseAlarms:
    streams: int
    decks: int
    look_every: int
    alpha: float
    arl: float
    evidence_alarms_at_looks: int
    evidence_alarms_any_deck: int
    fraction: float
    interval: tuple[float, float]
    change_alarms: int
    change_interval: tuple[float, float]
    largest_log10_e: float


def false_alarm_study(
    streams: int, decks: int, *, look_every: int = 100, alpha: float = 0.01, seed: int = 2026
) -> FalseAlarms:
    """Uniform streams, evidence read every ``look_every`` decks (and at every deck)."""
    rng = np.random.default_rng(seed)
    plan = MonitorPlan(alpha=alpha)
    level = math.log(1 / alpha)
    at_looks = any_deck = changes = 0
    largest = -math.inf
    for _ in range(streams):
        relative, absolute = _uniform_stream(decks, rng)
        monitor = Monitor(CONTEXT, plan)
        trace = monitor.update(relative, absolute[1:], absolute[0])
        looks = trace.family_log_e[look_every - 1 :: look_every]
        at_looks += bool(looks.max() >= level)
        any_deck += monitor.family_alarm is not None
        changes += monitor.change_alarm is not None
        largest = max(largest, float(trace.family_log_e.max()))
    return FalseAlarms(
        streams,
        decks,
        look_every,
        alpha,
        plan.arl,
        at_looks,
        any_deck,
        at_looks / streams,
        clopper_pearson(at_looks, streams),
        changes,
        clopper_pearson(changes, streams),
        largest / math.log(10),
    )


@dataclass(frozen=True)
class Detection:
    fault: str
    streams: int
    cap: int
    evidence_detected: int
    evidence_median: float | None
    evidence_p90: float | None
    change_detected: int
    change_median: float | None
    change_p90: float | None
    change_false_before: int
    set_coverage: float | None
    set_median_width: float | None
    battery_decks: int | None
    battery_flag_rate: float | None
    battery_interval: tuple[float, float] | None
    battery_change_decks: int | None
    battery_change_flag_rate: float | None


def _quantiles(values: list[int], cap: int, streams: int) -> tuple[float | None, float | None]:
    """Median and 90th percentile counting undetected streams as beyond the cap."""
    full = np.array(values + [cap + 1] * (streams - len(values)), dtype=float)
    med, p90 = np.quantile(full, [0.5, 0.9], method="inverted_cdf")
    return (None if med > cap else float(med)), (None if p90 > cap else float(p90))


def battery_flag_rate(
    spec: str, decks: int, audits: int, alpha: float, rng: np.random.Generator
) -> float:
    """The fixed-sample battery (Holm at ``alpha``) on ``decks`` decks of ``spec``."""
    flagged = 0
    for _ in range(audits):
        relative = _relative(spec, decks, rng)
        absolute = _absolute(relative, np.arange(52, dtype=np.int16))
        summary = BatterySummary.empty(
            52, suits=STANDARD_52.suit_codes(), colours=STANDARD_52.colour_codes()
        )
        summary.update(relative, absolute)
        flagged += summary.finish(alpha=alpha, rng=rng, since_when=False).overall.flagged
    return flagged / audits


def detection_study(
    fault: str,
    streams: int,
    *,
    cap: int = 5000,
    before: int = 1000,
    audits: int = 200,
    alpha: float = 0.01,
    seed: int = 7,
) -> Detection:
    """Decks to an evidence alarm (fault from deck 1) and to a change alarm (fault from
    deck ``before + 1``), and the battery's flag rate at the median numbers of decks."""
    sound, faulty = FAULTS[fault]
    rng = np.random.default_rng(seed)
    plan = MonitorPlan(alpha=alpha)
    evidence: list[int] = []
    change: list[int] = []
    false_before = 0
    covered = 0
    widths = []
    for _ in range(streams):
        relative = _relative(faulty, cap, rng)
        absolute = _absolute(relative, np.arange(52, dtype=np.int16))
        monitor = Monitor(CONTEXT, plan)
        monitor.update(relative, absolute, np.arange(52, dtype=np.int16))
        if monitor.family_alarm is not None:
            evidence.append(int(monitor.family_alarm["deck"]))
        relative = np.concatenate([_relative(sound, before, rng), _relative(faulty, cap, rng)])
        absolute = _absolute(relative, np.arange(52, dtype=np.int16))
        monitor = Monitor(CONTEXT, plan)
        trace = monitor.update(relative, absolute, np.arange(52, dtype=np.int16))
        alarm = monitor.change_alarm
        if alarm is None:
            continue
        if alarm["deck"] <= before:
            false_before += 1
            continue
        change.append(int(alarm["deck"]) - before)
        found = monitor.change_set(trace.values[alarm["statistic"]], upto=int(alarm["deck"]))
        covered += found.low <= before + 1 <= found.high
        widths.append(found.high - found.low + 1)
    e_med, e_p90 = _quantiles(evidence, cap, streams)
    c_med, c_p90 = _quantiles(change, cap, streams - false_before)
    flag = flag_change = None
    interval = None
    if e_med is not None and audits:
        flag = battery_flag_rate(faulty, int(e_med), audits, alpha, rng)
        interval = clopper_pearson(round(flag * audits), audits)
    if c_med is not None and audits:
        flag_change = battery_flag_rate(faulty, int(c_med), audits, alpha, rng)
    return Detection(
        fault,
        streams,
        cap,
        len(evidence),
        e_med,
        e_p90,
        len(change),
        c_med,
        c_p90,
        false_before,
        covered / len(change) if change else None,
        float(np.median(widths)) if widths else None,
        None if e_med is None else int(e_med),
        flag,
        interval,
        None if c_med is None else int(c_med),
        flag_change,
    )


class TestQuick:
    def test_small_false_alarm_study(self):
        # 40 uniform streams of 500 decks at alpha = 0.05: a smoke test of the study itself
        found = false_alarm_study(40, 500, alpha=0.05, seed=1)
        assert found.evidence_alarms_at_looks <= found.evidence_alarms_any_deck
        assert found.fraction <= 0.05 + 3 * math.sqrt(0.05 * 0.95 / 40)
        assert 0 <= found.interval[0] <= found.fraction <= found.interval[1] <= 1

    def test_eight_riffles_are_found_quickly(self):
        found = detection_study("eight-riffles", 4, cap=1000, audits=0, seed=3)
        assert found.evidence_detected == 4 and found.change_detected == 4
        assert found.evidence_median is not None and found.evidence_median < 1000


@pytest.mark.slow
class TestMeasured:
    def test_false_alarms_over_1000_streams_of_10000_decks(self):
        found = false_alarm_study(1000, 10_000)
        assert found.fraction <= found.alpha  # Ville: P(ever alarm) <= alpha
        assert found.evidence_alarms_at_looks <= found.evidence_alarms_any_deck

    @pytest.mark.parametrize("fault", sorted(FAULTS))
    def test_detection(self, fault):
        found = detection_study(fault, 100)
        assert found.change_false_before <= 10
        if found.set_coverage is not None:
            assert found.set_coverage >= 0.8


if __name__ == "__main__":  # the figures of docs/monitoring.md
    import sys

    which = sys.argv[1:] or ["false-alarms", *sorted(FAULTS)]
    for name in which:
        if name == "false-alarms":
            result = asdict(false_alarm_study(1000, 10_000))
        else:
            result = asdict(detection_study(name, 100))
        print(json.dumps({name: result}), flush=True)
