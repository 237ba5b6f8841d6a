"""How numbers are shown (issue 14, "Numbers"): p-values below a floor, values just below 1,
counts as integers with integer intervals, exact multiplicities, and the confidence level a
sentence states. Formatting functions are checked with property tests; the commands through
the CLI, against published tables, OEIS sequences and brute force where they apply."""

from __future__ import annotations

import math
import re
from fractions import Fraction

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st
from sympy.functions.combinatorial.numbers import stirling

from shufflecheck.common.errors import InputError
from shufflecheck.common.numbers import (
    BELOW_FLOAT_RANGE,
    count_interval_text,
    format_count,
    format_measure,
    format_number,
    format_p_value,
    gap_float,
    p_relation,
)
from shufflecheck.common.quantity import Quantity, estimate, exact, upper_bound
from shufflecheck.models.riffle import exact_distances
from tests._brute import distances, law_after, riffle_outcomes

from ._cli import command_json, one_line_error, run


def shown_value(text: str) -> float:
    """The number a display means: ``0.9999``, ``1,234``, ``1 - 4.7e-07``, ``< 1e-300``."""
    text = text.replace(",", "")
    if text.startswith("< "):
        return 0.0  # below the floor: smaller than anything shown as a number
    if text.startswith("1 - "):
        return 1.0 - float(text[4:])
    return float(text)


def reads_one(text: str) -> bool:
    """True when a display reads as exactly 1 (``1``, ``1.0``, ``1.000``)."""
    return re.fullmatch(r"1(\.0*)?", text.replace(",", "")) is not None


class TestFormatPValue:
    def test_floor(self):
        # the demo's Table 2: rising sequences, adjusted p = 10^-4846 (exact log10 p)
        assert format_p_value(-4845.2) == "< 1e-300"
        assert format_p_value(-300.5) == "< 1e-300"
        assert p_relation(-4845.2) == "< 1e-300"

    def test_plain_values(self):
        assert format_p_value(math.log10(0.00342)) == "0.0034"
        assert format_p_value(math.log10(3.1e-186)) == "3.1e-186"
        assert format_p_value(0.0) == "1.0"
        assert p_relation(math.log10(0.042)) == "= 0.042"

    def test_refuses_log_above_zero(self):
        with pytest.raises(InputError, match="log10 of a p-value"):
            format_p_value(0.5)

    @given(st.floats(min_value=-5000, max_value=0), st.floats(min_value=-5000, max_value=0))
    def test_keeps_order(self, a, b):
        low, high = min(a, b), max(a, b)
        assert shown_value(format_p_value(low)) <= shown_value(format_p_value(high))

    @given(st.floats(min_value=-5000, max_value=-1e-12))
    def test_below_one_never_reads_one(self, log10_p):
        assert not reads_one(format_p_value(log10_p)) or 10.0**log10_p == 1.0


