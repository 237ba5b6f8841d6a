"""E-processes, change detectors and the monitoring state (stats/eprocess.py, detector.py,
monitoring.py).

The guarantee rests on one fact: every bet has null mean exactly 1 given the past. It is
checked here against the outside world by brute force over all ``n!`` arrangements of the
next deck (for ``n = 5`` and ``6``, every statistic of the battery, the position-by-card
bet included), and the recursions against their textbook definitions (Page's CUSUM as a
loop; the plug-in bet recomputed deck by deck).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.errors import InputError
from shufflecheck.records.cards import DeckDefinition
from shufflecheck.stats import nulls
from shufflecheck.stats.catalogue import DeckContext
from shufflecheck.stats.detector import change_set, cusum, detector_grid, detector_threshold
from shufflecheck.stats.eprocess import (
    PRIOR_DECKS,
    PositionBet,
    family_log_e,
    plugin_log_e,
    tilt_grid,
)
from shufflecheck.stats.monitoring import POSITION, Monitor, MonitorPlan


def _small_deck(n: int) -> DeckDefinition:
    codes = ["AS", "2H", "3S", "4H", "5S", "6H", "7S", "8H"][:n]
    return DeckDefinition.from_cards(f"small-{n}", codes)


def _context(n: int) -> DeckContext:
    deck = _small_deck(n)
    return DeckContext.checked(n, suits=deck.suit_codes(), colours=deck.colour_codes())


class TestTiltGrid:
    @pytest.mark.parametrize(
        "law", [nulls.rising_law(52), nulls.inversions_law(20), nulls.guessing_law(52)]
    )
    def test_every_bet_has_null_mean_one(self, law):
        # E_p0[p_theta / p0] = sum p_theta = 1, summed with the exact Fractions of the law
        grid = tilt_grid(law)
        values = law.offset + np.arange(len(law.counts))
        pmf = np.array([float(c) / law.total for c in law.counts])
        for j in range(0, grid.thetas.size, 20):
            e = np.exp(grid.log_ratio(j, values))
            assert float(pmf @ e) == pytest.approx(1.0, abs=1e-12)

    def test_tilted_means_increase_and_zero_is_the_null(self):
        law = nulls.successions_law(52)
        grid = tilt_grid(law)
        assert np.all(np.diff(grid.means) > 0)
        assert grid.thetas[grid.zero()] == 0.0
        assert grid.means[grid.zero()] == pytest.approx(float(law.mean), abs=1e-12)

    def test_one_sided_grids(self):
        law = nulls.guessing_law(10)
        assert tilt_grid(law, "greater").thetas.min() == 0.0
        assert tilt_grid(law, "less").thetas.max() == 0.0
        with pytest.raises(InputError, match="alternative"):
            tilt_grid(law, "sideways")

    def test_constant_law_refused(self):
        with pytest.raises(InputError, match="constant"):
            tilt_grid(nulls.Law((1,), 1))


class TestPlugin:
    def test_matches_a_deck_by_deck_loop(self):
        law = nulls.rising_law(13)
        grid = tilt_grid(law)
        x = np.random.default_rng(3).integers(law.low, law.high + 1, size=200)
        log_e, count, total = plugin_log_e(grid, x, 0, 0.0)
        assert (count, total) == (200, float(x.sum()))
        # the textbook predictable plug-in: fit on decks 1..t-1 only
        mean0 = float(law.mean)
        for t in range(200):
            shrunk = (x[:t].sum() + PRIOR_DECKS * mean0) / (t + PRIOR_DECKS)
            j = int(np.argmin(np.abs(grid.means - shrunk)))
            assert log_e[t] == pytest.approx(float(grid.log_ratio(j, x[t])), abs=1e-12)

    @settings(max_examples=40, deadline=None)
    @given(st.lists(st.integers(1, 9), min_size=2, max_size=60), st.data())
    def test_predictable_and_chunking_invariant(self, values, data):
        grid = tilt_grid(nulls.rising_law(9))
        x = np.array(values)
        whole, _, _ = plugin_log_e(grid, x, 0, 0.0)
        cut = data.draw(st.integers(1, len(values) - 1))
        first, c, s = plugin_log_e(grid, x[:cut], 0, 0.0)
        second, _, _ = plugin_log_e(grid, x[cut:], c, s)
        assert np.allclose(np.r_[first, second], whole, atol=1e-12)
        # a later deck never changes an earlier bet (predictability)
        changed = x.copy()
        changed[cut:] = 1
        again, _, _ = plugin_log_e(grid, changed, 0, 0.0)
        assert np.allclose(again[:cut], whole[:cut], atol=1e-12)


class TestBruteForceMartingale:
    """For every bet of the monitor, the mean over all ``n!`` next decks is exactly 1."""

    @pytest.mark.parametrize("n", [5, 6])
    def test_every_process_has_null_mean_one_given_any_past(self, n):
        context = _context(n)
        rng = np.random.default_rng(n)
        monitor = Monitor(context, MonitorPlan())
        # a biased past (so the bets are far from zero): near-identity decks
        past_abs = np.array([np.roll(np.arange(n), s % 2) for s in range(150)], dtype=np.int16)
        rel = np.argsort(np.r_[[np.arange(n)], past_abs[:-1]], axis=1)
        rel = np.take_along_axis(rel, past_abs.astype(np.int64), axis=1).astype(np.int16)
        monitor.update(rel, past_abs, np.arange(n, dtype=np.int16))
        state = monitor.state()
        previous = past_abs[-1]
        # every possible next deck (absolute), and its arrangement relative to the previous
        nxt = np.array(list(itertools.permutations(range(n))), dtype=np.int16)
        inv = np.argsort(previous)
        nxt_rel = inv[nxt].astype(np.int16)
        before = {name: monitor.log_e(name) for name in monitor.names}
        means = {}
        e_sum = {name: 0.0 for name in monitor.names}
        for k in range(nxt.shape[0]):
            m = Monitor(context, MonitorPlan(), state)
            m.update(nxt_rel[k : k + 1], nxt[k : k + 1], previous)
            for name in monitor.names:
                e_sum[name] += math.exp(m.log_e(name) - before[name])
        means = {name: total / nxt.shape[0] for name, total in e_sum.items()}
        assert set(means) >= {POSITION, "rising-sequences", "repeat-positions", "suit-runs"}
        for name, mean in means.items():
            assert mean == pytest.approx(1.0, abs=1e-9), name
        assert rng is not None

    def test_position_bet_alone(self):
        # n = 4: all 24 next decks after 137 decks (inside a block) keep the mean at 1
        rng = np.random.default_rng(4)
        bet = PositionBet(4)
        bet.log_e(np.array([rng.permutation(4) for _ in range(137)]))
        state = bet.state()
        total = 0.0
        for perm in itertools.permutations(range(4)):
            b = PositionBet.from_state(4, state)
            total += math.exp(b.log_e(np.array([perm]))[0])
        assert total / 24 == pytest.approx(1.0, abs=1e-12)


class TestFamily:
    def test_average_of_e_values(self):
        logs = np.log(np.array([[1.0, 3.0, 0.5], [8.0, 2.0, 2.0]]))
        assert np.exp(family_log_e(logs)) == pytest.approx([1.5, 4.0])
        with pytest.raises(InputError):
            family_log_e(np.zeros((3, 0)))


class TestCusum:
    @settings(max_examples=50, deadline=None)
    @given(
        st.lists(st.floats(-3, 3), min_size=1, max_size=40),
        st.floats(0, 5),
    )
    def test_equals_page_recursion(self, steps, start):
        w = start
        expected = []
        for s in steps:  # Page (1954): W_t = max(0, W_{t-1} + l_t)
            w = max(0.0, w + s)
            expected.append(w)
        got = cusum(np.array([steps]), np.array([start]))[0]
        assert np.allclose(got, expected, atol=1e-9)

    def test_threshold(self):
        assert detector_threshold(1000, 10) == pytest.approx(math.log(10_000))
        with pytest.raises(InputError, match="average run length"):
            detector_threshold(0.5, 3)

    def test_grids_by_side(self):
        law = nulls.rising_law(52)
        assert detector_grid(law, "two-sided").thetas.size == 8
        assert np.all(detector_grid(law, "greater").thetas > 0)
        assert np.all(detector_grid(law, "less").thetas < 0)


class TestChangeSet:
    def test_holds_a_strong_change(self):
        # 300 null decks then 200 with a shifted law: the exact tilted law of rising
        # sequences (n = 52) at +0.8 sd, sampled from its pmf
        law = nulls.rising_law(52)
        grid = detector_grid(law, "two-sided")
        j = int(np.argmax(grid.thetas))
        values = law.offset + np.arange(len(law.counts))
        rng = np.random.default_rng(11)
        p0 = np.array([c / law.total for c in law.counts])
        p1 = p0 * np.exp(grid.log_ratio(j, values))
        x = np.r_[rng.choice(values, 300, p=p0), rng.choice(values, 200, p=p1 / p1.sum())]
        found = change_set(x, grid, j, confidence=0.95, alternatives=100)
        assert found.low <= 301 <= found.high
        assert found.high - found.low < 80
        assert found.tilt_units == pytest.approx(0.8)

    def test_no_value_decks_contribute_nothing(self):
        law = nulls.fixed_points_law(8)
        grid = detector_grid(law, "greater")
        x = np.array([-1, 0, 1, 5, 6, 7, 8])
        found = change_set(x, grid, 3, confidence=0.9, alternatives=4, offset=10)
        assert found.best == 14 and found.low >= 11


class TestMonitor:
    def test_chunking_does_not_change_the_state(self):
        context = _context(8)
        rng = np.random.default_rng(5)
        decks = np.array([rng.permutation(8) for _ in range(731)], dtype=np.int16)
        refs = np.r_[[np.arange(8)], decks[:-1]]
        rel = np.take_along_axis(np.argsort(refs, axis=1), decks.astype(np.int64), axis=1)
        rel = rel.astype(np.int16)
        start = np.arange(8, dtype=np.int16)
        one = Monitor(context, MonitorPlan())
        one.update(rel, decks, start)
        other = Monitor(context, MonitorPlan())
        for a, b in [(0, 1), (1, 250), (250, 251), (251, 731)]:
            state = other.state()
            other = Monitor(context, MonitorPlan(), state)  # through the JSON state
            other.update(rel[a:b], decks[a:b], start if a == 0 else decks[a - 1])
        s1, s2 = one.state(), other.state()
        assert s1["decks"] == s2["decks"] == 731
        assert s1["position"] == s2["position"]
        for name in one.names:
            assert one.log_e(name) == pytest.approx(other.log_e(name), abs=1e-9)
        for name in s1["detector"]:
            assert np.allclose(s1["detector"][name], s2["detector"][name], atol=1e-9)

    def test_plan_checks(self):
        with pytest.raises(InputError, match="alpha"):
            MonitorPlan(alpha=1.5)
        with pytest.raises(InputError, match="arl"):
            MonitorPlan(arl=0)

    def test_quick_ville_calibration(self):
        # 300 uniform streams of 400 decks of 8 cards, alpha = 0.2, read after every deck:
        # the fraction that ever alarms is at most 0.2 (binomial sd 0.023; tolerance 3 sd)
        context = _context(8)
        rng = np.random.default_rng(2027)
        alarms = 0
        for _ in range(300):
            decks = rng.permuted(np.tile(np.arange(8, dtype=np.int16), (401, 1)), axis=1)
            refs = decks[:-1]
            rel = np.take_along_axis(
                np.argsort(refs, axis=1), decks[1:].astype(np.int64), axis=1
            ).astype(np.int16)
            m = Monitor(context, MonitorPlan(alpha=0.2))
            m.update(rel, decks[1:], decks[0])
            alarms += m.family_alarm is not None
        assert alarms / 300 <= 0.2 + 3 * math.sqrt(0.2 * 0.8 / 300)

    def test_detects_an_unshuffled_machine_at_once(self):
        context = _context(8)
        decks = np.tile(np.arange(8, dtype=np.int16), (60, 1))  # the same order every time
        rel = np.tile(np.arange(8, dtype=np.int16), (60, 1))
        m = Monitor(context, MonitorPlan())
        m.update(rel, decks, decks[0])
        assert m.family_alarm is not None and m.family_alarm["deck"] <= 10
        assert m.change_alarm is not None and m.change_alarm["deck"] <= 20
