"""Power planning: the power function against simulated audits, and plans for procedures."""

from __future__ import annotations

import math

import numpy as np
import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.models import riffle
from shufflecheck.records.cards import STANDARD_52
from shufflecheck.stats import nulls, plan_decks
from shufflecheck.stats.power import sum_test_power


class TestSumTestPower:
    def test_against_simulated_audits(self):
        # Monte Carlo: draw 30 decks' statistic from a shifted law, run the exact test,
        # count rejections; compare with the computed power (binomial tolerance)
        law = nulls.rising_law(12)
        alt = law.pmf * np.exp(-0.5 * np.arange(law.pmf.size))
        alt /= alt.sum()
        alt_full = np.concatenate([[0.0], alt])  # values start at 1 rising sequence
        decks, level = 50, 0.001
        power = sum_test_power(law, alt_full, decks, level, "two-sided")
        rng = np.random.default_rng(6)
        sims = 3000
        draws = rng.choice(np.arange(1, 13), size=(sims, decks), p=alt)
        totals = draws.sum(axis=1)
        values, counts = np.unique(totals, return_counts=True)
        rejected = sum(
            int(c)
            for t, c in zip(values, counts, strict=True)
            if nulls.sum_p_value(law, decks, int(t), "two-sided") <= math.log(level)
        )
        rate = rejected / sims
        assert 0.05 < power < 0.95  # a case where the check means something
        assert abs(rate - power) < 4 * math.sqrt(power * (1 - power) / sims)

    def test_size_under_the_null(self):
        law = nulls.guessing_law(52)
        full = np.concatenate([np.zeros(law.offset), law.pmf])
        for decks in (1, 10, 1000):
            assert sum_test_power(law, full, decks, 0.01, "greater") <= 0.01 + 1e-12


class TestPlans:
    def _sampler(self, k):
        return lambda count, rng: riffle.sample(count, 52, k, rng=rng)

    def test_riffles(self):
        plans = {
            k: plan_decks(
                self._sampler(k),
                52,
                suits=STANDARD_52.suit_codes(),
                colours=STANDARD_52.colour_codes(),
                rng=k,
            )
            for k in (4, 6, 8)
        }
        needed = [plans[k].best().decks for k in (4, 6, 8)]
        assert needed[0] <= 2 and needed[0] < needed[1] < needed[2]
        plan = plans[6]
        assert plan.tests_in_battery == 17
        assert plan.per_test_level == pytest.approx(0.01 / 17)
        assert plan.best().test == "rising-sequences"
        row = next(r for r in plan.rows if r.test == "rising-sequences")
        assert row.power >= 0.9 and row.kind == "estimate"
        assert 0 < row.relative_standard_error < 0.1
        data = plan.as_json()
        assert data["fewest_decks"] == plan.best().decks and data["kind"] == "estimate"

    def test_uniform_sampler_needs_no_decks_it_can_find(self):
        def uniform(count, rng):
            return rng.permuted(np.tile(np.arange(20), (count, 1)), axis=1)

        plan = plan_decks(uniform, 20, rng=3, simulate=3000)
        assert plan.best() is None
        assert all(r.decks is None and r.note for r in plan.rows)

    def test_unshuffled_sampler(self):
        def nothing(count, rng):
            return np.tile(np.arange(52), (count, 1))

        plan = plan_decks(nothing, 52, rng=0, simulate=200)
        assert plan.best().decks == 1

    def test_errors(self):
        with pytest.raises(InputError, match="cards must"):
            plan_decks(self._sampler(1), 1)
        with pytest.raises(InputError, match="alpha must"):
            plan_decks(self._sampler(1), 52, alpha=0)
        with pytest.raises(InputError, match="power must"):
            plan_decks(self._sampler(1), 52, power=1.0)
        with pytest.raises(InputError, match="returned 10 decks"):
            plan_decks(lambda count, rng: riffle.sample(10, 52, 1, rng=rng), 52, simulate=200)