class TestNearOne:
    """A value in [0, 1) never prints as 1; a nonzero value never prints as 0."""

    def test_issue_values(self):
        # the issue's two values: TV after 4 riffles, separation after 7 (52 cards)
        assert format_number(0.9999995334313746) == "0.99999953"
        assert format_number(0.9999945572754529) == "0.9999946"
        assert format_number(1.0, below_one=5.583562506622156e-53) == "1 - 5.6e-53"
        assert format_number(1.0) == "1.000"  # exactly 1 stays 1

    def test_directed_rounding_keeps_its_side(self):
        # an upper bound rounds up, a lower bound down, and neither reads 1 below 1
        up = format_number(1 - 3e-12, 4, "up")
        down = format_number(1 - 3e-12, 4, "down")
        assert up == "1 - 2.9e-12" or shown_value(up) >= 1 - 3e-12
        assert shown_value(down) <= 1 - 3e-12
        assert not reads_one(up)

    @given(st.floats(min_value=0, max_value=1, exclude_max=True), st.integers(1, 8))
    def test_prints_as_one_only_when_one(self, x, digits):
        for rounding in ("nearest", "up", "down"):
            assert not reads_one(format_number(x, digits, rounding)), (x, digits, rounding)

    @given(st.floats(min_value=1e-12, max_value=1e-4), st.integers(1, 4))
    def test_near_one_display_keeps_the_value(self, g, digits):
        x = 1 - g
        assume(float(f"{x:.{digits - 1}e}") == 1.0)  # plain rounding would read 1
        shown = shown_value(format_number(x, digits))
        gap = 1 - x
        # the distance to 1 is shown to about two significant digits
        assert abs((1 - shown) - gap) <= 0.06 * gap

    @given(st.floats(min_value=1e-300, max_value=1e-13))
    def test_exact_gap_shown(self, gap):
        shown = format_number(1.0, 4, below_one=gap)
        assert shown.startswith("1 - ")
        assert float(shown[4:]) == pytest.approx(gap, rel=0.06)

    @given(st.floats(min_value=5e-324, max_value=1))
    def test_nonzero_never_prints_as_zero(self, x):
        assert shown_value(format_number(x)) != 0

    @given(st.floats(min_value=0, max_value=1), st.floats(min_value=0, max_value=1))
    def test_keeps_order(self, a, b):
        low, high = min(a, b), max(a, b)
        assert shown_value(format_number(low)) <= shown_value(format_number(high)) + 1e-3

    def test_quantity_below_one(self):
        q = exact(1.0, below_one=1e-21)
        assert q.number_text() == "1 - 1.0e-21"
        assert q.as_json()["below_one"] == 1e-21
        assert upper_bound(1.0, below_one=1e-21).number_text() == "≤ 1 - 1.0e-21"
        with pytest.raises(InputError, match="below_one"):
            Quantity(0.5, "exact", below_one=0.25)


class TestRiffleBelowOne:
    """The riffle's exact 1 - TV and 1 - separation, against closed forms and brute force."""

    def test_one_riffle_closed_form(self):
        # one riffle of n cards reaches the 2^n - n arrangements with at most two rising
        # sequences (Bayer & Diaconis 1992), each more likely than 1/n!: 1 - TV = (2^n - n)/n!
        for n in (5, 13, 52):
            gap = exact_distances(n, 1).total_variation_below_one
            assert gap == pytest.approx(float(Fraction(2**n - n, math.factorial(n))), rel=1e-12)

    def test_below_the_double_range(self):
        # a 312-card shoe after one riffle: 1 - TV = (2^312 - 312)/312!, about 10^-549
        # (Bayer & Diaconis 1992, as above): positive, below any double
        assert gap_float(2**312 - 312, math.factorial(312)) == BELOW_FLOAT_RANGE > 0
        data = command_json("mix", "riffle", "--cards", 312, "--max-steps", 1)
        assert data["rows"][0]["total_variation_below_one"] > 0
        text = run("mix", "riffle", "--cards", 312, "--max-steps", 1).stdout
        assert "1 - (< 1e-300)" in text

    @pytest.mark.parametrize("n", [4, 5])
    def test_brute_force(self, n):
        # brute force over all n! arrangements (tests/_brute.py, the physical riffle)
        for k in (1, 2, 3):
            tv, sep, _ = distances(law_after(riffle_outcomes(n), n, k), n)
            row = exact_distances(n, k)
            assert row.total_variation_below_one == pytest.approx(float(1 - tv), rel=1e-12)
            assert row.separation_below_one == pytest.approx(float(1 - sep), rel=1e-12, abs=0)

    def test_published_table_rounds_but_values_are_below_one(self):
        # Bayer & Diaconis (1992), Table 1: 1.000 for k = 1..4 riffles of 52 cards; the
        # exact values are below 1, and the display must say so
        data = command_json("mix", "riffle", "--cards", 52, "--max-steps", 10)
        for row in data["rows"][:4]:
            assert round(row["total_variation"], 3) == 1.000
            gap = row.get("total_variation_below_one", 1 - row["total_variation"])
            assert gap > 0
        result = run("mix", "riffle", "--cards", 52, "--max-steps", 10)
        lines = {
            int(line.split()[0]): line.split()
            for line in result.stdout.splitlines()
            if line.strip()[:2].strip().isdigit()
        }
        assert lines[4][1] == "0.99999953"
        assert lines[1][1:4] == ["1", "-", "5.6e-53"]
        assert lines[7][2] == "0.999995"  # separation after 7, not "1"

    def test_report_shows_below_one(self, tmp_path):
        out = tmp_path / "r"
        result = run("mix", "riffle", "--max-steps", 8, "--report", out)
        assert result.exit_code == 0, result.output
        text = (out / "report.md").read_text(encoding="utf-8")
        assert "| 4 | 0.99999953 |" in text
        assert "| 1 | 1 - 5.6e-53 |" in text
        assert "0.9999946" in text
        html = (out / "report.html").read_text(encoding="utf-8")
        assert "0.99999953" in html and "1 - 5.6e-53" in html


class TestChainBelowOne:
    def test_transposition_chain_brute_force(self):
        # brute force over all 5! arrangements (tests/_brute.py, uniform pairs with holding)
        from tests._brute import transposition_outcomes

        data = command_json("mix", "transposition", "--cards", 5, "--max-steps", 3)
        assert "total_variation_below_one" in data["rows"][0]
        for row in data["rows"]:
            tv, _, _ = distances(law_after(transposition_outcomes(5), 5, row["steps"]), 5)
            # kept while TV > 1/2 (below, 1 - TV of the float is exact enough)
            gap = row.get("total_variation_below_one", 1 - row["total_variation"])
            assert gap == pytest.approx(float(1 - tv), rel=1e-9)

    def test_transposition_52_never_prints_one(self):
        # after one step of 52 cards only 1 + C(52, 2) arrangements are reachable, each
        # more likely than 1/52!: 1 - TV = 1327/52! (Diaconis & Shahshahani 1981 model)
        data = command_json("mix", "transposition", "--cards", 52, "--max-steps", 1)
        gap = data["rows"][0]["total_variation_below_one"]
        assert gap == pytest.approx(1327 / math.factorial(52), rel=1e-9)
        text = run("mix", "transposition", "--cards", 52, "--max-steps", 1).stdout
        assert "1 - 1.6e-65" in text


class TestCounts:
    def test_count_estimate_text(self):
        q = estimate(2563, interval=(2410.2, 2729.1), confidence=0.95, unit="decks", count=True)
        assert q.number_text() == "about 2,563 decks (95% CI 2,410 to 2,730)"
        assert q.as_json()["value"] == 2563 and isinstance(q.as_json()["value"], int)
        one = estimate(1, interval=(1, 2), confidence=0.99, unit="decks", count=True)
        assert one.number_text() == "about 1 deck (99% CI 1 to 2)"

    def test_unbounded_interval(self):
        assert count_interval_text(526.3, math.inf) == "526 or more"

    @given(st.floats(min_value=0, max_value=1e9), st.floats(min_value=0, max_value=1e9))
    def test_interval_rounds_outward(self, a, b):
        low, high = min(a, b), max(a, b)
        lo_text, hi_text = count_interval_text(low, high).split(" to ")
        assert int(lo_text.replace(",", "")) <= low <= high <= int(hi_text.replace(",", ""))

    def test_format_count_and_measure(self):
        assert format_count(5_038_807_462_308_710_400) == "5,038,807,462,308,710,400"
        assert format_measure(1992190.0) == "1,992,190"  # a sum of inversions
        assert format_measure(2604.987) == "2,604.99"  # a chi-square statistic: 6 digits


class TestPowerCounts:
    def test_json_intervals_are_integers_around_the_count(self):
        data = command_json("power", "riffle", "--repeat", 5, "--simulate", 1000)
        assert data["confidence"] == 0.95
        found = [r for r in data["plans"][0]["rows"] if r["decks"] is not None]
        assert found
        for row in found:
            low, high = row["decks_interval"]
            assert isinstance(low, int) and (high is None or isinstance(high, int))
            assert low <= row["decks"] <= (high if high is not None else math.inf)

    def test_higher_confidence_wider(self):
        base = command_json("power", "riffle", "--repeat", 6, "--simulate", 1000)
        wide = command_json(
            "power", "riffle", "--repeat", 6, "--simulate", 1000, "--confidence", 0.99
        )
        assert wide["confidence"] == 0.99
        for a, b in zip(base["plans"][0]["rows"], wide["plans"][0]["rows"], strict=True):
            assert a["decks"] == b["decks"]  # same seed, same simulation
            if a["decks"] is not None:
                hi_a = a["decks_interval"][1] or math.inf
                hi_b = b["decks_interval"][1] or math.inf
                assert b["decks_interval"][0] <= a["decks_interval"][0] and hi_a <= hi_b

    def test_terminal_gives_the_interval(self):
        result = run("power", "riffle", "--repeat", 7, "--simulate", 1000, "--confidence", 0.9)
        assert result.exit_code == 0, result.output
        assert re.search(
            r"log about [\d,]+ decks \(90% CI [\d,]+ to [\d,]+; estimate from "
            r"1,000 simulated decks\)",
            result.stdout,
        ), result.stdout
        assert "decks," not in result.stdout.split("r = 7:")[-1]

    @pytest.mark.parametrize("level", [1, 0.4, 1.5])
    def test_confidence_range(self, level):
        line = one_line_error(run("power", "riffle", "--confidence", level))
        assert "--confidence" in line and "[0.5, 1)" in line

    def test_library_argument(self):
        import shufflecheck

        plan = shufflecheck.power("riffle", 52, repeats=5, simulate=1000, confidence=0.99)
        best = plan.best()
        assert plan.confidence == 0.99
        low, high = best.decks_interval(0.99)
        assert low <= best.decks <= high
        assert "99% CI" in best.decks_quantity(0.99).number_text()
        with pytest.raises(InputError, match="confidence"):
            shufflecheck.power("riffle", 52, repeats=5, simulate=1000, confidence=1.0)

    def test_report_table_uses_the_level(self, tmp_path):
        out = tmp_path / "p"
        result = run(
            "power",
            "riffle",
            "-r",
            "5-6",
            "--simulate",
            1000,
            "--confidence",
            0.99,
            "--report",
            out,
        )
        assert result.exit_code == 0, result.output
        text = (out / "report.md").read_text(encoding="utf-8")
        assert "decks (99% CI" in text and "95%" not in text
        assert not re.search(r"\d\.\d+ decks", text)  # counts never print as fractions


class TestMixTargets:
    def test_target_only_on_the_chosen_metric(self):
        result = run("mix", "riffle", "--target", 0.1)
        assert "Minimum steps for total variation <= 0.1: 9 (exact)" in result.stdout
        assert "KL (bits) <= 0.1" not in result.stdout
        assert "separation <= 0.1" not in result.stdout
        result = run("mix", "riffle", "--target", 0.1, "--metric", "kl")
        assert "Minimum steps for KL (bits) <= 0.1" in result.stdout
        assert "total variation <= 0.1" not in result.stdout

    def test_separation_range_extended(self):
        # separation after k riffles of 52 cards, 1 - prod_{i<52}(1 - i/2^k) (Bayer &
        # Diaconis 1992): 0.0778 after 14 (the default range), 0.0397 after 15
        data = command_json("mix", "riffle", "--metric", "separation", "--target", 0.05)
        assert data["minimum_steps"] == {"separation": 15}
        assert data["range_extended_from"] == 14
        assert len(data["rows"]) == 15
        result = run("mix", "riffle", "--metric", "separation", "--target", 0.05)
        assert "the range was extended to 15 steps" in " ".join(result.stdout.split())
        assert "raise --max-steps" not in result.stdout

    def test_given_range_is_kept(self):
        data = command_json(
            "mix", "riffle", "--metric", "separation", "--target", 0.05, "--max-steps", 14
        )
        assert data["minimum_steps"] == {"separation": None}
        assert data["range_extended_from"] is None
        assert (
            "raise --max-steps"
            in run(
                "mix", "riffle", "--metric", "separation", "--target", 0.05, "--max-steps", 14
            ).stdout
        )

    def test_feature_range_extended(self):
        # colour word of 52 cards: bounded by the distinct-card separation, 1 - prod_{i<52}
        # (1 - i/2^k) (Bayer & Diaconis 1992), 0.0101 after 17 riffles and 0.0050 after 18
        data = command_json(
            "mix", "riffle", "--feature", "colour", "--metric", "separation", "--target", 0.01
        )
        assert data["minimum_steps"] == {"separation": 18}
        assert data["range_extended_from"] == 14 and len(data["rows"]) == 18

    @pytest.mark.parametrize(
        ("model", "cards"), [("top-to-random", 10), ("shelf", 52), ("transposition", 10)]
    )
    def test_other_models_extend(self, model, cards):
        default = command_json("mix", model, "--cards", cards, "--metric", "separation")
        last = default["rows"][-1]["separation"]
        target = last / 4  # met only beyond the default range
        data = command_json(
            "mix", model, "--cards", cards, "--metric", "separation", "--target", target
        )
        k = data["minimum_steps"]["separation"]
        assert k is not None and k > len(default["rows"])
        assert data["range_extended_from"] == len(default["rows"])
        assert data["rows"][k - 1]["separation"] <= target < data["rows"][k - 2]["separation"]


class TestSpectrumAndStatistics:
    def test_riffle_multiplicities_exact(self):
        # eigenvalue 2^-i with multiplicity c(n, n - i), unsigned Stirling numbers of the
        # first kind (OEIS A132393), computed here by sympy
        data = command_json("spectrum", "riffle", "--cards", 52)
        for i, row in enumerate(data["rows"]):
            expected = int(stirling(52, 52 - i, kind=1, signed=False))
            assert row["multiplicity"] == expected
            assert row["multiplicity_text"] == str(expected)
        assert sum(r["multiplicity"] for r in data["rows"]) == math.factorial(52)
        text = run("spectrum", "riffle", "--cards", 52).stdout
        for i in range(52):  # every multiplicity's exact digits are in the terminal view
            assert f"{int(stirling(52, 52 - i, kind=1, signed=False)):,}" in text
        assert max(map(len, text.splitlines())) <= 100  # long ones on a line of their own
        assert "0.000000" not in text  # 2^-51 is not 0

    def test_audit_statistics_are_integers(self, tmp_path):
        from shufflecheck.analyses.demo import demo_folder

        log = demo_folder() / "logs" / "table2.csv"
        result = run("audit", log)
        assert result.exit_code == 0, result.output
        line = next(x for x in result.stdout.splitlines() if x.startswith("inversions"))
        assert re.search(r"\s\d{1,3}(,\d{3})+\s", line) and "e+" not in line
        assert "< 1e-300" in result.stdout and "e-4" not in result.stdout
        data = command_json("audit", log)
        tests = {t["name"]: t for t in data["tests"]}
        rising = tests["rising-sequences"]
        assert rising["p_below_floor"] and rising["log10_p_value"] < -300  # exact kept
        assert all(isinstance(t["statistic"], int) for t in data["tests"] if t["method"] == "exact")


@pytest.mark.slow
def test_count_intervals_cover_a_long_simulation():
    """The 95% intervals of 30 plans on 2,000 simulated decks each cover the count of one
    plan on 40,000 (its Monte Carlo error is about 4.5 times smaller): Monte Carlo check of
    the interval method, measured coverage 26-30 of 30 per test (9 s)."""
    import shufflecheck

    reference = shufflecheck.power("riffle", 52, repeats=7, simulate=40_000, seed=999)
    truth = {r.test: r.decks for r in reference.rows if r.decks is not None}
    tests = ("rising-sequences", "successions", "guess-next-card", "guess-longest-run")
    covered = dict.fromkeys(tests, 0)
    for seed in range(30):
        plan = shufflecheck.power("riffle", 52, repeats=7, simulate=2_000, seed=seed)
        for row in plan.rows:
            if row.test in covered and row.decks is not None:
                low, high = row.decks_interval(0.95)
                covered[row.test] += low <= truth[row.test] <= high
    # 95% intervals: at least 24 of 30 (a binomial(30, 0.95) falls below 25 with chance 2%,
    # and the reference's own error widens the miss rate a little)
    assert all(hits >= 24 for hits in covered.values()), covered
